//! Summaries of the Monte Carlo builds: yields, statistics, percentiles and histograms.

use super::{Histogram, Histograms, MonteCarlo, Stats, ToleranceConfig};
use crate::request::Request;

/// 0.95 × (1 − 2·headroom): the share of the converter span a build should cover.
pub(super) fn range_use_fraction(req: &Request) -> f64 {
    0.95 * (1.0 - 2.0 * req.destination.headroom)
}

/// The Monte Carlo result from the solved builds (one `[output at min, output at max, gain,
/// offset]` per build, with its clip bits from `Model::clips`) and the counts good, inside
/// the headroom, covering the range-use fraction and clipped, out of `runs` builds drawn.
pub(super) fn monte_carlo(
    builds: Vec<[f64; 4]>, clips: Vec<u8>, counts: [usize; 4], runs: usize, req: &Request, cfg: &ToleranceConfig,
    distributions: Vec<String>,
) -> MonteCarlo {
    let share = |k: usize| {
        if runs > 0 {
            k as f64 / runs as f64
        } else {
            f64::NAN
        }
    };
    let mut column = Vec::new();
    let [s0, s1, s2, s3] = std::array::from_fn(|q| stats(&builds, q, &mut column));
    let d = &req.destination;
    let histograms = Histograms {
        output_at_min: histogram(&builds, &clips, 0, &s0, cfg.bins, d.min, d.max),
        output_at_max: histogram(&builds, &clips, 1, &s1, cfg.bins, d.min, d.max),
    };
    MonteCarlo {
        runs,
        seed: cfg.seed,
        yield_: share(counts[0]),
        clipped: counts[3],
        yield_headroom: share(counts[1]),
        range_use_fraction: range_use_fraction(req),
        range_use_yield: share(counts[2]),
        output_at_min: s0,
        output_at_max: s1,
        gain: s2,
        offset: s3,
        histograms,
        distributions,
    }
}

/// Statistics of quantity `q`; `column` is scratch space for the rare selection path.
fn stats(builds: &[[f64; 4]], q: usize, column: &mut Vec<f64>) -> Stats {
    let n = builds.len();
    if n == 0 {
        let nan = f64::NAN;
        return Stats { mean: nan, std: nan, p001: nan, p999: nan, min: nan, max: nan };
    }
    // Shifted sums: identical builds give exactly their value and a spread of exactly 0.
    let x0 = builds[0][q];
    let (mut s1, mut s2, mut min, mut max) = (0.0, 0.0, x0, x0);
    for b in builds {
        let (v, d) = (b[q], b[q] - x0);
        s1 += d;
        s2 += d * d;
        if v < min {
            min = v;
        }
        if v > max {
            max = v;
        }
    }
    let nf = n as f64;
    let mean = x0 + s1 / nf;
    let var = if n > 1 { ((s2 - s1 * s1 / nf) / (nf - 1.0)).max(0.0) } else { 0.0 };
    let (p001, p999) = tails(builds, q).unwrap_or_else(|| {
        column.clear();
        column.extend(builds.iter().map(|b| b[q]));
        (percentile(column, 0.001), percentile(column, 0.999))
    });
    Stats { mean, std: var.sqrt(), p001, p999, min, max }
}

/// The 0.1 % and 99.9 % percentiles, linear between order statistics. They need only the
/// few smallest and largest values, kept in short sorted buffers during one pass; `None`
/// when a tail needs more than 64 values (over 64,000 builds), for selection instead.
fn tails(builds: &[[f64; 4]], q: usize) -> Option<(f64, f64)> {
    const M: usize = 64;
    let n = builds.len();
    let (pos_lo, pos_hi) = (0.001 * (n - 1) as f64, 0.999 * (n - 1) as f64);
    let (k_lo, k_hi) = ((pos_lo as usize).min(n - 1), (pos_hi as usize).min(n - 1));
    let (m_lo, m_hi) = ((k_lo + 2).min(n), n - k_hi);
    if m_lo > M || m_hi > M {
        return None;
    }
    let (mut lo, mut hi) = ([f64::INFINITY; M], [f64::NEG_INFINITY; M]);
    for b in builds {
        let v = b[q];
        if v < lo[m_lo - 1] {
            let mut j = m_lo - 1;
            while j > 0 && lo[j - 1] > v {
                lo[j] = lo[j - 1];
                j -= 1;
            }
            lo[j] = v;
        }
        if v > hi[m_hi - 1] {
            let mut j = m_hi - 1;
            while j > 0 && hi[j - 1] < v {
                hi[j] = hi[j - 1];
                j -= 1;
            }
            hi[j] = v;
        }
    }
    // Ascending order statistic i is lo[i] from below and hi[n − 1 − i] from above.
    let a = lo[k_lo];
    let b = if k_lo + 1 < n { lo[k_lo + 1] } else { a };
    let c = hi[n - 1 - k_hi];
    let e = if k_hi + 1 < n { hi[n - 2 - k_hi] } else { c };
    Some((a + (pos_lo - k_lo as f64) * (b - a), c + (pos_hi - k_hi as f64) * (e - c)))
}

/// Percentile `p` (0…1) of a non-empty slice, linear between order statistics, by
/// selection; reorders `x`.
fn percentile(x: &mut [f64], p: f64) -> f64 {
    let n = x.len();
    let pos = p * (n - 1) as f64;
    let k = (pos as usize).min(n - 1);
    let (_, &mut lo, rest) = x.select_nth_unstable_by(k, f64::total_cmp);
    let hi = rest.iter().copied().fold(f64::INFINITY, f64::min);
    if hi.is_finite() {
        lo + (pos - k as f64) * (hi - lo)
    } else {
        lo
    }
}

/// Histogram of quantity `q` (see [`Histogram`] for its range); builds whose clip bit `q` is
/// set are counted apart.
fn histogram(builds: &[[f64; 4]], clips: &[u8], q: usize, s: &Stats, bins: usize, d_min: f64, d_max: f64) -> Histogram {
    let mut counts = vec![0u32; bins];
    if builds.is_empty() {
        return Histogram { lo: d_min, hi: d_max, counts, clipped: 0 };
    }
    let mut clipped = 0u32;
    let (mut lo, mut hi) = (s.min, s.max);
    let width = hi - lo;
    let limit = if (lo - d_min).abs() <= (hi - d_max).abs() { d_min } else { d_max };
    if limit < lo && lo - limit <= 3.0 * width {
        lo = limit;
    } else if limit > hi && limit - hi <= 3.0 * width {
        hi = limit;
    }
    if hi <= lo {
        let pad = 1e-6 * (d_max - d_min).abs().max(lo.abs()).max(1e-9);
        lo -= pad;
        hi += pad;
    }
    if bins > 0 {
        let scale = bins as f64 / (hi - lo);
        let slots = &mut counts[..];
        for (i, b) in builds.iter().enumerate() {
            if clips.get(i).is_some_and(|c| c >> q & 1 == 1) {
                clipped = clipped.saturating_add(1);
                continue;
            }
            let k = ((b[q] - lo) * scale) as usize;
            let k = if k < bins { k } else { bins - 1 };
            slots[k] = slots[k].saturating_add(1);
        }
    }
    Histogram { lo, hi, counts, clipped }
}
