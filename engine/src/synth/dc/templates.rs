//! The four templates for the sign cases of y = m·x + b (the table in [`super`]): each
//! lays out its resistor slots, derives the continuous values from the target and hands
//! them to the rounding search.

use super::{Candidate, Ctx, Pot, Slot, PAIRS};
use crate::synth::round::pairs;
use crate::synth::Target;

/// m > 0: + input is a weighted average of the sensor, one rail and ground; gain from Rf/Rg.
pub(super) fn noninv_plus(ctx: &Ctx, t: Target, boost: f64) -> Option<Candidate> {
    let (m, b) = (t.gain, t.offset);
    // An offset so small that its leg would exceed the window's ratio is left out; the
    // rounding search then sees the remaining error like any other.
    let tiny = ctx.cfg.min / ctx.cfg.max;
    let (rail, rail_pot) = if b >= 0.0 {
        (ctx.level.pos, Pot::Pos)
    } else if ctx.rails.is_dual() {
        (ctx.rails.neg, Pot::Neg)
    } else if -b / ctx.level.pos < tiny {
        (ctx.level.pos, Pot::Pos)
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
pub(super) fn noninv_minus(ctx: &Ctx, t: Target, boost: f64) -> Option<Candidate> {
    let (m, b) = (t.gain, t.offset);
    let vp = ctx.level.pos;
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
pub(super) fn inv_plus(ctx: &Ctx, t: Target) -> Option<Candidate> {
    let mg = -t.gain;
    let vplus = t.offset / (1.0 + mg);
    if vplus < ctx.limits.in_lo || vplus > ctx.limits.in_hi {
        return None;
    }
    let (rail, pot) = if vplus.abs() < 1e-6 {
        (0.0, Pot::Gnd)
    } else if vplus > 0.0 && vplus < ctx.level.pos {
        (ctx.level.pos, Pot::Pos)
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
pub(super) fn inv_sum(ctx: &Ctx, t: Target) -> Option<Candidate> {
    let mg = -t.gain;
    let b = t.offset;
    if 0.0 < ctx.limits.in_lo || 0.0 > ctx.limits.in_hi || b.abs() < 1e-9 {
        return None;
    }
    let (vh, pot) = if b < 0.0 {
        (ctx.level.pos, Pot::Pos)
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
