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
//!
//! The stage's net and its equations are in `net`, the four templates in `templates`, and
//! the winning candidate becomes the circuit model in `build`.

mod build;
mod net;
mod templates;

use super::round::{anchors, optimise_all, RoundConfig};
use super::{Limits, Synthesis, Target};
use crate::amplifier::{Amplifier, Rails};
use crate::request::Request;
pub use net::{Net, Pot, Slot};
use templates::{inv_plus, inv_sum, noninv_minus, noninv_plus};

/// Ratio pairs tried per template (the best few by ratio error).
const PAIRS: usize = 4;

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
    // Offsets come from the converter's reference pin where the request brings one out; when
    // no template works from it, from the positive rail.
    let (volts, node) = super::level_source(req, rails, 0.0);
    if node != "vpos" {
        let level = Rails { pos: volts, neg: rails.neg };
        let from_pin = synthesize_from(req, amp, rails, (level, node), target, limits, templates);
        if from_pin.is_some() {
            return from_pin;
        }
    }
    synthesize_from(req, amp, rails, (rails, "vpos"), target, limits, templates)
}

/// [`synthesize_with`] with the offsets taken from `level`: its rails (the positive one
/// replaced by the level source's voltage) and the level source's node.
fn synthesize_from(
    req: &Request, amp: &Amplifier, rails: Rails, level: (Rails, &'static str), target: Target, limits: Limits,
    templates: &[Template],
) -> Option<Synthesis> {
    let ctx = Ctx {
        req,
        open_loop_gain: amp.open_loop_gain,
        rails,
        level: level.0,
        level_node: level.1,
        limits,
        rs: req.source.impedance,
        cfg: RoundConfig::of(&req.parts),
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
    Some(build::build(&ctx, amp, best, t))
}

/// Everything a template needs to know.
struct Ctx<'a> {
    req: &'a Request,
    open_loop_gain: f64,
    rails: Rails,
    /// The rails as the offset legs see them: the positive one is the level source's voltage
    /// (the converter's reference pin or the positive rail).
    level: Rails,
    /// The level source's node.
    level_node: &'static str,
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
            let y = net.output(x, self.rs, self.level);
            let out = ((lo - y).max(0.0) + (y - hi).max(0.0)) / self.span;
            // An outward miss costs ten times an inward one; `design` pulls the target in when
            // the best rounding still misses outward.
            if out > super::HEADROOM_SLACK {
                c += 10.0 * out;
            }
        }
        let lim = self.limits;
        for x in [s.min, s.max] {
            let vp = net.plus_voltage(x, self.rs, self.level);
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
        (net.output(x, self.rs, self.level) - want).abs()
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
