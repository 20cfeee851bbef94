//! Rounding a continuous design to standard values while minimising the mapping error.
//!
//! Rounding each resistor to its nearest series value independently can leave a gain or
//! offset error of a few per cent. Instead, [`optimise`] sweeps one *anchor* resistor over
//! every series value in the window, derives the others from the ideal equations, rounds
//! each of them down and up in every combination and scores the result with the caller's cost (the
//! mapping error of the rounded circuit). The best few starting points are then improved by
//! a descent that moves one resistor by one or two series steps, or two resistors by one
//! step each, while the cost falls. The search is exhaustive in the anchor and local in the rest, which is enough
//! because the cost is smooth in each value and the ideal equations put every start within
//! one series step of the optimum.

use crate::values::{self, Series};

/// Series and window the rounded resistors must come from.
#[derive(Debug, Clone, Copy)]
pub struct RoundConfig {
    pub series: Series,
    pub min: f64,
    pub max: f64,
}

/// Best rounded values and their cost. `ideal(anchor)` returns the continuous value of every
/// resistor for one anchor value (or `None` when that anchor cannot work); `cost` scores a
/// vector of rounded values, lower is better.
pub fn optimise(
    cfg: RoundConfig,
    ideal: impl Fn(f64) -> Option<Vec<f64>>,
    cost: impl Fn(&[f64]) -> f64,
) -> Option<(Vec<f64>, f64)> {
    let anchors = values::values_between(cfg.series, cfg.min, cfg.max);
    let mut starts: Vec<(Vec<f64>, f64)> = Vec::new();
    for a in anchors {
        let Some(ideal_values) = ideal(a) else { continue };
        // Each value's two neighbours in the series (equal when it is a series value).
        let mut choices: Vec<(f64, f64)> = Vec::with_capacity(ideal_values.len());
        for v in ideal_values {
            // An ideal value far outside the window cannot be rounded into it sensibly.
            if !(v.is_finite() && v >= cfg.min / 1.5 && v <= cfg.max * 1.5) {
                break;
            }
            match values::bracket(cfg.series, v.clamp(cfg.min, cfg.max)) {
                Some((lo, hi)) => choices.push((lo.clamp(cfg.min, cfg.max), hi.clamp(cfg.min, cfg.max))),
                None => break,
            }
        }
        if choices.len() != n_values(&ideal, a) {
            continue;
        }
        // Every combination of rounding down and up (at most 2^7), the best is this anchor's start.
        let n = choices.len().min(7);
        let mut best_here: Option<(Vec<f64>, f64)> = None;
        let mut v: Vec<f64> = choices.iter().map(|c| c.0).collect();
        for mask in 0u32..(1 << n) {
            for (i, c) in choices.iter().enumerate() {
                v[i] = if i < n && mask & (1 << i) != 0 { c.1 } else { c.0 };
            }
            let c = cost(&v);
            if c.is_finite() && best_here.as_ref().map_or(true, |b| c < b.1) {
                best_here = Some((v.clone(), c));
            }
        }
        starts.extend(best_here);
    }
    starts.sort_by(|a, b| a.1.total_cmp(&b.1));
    starts.truncate(8);
    let mut best: Option<(Vec<f64>, f64)> = None;
    for (mut v, mut c) in starts {
        for _ in 0..60 {
            let mut improved = false;
            // Single moves: one resistor by one or two series steps.
            for i in 0..v.len() {
                for cand in neighbours(cfg, v[i]) {
                    let old = v[i];
                    v[i] = cand;
                    let c2 = cost(&v);
                    if c2 < c - 1e-15 {
                        c = c2;
                        improved = true;
                    } else {
                        v[i] = old;
                    }
                }
            }
            // Pair moves: two resistors together by one step each, which walks along the
            // narrow valleys a ratio of two values makes.
            for i in 0..v.len() {
                for j in (i + 1)..v.len() {
                    for a in neighbours1(cfg, v[i]) {
                        for b in neighbours1(cfg, v[j]) {
                            let (oi, oj) = (v[i], v[j]);
                            v[i] = a;
                            v[j] = b;
                            let c2 = cost(&v);
                            if c2 < c - 1e-15 {
                                c = c2;
                                improved = true;
                            } else {
                                v[i] = oi;
                                v[j] = oj;
                            }
                        }
                    }
                }
            }
            if !improved {
                break;
            }
        }
        if best.as_ref().map_or(true, |b| c < b.1) {
            best = Some((v, c));
        }
    }
    best
}

/// Number of values `ideal` gives for `anchor` (0 when it gives none).
fn n_values(ideal: &impl Fn(f64) -> Option<Vec<f64>>, anchor: f64) -> usize {
    ideal(anchor).map_or(0, |v| v.len())
}

/// Series values one and two steps above and below `v`, inside the window.
fn neighbours(cfg: RoundConfig, v: f64) -> Vec<f64> {
    let mut out = Vec::with_capacity(4);
    let mut up = v;
    let mut down = v;
    for _ in 0..2 {
        if let Some(u) = values::step_up(cfg.series, up * 1.001) {
            if u <= cfg.max * (1.0 + 1e-9) {
                out.push(u);
                up = u;
            }
        }
        if let Some(d) = values::step_down(cfg.series, down * 0.999) {
            if d >= cfg.min * (1.0 - 1e-9) {
                out.push(d);
                down = d;
            }
        }
    }
    out
}

/// Series values one step above and below `v`, inside the window.
fn neighbours1(cfg: RoundConfig, v: f64) -> Vec<f64> {
    let mut out = Vec::with_capacity(2);
    if let Some(u) = values::step_up(cfg.series, v * 1.001) {
        if u <= cfg.max * (1.0 + 1e-9) {
            out.push(u);
        }
    }
    if let Some(d) = values::step_down(cfg.series, v * 0.999) {
        if d >= cfg.min * (1.0 - 1e-9) {
            out.push(d);
        }
    }
    out
}

/// Pairs `(b, a)` from the series inside the window whose `a / (b + offset)` is one of the
/// `n` ratios closest to `ratio` (relative error), every scaling of each, best ratio first. `offset` is a fixed
/// resistance in series with `b` (a sensor's impedance).
pub fn pairs(cfg: RoundConfig, ratio: f64, offset: f64, n: usize) -> Vec<(f64, f64)> {
    if !(ratio.is_finite() && ratio > 0.0) {
        return Vec::new();
    }
    let mut all: Vec<(f64, f64, f64)> = Vec::new();
    for b in values::values_between(cfg.series, cfg.min, cfg.max) {
        let want = ratio * (b + offset);
        if let Some((lo, hi)) = values::bracket(cfg.series, want) {
            for a in [lo, hi] {
                if a >= cfg.min * (1.0 - 1e-9) && a <= cfg.max * (1.0 + 1e-9) {
                    all.push((b, a, (a / (b + offset) / ratio - 1.0).abs()));
                }
            }
        }
    }
    all.sort_by(|x, y| x.2.total_cmp(&y.2));
    // Keep every scaling of the n best ratios: the other values of a stage may fit the window
    // at one scale only.
    let mut ratios: Vec<f64> = Vec::new();
    let mut out: Vec<(f64, f64)> = Vec::new();
    for (b, a, _) in all {
        let r = a / (b + offset);
        let known = ratios.iter().any(|s| (s / r - 1.0).abs() < 1e-9);
        if !known {
            if ratios.len() == n {
                continue;
            }
            ratios.push(r);
        }
        if !out.contains(&(b, a)) {
            out.push((b, a));
        }
    }
    out
}
