//! The design's own verdicts: what cannot be built before synthesis (feasibility), the
//! gain stage's checks after it (headroom, rounding, common mode, bandwidth, slew rate,
//! converter protection), and the safety cautions shown with every design.

use crate::amplifier::{Amplifier, Rails};
use crate::circuit::PartKind;
use crate::diag::{Check, Severity};
use crate::predict::Predicted;
use crate::request::{Coupling, Request};
use crate::synth;
use crate::units::{format, Quantity};

use super::{hz, sig3, v};

use super::requirements::{Requirements, GBW_MARGIN};

/// Checks that need no circuit: impossible or doubtful requests.
pub(super) fn feasibility(req: &Request, rails: Rails, amp: &Amplifier) -> Vec<Check> {
    let mut c = Vec::new();
    let s = &req.source;
    let d = &req.destination;
    if !(s.max > s.min) {
        c.push(Check::error(
            "zero_span",
            format!(
                "The sensor's min and max are both {}; a span is needed to map onto \
            the converter. Give the sensor's lowest and highest output.",
                v(s.min)
            ),
        ));
    }
    if !(d.max > d.min) {
        c.push(Check::error(
            "zero_destination_span",
            "The converter's input min and max are equal; give its input range, e.g. 0 … 3.3 V.",
        ));
    }
    let nyquist = 0.5 * d.sample_rate;
    if s.band_high > nyquist {
        c.push(Check::error(
            "band_above_nyquist",
            format!(
                "The band reaches {} but the converter samples at {}, so everything above {} folds back into the band. \
                    Raise the sample rate to at least {} (2.5× the band edge leaves room for an anti-alias filter) or \
                    lower band_high.",
                hz(s.band_high), hz(d.sample_rate), hz(nyquist), hz(2.5 * s.band_high)
            ),
        ));
    } else if s.band_high > 0.4 * d.sample_rate {
        c.push(Check::warning(
            "band_near_nyquist",
            format!(
                "The band edge {} is above 40 % of the sample rate {}; an anti-alias filter cannot fall steeply \
                enough in the little room left. A sample rate of {} or more makes it practical.",
                hz(s.band_high),
                hz(d.sample_rate),
                hz(2.5 * s.band_high)
            ),
        ));
    }
    if s.band_high <= s.band_low {
        c.push(Check::error(
            "band_order",
            format!("band_high ({}) must be above band_low ({}).", hz(s.band_high), hz(s.band_low)),
        ));
    }
    if s.coupling == Coupling::Ac && s.band_low <= 0.0 {
        c.push(Check::error(
            "ac_needs_band_low",
            "AC coupling blocks DC, so band_low must be above 0 Hz; give the \
            lowest frequency that must pass, or choose DC coupling.",
        ));
    }
    if rails.pos <= 0.0 {
        c.push(Check::error("no_positive_rail", "No positive rail is listed in supplies."));
    }
    let total = rails.total();
    if total > amp.supply_max + 1e-9 {
        c.push(Check::error(
            "supply_too_high",
            format!(
                "The amplifier runs from {} in total but its limit is {}; use \
            lower rails or give an amplifier with a higher supply_max.",
                v(total),
                v(amp.supply_max)
            ),
        ));
    } else if total < amp.supply_min - 1e-9 {
        c.push(Check::error(
            "supply_too_low",
            format!(
                "The amplifier needs at least {} in total but the rails give {}; \
            use a higher rail or an amplifier with a lower supply_min.",
                v(amp.supply_min),
                v(total)
            ),
        ));
    }
    c
}

pub(super) fn design_checks(
    req: &Request, s: &synth::Synthesis, p: &Predicted, amp: &Amplifier, rails: Rails, r: &Requirements,
) -> Vec<Check> {
    let mut c = s.checks.clone();
    let d = &req.destination;
    let span = d.max - d.min;
    let (lo, hi) = (p.output_at_min.min(p.output_at_max), p.output_at_min.max(p.output_at_max));
    let slack = synth::HEADROOM_SLACK * span;
    let (want_lo, want_hi) = (d.min + d.headroom * span - slack, d.max - d.headroom * span + slack);
    let used = (hi - lo) / span * 100.0;
    if lo >= want_lo && hi <= want_hi {
        c.push(Check::ok(
            "headroom",
            format!(
                "The nominal build lands the sensor's range on {} … {}, {:.1} % of the converter span, \
            inside the {:.1} % headroom at each end (the yield check says what the parts' spread does to it).",
                v(lo),
                v(hi),
                used,
                d.headroom * 100.0
            ),
        ));
    } else {
        let v4 = |x: f64| crate::units::format_sig(x, Quantity::Voltage, 5);
        c.push(Check::error(
            "headroom",
            format!(
                "The sensor's range lands on {} … {}, outside the wanted {} … {}; the \
            amplifier cannot reach that far on these rails, or rounding to the series could not keep it inside. A \
            finer series or a little more headroom helps.",
                v4(lo),
                v4(hi),
                v4(want_lo),
                v4(want_hi)
            ),
        ));
    }
    // Below a nanovolt the error is rounding noise of the arithmetic, not of the parts.
    let rounding_error = if s.rounding_error < 1e-9 { 0.0 } else { s.rounding_error };
    let err_pct = rounding_error / span * 100.0;
    let lsb = d.lsb();
    let msg = format!(
        "After rounding to {} the mapping is off by at most {} ({:.3} % of the span, {:.1} LSB) from the \
        ideal; the headroom absorbs it and a two-point calibration removes it.",
        req.parts.resistor_series.name(),
        v(rounding_error),
        err_pct,
        rounding_error / lsb
    );
    c.push(if err_pct <= 0.5 {
        Check::ok("rounding", msg)
    } else {
        Check::warning("rounding", format!("{msg} A finer series (E96) reduces it."))
    });
    let (in_lo, in_hi) = amp.input_limits(rails);
    let (plo, phi) = s.plus_range;
    if plo < in_lo - 1e-9 || phi > in_hi + 1e-9 {
        c.push(Check::error(
            "common_mode",
            format!(
                "The amplifier's + input swings {} … {}, outside its input range {} \
            … {} on these rails; choose an amplifier with rail-to-rail inputs or widen the rails.",
                v(plo),
                v(phi),
                v(in_lo),
                v(in_hi)
            ),
        ));
    } else {
        c.push(Check::ok(
            "common_mode",
            format!(
                "The amplifier's + input stays within {} … {}, inside its input range {} … {}.",
                v(plo),
                v(phi),
                v(in_lo),
                v(in_hi)
            ),
        ));
    }
    let filter_gbw = s.filter.as_ref().map_or(0.0, |f| f.gbw_min);
    if filter_gbw > amp.gbw && filter_gbw >= r.gbw_min {
        c.push(Check::warning(
            "gbw",
            format!(
                "The amplifier's gain-bandwidth {} is below the {} the filter sections \
            need (100 × noise gain × Q × f_n for the highest-Q section); their response will peak or droop. Choose a \
            faster amplifier.",
                hz(amp.gbw),
                hz(filter_gbw)
            ),
        ));
    } else if r.gbw_min > amp.gbw {
        c.push(Check::warning(
            "gbw",
            format!(
                "The amplifier's gain-bandwidth {} is below the {} this gain and band \
            need (noise gain {:.2} × band {} × {}); the gain will droop toward the band edge. Choose a faster \
            amplifier or split the gain over two stages.",
                hz(amp.gbw),
                hz(r.gbw_min),
                r.noise_gain,
                hz(req.source.band_high),
                GBW_MARGIN
            ),
        ));
    } else {
        c.push(Check::ok(
            "gbw",
            format!(
                "Gain-bandwidth {} covers the {} needed (noise gain {:.2}).",
                hz(amp.gbw),
                hz(r.gbw_min),
                r.noise_gain
            ),
        ));
    }
    let f_slew =
        r.slew_rate_min / (2.0 * std::f64::consts::PI * (0.5 * (s.target.at_max - s.target.at_min).abs()).max(1e-12));
    if r.slew_rate_min > amp.slew_rate {
        c.push(Check::warning(
            "slew_rate",
            format!(
                "A full-swing sine at {} needs {} V/µs but the amplifier slews {} \
            V/µs; choose a faster amplifier or lower band_high.",
                hz(f_slew),
                sig3(r.slew_rate_min * 1e-6),
                sig3(amp.slew_rate * 1e-6)
            ),
        ));
    } else {
        c.push(Check::ok(
            "slew_rate",
            format!(
                "Slew rate {:.3} V/µs covers the {:.3} V/µs a full-swing sine at {} needs.",
                amp.slew_rate * 1e-6,
                r.slew_rate_min * 1e-6,
                hz(f_slew)
            ),
        ));
    }
    if let Some(fh) = p.band_high {
        if fh < req.source.band_high {
            c.push(Check::error(
                "bandwidth",
                format!(
                    "The response falls 3 dB at {}, inside the band (its upper edge is {}): signals between them \
                     are lost. The gain stage needs a gain-bandwidth of at least {} (the amplifier has {}); choose a \
                     faster amplifier, split the gain over two stages, or lower band_high.",
                    hz(fh),
                    hz(req.source.band_high),
                    hz(r.gbw_min),
                    hz(amp.gbw)
                ),
            ));
        }
    }
    if let (Some(fl), Coupling::Ac) = (p.band_low, req.source.coupling) {
        if fl > req.source.band_low {
            c.push(Check::error(
                "band_low",
                format!(
                    "The response falls 3 dB at {}, inside the band (its lower edge is {}): signals between them \
                     are lost. Larger coupling capacitors or larger resistors behind them move the corner down.",
                    hz(fl),
                    hz(req.source.band_low)
                ),
            ));
        }
    }
    let rs = req.source.impedance;
    if let Some(circuit) = Some(&s.circuit) {
        let big: Vec<String> = circuit
            .parts
            .iter()
            .filter(|q| q.kind == PartKind::Capacitor && q.value > 100e-6)
            .map(|q| format!("{} ({})", q.reference, format(q.value, Quantity::Capacitance)))
            .collect();
        if !big.is_empty() {
            c.push(Check::warning(
                "large_capacitor",
                format!(
                    "{} is very large because band_low is low; consider DC coupling or a higher band_low.",
                    big.join(", ")
                ),
            ));
        }
    }
    c.extend(synth::chain::drive_checks(req, s.drive.as_ref()));
    c.extend(synth::front::input_protection(req, &s.circuit, rails));
    if rs > 0.0 {
        c.push(Check::ok(
            "sensor_impedance",
            format!("The sensor's {} impedance is part of the gain equations.", format(rs, Quantity::Resistance)),
        ));
    }
    if !amp.assumed.is_empty() {
        c.push(Check::new(
            "amplifier_assumed",
            Severity::Ok,
            format!(
                "Figures not given in the request ({}) are those \
            of a generic {}; any amplifier meeting the stated requirements will do.",
                amp.assumed.join(", "),
                amp.class
            ),
        ));
    }
    c
}

/// Safety cautions shown with every design.
pub(super) fn cautions(req: &Request, rails: Rails) -> Vec<String> {
    let mut v = vec![
        "Sensors tied to mains or other high voltages need isolation rated for that voltage before anything here \
            connects to them."
            .to_string(),
        "Never exceed the converter's absolute maximum input, including during power-up, power-down and faults."
            .to_string(),
        "A design for safety- or medically-relevant use must be checked by a qualified person; follow local codes and \
            licensed practice."
            .to_string(),
    ];
    if req.source.kind == crate::request::SourceKind::HighImpedance {
        v.push(
            "Above about 100 MΩ, leakage over the board decides the reading: keep the input node off solder mask \
            and flux, surround it with a guard ring driven by the follower's output, and keep the assembly clean and \
            dry."
                .to_string(),
        );
    }
    if req.source.kind == crate::request::SourceKind::CurrentLoop {
        v.push(
            "A current loop runs from its own supply, often 24 V: tie that supply's return to the converter's \
            ground at one point (or use an isolated loop receiver), and make sure a miswired loop cannot put its \
            supply across the shunt and the amplifier input."
                .to_string(),
        );
    }
    let volts = req.source.kind.quantity() == Quantity::Voltage;
    if rails.total() > 30.0 || (volts && req.source.max.abs().max(req.source.min.abs()) > 30.0) {
        v.push("Voltages above 30 V are present; treat the circuit as hazardous when working on it.".to_string());
    }
    v
}
