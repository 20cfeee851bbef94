//! Rangefit engine: designs the analog interface between a sensor and an ADC input.
//!
//! The pipeline reads top-down in the module tree:
//! [`units`] → [`figures`] → [`values`] → [`diag`] → [`request`] → [`amplifier`] → [`synth`] → [`circuit`] →
//! [`solve`] → [`predict`] → [`analysis`] → [`design`] (checks and the design result) → [`netlist`], [`bom`], [`scaling`], [`share`], [`draw`], [`report`] (exports) →
//! [`cli`] (the `rangefit` command). [`order`] is a shared stable sort the others use.
//!
//! The engine knows nothing of browsers, the DOM or storage; it builds for the host and
//! for `wasm32-unknown-unknown`. Every output is derived from the one [`circuit::Circuit`]
//! that synthesis produces.

pub mod units;
pub mod figures;
pub mod values;
pub mod diag;
pub mod request;
pub mod amplifier;
pub mod synth;
pub mod circuit;
pub mod solve;
pub mod predict;
pub mod analysis;
pub mod design;
pub mod draw;
pub mod netlist;
pub mod bom;
pub mod scaling;
pub mod share;
pub mod report;
pub mod cli;
pub mod demos;
pub mod order;

pub use design::{design, Design};
pub use request::{Request, RequestError};
