//! Synthesis: from a request to the one circuit model, for single-ended voltage sensors.
//!
//! Gain and level shift are solved together as y = m·x + b ([`Target`]): the sensor's
//! extremes land on the converter's range less the headroom (DC coupling), or the swing
//! lands symmetrically around the middle of that range (AC coupling). The targets are first
//! pulled inside what the amplifier's output can reach on the rails.
//!
//! Every DC case is met by one amplifier ([`dc`]): a non-inverting stage whose + input is a
//! weighted average of the sensor, a rail and ground (m > 0, b ≥ 0, or b < 0 with a negative
//! rail); a non-inverting stage whose feedback leg returns partly to the positive rail
//! (m > 0, b < 0 on one supply); and, when polarity may flip, an inverting stage with its +
//! input on a divider, or an inverting summer (m < 0). Because a reference divider is folded
//! into the summing network, its own impedance is part of the gain equations and it never
//! needs a buffer. AC coupling ([`ac`]) uses a coupling capacitor into a non-inverting stage
//! biased from a bypassed divider at the output's DC level, with DC gain one.
//!
//! Values: every resistor is rounded to the requested series inside the resistor window by
//! [`round`]: a sweep over the anchor resistor's series values, nearest rounding of the
//! others, then a neighbour-step descent on the mapping error of the rounded circuit.

pub mod ac;
pub mod chain;
pub mod dc;
pub mod decouple;
pub mod drive;
pub mod filter;
pub mod front;
pub mod merge;
pub mod round;

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Builder, Circuit, PartKind, PartRole, Stage, StageRole};
use crate::diag::Check;
use crate::request::{Coupling, Request};

/// Margin kept inside the amplifier's stated output swing, V (common practice: the output
/// stage's gain falls off before the stated limit).
pub const SWING_MARGIN: f64 = 0.01;

/// How far (fraction of the converter span) an extreme may pass the headroom limit and
/// still count as inside: 10 ppm, the size of the amplifier's finite-gain error in a
/// follower, far below anything the headroom is for.
pub const HEADROOM_SLACK: f64 = 1e-5;

/// The mapping the design aims for.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Target {
    /// Output wanted at the sensor's minimum and maximum (AC: the output's swing extremes).
    pub at_min: f64,
    pub at_max: f64,
    /// Wanted gain m (V/V, signed).
    pub gain: f64,
    /// DC coupling: the intercept b; AC coupling: the output's DC level.
    pub offset: f64,
}

/// What synthesis produced: the circuit and how it got there.
#[derive(Debug, Clone)]
pub struct Synthesis {
    pub circuit: Circuit,
    pub target: Target,
    /// Short name of the topology, e.g. "non-inverting stage with offset from the positive rail".
    pub topology: String,
    /// Design equations with the numbers substituted.
    pub equations: Vec<String>,
    /// Ideal-amplifier mapping error after rounding, in volts at the worse extreme.
    pub rounding_error: f64,
    /// Lowest and highest voltage the amplifier's + input sees over the source range (ideal amplifier).
    pub plus_range: (f64, f64),
    pub checks: Vec<Check>,
    /// The anti-alias filter after the gain stage, or why there is none.
    pub filter: Option<filter::FilterDesign>,
    pub no_filter: Option<filter::NoFilter>,
    /// The converter drive after the filter.
    pub drive: Option<drive::DriveDesign>,
}

/// Where the amplifier's output and inputs may go.
#[derive(Debug, Clone, Copy)]
pub struct Limits {
    pub out_lo: f64,
    pub out_hi: f64,
    pub in_lo: f64,
    pub in_hi: f64,
}

/// The rails at the low end of their tolerance (each rail nearer ground): where an
/// amplifier's reach is smallest.
pub fn low_rails(req: &Request, rails: Rails) -> Rails {
    Rails {
        pos: rails.pos * (1.0 - req.rail_tolerance(rails.pos)),
        neg: rails.neg * (1.0 - req.rail_tolerance(rails.neg)),
    }
}

/// Computes the target mapping. Returns `None` (with an error check) when nothing usable
/// is left of the converter range.
pub fn target(req: &Request, amp: &Amplifier, rails: Rails, checks: &mut Vec<Check>) -> Option<Target> {
    let d = &req.destination;
    let s = &req.source;
    let span = d.max - d.min;
    let mut lo = d.min + d.headroom * span;
    let mut hi = d.max - d.headroom * span;
    // The swing on the rails at the low end of their tolerance, so that no build of the
    // supply clips the range.
    let (out_lo, out_hi) = amp.output_limits(low_rails(req, rails));
    // Stay a margin inside the stated swing: the output stage stops being linear before it.
    let (out_lo, out_hi) = (out_lo + SWING_MARGIN, out_hi - SWING_MARGIN);
    let fmt = |v: f64| crate::units::format(v, crate::units::Quantity::Voltage);
    if lo < out_lo || hi > out_hi {
        let new_lo = lo.max(out_lo);
        let new_hi = hi.min(out_hi);
        if new_hi - new_lo < 0.5 * (hi - lo) {
            checks.push(Check::error(
                "range_beyond_rails",
                format!(
                    "The amplifier output reaches only {} … {} on these rails at the low end of their tolerance, which \
                        covers less than half of the wanted {} … {}; add a rail that reaches the converter range \
                        (e.g. a negative rail for a converter input below 0 V) or give amplifier swing figures.",
                    fmt(out_lo), fmt(out_hi), fmt(lo), fmt(hi)
                ),
            ));
            return None;
        }
        checks.push(Check::warning(
            "swing_limits_range",
            format!(
                "The amplifier output reaches only {} … {} on these rails at the low end of their tolerance \
                    (supply_tolerance), so the design uses {} … {} instead of {} … {}; a rail-to-rail output \
                    amplifier or a wider rail recovers the rest.",
                fmt(out_lo),
                fmt(out_hi),
                fmt(new_lo),
                fmt(new_hi),
                fmt(lo),
                fmt(hi)
            ),
        ));
        lo = new_lo;
        hi = new_hi;
    }
    let x_span = s.max - s.min;
    if x_span.is_nan() || x_span <= 0.0 {
        return None;
    }
    let m = (hi - lo) / x_span;
    Some(match s.coupling {
        Coupling::Dc => Target { at_min: lo, at_max: hi, gain: m, offset: lo - m * s.min },
        Coupling::Ac => Target { at_min: lo, at_max: hi, gain: m, offset: 0.5 * (lo + hi) },
    })
}

impl Limits {
    pub fn of(amp: &Amplifier, rails: Rails) -> Limits {
        let (in_lo, in_hi) = amp.input_limits(rails);
        let (out_lo, out_hi) = amp.output_limits(rails);
        Limits { out_lo, out_hi, in_lo, in_hi }
    }
}

/// Runs synthesis for a request that passed the feasibility checks: the filter and drive
/// are planned first ([`chain`]), the gain stage is designed for what they leave it to
/// deliver, and they are attached after it.
pub fn synthesize(req: &Request, amp: &Amplifier, rails: Rails, target: Target) -> Option<Synthesis> {
    let chain = chain::plan(req, amp, rails);
    synthesize_with_chain(req, amp, rails, target, &chain)
}

/// [`synthesize`] with the filter and drive already planned.
pub fn synthesize_with_chain(
    req: &Request, amp: &Amplifier, rails: Rails, target: Target, chain: &chain::Chain,
) -> Option<Synthesis> {
    let limits = Limits::of(amp, rails);
    let reference = chain.reference(req, rails, target);
    let t = chain.gain_target(req, target, reference.as_ref());
    let mut s = match (req.source.kind, req.source.coupling) {
        (crate::request::SourceKind::Differential, _) => front::difference::synthesize(req, amp, rails, t, limits),
        (_, Coupling::Dc) => dc::synthesize(req, amp, rails, t, limits),
        (_, Coupling::Ac) => ac::synthesize(req, amp, rails, t, limits),
    }?;
    chain.attach(&mut s, req, rails, reference.as_ref());
    // Followers and Sallen-Key sections see the gain stage's output at their + inputs.
    if s.filter
        .as_ref()
        .is_some_and(|f| f.sections.iter().any(|x| x.kind != filter::sections::SectionKind::MultipleFeedback))
    {
        let (lo, hi) = (t.at_min.min(t.at_max), t.at_min.max(t.at_max));
        s.plus_range = (s.plus_range.0.min(lo), s.plus_range.1.max(hi));
    }
    s.target = target;
    Some(s)
}

/// Adds the bench around the design: the sensor as `VSENSE` (EMF at the middle of its range)
/// behind `RSENSE`, the rails `VPOS` (and `VNEG`), and the converter's input load `RADC`.
fn bench(bld: &mut Builder, req: &Request, rails: Rails) {
    let s = &req.source;
    bld.bench(
        "VSENSE",
        PartKind::VoltageSource,
        0.5 * (s.min + s.max),
        &["emf", "0"],
        (StageRole::Sensor, PartRole::Emf),
        "sensor EMF (swept over the source range)",
    );
    // A zero source impedance is modelled as 1 mΩ so that the sensor terminal stays a node.
    bld.bench(
        "RSENSE",
        PartKind::Resistor,
        s.impedance.max(1e-3),
        &["emf", "sense"],
        (StageRole::Sensor, PartRole::SourceResistance),
        "sensor output impedance",
    );
    let rail = (StageRole::Supply, PartRole::Rail);
    bld.bench("VPOS", PartKind::VoltageSource, rails.pos, &["vpos", "0"], rail, "positive rail");
    if rails.is_dual() {
        bld.bench("VNEG", PartKind::VoltageSource, rails.neg, &["vneg", "0"], rail, "negative rail");
    }
    bld.bench(
        "RADC",
        PartKind::Resistor,
        req.destination.impedance,
        &["adc", "0"],
        (StageRole::Converter, PartRole::ConverterLoad),
        "converter input impedance",
    );
}

/// Node of the converter's reference pin when levels are taken from it.
pub const REFERENCE_NODE: &str = "vref";

/// Where a level shift or bias of `level` volts (above ground) is taken from: the converter's
/// reference pin when the request brings one out (and it reaches above the level), else the
/// positive rail. Returns the source's voltage and node.
pub fn level_source(req: &Request, rails: Rails, level: f64) -> (f64, &'static str) {
    let d = &req.destination;
    let vref = d.reference(rails.pos);
    if d.reference_pin && !d.ratiometric && level < vref {
        (vref, REFERENCE_NODE)
    } else {
        (rails.pos, "vpos")
    }
}

/// Adds the converter's reference pin as the bench source `VREF` when `node` is its node
/// and it is not there yet.
pub fn reference_pin(bld: &mut Builder, req: &Request, rails: Rails, node: &str) {
    if node != REFERENCE_NODE || bld.parts.iter().any(|p| p.role == Some(PartRole::ConverterReference)) {
        return;
    }
    let at = (StageRole::Supply, PartRole::ConverterReference);
    let v = req.destination.reference(rails.pos);
    bld.bench("VREF", PartKind::VoltageSource, v, &[REFERENCE_NODE, "0"], at, "converter's reference pin");
}

/// Wraps the built parts into the circuit model.
pub(crate) fn finish(bld: Builder, stages: Vec<Stage>, amp: &Amplifier, rails: Rails) -> Circuit {
    Circuit { parts: bld.parts, stages, amplifier: amp.clone(), rail_pos: rails.pos, rail_neg: rails.neg }
}
