//! Noise at the converter input, set against the converter's LSB.
//!
//! Every resistor of the circuit model — the bench's sensor impedance `RSENSE` and converter
//! load `RADC` included — is a Johnson–Nyquist source, and each amplifier adds its input
//! voltage noise and its input current noise (both rising as 1/f below the amplifier's noise
//! corner). The sources are uncorrelated, so their powers add.
//!
//! **Method.** At each of [`NoiseConfig::points`] log-spaced frequencies across the
//! integration band, one adjoint solve ([`Solver::injection_transfers`]) gives the response
//! of the `adc` node to a unit current injected into every unknown, and from it the transfer
//! of every source:
//!
//! * a resistor R between nodes a and b is a noise current √(4kT/R) between them, so its
//!   output density is |z_a − z_b|·√(4kT/R);
//! * the amplifier's voltage noise e_n·√(1 + f_c/f) at its input is, in the macro-model, a
//!   current GM·e_n injected into its internal node `<ref>:x`: |z_x|·GM·e_n(f);
//! * its current noise i_n·√(1 + f_c/f) flows into each input pin separately (uncorrelated):
//!   |z_in+|·i_n(f) and |z_in−|·i_n(f).
//!
//! Ground has transfer 0. Each source's power density is integrated over frequency segment
//! by segment as the power law through the segment's two ends (exact for white and 1/f
//! densities and for a first-order roll-off's tail, as ngspice's `.noise` integrates); the
//! rms values are the square roots. The density is reported at the same frequencies, for
//! plotting.
//!
//! **Integration band** `[f_lo, f_hi]`: `f_lo` is the request's `band_low` for AC coupling,
//! and [`DC_BAND_LOW`] = 0.1 Hz for DC coupling (a ten-second observation, common practice:
//! slower wander counts as drift, not noise). `f_hi` depends on the converter:
//!
//! * a **sampling** converter (SAR, or not known) takes everything its input passes: the
//!   sampling capacitor holds noise of every frequency, folded into the first Nyquist zone
//!   with its power kept. The band therefore runs to [`REACH`] × the fastest corner that
//!   still passes noise to the pin — the amplifiers' gain-bandwidth (an amplifier's output
//!   noise falls off above it at the latest) and the drive network's RC — which leaves out
//!   about 1/REACH of a first-order tail's power (0.6 %);
//! * an **oversampling** converter's decimation filter passes its output band only: the band
//!   runs to half the sample rate (the data rate); what lies near the modulator rate is
//!   stopped by the drive network and is not counted.
//!
//! Below the converter's Nyquist frequency the grid has [`NoiseConfig::points`] log-spaced
//! frequencies; above it [`ABOVE_NYQUIST_PER_DECADE`] per decade carry the roll-off, decade
//! by decade until the tail is negligible ([`TAIL_SHARE`]); the band reported is the one
//! integrated.
//!
//! **Against the converter**: LSB = span / 2^bits, quantisation noise LSB/√12, and the SNR of
//! a full-scale sine (rms span/(2√2)) against the circuit noise and the quantisation noise
//! together; with no circuit noise it is the ideal 6.02·N + 1.76 dB. ENOB = (SNR − 1.76)/6.02.
//!
//! The analysis never fails: a frequency at which the solve fails is left out of the grid,
//! and ratios whose denominator is zero are reported as 0.

use num_complex::Complex;
use serde::Serialize;

use crate::amplifier::GM;
use crate::circuit::{Circuit, PartKind, PartRole, StageKind};
use crate::request::{Coupling, Request};
use crate::solve::Solver;

/// Boltzmann constant, J/K (exact by the 2019 SI definition).
pub const BOLTZMANN: f64 = 1.380649e-23;

/// Lower integration limit for DC coupling, Hz: a ten-second observation (common practice).
pub const DC_BAND_LOW: f64 = 0.1;

/// Most frequencies one analysis evaluates, whatever the configuration asks for.
pub const MAX_POINTS: usize = 100_000;

/// How far above the fastest corner that passes noise to a sampling converter's pin the
/// integration runs (our rule: a first-order tail beyond 100 corners holds 0.6 % of the
/// power).
pub const REACH: f64 = 100.0;

/// Frequencies per decade above the converter's Nyquist frequency (the roll-off region).
pub const ABOVE_NYQUIST_PER_DECADE: f64 = 12.0;

/// The integration above Nyquist stops after a decade that added less than this share of the
/// power so far and less than 0.3 × the decade before it (falling at least 5 dB per decade,
/// so what would follow adds under half of it again; our rule).
pub const TAIL_SHARE: f64 = 1e-4;

/// Options of the noise analysis; `Default` gives 300 K, 160 points, amplifier included.
#[derive(Debug, Clone, PartialEq)]
pub struct NoiseConfig {
    /// Temperature of every resistor, K.
    pub temperature: f64,
    /// Log-spaced frequencies across the integration band (at least 2 are used).
    pub points: usize,
    /// Include the amplifiers' voltage and current noise (false: resistors only).
    pub include_amplifier: bool,
}

impl Default for NoiseConfig {
    fn default() -> Self {
        NoiseConfig { temperature: 300.0, points: 160, include_amplifier: true }
    }
}

/// Noise at the converter input over the integration band, and what it means for the converter.
#[derive(Debug, Clone, Serialize)]
pub struct NoiseAnalysis {
    /// Integration band `[f_lo, f_hi]`, Hz.
    pub band: [f64; 2],
    /// Total noise at the `adc` node over the band, V rms.
    pub output_rms: f64,
    /// `output_rms` referred to the sensor: divided by |mid-band gain| (0 for a zero gain).
    pub input_rms: f64,
    /// Converter span / 2^bits, V.
    pub lsb: f64,
    /// Quantisation noise lsb/√12, V rms.
    pub quantization_rms: f64,
    /// output_rms / lsb.
    pub lsb_ratio: f64,
    /// Full-scale sine against circuit and quantisation noise together, dB.
    pub snr_db: f64,
    /// (snr_db − 1.76)/6.02, bits.
    pub enob: f64,
    /// Temperature used, K.
    pub temperature: f64,
    /// Every noise source with its share at the output, largest first.
    pub contributors: Vec<Contributor>,
    /// Output noise density across the band, for plotting.
    pub density: Vec<DensityPoint>,
}

/// One noise source and its rms contribution at the `adc` node over the band.
#[derive(Debug, Clone, Serialize)]
pub struct Contributor {
    /// Designator of a resistor (`R1`, `RSENSE`, `RADC` …), or `"U1 voltage noise"` /
    /// `"U1 current noise"` for an amplifier.
    pub part: String,
    /// V rms.
    pub output_rms: f64,
}

/// Output noise density at one frequency.
#[derive(Debug, Clone, Serialize)]
pub struct DensityPoint {
    /// Hz.
    pub f: f64,
    /// V/√Hz at the `adc` node.
    pub output: f64,
}

/// Analyses the noise of `circuit`, designed for `req`, at the `adc` node.
///
/// `mid_gain` is the design's gain from the sensor to the converter (V/V, sign ignored).
pub fn noise(req: &Request, circuit: &Circuit, mid_gain: f64, cfg: &NoiseConfig) -> NoiseAnalysis {
    let [f_lo, f_hi] = band(req, circuit);
    let temperature = if cfg.temperature.is_finite() && cfg.temperature >= 0.0 { cfg.temperature } else { 0.0 };
    let sources = sources(circuit, cfg.include_amplifier);
    let solver = Solver::new(circuit);

    // Power density of every source (V²/Hz) at each frequency that solved.
    let mut freqs = Vec::new();
    let mut power: Vec<Vec<f64>> = vec![Vec::new(); sources.len()];
    let amp = &circuit.amplifier;
    let corner = if amp.noise_corner.is_finite() { amp.noise_corner.max(0.0) } else { 0.0 };
    let nyquist = 0.5 * req.destination.sample_rate;
    let grid = grid(f_lo, f_hi, nyquist, cfg.points);
    let knee = grid.iter().take(cfg.points.clamp(2, MAX_POINTS)).count();
    let mut total: Vec<f64> = Vec::new();
    let mut last_decade = f64::INFINITY;
    for (i, &f) in grid.iter().enumerate() {
        let Ok(z) = solver.injection_transfers(f, "adc") else { continue };
        let at = |node: &str| solver.index_of(node).and_then(|i| z.get(i).copied()).unwrap_or(Complex::new(0.0, 0.0));
        let flicker = 1.0 + corner / f;
        for (k, s) in sources.iter().enumerate() {
            let p = match s {
                Source::Resistor { a, b, ohms, .. } => {
                    (at(a) - at(b)).norm_sqr() * 4.0 * BOLTZMANN * temperature / ohms
                }
                Source::Voltage { internal, .. } => {
                    at(internal).norm_sqr() * (GM * amp.noise_voltage).powi(2) * flicker
                }
                Source::Current { inp, inn, .. } => {
                    (at(inp).norm_sqr() + at(inn).norm_sqr()) * amp.noise_current.powi(2) * flicker
                }
            };
            power[k].push(if p.is_finite() { p } else { 0.0 });
        }
        freqs.push(f);
        total.push(power.iter().filter_map(|p| p.last()).sum());
        // Above Nyquist, decade by decade: stop once the roll-off has made the rest negligible.
        let above = i + 1 - knee.min(i + 1);
        if above > 0
            && above.is_multiple_of(ABOVE_NYQUIST_PER_DECADE as usize)
            && freqs.len() > ABOVE_NYQUIST_PER_DECADE as usize
        {
            let start = freqs.len() - 1 - ABOVE_NYQUIST_PER_DECADE as usize;
            let decade = integrate(&freqs[start..], &total[start..]);
            let so_far = integrate(&freqs, &total);
            if decade <= TAIL_SHARE * so_far && decade <= 0.3 * last_decade {
                break;
            }
            last_decade = decade;
        }
    }
    // The band actually integrated (the tail may have stopped early).
    let f_hi = freqs.last().copied().filter(|&f| f > f_lo).unwrap_or(f_hi);

    let mut contributors: Vec<Contributor> = sources
        .iter()
        .zip(&power)
        .map(|(s, p)| Contributor { part: s.name(), output_rms: integrate(&freqs, p).sqrt() })
        .collect();
    crate::order::sort_by(&mut contributors, |a, b| b.output_rms.total_cmp(&a.output_rms));
    let output_rms = contributors.iter().map(|c| c.output_rms * c.output_rms).sum::<f64>().sqrt();
    let density = freqs
        .iter()
        .enumerate()
        .map(|(i, &f)| DensityPoint { f, output: power.iter().map(|p| p[i]).sum::<f64>().sqrt() })
        .collect();

    let d = &req.destination;
    let span = (d.max - d.min).abs();
    let lsb = lsb(span, d.bits);
    let quantization_rms = quantization_rms(lsb);
    let total = output_rms.hypot(quantization_rms);
    let full_scale_rms = span / (2.0 * std::f64::consts::SQRT_2);
    let snr_db = if total > 0.0 && full_scale_rms > 0.0 { 20.0 * (full_scale_rms / total).log10() } else { 0.0 };
    NoiseAnalysis {
        band: [f_lo, f_hi],
        output_rms,
        input_rms: ratio(output_rms, mid_gain.abs()),
        lsb,
        quantization_rms,
        lsb_ratio: ratio(output_rms, lsb),
        snr_db: finite(snr_db),
        enob: finite(enob(snr_db)),
        temperature,
        contributors,
        density,
    }
}

/// The integration band `[f_lo, f_hi]` for `req` and its built circuit (see the module
/// documentation).
pub fn band(req: &Request, circuit: &Circuit) -> [f64; 2] {
    let s = &req.source;
    let d = &req.destination;
    let f_lo = match s.coupling {
        Coupling::Ac if s.band_low.is_finite() && s.band_low > 0.0 => s.band_low,
        _ => DC_BAND_LOW,
    };
    let nyquist = 0.5 * d.sample_rate;
    let mut f_hi = if d.converter.samples() { REACH * fastest_corner(circuit).unwrap_or(nyquist) } else { nyquist };
    if !f_hi.is_finite() || f_hi <= f_lo {
        f_hi = f_lo;
    }
    [f_lo, f_hi]
}

/// What the integration band is, in words, for messages beside its figures.
pub fn band_note(req: &Request) -> &'static str {
    if req.destination.converter.samples() {
        "everything the drive passes, which a sampling converter folds into its band"
    } else {
        "the oversampling converter's output band"
    }
}

/// The fastest corner that passes noise to the converter pin: the amplifiers' gain-bandwidth
/// and the drive network's RC, whichever is higher (`None` for a circuit with neither).
pub fn fastest_corner(circuit: &Circuit) -> Option<f64> {
    let amplifiers = circuit.parts.iter().any(|p| p.kind == PartKind::OpAmp);
    let gbw = Some(circuit.amplifier.gbw).filter(|g| amplifiers && g.is_finite() && *g > 0.0);
    let drive = |role| circuit.stage_part(StageKind::ConverterDrive, role).map(|p| p.value);
    let rc = match (drive(PartRole::DriveResistor), drive(PartRole::ChargeBucket)) {
        (Some(r), Some(c)) if r > 0.0 && c > 0.0 => Some(1.0 / (2.0 * std::f64::consts::PI * r * c)),
        _ => None,
    };
    [gbw, rc].into_iter().flatten().filter(|f| f.is_finite()).max_by(f64::total_cmp)
}

/// Johnson–Nyquist noise density √(4kTR) of `ohms` at `kelvin`, V/√Hz.
pub fn johnson_density(ohms: f64, kelvin: f64) -> f64 {
    (4.0 * BOLTZMANN * kelvin * ohms).sqrt()
}

/// One LSB of a converter with input span `span` (V) and `bits` bits: span / 2^bits.
pub use crate::request::lsb_of as lsb;

/// Quantisation noise of an ideal converter, lsb/√12 (V rms).
pub fn quantization_rms(lsb: f64) -> f64 {
    lsb / 12f64.sqrt()
}

/// SNR of an ideal `bits`-bit converter for a full-scale sine, 20·log10(2^N·√1.5) ≈ 6.02·N + 1.76 dB.
pub use crate::request::full_range_db as ideal_snr_db;

/// Effective number of bits from a signal-to-noise-and-distortion ratio: (SINAD − 1.76)/6.02.
pub fn enob(sinad_db: f64) -> f64 {
    (sinad_db - 1.76) / 6.02
}

/// One uncorrelated noise source of the circuit.
enum Source {
    Resistor { reference: String, a: String, b: String, ohms: f64 },
    Voltage { reference: String, internal: String },
    Current { reference: String, inp: String, inn: String },
}

impl Source {
    fn name(&self) -> String {
        match self {
            Source::Resistor { reference, .. } => reference.clone(),
            Source::Voltage { reference, .. } => format!("{reference} voltage noise"),
            Source::Current { reference, .. } => format!("{reference} current noise"),
        }
    }
}

/// Every resistor, and each amplifier's two sources when `amplifiers` is set.
fn sources(circuit: &Circuit, amplifiers: bool) -> Vec<Source> {
    let node = |nodes: &[String], i: usize| nodes.get(i).cloned().unwrap_or_else(|| crate::circuit::GND.to_string());
    let mut out = Vec::new();
    for p in &circuit.parts {
        match p.kind {
            PartKind::Resistor => out.push(Source::Resistor {
                reference: p.reference.clone(),
                a: node(&p.nodes, 0),
                b: node(&p.nodes, 1),
                // The solver's floor on resistance, so both see the same part.
                ohms: p.value.max(1e-9),
            }),
            PartKind::OpAmp if amplifiers => {
                out.push(Source::Voltage { reference: p.reference.clone(), internal: format!("{}:x", p.reference) });
                out.push(Source::Current {
                    reference: p.reference.clone(),
                    inp: node(&p.nodes, 0),
                    inn: node(&p.nodes, 1),
                });
            }
            _ => {}
        }
    }
    out
}

/// `n` log-spaced frequencies from `lo` to the lower of `hi` and `nyquist` inclusive, then
/// [`ABOVE_NYQUIST_PER_DECADE`] per decade on to `hi` (one point when the band is closed).
fn grid(lo: f64, hi: f64, nyquist: f64, n: usize) -> Vec<f64> {
    let open = lo > 0.0 && hi > lo && hi.is_finite();
    if !open {
        return vec![lo];
    }
    let knee = if nyquist.is_finite() && nyquist > lo { nyquist.min(hi) } else { hi };
    let n = n.clamp(2, MAX_POINTS);
    let log_spaced = |a: f64, b: f64, n: usize| {
        let step = (b / a).ln() / (n - 1) as f64;
        (0..n).map(move |i| if i + 1 == n { b } else { a * (step * i as f64).exp() })
    };
    let mut out: Vec<f64> = log_spaced(lo, knee, n).collect();
    if hi > knee * (1.0 + 1e-12) {
        let above = ((hi / knee).log10() * ABOVE_NYQUIST_PER_DECADE).ceil().clamp(1.0, MAX_POINTS as f64) as usize;
        out.extend(log_spaced(knee, hi, above + 1).skip(1));
    }
    out
}

/// ∫ y df over the (sorted) frequencies `f`, each segment as the power law through its two
/// ends (the trapezoid where an end is zero).
fn integrate(f: &[f64], y: &[f64]) -> f64 {
    f.windows(2)
        .zip(y.windows(2))
        .map(|(f, y)| {
            let r = f[1] / f[0];
            if !(y[0] > 0.0 && y[1] > 0.0 && r > 1.0) {
                return 0.5 * (f[1] - f[0]) * (y[0] + y[1]);
            }
            let k1 = (y[1] / y[0]).ln() / r.ln() + 1.0;
            let part = if k1.abs() < 1e-9 { y[0] * f[0] * r.ln() } else { y[0] * f[0] * (r.powf(k1) - 1.0) / k1 };
            if part.is_finite() {
                part
            } else {
                0.5 * (f[1] - f[0]) * (y[0] + y[1])
            }
        })
        .sum()
}

/// a / b, or 0 when that is not a finite number.
fn ratio(a: f64, b: f64) -> f64 {
    finite(a / b)
}

fn finite(x: f64) -> f64 {
    if x.is_finite() {
        x
    } else {
        0.0
    }
}
