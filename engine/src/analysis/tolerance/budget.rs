//! The spread budget of the worst case: how much of the output's spread at each end of the
//! sensor's range each class of parameter takes (resistors, amplifier input offset,
//! amplifier bias currents, the rails with the amplifiers' supply rejection, the converter's
//! reference), ranked, and the largest input offset and bias
//! current an amplifier may have for the worst case to stay inside the converter range.
//!
//! The worst case is linear in every parameter near nominal, so a class's part of the
//! spread at an end is half the sum of its parameters' full-range effects there (the
//! tolerance analysis measures each effect). The margin at an end is the distance from the
//! nominal output to the nearer limit of the converter range; the offset (bias current) a
//! design can take is what is left of the smaller margin once the other classes have
//! theirs, divided by the spread one volt of offset (one ampere of bias current) on every
//! amplifier causes — the bias current (offset) held at its stated figure.

use serde::Serialize;

use crate::analysis::perturb::{Param, ParamKind};

/// One class of parameter in the budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Contributor {
    /// The class in words ("resistor tolerances", "amplifier input offset" …).
    pub what: String,
    /// Its part of the worst-case spread at the worse end, ± V.
    pub spread: f64,
    /// Its share of the whole spread there.
    pub share: f64,
}

/// The worst case's spread budget (`analysis.tolerance.budget`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Budget {
    /// Largest first.
    pub contributors: Vec<Contributor>,
    /// The smaller distance from a nominal output at the sensor's ends to the limits of the
    /// usable range (the converter's, inside the output amplifier's swing on nominal rails), V.
    pub margin: f64,
    /// The largest input offset every amplifier may have for the worst case to stay inside
    /// the converter range (the bias currents at their stated figure), V; `None` when the
    /// offset moves nothing.
    pub offset_max: Option<f64>,
    /// The same for the input bias current (the offsets at their stated figure), A.
    pub bias_current_max: Option<f64>,
    /// The amplifier's stated (or assumed) input offset and bias current, V and A.
    pub offset_stated: f64,
    pub bias_current_stated: f64,
}

impl Budget {
    /// The largest contributor, if any.
    pub fn dominant(&self) -> Option<&Contributor> {
        self.contributors.first()
    }

    /// The contributors as "resistor tolerances 62 %, rail tolerance 30 % …".
    pub fn ranking(&self) -> String {
        self.contributors.iter().map(|c| format!("{} {:.0} %", c.what, 100.0 * c.share)).collect::<Vec<_>>().join(", ")
    }
}

/// The class a parameter counts in.
fn class(kind: ParamKind) -> Option<usize> {
    match kind {
        ParamKind::Resistor => Some(0),
        ParamKind::Offset => Some(1),
        ParamKind::BiasPlus | ParamKind::BiasMinus => Some(2),
        ParamKind::Capacitor => None,
    }
}

const NAMES: [&str; CLASSES] = [
    "resistor tolerances",
    "amplifier input offset",
    "amplifier bias currents",
    "rail tolerance",
    "converter reference",
];
const CLASSES: usize = 5;
/// The class of a rail (with the amplifiers' supply rejection) among the entries after the
/// parameters.
pub const RAILS: usize = 3;
/// The class of the converter's reference.
pub const REFERENCE: usize = 4;

/// The budget from each parameter's full-range effect on `[output at min, output at max, …]`
/// (`params`, then the entries after them with their classes `extra`: [`RAILS`] or
/// [`REFERENCE`]), the nominal outputs and the converter range.
pub fn budget(params: &[Param], extra: &[usize], effect: &[[f64; 4]], nominal: [f64; 2], range: (f64, f64)) -> Budget {
    // Spread per class and end: half the sum of the full-range effects.
    let mut spread = [[0.0f64; 2]; CLASSES];
    let mut offset_bound = 0.0f64;
    let mut bias_bound = 0.0f64;
    for (i, e) in effect.iter().enumerate() {
        let c = match params.get(i) {
            Some(p) => {
                match p.kind {
                    ParamKind::Offset => offset_bound = offset_bound.max(p.bound),
                    ParamKind::BiasPlus | ParamKind::BiasMinus => bias_bound = bias_bound.max(p.bound),
                    _ => {}
                }
                class(p.kind)
            }
            None => extra.get(i - params.len()).copied(),
        };
        let Some(c) = c else { continue };
        for q in 0..2 {
            if e[q].is_finite() {
                spread[c][q] += 0.5 * e[q].abs();
            }
        }
    }
    let margins = nominal.map(|y| (y - range.0).min(range.1 - y));
    let margin = margins[0].min(margins[1]);
    let worse =
        if spread.iter().map(|s| s[0]).sum::<f64>() >= spread.iter().map(|s| s[1]).sum::<f64>() { 0 } else { 1 };
    let total: f64 = spread.iter().map(|s| s[worse]).sum();
    let mut contributors: Vec<Contributor> = (0..CLASSES)
        .filter(|&c| spread[c][worse] > 0.0)
        .map(|c| Contributor {
            what: NAMES[c].to_string(),
            spread: spread[c][worse],
            share: if total > 0.0 { spread[c][worse] / total } else { 0.0 },
        })
        .collect();
    crate::order::sort_by(&mut contributors, |a, b| b.spread.total_cmp(&a.spread));
    // What is left of each end's margin for one class, over that class's spread per unit.
    let room = |c: usize, bound: f64| -> Option<f64> {
        let per_unit = |q: usize| spread[c][q] / bound;
        if bound <= 0.0 || (per_unit(0) <= 0.0 && per_unit(1) <= 0.0) {
            return None;
        }
        let limit = (0..2)
            .filter(|&q| per_unit(q) > 0.0)
            .map(|q| {
                let others: f64 = (0..CLASSES).filter(|&k| k != c).map(|k| spread[k][q]).sum();
                ((margins[q] - others) / per_unit(q)).max(0.0)
            })
            .fold(f64::INFINITY, f64::min);
        limit.is_finite().then_some(limit)
    };
    Budget {
        contributors,
        margin,
        offset_max: room(1, offset_bound),
        bias_current_max: room(2, bias_bound),
        offset_stated: offset_bound,
        bias_current_stated: bias_bound,
    }
}
