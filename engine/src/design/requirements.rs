//! What the design asks of the amplifier: supply, output and input ranges, gain-bandwidth
//! and slew rate, with a summary in words; widened by what a front end's own amplifiers
//! need ([`crate::synth::front::Needs`]).

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Circuit, PartKind, PartRole};
use crate::request::Request;
use crate::synth;

use super::{hz, sig3, v};

/// Rule for the amplifier's bandwidth: closed-loop bandwidth (GBW / noise gain) at least this
/// many times `band_high`, which keeps a single-pole amplifier's gain error at `band_high`
/// within 0.5 % (1/√(1 + 0.1²)).
pub const GBW_MARGIN: f64 = 10.0;

/// The amplifier requirements this design places.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Requirements {
    pub supply: f64,
    pub output_low: f64,
    pub output_high: f64,
    pub input_low: f64,
    pub input_high: f64,
    pub gbw_min: f64,
    pub slew_rate_min: f64,
    pub noise_gain: f64,
    /// The largest input offset and bias current that keep the worst case inside the usable
    /// range (from the tolerance budget), V and A; `None` before the analyses or where they
    /// move nothing.
    pub offset_max: Option<f64>,
    pub bias_current_max: Option<f64>,
    pub summary: Vec<String>,
}

/// The amplifier requirements of a synthesised design.
pub(super) fn requirements(req: &Request, s: &synth::Synthesis, amp: &Amplifier, rails: Rails) -> Requirements {
    let ng = noise_gain(&s.circuit);
    let gain_gbw = GBW_MARGIN * ng * req.source.band_high;
    let filter_gbw = s.filter.as_ref().map_or(0.0, |f| f.gbw_min);
    let gbw_min = gain_gbw.max(filter_gbw);
    let vpk = 0.5 * (s.target.at_max - s.target.at_min).abs();
    // With a filter, out-of-band content at the stated level reaches the amplifiers up to
    // the corner at that level (common practice: slew for the larger of the two sines).
    let f_slew = s
        .filter
        .as_ref()
        .map_or(req.source.band_high, |f| req.source.band_high.max(req.filter.out_of_band_level * f.corner));
    let slew_rate_min = 2.0 * std::f64::consts::PI * f_slew * vpk;
    let (out_lo, out_hi) = (s.target.at_min.min(s.target.at_max), s.target.at_min.max(s.target.at_max));
    let (in_lo, in_hi) = s.plus_range;
    let _ = amp;
    let summary = vec![
        format!("runs from {} (rails {} and {})", v(rails.total()), v(rails.pos), v(rails.neg)),
        format!(
            "output reaches {} … {} ({} from the lower rail, {} from the upper)",
            v(out_lo),
            v(out_hi),
            v(out_lo - rails.neg),
            v(rails.pos - out_hi)
        ),
        format!("input common-mode range covers {} … {}", v(in_lo), v(in_hi)),
        if filter_gbw > gain_gbw {
            format!(
                "gain-bandwidth ≥ {} for the filter sections (100 × noise gain × Q × f_n; the gain stage needs {})",
                hz(gbw_min),
                hz(gain_gbw)
            )
        } else {
            format!(
                "gain-bandwidth ≥ {} (noise gain {:.3} × {} × {})",
                hz(gbw_min),
                ng,
                hz(req.source.band_high),
                GBW_MARGIN
            )
        },
        format!("slew rate ≥ {} V/µs for a full-swing sine at {}", sig3(slew_rate_min * 1e-6), hz(f_slew)),
    ];
    Requirements {
        supply: rails.total(),
        output_low: out_lo,
        output_high: out_hi,
        input_low: in_lo,
        input_high: in_hi,
        gbw_min,
        slew_rate_min,
        noise_gain: ng,
        offset_max: None,
        bias_current_max: None,
        summary,
    }
}

/// Adds the input offset and bias current the tolerance budget allows.
pub(super) fn from_budget(r: &mut Requirements, b: &crate::analysis::tolerance::budget::Budget) {
    r.offset_max = b.offset_max;
    r.bias_current_max = b.bias_current_max;
    let i = |x: f64| crate::units::format(x, crate::units::Quantity::Current);
    match (b.offset_max, b.bias_current_max) {
        (Some(o), _) if o <= 0.0 => r.summary.push(format!(
            "input offset: none is small enough to keep the worst case inside the range — the parts' and rails' \
             tolerances take the {} margin (see the yield check)",
            v(b.margin)
        )),
        (Some(o), Some(ib)) => r.summary.push(format!(
            "input offset ≤ {} and bias current ≤ {} keep the worst case inside the range (each with the other at \
             {} / {}, with the tolerances of the parts, the rails and the reference)",
            v(o),
            i(ib),
            v(b.offset_stated),
            i(b.bias_current_stated)
        )),
        (Some(o), None) => r.summary.push(format!("input offset ≤ {} keeps the worst case inside the range", v(o))),
        (None, Some(ib)) => {
            r.summary.push(format!("input bias current ≤ {} keeps the worst case inside the range", i(ib)))
        }
        (None, None) => {}
    }
}

/// Widens the amplifier requirements of the gain stage by what a front end's own
/// amplifiers ask of the same part: their outputs' and inputs' ranges and their
/// gain-bandwidth (the summary's output, input and gain-bandwidth lines follow).
pub(super) fn widen(r: &mut Requirements, n: &synth::front::Needs, rails: Rails, band_high: f64) {
    r.output_low = r.output_low.min(n.output_range.0);
    r.output_high = r.output_high.max(n.output_range.1);
    r.input_low = r.input_low.min(n.input_range.0);
    r.input_high = r.input_high.max(n.input_range.1);
    r.summary[1] = format!(
        "output reaches {} … {} ({} from the lower rail, {} from the upper)",
        v(r.output_low),
        v(r.output_high),
        v(r.output_low - rails.neg),
        v(rails.pos - r.output_high)
    );
    r.summary[2] = format!("input common-mode range covers {} … {}", v(r.input_low), v(r.input_high));
    if n.gbw > r.gbw_min {
        r.gbw_min = n.gbw;
        r.summary[3] =
            format!("gain-bandwidth ≥ {} for the {} {:.3} × {})", hz(r.gbw_min), n.rule, n.gain, hz(band_high));
    }
}

/// Noise gain of the (first) amplifier: 1 + R_f·Σ(1/R) over the other resistors at its − input
/// (the sensor's impedance added to a leg that comes from the sensor).
pub fn noise_gain(c: &Circuit) -> f64 {
    let Some(u) = c.parts.iter().find(|p| p.kind == PartKind::OpAmp) else {
        return 1.0;
    };
    let (inn, out) = (&u.nodes[1], &u.nodes[4]);
    if inn == out {
        return 1.0;
    }
    let rs = c.with_role(PartRole::SourceResistance).map(|p| p.value).unwrap_or(0.0);
    let sensor = c.sensor_terminals();
    let mut rf = None;
    let mut g = 0.0;
    for p in c.parts.iter().filter(|p| p.kind == PartKind::Resistor && !p.bench && p.nodes.contains(inn)) {
        let other = if &p.nodes[0] == inn { &p.nodes[1] } else { &p.nodes[0] };
        if other == out {
            rf = Some(p.value);
        } else {
            g += 1.0 / (p.value + if sensor.contains(other) { rs } else { 0.0 });
        }
    }
    rf.map_or(1.0, |rf| 1.0 + rf * g)
}
