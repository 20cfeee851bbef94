//! Standard component values: the IEC 60063 preferred-number series E3 … E192.
//!
//! Every resistor and capacitor the engine proposes must be something a buyer can order,
//! so computed ideal values are snapped to a series here. A series `EN` has `N` values
//! per decade, spaced roughly evenly on a logarithmic scale (ratio 10^(1/N) between
//! neighbours). The short series E3, E6, E12 and E24 carry historical values that differ
//! from the plain formula; they are written out literally below. E48, E96 and E192 use
//! three significant figures and follow `round(10^(i/N), 2 decimals)`, with the single
//! exception E192 9.20 (the formula gives 9.19).
//!
//! # Conventions
//! - "Nearest" is judged on a logarithmic scale, because the series themselves are
//!   logarithmic: the E24 value nearest 4.5 kΩ is 4.7 kΩ (4.3 kΩ is closer linearly).
//!   An exact tie between two neighbours goes to the larger value.
//! - A value counts as "in the series" when it is within 1e-9 relative of a series value.
//! - Accepted inputs are finite, positive values between 1e-18 and 1e18 (attofarads up to
//!   exa-ohms, far beyond the 1e-15 … 1e15 any real part needs). Anything else — zero,
//!   negatives, NaN, infinities, 1e300 — gives `None` or an empty `Vec`; nothing here
//!   panics, which matters because the engine also runs in WebAssembly.
//! - Relative ratio error is `|achieved / wanted − 1|`.
//!
//! # The practical resistor window
//! Pair searches ([`best_divider`], [`best_ratio`]) only use values inside a [`Window`].
//! The default, [`Window::RESISTOR_DEFAULT`], is 1 kΩ … 1 MΩ:
//! - above about 1 MΩ, an amplifier's input bias current flowing through the resistors
//!   becomes a noticeable offset error, the resistors' thermal noise √(4kTR) grows, and
//!   stray capacitance and board leakage start to shape the response;
//! - below about 1 kΩ, the network loads the amplifier output and the signal source,
//!   draws more supply current, and self-heating in the parts shifts their values.
//!
//! A stage with different needs (a low-noise front end, a micropower divider, a
//! high-impedance sensor) passes its own window.
//!
//! # Pair search
//! The searches are exhaustive over the window yet cheap: for every candidate `a` the
//! ideal partner is computed, and only the two series values bracketing it are checked,
//! since the achieved ratio moves monotonically with the partner. For E192 over the three
//! decades of the default window this is about 600 × 2 evaluations. When the wanted ratio
//! cannot be reached at all with values inside the window, the search returns `None`
//! rather than a pair with a large error; ask again with a wider window.

use std::sync::OnceLock;

/// The largest resistor of an ordinary series part, Ω: standard thick-film chip ranges end
/// at 10 MΩ (common practice). Above it a part is special and the part list says so.
pub const STANDARD_RESISTOR_MAX: f64 = 10e6;
/// The largest special high-value resistor that can be bought, Ω: parts in glass or
/// ceramic bodies reach about 1 TΩ (from memory).
pub const SPECIAL_RESISTOR_MAX: f64 = 1e12;

/// An IEC 60063 preferred-number series.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
pub enum Series {
    E3,
    E6,
    E12,
    E24,
    E48,
    E96,
    E192,
}

impl Series {
    /// Every series, coarsest first.
    pub const ALL: [Series; 7] =
        [Series::E3, Series::E6, Series::E12, Series::E24, Series::E48, Series::E96, Series::E192];

    /// Parses a series name such as `"E24"`, `"e24"` or `" E96 "` (case-insensitive,
    /// surrounding whitespace ignored).
    pub fn parse(text: &str) -> Option<Series> {
        let text = text.trim();
        Series::ALL.iter().copied().find(|series| series.name().eq_ignore_ascii_case(text))
    }

    /// The series name, e.g. `"E24"`.
    pub fn name(self) -> &'static str {
        match self {
            Series::E3 => "E3",
            Series::E6 => "E6",
            Series::E12 => "E12",
            Series::E24 => "E24",
            Series::E48 => "E48",
            Series::E96 => "E96",
            Series::E192 => "E192",
        }
    }

    /// The values of one decade, in `[1, 10)`, ascending.
    pub fn mantissas(self) -> &'static [f64] {
        match self {
            Series::E3 => &E3,
            Series::E6 => &E6,
            Series::E12 => &E12,
            Series::E24 => &E24,
            Series::E48 => generated(&E48_CELL, 48),
            Series::E96 => generated(&E96_CELL, 96),
            Series::E192 => generated(&E192_CELL, 192),
        }
    }

    /// The tolerance (as a fraction: 0.05 = ±5 %) that IEC 60063 pairs with the series.
    ///
    /// With that tolerance the bands of neighbouring values roughly touch: for neighbours
    /// a ratio `r = 10^(1/N)` apart the touching tolerance is `(r − 1)/(r + 1)`, e.g.
    /// 0.048 for E24. E3 is usually paired with ±20 % or wider parts; its gaps would need
    /// about ±37 %, so 0.4 is returned as a conservative figure.
    pub fn nominal_tolerance(self) -> f64 {
        match self {
            Series::E3 => 0.4,
            Series::E6 => 0.2,
            Series::E12 => 0.1,
            Series::E24 => 0.05,
            Series::E48 => 0.02,
            Series::E96 => 0.01,
            Series::E192 => 0.005,
        }
    }
}

/// The IEC 60062 letter code for a tolerance given as a fraction (0.01 → `'F'`).
///
/// Only exact matches (within 1e-9 relative) are recognised: B 0.1 %, C 0.25 %, D 0.5 %,
/// F 1 %, G 2 %, J 5 %, K 10 %, M 20 %.
pub fn tolerance_letter(tol: f64) -> Option<char> {
    if !tol.is_finite() || tol <= 0.0 {
        return None;
    }
    TOLERANCE_LETTERS.iter().find(|(value, _)| ((tol - value) / value).abs() <= REL_EQ).map(|&(_, letter)| letter)
}

/// The series value nearest `value` on a logarithmic scale, in any decade.
///
/// `None` for inputs outside the accepted range (see the module documentation).
pub fn nearest(series: Series, value: f64) -> Option<f64> {
    let (lo, hi) = bracket(series, value)?;
    // Compare log distances: ln(value/lo) vs ln(hi/value). Ties go to the larger value.
    if (value / lo).ln() < (hi / value).ln() {
        Some(lo)
    } else {
        Some(hi)
    }
}

/// The largest series value `<= value` and the smallest `>= value`.
///
/// Both are the same series value when `value` is in the series (within 1e-9 relative).
pub fn bracket(series: Series, value: f64) -> Option<(f64, f64)> {
    let (lo, hi) = locate(series, value)?;
    Some((value_at(series, lo), value_at(series, hi)))
}

/// Every series value in `[lo, hi]`, ascending, across decades.
///
/// Bounds count as inclusive within 1e-9 relative. Empty when either bound is outside
/// the accepted range or `lo > hi`.
pub fn values_between(series: Series, lo: f64, hi: f64) -> Vec<f64> {
    match index_range(series, lo, hi) {
        Some((first, last)) => (first..=last).map(|g| value_at(series, g)).collect(),
        None => Vec::new(),
    }
}

/// The smallest series value `>= value` (e.g. a capacitor at least this large).
pub fn step_up(series: Series, value: f64) -> Option<f64> {
    bracket(series, value).map(|(_, hi)| hi)
}

/// The largest series value `<= value` (e.g. a resistor at most this large).
pub fn step_down(series: Series, value: f64) -> Option<f64> {
    bracket(series, value).map(|(lo, _)| lo)
}

/// A practical range of component values, inclusive at both ends.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Window {
    pub min: f64,
    pub max: f64,
}

impl Window {
    /// 1 kΩ … 1 MΩ; see the module documentation for why.
    pub const RESISTOR_DEFAULT: Window = Window { min: 1e3, max: 1e6 };
}

/// A resistive divider: `ratio = bottom / (top + bottom)`, `thevenin = top ‖ bottom`.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct DividerChoice {
    pub top: f64,
    pub bottom: f64,
    pub ratio: f64,
    pub ratio_error: f64,
    pub thevenin: f64,
}

/// Best pair for a divider ratio k = bottom/(top+bottom), 0<k<1, both values from the series inside the window;
/// when `thevenin` is Some(r), among pairs whose ratio error is within 1.5× the best achievable
/// error, prefer the one whose top‖bottom is closest to r on a log scale.
///
/// Without a Thevenin preference, pairs with equal error (within 1e-12) are separated by
/// preferring the one whose geometric mean lies nearest the middle of the window on a
/// log scale, keeping both parts away from the window's edges. An absolute slack of 1e-12
/// is also allowed in the 1.5× rule, so that exact pairs differing only by rounding count
/// as equally good.
///
/// `None` when `ratio` is not in (0, 1), the window is invalid or holds no series value,
/// `thevenin` is not a finite positive value, or `ratio` lies outside what two values from
/// the window can produce.
pub fn best_divider(series: Series, ratio: f64, thevenin: Option<f64>, window: Window) -> Option<DividerChoice> {
    if !(ratio.is_finite() && ratio > 0.0 && ratio < 1.0) {
        return None;
    }
    if let Some(r) = thevenin {
        if !in_domain(r) {
            return None;
        }
    }
    let (first, last) = index_range(series, window.min, window.max)?;
    let (vmin, vmax) = (value_at(series, first), value_at(series, last));
    let k_min = vmin / (vmin + vmax);
    let k_max = vmax / (vmin + vmax);
    if ratio < k_min * (1.0 - REL_EQ) || ratio > k_max * (1.0 + REL_EQ) {
        return None;
    }

    // For each top, the ideal bottom is top·k/(1−k); the achieved k rises with bottom,
    // so only the two series values around the ideal can be best for this top.
    let mut candidates: Vec<DividerChoice> = Vec::new();
    for g_top in first..=last {
        let top = value_at(series, g_top);
        let ideal_bottom = top * ratio / (1.0 - ratio);
        for g_bottom in partners(series, ideal_bottom, first, last) {
            let bottom = value_at(series, g_bottom);
            let achieved = bottom / (top + bottom);
            candidates.push(DividerChoice {
                top,
                bottom,
                ratio: achieved,
                ratio_error: (achieved / ratio - 1.0).abs(),
                thevenin: top * bottom / (top + bottom),
            });
        }
    }

    let best_error = candidates.iter().map(|c| c.ratio_error).fold(f64::INFINITY, f64::min);
    let centre = (vmin * vmax).sqrt();
    let (limit, target) = match thevenin {
        Some(r) => ((1.5 * best_error).max(best_error + TIE_SLACK), r),
        None => (best_error + TIE_SLACK, centre),
    };
    candidates
        .into_iter()
        .filter(|c| c.ratio_error <= limit)
        .map(|c| {
            let position = match thevenin {
                Some(_) => c.thevenin,
                None => (c.top * c.bottom).sqrt(),
            };
            ((position / target).ln().abs(), c)
        })
        .fold(None, |best: Option<(f64, DividerChoice)>, (distance, c)| match best {
            Some((d, b)) if d < distance || (d == distance && b.ratio_error <= c.ratio_error) => Some((d, b)),
            _ => Some((distance, c)),
        })
        .map(|(_, c)| c)
}

/// A pair of values whose quotient `a / b` approximates a wanted ratio.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct RatioChoice {
    pub a: f64,
    pub b: f64,
    pub ratio: f64,
    pub ratio_error: f64,
}

/// Best pair with a/b closest to `ratio` (relative error), both in the window; e.g. Rf/Rg for a gain.
///
/// Pairs with equal error (within 1e-12) are separated by preferring the one whose
/// geometric mean lies nearest the middle of the window on a log scale; for a ratio of
/// 10 in E24 over 1 kΩ … 1 MΩ that is 100 kΩ / 10 kΩ.
///
/// `None` when `ratio` is not finite and positive, the window is invalid or holds no
/// series value, or `ratio` lies outside what two values from the window can produce.
pub fn best_ratio(series: Series, ratio: f64, window: Window) -> Option<RatioChoice> {
    if !(ratio.is_finite() && ratio > 0.0) {
        return None;
    }
    let (first, last) = index_range(series, window.min, window.max)?;
    let (vmin, vmax) = (value_at(series, first), value_at(series, last));
    if ratio < (vmin / vmax) * (1.0 - REL_EQ) || ratio > (vmax / vmin) * (1.0 + REL_EQ) {
        return None;
    }
    let centre = (vmin * vmax).sqrt();

    let mut best: Option<(f64, f64, RatioChoice)> = None; // (error, centre distance, pair)
    for g_a in first..=last {
        let a = value_at(series, g_a);
        let ideal_b = a / ratio;
        for g_b in partners(series, ideal_b, first, last) {
            let b = value_at(series, g_b);
            let achieved = a / b;
            let error = (achieved / ratio - 1.0).abs();
            let distance = ((a * b).sqrt() / centre).ln().abs();
            let better = match best {
                None => true,
                Some((e, d, _)) => error < e - TIE_SLACK || (error <= e + TIE_SLACK && distance < d),
            };
            if better {
                best = Some((error, distance, RatioChoice { a, b, ratio: achieved, ratio_error: error }));
            }
        }
    }
    best.map(|(_, _, choice)| choice)
}

// ---------------------------------------------------------------------------------------
// Tables (IEC 60063). E3 … E24 are the standard's literal lists.

const E3: [f64; 3] = [1.0, 2.2, 4.7];

const E6: [f64; 6] = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8];

const E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];

const E24: [f64; 24] = [
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, //
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
];

static E48_CELL: OnceLock<Vec<f64>> = OnceLock::new();
static E96_CELL: OnceLock<Vec<f64>> = OnceLock::new();
static E192_CELL: OnceLock<Vec<f64>> = OnceLock::new();

/// IEC 60062 tolerance letters, tolerance as a fraction.
const TOLERANCE_LETTERS: [(f64, char); 8] =
    [(0.001, 'B'), (0.0025, 'C'), (0.005, 'D'), (0.01, 'F'), (0.02, 'G'), (0.05, 'J'), (0.1, 'K'), (0.2, 'M')];

/// Relative tolerance for "this value is in the series".
const REL_EQ: f64 = 1e-9;
/// Absolute slack on ratio errors under which two pairs count as equally accurate.
const TIE_SLACK: f64 = 1e-12;
/// Accepted input range.
const MIN_VALUE: f64 = 1e-18;
const MAX_VALUE: f64 = 1e18;

/// E48 / E96 / E192: `round(10^(i/N), 2 decimals)`, except E192 9.20 (formula 9.19).
fn generated(cell: &'static OnceLock<Vec<f64>>, n: u32) -> &'static [f64] {
    cell.get_or_init(|| {
        (0..n)
            .map(|i| {
                let mut hundredths = (10f64.powf(f64::from(i) / f64::from(n)) * 100.0).round();
                if n == 192 && hundredths == 919.0 {
                    hundredths = 920.0;
                }
                hundredths / 100.0
            })
            .collect()
    })
    .as_slice()
}

// ---------------------------------------------------------------------------------------
// Indexing. A series value is addressed by a global index g: decade g.div_euclid(N),
// position g.rem_euclid(N). Values are rebuilt from integer significant figures so that
// e.g. 4.7 kΩ is exactly the double nearest 4700, not 4.7 × 1000 with a rounding error.

fn in_domain(value: f64) -> bool {
    value.is_finite() && (MIN_VALUE..=MAX_VALUE).contains(&value)
}

/// Number of decimals in the series' mantissas.
fn decimals(series: Series) -> i64 {
    match series {
        Series::E3 | Series::E6 | Series::E12 | Series::E24 => 1,
        Series::E48 | Series::E96 | Series::E192 => 2,
    }
}

fn value_at(series: Series, g: i64) -> f64 {
    let mantissas = series.mantissas();
    let n = mantissas.len() as i64;
    let decade = g.div_euclid(n);
    let position = g.rem_euclid(n) as usize;
    let places = decimals(series);
    let digits = (mantissas[position] * 10f64.powi(places as i32)).round();
    let exponent = (decade - places).clamp(-300, 300) as i32;
    if exponent >= 0 {
        digits * 10f64.powi(exponent)
    } else {
        digits / 10f64.powi(-exponent)
    }
}

/// Global indices `(lo, hi)` of the series values bracketing `value`; equal when `value`
/// is in the series within [`REL_EQ`].
fn locate(series: Series, value: f64) -> Option<(i64, i64)> {
    if !in_domain(value) {
        return None;
    }
    let n = series.mantissas().len() as i64;
    let decade = value.log10().floor() as i64;
    let limit = value * (1.0 + REL_EQ);
    // Invariant: value_at(lo) <= limit < value_at(hi). The decade estimate may be off by
    // one near powers of ten, hence the margin of a decade on each side.
    let mut lo = (decade - 1) * n;
    let mut hi = (decade + 2) * n;
    if value_at(series, lo) > limit || value_at(series, hi) <= limit {
        return None; // cannot happen for in-domain values; refuse rather than guess
    }
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if value_at(series, mid) <= limit {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    if value_at(series, lo) >= value * (1.0 - REL_EQ) {
        Some((lo, lo))
    } else {
        Some((lo, lo + 1))
    }
}

/// Global indices of the first and last series values in `[lo, hi]`.
fn index_range(series: Series, lo: f64, hi: f64) -> Option<(i64, i64)> {
    if !in_domain(lo) || !in_domain(hi) || lo > hi {
        return None;
    }
    let (_, first) = locate(series, lo)?;
    let (last, _) = locate(series, hi)?;
    (first <= last).then_some((first, last))
}

/// The indices within `[first, last]` that can best stand in for `ideal`: the two
/// bracketing it, or the nearer end of the range (given twice) when `ideal` lies outside.
fn partners(series: Series, ideal: f64, first: i64, last: i64) -> [i64; 2] {
    if !(ideal.is_finite() && ideal > 0.0) || ideal <= value_at(series, first) {
        return [first, first];
    }
    if ideal >= value_at(series, last) {
        return [last, last];
    }
    match locate(series, ideal) {
        Some((lo, hi)) => [lo.clamp(first, last), hi.clamp(first, last)],
        None => [first, last],
    }
}
