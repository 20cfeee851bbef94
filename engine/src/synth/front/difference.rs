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
use crate::circuit::{Builder, Circuit, Divider, PartKind, PartRole, Side, Stage, StageKind, StageRole, GND};
use crate::diag::Check;
use crate::figures::Block;
use crate::request::Request;
use crate::units::{format, Quantity};
use crate::values;

use crate::synth::{Limits, Synthesis, Target};

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
    /// The first stage's gain in front of this stage (instrumentation amplifier), if any.
    #[serde(skip)]
    pub first_gain: Option<f64>,
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
    bld.bench(
        "VCM",
        PartKind::VoltageSource,
        cm_mid - 0.5 * v_mid,
        &["emfn", GND],
        (StageRole::Sensor, PartRole::CommonMode),
        "common-mode level (the − leg; the pair's common mode is VCM + VSENSE/2)",
    );
    bld.bench(
        "VSENSE",
        PartKind::VoltageSource,
        v_mid,
        &["emfp", "emfn"],
        (StageRole::Sensor, PartRole::DifferentialEmf),
        "differential signal (swept over the source range)",
    );
    let leg = |side| (StageRole::Sensor, PartRole::LegImpedance(side));
    bld.bench("RSENSEP", PartKind::Resistor, rs.max(1e-3), &["emfp", "sensep"], leg(Side::Plus), "+ leg impedance");
    bld.bench("RSENSEN", PartKind::Resistor, rs.max(1e-3), &["emfn", "sensen"], leg(Side::Minus), "− leg impedance");
    let rail = (StageRole::Supply, PartRole::Rail);
    bld.bench("VPOS", PartKind::VoltageSource, rails.pos, &["vpos", GND], rail, "positive rail");
    if rails.is_dual() {
        bld.bench("VNEG", PartKind::VoltageSource, rails.neg, &["vneg", GND], rail, "negative rail");
    }
    bld.bench(
        "RADC",
        PartKind::Resistor,
        req.destination.impedance,
        &["adc", GND],
        (StageRole::Converter, PartRole::ConverterLoad),
        "converter input impedance",
    );
    let vneg = if rails.is_dual() { "vneg" } else { GND };
    let at = |role| (StageRole::Gain, role);
    let mut parts = vec![
        bld.add(
            PartKind::Resistor,
            r1,
            tol,
            &[minus_leg, "inn1"],
            at(PartRole::MinusInput),
            "input resistor R1 (− leg)",
        ),
        bld.add(PartKind::Resistor, r2, tol, &["inn1", "adc"], at(PartRole::FeedbackResistor), "feedback resistor R2"),
        bld.add(
            PartKind::Resistor,
            r1,
            tol,
            &[plus_leg, "inp1"],
            at(PartRole::PlusInput),
            "input resistor R3 (+ leg, equal to R1)",
        ),
    ];
    // The reference the pin is driven to.
    let mut ref_parts = Vec::new();
    let mut v_ref = 0.0;
    let mut equations = Vec::new();
    let pin = if t.offset.abs() < 1e-9 {
        GND.to_string()
    } else {
        let (rail_node, rail) = if t.offset > 0.0 {
            let (v, node) = crate::synth::level_source(req, rails, t.offset);
            crate::synth::reference_pin(&mut bld, req, rails, node);
            (node, v)
        } else if rails.is_dual() {
            ("vneg", rails.neg)
        } else {
            ("vpos", rails.pos)
        };
        let ratio = (t.offset / rail).clamp(1e-6, 1.0 - 1e-6);
        // Both legs from the series, the pair nearest the ratio (the follower takes no current,
        // so the divider's resistance only needs to keep its own noise and drain low).
        let window = values::Window { min: rmin.max(1e3), max: rmax.min(1e6) };
        let (top, bottom) = values::best_divider(series, ratio, Some(50e3), window)
            .map_or((100e3, 100e3 * ratio / (1.0 - ratio)), |d| (d.top, d.bottom));
        v_ref = rail * bottom / (top + bottom);
        let divider = Divider {
            from: rail_node,
            tap: "dref",
            top,
            bottom,
            bypass: Some((100e-9, "reference bypass")),
            stage: StageRole::Reference,
            what: "reference divider",
        };
        ref_parts.extend(bld.divider(&divider, tol, Some(req.parts.capacitor_tolerance)));
        equations.push(format!(
            "V_ref = {} from a divider on {}, buffered so the pin sees no resistance",
            format(v_ref, Quantity::Voltage),
            format(rail, Quantity::Voltage)
        ));
        "ref".to_string()
    };
    parts.push(bld.add(
        PartKind::Resistor,
        r2,
        tol,
        &["inp1", &pin],
        at(PartRole::ToReference),
        "resistor R4 to the reference pin (equal to R2)",
    ));
    parts.push(bld.add(
        PartKind::OpAmp,
        amp.gbw,
        None,
        &["inp1", "inn1", "vpos", vneg, "adc"],
        at(PartRole::Amplifier),
        "difference amplifier: gain, common-mode rejection and level",
    ));
    if pin == "ref" {
        ref_parts.push(bld.add(
            PartKind::OpAmp,
            amp.gbw,
            None,
            &["dref", "ref", "vpos", vneg, "ref"],
            (StageRole::Reference, PartRole::ReferenceFollower),
            "reference follower: drives the pin from a low impedance",
        ));
    }
    let signed = if t.gain >= 0.0 { gain } else { -gain };
    let err = [s.min, s.max].iter().map(|&v| (signed * v + v_ref - (t.gain * v + t.offset)).abs()).fold(0.0, f64::max);
    equations.insert(
        0,
        format!(
            "G = R2/(R1 + R_s) = {}/({} + {}) = {:.5} (wanted {:.5}); R3 = R1, R4 = R2",
            format(r2, Quantity::Resistance),
            format(r1, Quantity::Resistance),
            format(rs, Quantity::Resistance),
            gain,
            g
        ),
    );
    let description = "difference amplifier".to_string();
    let mut stages = vec![Stage { role: StageRole::Gain, kind: StageKind::Difference, description, parts }];
    if !ref_parts.is_empty() {
        stages.push(Stage {
            role: StageRole::Reference,
            kind: StageKind::Reference,
            description: format!("reference at {}", format(v_ref, Quantity::Voltage)),
            parts: ref_parts,
        });
    }
    // The + input over the common-mode and signal range: the + leg divided with the reference.
    let r3e = r1 + rs;
    let plus = |vleg: f64| (vleg * r2 + v_ref * r3e) / (r3e + r2);
    let legs = [cm_lo - 0.5 * s.max.abs().max(s.min.abs()), cm_hi + 0.5 * s.max.abs().max(s.min.abs())];
    let (a, b) = (plus(legs[0]), plus(legs[1]));
    Some(Synthesis {
        circuit: crate::synth::finish(bld, stages, amp, rails),
        target: t,
        topology: if pin == "ref" {
            "difference amplifier, reference pin on a buffered divider".to_string()
        } else {
            "difference amplifier, reference pin at ground".to_string()
        },
        equations,
        rounding_error: err,
        plus_range: (a.min(b), a.max(b)),
        checks: Vec::new(),
        filter: None,
        no_filter: None,
        drive: None,
    })
}

/// The design figures of the circuit `c` built for the pair `req`; `front_gain` is the gain
/// of an instrumentation amplifier's first stage in front of the difference stage (which
/// then sees no source impedance), `None` without one. The seeded common-mode spread is
/// filled in from the analyses ([`DiffDesign::cmrr_check`]).
pub fn report(req: &Request, c: &Circuit, front_gain: Option<f64>) -> Option<DiffDesign> {
    let src = &req.source;
    let part = |role| c.stage_part(StageKind::Difference, role);
    let r1 = part(PartRole::MinusInput)?.value;
    let r2 = part(PartRole::FeedbackResistor)?.value;
    let gain = r2 / (r1 + if front_gain.is_some() { 0.0 } else { src.impedance });
    let g1 = front_gain.unwrap_or(1.0);
    let t = req.parts.resistor_tolerance;
    let cmrr = super::instrumentation::cmrr_worst_db(g1, gain, t);
    let cm_span = src.common_mode_max.unwrap_or(0.0) - src.common_mode_min.unwrap_or(0.0);
    let cm_error = g1 * gain * cm_span / 10f64.powf(cmrr / 20.0);
    // R4 runs from the amplifier's + input to the reference pin.
    let plus = part(PartRole::Amplifier).and_then(|u| u.nodes.first()).cloned().unwrap_or_default();
    let reference = part(PartRole::ToReference).map_or(0.0, |p| {
        let pin = p.nodes.iter().find(|n| **n != plus).cloned().unwrap_or_default();
        if pin == GND {
            0.0
        } else {
            crate::solve::Solver::new(c).dc(0.5 * (src.min + src.max)).ok().and_then(|o| o.voltage(&pin)).unwrap_or(0.0)
        }
    });
    Some(DiffDesign {
        r1,
        r2,
        gain,
        reference,
        cmrr_worst_db: cmrr,
        cm_error,
        cmrr_monte_carlo_db: None,
        first_gain: front_gain,
    })
}

impl DiffDesign {
    /// The common-mode check, with `spread` = (builds, the CMRR that 99.9 % of them exceed
    /// in dB) from the analyses' seeded Monte Carlo (recorded in the figures).
    pub fn cmrr_check(&mut self, req: &Request, spread: Option<(usize, f64)>) -> Check {
        self.cmrr_monte_carlo_db = spread.map(|a| a.1);
        let src = &req.source;
        let t = req.parts.resistor_tolerance;
        let cm_span = src.common_mode_max.unwrap_or(0.0) - src.common_mode_min.unwrap_or(0.0);
        let d = &req.destination;
        let lsb = d.lsb();
        let tol = crate::units::format_percent(t);
        let rule = match self.first_gain {
            Some(g1) => {
                format!("G1·(1 + G2)/(4t), the difference stage's (1 + G2)/(4t) times the first stage's gain {g1:.3}")
            }
            None => "(1 + G)/(4t)".to_string(),
        };
        let text = format!(
            "With ±{tol} resistors the worst-case common-mode rejection is {:.1} dB ({rule}); over the {} common-mode \
                range the output may move by {} ({:.1} LSB)",
            self.cmrr_worst_db,
            format(cm_span, Quantity::Voltage),
            format(self.cm_error, Quantity::Voltage),
            self.cm_error / lsb
        );
        let text = match spread {
            Some((runs, db)) => format!("{text}; {runs} seeded builds: 99.9 % exceed {db:.1} dB"),
            None => text,
        };
        let remedy = if self.first_gain.is_some() {
            "Tighter resistors in the difference stage (0.1 % or a matched network) or more gain in the first stage \
                raise it."
        } else {
            "Tighter resistors (0.1 % or a matched network) or an instrumentation amplifier (source.front_end) raise \
                it."
        };
        if self.cm_error > lsb {
            Check::warning("cmrr", format!("{text}. {remedy}"))
        } else {
            Check::ok("cmrr", format!("{text}."))
        }
    }
}

/// A differential pair (or a bridge's Thévenin pair) straight into the difference
/// amplifier, which is then the gain stage itself.
#[derive(Debug, Clone, PartialEq)]
pub struct Difference {
    /// The pair the difference amplifier is synthesised for (a bridge as its pair).
    pub pair: Request,
    /// A bridge's own figures, when the sensor is one.
    pub bridge: Option<super::bridge::BridgeDesign>,
    /// The difference stage as built (after insertion).
    pub design: Option<DiffDesign>,
}

impl Difference {
    /// The pair `req` presents: itself, or a bridge's Thévenin pair.
    pub fn of(req: &Request) -> Difference {
        match super::bridge::bridge_equivalent(req) {
            Some((pair, b)) => Difference { pair, bridge: Some(b), design: None },
            None => Difference { pair: req.clone(), bridge: None, design: None },
        }
    }

    /// Records the difference stage of `circuit` (`first_gain`: an instrumentation
    /// amplifier's first stage in front of it) and puts a bridge's excitation on the bench.
    pub(super) fn build(&mut self, circuit: &mut Circuit, req: &Request, first_gain: Option<f64>) {
        self.design = report(&self.pair, circuit, first_gain);
        if self.bridge.is_some() {
            super::bridge::insert_bridge(circuit, req);
        }
    }

    /// The bridge's zero balance against the headroom at the whole amplifier's gain.
    pub(super) fn zero_trim(&self, req: &Request, p: &crate::predict::Predicted) -> Vec<Check> {
        self.bridge.as_ref().and_then(|b| super::bridge::zero_trim(req, b, p.gain.abs())).into_iter().collect()
    }

    pub(super) fn blocks(&self, behind_first_stage: bool) -> Vec<Block> {
        let mut out = Vec::new();
        if let Some(b) = &self.bridge {
            out.push(
                Block::new("bridge", "Bridge")
                    .quantity("Excitation current", b.excitation_current, Quantity::Current)
                    .quantity("Power per arm", b.arm_power, Quantity::Power)
                    .quantity("Zero balance at its output (±)", b.zero_offset, Quantity::Voltage),
            );
        }
        if let Some(dd) = &self.design {
            let title =
                if behind_first_stage { "Instrumentation amplifier: difference stage" } else { "Difference amplifier" };
            out.push(
                Block::new("differential", title)
                    .quantity("R1 = R3", dd.r1, Quantity::Resistance)
                    .quantity("R2 = R4", dd.r2, Quantity::Resistance)
                    .quantity("Reference pin", dd.reference, Quantity::Voltage)
                    .decibels("Worst-case CMRR (whole amplifier)", Some(dd.cmrr_worst_db))
                    .decibels("CMRR 99.9 % of builds exceed", dd.cmrr_monte_carlo_db)
                    .quantity("Output shift over the common-mode range", dd.cm_error, Quantity::Voltage),
            );
        }
        out
    }
}

impl super::Steps for Difference {
    fn equivalent(&self, _ctx: &super::Context) -> Request {
        self.pair.clone()
    }

    fn early_checks(&self, ctx: &super::Context) -> Vec<Check> {
        self.bridge.as_ref().map(|b| super::bridge::bridge_checks(ctx.req, b)).unwrap_or_default()
    }

    fn insert(&mut self, circuit: &mut Circuit, ctx: &super::Context) {
        self.build(circuit, ctx.req, None);
    }

    fn equations(&self, _ctx: &super::Context) -> Vec<String> {
        Vec::new()
    }

    fn checks(&mut self, _c: &Circuit, p: &crate::predict::Predicted, ctx: &super::Context) -> Vec<Check> {
        self.zero_trim(ctx.req, p)
    }

    fn analysed(&mut self, cmrr: Option<(usize, f64)>, _ctx: &super::Context) -> Vec<Check> {
        let pair = &self.pair;
        self.design.as_mut().map(|d| d.cmrr_check(pair, cmrr)).into_iter().collect()
    }

    fn figures(&self, _ctx: &super::Context) -> Vec<Block> {
        self.blocks(false)
    }
}
