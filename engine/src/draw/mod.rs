//! Drawings derived from the one circuit model: the annotated schematic as a standalone SVG.
//!
//! [`svg`] is a small SVG writer that records every text box and stroke it places;
//! [`schematic`] lays the circuit out by the role of each node and part, left to right in
//! the direction of the signal, and annotates it (values, DC levels, test points).
//! Symbols follow IEC 60617 throughout (see [`schematic`]).

pub mod plot;
pub mod schematic;
pub mod svg;
