//! A resistive bridge (`source.kind = "bridge"`) as the differential pair it presents:
//! its legs at half the excitation, each behind half the arm resistance (Thévenin). The
//! pair then meets a difference amplifier or an instrumentation amplifier like any other;
//! this module adds what is the bridge's own: its excitation on the bench (`VEXC`,
//! `RBRIDGE`), its figures (excitation current, power per arm, one-arm nonlinearity, zero
//! balance) and their checks (self-heating, linearity, what a ratiometric reading cancels,
//! the zero balance against the headroom).

use serde::Serialize;

use crate::circuit::{Builder, Circuit, PartKind, PartRole, StageRole, GND};
use crate::request::Request;
use crate::units::{format, Quantity};

/// A bridge's figures (`bridge` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BridgeDesign {
    /// Current the bridge draws from its excitation, A.
    pub excitation_current: f64,
    /// Power in each arm, W.
    pub arm_power: f64,
    /// One active arm: how far the output at full scale falls short of a straight line,
    /// relative to full scale (0 for two or four arms in opposite pairs).
    pub nonlinearity: f64,
    /// The bridge's zero balance at its output, ± V.
    pub zero_offset: f64,
}

/// The differential pair a bridge presents: its legs at half the excitation, each behind
/// half the bridge resistance (two arms in parallel, Thévenin).
pub fn bridge_equivalent(req: &Request) -> Option<(Request, BridgeDesign)> {
    let b = req.source.bridge.clone()?;
    let mut eq = req.clone();
    eq.source.kind = crate::request::SourceKind::Differential;
    eq.source.impedance = 0.5 * b.bridge_resistance;
    eq.source.bridge = None;
    eq.source.measurand = None;
    // One active arm R(1 + x): V_out = V_exc·x/(4 + 2x) (references: Wheatstone bridge); at
    // full scale V_out/V_exc = S, so x = 4S/(1 − 2S) and the shortfall from the straight
    // line through the origin is 1 − (4 + 2·0)/(4 + 2x) = 2x/(4 + 2x).
    let nonlinearity = if b.active_arms == 1 {
        let x = 4.0 * b.sensitivity / (1.0 - 2.0 * b.sensitivity);
        2.0 * x / (4.0 + 2.0 * x)
    } else {
        0.0
    };
    let d = BridgeDesign {
        excitation_current: b.excitation / b.bridge_resistance,
        arm_power: (0.5 * b.excitation).powi(2) / b.bridge_resistance,
        nonlinearity,
        zero_offset: b.zero_balance * b.sensitivity * b.excitation,
    };
    Some((eq, d))
}

/// Adds the excitation to the bench: `VEXC` and the bridge's load on it (`RBRIDGE`, the
/// bridge seen across its excitation: its arm resistance).
pub fn insert_bridge(circuit: &mut Circuit, req: &Request) {
    let Some(b) = &req.source.bridge else { return };
    let mut bld = Builder::resume(std::mem::take(&mut circuit.parts));
    let at = (StageRole::Sensor, PartRole::Excitation);
    bld.bench("VEXC", PartKind::VoltageSource, b.excitation, &["exc", GND], at, "bridge excitation");
    bld.bench(
        "RBRIDGE",
        PartKind::Resistor,
        b.bridge_resistance,
        &["exc", GND],
        (StageRole::Sensor, PartRole::BridgeLoad),
        "the bridge's load on its excitation",
    );
    circuit.parts = bld.parts;
}

/// Checks of a bridge: excitation current and self-heating, one-arm nonlinearity, and what
/// a ratiometric converter cancels.
pub fn bridge_checks(req: &Request, d: &BridgeDesign) -> Vec<crate::diag::Check> {
    use crate::diag::Check;
    let Some(b) = &req.source.bridge else { return Vec::new() };
    let mut c = Vec::new();
    let text = format!(
        "The bridge draws {} from its {} excitation; each arm dissipates {}",
        format(d.excitation_current, Quantity::Current),
        format(b.excitation, Quantity::Voltage),
        format(d.arm_power, Quantity::Power)
    );
    // Common practice: foil strain gauges and load cells stay near their rated reading below
    // a few milliwatts per arm; above 10 mW self-heating shows as drift.
    c.push(if d.arm_power > 10e-3 {
        Check::warning("self_heating", format!("{text}, enough to warm the gauges and drift the reading; a lower excitation or a higher-resistance bridge reduces it."))
    } else {
        Check::ok("self_heating", format!("{text}."))
    });
    if d.nonlinearity > 0.0 {
        let pct = 100.0 * d.nonlinearity;
        c.push(if pct > 0.1 {
            Check::warning("bridge_linearity", format!("With one active arm the output bends {pct:.3} % of full scale short of a straight line at full scale (V_exc·x/(4 + 2x)); two or four active arms in opposite pairs, or a correction in firmware, remove it."))
        } else {
            Check::ok("bridge_linearity", format!("With one active arm the output bends {pct:.3} % of full scale short of a straight line at full scale (V_exc·x/(4 + 2x))."))
        });
    }
    c.push(if b.ratiometric {
        Check::ok("ratiometric", "The converter's reference is the bridge's excitation: a drift of the excitation moves the bridge's output and the converter's full scale alike and cancels in the reading; the amplifier's offset and the reference pin's level do not.".to_string())
    } else {
        Check::ok("ratiometric", format!("The excitation is not the converter's reference: a {} change of the excitation moves the reading by the same fraction; using the excitation as the converter's reference (ratiometric) cancels that.", "1 %"))
    });
    c
}

/// The zero-balance check of a bridge whose stage has gain `g`: the output shift against the
/// headroom, and the trim range the reference pin needs when the headroom cannot take it.
pub fn zero_trim(req: &Request, d: &BridgeDesign, g: f64) -> Option<crate::diag::Check> {
    use crate::diag::Check;
    let b = req.source.bridge.as_ref()?;
    let d_out = g * d.zero_offset;
    let room = req.destination.headroom * (req.destination.max - req.destination.min);
    let text = format!(
        "The bridge's zero balance (±{} of its full-scale output) moves the output by up to ±{}",
        crate::units::format_percent(b.zero_balance),
        format(d_out, Quantity::Voltage)
    );
    Some(if d_out > room {
        Check::warning("zero_trim", format!("{text}, more than the {} of headroom: trim the reference pin over ±{} (±{} referred to the bridge), or give more headroom.", format(room, Quantity::Voltage), format(d_out, Quantity::Voltage), format(d.zero_offset, Quantity::Voltage)))
    } else {
        Check::ok(
            "zero_trim",
            format!(
                "{text}, inside the {} of headroom; a tare reading in firmware removes it, no trim needed.",
                format(room, Quantity::Voltage)
            ),
        )
    })
}
