//! AC-coupled stage: a coupling capacitor into a non-inverting stage biased at the output's
//! DC level.
//!
//! ```text
//! sense ─C1─┬─(Ra)─ inp ─┬─ U+         U− ─┬─ Rf ─ adc
//!                         Rb                Rg
//!                         ref ─ Rt/Rbt divider, Cb    Cg ─ ground
//! ```
//! The divider sets `ref` to the wanted output DC level; `Rb` carries no DC current, so the +
//! input sits at that level; `Cg` makes the DC gain one, so the output sits there too,
//! whatever the mid-band gain `G = 1 + Rf/Rg`. Mid-band, the sensor reaches the + input
//! through `Rb / (R_sensor + Ra + Rb)`; `Ra` is added only when the swing must be attenuated.
//!
//! Corner rule: each high-pass corner (C1 with the loop resistance, Cg with Rg, Cb with the
//! divider's Thevenin resistance) is placed at or below `band_low / 10`; a single such
//! corner costs 0.5 % (0.043 dB) at `band_low` (1/√(1 + 0.1²)), and the capacitors are
//! rounded *up* in their series so no corner moves above that. The AC analysis of the
//! rounded circuit reports the combined response.

use super::round::{anchors, optimise_all, pairs, RoundConfig};
use super::{Limits, Synthesis, Target};
use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Builder, Divider, PartKind, PartRole, Stage, StageKind, StageRole};
use crate::ratings;
use crate::request::Request;
use crate::units::{format, Quantity};
use crate::values;

/// Fraction of `band_low` at which each high-pass corner is placed.
pub const CORNER_FRACTION: f64 = 0.1;
/// Cost of a gain leg's DC block (or a reference bypass) only an electrolytic reaches, in the
/// mapping cost's unit (a share of the span): it outweighs a 5 % mapping miss, which rounding
/// never leaves.
const BIG_BLOCK_COST: f64 = 0.05;

/// Designs the AC-coupled stage: the plain form (a buffer with an attenuator when |m| < 1,
/// an amplifier of gain m otherwise) and a form with a quarter more gain taken back by an
/// attenuator, which a gain just above one needs; the lower mapping error (plus a small
/// charge per part) wins.
pub fn synthesize(req: &Request, amp: &Amplifier, rails: Rails, t: Target, _limits: Limits) -> Option<Synthesis> {
    let m = t.gain;
    let plain = if m < 1.0 - 1e-9 {
        variant(req, amp, rails, t, 1.0, true)
    } else if m <= 1.0 + 1e-9 {
        variant(req, amp, rails, t, 1.0, false)
    } else {
        variant(req, amp, rails, t, m, false)
    };
    let boosted = variant(req, amp, rails, t, m.max(1.0) * 1.25, true);
    [plain, boosted].into_iter().flatten().min_by(|a, b| a.1.total_cmp(&b.1)).map(|(s, _)| s)
}

/// One form of the stage with amplifier gain `g` (1 = buffer), with or without the
/// attenuating series resistor; returns the design and its score.
fn variant(
    req: &Request, amp: &Amplifier, rails: Rails, t: Target, g: f64, attenuate: bool,
) -> Option<(Synthesis, f64)> {
    let s = &req.source;
    let rs = s.impedance;
    let span = req.destination.max - req.destination.min;
    let half = 0.5 * (s.max - s.min);
    let m = t.gain;
    let yc = t.offset;
    let follower = g <= 1.0 + 1e-9;
    let (ref_rail, ref_node) = if yc.abs() < 1e-6 {
        (0.0, "0")
    } else if yc > 0.0 {
        super::level_source(req, rails, yc)
    } else if rails.is_dual() {
        (rails.neg, "vneg")
    } else {
        return None;
    };
    let has_divider = ref_rail != 0.0;
    let k = if has_divider { yc / ref_rail } else { 0.0 };
    if has_divider && !(k > 0.0 && k < 1.0) {
        return None;
    }
    let cfg = RoundConfig::of(&req.parts);
    let fc = s.band_low * CORNER_FRACTION;
    let block_for = |r: f64| 1.0 / (2.0 * std::f64::consts::PI * fc * r);
    // Vector layout: Rb, [Ra], [Rt, Rbt], [Rg, Rf].
    let unpack = |v: &[f64]| {
        let mut i = 0;
        let mut next = || {
            i += 1;
            v[i - 1]
        };
        let rb = next();
        let ra = if attenuate { next() } else { 0.0 };
        let (rt, rbt) = if has_divider { (next(), next()) } else { (0.0, 0.0) };
        let (rg, rf) = if follower { (0.0, 0.0) } else { (next(), next()) };
        (rb, ra, rt, rbt, rg, rf)
    };
    let mapping = |v: &[f64]| {
        let (rb, ra, rt, rbt, rg, rf) = unpack(v);
        let alpha = rb / (rs + ra + rb);
        let g = if follower { 1.0 } else { 1.0 + rf / rg };
        let vref = if has_divider { ref_rail * rbt / (rt + rbt) } else { 0.0 };
        // Finite open-loop gain: the gain falls by 1 + G/A0, the DC level (a follower at DC)
        // by 1 + 1/A0, as in the solver and the netlist.
        let a0 = amp.open_loop_gain.max(1.0);
        (alpha * g / (1.0 + g / a0), vref / (1.0 + 1.0 / a0), alpha)
    };
    let cost = |v: &[f64]| {
        let (rb, ra, ..) = unpack(v);
        let (m_a, vref, _) = mapping(v);
        let mut c = ((m_a - m).abs() * half + (vref - yc).abs()) / span;
        // Missing outward leaves the range: ten times the cost of missing inward.
        let (lo, hi) = (t.at_min, t.at_max);
        let (y_lo, y_hi) = (vref - m_a * half, vref + m_a * half);
        let out = ((lo - y_lo).max(0.0) + (y_hi - hi).max(0.0)) / span;
        if out > super::HEADROOM_SLACK {
            c += 10.0 * out;
        }
        if rs > 0.0 {
            c += 0.5 * rs / (ra + rb);
        }
        // A gain leg whose DC block would need more than the largest ceramic becomes an
        // electrolytic, and its leakage through Rf moves the rest level by about
        // 0.01·V·(G − 1)/(2π·f_c) whatever the resistance level: prefer a leg that keeps it
        // a ceramic (ratings::CERAMIC_UP_TO) wherever the window allows one.
        let (_, _, rt, rbt, rg, _) = unpack(v);
        if !follower && block_for(rg) > ratings::CERAMIC_UP_TO {
            c += BIG_BLOCK_COST;
        }
        // The reference's bypass likewise: its leakage through the divider's Thevenin
        // resistance moves the rest level by about 0.01·V/(2π·f_c) as an electrolytic.
        if has_divider && block_for(rt * rbt / (rt + rbt)) > ratings::CERAMIC_UP_TO {
            c += BIG_BLOCK_COST;
        }
        c + v.iter().map(|r| 1e-8 * (r / 47e3).max(47e3 / r)).sum::<f64>()
    };
    let ideal = |pair: Option<(f64, f64)>, rb: f64| {
        let mut v = vec![rb];
        // With the attenuator the amplifier gain is the pair's; without it the pair's gain
        // must already be m (the sensor impedance against Rb is part of the cost).
        let g_a = pair.map_or(1.0, |(rg, rf)| 1.0 + rf / rg);
        let alpha = if attenuate { m / g_a } else { 1.0 };
        if attenuate {
            if !(alpha > 0.0 && alpha < 1.0) {
                return None;
            }
            let ra = rb * (1.0 - alpha) / alpha - rs;
            if ra <= 0.0 {
                return None;
            }
            v.push(ra);
        }
        if has_divider {
            // A twentieth of Rb, but no lower than keeps the bypass a ceramic (Rb carries no DC
            // current and the bypass shorts the divider mid-band, so a higher Thevenin
            // resistance costs only the bias current's drop across it).
            let rth = (rb / 20.0).max(block_for(ratings::CERAMIC_UP_TO));
            v.push(rth / k);
            v.push(rth / (1.0 - k));
        }
        if let Some((rg, rf)) = pair {
            v.push(rg);
            v.push(rf);
        }
        Some(v)
    };
    // The gain pair (Rg, Rf) comes from the best ratio pairs; the rest follows from the
    // pair's exact gain.
    let g_plan = if attenuate { g } else { m };
    // Pairs whose Rg keeps the DC block a ceramic come first; only when the window has none
    // does the search take the whole window.
    let leg = RoundConfig { min: cfg.min.max(block_for(ratings::CERAMIC_UP_TO)), ..cfg };
    let leg_pairs = || {
        let within = pairs(leg, g_plan - 1.0, 0.0, 3);
        if within.is_empty() {
            pairs(cfg, g_plan - 1.0, 0.0, 3)
        } else {
            within
        }
    };
    let runs: Vec<Option<(f64, f64)>> = if follower { vec![None] } else { leg_pairs().into_iter().map(Some).collect() };
    let anchors = anchors(cfg);
    let ideal = &ideal;
    let anchors = &anchors;
    let ideals = runs.iter().flat_map(|&pair| anchors.iter().filter_map(move |&rb| ideal(pair, rb)));
    let (vals, score) = optimise_all(cfg, ideals, cost)?;
    let score = score + 0.001 * (vals.len() as f64 + 1.0);
    let (rb, ra, rt, rbt, rg, rf) = unpack(&vals);
    let (m_a, vref, alpha) = mapping(&vals);

    // Capacitors: each corner at or below band_low / 10, rounded up in the series.
    let cser = req.parts.capacitor_series;
    let cap_for = |r: f64| values::step_up(cser, block_for(r));
    let c1 = cap_for(rs + ra + rb)?;
    let rth = if has_divider { rt * rbt / (rt + rbt) } else { 0.0 };
    let cb = if has_divider { Some(cap_for(rth)?) } else { None };
    let cg = if follower { None } else { Some(cap_for(rg)?) };

    let mut bld = Builder::default();
    super::bench(&mut bld, req, rails);
    super::reference_pin(&mut bld, req, rails, ref_node);
    let rtol = Some(req.parts.resistor_tolerance);
    let ctol = Some(req.parts.capacitor_tolerance);
    let inp = "inp1";
    let after_c1 = if attenuate { "cin1" } else { inp };
    let mut coupling = vec![bld.add(
        PartKind::Capacitor,
        c1,
        ctol,
        &["sense", after_c1],
        (StageRole::Coupling, PartRole::CouplingCapacitor),
        "coupling capacitor: blocks the sensor's DC level",
    )];
    if attenuate {
        coupling.push(bld.add(
            PartKind::Resistor,
            ra,
            rtol,
            &[after_c1, inp],
            (StageRole::Coupling, PartRole::Attenuator),
            "series resistor: attenuates the swing with the bias resistor",
        ));
    }
    // Without a divider the bias resistor returns straight to ground.
    let ref_name = if has_divider { "ref" } else { "0" };
    coupling.push(bld.add(
        PartKind::Resistor,
        rb,
        rtol,
        &[inp, ref_name],
        (StageRole::Coupling, PartRole::Bias),
        "bias resistor: holds the + input at the reference",
    ));
    let mut reference = Vec::new();
    if has_divider {
        let divider = Divider {
            from: ref_node,
            tap: "ref",
            top: rt,
            bottom: rbt,
            bypass: cb.map(|c| (c, "reference bypass: keeps supply noise and signal current off the reference")),
            stage: StageRole::Reference,
            what: "reference divider",
        };
        reference.extend(bld.divider(&divider, rtol, ctol));
    }
    let inn = if follower { "adc" } else { "inn1" };
    let mut gain = Vec::new();
    if !follower {
        let at = (StageRole::Gain, PartRole::GainSetting);
        gain.push(bld.add(PartKind::Resistor, rg, rtol, &[inn, "rg1"], at, "gain-setting resistor"));
        if let Some(c) = cg {
            gain.push(bld.add(
                PartKind::Capacitor,
                c,
                ctol,
                &["rg1", "0"],
                (StageRole::Gain, PartRole::DcBlock),
                "makes the DC gain one so the output rests at the reference",
            ));
        }
        let at = (StageRole::Gain, PartRole::FeedbackResistor);
        gain.push(bld.add(PartKind::Resistor, rf, rtol, &["adc", inn], at, "feedback resistor"));
    }
    let vneg = if rails.is_dual() { "vneg" } else { "0" };
    gain.push(bld.add(
        PartKind::OpAmp,
        amp.gbw,
        None,
        &[inp, inn, "vpos", vneg, "adc"],
        (StageRole::Gain, PartRole::Amplifier),
        "amplifier: AC gain and converter drive",
    ));

    let v = |x: f64| format(x, Quantity::Voltage);
    let r = |x: f64| format(x, Quantity::Resistance);
    let f = |x: f64| format(x, Quantity::Frequency);
    let mut equations = vec![
        format!(
            "Wanted: |m| = {m:.5} V/V around an output DC level of {} ({} swing → {} … {})",
            v(yc),
            v(2.0 * half),
            v(t.at_min),
            v(t.at_max)
        ),
        format!(
            "Mid-band gain = Rb/(R_sensor + Ra + Rb) · (1 + Rf/Rg) = {m_a:.5} V/V; DC level = V_rail · Rbt/(Rt + \
            Rbt) = {}",
            v(vref)
        ),
        format!(
            "High-pass corners at ≤ band_low/10 = {}: C ≥ 1/(2π·{}·R), rounded up in {}",
            f(fc),
            f(fc),
            cser.name()
        ),
        format!(
            "C1 with {} loop resistance → corner {}",
            r(rs + ra + rb),
            f(1.0 / (2.0 * std::f64::consts::PI * c1 * (rs + ra + rb)))
        ),
    ];
    if let Some(c) = cg {
        equations.push(format!("Cg with Rg = {} → corner {}", r(rg), f(1.0 / (2.0 * std::f64::consts::PI * c * rg))));
    }
    if let Some(c) = cb {
        equations.push(format!(
            "Cb with the divider's {} → corner {}",
            r(rth),
            f(1.0 / (2.0 * std::f64::consts::PI * c * rth))
        ));
    }
    let topology = if follower && attenuate {
        "AC coupling, attenuator and buffer biased at the output level"
    } else if follower {
        "AC coupling into a buffer biased at the output level"
    } else {
        "AC coupling into a non-inverting amplifier biased at the output level"
    };
    let mut stages = vec![Stage {
        role: StageRole::Coupling,
        kind: StageKind::InputNetwork,
        description:
            "coupling capacitor and bias resistor: block the sensor's DC level and set the amplifier's input level"
                .to_string(),
        parts: coupling,
    }];
    if !reference.is_empty() {
        stages.push(Stage {
            role: StageRole::Reference,
            kind: StageKind::Reference,
            description: format!("reference at {} from a divider with its bypass capacitor", v(vref)),
            parts: reference,
        });
    }
    let kind = StageKind::Gain { inverting: false };
    stages.push(Stage { role: StageRole::Gain, kind, description: topology.to_string(), parts: gain });
    let error = (m_a - m).abs() * half + (vref - yc).abs();
    let synthesis = Synthesis {
        circuit: super::finish(bld, stages, amp, rails),
        target: t,
        topology: topology.to_string(),
        equations,
        rounding_error: error,
        plus_range: (vref - alpha * half, vref + alpha * half),
        checks: Vec::new(),
        filter: None,
        no_filter: None,
        drive: None,
    };
    Some((synthesis, score))
}
