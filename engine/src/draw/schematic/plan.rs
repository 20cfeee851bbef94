//! The single-ended gain stage as the drawing places it: for its amplifier, which input the
//! sensor feeds (drawn on the signal line) and which is the other; the series path to it
//! from the sensor terminal (or from a front end's output); the legs hanging from each input
//! line (a part or a chain of two to a rail or ground, or one part to a node tied to rails
//! and ground by several parts — a reference divider with its bypass); the feedback parts.
//! Found by role (`by_role`), or by shape for circuits without roles (`by_shape`); what
//! neither places is left for the fallback area. Also the small helpers every block uses.

use crate::circuit::Part;

/// One part of a chain, drawn from node `from` to node `to`.
#[derive(Debug, Clone)]
pub(super) struct Step {
    pub(super) part: usize,
    pub(super) from: String,
    pub(super) to: String,
}

/// A column hanging from an input line: parts in series to a rail or ground, or one part to
/// a node tied to rails and ground by several parts (a reference divider and its bypass).
#[derive(Debug, Clone)]
pub(super) struct Leg {
    pub(super) steps: Vec<Step>,
    pub(super) end: String,
    pub(super) block: Option<Vec<Step>>,
}

/// Where each part of the gain stage goes.
#[derive(Debug, Clone, Default)]
pub(super) struct Plan {
    pub(super) amp: Option<usize>,
    pub(super) inp: String,
    pub(super) inn: String,
    pub(super) out: String,
    /// The input the sensor feeds (drawn on the signal line) and the other one.
    pub(super) top: String,
    pub(super) bottom: String,
    /// Where the series path starts: the sensor terminal, or a buffer's output.
    pub(super) start: String,
    /// A series path joins `start` to `top`.
    pub(super) connected: bool,
    pub(super) series: Vec<Step>,
    pub(super) top_legs: Vec<Leg>,
    pub(super) bottom_legs: Vec<Leg>,
    pub(super) feedback: Vec<usize>,
}

/// A supply rail: a bench source from `node` to ground.
#[derive(Debug, Clone)]
pub(super) struct Rail {
    pub(super) node: String,
    pub(super) name: String,
    pub(super) volts: f64,
    pub(super) part: usize,
}

pub(super) fn has(p: &Part, n: &str) -> bool {
    p.nodes.iter().any(|x| x == n)
}

pub(super) fn other(p: &Part, n: &str) -> String {
    p.nodes.iter().find(|x| *x != n).cloned().unwrap_or_else(|| n.to_string())
}

/// A resistor or capacitor to build, with two nodes.
#[cfg(feature = "shape-fallback")]
pub(super) fn plain(p: &Part) -> bool {
    !p.bench
        && p.nodes.len() == 2
        && matches!(p.kind, crate::circuit::PartKind::Resistor | crate::circuit::PartKind::Capacitor)
}
