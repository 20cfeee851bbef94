//! The gain stage of a differential sensor (`source.kind = "differential"`): a difference
//! amplifier. R1 from the − leg to the − input, R2 from there to the output, R3 from the +
//! leg to the + input, R4 from there to the reference: with R3 = R1 and R4 = R2,
//! V_out = (R2/(R1 + R_s))·(V+ − V−) + V_ref (references: difference amplifier), the legs'
//! source impedance R_s counted in R1 and R3. The target's gain sets R2/(R1 + R_s) (R1 from
//! the series inside the window, R2 the series value nearest G·(R1 + R_s), the pair with the
//! smallest gain error); its offset is V_ref, the reference the pin is driven to: ground
//! when that is 0 V, otherwise a divider from the nearer rail buffered by a follower (a
//! divider alone would add its resistance to R4 and spoil the match).
//!
//! **Bench.** `VCM` fixes the − leg at the common-mode level less half the mid-range signal,
//! `VSENSE` sits between the legs (the differential signal, swept by the analyses), each leg
//! behind its impedance (`RSENSEP`, `RSENSEN`).
//!
//! **Common-mode rejection** (references: Kitchin & Counts): with resistor tolerance t the
//! worst-case CMRR of the four resistors is (1 + G)/(4·t); a common-mode swing ΔV_cm then
//! moves the output by up to G·ΔV_cm/CMRR, checked against one LSB.

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Builder, Circuit, PartKind, Stage, StageRole, GND};
use crate::request::Request;
use crate::units::{format, Quantity};
use crate::values;

use super::{Limits, Synthesis, Target};

/// The designed difference amplifier (`differential` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DiffDesign {
    /// R1 (= R3) and R2 (= R4), Ω.
    pub r1: f64,
    pub r2: f64,
    /// Differential gain of this stage with the rounded parts, V/V (behind an
    /// instrumentation amplifier's first stage: G2).
    pub gain: f64,
    /// The reference pin's level, V.
    pub reference: f64,
    /// Worst-case CMRR from the resistor tolerance, dB (of the whole instrumentation
    /// amplifier when there is one).
    pub cmrr_worst_db: f64,
    /// Output change over the common-mode range at that CMRR, V.
    pub cm_error: f64,
    /// Seeded Monte Carlo over the resistor tolerances: the CMRR that 99.9 % of builds
    /// exceed, dB (`None` when the circuit does not compile for it).
    pub cmrr_monte_carlo_db: Option<f64>,
}

/// Builds drawn for the common-mode Monte Carlo (a 0.1 % quantile needs a few thousand).
pub const CMRR_RUNS: usize = 4000;

/// The CMRR that 99.9 % of `runs` seeded builds exceed, dB: each build draws every resistor
/// uniformly within its tolerance (as the tolerance analysis does); its differential gain is
/// the slope against `VSENSE`, its common-mode gain the slope against `VCM` (the same circuit
/// with the two sources' roles swapped). Both are taken at the difference stage's output:
/// the filter and drive after it scale both alike, so they are left out of the builds.
pub fn cmrr_monte_carlo(circuit: &Circuit, runs: usize, seed: u64) -> Option<f64> {
    use crate::analysis::perturb::{Kernel, ParamKind};
    use rand::{RngCore, SeedableRng};
    let out = circuit.parts.iter().find(|p| !p.bench && p.kind == PartKind::OpAmp && p.stage == StageRole::Gain)?.nodes[4].clone();
    let mut circuit = circuit.clone();
    circuit.parts.retain(|p| !matches!(p.stage, StageRole::Filter | StageRole::Drive | StageRole::Converter));
    let circuit = &circuit;
    let dm = Kernel::compile(circuit, &out).ok()?;
    let mut swapped = circuit.clone();
    for p in swapped.parts.iter_mut().filter(|p| p.bench) {
        match p.reference.as_str() {
            "VSENSE" => p.reference = "VDIFF".to_string(),
            "VCM" => p.reference = "VSENSE".to_string(),
            _ => {}
        }
    }
    let cm = Kernel::compile(&swapped, &out).ok()?;
    if dm.params() != cm.params() {
        return None;
    }
    let resistors: Vec<(usize, f64)> = dm.params().iter().enumerate().filter(|(_, q)| q.kind == ParamKind::Resistor).map(|(i, q)| (i, q.bound)).collect();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let (mut ws_dm, mut ws_cm) = (dm.workspace(), cm.workspace());
    let mut p = vec![0.0; dm.params().len()];
    let mut out = Vec::with_capacity(runs);
    for _ in 0..runs {
        for &(i, bound) in &resistors {
            let word = rng.next_u32();
            p[i] = bound * ((word as f64 + 0.5) * (2.0 / 4_294_967_296.0) - 1.0);
        }
        let (Some((g_dm, _)), Some((g_cm, _))) = (dm.dc_line(&p, &mut ws_dm), cm.dc_line(&p, &mut ws_cm)) else { continue };
        // A build with no measurable common-mode gain counts as 200 dB.
        let db = if g_cm.abs() > 0.0 { 20.0 * (g_dm.abs() / g_cm.abs()).log10() } else { 200.0 };
        if db.is_finite() {
            out.push(db.min(200.0));
        }
    }
    if out.is_empty() {
        return None;
    }
    crate::order::sort_by(&mut out, |a, b| a.total_cmp(b));
    Some(out[(out.len() / 1000).min(out.len() - 1)])
}

/// Worst-case CMRR of a difference amplifier of gain `g` whose four resistors are within
/// ±`t`: (1 + G)/(4t), dB.
pub fn cmrr_worst_db(g: f64, t: f64) -> f64 {
    20.0 * ((1.0 + g.abs()) / (4.0 * t.max(1e-12))).log10()
}

/// Synthesises the stage for target `t`; `None` when no pair fits the resistor window.
pub fn synthesize(req: &Request, amp: &Amplifier, rails: Rails, t: Target, _limits: Limits) -> Option<Synthesis> {
    let s = &req.source;
    let rs = s.impedance;
    let series = req.parts.resistor_series;
    let (rmin, rmax) = (req.parts.resistor_min, req.parts.resistor_max);
    let g = t.gain.abs();
    // The pair (R1, R2) with the smallest gain error, R1 at least 100 × the legs' impedance
    // where the window allows (the sensor's impedance then moves the gain by under 1 %).
    let all = values::values_between(series, rmin, rmax);
    let high: Vec<f64> = all.iter().copied().filter(|r| *r >= 100.0 * rs).collect();
    let pick = |candidates: &[f64]| {
        let mut best: Option<(f64, f64, f64)> = None;
        for &r1 in candidates {
            let Some(r2) = values::nearest(series, g * (r1 + rs)) else { continue };
            if !(rmin..=rmax).contains(&r2) {
                continue;
            }
            let err = (r2 / (r1 + rs) / g - 1.0).abs();
            if best.is_none_or(|b| err < b.2 - 1e-12) {
                best = Some((r1, r2, err));
            }
        }
        best
    };
    // A high gain may leave no R2 in the window above 100 × R_s: then any R1 will do.
    let best = pick(&high).or_else(|| pick(&all));
    let (r1, r2, _) = best?;
    let gain = r2 / (r1 + rs);
    // Positive gain: + leg through R3 to the + input; a falling mapping swaps the legs.
    let (plus_leg, minus_leg) = if t.gain >= 0.0 { ("sensep", "sensen") } else { ("sensen", "sensep") };
    let cm_lo = s.common_mode_min.unwrap_or(0.0);
    let cm_hi = s.common_mode_max.unwrap_or(cm_lo);
    let cm_mid = 0.5 * (cm_lo + cm_hi);
    let v_mid = 0.5 * (s.min + s.max);
    let tol = Some(req.parts.resistor_tolerance);
    let mut bld = Builder::default();
    bld.bench("VCM", PartKind::VoltageSource, cm_mid - 0.5 * v_mid, &["emfn", GND], StageRole::Sensor, "common-mode level (the − leg; the pair's common mode is VCM + VSENSE/2)");
    bld.bench("VSENSE", PartKind::VoltageSource, v_mid, &["emfp", "emfn"], StageRole::Sensor, "differential signal (swept over the source range)");
    bld.bench("RSENSEP", PartKind::Resistor, rs.max(1e-3), &["emfp", "sensep"], StageRole::Sensor, "+ leg impedance");
    bld.bench("RSENSEN", PartKind::Resistor, rs.max(1e-3), &["emfn", "sensen"], StageRole::Sensor, "− leg impedance");
    bld.bench("VPOS", PartKind::VoltageSource, rails.pos, &["vpos", GND], StageRole::Supply, "positive rail");
    if rails.is_dual() {
        bld.bench("VNEG", PartKind::VoltageSource, rails.neg, &["vneg", GND], StageRole::Supply, "negative rail");
    }
    bld.bench("RADC", PartKind::Resistor, req.destination.impedance, &["adc", GND], StageRole::Converter, "converter input impedance");
    let vneg = if rails.is_dual() { "vneg" } else { GND };
    let mut parts = vec![
        bld.add(PartKind::Resistor, r1, tol, &[minus_leg, "inn1"], StageRole::Gain, "input resistor R1 (− leg)"),
        bld.add(PartKind::Resistor, r2, tol, &["inn1", "adc"], StageRole::Gain, "feedback resistor R2"),
        bld.add(PartKind::Resistor, r1, tol, &[plus_leg, "inp1"], StageRole::Gain, "input resistor R3 (+ leg, equal to R1)"),
    ];
    // The reference the pin is driven to.
    let mut ref_parts = Vec::new();
    let mut v_ref = 0.0;
    let mut equations = Vec::new();
    let pin = if t.offset.abs() < 1e-9 {
        GND.to_string()
    } else {
        let (rail_node, rail) = if t.offset > 0.0 { ("vpos", rails.pos) } else if rails.is_dual() { ("vneg", rails.neg) } else { ("vpos", rails.pos) };
        let ratio = (t.offset / rail).clamp(1e-6, 1.0 - 1e-6);
        // Both legs from the series, the pair nearest the ratio (the follower takes no current,
        // so the divider's resistance only needs to keep its own noise and drain low).
        let window = values::Window { min: rmin.max(1e3), max: rmax.min(1e6) };
        let (top, bottom) = values::best_divider(series, ratio, Some(50e3), window).map_or((100e3, 100e3 * ratio / (1.0 - ratio)), |d| (d.top, d.bottom));
        v_ref = rail * bottom / (top + bottom);
        ref_parts.push(bld.add(PartKind::Resistor, top, tol, &[rail_node, "dref"], StageRole::Reference, "reference divider, upper leg"));
        ref_parts.push(bld.add(PartKind::Resistor, bottom, tol, &["dref", GND], StageRole::Reference, "reference divider, lower leg"));
        ref_parts.push(bld.add(PartKind::Capacitor, 100e-9, Some(req.parts.capacitor_tolerance), &["dref", GND], StageRole::Reference, "reference bypass"));
        equations.push(format!("V_ref = {} from a divider on {}, buffered so the pin sees no resistance", format(v_ref, Quantity::Voltage), format(rail, Quantity::Voltage)));
        "ref".to_string()
    };
    parts.push(bld.add(PartKind::Resistor, r2, tol, &["inp1", &pin], StageRole::Gain, "resistor R4 to the reference pin (equal to R2)"));
    parts.push(bld.add(PartKind::OpAmp, amp.gbw, None, &["inp1", "inn1", "vpos", vneg, "adc"], StageRole::Gain, "difference amplifier: gain, common-mode rejection and level"));
    if pin == "ref" {
        ref_parts.push(bld.add(PartKind::OpAmp, amp.gbw, None, &["dref", "ref", "vpos", vneg, "ref"], StageRole::Reference, "reference follower: drives the pin from a low impedance"));
    }
    let signed = if t.gain >= 0.0 { gain } else { -gain };
    let err = [s.min, s.max].iter().map(|&v| (signed * v + v_ref - (t.gain * v + t.offset)).abs()).fold(0.0, f64::max);
    equations.insert(0, format!("G = R2/(R1 + R_s) = {}/({} + {}) = {:.5} (wanted {:.5}); R3 = R1, R4 = R2", format(r2, Quantity::Resistance), format(r1, Quantity::Resistance), format(rs, Quantity::Resistance), gain, g));
    let mut stages = vec![Stage { role: StageRole::Gain, description: "difference amplifier".to_string(), parts }];
    if !ref_parts.is_empty() {
        stages.push(Stage { role: StageRole::Reference, description: format!("reference at {}", format(v_ref, Quantity::Voltage)), parts: ref_parts });
    }
    // The + input over the common-mode and signal range: the + leg divided with the reference.
    let r3e = r1 + rs;
    let plus = |vleg: f64| (vleg * r2 + v_ref * r3e) / (r3e + r2);
    let legs = [cm_lo - 0.5 * s.max.abs().max(s.min.abs()), cm_hi + 0.5 * s.max.abs().max(s.min.abs())];
    let (a, b) = (plus(legs[0]), plus(legs[1]));
    Some(Synthesis {
        circuit: super::finish(bld, stages, amp, rails),
        target: t,
        topology: if pin == "ref" { "difference amplifier, reference pin on a buffered divider".to_string() } else { "difference amplifier, reference pin at ground".to_string() },
        equations,
        rounding_error: err,
        plus_range: (a.min(b), a.max(b)),
        checks: Vec::new(),
        filter: None,
        no_filter: None,
        drive: None,
    })
}

/// The design figures and the common-mode check of the circuit `c` built for the pair
/// `req`; `front_gain` is the gain of an instrumentation amplifier's first stage in front of
/// the difference stage (which then sees no source impedance), `None` without one.
pub fn report(req: &Request, c: &Circuit, front_gain: Option<f64>) -> Option<(DiffDesign, crate::diag::Check)> {
    let src = &req.source;
    let r1 = c.parts.iter().find(|p| p.purpose.starts_with("input resistor R1"))?.value;
    let r2 = c.parts.iter().find(|p| p.purpose.starts_with("feedback resistor R2"))?.value;
    let gain = r2 / (r1 + if front_gain.is_some() { 0.0 } else { src.impedance });
    let g1 = front_gain.unwrap_or(1.0);
    let t = req.parts.resistor_tolerance;
    let cmrr = super::inamp::cmrr_worst_db(g1, gain, t);
    let cm_span = src.common_mode_max.unwrap_or(0.0) - src.common_mode_min.unwrap_or(0.0);
    let cm_error = g1 * gain * cm_span / 10f64.powf(cmrr / 20.0);
    let d = &req.destination;
    let lsb = (d.max - d.min) / 2f64.powi(d.bits as i32);
    let tol = format!("{} %", crate::units::format_sig(100.0 * t, Quantity::Ratio, 3));
    let rule = match front_gain {
        Some(g1) => format!("G1·(1 + G2)/(4t), the difference stage's (1 + G2)/(4t) times the first stage's gain {g1:.3}"),
        None => "(1 + G)/(4t)".to_string(),
    };
    let text = format!(
        "With ±{tol} resistors the worst-case common-mode rejection is {:.1} dB ({rule}); over the {} common-mode range the output may move by {} ({:.1} LSB)",
        cmrr,
        format(cm_span, Quantity::Voltage),
        format(cm_error, Quantity::Voltage),
        cm_error / lsb
    );
    let mc = cmrr_monte_carlo(c, CMRR_RUNS, req.analysis.seed);
    let text = match mc {
        Some(db) => format!("{text}; {} seeded builds: 99.9 % exceed {db:.1} dB", CMRR_RUNS),
        None => text,
    };
    let remedy = if front_gain.is_some() { "Tighter resistors in the difference stage (0.1 % or a matched network) or more gain in the first stage raise it." } else { "Tighter resistors (0.1 % or a matched network) or an instrumentation amplifier (source.front_end) raise it." };
    let check = if cm_error > lsb { crate::diag::Check::warning("cmrr", format!("{text}. {remedy}")) } else { crate::diag::Check::ok("cmrr", format!("{text}.")) };
    let reference = c.parts.iter().find(|p| p.purpose.starts_with("resistor R4")).map_or(0.0, |p| {
        let pin = p.nodes.iter().find(|n| *n != "inp1").cloned().unwrap_or_default();
        if pin == GND { 0.0 } else { crate::solve::Solver::new(c).dc(0.5 * (src.min + src.max)).ok().and_then(|o| o.voltage(&pin)).unwrap_or(0.0) }
    });
    Some((DiffDesign { r1, r2, gain, reference, cmrr_worst_db: cmrr, cm_error, cmrr_monte_carlo_db: mc }, check))
}

/// A bridge's figures (`bridge` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BridgeDesign {
    /// Current the bridge draws from its excitation, A.
    pub excitation_current: f64,
    /// Power in each arm, W.
    pub arm_power: f64,
    /// One active arm: how far the output at full scale falls short of a straight line,
    /// relative to full scale (0 for two or four arms in opposite pairs).
    pub nonlinearity: f64,
    /// The bridge's zero balance at its output, ± V.
    pub zero_offset: f64,
}

/// The differential pair a bridge presents: its legs at half the excitation, each behind
/// half the bridge resistance (two arms in parallel, Thévenin).
pub fn bridge_equivalent(req: &Request) -> Option<(Request, BridgeDesign)> {
    let b = req.source.bridge.clone()?;
    let mut eq = req.clone();
    eq.source.kind = crate::request::SourceKind::Differential;
    eq.source.impedance = 0.5 * b.bridge_resistance;
    eq.source.bridge = None;
    eq.source.measurand = None;
    // One active arm R(1 + x): V_out = V_exc·x/(4 + 2x) (references: Wheatstone bridge); at
    // full scale V_out/V_exc = S, so x = 4S/(1 − 2S) and the shortfall from the straight
    // line through the origin is 1 − (4 + 2·0)/(4 + 2x) = 2x/(4 + 2x).
    let nonlinearity = if b.active_arms == 1 {
        let x = 4.0 * b.sensitivity / (1.0 - 2.0 * b.sensitivity);
        2.0 * x / (4.0 + 2.0 * x)
    } else {
        0.0
    };
    let d = BridgeDesign {
        excitation_current: b.excitation / b.bridge_resistance,
        arm_power: (0.5 * b.excitation).powi(2) / b.bridge_resistance,
        nonlinearity,
        zero_offset: b.zero_balance * b.sensitivity * b.excitation,
    };
    Some((eq, d))
}

/// Adds the excitation to the bench: `VEXC` and the bridge's load on it (`RBRIDGE`, the
/// bridge seen across its excitation: its arm resistance).
pub fn insert_bridge(circuit: &mut Circuit, req: &Request) {
    let Some(b) = &req.source.bridge else { return };
    let mut bld = Builder::resume(std::mem::take(&mut circuit.parts));
    bld.bench("VEXC", PartKind::VoltageSource, b.excitation, &["exc", GND], StageRole::Sensor, "bridge excitation");
    bld.bench("RBRIDGE", PartKind::Resistor, b.bridge_resistance, &["exc", GND], StageRole::Sensor, "the bridge's load on its excitation");
    circuit.parts = bld.parts;
}

/// Checks of a bridge: excitation current and self-heating, one-arm nonlinearity, and what
/// a ratiometric converter cancels.
pub fn bridge_checks(req: &Request, d: &BridgeDesign) -> Vec<crate::diag::Check> {
    use crate::diag::Check;
    let Some(b) = &req.source.bridge else { return Vec::new() };
    let mut c = Vec::new();
    let text = format!(
        "The bridge draws {} from its {} excitation; each arm dissipates {}",
        format(d.excitation_current, Quantity::Current),
        format(b.excitation, Quantity::Voltage),
        format(d.arm_power, Quantity::Power)
    );
    // Common practice: foil strain gauges and load cells stay near their rated reading below
    // a few milliwatts per arm; above 10 mW self-heating shows as drift.
    c.push(if d.arm_power > 10e-3 {
        Check::warning("self_heating", format!("{text}, enough to warm the gauges and drift the reading; a lower excitation or a higher-resistance bridge reduces it."))
    } else {
        Check::ok("self_heating", format!("{text}."))
    });
    if d.nonlinearity > 0.0 {
        let pct = 100.0 * d.nonlinearity;
        c.push(if pct > 0.1 {
            Check::warning("bridge_linearity", format!("With one active arm the output bends {pct:.3} % of full scale short of a straight line at full scale (V_exc·x/(4 + 2x)); two or four active arms in opposite pairs, or a correction in firmware, remove it."))
        } else {
            Check::ok("bridge_linearity", format!("With one active arm the output bends {pct:.3} % of full scale short of a straight line at full scale (V_exc·x/(4 + 2x))."))
        });
    }
    c.push(if b.ratiometric {
        Check::ok("ratiometric", "The converter's reference is the bridge's excitation: a drift of the excitation moves the bridge's output and the converter's full scale alike and cancels in the reading; the amplifier's offset and the reference pin's level do not.".to_string())
    } else {
        Check::ok("ratiometric", format!("The excitation is not the converter's reference: a {} change of the excitation moves the reading by the same fraction; using the excitation as the converter's reference (ratiometric) cancels that.", "1 %"))
    });
    c
}

/// The zero-balance check of a bridge whose stage has gain `g`: the output shift against the
/// headroom, and the trim range the reference pin needs when the headroom cannot take it.
pub fn zero_trim(req: &Request, d: &BridgeDesign, g: f64) -> Option<crate::diag::Check> {
    use crate::diag::Check;
    let b = req.source.bridge.as_ref()?;
    let d_out = g * d.zero_offset;
    let room = req.destination.headroom * (req.destination.max - req.destination.min);
    let text = format!(
        "The bridge's zero balance (±{} of its full-scale output) moves the output by up to ±{}",
        format!("{} %", crate::units::format_sig(100.0 * b.zero_balance, Quantity::Ratio, 3)),
        format(d_out, Quantity::Voltage)
    );
    Some(if d_out > room {
        Check::warning("zero_trim", format!("{text}, more than the {} of headroom: trim the reference pin over ±{} (±{} referred to the bridge), or give more headroom.", format(room, Quantity::Voltage), format(d_out, Quantity::Voltage), format(d.zero_offset, Quantity::Voltage)))
    } else {
        Check::ok("zero_trim", format!("{text}, inside the {} of headroom; a tare reading in firmware removes it, no trim needed.", format(room, Quantity::Voltage)))
    })
}
