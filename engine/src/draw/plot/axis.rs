//! Axes: how a value maps to a pixel, and where the ticks go.
//!
//! Linear axes step by 1, 2 or 5 × 10^k (phase by multiples of 45° or 90° where they give
//! three ticks or more, else 15° or 30°); log axes mark each decade, with unlabelled sub-ticks at
//! 2 and 5 × 10^k when at most [`MINOR_DECADES`] decades show. Both are common practice.
//! A log axis that spans less than a decade falls back to labelled 1-2-5 values, then to
//! linear steps. Every function here accepts any input (NaN, infinities, reversed or empty
//! ranges) and returns something drawable or an empty list.

/// A log axis spanning at most this many decades carries 2 and 5 sub-ticks.
pub const MINOR_DECADES: f64 = 5.0;

/// Most ticks any list holds, whatever the range.
pub const MAX_TICKS: usize = 64;

/// How values map onto an axis.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scale {
    Linear,
    Log,
}

/// One axis: the values `lo … hi` drawn from pixel `p0` to pixel `p1`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Axis {
    pub scale: Scale,
    pub lo: f64,
    pub hi: f64,
    pub p0: f64,
    pub p1: f64,
}

/// Ticks of a log axis: `major` values carry labels, `minor` ones do not.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LogTicks {
    pub major: Vec<f64>,
    pub minor: Vec<f64>,
}

impl Axis {
    /// An axis over `lo … hi`, the range made drawable first (see [`usable_range`]).
    pub fn new(scale: Scale, lo: f64, hi: f64, p0: f64, p1: f64) -> Axis {
        let (lo, hi) = usable_range(scale, lo, hi);
        let (p0, p1) = if p0.is_finite() && p1.is_finite() { (p0, p1) } else { (0.0, 1.0) };
        Axis { scale, lo, hi, p0, p1 }
    }

    /// Pixel position of `v`; `None` for a value the scale cannot show (NaN, or ≤ 0 on a
    /// log axis). Values outside the range map outside `p0 … p1`.
    pub fn px(&self, v: f64) -> Option<f64> {
        let t = match self.scale {
            Scale::Linear => (v - self.lo) / (self.hi - self.lo),
            Scale::Log if v > 0.0 => (v.log10() - self.lo.log10()) / (self.hi.log10() - self.lo.log10()),
            Scale::Log => return None,
        };
        let p = self.p0 + t * (self.p1 - self.p0);
        p.is_finite().then_some(p)
    }

    /// `v` lies inside the range (a hair of slack for rounding).
    pub fn contains(&self, v: f64) -> bool {
        match self.px(v) {
            Some(p) => {
                let (a, b) = (self.p0.min(self.p1), self.p0.max(self.p1));
                p >= a - 1e-6 && p <= b + 1e-6
            }
            None => false,
        }
    }

    /// Pixels per decade (log) or per unit (linear).
    pub fn density(&self) -> f64 {
        let span = match self.scale {
            Scale::Linear => self.hi - self.lo,
            Scale::Log => self.hi.log10() - self.lo.log10(),
        };
        ((self.p1 - self.p0) / span).abs()
    }
}

/// A range the scale can draw: finite, `lo < hi`, and positive on a log axis. An empty range
/// is widened round its value (±10 % or ±1 on a linear axis, a factor √10 each way on a log
/// axis); unusable input gives 0 … 1 (linear) or 1 … 10 (log).
pub fn usable_range(scale: Scale, lo: f64, hi: f64) -> (f64, f64) {
    let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    match scale {
        Scale::Linear => {
            if !(lo.is_finite() && hi.is_finite()) {
                return (0.0, 1.0);
            }
            if hi - lo > 1e-12 * lo.abs().max(hi.abs()) && hi - lo > 1e-300 {
                (lo, hi)
            } else {
                let d = if lo.abs() > 1e-200 { 0.1 * lo.abs() } else { 1.0 };
                (lo - d, hi + d)
            }
        }
        Scale::Log => {
            let ok = |v: f64| v.is_finite() && v > 1e-300 && v < 1e300;
            match (ok(lo), ok(hi)) {
                (true, true) if hi / lo > 1.0 + 1e-9 => (lo, hi),
                (true, true) => (lo / 10f64.sqrt(), hi * 10f64.sqrt()),
                (false, true) => (hi / 10.0, hi),
                (true, false) => (lo, lo * 10.0),
                (false, false) => (1.0, 10.0),
            }
        }
    }
}

/// The smallest step of 1, 2 or 5 × 10^k that puts at most `max_ticks` ticks in `lo … hi`
/// (common practice); NaN for an unusable range.
pub fn step_125(lo: f64, hi: f64, max_ticks: usize) -> f64 {
    step_from(lo, hi, max_ticks, &[1.0, 2.0, 5.0])
}

/// Tick values at the multiples of a 1-2-5 step inside `lo … hi`, at most `max_ticks`
/// (at least 2) of them; empty for an unusable range.
pub fn linear_ticks(lo: f64, hi: f64, max_ticks: usize) -> Vec<f64> {
    multiples(lo, hi, step_125(lo, hi, max_ticks))
}

/// Tick values for an angle in degrees: multiples of 45°, 90° or 180° (else 15° or 30°) when
/// one of them gives at least three ticks, else the 1-2-5 steps (common practice: quadrant boundaries
/// mean something on a phase plot).
pub fn angle_ticks(lo: f64, hi: f64, max_ticks: usize) -> Vec<f64> {
    for steps in [[45.0, 90.0, 180.0], [15.0, 30.0, 360.0]] {
        for step in steps {
            let t = multiples(lo, hi, step);
            if t.len() <= max_ticks.max(2) && t.len() >= 3 {
                return t;
            }
        }
    }
    linear_ticks(lo, hi, max_ticks)
}

/// `lo … hi` widened outward to the nearest multiples of its 1-2-5 step.
pub fn nice_bounds(lo: f64, hi: f64, max_ticks: usize) -> (f64, f64) {
    let (lo, hi) = usable_range(Scale::Linear, lo, hi);
    let step = step_125(lo, hi, max_ticks);
    if !step.is_finite() || step <= 0.0 {
        return (lo, hi);
    }
    let (a, b) = ((lo / step - 1e-9).floor() * step, (hi / step + 1e-9).ceil() * step);
    if a.is_finite() && b.is_finite() && b > a {
        (a, b)
    } else {
        (lo, hi)
    }
}

/// `lo … hi` widened outward to multiples of the smallest step that leaves at least
/// `spacing` px between ticks on an axis `len` px long: 1-2-5 × 10^k, or for an angle 45°,
/// 90°, 180° or 360°. The ticks then sit on both ends of the axis.
pub fn bounds_for(lo: f64, hi: f64, len: f64, spacing: f64, angle: bool) -> (f64, f64) {
    let (lo, hi) = usable_range(Scale::Linear, lo, hi);
    let span = hi - lo;
    let steps: Vec<f64> = if angle {
        vec![45.0, 90.0, 180.0, 360.0, 720.0]
    } else {
        let e0 = (span / 50.0).log10().floor() as i32;
        (e0..e0 + 5).flat_map(|e| [1.0, 2.0, 5.0].map(|m| m * 10f64.powi(e))).collect()
    };
    for step in steps {
        let (a, b) = ((lo / step - 1e-9).floor() * step, (hi / step + 1e-9).ceil() * step);
        let n = ((b - a) / step).round().max(1.0);
        if a.is_finite() && b.is_finite() && b > a && len / n >= spacing {
            return (a, b);
        }
    }
    (lo, hi)
}

/// Ticks of a log axis over `lo … hi`: every decade inside the range (every k-th when more
/// than [`MAX_TICKS`] would show) and, when at most [`MINOR_DECADES`] decades show, 2 and 5
/// times each decade as sub-ticks. A range holding fewer than two decades labels its 1, 2
/// and 5 values instead, and one holding fewer than two of those takes linear steps.
pub fn log_ticks(lo: f64, hi: f64) -> LogTicks {
    let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    if !(lo.is_finite() && hi.is_finite() && lo > 0.0 && hi > lo) {
        return LogTicks::default();
    }
    let inside = |v: f64| v >= lo * (1.0 - 1e-9) && v <= hi * (1.0 + 1e-9);
    let (e0, e1) = (lo.log10().floor() as i32, hi.log10().ceil() as i32);
    let every = (((e1 - e0) as usize).div_ceil(MAX_TICKS)).max(1) as i32;
    let decade = |e: i32| 10f64.powi(e);
    let decades: Vec<f64> = (e0..=e1).filter(|e| e.rem_euclid(every) == 0).map(decade).filter(|&v| inside(v)).collect();
    let span = hi.log10() - lo.log10();
    let subs: Vec<f64> = (e0..=e1).flat_map(|e| [2.0 * decade(e), 5.0 * decade(e)]).filter(|&v| inside(v)).collect();
    if decades.len() >= 2 {
        let minor = if span <= MINOR_DECADES { subs } else { Vec::new() };
        return LogTicks { major: decades, minor };
    }
    let mut ones: Vec<f64> = decades.iter().copied().chain(subs).collect();
    crate::order::sort_by(&mut ones, f64::total_cmp);
    if ones.len() >= 2 {
        return LogTicks { major: ones, minor: Vec::new() };
    }
    LogTicks { major: linear_ticks(lo, hi, 5).into_iter().filter(|&v| v > 0.0).collect(), minor: Vec::new() }
}

/// The multiples of `step` inside `lo … hi` (at most [`MAX_TICKS`]), each snapped to its
/// integer multiple so that 0.1 × 3 prints as 0.3, and −0 as 0.
pub fn multiples(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    if !(step.is_finite() && step > 0.0 && lo.is_finite() && hi.is_finite()) {
        return Vec::new();
    }
    let (k0, k1) = ((lo / step - 1e-9).ceil(), (hi / step + 1e-9).floor());
    if k1 - k0 >= MAX_TICKS as f64 || k1.is_nan() || k0.is_nan() {
        return Vec::new();
    }
    let mut out = Vec::new();
    let mut k = k0;
    while k <= k1 {
        let v = k * step;
        // Round away binary residue: keep 12 significant digits of the step's scale.
        let scale = 10f64.powi(step.log10().floor() as i32 - 9);
        let v = (v / scale).round() * scale;
        out.push(if v == 0.0 { 0.0 } else { v });
        k += 1.0;
    }
    out
}

/// The smallest step `m × 10^k` (m from `mantissas`, ascending) that puts at most
/// `max_ticks` (at least 2) multiples inside `lo … hi`.
fn step_from(lo: f64, hi: f64, max_ticks: usize, mantissas: &[f64]) -> f64 {
    let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    let span = hi - lo;
    let max_ticks = max_ticks.clamp(2, MAX_TICKS);
    if !(span.is_finite() && span > 0.0) {
        return f64::NAN;
    }
    let start = (span / max_ticks as f64).log10().floor() as i32 - 1;
    for e in start..start + 4 {
        for m in mantissas {
            let step = m * 10f64.powi(e);
            let count = (hi / step + 1e-9).floor() - (lo / step - 1e-9).ceil() + 1.0;
            if step > 0.0 && count <= max_ticks as f64 {
                return step;
            }
        }
    }
    10f64.powi(start + 4)
}
