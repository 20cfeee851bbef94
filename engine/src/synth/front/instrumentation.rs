//! The instrumentation-amplifier front end of a differential pair or a bridge: two
//! non-inverting amplifiers (U1 on the + leg, U2 on the − leg) whose inverting inputs share
//! the gain resistor R_G, each with its feedback resistor R_F, followed by the difference
//! amplifier of [`super::difference`]. The first stage passes the common mode at unity gain and
//! multiplies the difference by G1 = 1 + 2·R_F/R_G; the difference stage takes G2 = R2/R1,
//! so G = (1 + 2R_F/R_G)·(R2/R1) (references: three-op-amp instrumentation amplifier). The
//! legs see only the amplifiers' + inputs: nothing loads the sensor.
//!
//! **How the gain is split.** The first stage takes as much of the gain as its outputs can
//! swing: they sit at V_cm ± G1·V_d/2, so G1 ≤ 2·min(out_hi − V_cm,max, V_cm,min − out_lo)/|V_d|max
//! (a bridge's zero balance and the two amplifiers' offsets counted in V_d). Gain in the first stage also
//! multiplies the
//! common-mode rejection: with resistor tolerance t the worst case is G1·(1 + G2)/(4t)
//! (references: Kitchin & Counts, from memory; the tests reproduce it by brute force).
//! R_F is the series value in 10 kΩ … 100 kΩ (common practice for this stage: low noise, a
//! light load on the amplifiers) with the R_G from the series that gives G1 most closely
//! without passing the swing limit. The difference stage is then synthesised for the first
//! stage's outputs (`equivalent`): a stiff pair with G1 times the sensor's range.
//!
//! **Input protection.** Each leg reaches its amplifier through a series resistor R_P: a
//! leg driven beyond a rail then pushes at most (excess − 0.3 V)/R_P into the amplifier's
//! input protection. R_P is the largest series value whose thermal noise stays at or below
//! half the amplifier's voltage noise density (√(4kT·R_P) ≤ e_n/2, so the pair adds at most
//! about 12 % to the stage's input noise), capped at 10 kΩ (common practice); the check
//! states the fault each leg then tolerates: the current limit, and what R_P takes at the
//! least standard rating, which every listed part meets (power and working voltage,
//! [`crate::ratings::fault_across`]; the claim drops to that, it never raises the rating).

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Builder, Circuit, PartKind, PartRole, Side, Stage, StageKind, StageRole, GND};
use crate::diag::Check;
use crate::figures::Block;
use crate::request::{FrontEnd, Request, SourceKind};
use crate::units::{format, Quantity};
use crate::values;

/// R_F's window, Ω (common practice for the first stage of an instrumentation amplifier).
pub const FEEDBACK_MIN: f64 = 10e3;
pub const FEEDBACK_MAX: f64 = 100e3;
/// Largest protection resistor, Ω (common practice).
pub const PROTECT_MAX: f64 = 10e3;
/// Smallest protection resistor, Ω.
pub const PROTECT_MIN: f64 = 10.0;
/// Gain errors this close to the smallest count as equal when the gain is split (well
/// below a resistor's tolerance).
pub const GAIN_SLACK: f64 = 2e-4;
/// Boltzmann constant, J/K (exact, SI 2019).
const K_B: f64 = 1.380649e-23;

/// The designed first stage (`instrumentation` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InampDesign {
    /// Why the instrumentation amplifier was chosen.
    pub reason: String,
    /// R_F (each leg) and R_G, Ω; `None` when the first stage is a pair of followers.
    pub feedback: Option<f64>,
    pub gain_resistor: Option<f64>,
    /// First-stage gain with the rounded parts, V/V.
    pub first_gain: f64,
    /// The largest first-stage gain the outputs can swing, V/V.
    pub first_gain_limit: f64,
    /// Series resistor in each leg, Ω.
    pub protection: f64,
    /// Thermal noise density of one protection resistor, V/√Hz.
    pub protection_noise: f64,
    /// How far beyond a rail a leg may go with the current into the amplifier's input
    /// limited to `destination.injection_limit` and R_P within what a part of the least
    /// standard rating takes ([`crate::ratings::fault_across`]), V.
    pub fault_beyond_rail: f64,
    /// The amplifiers' + inputs over the common-mode and signal range, V.
    pub input_range: (f64, f64),
    /// The first stage's outputs over that range, V.
    pub output_range: (f64, f64),
    /// The gain-bandwidth the first stage needs (100 × G1 × band_high), Hz.
    pub gbw_needed: f64,
}

/// Whether `req` (a differential pair, or a bridge) gets the instrumentation amplifier:
/// a bridge always unless the request asks for the difference amplifier; a pair when asked,
/// or (`auto`) when the gain wanted is above 10 or the difference amplifier's input
/// resistors could not stay at 100 × the legs' impedance (either would load the sensor or
/// leave the common-mode rejection to one stage), and the reason in words.
pub fn wanted(req: &Request, gain: f64) -> Option<String> {
    let s = &req.source;
    if !matches!(s.kind, SourceKind::Differential | SourceKind::Bridge) {
        return None;
    }
    match s.front_end {
        FrontEnd::Difference => None,
        FrontEnd::Instrumentation => Some("requested (source.front_end)".to_string()),
        FrontEnd::Auto if s.kind == SourceKind::Bridge => Some(
            "a bridge: nothing may load its arms, and its \
            millivolts need gain before the common mode is removed"
                .to_string(),
        ),
        FrontEnd::Auto if gain.abs() > 10.0 => Some(format!(
            "a gain of {:.1}: the first stage takes it before the \
            common mode is removed, which multiplies the rejection",
            gain.abs()
        )),
        FrontEnd::Auto if 100.0 * s.impedance * (1.0 + gain.abs()) > req.parts.resistor_max => Some(format!(
            "the legs' {} impedance: a difference amplifier's input resistors would load them",
            format(s.impedance, Quantity::Resistance)
        )),
        FrontEnd::Auto => None,
    }
}

/// Plans the first stage for the pair `req` (a bridge as its Thévenin pair) when the whole
/// amplifier needs gain `gain`; `extra` widens the differential signal the stage must pass
/// (a bridge's zero balance), V.
pub fn plan(req: &Request, amp: &Amplifier, rails: Rails, gain: f64, extra: f64, reason: String) -> InampDesign {
    let s = &req.source;
    let m = crate::synth::SWING_MARGIN;
    // The room on the rails at the low end of their tolerance (the common mode may not follow).
    let (out_lo, out_hi) = amp.output_limits(crate::synth::low_rails(req, rails));
    let cm_lo = s.common_mode_min.unwrap_or(0.0);
    let cm_hi = s.common_mode_max.unwrap_or(cm_lo);
    // Each input amplifier's offset adds to the difference the stage multiplies.
    let a = s.min.abs().max(s.max.abs()) + extra.abs() + 2.0 * amp.offset.abs();
    let room = (out_hi - m - cm_hi).min(cm_lo - (out_lo + m));
    let limit = if a > 0.0 { (2.0 * room / a).max(1.0) } else { f64::INFINITY };
    let want = gain.abs().min(limit).max(1.0);
    let series = req.parts.resistor_series;
    // Candidate (R_F, R_G) pairs with G1 from half the wanted gain up to the limit; each is
    // scored by the whole amplifier's gain error once the difference stage takes the rest
    // with its best ratio R2/R1 from the series, so the two roundings can cancel. Of the
    // candidates within GAIN_SLACK of the smallest error the largest G1 wins (more
    // common-mode rejection), then R_F nearest the geometric middle of its window.
    let mut best: Option<(f64, f64, f64, f64)> = None;
    let g = gain.abs();
    if want > 1.0 + 1e-3 {
        let mid = (FEEDBACK_MIN * FEEDBACK_MAX).sqrt();
        let lo = FEEDBACK_MIN.max(req.parts.resistor_min);
        let hi = FEEDBACK_MAX.min(req.parts.resistor_max).max(lo);
        let g_lo = (0.5 * want).max(1.0 + 1e-3);
        let mut cands: Vec<(f64, f64, f64)> = Vec::new();
        for r_f in values::values_between(series, lo, hi) {
            let (rg_lo, rg_hi) = (2.0 * r_f / (want - 1.0), 2.0 * r_f / (g_lo - 1.0));
            for r_g in values::values_between(series, (0.97 * rg_lo).max(req.parts.resistor_min.min(10.0)), rg_hi) {
                let g1 = 1.0 + 2.0 * r_f / r_g;
                if g1 <= limit * (1.0 + 1e-9) {
                    cands.push((g1, r_f, r_g));
                }
            }
        }
        let ratios = ratios_between(series, g / want.max(1.0) / 1.05, g / g_lo * 1.05);
        let scored: Vec<(f64, f64, f64, f64)> =
            cands.iter().map(|&(g1, r_f, r_g)| (r_f, r_g, g1, nearest_ratio_error(&ratios, g / g1))).collect();
        let least = scored.iter().map(|c| c.3).fold(f64::INFINITY, f64::min);
        for c in scored.into_iter().filter(|c| c.3 <= least + GAIN_SLACK) {
            let better = match &best {
                None => true,
                Some(b) => {
                    c.2 > b.2 * (1.0 + 1e-9)
                        || (c.2 >= b.2 * (1.0 - 1e-9) && (c.0 / mid).ln().abs() < (b.0 / mid).ln().abs())
                }
            };
            if better {
                best = Some(c);
            }
        }
    }
    let best = best.map(|b| (b.0, b.1, b.2));
    let (feedback, gain_resistor, first_gain) = match best {
        Some((r_f, r_g, g1)) => (Some(r_f), Some(r_g), g1),
        None => (None, None, 1.0),
    };
    // Protection: √(4kT·R_P) ≤ e_n/2.
    let four_kt = 4.0 * K_B * req.analysis.temperature;
    let bound = ((0.5 * amp.noise_voltage).powi(2) / four_kt).clamp(PROTECT_MIN, PROTECT_MAX);
    let protection = values::step_down(series, bound).unwrap_or(bound);
    let half = 0.5 * s.min.abs().max(s.max.abs());
    let input_range = (cm_lo - half, cm_hi + half);
    let swing = 0.5 * first_gain * a;
    InampDesign {
        reason,
        feedback,
        gain_resistor,
        first_gain,
        first_gain_limit: limit,
        protection,
        protection_noise: (four_kt * protection).sqrt(),
        fault_beyond_rail: (protection * req.destination.injection_limit)
            .min(crate::ratings::fault_across(protection, crate::ratings::POWER_RATINGS[0]))
            + crate::synth::drive::CLAMP_DROP,
        input_range,
        output_range: (cm_lo - swing, cm_hi + swing),
        gbw_needed: 100.0 * first_gain * s.band_high,
    }
}

/// The request the difference stage is synthesised for: the first stage's outputs, a stiff
/// pair carrying G1 times the sensor's range at the same common mode.
pub fn equivalent(req: &Request, d: &InampDesign) -> Request {
    let mut eq = req.clone();
    let s = &mut eq.source;
    s.kind = SourceKind::Differential;
    s.min *= d.first_gain;
    s.max *= d.first_gain;
    s.impedance = 0.0;
    s.bridge = None;
    s.measurand = None;
    eq
}

/// Puts the first stage (U1, U2; the difference stage's amplifiers move up by two) and the
/// protection resistors in front of the difference stage synthesised for [`equivalent`],
/// and restores the bench to the pair `req` describes.
pub fn insert(circuit: &mut Circuit, req: &Request, d: &InampDesign, rails: Rails) {
    let s = &req.source;
    super::renumber_amplifiers(circuit, 2);
    // The difference stage now reads the first stage's outputs instead of the pair's terminals.
    let terminals = circuit.sensor_terminals();
    for p in circuit.parts.iter_mut() {
        if p.bench {
            continue;
        }
        for n in p.nodes.iter_mut() {
            match terminals.iter().position(|t| t == n) {
                Some(0) => *n = "oa".to_string(),
                Some(1) => *n = "ob".to_string(),
                _ => {}
            }
        }
    }
    let mid = 0.5 * (s.min + s.max);
    let cm_mid = 0.5 * (s.common_mode_min.unwrap_or(0.0) + s.common_mode_max.unwrap_or(0.0));
    for p in circuit.parts.iter_mut().filter(|p| p.bench) {
        match p.role {
            Some(PartRole::DifferentialEmf) => p.value = mid,
            Some(PartRole::CommonMode) => p.value = cm_mid - 0.5 * mid,
            Some(PartRole::LegImpedance(_)) => p.value = s.impedance.max(1e-3),
            _ => {}
        }
    }
    let vneg = if rails.is_dual() { "vneg" } else { GND };
    let gbw = circuit.amplifier.gbw;
    let rtol = Some(req.parts.resistor_tolerance);
    let mut bld = Builder::resume(std::mem::take(&mut circuit.parts));
    let mut parts = Vec::new();
    parts.push(bld.add(
        PartKind::Resistor,
        d.protection,
        rtol,
        &["sensep", "ipp"],
        (StageRole::InputStage, PartRole::Protection(Side::Plus)),
        "protection resistor, + leg: limits fault current into U1's input",
    ));
    parts.push(bld.add(
        PartKind::Resistor,
        d.protection,
        rtol,
        &["sensen", "ipn"],
        (StageRole::InputStage, PartRole::Protection(Side::Minus)),
        "protection resistor, − leg: limits fault current into U2's input",
    ));
    match (d.feedback, d.gain_resistor) {
        (Some(r_f), Some(r_g)) => {
            parts.push(bld.front_amplifier(
                "U1",
                gbw,
                ["ipp", "ga", "vpos", vneg, "oa"],
                (StageRole::InputStage, PartRole::InputAmplifier(Side::Plus)),
                "input amplifier, + leg: gain 1 + 2R_F/R_G for the difference, 1 for the common mode",
            ));
            parts.push(bld.front_amplifier(
                "U2",
                gbw,
                ["ipn", "gb", "vpos", vneg, "ob"],
                (StageRole::InputStage, PartRole::InputAmplifier(Side::Minus)),
                "input amplifier, − leg: gain 1 + 2R_F/R_G for the difference, 1 for the common mode",
            ));
            parts.push(bld.add(
                PartKind::Resistor,
                r_f,
                rtol,
                &["oa", "ga"],
                (StageRole::InputStage, PartRole::LegFeedback(Side::Plus)),
                "first-stage feedback R_F, + leg",
            ));
            parts.push(bld.add(
                PartKind::Resistor,
                r_g,
                rtol,
                &["ga", "gb"],
                (StageRole::InputStage, PartRole::GainResistor),
                "gain resistor R_G: sets the first stage's gain",
            ));
            parts.push(bld.add(
                PartKind::Resistor,
                r_f,
                rtol,
                &["ob", "gb"],
                (StageRole::InputStage, PartRole::LegFeedback(Side::Minus)),
                "first-stage feedback R_F, − leg",
            ));
        }
        _ => {
            parts.push(bld.front_amplifier(
                "U1",
                gbw,
                ["ipp", "oa", "vpos", vneg, "oa"],
                (StageRole::InputStage, PartRole::InputAmplifier(Side::Plus)),
                "input follower, + leg: the leg sees only its input",
            ));
            parts.push(bld.front_amplifier(
                "U2",
                gbw,
                ["ipn", "ob", "vpos", vneg, "ob"],
                (StageRole::InputStage, PartRole::InputAmplifier(Side::Minus)),
                "input follower, − leg: the leg sees only its input",
            ));
        }
    }
    circuit.parts = bld.parts;
    let what = match d.gain_resistor {
        Some(r_g) => format!(
            "instrumentation-amplifier input stage, gain {:.3} (R_G {})",
            d.first_gain,
            format(r_g, Quantity::Resistance)
        ),
        None => "instrumentation-amplifier input stage: two followers".to_string(),
    };
    let kind = StageKind::InstrumentationInput;
    circuit.stages.insert(0, Stage { role: StageRole::InputStage, kind, description: what, parts });
}

/// The whole amplifier's topology in words, given the difference stage's.
pub fn topology(d: &InampDesign, difference_stage: &str) -> String {
    match d.gain_resistor {
        Some(_) => {
            format!("instrumentation amplifier: input stage of gain {:.1}, then a {difference_stage}", d.first_gain)
        }
        None => format!("instrumentation amplifier: two input followers, then a {difference_stage}"),
    }
}

/// Design equations of the first stage, with the numbers substituted.
pub fn equations(req: &Request, d: &InampDesign) -> Vec<String> {
    let r = |x: f64| format(x, Quantity::Resistance);
    let mut e = vec![format!("Instrumentation amplifier chosen for {}", d.reason)];
    match (d.feedback, d.gain_resistor) {
        (Some(r_f), Some(r_g)) => e.push(format!(
            "G1 = 1 + 2R_F/R_G = 1 + 2·{}/{} = {:.5} (at most {:.3}, where the first stage's outputs reach the swing \
                limit); the difference stage takes the rest",
            r(r_f),
            r(r_g),
            d.first_gain,
            d.first_gain_limit
        )),
        _ => e.push(format!(
            "G1 = 1: two followers (the outputs cannot swing any gain, or none is wanted: limit {:.3})",
            d.first_gain_limit
        )),
    }
    e.push(format!(
        "R_P = {} per leg: √(4kT·R_P) = {} ≤ e_n/2 at {} K",
        r(d.protection),
        format(d.protection_noise, Quantity::VoltageNoise),
        crate::units::format_sig(req.analysis.temperature, Quantity::Ratio, 4)
    ));
    e
}

/// Checks of the first stage: its inputs and outputs against the amplifier's reach, its
/// gain-bandwidth, and the protection the series resistors give.
pub fn checks(req: &Request, d: &InampDesign, amp: &Amplifier, rails: Rails) -> Vec<Check> {
    let v = |x: f64| format(x, Quantity::Voltage);
    let hz = |x: f64| format(x, Quantity::Frequency);
    let mut c = Vec::new();
    let (in_lo, in_hi) = amp.input_limits(rails);
    let (a, b) = d.input_range;
    c.push(if a < in_lo - 1e-9 || b > in_hi + 1e-9 {
        Check::error(
            "input_stage_inputs",
            format!(
                "The legs swing {} … {}, outside the input amplifiers' input range \
            {} … {} on these rails; widen the rails or choose amplifiers whose inputs reach them.",
                v(a),
                v(b),
                v(in_lo),
                v(in_hi)
            ),
        )
    } else {
        Check::ok(
            "input_stage_inputs",
            format!(
                "The legs swing {} … {}, inside the input amplifiers' input range {} … \
            {}.",
                v(a),
                v(b),
                v(in_lo),
                v(in_hi)
            ),
        )
    });
    let (out_lo, out_hi) = amp.output_limits(rails);
    let (a, b) = d.output_range;
    c.push(if a < out_lo - 1e-9 || b > out_hi + 1e-9 {
        Check::error(
            "input_stage_swing",
            format!(
                "The first stage's outputs would swing {} … {}, beyond the \
            amplifiers' {} … {}: the common mode leaves no room for even unity gain. Move the common mode toward \
            mid-rail or widen the rails.",
                v(a),
                v(b),
                v(out_lo),
                v(out_hi)
            ),
        )
    } else {
        Check::ok(
            "input_stage_swing",
            format!(
                "The first stage's outputs swing {} … {} (the common mode ± G1 × half \
            the difference), inside the amplifiers' {} … {}.",
                v(a),
                v(b),
                v(out_lo),
                v(out_hi)
            ),
        )
    });
    c.push(if d.gbw_needed > amp.gbw {
        Check::warning(
            "input_stage_gbw",
            format!(
                "The first stage's gain {:.1} over a {} band needs a gain-bandwidth \
            of {}, above the amplifiers' {}; its gain will droop toward the band edge. Move gain to the difference \
            stage or choose faster amplifiers.",
                d.first_gain,
                hz(req.source.band_high),
                hz(d.gbw_needed),
                hz(amp.gbw)
            ),
        )
    } else {
        Check::ok(
            "input_stage_gbw",
            format!(
                "The amplifiers' gain-bandwidth {} covers the {} the first stage needs.",
                hz(amp.gbw),
                hz(d.gbw_needed)
            ),
        )
    });
    c
}

/// Every ratio R2/R1 in `lo … hi` with both resistors from `series` (R1 over one decade,
/// which covers every ratio the series offers), ascending.
pub fn ratios_between(series: values::Series, lo: f64, hi: f64) -> Vec<f64> {
    let mut out = Vec::new();
    for r1 in values::values_between(series, 1e3, 9.99e3) {
        out.extend(values::values_between(series, r1 * lo, r1 * hi).into_iter().map(|r2| r2 / r1));
    }
    crate::order::sort_by(&mut out, |a, b| a.total_cmp(b));
    out
}

/// The smallest relative error |r/g − 1| over the ascending `ratios` (binary search).
pub fn nearest_ratio_error(ratios: &[f64], g: f64) -> f64 {
    let i = ratios.partition_point(|&r| r < g);
    [i.checked_sub(1), Some(i)]
        .into_iter()
        .flatten()
        .filter_map(|k| ratios.get(k))
        .map(|r| (r / g - 1.0).abs())
        .fold(f64::INFINITY, f64::min)
}

/// Worst-case CMRR of the whole instrumentation amplifier, dB: the difference stage's
/// (1 + G2)/(4t) multiplied by the first stage's gain.
pub fn cmrr_worst_db(first_gain: f64, second_gain: f64, t: f64) -> f64 {
    super::difference::cmrr_worst_db(second_gain, t) + 20.0 * first_gain.max(1.0).log10()
}

/// A pair (or a bridge's pair) behind the instrumentation amplifier's first stage, with
/// the difference stage after it.
#[derive(Debug, Clone, PartialEq)]
pub struct Instrumentation {
    pub first: InampDesign,
    pub diff: super::difference::Difference,
}

/// The front end of a differential pair or a bridge: the instrumentation amplifier when
/// [`wanted`] for the gain the whole amplifier needs, otherwise the difference amplifier.
pub fn plan_pair(req: &Request, amp: &Amplifier, rails: Rails) -> super::FrontEnd {
    let diff = super::difference::Difference::of(req);
    let pair = &diff.pair;
    let first = crate::synth::target(pair, amp, rails, &mut Vec::new()).and_then(|t| {
        let why = wanted(req, t.gain)?;
        let extra = diff.bridge.as_ref().map_or(0.0, |b| b.zero_offset);
        Some(plan(pair, amp, rails, t.gain, extra, why))
    });
    match first {
        Some(first) => super::FrontEnd::Instrumentation(Instrumentation { first, diff }),
        None => super::FrontEnd::Difference(diff),
    }
}

impl super::Steps for Instrumentation {
    fn equivalent(&self, _ctx: &super::Context) -> Request {
        equivalent(&self.diff.pair, &self.first)
    }

    fn early_checks(&self, ctx: &super::Context) -> Vec<Check> {
        self.diff.early_checks(ctx)
    }

    /// The legs now meet the protection resistors, not the difference stage.
    fn supersedes(&self) -> &'static [&'static str] {
        &["input_protection"]
    }

    fn insert(&mut self, circuit: &mut Circuit, ctx: &super::Context) {
        insert(circuit, &self.diff.pair, &self.first, ctx.rails);
        self.diff.build(circuit, ctx.req, Some(self.first.first_gain));
    }

    fn topology(&self, gain_stage: &str) -> String {
        topology(&self.first, gain_stage)
    }

    fn equations(&self, _ctx: &super::Context) -> Vec<String> {
        equations(&self.diff.pair, &self.first)
    }

    fn checks(&mut self, circuit: &Circuit, p: &crate::predict::Predicted, ctx: &super::Context) -> Vec<Check> {
        let pair = &self.diff.pair;
        let mut c = checks(pair, &self.first, ctx.amp, ctx.rails);
        if let Some(f) = super::series_fault(pair, circuit, &circuit.sensor_terminals()) {
            self.first.fault_beyond_rail = f.beyond_rail;
            c.push(Check::ok(
                "input_series",
                format!(
                    "Each leg reaches its amplifier through {}, which adds {} of noise against the amplifier's {}. {}",
                    format(self.first.protection, Quantity::Resistance),
                    format(self.first.protection_noise, Quantity::VoltageNoise),
                    format(ctx.amp.noise_voltage, Quantity::VoltageNoise),
                    f.text(pair.destination.injection_limit)
                ),
            ));
        }
        c.extend(super::input_protection(pair, circuit, ctx.rails));
        c.extend(self.diff.zero_trim(ctx.req, p));
        c
    }

    fn analysed(&mut self, cmrr: Option<(usize, f64)>, ctx: &super::Context) -> Vec<Check> {
        self.diff.analysed(cmrr, ctx)
    }

    fn needs(&self) -> Option<super::Needs> {
        let d = &self.first;
        Some(super::Needs {
            output_range: d.output_range,
            input_range: d.input_range,
            gbw: d.gbw_needed,
            gain: d.first_gain,
            rule: "instrumentation amplifier's first stage (100 × its gain",
        })
    }

    fn figures(&self, _ctx: &super::Context) -> Vec<Block> {
        let ia = &self.first;
        let mut b = Block::new("instrumentation", "Instrumentation amplifier: input stage U1, U2")
            .text("Chosen for", ia.reason.clone());
        b = match (ia.feedback, ia.gain_resistor) {
            (Some(r_f), Some(r_g)) => {
                b.quantity("R_F (each leg)", r_f, Quantity::Resistance).quantity("R_G", r_g, Quantity::Resistance)
            }
            _ => b.text("Input amplifiers", "followers (unity gain)"),
        };
        let limit = format!(
            "largest the outputs can swing: {}",
            crate::units::format_sig(ia.first_gain_limit, Quantity::Ratio, 3)
        );
        b = b
            .ratio("First-stage gain", ia.first_gain, 4, &limit)
            .range("First-stage outputs", ia.output_range.0, ia.output_range.1, Quantity::Voltage)
            .quantity("Protection resistor (each leg)", ia.protection, Quantity::Resistance)
            .quantity("A leg may go beyond a rail by", ia.fault_beyond_rail, Quantity::Voltage);
        let mut out = vec![b];
        out.extend(self.diff.blocks(true));
        out
    }
}
