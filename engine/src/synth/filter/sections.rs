//! Filter sections from part values and back: the Sallen-Key, multiple-feedback and
//! first-order formulas, and the choice of standard values for a wanted f_n and Q.
//!
//! * **Unity-gain Sallen-Key** (R1 from the input to the junction, R2 from the junction to
//!   the + input, C_f from the junction to the output, C_g from the + input to ground):
//!   f_n = 1/(2π√(R1·R2·C_f·C_g)), Q = √(R1·R2·C_f·C_g)/(C_g·(R1 + R2)). Real resistors
//!   exist only for C_f/C_g ≥ 4Q².
//! * **Multiple feedback**, inverting (R1 from the input to node A, R2 from A to the output,
//!   R3 from A to the − input, C_g from A to ground, C_f from the output to the − input):
//!   gain −R2/R1, f_n = 1/(2π√(R2·R3·C_g·C_f)), Q = √(R2·R3·C_g·C_f)/(C_f·(R2 + R3 + R2·R3/R1)).
//!   Sections here have unity gain (R1 = R2, one value), so the DC level mirrors exactly
//!   around the reference; real resistors exist only for C_g/C_f ≥ 8Q².
//! * **First order:** an RC into a follower, f_c = 1/(2πRC).
//!
//! Values: capacitors come from their series first (the coarse one, E6 or E12), a pair
//! whose ratio is a margin above the minimum for real resistors; the resistors are then
//! solved and rounded to their series by [`crate::synth::round`], with the relative errors
//! of f_n and Q after rounding as the cost. A few capacitor pairs whose resistors sit
//! nearest [`R_PREFERRED`] are tried and the best rounded result wins. f_n and Q are then
//! recomputed from the rounded values.

use std::f64::consts::PI;

use crate::request::FilterTopology;
use crate::synth::round::{optimise_all, RoundConfig};
use crate::values::{self, Series};

/// Resistance the section's resistors are steered toward (low enough for little noise and
/// bias-current error, high enough not to load the amplifiers; common practice).
pub const R_PREFERRED: f64 = 10e3;
/// Smallest and largest capacitor used in a filter section, F (below ~50 pF stray
/// capacitance matters; from 10 µF the part list turns to electrolytics, whose leakage and
/// drift have no place where a capacitor sets a corner; common practice).
pub const C_MIN: f64 = 47e-12;
pub const C_MAX: f64 = 4.7e-6;
/// The capacitor ratio is kept this much above the minimum for real resistors, so that
/// rounding the resistors cannot cross it.
pub const RATIO_MARGIN: f64 = 1.1;
/// Capacitor pairs rounded per section.
const PAIRS_TRIED: usize = 4;

/// Unity-gain Sallen-Key low-pass: `(f_n, Q)`.
pub fn sallen_key(r1: f64, r2: f64, cf: f64, cg: f64) -> (f64, f64) {
    let root = (r1 * r2 * cf * cg).sqrt();
    (1.0 / (2.0 * PI * root), root / (cg * (r1 + r2)))
}

/// Multiple-feedback low-pass: `(gain, f_n, Q)`.
pub fn multiple_feedback(r1: f64, r2: f64, r3: f64, cg: f64, cf: f64) -> (f64, f64, f64) {
    let root = (r2 * r3 * cg * cf).sqrt();
    (-r2 / r1, 1.0 / (2.0 * PI * root), root / (cf * (r2 + r3 + r2 * r3 / r1)))
}

/// First-order RC corner, Hz.
pub fn first_order(r: f64, c: f64) -> f64 {
    1.0 / (2.0 * PI * r * c)
}

/// How a section is built.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SectionKind {
    /// RC into a follower.
    FirstOrder,
    SallenKey,
    MultipleFeedback,
}

impl SectionKind {
    pub fn of(topology: FilterTopology) -> SectionKind {
        match topology {
            FilterTopology::SallenKey => SectionKind::SallenKey,
            FilterTopology::MultipleFeedback => SectionKind::MultipleFeedback,
        }
    }
}

/// A section with standard values.
#[derive(Debug, Clone, PartialEq)]
pub struct Realised {
    pub kind: SectionKind,
    /// First order: `[R, C]`; Sallen-Key: `[R1, R2, C_f, C_g]`; multiple feedback:
    /// `[R (= R1 = R2), R3, C_g, C_f]`.
    pub values: Vec<f64>,
    pub f_n: f64,
    pub q: f64,
}

/// Series and windows the parts come from.
#[derive(Debug, Clone, Copy)]
pub struct PartsConfig {
    pub resistors: RoundConfig,
    pub capacitors: Series,
}

impl PartsConfig {
    /// The series and windows the request allows.
    pub fn of(parts: &crate::request::Parts) -> PartsConfig {
        PartsConfig { resistors: RoundConfig::of(parts), capacitors: parts.capacitor_series }
    }
}

/// f_n and Q of `kind` built from `values` (ideal amplifier). First order: Q = 0.
pub fn response_of(kind: SectionKind, values: &[f64]) -> (f64, f64) {
    match (kind, values) {
        (SectionKind::FirstOrder, [r, c, ..]) => (first_order(*r, *c), 0.0),
        (SectionKind::SallenKey, [r1, r2, cf, cg, ..]) => sallen_key(*r1, *r2, *cf, *cg),
        (SectionKind::MultipleFeedback, [r, r3, cg, cf, ..]) => {
            let (_, f, q) = multiple_feedback(*r, *r, *r3, *cg, *cf);
            (f, q)
        }
        _ => (f64::NAN, f64::NAN),
    }
}

/// Standard values for a section of `kind` with pole frequency `f_n` (Hz) and `q`
/// (ignored for first order); `None` when no capacitor pair in the series gives resistors
/// inside the window.
pub fn realise(kind: SectionKind, f_n: f64, q: f64, cfg: PartsConfig) -> Option<Realised> {
    if !(f_n.is_finite() && f_n > 0.0) || (kind != SectionKind::FirstOrder && !(q.is_finite() && q > 0.0)) {
        return None;
    }
    let w = 2.0 * PI * f_n;
    let caps = values::values_between(cfg.capacitors, C_MIN, C_MAX);
    let (rlo, rhi) = (cfg.resistors.min, cfg.resistors.max);
    let inside = |r: f64| r >= rlo / 1.2 && r <= rhi * 1.2;
    // Candidates: (score, capacitors, ideal resistors).
    let mut cands: Vec<(f64, Vec<f64>, Vec<f64>)> = Vec::new();
    for &c in &caps {
        match kind {
            SectionKind::FirstOrder => {
                let r = 1.0 / (w * c);
                if inside(r) {
                    cands.push(((r / R_PREFERRED).ln().abs(), vec![c], vec![r]));
                }
            }
            SectionKind::SallenKey => {
                let cg = c;
                for cf in partners(cfg.capacitors, 4.0 * q * q * cg * RATIO_MARGIN) {
                    let s = 1.0 / (w * cg * q);
                    let p = 1.0 / (w * w * cf * cg);
                    let disc = s * s - 4.0 * p;
                    if disc < 0.0 {
                        continue;
                    }
                    let (r1, r2) = (0.5 * (s + disc.sqrt()), 0.5 * (s - disc.sqrt()));
                    if inside(r1) && inside(r2) {
                        cands.push((((r1 * r2).sqrt() / R_PREFERRED).ln().abs(), vec![cf, cg], vec![r1, r2]));
                    }
                }
            }
            SectionKind::MultipleFeedback => {
                let cf = c;
                for cg in partners(cfg.capacitors, 8.0 * q * q * cf * RATIO_MARGIN) {
                    // R1 = R2 = R: 2R² − R/(ω·C_f·Q) + 1/(ω²·C_g·C_f) = 0, R3 = 1/(ω²·C_g·C_f·R).
                    let b = 1.0 / (w * cf * q);
                    let disc = b * b - 8.0 / (w * w * cg * cf);
                    if disc < 0.0 {
                        continue;
                    }
                    for r in [0.25 * (b + disc.sqrt()), 0.25 * (b - disc.sqrt())] {
                        let r3 = 1.0 / (w * w * cg * cf * r);
                        if inside(r) && inside(r3) {
                            cands.push((
                                ((r * r3).sqrt() / R_PREFERRED).ln().abs() + 0.1 * (r / r3).ln().abs(),
                                vec![cg, cf],
                                vec![r, r3],
                            ));
                        }
                    }
                }
            }
        }
    }
    crate::order::sort_by(&mut cands, |a, b| a.0.total_cmp(&b.0));
    cands.truncate(PAIRS_TRIED);
    let mut best: Option<(f64, Realised)> = None;
    for (_, c, r) in cands {
        let assemble = |rs: &[f64]| -> Vec<f64> { rs.iter().chain(c.iter()).copied().collect() };
        let cost = |rs: &[f64]| {
            let (f, qq) = response_of(kind, &assemble(rs));
            let q_err = if kind == SectionKind::FirstOrder { 0.0 } else { (qq / q - 1.0).abs() };
            let c = (f / f_n - 1.0).abs() + q_err;
            if c.is_finite() {
                c + 1e-6 * rs.iter().map(|x| (x / R_PREFERRED).ln().abs()).sum::<f64>()
            } else {
                f64::INFINITY
            }
        };
        let Some((rs, score)) = optimise_all(cfg.resistors, std::iter::once(r), cost) else { continue };
        let v = assemble(&rs);
        let (f, qq) = response_of(kind, &v);
        if best.as_ref().is_none_or(|b| score < b.0) {
            best = Some((score, Realised { kind, values: v, f_n: f, q: qq }));
        }
    }
    best.map(|b| b.1)
}

/// The first two series values at or above `v`.
fn partners(series: Series, v: f64) -> Vec<f64> {
    let Some(a) = values::step_up(series, v * (1.0 - 1e-9)) else { return Vec::new() };
    let mut out = vec![a];
    if let Some(b) = values::step_up(series, a * (1.0 + 1e-6)) {
        out.push(b);
    }
    out.into_iter().filter(|&c| (C_MIN..=C_MAX).contains(&c)).collect()
}
