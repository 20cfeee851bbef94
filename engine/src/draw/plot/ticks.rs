//! Ticks of one axis as drawn: where they go (from [`super::axis`]), which carry labels
//! and what the labels say. Labels that would crowd are thinned: a linear axis takes a
//! coarser 1-2-5 step, a log axis labels every second, third … decade.

use super::axis::{log_ticks, multiples, Axis};
use crate::draw::svg::text_width;
use crate::units::{format_sig, Quantity};

/// Ticks of one axis: `(value, label)` for the major ones, values only for the minor ones.
#[derive(Debug, Clone, Default)]
pub(super) struct TickSet {
    pub major: Vec<(f64, Option<String>)>,
    pub minor: Vec<f64>,
}

/// How tick values print.
#[derive(Debug, Clone, Copy)]
pub(super) enum Unit {
    /// An SI unit with prefixes ("1 kHz", "500 mV").
    Si(Quantity),
    /// A plain number and a fixed unit ("-20 dB", "90°", "120").
    Plain(&'static str),
}

impl Unit {
    /// The label of tick `v` on an axis stepping by `step` (NaN for a log axis), with just
    /// enough significant digits to tell neighbouring ticks apart.
    pub fn label(&self, v: f64, step: f64) -> String {
        let sig = if step.is_finite() && step > 0.0 && v != 0.0 {
            // The decade of the step's last significant digit (45 → 10^0, 0.5 → 10^-1).
            let mut low = step.log10().floor() as i32;
            for _ in 0..3 {
                let r = step / 10f64.powi(low);
                if (r - r.round()).abs() < 1e-6 {
                    break;
                }
                low -= 1;
            }
            let top = v.abs().log10().floor() as i32;
            (top - low + 1).clamp(1, 6) as usize
        } else {
            3
        };
        match self {
            Unit::Si(q) => format_sig(v, *q, sig),
            Unit::Plain(u) => format!("{}{}", format_sig(v, Quantity::Ratio, sig), u),
        }
    }
}

impl TickSet {
    /// Ticks for a linear axis: the smallest 1-2-5 step (for an angle, see below) whose
    /// ticks lie at least `spacing` px apart and, along a horizontal axis, whose labels keep
    /// clear of each other. Angles prefer multiples of 45° or 90° when those give three
    /// ticks or more.
    pub fn linear(axis: &Axis, unit: Unit, spacing: f64, fs: f64, angle: bool, horizontal: bool) -> TickSet {
        let span = axis.hi - axis.lo;
        let px_per = (axis.p1 - axis.p0).abs() / span;
        if !(span.is_finite() && span > 0.0 && px_per.is_finite()) {
            return TickSet::default();
        }
        let make = |step: f64| {
            let major: Vec<(f64, Option<String>)> =
                multiples(axis.lo, axis.hi, step).into_iter().map(|v| (v, Some(unit.label(v, step)))).collect();
            TickSet { major, minor: Vec::new() }
        };
        let fits = |step: f64, set: &TickSet| {
            step * px_per >= spacing && !set.major.is_empty() && (!horizontal || set.spaced(axis, fs, true))
        };
        let steps: Vec<f64> = if angle {
            for step in [45.0, 90.0, 180.0] {
                let set = make(step);
                if fits(step, &set) && set.major.len() >= 3 {
                    return set;
                }
            }
            vec![1.0, 2.0, 5.0, 10.0, 15.0, 30.0, 60.0, 90.0, 180.0, 360.0]
        } else {
            let e0 = (span / 100.0).log10().floor() as i32;
            (e0..e0 + 5).flat_map(|e| [1.0, 2.0, 5.0].map(|m| m * 10f64.powi(e))).collect()
        };
        for step in steps {
            let set = make(step);
            if fits(step, &set) {
                return set;
            }
        }
        TickSet::default()
    }

    /// Ticks for a log axis: decades (labelled every first, second, third … decade as room
    /// allows) and 2/5 sub-ticks when few decades show and they are not crowded.
    pub fn log(axis: &Axis, unit: Unit, fs: f64, horizontal: bool) -> TickSet {
        let t = log_ticks(axis.lo, axis.hi);
        let decades = t.major.iter().all(|v| (v.log10() - v.log10().round()).abs() < 1e-9);
        let label = |v: f64| unit.label(v, f64::NAN);
        let minor = if axis.density() >= 4.0 * fs { t.minor.clone() } else { Vec::new() };
        for every in [1i32, 2, 3, 4, 5, 10, 20, 50] {
            let major: Vec<(f64, Option<String>)> = t
                .major
                .iter()
                .enumerate()
                .map(|(i, &v)| {
                    let keep = if decades {
                        (v.log10().round() as i32).rem_euclid(every) == 0
                    } else {
                        (i as i32).rem_euclid(every) == 0
                    };
                    (v, keep.then(|| label(v)))
                })
                .collect();
            let set = TickSet { major, minor: minor.clone() };
            if set.spaced(axis, fs, horizontal) {
                return set;
            }
        }
        TickSet { major: t.major.iter().map(|&v| (v, None)).collect(), minor }
    }

    /// Neighbouring labels keep clear of each other along the axis.
    fn spaced(&self, axis: &Axis, fs: f64, horizontal: bool) -> bool {
        let mut prev: Option<(f64, f64)> = None;
        for (v, label) in &self.major {
            let (Some(label), Some(p)) = (label, axis.px(*v)) else { continue };
            let half = if horizontal { 0.5 * text_width(label, fs) } else { 0.55 * fs };
            if let Some((q, h)) = prev {
                if (p - q).abs() < h + half + if horizontal { fs } else { 0.8 * fs } {
                    return false;
                }
            }
            prev = Some((p, half));
        }
        true
    }

    /// Widest label, px.
    pub fn label_width(&self, fs: f64) -> f64 {
        self.major.iter().filter_map(|(_, l)| l.as_ref()).map(|l| text_width(l, fs)).fold(0.0, f64::max)
    }
}
