//! The checks of the drive (settling, stability, protection) and of the filter against the
//! alias rule and the in-band error, and the figures of both.

use crate::diag::Check;
use crate::ratings;
use crate::request::Request;
use crate::synth::drive::{self, DriveDesign};
use crate::synth::filter::{self, sections::SectionKind, NoFilter};
use crate::synth::Synthesis;
use crate::units::{format, Quantity};

/// Checks of the drive (settling, stability, protection); they need no analysis.
pub fn drive_checks(req: &Request, d: Option<&DriveDesign>) -> Vec<Check> {
    let mut c = Vec::new();
    let dst = &req.destination;
    let v = |x: f64| format(x, Quantity::Voltage);
    let r = |x: f64| format(x, Quantity::Resistance);
    let t = |x: f64| format(x, Quantity::Time);
    let a = |x: f64| format(x, Quantity::Current);
    let Some(d) = d else {
        c.push(Check::ok(
            "converter_protection",
            "The amplifier cannot drive the converter pin more than 0.3 V beyond \
            the converter's range; no protection is needed.",
        ));
        return c;
    };
    if let (Some(ts), Some(cb)) = (d.settling_time, d.capacitor) {
        let msg = format!(
            "The converter pin settles to ½ LSB ({:.2} time constants of R·C_b = {} · {}, plus the amplifier's own) in \
                {}; the acquisition time is {}.",
            d.settling_time_constants, r(d.resistor), format(cb, Quantity::Capacitance), t(ts), t(d.acquisition_time)
        );
        c.push(match drive::remedies(req, d) {
            None => Check::ok("drive_settling", msg),
            Some(m) => {
                let held = if d.r_protection_min > d.r_stability_min.max(drive::R_MIN) {
                    "by the protection"
                } else if d.r_stability_min > drive::R_MIN {
                    "by stability"
                } else {
                    "at its smallest value"
                };
                let ways = settling_ways(req, &m);
                Check::warning(
                    "drive_settling",
                    format!("{msg} It does not settle in time; R is held at {} {held}.{ways}", r(d.resistor)),
                )
            }
        });
        let phase = d.phase_loss_deg.unwrap_or(0.0);
        let msg = format!(
            "The drive resistor {} isolates the amplifier from the bucket: the load costs {:.1}° of phase at its \
            unity-gain frequency (limit {}°, assumed open-loop output resistance {}).",
            r(d.resistor),
            phase,
            drive::PHASE_LOSS_LIMIT,
            r(drive::OUTPUT_RESISTANCE)
        );
        c.push(if phase <= drive::PHASE_LOSS_LIMIT + 1e-9 {
            Check::ok("drive_stability", msg)
        } else {
            Check::warning(
                "drive_stability",
                format!("{msg} Raise the drive resistor or use an amplifier rated for capacitive loads."),
            )
        });
    }
    let over = d.overdrive[0].max(d.overdrive[1]);
    if over > drive::CLAMP_DROP {
        let p = |x: f64| format(x, Quantity::Power);
        let rated = |x: f64| ratings::power_rating(x).unwrap_or(ratings::RATING_MARGIN * x);
        let clamp = if d.clamp_to_ground {
            format!(" A Schottky clamp from ground takes up to {} below 0 V off the converter.", a(d.clamp_current))
        } else {
            String::new()
        };
        let conv = if d.fault_current > 0.0 {
            format!(
                " limits a fault's current into the converter's input protection to {} (limit used {}; the \
                 converter's datasheet governs) and",
                a(d.fault_current),
                a(d.injection_limit)
            )
        } else {
            String::new()
        };
        c.push(Check::ok(
            "converter_protection",
            format!(
                "The amplifier can drive the pin up to {} above and {} below the converter's {} … {} range; the {} \
                    drive resistor{conv} takes {} then, rated {} in the part list.{clamp}",
                v(d.overdrive[0]),
                v(d.overdrive[1]),
                v(dst.min),
                v(dst.max),
                r(d.resistor),
                p(d.fault_power),
                p(rated(d.fault_power))
            ),
        ));
    } else {
        c.push(Check::ok(
            "converter_protection",
            "The amplifier cannot drive the converter pin more than 0.3 V beyond \
            the converter's range; no protection is needed.",
        ));
    }
    c
}

/// What would let the pin settle, each with its figure (see [`drive::remedies`]); empty when
/// nothing within reach would.
fn settling_ways(req: &Request, m: &drive::Remedies) -> String {
    let dst = &req.destination;
    let mut w: Vec<String> = Vec::new();
    if let Some((rc, i, _)) = m.clamped {
        let i = format(i, Quantity::Current);
        w.push(format(rc, Quantity::Resistance) + " with Schottky clamps at both range ends (" + &i + ")");
    }
    if let Some((cb, _)) = m.bucket {
        w.push("a ".to_string() + &format(cb, Quantity::Capacitance) + " bucket, whose kick stays under ½ LSB");
    }
    let (ts, rate) = m.acquisition;
    if dst.converter.samples() && ts <= 1.0 / dst.sample_rate {
        w.push("an acquisition time of ".to_string() + &format(ts, Quantity::Time) + " or more");
    }
    let (what, floor) = if dst.converter.samples() {
        ("a sample rate of ", 2.0 * req.source.band_high)
    } else {
        ("a modulator rate of ", 2.0 * dst.sample_rate)
    };
    if rate >= floor {
        w.push(what.to_string() + &format(rate, Quantity::Frequency) + " or less");
    }
    if let Some((rd, _)) = m.driver {
        w.push(format(rd, Quantity::Resistance) + " behind a driver on the converter's range as its rails");
    }
    if w.is_empty() {
        String::new()
    } else {
        " What would: ".to_string() + &w.join("; ") + "."
    }
}

/// Checks of the filter against the alias rule, from the rounded design's response
/// (`achieved_db`, from the solver; `None` when it could not be computed), and of the
/// built circuit's in-band error: `band_edge_db`, its gain at band_high relative to
/// mid-band from the solver (amplifiers' gain-bandwidth and the gain stage included).
pub fn filter_checks(req: &Request, s: &Synthesis, achieved_db: Option<f64>, band_edge_db: Option<f64>) -> Vec<Check> {
    let mut c = Vec::new();
    let hz = |x: f64| format(x, Quantity::Frequency);
    let bits = req.destination.bits;
    let level = req.filter.out_of_band_level;
    let required = filter::required_rejection_db(bits, level);
    let fa = filter::alias_frequency(req);
    match (&s.filter, s.no_filter) {
        (Some(f), _) => {
            let got = achieved_db.unwrap_or(f.rounded_db);
            if got + 1e-9 >= f.required_db && f.shortfall.is_none() {
                c.push(Check::ok(
                    "alias_rejection",
                    format!(
                        "The {} filter of order {} rejects content at {} by {:.1} dB; the rule asks {:.1} dB ({} \
                        bits, out-of-band content at {:.1} dBFS).",
                        f.response.name(),
                        f.order,
                        hz(f.alias_frequency),
                        got,
                        f.required_db,
                        bits,
                        20.0 * level.log10()
                    ),
                ));
            } else {
                let mut ways = Vec::new();
                if let Some(sf) = &f.shortfall {
                    if let Some(n) = sf.order_needed {
                        ways.push(format!("order {n} instead of the requested {} (filter.order)", f.order))
                    }
                    let what =
                        if req.destination.converter.samples() { "a sample rate of" } else { "a modulator rate of" };
                    if sf.rate_needed.is_finite() {
                        ways.push(format!("{what} {} or more (the same order then fits)", hz(sf.rate_needed)));
                    }
                    match sf.order_with_oversampling {
                        Some(n) => ways.push(format!(
                            "an oversampling converter with its own decimation filter \
                            (modulator at {} × the sample rate needs only order {n})",
                            filter::PROPOSED_OVERSAMPLING
                        )),
                        None if req.destination.converter.samples() => ways.push(
                            "an oversampling converter with its \
                            own decimation filter"
                                .to_string(),
                        ),
                        None => {}
                    }
                    ways.push(format!(
                        "a stated out-of-band level of {:.1} dBFS or less (filter.out_of_band_level), if \
                        the content above the band is known to be that weak",
                        sf.level_db_needed
                    ));
                } else {
                    ways.push("a higher order or a finer capacitor series".to_string());
                }
                c.push(Check::error(
                    "alias_rejection",
                    format!(
                        "{} meets the alias rule: content at {} must fall {:.1} dB ({} bits, out-of-band content at \
                            {:.1} dBFS), the best one (order {}, corner {}) gives {:.1} dB. What would work: {}.",
                        match req.filter.order {
                            Some(n) => format!("No filter of the requested order {n}"),
                            None => format!("No filter of order {} or less", req.filter.max_order),
                        },
                        hz(f.alias_frequency),
                        f.required_db,
                        bits,
                        20.0 * level.log10(),
                        f.order,
                        hz(f.corner),
                        got,
                        ways.join(
                            "; \
                            "
                        )
                    ),
                ));
            }
            if f.ripple_exceeds_request {
                c.push(Check::warning(
                    "passband_ripple",
                    format!(
                        "The steep response ripples {} dB inside the band, \
                    more than the {} dB passband_error asked; a flat response keeps the error within it.",
                        super::filter::prototype::CHEBYSHEV_RIPPLE_DB,
                        req.filter.passband_error
                    ),
                ));
            } else if f.passband_error_db > f.passband_allowed_db + 1e-9 {
                c.push(Check::error(
                    "passband_error",
                    format!(
                        "The rounded filter's in-band error up to {} is {:.3} dB, beyond the {} dB allowed: no filter \
                         from the part series meets both the alias rule and the allowance. A finer capacitor series, a \
                         larger passband_error or a higher sample rate would.",
                        hz(req.source.band_high),
                        f.passband_error_db,
                        f.passband_allowed_db
                    ),
                ));
            } else {
                c.push(Check::ok(
                    "passband_error",
                    format!(
                        "The rounded filter's in-band error up to {} is {:.3} dB (allowed {} dB).",
                        hz(req.source.band_high),
                        f.passband_error_db,
                        f.passband_allowed_db
                    ),
                ));
            }
            if let Some(e) = band_edge_db.filter(|e| e.is_finite()) {
                // A few thousandths of a dB of slack: the solver's and the prototype's figures
                // differ by that much without anything being wrong.
                let allowed = f.passband_allowed_db;
                let text = format!(
                    "With the amplifiers' gain-bandwidth and the gain stage, the built circuit is \
                    {e:+.3} dB from mid-band at {}",
                    hz(req.source.band_high)
                );
                // A DC electrode's own resistance into its (and its cable's) capacitance is a pole
                // no circuit after it undoes.
                let src = &req.source;
                let own = (src.kind == crate::request::SourceKind::HighImpedance
                    && src.coupling == crate::request::Coupling::Dc)
                    .then(|| src.capacitance.filter(|c| *c > 0.0 && src.impedance > 0.0))
                    .flatten()
                    .map(|cs| 1.0 / (2.0 * std::f64::consts::PI * src.impedance * cs))
                    .map(|f_s| (f_s, -10.0 * (1.0 + (src.band_high / f_s).powi(2)).log10()))
                    .filter(|(_, db)| db.abs() > allowed);
                let fix = match own {
                    Some((f_s, db)) => format!(
                        "The sensor's own resistance and capacitance put a corner at {} ({db:+.3} dB at band_high) \
                            that no circuit after it undoes: a narrower band or less cable capacitance.",
                        hz(f_s)
                    ),
                    None => "A faster amplifier keeps the sections on their design values; a higher order moves the \
                        corner further from the band."
                        .to_string(),
                };
                c.push(if e.abs() > allowed + 0.005 {
                    Check::error(
                        "band_flatness",
                        format!(
                            "{text}, beyond the {allowed} dB allowed (the filter sections alone: {:.3} dB). {fix}",
                            f.passband_error_db
                        ),
                    )
                } else {
                    Check::ok("band_flatness", format!("{text} (allowed {allowed} dB)."))
                });
            }
            let worst = f.sections.iter().map(|x| x.f_n_error.abs().max(x.q_error.abs())).fold(0.0, f64::max);
            c.push(Check::ok(
                "filter_rounding",
                format!(
                    "Rounding the filter parts moves a section's f_n or Q by at \
                most {:.2} %; the response above uses the rounded values.",
                    100.0 * worst
                ),
            ));
            if req.filter.topology == crate::request::FilterTopology::MultipleFeedback
                && f.sections.iter().any(|x| x.kind == SectionKind::SallenKey)
            {
                c.push(Check::ok(
                    "filter_topology",
                    "An odd number of inverting sections would flip the output and the \
                    polarity must be kept, so the lowest-Q section is a Sallen-Key section; set keep_polarity to \
                    false for multiple feedback throughout.",
                ));
            }
        }
        (None, Some(NoFilter::NotWanted)) => {
            if let (Some(fa), Some(got)) = (fa, achieved_db) {
                c.push(Check::warning(
                    "alias_rejection",
                    format!(
                        "No anti-alias filter (filter.response = \"none\"): content at {} is rejected by only \
                        {:.1} dB of the {:.1} dB the rule asks ({} bits, out-of-band content at {:.1} dBFS); {:.1} dB \
                        are given up, and what lies there folds into the band.",
                        hz(fa),
                        got,
                        required,
                        bits,
                        20.0 * level.log10(),
                        (required - got).max(0.0)
                    ),
                ));
            }
        }
        (None, Some(NoFilter::NotNeeded)) => {
            c.push(Check::ok(
                "alias_rejection",
                format!(
                    "Out-of-band content at {:.1} dBFS lies below the converter's \
                {:.1} dB range, so no anti-alias filter is needed.",
                    20.0 * level.log10(),
                    filter::full_range_db(bits)
                ),
            ));
        }
        (None, Some(NoFilter::Unrealisable)) => {
            c.push(Check::error(
                "alias_rejection",
                "No filter section can be built from the capacitor series (47 pF … \
                10 µF) and the resistor window at this corner; widen parts.resistor_min … resistor_max or change the \
                band.",
            ));
        }
        _ => {}
    }
    c
}

/// The figures of the filter and the converter drive after the gain stage; `alias` is the
/// (required, achieved) rejection the analyses found on the whole rounded circuit.
pub fn figures(s: &Synthesis, alias: Option<(f64, f64)>) -> Vec<crate::figures::Block> {
    s.filter.iter().map(|f| f.figures(alias)).chain(s.drive.iter().map(|d| d.figures())).collect()
}
