//! DC-coupled single-amplifier stages: gain and level shift in one amplifier.
//!
//! A stage is described as a [`Net`]: resistor legs from the amplifier's + input to the
//! sensor, the rails or ground; legs from the − input to the sensor, the rails or ground;
//! and a feedback resistor. With an ideal amplifier
//!
//! * V+ = Σ gᵢ·Vᵢ / Σ gᵢ over the + legs (the sensor leg includes the sensor's impedance),
//! * y = V+·(1 + Σ g₋/g_f) − Σ g₋·V₋ / g_f over the − legs (y = V+ without feedback legs).
//!
//! Four templates cover the sign cases of y = m·x + b (the same split as the usual
//! gain-and-offset method for single-supply stages):
//!
//! | m | b | stage |
//! |---|---|---|
//! | > 0 | ≥ 0 (or any, with a negative rail) | non-inverting, offset summed into the + input |
//! | > 0 | < 0, one supply | non-inverting, feedback leg partly to the positive rail |
//! | < 0 | any reachable | inverting, + input on a divider |
//! | < 0 | ≠ 0 | inverting summer, offset from a rail into the − input |
//!
//! Inverting templates are tried only when the request allows the polarity to flip. Each
//! template's equations give continuous values; [`super::round`] rounds them; the candidate
//! with the lowest mapping error (plus a small charge per part) wins.

use super::round::{anchors, optimise_all, pairs, RoundConfig};

/// Ratio pairs tried per template (the best few by ratio error).
const PAIRS: usize = 4;
use super::{Limits, Synthesis, Target};
use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Builder, PartKind, PartRole, Stage, StageKind, StageRole};
use crate::request::Request;
use crate::units::{format, Quantity};

/// Potential a resistor leg returns to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Pot {
    Sensor,
    Pos,
    Neg,
    Gnd,
}

/// Position of one resistor in a template.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Slot {
    Plus(Pot),
    Minus(Pot),
    Feedback,
}

/// A single-amplifier stage with its resistor values.
#[derive(Debug, Clone, PartialEq)]
pub struct Net {
    pub slots: Vec<(Slot, f64)>,
    /// The + input sits on the sensor terminal with no resistor.
    pub direct: bool,
    /// The amplifier's open-loop DC gain: the output is the ideal one divided by
    /// 1 + noise gain / open-loop gain, as the solver and the netlist have it.
    pub open_loop_gain: f64,
}

impl Net {
    /// Voltage at the + input for sensor EMF `x` (ideal amplifier).
    pub fn plus_voltage(&self, x: f64, rs: f64, rails: Rails) -> f64 {
        if self.direct {
            return x;
        }
        let (mut num, mut den) = (0.0, 0.0);
        for (slot, r) in &self.slots {
            if let Slot::Plus(p) = slot {
                let (g, v) = leg(*p, *r, x, rs, rails);
                num += g * v;
                den += g;
            }
        }
        if den > 0.0 {
            num / den
        } else {
            0.0
        }
    }

    /// Output for sensor EMF `x` (amplifier with finite open-loop gain, no other error).
    pub fn output(&self, x: f64, rs: f64, rails: Rails) -> f64 {
        let vp = self.plus_voltage(x, rs, rails);
        let a0 = self.open_loop_gain.max(1.0);
        let Some(rf) = self.slots.iter().find(|(s, _)| *s == Slot::Feedback).map(|s| s.1) else {
            return vp / (1.0 + 1.0 / a0);
        };
        let gf = 1.0 / rf;
        let (mut sum_g, mut sum_gv) = (0.0, 0.0);
        for (slot, r) in &self.slots {
            if let Slot::Minus(p) = slot {
                let (g, v) = leg(*p, *r, x, rs, rails);
                sum_g += g;
                sum_gv += g * v;
            }
        }
        let noise_gain = 1.0 + sum_g / gf;
        (vp * noise_gain - sum_gv / gf) / (1.0 + noise_gain / a0)
    }

    /// DC resistance the sensor sees (1 TΩ for an amplifier input alone).
    pub fn input_resistance(&self) -> f64 {
        if self.direct {
            return 1e12;
        }
        let mut total = 0.0;
        for (slot, r) in &self.slots {
            match slot {
                Slot::Minus(Pot::Sensor) => return *r,
                Slot::Plus(Pot::Sensor) => total += r,
                _ => {}
            }
        }
        let others: f64 = self
            .slots
            .iter()
            .filter(|(s, _)| matches!(s, Slot::Plus(p) if *p != Pot::Sensor))
            .map(|(_, r)| 1.0 / r)
            .sum();
        if others > 0.0 {
            total + 1.0 / others
        } else {
            1e12
        }
    }
}

fn leg(p: Pot, r: f64, x: f64, rs: f64, rails: Rails) -> (f64, f64) {
    match p {
        Pot::Sensor => (1.0 / (r + rs).max(1e-9), x),
        Pot::Pos => (1.0 / r, rails.pos),
        Pot::Neg => (1.0 / r, rails.neg),
        Pot::Gnd => (1.0 / r, 0.0),
    }
}

/// Everything a template needs to know.
struct Ctx<'a> {
    req: &'a Request,
    open_loop_gain: f64,
    rails: Rails,
    limits: Limits,
    rs: f64,
    cfg: RoundConfig,
    span: f64,
}

/// A rounded candidate stage.
struct Candidate {
    net: Net,
    name: String,
    error: f64,
    score: f64,
}

/// The DC stage templates (see the table in the module doc).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Template {
    /// m > 0: offset summed into the + input.
    NonInvertingPlus,
    /// m > 0, b < 0 on one supply: feedback leg partly to the positive rail.
    NonInvertingMinus,
    /// m < 0: + input on a divider.
    InvertingPlus,
    /// m < 0: offset summed into the − input.
    InvertingSum,
}

impl Template {
    pub const ALL: [Template; 4] =
        [Template::NonInvertingPlus, Template::NonInvertingMinus, Template::InvertingPlus, Template::InvertingSum];
    pub fn inverting(self) -> bool {
        matches!(self, Template::InvertingPlus | Template::InvertingSum)
    }
}

/// Designs the DC-coupled stage: every allowed template, the best one wins.
pub fn synthesize(req: &Request, amp: &Amplifier, rails: Rails, target: Target, limits: Limits) -> Option<Synthesis> {
    let allowed: Vec<Template> = Template::ALL.into_iter().filter(|t| !req.keep_polarity || !t.inverting()).collect();
    synthesize_with(req, amp, rails, target, limits, &allowed)
}

/// Designs the DC-coupled stage from the given templates only. For an inverting template the
/// target is mirrored: the sensor's minimum lands on the upper end.
pub fn synthesize_with(
    req: &Request, amp: &Amplifier, rails: Rails, target: Target, limits: Limits, templates: &[Template],
) -> Option<Synthesis> {
    let ctx = Ctx {
        req,
        open_loop_gain: amp.open_loop_gain,
        rails,
        limits,
        rs: req.source.impedance,
        cfg: RoundConfig {
            series: req.parts.resistor_series,
            min: req.parts.resistor_min,
            max: req.parts.resistor_max,
        },
        span: req.destination.max - req.destination.min,
    };
    let inv = Target {
        at_min: target.at_max,
        at_max: target.at_min,
        gain: -target.gain,
        offset: target.at_max + target.gain * req.source.min,
    };
    let mut candidates = Vec::new();
    for &tpl in templates {
        // Each non-inverting template is tried with the least gain that works (fewest parts,
        // but the gain ratio must then round exactly) and with a quarter more gain, taken
        // back by an extra divider leg that gives the rounding a free ratio to work with.
        for boost in [1.0, 1.25] {
            let c = match tpl {
                Template::NonInvertingPlus => noninv_plus(&ctx, target, boost).map(|c| (c, target)),
                Template::NonInvertingMinus => noninv_minus(&ctx, target, boost).map(|c| (c, target)),
                Template::InvertingPlus if boost == 1.0 => inv_plus(&ctx, inv).map(|c| (c, inv)),
                Template::InvertingSum if boost == 1.0 => inv_sum(&ctx, inv).map(|c| (c, inv)),
                _ => None,
            };
            candidates.extend(c);
        }
    }
    let (best, t) = candidates.into_iter().min_by(|a, b| a.0.score.total_cmp(&b.0.score))?;
    Some(build(&ctx, amp, best, t))
}

impl Ctx<'_> {
    /// Mapping error (fraction of the converter span) plus penalties, for rounded values.
    fn cost(&self, net: &Net, t: Target) -> f64 {
        let s = &self.req.source;
        let y1 = self.output_err(net, s.min, t.at_min);
        let y2 = self.output_err(net, s.max, t.at_max);
        let mut c = y1.max(y2) / self.span;
        // Missing inward is harmless (the headroom shrinks a little); missing outward leaves
        // the range the target allows (headroom and output swing), so it costs ten times as much.
        let (lo, hi) = (t.at_min.min(t.at_max), t.at_min.max(t.at_max));
        for x in [s.min, s.max] {
            let y = net.output(x, self.rs, self.rails);
            let out = ((lo - y).max(0.0) + (y - hi).max(0.0)) / self.span;
            // An outward miss costs ten times an inward one; `design` pulls the target in when
            // the best rounding still misses outward.
            if out > super::HEADROOM_SLACK {
                c += 10.0 * out;
            }
        }
        let lim = self.limits;
        for x in [s.min, s.max] {
            let vp = net.plus_voltage(x, self.rs, self.rails);
            if vp < lim.in_lo - 1e-9 || vp > lim.in_hi + 1e-9 {
                c += 10.0;
            }
        }
        if self.rs > 0.0 {
            c += 0.5 * self.rs / net.input_resistance();
        }
        // Tie-breaker: prefer values near the middle of the window (noise, bias, load).
        let mid = (self.cfg.min * self.cfg.max).sqrt().min(47e3);
        c + net.slots.iter().map(|(_, r)| 1e-8 * (r / mid).max(mid / r)).sum::<f64>()
    }

    fn output_err(&self, net: &Net, x: f64, want: f64) -> f64 {
        (net.output(x, self.rs, self.rails) - want).abs()
    }

    /// Rounds a template and returns the candidate. When `pairs` is given, the last two slots
    /// of `layout` are a ratio pair taken from it (each pair tried in turn), and `ideal`
    /// derives the other values for that pair's exact ratio; otherwise `ideal` gives all.
    fn round(
        &self, name: &str, layout: &[Slot], direct: bool, t: Target, pairs: Option<Vec<(f64, f64)>>,
        ideal: impl Fn(Option<(f64, f64)>, f64) -> Option<Vec<f64>>,
    ) -> Option<Candidate> {
        let a0 = self.open_loop_gain;
        let make = |v: &[f64]| Net {
            slots: layout.iter().copied().zip(v.iter().copied()).collect(),
            direct,
            open_loop_gain: a0,
        };
        // One scratch stage, refilled for every candidate: no allocation per evaluation.
        let scratch = std::cell::RefCell::new(make(&vec![1.0; layout.len()]));
        let cost = |v: &[f64]| {
            let mut net = scratch.borrow_mut();
            for (slot, x) in net.slots.iter_mut().zip(v) {
                slot.1 = *x;
            }
            self.cost(&net, t)
        };
        let runs: Vec<Option<(f64, f64)>> = match pairs {
            Some(p) => p.into_iter().map(Some).collect(),
            None => vec![None],
        };
        let anchors = anchors(self.cfg);
        let ideal = &ideal;
        let anchors = &anchors;
        let ideals = runs.iter().flat_map(|&pair| {
            anchors.iter().filter_map(move |&a| {
                let mut v = ideal(pair, a)?;
                if let Some((x, y)) = pair {
                    v.push(x);
                    v.push(y);
                }
                Some(v)
            })
        });
        let best = optimise_all(self.cfg, ideals, cost);
        let (values, cost) = best?;
        let net = make(&values);
        let s = &self.req.source;
        let error = self.output_err(&net, s.min, t.at_min).max(self.output_err(&net, s.max, t.at_max));
        let score = cost + 0.001 * (layout.len() as f64 + 1.0);
        Some(Candidate { net, name: name.to_string(), error, score })
    }
}

/// m > 0: + input is a weighted average of the sensor, one rail and ground; gain from Rf/Rg.
fn noninv_plus(ctx: &Ctx, t: Target, boost: f64) -> Option<Candidate> {
    let (m, b) = (t.gain, t.offset);
    // An offset so small that its leg would exceed the window's ratio is left out; the
    // rounding search then sees the remaining error like any other.
    let tiny = ctx.cfg.min / ctx.cfg.max;
    let (rail, rail_pot) = if b >= 0.0 {
        (ctx.rails.pos, Pot::Pos)
    } else if ctx.rails.is_dual() {
        (ctx.rails.neg, Pot::Neg)
    } else if -b / ctx.rails.pos < tiny {
        (ctx.rails.pos, Pot::Pos)
    } else {
        return None;
    };
    // The rail leg is (Ra + R_sensor)·m/bias; it must fit under the window's top.
    let bias = if b / rail < (ctx.cfg.min + ctx.rs) / ctx.cfg.max * m { 0.0 } else { b / rail };
    let g_min = (m + bias).max(1.0);
    // Keep V+ = y/G inside the input range.
    let y_hi = t.at_min.max(t.at_max);
    let g_cm = if y_hi > 0.0 && ctx.limits.in_hi > 0.0 { y_hi / ctx.limits.in_hi * 1.02 } else { 1.0 };
    let g = g_min.max(g_cm) * boost;
    let follower = g <= 1.0 + 1e-9;
    let gamma_ideal = 1.0 - (m + bias) / g;
    if gamma_ideal < -1e-9 {
        return None;
    }
    let has_rail = bias > 0.0;
    let has_gnd = gamma_ideal > 1e-3;
    let direct = !has_rail && !has_gnd;
    let mut layout = Vec::new();
    if !direct {
        layout.push(Slot::Plus(Pot::Sensor));
        if has_rail {
            layout.push(Slot::Plus(rail_pot));
        }
        if has_gnd {
            layout.push(Slot::Plus(Pot::Gnd));
        }
    }
    if !follower {
        layout.push(Slot::Minus(Pot::Gnd));
        layout.push(Slot::Feedback);
    }
    let rs = ctx.rs;
    let name = match (has_rail, follower) {
        (true, false) => "non-inverting amplifier with the offset summed into its + input",
        (true, true) => "summing divider into a buffer",
        (false, false) if direct => "non-inverting amplifier",
        (false, false) => "divider into a non-inverting amplifier",
        (false, true) if direct => "buffer",
        (false, true) => "divider into a buffer",
    };
    let pairs = if follower { None } else { Some(pairs(ctx.cfg, g - 1.0, 0.0, PAIRS)) };
    ctx.round(name, &layout, direct, t, pairs, |pair, anchor| {
        let g_a = pair.map_or(1.0, |(rg, rf)| 1.0 + rf / rg);
        let (alpha, beta) = (m / g_a, bias / g_a);
        let gamma = 1.0 - alpha - beta;
        let mut v = Vec::new();
        if !direct {
            let total = anchor + rs;
            v.push(anchor);
            if has_rail {
                v.push(total * alpha / beta);
            }
            if has_gnd {
                if gamma <= 0.0 {
                    return None;
                }
                v.push(total * alpha / gamma);
            }
        }
        Some(v)
    })
}

/// m > 0, b < 0 on one supply: y = V+·(1 + (g_g + g_h)/g_f) − V_pos·g_h/g_f.
fn noninv_minus(ctx: &Ctx, t: Target, boost: f64) -> Option<Candidate> {
    let (m, b) = (t.gain, t.offset);
    let vp = ctx.rails.pos;
    if b >= 0.0 || ctx.rails.is_dual() || vp <= 0.0 {
        return None;
    }
    let s = &ctx.req.source;
    let k = -b / vp;
    if k < ctx.cfg.min / ctx.cfg.max {
        return None;
    }
    let mut g = (1.0 + k).max(m);
    if s.max > 0.0 && ctx.limits.in_hi > 0.0 {
        g = g.max(m * s.max / ctx.limits.in_hi * 1.02);
    }
    g *= boost;
    let direct = m / g >= 1.0 - 1e-9;
    let has_g = g - 1.0 - k > 1e-3;
    let mut layout = Vec::new();
    if !direct {
        layout.push(Slot::Plus(Pot::Sensor));
        layout.push(Slot::Plus(Pot::Gnd));
    }
    if has_g {
        layout.push(Slot::Minus(Pot::Gnd));
    }
    layout.push(Slot::Minus(Pot::Pos));
    layout.push(Slot::Feedback);
    let rs = ctx.rs;
    let pairs = Some(pairs(ctx.cfg, k, 0.0, PAIRS));
    ctx.round(
        "non-inverting amplifier with a negative offset from the positive rail",
        &layout,
        direct,
        t,
        pairs,
        |pair, anchor| {
            let (rh, rf) = pair?;
            let k_a = rf / rh;
            let mut v = Vec::new();
            // Direct input: the gain must be m exactly; otherwise G as planned and the + divider takes m/G.
            let g_a = if direct { m } else { g };
            if !direct {
                let alpha = m / g_a;
                let ra = anchor * (1.0 - alpha) / alpha - rs;
                if ra <= 0.0 {
                    return None;
                }
                v.push(ra);
                v.push(anchor);
            }
            if has_g {
                let rest = g_a - 1.0 - k_a;
                if rest <= 0.0 {
                    return None;
                }
                v.push(rf / rest);
            }
            Some(v)
        },
    )
}

/// m < 0: y = −(R_f/R_i)·x + V+·(1 + R_f/R_i), with V+ from a divider (or ground).
fn inv_plus(ctx: &Ctx, t: Target) -> Option<Candidate> {
    let mg = -t.gain;
    let vplus = t.offset / (1.0 + mg);
    if vplus < ctx.limits.in_lo || vplus > ctx.limits.in_hi {
        return None;
    }
    let (rail, pot) = if vplus.abs() < 1e-6 {
        (0.0, Pot::Gnd)
    } else if vplus > 0.0 && vplus < ctx.rails.pos {
        (ctx.rails.pos, Pot::Pos)
    } else if vplus < 0.0 && vplus > ctx.rails.neg {
        (ctx.rails.neg, Pot::Neg)
    } else {
        return None;
    };
    let mut layout = Vec::new();
    if rail != 0.0 {
        layout.push(Slot::Plus(pot));
        layout.push(Slot::Plus(Pot::Gnd));
    }
    layout.push(Slot::Minus(Pot::Sensor));
    layout.push(Slot::Feedback);
    let rs = ctx.rs;
    let b = t.offset;
    // The inverting stages have one or two other values only: try more gain pairs.
    let pairs = Some(pairs(ctx.cfg, mg, rs, 4 * PAIRS));
    ctx.round("inverting amplifier with its + input on a divider", &layout, false, t, pairs, |pair, anchor| {
        let (ri, rf) = pair?;
        let mg_a = rf / (ri + rs);
        let mut v = Vec::new();
        if rail != 0.0 {
            let k = b / (1.0 + mg_a) / rail;
            if !(k > 0.0 && k < 1.0) {
                return None;
            }
            v.push(anchor * (1.0 - k) / k);
            v.push(anchor);
        }
        Some(v)
    })
}

/// m < 0 with the offset summed into the − input; + input on ground.
fn inv_sum(ctx: &Ctx, t: Target) -> Option<Candidate> {
    let mg = -t.gain;
    let b = t.offset;
    if 0.0 < ctx.limits.in_lo || 0.0 > ctx.limits.in_hi || b.abs() < 1e-9 {
        return None;
    }
    let (vh, pot) = if b < 0.0 {
        (ctx.rails.pos, Pot::Pos)
    } else if ctx.rails.is_dual() {
        (ctx.rails.neg, Pot::Neg)
    } else {
        return None;
    };
    let layout = [Slot::Minus(pot), Slot::Minus(Pot::Sensor), Slot::Feedback];
    let pairs = Some(pairs(ctx.cfg, mg, ctx.rs, 4 * PAIRS));
    ctx.round("inverting summer with the offset from a rail", &layout, false, t, pairs, |pair, _anchor| {
        let (_, rf) = pair?;
        Some(vec![rf * vh / -b])
    })
}

/// Turns the winning candidate into the circuit model.
fn build(ctx: &Ctx, amp: &Amplifier, c: Candidate, t: Target) -> Synthesis {
    let req = ctx.req;
    let mut bld = Builder::default();
    super::bench(&mut bld, req, ctx.rails);
    let tol = Some(req.parts.resistor_tolerance);
    let has_feedback = c.net.slots.iter().any(|(s, _)| *s == Slot::Feedback);
    let has_plus = c.net.slots.iter().any(|(s, _)| matches!(s, Slot::Plus(_)));
    let inp = if c.net.direct {
        "sense"
    } else if has_plus {
        "inp1"
    } else {
        "0"
    };
    let inn = if has_feedback { "inn1" } else { "adc" };
    let node = |p: Pot| match p {
        Pot::Sensor => "sense",
        Pot::Pos => "vpos",
        Pot::Neg => "vneg",
        Pot::Gnd => "0",
    };
    let mut gain_parts = Vec::new();
    let mut ref_parts = Vec::new();
    for (slot, r) in &c.net.slots {
        let (a, b, stage, role, purpose) = match slot {
            Slot::Plus(Pot::Sensor) => {
                (inp, "sense", StageRole::Gain, PartRole::PlusInput, "input resistor from the sensor")
            }
            Slot::Plus(Pot::Gnd) => {
                (inp, "0", StageRole::Gain, PartRole::GroundLeg, "lower leg of the + input divider")
            }
            Slot::Plus(p) => (
                inp,
                node(*p),
                StageRole::Reference,
                PartRole::OffsetLeg,
                "offset leg of the + input network, from the rail",
            ),
            Slot::Minus(Pot::Sensor) => (
                inn,
                "sense",
                StageRole::Gain,
                PartRole::MinusInput,
                "input resistor (sets the gain with the feedback resistor)",
            ),
            Slot::Minus(Pot::Gnd) => {
                (inn, "0", StageRole::Gain, PartRole::GroundLeg, "gain-setting resistor to ground")
            }
            Slot::Minus(p) => (inn, node(*p), StageRole::Reference, PartRole::OffsetLeg, "offset leg into the − input"),
            Slot::Feedback => ("adc", inn, StageRole::Gain, PartRole::FeedbackResistor, "feedback resistor"),
        };
        let r_ref = bld.add(PartKind::Resistor, *r, tol, &[a, b], (stage, role), purpose);
        if stage == StageRole::Reference {
            ref_parts.push(r_ref)
        } else {
            gain_parts.push(r_ref)
        }
    }
    let vneg = if ctx.rails.is_dual() { "vneg" } else { "0" };
    let u = bld.add(
        PartKind::OpAmp,
        amp.gbw,
        None,
        &[inp, inn, "vpos", vneg, "adc"],
        (StageRole::Gain, PartRole::Amplifier),
        "amplifier: gain, level shift and converter drive",
    );
    gain_parts.push(u);
    let rs = ctx.rs;
    let s = &req.source;
    let y1 = c.net.output(s.min, rs, ctx.rails);
    let y2 = c.net.output(s.max, rs, ctx.rails);
    let m = (y2 - y1) / (s.max - s.min);
    let b = y1 - m * s.min;
    let v = |x: f64| format(x, Quantity::Voltage);
    let mut equations = vec![
        format!("Wanted: y = m·x + b with m = {:.5} V/V, b = {} (source {} → {}, {} → {})", t.gain, v(t.offset), v(s.min), v(t.at_min), v(s.max), v(t.at_max)),
        "V+ = Σ(Vᵢ/Rᵢ) / Σ(1/Rᵢ) over the + input legs; y = V+·(1 + Σ R_f/Rⱼ) − Σ Vⱼ·R_f/Rⱼ over the − input legs (ideal amplifier; the sensor leg includes the sensor's own impedance)".to_string(),
        format!("Rounded: m = {m:.5} V/V, b = {}; worst error at the extremes {}", v(b), v(c.error)),
    ];
    if rs > 0.0 {
        equations.push(format!("Sensor impedance {} included in the sensor leg", format(rs, Quantity::Resistance)));
    }
    let inverting = c.net.slots.iter().any(|(s, _)| *s == Slot::Minus(Pot::Sensor));
    let gain = StageKind::Gain { inverting };
    let mut stages = vec![Stage { role: StageRole::Gain, kind: gain, description: c.name.clone(), parts: gain_parts }];
    if !ref_parts.is_empty() {
        stages.insert(0, Stage { role: StageRole::Reference, kind: StageKind::Reference, description: "offset legs from the rails, folded into the amplifier's input network (their impedance is part of the gain equations, so no buffer is needed)".to_string(), parts: ref_parts });
    }
    Synthesis {
        circuit: super::finish(bld, stages, amp, ctx.rails),
        target: t,
        topology: c.name,
        equations,
        rounding_error: c.error,
        plus_range: {
            let (a, b) = (c.net.plus_voltage(s.min, rs, ctx.rails), c.net.plus_voltage(s.max, rs, ctx.rails));
            (a.min(b), a.max(b))
        },
        checks: Vec::new(),
        filter: None,
        no_filter: None,
        drive: None,
    }
}
