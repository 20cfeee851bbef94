//! The supply rails and the converter's reference as tolerance parameters, and what they do
//! to the converter pin (the `supply` check's figures).
//!
//! * **A rail** deviates by δ within ±its tolerance (`supply_tolerance`). The circuit is
//!   linear in the rail's voltage, so each quantity moves by its effect (from the solver, a
//!   0.1 % step with nominal parts) times δ: a level shift or bias taken from the rail moves
//!   the pin. On top, every amplifier's input offset moves by the rail's change times the
//!   amplifier's supply rejection (`amplifier.supply_rejection`), which reaches the pin
//!   through that amplifier's offset sensitivity; the data sheet gives only its size, so it is
//!   added in the direction that widens the spread. The swing limit on the rail's side moves
//!   with it.
//! * **The converter's reference** sets the span the codes divide: a reference ε high reads
//!   every voltage y as y·(1 − ε). The figures at the pin are kept in volts of the nominal
//!   range, so the reference counts as a parameter whose effect is −y (plus, where levels are
//!   taken from a reference pin, the solver's effect of that pin). A ratiometric converter's
//!   reference is the positive rail: that rail's effect then carries the −y too, so a level
//!   taken from it as a share of the rail cancels in the reading.

use serde::Serialize;

use crate::circuit::{Circuit, PartKind, PartRole, StageRole};
use crate::request::Request;
use crate::solve::Solver;

/// Designator of the converter's reference in the tolerance parameters and messages.
pub const REFERENCE: &str = "VREF";

/// A rail (or the converter's reference) as a tolerance parameter: its relative deviation δ
/// lies within ±`tolerance`; each quantity moves by `effect`·δ.
#[derive(Debug, Clone)]
pub(super) struct Rail {
    pub reference: String,
    pub volts: f64,
    pub tolerance: f64,
    pub effect: [f64; 4],
    /// A supply rail moves the amplifiers' swing limit on its side; the reference does not.
    pub moves_swing: bool,
}

/// How far the rails and the reference move the converter pin, for the `supply` check.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SupplyShift {
    /// Each supply rail's largest shift at the pin over the sensor's ends at ±its tolerance
    /// (its level shifts and the amplifiers' rejection together), V.
    pub rails: Vec<RailShift>,
    /// The part of the rails' shift that the amplifiers' supply rejection causes, V.
    pub rejection: f64,
    /// The rails' shifts added, V, and in LSB of the converter.
    pub total: f64,
    pub total_lsb: f64,
    /// The converter's reference at ±its tolerance: the largest shift of a reading at the
    /// sensor's ends, in volts at the pin (0 for a ratiometric converter, whose reference is a
    /// rail and counts there).
    pub reference: f64,
    /// Readings are ratiometric to the positive rail.
    pub ratiometric: bool,
    /// The amplifiers' supply rejection used, V/V.
    pub supply_rejection: f64,
}

/// One rail's shift at the pin.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RailShift {
    pub reference: String,
    pub volts: f64,
    pub tolerance: f64,
    /// V at the pin.
    pub shift: f64,
}

/// The rails and the reference of `circuit` as tolerance parameters. `base` is the nominal
/// `[output at min, output at max, gain, offset]`; `per_offset` gives each amplifier's
/// offset parameter with the change of each quantity per volt of that offset.
pub(super) fn rails(
    req: &Request, circuit: &Circuit, quantities: &dyn Fn(&Circuit) -> Option<[f64; 4]>, base: [f64; 4],
    per_offset: &[[f64; 4]],
) -> Vec<Rail> {
    const STEP: f64 = 1e-3;
    let Some(nominal) = quantities(circuit) else { return Vec::new() };
    let effect_of = |reference: &str| -> Option<[f64; 4]> {
        let mut c = circuit.clone();
        let part = c.parts.iter_mut().find(|q| q.reference == reference)?;
        part.value *= 1.0 + STEP;
        let moved = quantities(&c)?;
        Some(std::array::from_fn(|q| (moved[q] - nominal[q]) / STEP))
    };
    let d = &req.destination;
    let pos = circuit.rail_pos;
    let rejection = circuit.amplifier.supply_rejection.max(0.0);
    let mut out: Vec<Rail> = circuit
        .parts
        .iter()
        .filter(|p| p.stage == StageRole::Supply && p.kind == PartKind::VoltageSource)
        .filter(|p| p.role != Some(PartRole::ConverterReference))
        .filter_map(|p| {
            let mut effect = effect_of(&p.reference)?;
            for q in [0, 1, 3] {
                let shift: f64 = per_offset.iter().map(|s| s[q].abs()).sum::<f64>() * p.value.abs() * rejection;
                effect[q] += if effect[q] < 0.0 { -shift } else { shift };
            }
            if d.ratiometric && p.value == pos {
                for (e, y) in effect.iter_mut().zip(base) {
                    *e -= y;
                }
            }
            let tolerance = req.rail_tolerance(p.value);
            Some(Rail { reference: p.reference.clone(), volts: p.value, tolerance, effect, moves_swing: true })
        })
        .filter(|r| r.tolerance > 0.0)
        .collect();
    if !d.ratiometric && d.reference_tolerance > 0.0 {
        let pin = circuit.parts.iter().find(|p| p.role == Some(PartRole::ConverterReference)).map(|p| &p.reference);
        let fed = pin.and_then(|r| effect_of(r)).unwrap_or([0.0; 4]);
        out.push(Rail {
            reference: REFERENCE.to_string(),
            volts: d.reference(pos),
            tolerance: d.reference_tolerance,
            effect: std::array::from_fn(|q| fed[q] - base[q]),
            moves_swing: false,
        });
    }
    out
}

/// The `supply` check's figures from the rails as parameters (`per_offset` as for
/// [`rails`]) and the circuit's supply rejection.
pub(super) fn supply_shift(req: &Request, rails: &[Rail], per_offset: &[[f64; 4]], rejection: f64) -> SupplyShift {
    let at_ends = |e: &[f64; 4], t: f64| e[0].abs().max(e[1].abs()) * t;
    let mut shifts = Vec::new();
    let mut total = 0.0;
    let mut from_rejection = 0.0;
    let mut reference = 0.0;
    let sensitivity = per_offset.iter().map(|s| s[0].abs().max(s[1].abs())).sum::<f64>();
    for r in rails {
        let shift = at_ends(&r.effect, r.tolerance);
        if !r.moves_swing {
            reference = shift;
            continue;
        }
        total += shift;
        from_rejection += sensitivity * r.volts.abs() * r.tolerance * rejection;
        shifts.push(RailShift { reference: r.reference.clone(), volts: r.volts, tolerance: r.tolerance, shift });
    }
    let lsb = req.destination.lsb();
    SupplyShift {
        rails: shifts,
        rejection: from_rejection,
        total,
        total_lsb: if lsb > 0.0 { total / lsb } else { 0.0 },
        reference,
        ratiometric: req.destination.ratiometric,
        supply_rejection: rejection,
    }
}

/// The DC quantities of `c` on which a rail acts: `[output at min, output at max, slope,
/// intercept]`, or the rest level four times less the slope for AC coupling.
pub(super) fn dc_quantities(req: &Request, ac: bool, mid: f64) -> impl Fn(&Circuit) -> Option<[f64; 4]> + '_ {
    move |c: &Circuit| {
        let s = &req.source;
        let solver = Solver::new(c);
        let at = |x: f64| solver.dc(x).ok().and_then(|o| o.voltage("adc"));
        if ac {
            let level = at(mid)?;
            Some([level, level, 0.0, level])
        } else {
            let (y1, y2) = (at(s.min)?, at(s.max)?);
            let g = if s.max > s.min { (y2 - y1) / (s.max - s.min) } else { 0.0 };
            Some([y1, y2, g, y1 - g * s.min])
        }
    }
}
