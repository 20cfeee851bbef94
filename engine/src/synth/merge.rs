//! Building the anti-alias filter's first-order pole into the gain stage, which saves the
//! follower that pole would otherwise need.
//!
//! A first-order low-pass needs only a resistance and a capacitance; the gain stage already
//! has a resistance in the right place in two of its forms:
//!
//! * **Inverting** (the signal enters the − input through R_in, R_f from the output): a
//!   capacitor C across R_f turns the signal gain into −(R_f/R_in)/(1 + s·R_f·C), a pole at
//!   1/(2π·R_f·C) for every path into the − input. DC levels are unchanged (C is open there).
//! * **Divider into the + input** (DC coupling: R_top from the sensor, legs to ground or to
//!   rails at the + input): a capacitor C from the + input to ground makes a pole at
//!   1/(2π·R_th·C), with R_th = (R_top + R_sensor) ∥ (the legs), since the + input draws
//!   no signal current and the rails are AC ground. DC levels are unchanged.
//!
//! C is the capacitor-series value nearest the one that puts the pole on the designed
//! section's corner; the merge is taken only when the rounded cascade with that pole still
//! rejects at least as much as the rule asks (or as the separate section did) and keeps the
//! in-band error within what the filter was allowed — "without hurting anything". Other
//! forms (AC coupling, a + input driven straight from the sensor) keep the separate section.

use std::f64::consts::PI;

use crate::circuit::{Circuit, Part, PartKind, PartRole, StageKind, GND};
use crate::request::{Coupling, Request};
use crate::synth::filter::sections::{SectionKind, C_MAX, C_MIN};
use crate::synth::filter::FilterDesign;
use crate::values;

/// Where the first-order pole goes and with which parts.
#[derive(Debug, Clone, PartialEq)]
pub struct Merge {
    /// The capacitor's nodes.
    pub nodes: [String; 2],
    pub capacitor: f64,
    /// The resistance the capacitor works against, Ω.
    pub resistance: f64,
    /// The pole's frequency with the rounded capacitor, Hz.
    pub f_p: f64,
    /// How it is built, for the part's purpose and the equations.
    pub how: &'static str,
    /// The capacitor's role: across the feedback resistor, or from the + input to ground.
    pub role: PartRole,
}

/// The merge for the single-ended gain stage in `c` (its output already renamed to `out`),
/// or `None` when the stage has no place for the pole or the pole would cost rejection or
/// flatness.
/// On success `f` is updated: section 1 is marked as in the gain stage with its new pole,
/// and the cascade's figures are recomputed.
pub fn plan(c: &Circuit, req: &Request, f: &mut FilterDesign, out: &str) -> Option<Merge> {
    let first = f.realised.first().filter(|r| r.kind == SectionKind::FirstOrder)?;
    let want = first.f_n;
    let stage = c.stages.iter().find(|s| matches!(s.kind, StageKind::Gain { .. }))?;
    let in_stage = |p: &Part, role: PartRole| p.role == Some(role) && stage.parts.contains(&p.reference);
    let has = |role: PartRole| c.parts.iter().find(|p| in_stage(p, role));
    let u = has(PartRole::Amplifier).filter(|u| u.nodes.len() >= 5)?;
    let inp = u.nodes[0].clone();
    let plain = |p: &Part| !p.bench && p.kind == PartKind::Resistor && p.nodes.len() == 2;
    let capacitor_at =
        |n: &str| c.parts.iter().any(|p| !p.bench && p.kind == PartKind::Capacitor && p.nodes.iter().any(|x| x == n));
    let (nodes, resistance, how, role) = if has(PartRole::MinusInput).is_some() {
        let rf = has(PartRole::FeedbackResistor)?;
        let inn = u.nodes[1].clone();
        ([out.to_string(), inn], rf.value, "capacitor across the feedback resistor", PartRole::FeedbackPole)
    } else if req.source.coupling == Coupling::Dc && has(PartRole::PlusInput).is_some() && !capacitor_at(&inp) {
        // The + input's legs in parallel, the sensor's impedance in series with its own.
        let mut g = 0.0;
        for p in c.parts.iter().filter(|p| plain(p) && p.nodes.contains(&inp)) {
            let r = if p.role == Some(PartRole::PlusInput) { p.value + req.source.impedance } else { p.value };
            g += 1.0 / r;
        }
        if g <= 0.0 {
            return None;
        }
        ([inp.clone(), GND.to_string()], 1.0 / g, "capacitor from the + input to ground", PartRole::InputPole)
    } else {
        return None;
    };
    // The capacitor series rarely has the exact value: the whole filter moves its corner so
    // that the pole lands where the prototype wants it relative to the other sections, if
    // that corner is still inside the interval the rule allows (`FilterDesign::at_corner`).
    let ratio = f.sections.first().map_or(1.0, |s| s.f_n / f.corner);
    let ideal = 1.0 / (2.0 * PI * resistance * want);
    let (below, above) = values::bracket(req.parts.capacitor_series, ideal)?;
    let mut candidates = vec![below, above];
    crate::order::sort_by(&mut candidates, |a, b| (a / ideal).ln().abs().total_cmp(&(b / ideal).ln().abs()));
    candidates.dedup();
    for capacitor in candidates.into_iter().filter(|x| (C_MIN..=C_MAX).contains(x)) {
        let f_p = 1.0 / (2.0 * PI * resistance * capacitor);
        let Some(mut d) = f.at_corner(req, f_p / ratio) else { continue };
        d.realised[0].f_n = f_p;
        d.realised[0].values = vec![resistance, capacitor];
        let rejection = d.rounded_loss_db(d.alias_frequency);
        let flatness = d.rounded_passband_error_db(req.source.band_high);
        if rejection + 1e-9 < d.required_db || flatness > d.passband_allowed_db + 1e-9 {
            continue;
        }
        d.rounded_db = rejection;
        d.passband_error_db = flatness;
        if let Some(s) = d.sections.first_mut() {
            s.f_n_rounded = f_p;
            s.f_n_error = f_p / s.f_n - 1.0;
            s.in_gain_stage = true;
        }
        *f = d;
        return Some(Merge { nodes, capacitor, resistance, f_p, how, role });
    }
    None
}
