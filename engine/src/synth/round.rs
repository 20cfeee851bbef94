//! Rounding a continuous design to standard values while minimising the mapping error.
//!
//! Rounding each resistor to its nearest series value independently can leave a gain or
//! offset error of a few per cent. Instead, [`optimise`] sweeps one *anchor* resistor over
//! every series value in the window, derives the others from the ideal equations, rounds
//! them to the nearest series value and scores the result with the caller's cost (the
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
        let mut rounded = Vec::with_capacity(ideal_values.len());
        let mut ok = true;
        for v in ideal_values {
            // An ideal value far outside the window cannot be rounded into it sensibly.
            if !(v.is_finite() && v >= cfg.min / 1.5 && v <= cfg.max * 1.5) {
                ok = false;
                break;
            }
            match values::nearest(cfg.series, v.clamp(cfg.min, cfg.max)) {
                Some(r) => rounded.push(r.clamp(cfg.min, cfg.max)),
                None => {
                    ok = false;
                    break;
                }
            }
        }
        if !ok {
            continue;
        }
        let c = cost(&rounded);
        if c.is_finite() {
            starts.push((rounded, c));
        }
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
