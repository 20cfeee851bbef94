//! Rangefit engine: designs the analog interface between a sensor and an ADC input.
//!
//! The pipeline reads top-down in the module tree:
//! [`units`] → [`figures`] → [`values`] → [`ratings`] → [`diag`] → [`request`] → [`amplifier`] →
//! [`synth`] → [`circuit`] → [`solve`] → [`predict`] → [`analysis`] → [`design`] (checks and the
//! design result) → [`netlist`], [`bom`], [`scaling`], [`share`], [`draw`], [`report`] (exports) →
//! [`cli`] (the `rangefit` command). [`order`] is a shared stable sort the others use.
//!
//! The engine knows nothing of browsers, the DOM or storage; it builds for the host and
//! for `wasm32-unknown-unknown`. Every output is derived from the one [`circuit::Circuit`]
//! that synthesis produces.

pub mod amplifier;
pub mod analysis;
pub mod bom;
pub mod circuit;
pub mod cli;
pub mod demos;
pub mod design;
pub mod diag;
pub mod draw;
pub mod figures;
pub mod netlist;
pub mod order;
pub mod predict;
pub mod ratings;
pub mod report;
pub mod request;
pub mod scaling;
pub mod share;
pub mod solve;
pub mod synth;
pub mod units;
pub mod values;

pub use design::{design, Design};
pub use request::{Request, RequestError};
