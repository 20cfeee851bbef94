//! What the drawing finds in a circuit before it draws anything: the rails, the sensor's
//! bench model, the front end's block, the gain stage's plan, and the filter and drive
//! after it. A circuit from synthesis is read by the stage kinds and part roles it carries
//! ([`super::by_role`]); one that carries none (built by hand, as in tests) or whose roles
//! no longer describe a whole block (altered after synthesis) is read by the shapes of its
//! nodes instead ([`super::by_shape`], the fallback). Either way the same blocks come out
//! and the same code draws them.

use super::buffer::Buffer;
use super::chain::Chain;
use super::diff::Diff;
use super::inamp::Inamp;
use super::plan::{Plan, Rail};
use super::tia::Tia;
use crate::circuit::Circuit;

/// How the blocks were found.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Mode {
    /// From the stage kinds and part roles synthesis recorded.
    Roles,
    /// Fallback for circuits without (whole) roles: from the shapes of their nodes.
    Shapes,
}

/// A single-ended sensor as the ordinary sensor block draws it: an EMF to ground behind its
/// resistance, or a loop's current into the terminal from ground.
#[derive(Debug, Clone, Default, PartialEq)]
pub(super) struct Plain {
    /// The EMF source, its resistance and the EMF's node.
    pub(super) source: Option<(usize, usize, String)>,
    /// A current source from ground into the terminal, and the terminal.
    pub(super) current: Option<(usize, String)>,
    /// The sensor terminal.
    pub(super) term: String,
}

/// A high-impedance sensor's model: its EMF from `emf` to the return `ret`, its resistance
/// to the terminal, the capacitance the signal sits behind or the one across the terminal.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct HighZ {
    pub(super) vs: usize,
    pub(super) rs: usize,
    pub(super) series_c: Option<usize>,
    pub(super) shunt_c: Option<usize>,
    pub(super) emf: String,
    pub(super) ret: String,
    pub(super) term: String,
    /// The return is neither ground nor a rail.
    pub(super) lifted: bool,
}

/// A photodiode's model: the current sources out of the terminal and the capacitance
/// across them, in drawing order.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct Diode {
    pub(super) cols: Vec<usize>,
    pub(super) term: String,
}

/// The bench's single-ended sensor model.
#[derive(Debug, Clone, PartialEq)]
pub(super) enum Sensor {
    HighImpedance(HighZ),
    Photodiode(Diode),
    Plain(Plain),
}

/// Everything the drawing places by block.
#[derive(Debug, Clone)]
pub(super) struct Blocks {
    pub(super) mode: Mode,
    pub(super) rails: Vec<Rail>,
    pub(super) sensor: Sensor,
    /// The node of the sensor's EMF (its level is the source's value, written beside it).
    pub(super) emf: Option<String>,
    /// The converter pin.
    pub(super) pin: String,
    pub(super) buffer: Option<Buffer>,
    pub(super) tia: Option<Tia>,
    pub(super) inamp: Option<Inamp>,
    pub(super) diff: Option<Diff>,
    /// The first of two gain stages, in front of the gain stage.
    pub(super) pre: Option<Plan>,
    /// The single-ended gain stage (absent behind a difference or instrumentation amplifier).
    pub(super) plan: Option<Plan>,
    /// The filter and the drive; `None` in the fallback, which walks them from the gain
    /// stage's output once that is drawn.
    pub(super) chain: Option<Chain>,
}

impl Blocks {
    /// The blocks of `c`: by its roles when they describe every stage, otherwise by shape.
    pub(super) fn of(c: &Circuit) -> Blocks {
        super::by_role::blocks(c).unwrap_or_else(|| fallback(c))
    }

    /// Where the gain stage's series path starts (the sensor terminal, or a front end's
    /// output) and the parts of the front end's own row.
    pub(super) fn start(buffer: Option<&Buffer>, tia: Option<&Tia>, term: &str) -> (String, Vec<usize>) {
        match (buffer, tia) {
            (Some(b), _) => (b.out.clone(), b.parts()),
            (None, Some(t)) => (t.out.clone(), t.parts()),
            (None, None) => (term.to_string(), Vec::new()),
        }
    }
}

/// Circuits without whole roles (built by hand, or altered after synthesis): blocks by the
/// shapes of their nodes.
#[cfg(feature = "shape-fallback")]
fn fallback(c: &Circuit) -> Blocks {
    super::by_shape::blocks(c)
}

/// Without the shape fallback (the browser build, where every circuit comes from synthesis
/// with its roles) such a circuit places no block; its parts go to the unplaced area.
#[cfg(not(feature = "shape-fallback"))]
fn fallback(_: &Circuit) -> Blocks {
    Blocks {
        mode: Mode::Shapes,
        rails: Vec::new(),
        sensor: Sensor::Plain(Plain::default()),
        emf: None,
        pin: "adc".to_string(),
        buffer: None,
        tia: None,
        inamp: None,
        diff: None,
        pre: None,
        plan: None,
        chain: None,
    }
}

/// The converter load found by shape (only in the fallback).
pub(super) fn shape_load(c: &Circuit, net: &str) -> Option<usize> {
    #[cfg(feature = "shape-fallback")]
    return super::by_shape::load(c, net);
    #[cfg(not(feature = "shape-fallback"))]
    {
        let _ = (c, net);
        None
    }
}
