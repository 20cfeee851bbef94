//! Rounding a continuous design to standard values while minimising the mapping error.
//!
//! Rounding each resistor to its nearest series value independently can leave a gain or
//! offset error of a few per cent. Instead the search works in two phases:
//!
//! 1. **Starts.** The caller's ideal equations give continuous values for many *anchors*
//!    (one resistor swept over the series values in the window — every E24 step for the
//!    finer series, see [`anchors`]; for
//!    ratio-setting stages also over the best ratio pairs from [`pairs`]).
//!    Each ideal vector is rounded down and up in every combination (at most 2⁷) and scored
//!    with the caller's cost — the mapping error of the rounded circuit.
//! 2. **Descent.** From the best few starts over all anchors, a descent moves one resistor
//!    by one or two series steps, or two resistors by one step each, while the cost falls.
//!
//! The sweep covers every scale of the stage, so the window and the sensor impedance are
//! respected; the descent then works within one or two series steps of each start, which is
//! enough because the cost is smooth in each value and the ideal equations put every start
//! within one step of a local optimum. Only the best starts are descended, which keeps the
//! search to about a millisecond on the host.

use crate::values::{self, Series};

/// Series and window the rounded resistors must come from.
#[derive(Debug, Clone, Copy)]
pub struct RoundConfig {
    pub series: Series,
    pub min: f64,
    pub max: f64,
}

impl RoundConfig {
    /// The resistor series and window the request allows.
    pub fn of(parts: &crate::request::Parts) -> RoundConfig {
        RoundConfig { series: parts.resistor_series, min: parts.resistor_min, max: parts.resistor_max }
    }
}

/// Starts that go on to the descent.
const DESCENT_STARTS: usize = 4;
/// Passes of the descent at most.
const DESCENT_PASSES: usize = 30;

/// Best rounded values and their cost for a single-anchor family: `ideal(anchor)` returns
/// the continuous value of every resistor (or `None` when that anchor cannot work).
pub fn optimise(
    cfg: RoundConfig, ideal: impl Fn(f64) -> Option<Vec<f64>>, cost: impl Fn(&[f64]) -> f64,
) -> Option<(Vec<f64>, f64)> {
    optimise_all(cfg, anchors(cfg).into_iter().filter_map(ideal), cost)
}

/// Best rounded values and their cost over any number of ideal vectors (all of one length).
pub fn optimise_all(
    cfg: RoundConfig, ideals: impl Iterator<Item = Vec<f64>>, cost: impl Fn(&[f64]) -> f64,
) -> Option<(Vec<f64>, f64)> {
    let ladder = Ladder::new(cfg);
    let mut starts: Vec<(Vec<f64>, f64)> = Vec::new();
    let mut seen_empty = false;
    for ideal_values in ideals {
        if ideal_values.is_empty() {
            // Nothing to round: one evaluation is enough.
            if !seen_empty {
                seen_empty = true;
                let c = cost(&[]);
                if c.is_finite() {
                    starts.push((Vec::new(), c));
                }
            }
            continue;
        }
        let Some(choices) = ladder.brackets(cfg, &ideal_values) else { continue };
        // Only values that fall between two series values have a choice; at most 2^7 masks.
        let free: Vec<usize> = choices.iter().enumerate().filter(|(_, c)| c.0 != c.1).map(|(i, _)| i).take(7).collect();
        let mut v: Vec<f64> = choices.iter().map(|c| c.0).collect();
        let mut best_here: Option<(Vec<f64>, f64)> = None;
        for mask in 0u32..(1 << free.len()) {
            for (bit, &i) in free.iter().enumerate() {
                v[i] = if mask & (1 << bit) != 0 { choices[i].1 } else { choices[i].0 };
            }
            let c = cost(&v);
            if c.is_finite() && best_here.as_ref().is_none_or(|b| c < b.1) {
                best_here = Some((v.clone(), c));
            }
        }
        if let Some(s) = best_here {
            keep_best(&mut starts, s);
        }
    }
    let mut best: Option<(Vec<f64>, f64)> = None;
    for (v, c) in starts {
        let (v, c) = descend(&ladder, v, c, &cost);
        if best.as_ref().is_none_or(|b| c < b.1) {
            best = Some((v, c));
        }
    }
    best
}

/// Anchor values: every series value inside the window for E24 and coarser series; for the
/// finer series the value nearest each E24 value (the descent reaches the values between).
pub fn anchors(cfg: RoundConfig) -> Vec<f64> {
    if cfg.series.mantissas().len() <= 24 {
        return values::values_between(cfg.series, cfg.min, cfg.max);
    }
    let mut out: Vec<f64> = Vec::new();
    for g in values::values_between(Series::E24, cfg.min, cfg.max) {
        if let Some(v) = values::nearest(cfg.series, g) {
            if v >= cfg.min && v <= cfg.max && !out.contains(&v) {
                out.push(v);
            }
        }
    }
    out
}

/// Pairs `(b, a)` from the series inside the window whose `a / (b + offset)` is one of the
/// ratios closest to `ratio` (relative error) — about `n`, split between both sides of
/// `ratio` — every scaling of each, best ratio first.
/// `offset` is a fixed resistance in series with `b` (a sensor's impedance).
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
    crate::order::sort_by(&mut all, |x, y| x.2.total_cmp(&y.2));
    // Keep every scaling of the best ratios, half of them at or below the wanted ratio and
    // half at or above: the other values of a stage may fit the window at one scale only,
    // and keeping both ends inside the range can need a ratio on one particular side.
    let below = n.div_ceil(2);
    let above = n - below;
    let mut ratios: Vec<f64> = Vec::new();
    let (mut n_below, mut n_above) = (0, 0);
    let mut out: Vec<(f64, f64)> = Vec::new();
    for (b, a, _) in all {
        let r = a / (b + offset);
        let known = ratios.iter().any(|s| (s / r - 1.0).abs() < 1e-9);
        if !known {
            let side_below = r <= ratio;
            if (side_below && n_below == below) || (!side_below && n_above == above.max(1)) {
                continue;
            }
            if side_below {
                n_below += 1
            } else {
                n_above += 1
            }
            ratios.push(r);
        }
        if !out.contains(&(b, a)) {
            out.push((b, a));
        }
    }
    out
}

/// The series values inside the window, ascending, for fast bracketing and stepping (the
/// general [`values`] functions work across all decades and are slower per call).
struct Ladder {
    values: Vec<f64>,
}

impl Ladder {
    fn new(cfg: RoundConfig) -> Ladder {
        Ladder { values: values::values_between(cfg.series, cfg.min, cfg.max) }
    }

    /// Index of the largest value ≤ v (within 1e-9), clamped to the ladder.
    fn floor(&self, v: f64) -> usize {
        let i = self.values.partition_point(|&x| x <= v * (1.0 + 1e-9));
        i.saturating_sub(1)
    }

    /// The values below and above each ideal value, or `None` when one lies far outside
    /// the window (it cannot be rounded into it sensibly).
    fn brackets(&self, cfg: RoundConfig, ideal: &[f64]) -> Option<Vec<(f64, f64)>> {
        if self.values.is_empty() {
            return None;
        }
        let last = self.values.len() - 1;
        let mut out = Vec::with_capacity(ideal.len());
        for &v in ideal {
            if !(v.is_finite() && v >= cfg.min / 1.5 && v <= cfg.max * 1.5) {
                return None;
            }
            let i = self.floor(v);
            let lo = self.values[i];
            let hi = if lo >= v * (1.0 - 1e-9) { lo } else { self.values[(i + 1).min(last)] };
            out.push((lo.min(hi), hi));
        }
        Some(out)
    }

    /// Values up to `steps` steps above and below `v`.
    fn neighbours(&self, v: f64, steps: usize) -> impl Iterator<Item = f64> + '_ {
        let i = self.floor(v);
        let last = self.values.len().saturating_sub(1);
        (1..=steps).flat_map(move |k| {
            let up = (i + k <= last).then(|| self.values[i + k]);
            let down = (i >= k).then(|| self.values[i - k]);
            up.into_iter().chain(down)
        })
    }
}

/// Keeps the `DESCENT_STARTS` cheapest distinct starts.
fn keep_best(starts: &mut Vec<(Vec<f64>, f64)>, s: (Vec<f64>, f64)) {
    if starts.iter().any(|t| t.0 == s.0) {
        return;
    }
    if starts.len() < DESCENT_STARTS {
        starts.push(s);
    } else if let Some(worst) = starts.iter_mut().max_by(|a, b| a.1.total_cmp(&b.1)) {
        if s.1 < worst.1 {
            *worst = s;
        }
    }
}

/// Single and pair moves by series steps while the cost falls.
fn descend(ladder: &Ladder, mut v: Vec<f64>, mut c: f64, cost: &impl Fn(&[f64]) -> f64) -> (Vec<f64>, f64) {
    for _ in 0..DESCENT_PASSES {
        let mut improved = false;
        for i in 0..v.len() {
            let cands: Vec<f64> = ladder.neighbours(v[i], 2).collect();
            for cand in cands {
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
        // Pair moves walk along the narrow valleys a ratio of two values makes.
        for i in 0..v.len() {
            for j in (i + 1)..v.len() {
                let ai: Vec<f64> = ladder.neighbours(v[i], 1).collect();
                let bj: Vec<f64> = ladder.neighbours(v[j], 1).collect();
                for &a in &ai {
                    for &b in &bj {
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
    (v, c)
}
