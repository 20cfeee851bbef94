//! Checks that follow from the analyses: clipping, tolerance yield, noise against the LSB,
//! sensor loading and wideband noise above Nyquist. Each says what to change.

use super::tolerance::rails::SupplyShift;
use super::tolerance::stages::StageRow;
use super::{noise, Analysis, Nominal};
use crate::diag::Check;
use crate::request::Request;
use crate::units::{format, Quantity};

/// Yield below this is a warning.
pub const YIELD_WARNING: f64 = 0.99;
/// Yield below this is an error.
pub const YIELD_ERROR: f64 = 0.90;
/// Sensor loading above this gain error (fraction) is a warning.
pub const LOADING_LIMIT: f64 = 0.001;

/// The `supply` check: how far the rails' tolerance moves the converter pin, in LSB, and
/// what takes it away, with the figures of each remedy.
fn supply_check(req: &Request, s: &SupplyShift) -> Check {
    let v = |x: f64| format(x, Quantity::Voltage);
    let lsb = req.destination.lsb();
    let in_lsb = |x: f64| if lsb > 0.0 { x / lsb } else { 0.0 };
    let rails: Vec<String> = s
        .rails
        .iter()
        .map(|r| {
            let (tol, at) = (crate::units::format_percent(r.tolerance), v(r.volts));
            format!("{} ({at} ±{tol}) {} ({:.1} LSB)", r.reference, v(r.shift), in_lsb(r.shift))
        })
        .collect();
    let db = if s.supply_rejection > 0.0 { -20.0 * s.supply_rejection.log10() } else { 0.0 };
    let mut msg = if rails.is_empty() {
        "The rails have no tolerance to move the converter pin.".to_string()
    } else {
        format!(
            "At the ends of their tolerance the rails move the converter pin by up to {} ({:.1} LSB): {}; the \
                amplifiers' supply rejection ({db:.0} dB) accounts for {}.",
            v(s.total),
            s.total_lsb,
            rails.join(", "),
            v(s.rejection)
        )
    };
    let d = &req.destination;
    if s.ratiometric {
        msg.push_str(
            " Readings are ratiometric to the positive rail: a level taken as a share of it cancels in the codes, \
                and the shift above is what remains (the rail now scales every reading of a signal that does not \
                follow it).",
        );
    } else if s.reference > 0.0 {
        msg.push_str(&format!(
            " The converter's reference (±{}) moves a reading by up to {} ({:.1} LSB).",
            crate::units::format_percent(d.reference_tolerance),
            v(s.reference),
            in_lsb(s.reference)
        ));
    }
    if s.total_lsb <= 1.0 {
        return Check::ok("supply", msg);
    }
    let level_part = (s.total - s.rejection).max(0.0);
    let mut fixes = Vec::new();
    if !d.reference_pin && !s.ratiometric && level_part > lsb {
        fixes.push(format!(
            "taking the levels from the converter's reference pin (destination.reference_pin) or reading \
                ratiometrically (destination.ratiometric) removes the {} the level shifts take",
            v(level_part)
        ));
    }
    let tight = s.rails.iter().map(|r| r.tolerance).fold(0.0, f64::max);
    if tight > TIGHT_RAIL {
        fixes.push(format!(
            "rails regulated to ±{} leave {:.1} LSB",
            crate::units::format_percent(TIGHT_RAIL),
            s.total_lsb * TIGHT_RAIL / tight
        ));
    }
    if fixes.is_empty() {
        return Check::ok("supply", msg);
    }
    Check::warning("supply", format!("{msg} More than one LSB: {}.", fixes.join("; ")))
}

/// The `stage_limits` check: every amplifier's output and input over the tolerance box.
fn stage_check(req: &Request, rows: &[StageRow], clipped: usize) -> Option<Check> {
    let v = |x: f64| format(x, Quantity::Voltage);
    let at = |x: f64| format(x, req.source.kind.quantity());
    let tight = rows.iter().min_by(|a, b| a.margin().total_cmp(&b.margin()))?;
    let words = |r: &StageRow| {
        format!(
            "{}'s {} spans {} … {} at sensor {} over the tolerance box, against its {} … {}",
            r.amplifier,
            r.what,
            v(r.worst[0]),
            v(r.worst[1]),
            at(r.at),
            v(r.limits[0]),
            v(r.limits[1])
        )
    };
    if tight.margin() >= 0.0 {
        return Some(Check::ok(
            "stage_limits",
            format!("Every amplifier stays inside its output swing and input range; the closest: {}.", words(tight)),
        ));
    }
    let beyond: Vec<String> = rows.iter().filter(|r| r.margin() < 0.0).map(words).collect();
    let nominal_out = rows.iter().any(|r| r.nominal < r.limits[0] || r.nominal > r.limits[1]);
    let msg = format!("{}; the Monte Carlo counts such builds as clipped ({clipped} in all).", beyond.join("; "));
    Some(if nominal_out {
        Check::error(
            "stage_limits",
            format!(
                "{msg} Even the nominal build leaves the limit: give that stage less gain \
            or move its level."
            ),
        )
    } else {
        Check::warning("stage_limits", format!("{msg} The yield says how many builds that costs."))
    })
}

/// A rail tolerance a linear regulator or reference-grade supply holds (common practice).
const TIGHT_RAIL: f64 = 0.01;

/// The checks for one set of analyses.
pub fn checks(req: &Request, a: &Analysis, nominal: Nominal) -> Vec<Check> {
    let mut c = Vec::new();
    let v = |x: f64| format(x, Quantity::Voltage);
    let hz = |x: f64| format(x, Quantity::Frequency);

    if let (Some(first), Some(last)) = (a.dc.clipped_in_range.first(), a.dc.clipped_in_range.last()) {
        c.push(Check::error(
            "clipping",
            format!(
                "The output sits at the amplifier's swing limit for sensor values {} … {} inside the sensor's \
                range; widen the rails, choose a rail-to-rail output amplifier or give more headroom.",
                format(*first, req.source.kind.quantity()),
                format(*last, req.source.kind.quantity())
            ),
        ));
    } else {
        c.push(Check::ok(
            "clipping",
            format!(
                "No clipping over the sensor's range; the output limits {} … {} are reached only beyond it.",
                v(a.dc.output_limits[0]),
                v(a.dc.output_limits[1])
            ),
        ));
    }

    let mc = &a.tolerance.monte_carlo;
    let pct = |x: f64| format!("{:.2} %", 100.0 * x);
    let msg = format!(
        "{} of {} simulated builds (parts within tolerance, amplifier offset and bias currents spread) keep the \
            output inside the converter range with every amplifier inside its limits; {} also keep the full {:.1} % \
            headroom.{}",
        pct(mc.yield_),
        mc.runs,
        pct(mc.yield_headroom),
        req.destination.headroom * 100.0,
        if mc.clipped > 0 {
            let share = pct(mc.clipped as f64 / mc.runs.max(1) as f64);
            format!(" {} builds ({share}) reach the amplifier's swing limit and count as failures.", mc.clipped)
        } else {
            String::new()
        }
    );
    let advice = yield_advice(req, a.tolerance.budget.as_ref());
    c.push(if mc.runs == 0 {
        Check::ok("yield", "Monte Carlo was switched off (analysis.monte_carlo_runs = 0).")
    } else if mc.yield_ < YIELD_ERROR {
        Check::error("yield", format!("{msg} {advice}"))
    } else if mc.yield_ < YIELD_WARNING {
        Check::warning("yield", format!("{msg} {advice}"))
    } else {
        Check::ok("yield", msg)
    });

    if let Some(s) = &a.tolerance.supply {
        c.push(supply_check(req, s));
    }
    c.extend(stage_check(req, &a.tolerance.stages, mc.clipped));

    let n = &a.noise;
    let top = n
        .contributors
        .first()
        .map(|t| format!(" The largest contributor is {} ({}).", t.part, v(t.output_rms)))
        .unwrap_or_default();
    let noise_msg = format!(
        "Added noise is {} rms at the converter over {} … {} ({}; {:.2} LSB; quantisation alone is {}); the chain \
            reaches {:.1} dB SNR, {:.2} effective bits, for a full-scale sine.{}",
        v(n.output_rms),
        hz(n.band[0]),
        hz(n.band[1]),
        noise::band_note(req),
        n.lsb_ratio,
        v(n.quantization_rms),
        n.snr_db,
        n.enob,
        top
    );
    c.push(if n.lsb_ratio > 1.0 {
        Check::warning(
            "noise",
            format!(
                "{noise_msg} Lower resistor values, a quieter amplifier or a narrower band bring it under one LSB."
            ),
        )
    } else {
        Check::ok("noise", noise_msg)
    });

    // An oversampling converter's decimation filter removes what lies between the band and
    // the modulator's Nyquist frequency; only content above that folds back.
    let d = &req.destination;
    let nyquist = 0.5 * d.input_rate();
    if let Some(fh) = nominal.f_high_3db {
        if fh > nyquist {
            c.push(Check::warning(
                "aliasing",
                format!(
                    "The response reaches {} before it falls 3 dB, above the converter's Nyquist frequency {}; \
                    noise and interference between them fold back into the band (the alias_rejection check says how \
                    much rejection the converter needs there and what the design gives).",
                    hz(fh),
                    hz(nyquist)
                ),
            ));
        }
    }

    let l = &a.loading;
    let loading_msg =
        format!(
        "The sensor sees {}; its own impedance changes the gain by {:.3} % and the converter's input by {:.3} % (both \
            already in the design equations).",
        format(l.input_impedance, Quantity::Resistance), 100.0 * l.sensor_gain_error, 100.0 * l.converter_gain_error
    );
    if req.source.kind == crate::request::SourceKind::CurrentLoop {
        // A loop's transmitter forces its current whatever it drives (within the burden):
        // what matters is the measuring input it sees and how much current the network takes.
        c.push(Check::ok(
            "loading",
            format!(
                "The loop sees {} at the measuring input (the shunt in parallel with the amplifier's network, whose \
                    share of the loop current is in the design equations); the converter's input changes the gain by \
                    {:.3} %.",
                format(l.input_impedance, Quantity::Resistance),
                100.0 * l.converter_gain_error
            ),
        ));
        return c;
    }
    c.push(if l.sensor_gain_error.abs() > LOADING_LIMIT {
        Check::warning(
            "loading",
            format!(
                "{loading_msg} Any change of the sensor's impedance moves the gain in \
            proportion; a buffer or higher input resistance makes it negligible."
            ),
        )
    } else {
        Check::ok("loading", loading_msg)
    });
    c
}

/// What would raise the yield, from the worst case's budget: the contributors ranked, and a
/// change for the largest that is not already so.
fn yield_advice(req: &Request, b: Option<&super::tolerance::budget::Budget>) -> String {
    let v = |x: f64| format(x, Quantity::Voltage);
    let Some(b) = b.filter(|b| !b.contributors.is_empty()) else {
        return "More headroom or a two-point calibration in firmware raises it.".to_string();
    };
    let top = &b.contributors[0];
    let share = format!("{:.0} %", 100.0 * top.share);
    let fix = match top.what.as_str() {
        "resistor tolerances" if req.parts.resistor_tolerance > 0.001 + 1e-12 => format!(
            "0.1 % resistors (now ±{}) cut that part about {:.0}-fold",
            crate::units::format_percent(req.parts.resistor_tolerance),
            req.parts.resistor_tolerance / 0.001
        ),
        "resistor tolerances" => {
            "the resistors are already 0.1 %: a two-point calibration in firmware removes their gain and offset \
             spread"
                .to_string()
        }
        "amplifier input offset" => match b.offset_max {
            Some(m) if m > 0.0 => format!(
                "an amplifier with an input offset below {} (now {}) keeps the worst case inside the range",
                v(m),
                v(b.offset_stated)
            ),
            _ => format!(
                "an amplifier with far less input offset than {}, or a one-point calibration",
                v(b.offset_stated)
            ),
        },
        "amplifier bias currents" => match b.bias_current_max {
            Some(m) if m > 0.0 => format!(
                "an amplifier with a bias current below {} (now {}) keeps the worst case inside the range",
                format(m, Quantity::Current),
                format(b.bias_current_stated, Quantity::Current)
            ),
            _ => "lower resistances at the amplifiers' inputs, or an amplifier with less bias current".to_string(),
        },
        _ => format!(
            "a level shift taken from a reference instead of a rail of ±{} (or readings ratiometric to the rail) \
             removes that part",
            crate::units::format_percent(req.supplies.iter().map(|&r| req.rail_tolerance(r)).fold(0.0, f64::max))
        ),
    };
    format!(
        "The worst-case spread at the range's worse end is ±{} against a margin of {} to the converter's limits: {}. \
         The largest is {} ({share}): {fix}.",
        v(b.contributors.iter().map(|c| c.spread).sum()),
        v(b.margin),
        b.ranking(),
        top.what
    )
}
