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
//! * resistors to build (`tolerance: Some(t)`): uniform over ±t — a conservative stand-in
//!   for unknown production spreads. Capacitors are open at DC and shorts at mid-band, so
//!   their tolerance moves none of these quantities; they stay nominal, as do the bench
//!   parts (sensor, supplies, converter load);
//! * each amplifier's input offset and the bias currents of its two inputs (independently):
//!   normal with the stated figure as 3σ, truncated at ±the figure;
//! * each rail (`supply_tolerance`, ±5 % unless given): uniform over ±its tolerance. The
//!   circuit is linear in a rail's voltage, so a rail adds its effect (found by the solver
//!   with nominal parts) times its deviation to each quantity, and moves the amplifiers'
//!   swing limit on its side; the cross term with the parts' own spread (tolerance × rail
//!   deviation, a few 10⁻³ of the rail's effect) is left out.
//!
//! A build is good when the output amplifier stays inside its swing at both ends of the
//! sensor range (and, AC-coupled, at rest) and the output stays inside the converter range.
//!
//! Parameters whose full-range effect (from the worst-case analysis) moves no quantity by
//! more than [`NEGLIGIBLE_EFFECT`] of the converter span are held nominal in the Monte Carlo
//! — a filter section's resistors, for one, carry only bias currents at DC — and listed in
//! `distributions`.
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

pub mod budget;
mod builds;
pub mod rails;
pub mod stages;
mod summary;

use serde::Serialize;

use super::perturb::{Kernel, Param, ParamKind, Workspace};
use super::AnalysisConfig;
use crate::circuit::Circuit;
use crate::request::{Coupling, Request};
use crate::solve::Solver;
use crate::units::{format, Quantity};
use rails::Rail;

/// Options of the tolerance analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct ToleranceConfig {
    /// Monte Carlo builds (at most [`MAX_RUNS`] are drawn).
    pub runs: usize,
    /// Seed of the generator.
    pub seed: u64,
    /// Bins of each histogram (at most [`MAX_BINS`]).
    pub bins: usize,
}

/// Most builds one analysis draws (ten times what a request may ask for).
pub const MAX_RUNS: usize = 10_000_000;
/// Most bins of one histogram.
pub const MAX_BINS: usize = 10_000;

impl From<&AnalysisConfig> for ToleranceConfig {
    fn from(c: &AnalysisConfig) -> Self {
        ToleranceConfig { runs: c.monte_carlo_runs, seed: c.seed, bins: c.histogram_bins }
    }
}

#[derive(Debug, Clone, Serialize)]
pub struct ToleranceAnalysis {
    pub worst_case: WorstCase,
    pub monte_carlo: MonteCarlo,
    /// Each class's part of the worst-case spread and the amplifier figures that keep it
    /// inside the converter range; `None` when the circuit could not be analysed.
    pub budget: Option<budget::Budget>,
    /// How far the rails and the converter's reference move the pin (the `supply` check);
    /// `None` when the circuit could not be analysed.
    pub supply: Option<rails::SupplyShift>,
    /// The worst case of every amplifier's output and input against its limits.
    pub stages: Vec<stages::StageRow>,
}

/// Extreme values over the tolerance box, each as `[low, high]` (`NaN`, JSON `null`, when
/// the circuit could not be analysed; `method` then says why).
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
    /// Share of builds whose output at both source extremes (and, AC-coupled, at rest) stays
    /// inside the converter range without the amplifier reaching its swing limits.
    #[serde(rename = "yield")]
    pub yield_: f64,
    /// Builds in which the output amplifier reaches a swing limit at an end of the sensor
    /// range or at rest: failures, whatever the converter range.
    pub clipped: usize,
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
    /// Builds whose value is held at a swing limit: counted here, not in the bins.
    pub clipped: u32,
}

/// Worst case and Monte Carlo spread of the mapping `circuit` realises for `req`.
pub fn tolerance(req: &Request, circuit: &Circuit, cfg: &ToleranceConfig) -> ToleranceAnalysis {
    let model = match Model::new(req, circuit) {
        Ok(m) => m,
        Err(reason) => {
            let cfg = &ToleranceConfig { bins: cfg.bins.min(MAX_BINS), ..cfg.clone() };
            let notes = vec![format!("No builds were drawn: {reason}.")];
            let monte_carlo = summary::monte_carlo(Vec::new(), Vec::new(), [0; 4], 0, req, cfg, notes);
            let worst_case = WorstCase::unknown(&reason);
            return ToleranceAnalysis { worst_case, monte_carlo, budget: None, supply: None, stages: Vec::new() };
        }
    };
    let cfg = &ToleranceConfig { runs: cfg.runs.min(MAX_RUNS), seed: cfg.seed, bins: cfg.bins.min(MAX_BINS) };
    let mut ws = model.kernel.workspace();
    let (worst_case, effect) = worst_case(&model, &mut ws);
    let d = &req.destination;
    let nominal = model.raw(&vec![0.0; effect.len()], &mut ws);
    // The usable range: the converter's, inside the output amplifier's swing on nominal rails
    // (a rail moves the output in the budget; how it moves the swing limit itself is left to
    // the Monte Carlo, which draws both).
    let mut usable = (d.min, d.max);
    if let Some((lo, hi)) = model.limits {
        usable = (usable.0.max(lo), usable.1.min(hi));
    }
    let classes: Vec<usize> =
        model.rails.iter().map(|r| if r.moves_swing { budget::RAILS } else { budget::REFERENCE }).collect();
    let budget = nominal.map(|n| budget::budget(model.kernel.params(), &classes, &effect, [n[0], n[1]], usable));
    let supply = Some(rails::supply_shift(req, &model.rails, &model.per_offset, circuit.amplifier.supply_rejection));
    let span = (req.destination.max - req.destination.min).abs();
    let drawn = significant(&effect, span);
    // The builds run on a kernel in which the parts held nominal (and the capacitors, which
    // move no quantity) are fixed, so each build stamps and inverts only what varies.
    let fixed: Vec<&str> = model
        .kernel
        .params()
        .iter()
        .zip(&drawn)
        .filter(|(p, d)| p.kind == ParamKind::Capacitor || (p.kind == ParamKind::Resistor && !**d))
        .map(|(p, _)| p.part.as_str())
        .collect();
    let lean = (!fixed.is_empty())
        .then(|| {
            let mut c = circuit.clone();
            for p in c.parts.iter_mut().filter(|p| fixed.contains(&p.reference.as_str())) {
                p.tolerance = None;
            }
            Model::new(req, &c).ok().map(|m| (m, c))
        })
        .flatten();
    let (mc, mc_circuit) = lean.as_ref().map_or((&model, circuit), |(m, c)| (m, c));
    let mc_drawn: Vec<bool> = mc
        .kernel
        .params()
        .iter()
        .map(|q| {
            let same = |p: &&Param| p.kind == q.kind && p.part == q.part;
            model.kernel.params().iter().position(|p| same(&p)).is_none_or(|i| drawn[i])
        })
        .collect();
    let (stage_rows, mut inner) = stages::stage_limits(req, circuit, &model);
    inner.compile(mc_circuit);
    let mut mc_ws = mc.kernel.workspace();
    let (builds, clips, counts) = builds::draw_builds(mc, &mut mc_ws, req, cfg, &mc_drawn, &inner);
    let mut notes = distributions(model.kernel.params());
    for r in model.rails.iter().filter(|r| !r.moves_swing) {
        notes.push(format!(
            "Converter reference ({}): uniform over ±{} (request field destination.reference_tolerance); a reading \
                is stated as its equivalent at the pin.",
            format(r.volts, Quantity::Voltage),
            crate::units::format_percent(r.tolerance)
        ));
    }
    for r in model.rails.iter().filter(|r| r.moves_swing) {
        notes.push(format!(
            "Rail {} ({}): uniform over ±{} (request field supply_tolerance); the swing limit on its side moves with \
                it.",
            r.reference,
            format(r.volts, Quantity::Voltage),
            crate::units::format_percent(r.tolerance)
        ));
    }
    let held: Vec<String> = model
        .kernel
        .params()
        .iter()
        .zip(&drawn)
        .filter(|(p, d)| !**d && p.kind != ParamKind::Capacitor)
        .map(|(p, _)| match p.kind {
            ParamKind::Resistor => p.part.clone(),
            ParamKind::Offset => format!("{} offset", p.part),
            _ => format!("{} bias current", p.part),
        })
        .collect();
    if !held.is_empty() {
        let mut held = held;
        held.dedup();
        notes.push(format!(
            "Held nominal because their full range moves no quantity by more than {} of the span: {}.",
            NEGLIGIBLE_EFFECT,
            held.join(", ")
        ));
    }
    let monte_carlo = summary::monte_carlo(builds, clips, counts, cfg.runs, req, cfg, notes);
    ToleranceAnalysis { worst_case, monte_carlo, budget, supply, stages: stage_rows }
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
    /// The rails and the converter's reference as parameters after the kernel's own.
    rails: Vec<Rail>,
    /// Each amplifier offset's change of every quantity per volt.
    per_offset: Vec<[f64; 4]>,
}

impl Model {
    fn new(req: &Request, circuit: &Circuit) -> Result<Model, String> {
        let kernel = Kernel::compile(circuit, "adc").map_err(|e| e.0)?;
        let s = &req.source;
        let limits = kernel.output_is_amplifier().then(|| circuit.output_limits());
        let ac = s.coupling == Coupling::Ac;
        let mut ac_scale = 1.0;
        if ac {
            let zero = vec![0.0; kernel.params().len()];
            let short = kernel.short_gain(&zero, &mut kernel.workspace());
            let short = short.ok_or("the mid-band gain could not be found")?;
            let f_mid = s.band_centre();
            let h = Solver::new(circuit).transfer(f_mid, "adc").map_err(|e| e.0)?;
            let full = if h.re >= 0.0 { h.norm() } else { -h.norm() };
            if short != 0.0 && (full / short).is_finite() {
                ac_scale = full / short;
            }
        }
        let mid = 0.5 * (s.min + s.max);
        let mut model = Model {
            kernel,
            ac,
            s_min: s.min,
            s_max: s.max,
            mid,
            ac_scale,
            limits,
            rails: Vec::new(),
            per_offset: Vec::new(),
        };
        // Each amplifier offset's change of every quantity per volt (for the supply rejection).
        let mut ws = model.kernel.workspace();
        let zero = vec![0.0; model.kernel.params().len()];
        let base = model.raw_parts(&zero, &mut ws).unwrap_or([0.0; 4]);
        let mut per_offset = Vec::new();
        for (i, p) in model.kernel.params().iter().enumerate() {
            if p.kind != ParamKind::Offset || !(p.bound > 0.0) {
                continue;
            }
            let mut x = zero.clone();
            x[i] = p.bound;
            let hi = model.raw_parts(&x, &mut ws);
            x[i] = -p.bound;
            if let (Some(hi), Some(lo)) = (hi, model.raw_parts(&x, &mut ws)) {
                per_offset.push(std::array::from_fn(|q| (hi[q] - lo[q]) / (2.0 * p.bound)));
            }
        }
        model.rails = rails::rails(req, circuit, &rails::dc_quantities(req, ac, mid), base, &per_offset);
        model.per_offset = per_offset;
        Ok(model)
    }

    /// Bounds of every parameter: the kernel's, then the rails' tolerances.
    fn bounds(&self) -> Vec<f64> {
        self.kernel.params().iter().map(|p| p.bound).chain(self.rails.iter().map(|r| r.tolerance)).collect()
    }

    /// Unclamped `[output at min, output at max, gain, offset]` of build `p` (the kernel's
    /// parameters, then one relative deviation per rail).
    fn raw(&self, p: &[f64], ws: &mut Workspace) -> Option<[f64; 4]> {
        let n = self.kernel.params().len();
        let mut r = self.raw_parts(&p[..n], ws)?;
        for (rail, d) in self.rails.iter().zip(&p[n..]) {
            for (q, e) in r.iter_mut().zip(rail.effect) {
                *q += e * d;
            }
        }
        Some(r)
    }

    /// The output limits of build `p`: each rail's deviation moves the limit on its side.
    fn limits_of(&self, p: &[f64]) -> Option<(f64, f64)> {
        let (mut lo, mut hi) = self.limits?;
        let n = self.kernel.params().len();
        for (rail, d) in self.rails.iter().zip(&p[n..]).filter(|(r, _)| r.moves_swing) {
            if rail.volts > 0.0 {
                hi += rail.volts * d;
            } else {
                lo += rail.volts * d;
            }
        }
        Some((lo, hi))
    }

    /// [`Model::raw`] for the kernel's parameters alone (rails nominal).
    fn raw_parts(&self, p: &[f64], ws: &mut Workspace) -> Option<[f64; 4]> {
        if self.ac {
            let ((slope, icpt), short) = self.kernel.dc_line_and_short_gain(p, ws)?;
            let (level, g) = (slope * self.mid + icpt, self.ac_scale * short);
            let (y1, y2) = (level + g * (self.s_min - self.mid), level + g * (self.s_max - self.mid));
            Some([y1, y2, g, level])
        } else {
            let (slope, icpt) = self.kernel.dc_line(p, ws)?;
            Some([slope * self.s_min + icpt, slope * self.s_max + icpt, slope, icpt])
        }
    }

    /// Holds `y` inside the amplifier's output limits. Comparisons rather than f64::max/min,
    /// which stay library calls when the engine is optimised for size; NaN passes through.
    fn clamp(&self, y: f64) -> f64 {
        clamp_in(self.limits, y)
    }

    /// Which of a build's outputs lie beyond the amplifier's swing limits: bit 0 the output
    /// at the source's minimum, bit 1 at its maximum, bit 2 the rest level (AC coupling).
    fn clips(&self, r: [f64; 4], limits: Option<(f64, f64)>) -> u8 {
        let Some((lo, hi)) = limits else { return 0 };
        let out = |y: f64| (y < lo || y > hi) as u8;
        out(r[0]) | out(r[1]) << 1 | if self.ac { out(r[3]) << 2 } else { 0 }
    }

    /// The quantities of a build as `design::predict` defines them, outputs held inside
    /// `limits`.
    fn clamped(&self, r: [f64; 4], limits: Option<(f64, f64)>) -> [f64; 4] {
        let (y1, y2) = (clamp_in(limits, r[0]), clamp_in(limits, r[1]));
        if self.ac {
            [y1, y2, r[2], clamp_in(limits, r[3])]
        } else {
            let g = slope(y1, y2, self.s_min, self.s_max);
            [y1, y2, g, y1 - g * self.s_min]
        }
    }
}

/// `y` held inside `limits`. Comparisons rather than f64::max/min, which stay library calls
/// when the engine is optimised for size; NaN passes through.
fn clamp_in(limits: Option<(f64, f64)>, y: f64) -> f64 {
    match limits {
        Some((lo, _)) if y < lo => lo,
        Some((_, hi)) if y > hi => hi,
        _ => y,
    }
}

fn slope(y1: f64, y2: f64, x1: f64, x2: f64) -> f64 {
    if x2 > x1 {
        (y2 - y1) / (x2 - x1)
    } else {
        0.0
    }
}

impl WorstCase {
    fn unknown(reason: &str) -> WorstCase {
        let nan = [f64::NAN; 2];
        let method = format!("not available: {reason}");
        WorstCase { output_at_min: nan, output_at_max: nan, gain: nan, offset: nan, method }
    }
}

const METHOD: &str = "Extreme values over the tolerance box (each part at ±its tolerance, each amplifier's offset and \
    bias currents at ±their figures, each rail at ±its tolerance). For each quantity the sign of every parameter's \
    effect, from a central difference across its full range, picks the vertex that pushes the quantity up and the one \
    that pushes it down; single-parameter flips are then tried at each until none improves it. This suffices because \
    every node voltage is a ratio of two functions that are linear in each part's conductance, the offset and each \
    bias current taken separately, so each quantity is monotone in each parameter across a box of a few per cent and \
    its extremes lie at vertices.";

/// Parameters whose effect across their full range on every quantity stays below this
/// fraction of the converter span (gain: of itself) are held nominal in the Monte Carlo:
/// their spread is far below anything the yield or the statistics can show (a filter
/// section's resistors, for one, carry only bias currents at DC).
pub const NEGLIGIBLE_EFFECT: f64 = 1e-7;

/// Which parameters the Monte Carlo draws, from each one's full-range effect.
fn significant(effect: &[[f64; 4]], span: f64) -> Vec<bool> {
    let gain_scale = effect.iter().map(|e| e[2].abs()).fold(0.0, f64::max).max(1e-12);
    effect
        .iter()
        .map(|e| {
            let scale = [span, span, gain_scale, span];
            (0..4).any(|q| !(e[q].abs() < NEGLIGIBLE_EFFECT * scale[q]))
        })
        .collect()
}

/// The worst case and each parameter's full-range effect on the four quantities.
fn worst_case(model: &Model, ws: &mut Workspace) -> (WorstCase, Vec<[f64; 4]>) {
    let bounds = model.bounds();
    let n = bounds.len();
    let mut p = vec![0.0; n];
    let Some(nominal) = model.raw(&p, ws) else {
        return (WorstCase::unknown("the nominal circuit has no solution"), vec![[1.0; 4]; n]);
    };
    // Effect of each parameter across its full range, for every quantity.
    let mut effect = vec![[0.0; 4]; n];
    for i in 0..n {
        p[i] = bounds[i];
        let hi = model.raw(&p, ws).unwrap_or(nominal);
        p[i] = -bounds[i];
        let lo = model.raw(&p, ws).unwrap_or(nominal);
        p[i] = 0.0;
        effect[i] = std::array::from_fn(|q| hi[q] - lo[q]);
    }
    let mut ext = [[0.0; 2]; 4];
    for (q, e) in ext.iter_mut().enumerate() {
        for (side, dir) in [(0, -1.0), (1, 1.0)] {
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
            e[side] = best;
        }
    }
    let c = |v: [f64; 2]| [model.clamp(v[0]), model.clamp(v[1])];
    let (y1, y2) = (c(ext[0]), c(ext[1]));
    let limited = y1 != ext[0] || y2 != ext[1];
    let (gain, offset) = if model.ac {
        (ext[2], c(ext[3]))
    } else if limited {
        // Interval arithmetic on the limited outputs:
        // gain = (y2 − y1)/Δs, offset = (y1·s_max − y2·s_min)/Δs.
        let (a, b) = (model.s_min, model.s_max);
        let gain = [slope(y1[1], y2[0], a, b), slope(y1[0], y2[1], a, b)];
        let span = if b > a { b - a } else { 1.0 };
        let lin = |k: f64, v: [f64; 2]| {
            if k >= 0.0 {
                [k * v[0], k * v[1]]
            } else {
                [k * v[1], k * v[0]]
            }
        };
        let (t1, t2) = (lin(b / span, y1), lin(-a / span, y2));
        (gain, [t1[0] + t2[0], t1[1] + t2[1]])
    } else {
        (ext[2], ext[3])
    };
    let mut method = METHOD.to_string();
    if limited && model.ac {
        method.push_str(" An output reaches the amplifier's swing limit at a vertex and is held there.");
    } else if limited {
        method.push_str(
            " An output reaches the amplifier's swing limit at a vertex and is held there; the gain and \
            offset bounds then follow from the limited outputs by interval arithmetic (they may be wider than any \
            build reaches).",
        );
    }
    (WorstCase { output_at_min: y1, output_at_max: y2, gain, offset, method }, effect)
}

/// Plain sentences on how each class of parameter is drawn.
fn distributions(params: &[Param]) -> Vec<String> {
    let mut groups: Vec<(ParamKind, f64, Vec<&str>)> = Vec::new();
    for p in params {
        match groups.iter_mut().find(|g| g.0 == p.kind && g.1 == p.bound) {
            Some(g) if !g.2.contains(&p.part.as_str()) => g.2.push(&p.part),
            Some(_) => {}
            None => groups.push((p.kind, p.bound, vec![&p.part])),
        }
    }
    let mut out = Vec::new();
    for (kind, bound, parts) in &groups {
        let list = parts.join(", ");
        let pct = crate::units::format_percent(*bound);
        let fig = format(*bound, if *kind == ParamKind::Offset { Quantity::Voltage } else { Quantity::Current });
        let normal = format!("normal with {fig} as 3σ, truncated at ±{fig}");
        out.push(match kind {
            ParamKind::Resistor => format!(
                "Resistors {list}: uniform over ±{pct} of the nominal value, a conservative \
                stand-in for unknown production spreads."
            ),
            ParamKind::Capacitor => format!(
                "Capacitors {list} (±{pct}): held at their nominal values, since they move \
                none of these quantities (open at DC, treated as shorts at mid-band)."
            ),
            ParamKind::Offset => format!("Input offset of {list}: {normal}, in series with the + input."),
            ParamKind::BiasPlus => format!(
                "Bias current of the + input of {list}: {normal}; positive flows into the \
                pin."
            ),
            ParamKind::BiasMinus => format!(
                "Bias current of the − input of {list}, drawn independently of the + \
                input: {normal}; positive flows into the pin."
            ),
        });
    }
    out.push(
        "The sensor, the supplies and the converter's input load (the bench) stay at their nominal values.".to_string(),
    );
    out
}
