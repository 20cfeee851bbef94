//! Tolerance spread of the mapping: worst case and Monte Carlo over the parts' tolerances
//! and the amplifier's offset and bias currents.
//!
//! Quantities per build have the meaning of [`crate::design::Predicted`]. DC coupling: the
//! output at the source's minimum and maximum, the gain (slope between them) and the offset
//! (intercept). AC coupling: the offset is the output's DC level, the gain the signed
//! mid-band gain, and the outputs at the extremes are level ± gain × half the swing around
//! the source's middle. For the mid-band gain every capacitor is a short (synthesis puts each
//! corner at or below band_low/10, so mid-band they are); each build's short-capacitor gain
//! is scaled by the nominal ratio of the full complex gain at mid-band to the nominal
//! short-capacitor gain, so the nominal build reproduces `design::predict`. Outputs are held
//! inside the amplifier's output limits, as the solver's clamp does.
//!
//! What varies, and how it is drawn:
//! * resistors and capacitors to build (`tolerance: Some(t)`): uniform over ±t — a
//!   conservative stand-in for unknown production spreads. Bench parts (sensor, supplies,
//!   converter load) stay nominal;
//! * each amplifier's input offset and the bias currents of its two inputs (independently):
//!   normal with the stated figure as 3σ, truncated at ±the figure.
//!
//! The generator is ChaCha8 seeded with the configured seed, so a seed gives the same builds
//! on every platform. Builds are solved by the compiled kernel of [`super::perturb`].
//!
//! Worst case is an extreme-value analysis over the same box (every tolerance at ±t, offset
//! and bias currents at ±their figures). Each node voltage of the linear circuit is, by
//! Cramer's rule, a ratio of two functions that are linear in each conductance, offset and
//! bias current taken separately; in one parameter it is therefore a ratio of two linear
//! functions, monotone over a box of a few per cent that holds no singular build. So each
//! quantity takes its extremes at vertices of the box: the sign of each parameter's effect
//! (a central difference across its full range) picks the vertex that pushes the quantity
//! up and the one that pushes it down, and single-parameter flips are then tried at each
//! until none improves it. Where an output reaches an amplifier limit the gain and offset
//! bounds follow from the limited outputs by interval arithmetic.

use rand::{Rng, RngCore, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;
use serde::Serialize;

use super::perturb::{Kernel, Param, ParamKind, Workspace};
use super::AnalysisConfig;
use crate::amplifier::Rails;
use crate::circuit::Circuit;
use crate::request::{Coupling, Request};
use crate::solve::Solver;
use crate::units::{format, Quantity};

/// Options of the tolerance analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct ToleranceConfig {
    /// Monte Carlo builds.
    pub runs: usize,
    /// Seed of the generator.
    pub seed: u64,
    /// Bins of each histogram.
    pub bins: usize,
}

impl From<&AnalysisConfig> for ToleranceConfig {
    fn from(c: &AnalysisConfig) -> Self {
        ToleranceConfig { runs: c.monte_carlo_runs, seed: c.seed, bins: c.histogram_bins }
    }
}

#[derive(Debug, Clone, Serialize)]
pub struct ToleranceAnalysis {
    pub worst_case: WorstCase,
    pub monte_carlo: MonteCarlo,
}

/// Extreme values over the tolerance box, each as `[low, high]`.
#[derive(Debug, Clone, Serialize)]
pub struct WorstCase {
    pub output_at_min: [f64; 2],
    pub output_at_max: [f64; 2],
    pub gain: [f64; 2],
    pub offset: [f64; 2],
    /// How the bounds were found, in words.
    pub method: String,
}

/// Spread of the builds. Figures that need at least one build are `NaN` (JSON `null`)
/// when none was run.
#[derive(Debug, Clone, Serialize)]
pub struct MonteCarlo {
    pub runs: usize,
    pub seed: u64,
    /// Share of builds whose output at both source extremes stays inside the converter range.
    #[serde(rename = "yield")]
    pub yield_: f64,
    /// Share that also keep the full requested headroom at each end.
    pub yield_headroom: f64,
    /// 0.95 × (1 − 2·headroom): the share of the converter span a build should cover.
    pub range_use_fraction: f64,
    /// Share of builds whose output span covers at least that fraction of the converter span.
    pub range_use_yield: f64,
    pub output_at_min: Stats,
    pub output_at_max: Stats,
    pub gain: Stats,
    pub offset: Stats,
    pub histograms: Histograms,
    /// How each tolerance class is drawn, in plain sentences.
    pub distributions: Vec<String>,
}

/// Summary of one quantity over the builds; `p001`/`p999` are the 0.1 % and 99.9 %
/// percentiles (linear between order statistics), `std` the sample standard deviation.
#[derive(Debug, Clone, Serialize)]
pub struct Stats {
    pub mean: f64,
    pub std: f64,
    pub p001: f64,
    pub p999: f64,
    pub min: f64,
    pub max: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct Histograms {
    pub output_at_min: Histogram,
    pub output_at_max: Histogram,
}

/// Equal-width bins over `[lo, hi]`: the builds' range, widened to the converter limit
/// nearest to them when that limit lies within three range-widths (so the plot shows the
/// margin without losing its resolution).
#[derive(Debug, Clone, Serialize)]
pub struct Histogram {
    pub lo: f64,
    pub hi: f64,
    pub counts: Vec<u32>,
}

/// Worst case and Monte Carlo spread of the mapping `circuit` realises for `req`.
pub fn tolerance(req: &Request, circuit: &Circuit, cfg: &ToleranceConfig) -> ToleranceAnalysis {
    match Model::new(req, circuit) {
        Ok(model) => {
            let mut ws = model.kernel.workspace();
            let worst_case = worst_case(&model, &mut ws);
            let monte_carlo = monte_carlo(&model, &mut ws, req, cfg);
            ToleranceAnalysis { worst_case, monte_carlo }
        }
        Err(reason) => unavailable(req, cfg, &reason),
    }
}

/// The compiled circuit with the request's source and the amplifier's limits.
struct Model {
    kernel: Kernel,
    ac: bool,
    s_min: f64,
    s_max: f64,
    mid: f64,
    /// Nominal complex mid-band gain over nominal short-capacitor gain (AC coupling).
    ac_scale: f64,
    limits: Option<(f64, f64)>,
}

impl Model {
    fn new(req: &Request, circuit: &Circuit) -> Result<Model, String> {
        let kernel = Kernel::compile(circuit, "adc").map_err(|e| e.0)?;
        let s = &req.source;
        let rails = Rails { pos: circuit.rail_pos, neg: circuit.rail_neg };
        let limits = kernel.output_is_amplifier().then(|| circuit.amplifier.output_limits(rails));
        let ac = s.coupling == Coupling::Ac;
        let mut ac_scale = 1.0;
        if ac {
            let zero = vec![0.0; kernel.params().len()];
            let short = kernel.short_gain(&zero, &mut kernel.workspace()).ok_or("the mid-band gain could not be found")?;
            let h = Solver::new(circuit).transfer((s.band_low * s.band_high).sqrt(), "adc").map_err(|e| e.0)?;
            let full = if h.re >= 0.0 { h.norm() } else { -h.norm() };
            ac_scale = if short != 0.0 && (full / short).is_finite() { full / short } else { 1.0 };
        }
        Ok(Model { kernel, ac, s_min: s.min, s_max: s.max, mid: 0.5 * (s.min + s.max), ac_scale, limits })
    }

    /// Unclamped `[output at min, output at max, gain, offset]` of build `p`.
    fn raw(&self, p: &[f64], ws: &mut Workspace) -> Option<[f64; 4]> {
        let (slope, icpt) = self.kernel.dc_line(p, ws)?;
        if self.ac {
            let level = slope * self.mid + icpt;
            let g = self.ac_scale * self.kernel.short_gain(p, ws)?;
            Some([level + g * (self.s_min - self.mid), level + g * (self.s_max - self.mid), g, level])
        } else {
            Some([slope * self.s_min + icpt, slope * self.s_max + icpt, slope, icpt])
        }
    }

    fn clamp(&self, y: f64) -> f64 {
        match self.limits {
            // Comparisons rather than f64::max/min, which stay library calls when the engine
            // is optimised for size; a NaN passes through and is discarded by the caller.
            Some((lo, hi)) => {
                if y < lo {
                    lo
                } else if y > hi {
                    hi
                } else {
                    y
                }
            }
            None => y,
        }
    }

    fn clamped(&self, r: [f64; 4]) -> [f64; 4] {
        let (y1, y2) = (self.clamp(r[0]), self.clamp(r[1]));
        if self.ac {
            [y1, y2, r[2], self.clamp(r[3])]
        } else {
            let g = slope(y1, y2, self.s_min, self.s_max);
            [y1, y2, g, y1 - g * self.s_min]
        }
    }
}

fn slope(y1: f64, y2: f64, x1: f64, x2: f64) -> f64 {
    if x2 > x1 {
        (y2 - y1) / (x2 - x1)
    } else {
        0.0
    }
}

fn worst_case(model: &Model, ws: &mut Workspace) -> WorstCase {
    let bounds: Vec<f64> = model.kernel.params().iter().map(|p| p.bound).collect();
    let n = bounds.len();
    let mut p = vec![0.0; n];
    let Some(nominal) = model.raw(&p, ws) else {
        return WorstCase { output_at_min: [f64::NAN; 2], output_at_max: [f64::NAN; 2], gain: [f64::NAN; 2], offset: [f64::NAN; 2], method: "not available: the nominal circuit has no solution".to_string() };
    };
    // Effect of each parameter across its full range, for every quantity.
    let mut effect = vec![[0.0; 4]; n];
    for i in 0..n {
        p[i] = bounds[i];
        let hi = model.raw(&p, ws).unwrap_or(nominal);
        p[i] = -bounds[i];
        let lo = model.raw(&p, ws).unwrap_or(nominal);
        p[i] = 0.0;
        for q in 0..4 {
            effect[i][q] = hi[q] - lo[q];
        }
    }
    let mut ext = [[0.0; 2]; 4];
    for q in 0..4 {
        for (d, dir) in [(0, -1.0), (1, 1.0)] {
            for i in 0..n {
                p[i] = if dir * effect[i][q] >= 0.0 { bounds[i] } else { -bounds[i] };
            }
            let mut best = model.raw(&p, ws).map_or(nominal[q], |r| r[q]);
            for _ in 0..n.max(1) {
                let mut improved = false;
                for i in 0..n {
                    p[i] = -p[i];
                    match model.raw(&p, ws) {
                        Some(r) if dir * (r[q] - best) > 0.0 => {
                            best = r[q];
                            improved = true;
                        }
                        _ => p[i] = -p[i],
                    }
                }
                if !improved {
                    break;
                }
            }
            ext[q][d] = best;
        }
    }
    let c = |v: [f64; 2]| [model.clamp(v[0]), model.clamp(v[1])];
    let (y1, y2) = (c(ext[0]), c(ext[1]));
    let limited = y1 != ext[0] || y2 != ext[1];
    let (gain, offset) = if model.ac {
        (ext[2], c(ext[3]))
    } else if limited {
        // Interval arithmetic on the limited outputs: gain = (y2 − y1)/Δs, offset = (y1·s_max − y2·s_min)/Δs.
        let (a, b) = (model.s_min, model.s_max);
        let gain = [slope(y1[1], y2[0], a, b), slope(y1[0], y2[1], a, b)];
        let span = if b > a { b - a } else { 1.0 };
        let lin = |k: f64, v: [f64; 2]| if k >= 0.0 { [k * v[0], k * v[1]] } else { [k * v[1], k * v[0]] };
        let (t1, t2) = (lin(b / span, y1), lin(-a / span, y2));
        (gain, [t1[0] + t2[0], t1[1] + t2[1]])
    } else {
        (ext[2], ext[3])
    };
    let mut method = "Extreme values over the tolerance box (each part at ±its tolerance, each amplifier's offset and bias currents at ±their figures). For each quantity the sign of every parameter's effect, from a central difference across its full range, picks the vertex that pushes the quantity up and the one that pushes it down; single-parameter flips are then tried at each until none improves it. This suffices because every node voltage is a ratio of two functions that are linear in each part's conductance, the offset and each bias current taken separately, so each quantity is monotone in each parameter across a box of a few per cent and its extremes lie at vertices.".to_string();
    if limited {
        method.push_str(" An output reaches the amplifier's swing limit at a vertex; outputs are held at that limit");
        method.push_str(if model.ac { "." } else { ", and the gain and offset bounds follow from the limited outputs by interval arithmetic (they may be wider than any build reaches)." });
    }
    WorstCase { output_at_min: y1, output_at_max: y2, gain, offset, method }
}

fn monte_carlo(model: &Model, ws: &mut Workspace, req: &Request, cfg: &ToleranceConfig) -> MonteCarlo {
    let params = model.kernel.params();
    let mut rng = ChaCha8Rng::seed_from_u64(cfg.seed);
    let mut p = vec![0.0; params.len()];
    // Parts are drawn uniformly, two per 64-bit word; the amplifier's figures from a normal.
    let is_part = |k: ParamKind| matches!(k, ParamKind::Resistor | ParamKind::Capacitor);
    let parts: Vec<(usize, f64)> = params
        .iter()
        .enumerate()
        .filter(|(_, q)| is_part(q.kind))
        .map(|(i, q)| (i, q.bound))
        .collect();
    let amps: Vec<(usize, f64)> = params
        .iter()
        .enumerate()
        .filter(|(_, q)| !is_part(q.kind))
        .map(|(i, q)| (i, q.bound))
        .collect();
    let mut q: [Vec<f64>; 4] = std::array::from_fn(|_| Vec::with_capacity(cfg.runs));
    let d = &req.destination;
    let span = d.max - d.min;
    let slack = 1e-9 * span.abs();
    let (h_lo, h_hi) = (d.min + d.headroom * span - slack, d.max - d.headroom * span + slack);
    let fraction = 0.95 * (1.0 - 2.0 * d.headroom);
    let (mut ok, mut ok_head, mut ok_use) = (0usize, 0usize, 0usize);
    for _ in 0..cfg.runs {
        for pair in parts.chunks(2) {
            let bits = rng.next_u64();
            for (&(i, bound), word) in pair.iter().zip([bits as u32, (bits >> 32) as u32]) {
                p[i] = bound * uniform_pm1(word);
            }
        }
        for &(i, bound) in &amps {
            p[i] = bound * truncated_normal(&mut rng);
        }
        let Some(r) = model.raw(&p, ws) else { continue };
        let y = model.clamped(r);
        if !(y[0].is_finite() && y[1].is_finite() && y[2].is_finite() && y[3].is_finite()) {
            continue;
        }
        let (lo, hi) = if y[0] < y[1] {
            (y[0], y[1])
        } else {
            (y[1], y[0])
        };
        ok += (lo >= d.min && hi <= d.max) as usize;
        ok_head += (lo >= h_lo && hi <= h_hi) as usize;
        ok_use += (hi - lo >= fraction * span) as usize;
        for k in 0..4 {
            q[k].push(y[k]);
        }
    }
    let share = |k: usize| if cfg.runs > 0 { k as f64 / cfg.runs as f64 } else { f64::NAN };
    let [mut q0, mut q1, mut q2, mut q3] = q;
    let (s0, s1) = (stats(&mut q0), stats(&mut q1));
    let histograms = Histograms {
        output_at_min: histogram(&q0, &s0, cfg.bins, d.min, d.max),
        output_at_max: histogram(&q1, &s1, cfg.bins, d.min, d.max),
    };
    MonteCarlo {
        runs: cfg.runs,
        seed: cfg.seed,
        yield_: share(ok),
        yield_headroom: share(ok_head),
        range_use_fraction: fraction,
        range_use_yield: share(ok_use),
        output_at_min: s0,
        output_at_max: s1,
        gain: stats(&mut q2),
        offset: stats(&mut q3),
        histograms,
        distributions: distributions(params),
    }
}

/// Uniform over (−1, 1) from 32 random bits, symmetric about 0 (steps of 2⁻³¹, far finer
/// than any tolerance).
fn uniform_pm1(word: u32) -> f64 {
    (word as f64 + 0.5) * (2.0 / 4_294_967_296.0) - 1.0
}

/// Normal with σ = 1/3 truncated at ±1 (the stated figure is 3σ), by rejection: 0.27 % of
/// draws are redrawn; after 64 misses in a row (never in practice) it gives 0.
fn truncated_normal(rng: &mut ChaCha8Rng) -> f64 {
    for _ in 0..64 {
        let z: f64 = rng.sample(StandardNormal);
        if z.abs() <= 3.0 {
            return z / 3.0;
        }
    }
    0.0
}

fn stats(x: &mut [f64]) -> Stats {
    let n = x.len();
    if n == 0 {
        return Stats { mean: f64::NAN, std: f64::NAN, p001: f64::NAN, p999: f64::NAN, min: f64::NAN, max: f64::NAN };
    }
    // Shifted sums: identical builds give exactly their value and a spread of exactly 0.
    let x0 = x[0];
    let (mut s1, mut s2, mut min, mut max) = (0.0, 0.0, x0, x0);
    for &v in x.iter() {
        let d = v - x0;
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
    let var = if n > 1 {
        ((s2 - s1 * s1 / nf) / (nf - 1.0)).max(0.0)
    } else {
        0.0
    };
    let (p001, p999) = tails(x);
    Stats {
        mean,
        std: var.sqrt(),
        p001,
        p999,
        min,
        max,
    }
}

/// The 0.1 % and 99.9 % percentiles, linear between order statistics. They need only the
/// few smallest and largest values, kept in short sorted buffers during one pass; when a
/// tail needs more than 64 values (over 64,000 builds) selection is used instead.
fn tails(x: &mut [f64]) -> (f64, f64) {
    const M: usize = 64;
    let n = x.len();
    let (pos_lo, pos_hi) = (0.001 * (n - 1) as f64, 0.999 * (n - 1) as f64);
    let (k_lo, k_hi) = ((pos_lo as usize).min(n - 1), (pos_hi as usize).min(n - 1));
    let (m_lo, m_hi) = ((k_lo + 2).min(n), n - k_hi);
    if m_lo > M || m_hi > M {
        return (percentile(x, 0.001), percentile(x, 0.999));
    }
    let (mut lo, mut hi) = ([f64::INFINITY; M], [f64::NEG_INFINITY; M]);
    for &v in x.iter() {
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
    (
        a + (pos_lo - k_lo as f64) * (b - a),
        c + (pos_hi - k_hi as f64) * (e - c),
    )
}

/// Percentile `q` (0…1), linear between order statistics, by selection; reorders `x`.
fn percentile(x: &mut [f64], q: f64) -> f64 {
    let n = x.len();
    let pos = q * (n - 1) as f64;
    let k = (pos as usize).min(n - 1);
    let (_, &mut lo, rest) = x.select_nth_unstable_by(k, f64::total_cmp);
    let hi = rest.iter().copied().fold(f64::INFINITY, f64::min);
    if hi.is_finite() {
        lo + (pos - k as f64) * (hi - lo)
    } else {
        lo
    }
}

fn histogram(x: &[f64], s: &Stats, bins: usize, d_min: f64, d_max: f64) -> Histogram {
    let mut counts = vec![0u32; bins];
    if x.is_empty() {
        return Histogram { lo: d_min, hi: d_max, counts };
    }
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
        for &v in x {
            let b = ((v - lo) * scale) as usize;
            let b = if b < bins { b } else { bins - 1 };
            counts[b] = counts[b].saturating_add(1);
        }
    }
    Histogram { lo, hi, counts }
}

/// Plain sentences on how each class of parameter is drawn.
fn distributions(params: &[Param]) -> Vec<String> {
    let mut out = Vec::new();
    let pct = |t: f64| format!("{} %", format(t * 100.0, Quantity::Ratio));
    let mut groups: Vec<(ParamKind, f64, Vec<&str>)> = Vec::new();
    for p in params {
        match groups.iter_mut().find(|g| g.0 == p.kind && g.1 == p.bound) {
            Some(g) if !g.2.contains(&p.part.as_str()) => g.2.push(&p.part),
            Some(_) => {}
            None => groups.push((p.kind, p.bound, vec![&p.part])),
        }
    }
    let amp_fig = |k: ParamKind, b: f64| match k {
        ParamKind::Offset => format(b, Quantity::Voltage),
        _ => format(b, Quantity::Current),
    };
    for (kind, bound, parts) in &groups {
        let list = parts.join(", ");
        out.push(match kind {
            ParamKind::Resistor => format!("Resistors {list}: uniform over ±{} of the nominal value, a conservative stand-in for unknown production spreads.", pct(*bound)),
            ParamKind::Capacitor => format!("Capacitors {list}: uniform over ±{}; they do not move these quantities, being open at DC and treated as shorts at mid-band.", pct(*bound)),
            ParamKind::Offset => format!("Input offset of {list}: normal with {} as 3σ, truncated at ±{}, in series with the + input.", amp_fig(*kind, *bound), amp_fig(*kind, *bound)),
            ParamKind::BiasPlus => format!("Bias current of the + input of {list}: normal with {} as 3σ, truncated at ±{}; positive flows into the pin.", amp_fig(*kind, *bound), amp_fig(*kind, *bound)),
            ParamKind::BiasMinus => format!("Bias current of the − input of {list}, drawn independently of the + input: normal with {} as 3σ, truncated at ±{}; positive flows into the pin.", amp_fig(*kind, *bound), amp_fig(*kind, *bound)),
        });
    }
    out.push("The sensor, the supplies and the converter's input load (the bench) stay at their nominal values.".to_string());
    out
}

fn unavailable(req: &Request, cfg: &ToleranceConfig, reason: &str) -> ToleranceAnalysis {
    let nan = [f64::NAN; 2];
    let none = || Stats { mean: f64::NAN, std: f64::NAN, p001: f64::NAN, p999: f64::NAN, min: f64::NAN, max: f64::NAN };
    let d = &req.destination;
    let empty = || Histogram { lo: d.min, hi: d.max, counts: vec![0; cfg.bins] };
    ToleranceAnalysis {
        worst_case: WorstCase { output_at_min: nan, output_at_max: nan, gain: nan, offset: nan, method: format!("not available: {reason}") },
        monte_carlo: MonteCarlo {
            runs: 0,
            seed: cfg.seed,
            yield_: f64::NAN,
            yield_headroom: f64::NAN,
            range_use_fraction: 0.95 * (1.0 - 2.0 * d.headroom),
            range_use_yield: f64::NAN,
            output_at_min: none(),
            output_at_max: none(),
            gain: none(),
            offset: none(),
            histograms: Histograms { output_at_min: empty(), output_at_max: empty() },
            distributions: vec![format!("No builds were drawn: {reason}.")],
        },
    }
}
