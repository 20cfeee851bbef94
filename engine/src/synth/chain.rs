//! What follows the gain stage: the anti-alias filter ([`super::filter`]) and the converter
//! drive ([`super::drive`]), planned from the request and attached to the gain stage's
//! circuit.
//!
//! Both are designed before the gain stage because they change what it must deliver: the
//! drive resistor and the converter's input impedance divide the DC level by
//! k = R_in/(R_in + R), so the gain stage aims at the target divided by k; an inverting
//! (multiple-feedback) cascade mirrors the level around its reference V_ref, so the gain
//! stage then aims at 2·V_ref − target/k (V_ref is the middle of the scaled target, rounded
//! by its divider). Unity-gain sections pass DC unchanged (their amplifiers' finite gain is
//! in the solver, and the design loop in [`crate::design`] absorbs the rest).
//!
//! Node names (stable, for the schematic and for scripts): the gain stage's output becomes
//! `out1`; section k (from 1, in signal order) has its junction `f{k}a`, + input `f{k}p`,
//! − input `f{k}n` (multiple feedback) and output `f{k}o`; inverting sections share
//! `fref`; the drive resistor ends at `adc`, where the charge bucket and the clamp sit.
//! Whatever comes last drives `adc` directly: without a drive the last section's output is
//! `adc`, and without filter or drive the gain stage's output stays `adc`.

use std::f64::consts::PI;

use super::drive::{self, DriveDesign};
use super::filter::{self, sections::SectionKind, FilterDesign, NoFilter};
use super::{Synthesis, Target};
use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Builder, PartKind, PartRole, SectionPart, Stage, StageKind, StageRole};
use crate::diag::Check;
use crate::request::{Coupling, Request};
use crate::units::{format, Quantity};
use crate::values::{self, Window};

/// Thevenin resistance aimed at for the filter reference divider, Ω.
pub const REFERENCE_THEVENIN: f64 = 20e3;
/// Corner of the reference divider with its bypass capacitor, at most, Hz (common practice).
pub const REFERENCE_CORNER: f64 = 10.0;

/// The filter and the drive planned for one request.
#[derive(Debug, Clone)]
pub struct Chain {
    pub filter: Result<FilterDesign, NoFilter>,
    pub drive: Option<DriveDesign>,
}

/// The reference of inverting sections: its voltage and, unless it is ground, the divider
/// `(rail node, top, bottom, bypass)` that makes it.
#[derive(Debug, Clone, PartialEq)]
pub struct Reference {
    pub vref: f64,
    pub divider: Option<(&'static str, f64, f64, f64)>,
}

/// Plans the filter and the drive.
pub fn plan(req: &Request, amp: &Amplifier, rails: Rails) -> Chain {
    Chain { filter: filter::design(req), drive: drive::design(req, amp, rails) }
}

impl Chain {
    /// Anything follows the gain stage.
    pub fn follows(&self) -> bool {
        self.filter.is_ok() || self.drive.is_some()
    }

    /// DC ratio from the gain stage's output to the converter pin.
    pub fn dc_factor(&self, req: &Request) -> f64 {
        self.drive.as_ref().map_or(1.0, |d| d.dc_factor(req.destination.impedance))
    }

    /// The reference inverting sections need for final target `t`, if any.
    pub fn reference(&self, req: &Request, rails: Rails, t: Target) -> Option<Reference> {
        self.filter.as_ref().ok().filter(|f| f.uses_reference())?;
        let want = 0.5 * (t.at_min + t.at_max) / self.dc_factor(req);
        let span = (t.at_max - t.at_min).abs().max(1e-9);
        if rails.is_dual() && want.abs() < 1e-6 * span {
            return Some(Reference { vref: 0.0, divider: None });
        }
        let (rail, node) = if want > 0.0 {
            (rails.pos, "vpos")
        } else if rails.is_dual() {
            (rails.neg, "vneg")
        } else {
            return None;
        };
        let window = Window { min: req.parts.resistor_min, max: req.parts.resistor_max };
        let d = values::best_divider(req.parts.resistor_series, want / rail, Some(REFERENCE_THEVENIN), window)?;
        let mut corner = REFERENCE_CORNER;
        if req.source.coupling == Coupling::Ac && req.source.band_low > 0.0 {
            corner = corner.min(0.1 * req.source.band_low);
        }
        let c = values::step_up(req.parts.capacitor_series, 1.0 / (2.0 * PI * corner * d.thevenin))?;
        Some(Reference { vref: rail * d.ratio, divider: Some((node, d.top, d.bottom, c)) })
    }

    /// What the gain stage must deliver so that the pin sees `t`.
    pub fn gain_target(&self, req: &Request, t: Target, reference: Option<&Reference>) -> Target {
        let k = self.dc_factor(req);
        let inverts = self.filter.as_ref().is_ok_and(|f| f.inverts());
        match reference.filter(|_| inverts) {
            None => Target { at_min: t.at_min / k, at_max: t.at_max / k, gain: t.gain / k, offset: t.offset / k },
            Some(r) => {
                let (a, b) = (2.0 * r.vref - t.at_max / k, 2.0 * r.vref - t.at_min / k);
                match req.source.coupling {
                    Coupling::Dc => {
                        let s = &req.source;
                        let m = (b - a) / (s.max - s.min);
                        Target { at_min: a, at_max: b, gain: m, offset: a - m * s.min }
                    }
                    Coupling::Ac => {
                        Target { at_min: a, at_max: b, gain: t.gain / k, offset: 2.0 * r.vref - t.offset / k }
                    }
                }
            }
        }
    }

    /// Appends the filter, its reference and the drive to the gain stage in `s`.
    pub fn attach(&self, s: &mut Synthesis, req: &Request, rails: Rails, reference: Option<&Reference>) {
        s.filter = self.filter.as_ref().ok().cloned();
        s.no_filter = self.filter.as_ref().err().copied();
        s.drive = self.drive.clone();
        if !self.follows() {
            return;
        }
        for p in s.circuit.parts.iter_mut().filter(|p| !p.bench) {
            for n in p.nodes.iter_mut().filter(|n| *n == "adc") {
                *n = "out1".to_string();
            }
        }
        // The first-order pole goes into the gain stage where that costs nothing (`merge`).
        let mut filter = s.filter.clone();
        let merged = filter.as_mut().and_then(|f| super::merge::plan(&s.circuit, req, f, "out1"));
        s.filter = filter.clone();
        let mut bld = Builder::resume(std::mem::take(&mut s.circuit.parts));
        let vneg = if rails.is_dual() { "vneg" } else { "0" };
        let rtol = Some(req.parts.resistor_tolerance);
        let ctol = Some(req.parts.capacitor_tolerance);
        let mut input = "out1".to_string();
        let hz = |x: f64| format(x, Quantity::Frequency);
        if let Some(f) = &filter {
            let fref = reference.map_or("0", |r| if r.divider.is_some() { "fref" } else { "0" });
            let mut parts = Vec::new();
            if let Some(m) = &merged {
                let what = format!("section 1 (first order, f_c {}) built into the gain stage: {}", hz(m.f_p), m.how);
                parts.push(bld.add(
                    PartKind::Capacitor,
                    m.capacitor,
                    ctol,
                    &[&m.nodes[0], &m.nodes[1]],
                    (StageRole::Filter, m.role),
                    &what,
                ));
            }
            let skip = usize::from(merged.is_some());
            let n = f.realised.len() - skip;
            for (i, r) in f.realised.iter().skip(skip).enumerate() {
                // Sections keep their numbers (and node names) when section 1 is merged.
                let k = i + 1 + skip;
                let out = if i + 1 == n && self.drive.is_none() { "adc".to_string() } else { format!("f{k}o") };
                let (a, p, m) = (format!("f{k}a"), format!("f{k}p"), format!("f{k}n"));
                let tag = match r.kind {
                    SectionKind::FirstOrder => format!("section {k} (first order, f_c {})", hz(r.f_n)),
                    SectionKind::SallenKey => format!("section {k} (Sallen-Key, f_n {}, Q {:.3})", hz(r.f_n), r.q),
                    SectionKind::MultipleFeedback => {
                        format!("section {k} (multiple feedback, f_n {}, Q {:.3})", hz(r.f_n), r.q)
                    }
                };
                let v = &r.values;
                let next = out.clone();
                {
                    let (input, out, a, p, m) = (input.as_str(), out.as_str(), a.as_str(), p.as_str(), m.as_str());
                    let section = k as u32;
                    let mut add = |part: SectionPart, kind: PartKind, value: f64, nodes: &[&str], what: &str| {
                        let tol = match kind {
                            PartKind::Resistor => rtol,
                            PartKind::Capacitor => ctol,
                            _ => None,
                        };
                        let at = (StageRole::Filter, PartRole::Section { section, part });
                        parts.push(bld.add(kind, value, tol, nodes, at, &format!("{tag}: {what}")));
                    };
                    use PartKind::{Capacitor as C, OpAmp as U, Resistor as R};
                    use SectionPart::*;
                    match (r.kind, v.as_slice()) {
                        (SectionKind::FirstOrder, [rr, c, ..]) => {
                            add(R1, R, *rr, &[input, p], "resistor, sets the corner with the capacitor");
                            add(Cg, C, *c, &[p, "0"], "capacitor to ground");
                            add(Amplifier, U, 0.0, &[p, out, "vpos", vneg, out], "follower");
                        }
                        (SectionKind::SallenKey, [r1, r2, cf, cg, ..]) => {
                            add(R1, R, *r1, &[input, a], "input resistor R1");
                            add(R2, R, *r2, &[a, p], "resistor R2 to the + input");
                            add(Cf, C, *cf, &[a, out], "feedback capacitor C_f");
                            add(Cg, C, *cg, &[p, "0"], "capacitor C_g to ground");
                            add(Amplifier, U, 0.0, &[p, out, "vpos", vneg, out], "unity-gain amplifier");
                        }
                        (SectionKind::MultipleFeedback, [rr, r3, cg, cf, ..]) => {
                            add(R1, R, *rr, &[input, a], "input resistor R1 (equal to R2: gain −1)");
                            add(R2, R, *rr, &[a, out], "feedback resistor R2");
                            add(R3, R, *r3, &[a, m], "resistor R3 to the − input");
                            add(Cg, C, *cg, &[a, "0"], "capacitor C_g to ground");
                            add(Cf, C, *cf, &[out, m], "feedback capacitor C_f");
                            let amp = [fref, m, "vpos", vneg, out];
                            add(Amplifier, U, 0.0, &amp, "inverting amplifier around the reference");
                        }
                        _ => {}
                    }
                }
                input = next;
            }
            let kinds: Vec<&str> = f
                .sections
                .iter()
                .map(|x| match x.kind {
                    SectionKind::FirstOrder if x.in_gain_stage => "a first-order pole in the gain stage",
                    SectionKind::FirstOrder => "a first-order RC with a follower",
                    SectionKind::SallenKey => "a unity-gain Sallen-Key section",
                    SectionKind::MultipleFeedback => "a unity-gain multiple-feedback section",
                })
                .collect();
            s.circuit.stages.push(Stage {
                role: StageRole::Filter,
                kind: StageKind::Filter,
                description: format!(
                    "{} low-pass of order {}, corner {}: {} (highest Q last)",
                    f.response.name(),
                    f.order,
                    hz(f.corner),
                    kinds.join(", ")
                ),
                parts,
            });
            if let Some((node, top, bottom, c)) = reference.and_then(|r| r.divider) {
                let vref = reference.map_or(0.0, |r| r.vref);
                let parts = vec![
                    bld.add(
                        PartKind::Resistor,
                        top,
                        rtol,
                        &[node, "fref"],
                        (StageRole::Reference, PartRole::DividerTop),
                        "filter reference divider, upper leg",
                    ),
                    bld.add(
                        PartKind::Resistor,
                        bottom,
                        rtol,
                        &["fref", "0"],
                        (StageRole::Reference, PartRole::DividerBottom),
                        "filter reference divider, lower leg",
                    ),
                    bld.add(
                        PartKind::Capacitor,
                        c,
                        ctol,
                        &["fref", "0"],
                        (StageRole::Reference, PartRole::Bypass),
                        "filter reference bypass",
                    ),
                ];
                s.circuit.stages.push(Stage {
                    role: StageRole::Reference,
                    kind: StageKind::Reference,
                    description: format!(
                        "reference at {} for the inverting filter sections",
                        format(vref, Quantity::Voltage)
                    ),
                    parts,
                });
            }
            s.equations.extend(filter_equations(req, f, reference));
        }
        if let Some(d) = &self.drive {
            let mut parts = vec![bld.add(
                PartKind::Resistor,
                d.resistor,
                rtol,
                &[&input, "adc"],
                (StageRole::Drive, PartRole::DriveResistor),
                "drive resistor: isolates the amplifier from the pin's capacitance and limits fault current",
            )];
            if let Some(c) = d.capacitor {
                parts.push(bld.add(
                    PartKind::Capacitor,
                    c,
                    ctol,
                    &["adc", "0"],
                    (StageRole::Drive, PartRole::ChargeBucket),
                    "charge bucket: supplies the converter's sampling capacitor",
                ));
            }
            if d.clamp_to_ground {
                parts.push(bld.add(
                    PartKind::Diode,
                    drive::CLAMP_DROP,
                    None,
                    &["0", "adc"],
                    (StageRole::Drive, PartRole::Clamp),
                    "Schottky clamp: takes fault current below ground",
                ));
            }
            let what = if d.capacitor.is_some() {
                "RC at the converter pin: charge bucket behind an isolation resistor"
            } else {
                "series resistor at the converter pin: limits fault current"
            };
            let kind = StageKind::ConverterDrive;
            s.circuit.stages.push(Stage { role: StageRole::Drive, kind, description: what.to_string(), parts });
            s.equations.extend(drive_equations(req, d));
        }
        // Every amplifier of the chain is the same part: its GBW is the value of each.
        s.circuit.parts = bld.parts;
        let gbw = s.circuit.amplifier.gbw;
        for p in s.circuit.parts.iter_mut().filter(|p| p.kind == PartKind::OpAmp) {
            p.value = gbw;
        }
    }
}

fn filter_equations(req: &Request, f: &FilterDesign, reference: Option<&Reference>) -> Vec<String> {
    let hz = |x: f64| format(x, Quantity::Frequency);
    let d = &req.destination;
    let rate = if d.converter.samples() {
        format!("f_s = {}", hz(d.sample_rate))
    } else {
        format!("modulator rate {}", hz(d.modulator_rate.unwrap_or(0.0)))
    };
    let level = 20.0 * req.filter.out_of_band_level.log10();
    let mut out = vec![
        format!(
            "Alias rule: content at {} ({rate} − band_high) must fall to the converter's noise floor: 6.02·N + 1.76 = {:.2} dB for N = {}, {} {:.1} dB for content at {:.1} dBFS → {:.2} dB",
            hz(f.alias_frequency), filter::full_range_db(d.bits), d.bits, if level < 0.0 { "less" } else { "plus" }, level.abs(), level, f.required_db
        ),
        format!(
            "Order {}: the corner must lie between {} (error ≤ {} dB at band_high {}) and {} (rejection at {}) → corner {}",
            f.order, hz(f.corner_range[0]), f.passband_allowed_db, hz(req.source.band_high), hz(f.corner_range[1]), hz(f.alias_frequency), hz(f.corner)
        ),
    ];
    for (k, (s, r)) in f.sections.iter().zip(&f.realised).enumerate() {
        let vals: Vec<String> = r
            .values
            .iter()
            .enumerate()
            .map(|(i, v)| {
                let is_r = i < r.values.len() - if r.kind == SectionKind::FirstOrder { 1 } else { 2 };
                format(*v, if is_r { Quantity::Resistance } else { Quantity::Capacitance })
            })
            .collect();
        out.push(match s.kind {
            SectionKind::FirstOrder => format!("Section {}: first order f_c = 1/(2πRC) = {} with R, C = {} (wanted {}, {:+.2} %)", k + 1, hz(s.f_n_rounded), vals.join(", "), hz(s.f_n), 100.0 * s.f_n_error),
            SectionKind::SallenKey => format!(
                "Section {}: Sallen-Key f_n = 1/(2π√(R1R2C_fC_g)), Q = √(R1R2C_fC_g)/(C_g(R1+R2)); R1, R2, C_f, C_g = {} → f_n {} ({:+.2} %), Q {:.4} ({:+.2} %) for wanted {} and {:.4}",
                k + 1, vals.join(", "), hz(s.f_n_rounded), 100.0 * s.f_n_error, s.q_rounded, 100.0 * s.q_error, hz(s.f_n), s.q
            ),
            SectionKind::MultipleFeedback => format!(
                "Section {}: multiple feedback, gain −R2/R1 = −1, f_n = 1/(2π√(R2R3C_gC_f)), Q = √(R2R3C_gC_f)/(C_f(R2+R3+R2R3/R1)); R1 = R2, R3, C_g, C_f = {} → f_n {} ({:+.2} %), Q {:.4} ({:+.2} %) for wanted {} and {:.4}",
                k + 1, vals.join(", "), hz(s.f_n_rounded), 100.0 * s.f_n_error, s.q_rounded, 100.0 * s.q_error, hz(s.f_n), s.q
            ),
        });
    }
    out.push(format!(
        "Rounded sections (ideal amplifiers): {:.2} dB at {}, in-band error ≤ {:.3} dB up to band_high; amplifier GBW ≥ {} (100 × noise gain × Q × f_n per section)",
        f.rounded_db, hz(f.alias_frequency), f.passband_error_db, hz(f.gbw_min)
    ));
    if let Some(r) = reference {
        out.push(format!(
            "Inverting sections mirror the level around V_ref = {}: the gain stage aims at 2·V_ref − target",
            format(r.vref, Quantity::Voltage)
        ));
    }
    out
}

fn drive_equations(req: &Request, d: &DriveDesign) -> Vec<String> {
    let r = |x: f64| format(x, Quantity::Resistance);
    let t = |x: f64| format(x, Quantity::Time);
    let dst = &req.destination;
    let mut out = Vec::new();
    if let Some(c) = d.capacitor {
        out.push(format!(
            "Charge bucket C_b ≥ {} × C_in = {} → {}",
            drive::BUCKET_RATIO,
            format(drive::BUCKET_RATIO * dst.input_capacitance, Quantity::Capacitance),
            format(c, Quantity::Capacitance)
        ));
        out.push(format!(
            "Settling to ½ LSB: ln(2^(N+1)) = {:.2} time constants; ln(2^(N+1))·(R·C_b + 1/(2π·GBW)) = {} ≤ t_acq {} needs R ≤ {}",
            d.settling_time_constants, t(d.settling_time.unwrap_or(f64::NAN)), t(d.acquisition_time), r(d.r_settling_max.unwrap_or(f64::NAN))
        ));
        out.push(format!(
            "Stability: atan(2π·GBW·(R_o + R)·C_b) − atan(2π·GBW·R·C_b) ≤ {}° with R_o = {} → R ≥ {}",
            drive::PHASE_LOSS_LIMIT,
            r(drive::OUTPUT_RESISTANCE),
            r(d.r_stability_min)
        ));
    }
    if d.r_protection_min > 0.0 {
        out.push(format!(
            "Protection: (overdrive − {} V)/I_limit = {} for I_limit {}",
            drive::CLAMP_DROP,
            r(d.r_protection_min),
            format(d.injection_limit, Quantity::Current)
        ));
    }
    out.push(format!(
        "Drive resistor {} (DC loss against the converter's {} input: {:.4} %, compensated in the gain stage's target)",
        r(d.resistor),
        r(dst.impedance),
        100.0 * (1.0 - d.dc_factor(dst.impedance))
    ));
    out
}

/// Checks of the drive (settling, stability, protection); they need no analysis.
pub fn drive_checks(req: &Request, d: Option<&DriveDesign>) -> Vec<Check> {
    let mut c = Vec::new();
    let dst = &req.destination;
    let v = |x: f64| format(x, Quantity::Voltage);
    let r = |x: f64| format(x, Quantity::Resistance);
    let t = |x: f64| format(x, Quantity::Time);
    let Some(d) = d else {
        c.push(Check::ok("converter_protection", "The amplifier cannot drive the converter pin more than 0.3 V beyond the converter's range; no protection is needed."));
        return c;
    };
    if let (Some(ts), Some(cb)) = (d.settling_time, d.capacitor) {
        let msg = format!(
            "The converter pin settles to ½ LSB ({:.2} time constants of R·C_b = {} · {}, plus the amplifier's own) in {}; the acquisition time is {}.",
            d.settling_time_constants, r(d.resistor), format(cb, Quantity::Capacitance), t(ts), t(d.acquisition_time)
        );
        c.push(if ts <= d.acquisition_time {
            Check::ok("drive_settling", msg)
        } else {
            Check::warning("drive_settling", format!("{msg} The pin does not settle in time: a longer acquisition time, an amplifier with a higher GBW, or a converter with a smaller sampling capacitance would; R is held at {} by {}.", r(d.resistor), if d.r_protection_min >= d.r_stability_min { "the protection" } else { "stability" }))
        });
        let phase = d.phase_loss_deg.unwrap_or(0.0);
        let msg = format!("The drive resistor {} isolates the amplifier from the charge bucket: the load costs {:.1}° of phase at the amplifier's unity-gain frequency (limit {}°, with an assumed open-loop output resistance of {}).", r(d.resistor), phase, drive::PHASE_LOSS_LIMIT, r(drive::OUTPUT_RESISTANCE));
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
        let clamp = if d.clamp_to_ground {
            " A Schottky clamp from ground takes the current below 0 V off the converter."
        } else {
            ""
        };
        c.push(Check::ok(
            "converter_protection",
            format!(
                "The amplifier can drive the pin up to {} above and {} below the converter's {} … {} range; the {} drive resistor limits a fault's current into the converter's input protection to {} (limit used {}; the converter's datasheet governs).{clamp}",
                v(d.overdrive[0]), v(d.overdrive[1]), v(dst.min), v(dst.max), r(d.resistor), format(d.fault_current, Quantity::Current), format(d.injection_limit, Quantity::Current)
            ),
        ));
    } else {
        c.push(Check::ok("converter_protection", "The amplifier cannot drive the converter pin more than 0.3 V beyond the converter's range; no protection is needed."));
    }
    c
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
                    format!("The {} filter of order {} rejects content at {} by {:.1} dB; the rule asks {:.1} dB ({} bits, out-of-band content at {:.1} dBFS).", f.response.name(), f.order, hz(f.alias_frequency), got, f.required_db, bits, 20.0 * level.log10()),
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
                        Some(n) => ways.push(format!("an oversampling converter with its own decimation filter (modulator at {} × the sample rate needs only order {n})", filter::PROPOSED_OVERSAMPLING)),
                        None if req.destination.converter.samples() => ways.push("an oversampling converter with its own decimation filter".to_string()),
                        None => {}
                    }
                    ways.push(format!("a stated out-of-band level of {:.1} dBFS or less (filter.out_of_band_level), if the content above the band is known to be that weak", sf.level_db_needed));
                } else {
                    ways.push("a higher order or a finer capacitor series".to_string());
                }
                c.push(Check::error(
                    "alias_rejection",
                    format!(
                        "{} meets the alias rule: content at {} must fall {:.1} dB ({} bits, out-of-band content at {:.1} dBFS), the best one (order {}, corner {}) gives {:.1} dB. What would work: {}.",
                        match req.filter.order {
                            Some(n) => format!("No filter of the requested order {n}"),
                            None => format!("No filter of order {} or less", req.filter.max_order),
                        },
                        hz(f.alias_frequency), f.required_db, bits, 20.0 * level.log10(), f.order, hz(f.corner), got, ways.join("; ")
                    ),
                ));
            }
            if f.ripple_exceeds_request {
                c.push(Check::warning("passband_ripple", format!("The steep response ripples {} dB inside the band, more than the {} dB passband_error asked; a flat response keeps the error within it.", super::filter::prototype::CHEBYSHEV_RIPPLE_DB, req.filter.passband_error)));
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
                let text = format!("With the amplifiers' gain-bandwidth and the gain stage, the built circuit is {e:+.3} dB from mid-band at {}", hz(req.source.band_high));
                c.push(if e.abs() > allowed + 0.005 {
                    Check::warning("band_flatness", format!("{text}, beyond the {allowed} dB allowed (the filter sections alone: {:.3} dB). A faster amplifier keeps the sections on their design values; a higher order moves the corner further from the band.", f.passband_error_db))
                } else {
                    Check::ok("band_flatness", format!("{text} (allowed {allowed} dB)."))
                });
            }
            let worst = f.sections.iter().map(|x| x.f_n_error.abs().max(x.q_error.abs())).fold(0.0, f64::max);
            c.push(Check::ok("filter_rounding", format!("Rounding the filter parts moves a section's f_n or Q by at most {:.2} %; the response above uses the rounded values.", 100.0 * worst)));
            if req.filter.topology == crate::request::FilterTopology::MultipleFeedback
                && f.sections.iter().any(|x| x.kind == SectionKind::SallenKey)
            {
                c.push(Check::ok("filter_topology", "An odd number of inverting sections would flip the output and the polarity must be kept, so the lowest-Q section is a Sallen-Key section; set keep_polarity to false for multiple feedback throughout."));
            }
        }
        (None, Some(NoFilter::NotWanted)) => {
            if let (Some(fa), Some(got)) = (fa, achieved_db) {
                c.push(Check::warning(
                    "alias_rejection",
                    format!("No anti-alias filter (filter.response = \"none\"): content at {} is rejected by only {:.1} dB of the {:.1} dB the rule asks ({} bits, out-of-band content at {:.1} dBFS); {:.1} dB are given up, and what lies there folds into the band.", hz(fa), got, required, bits, 20.0 * level.log10(), (required - got).max(0.0)),
                ));
            }
        }
        (None, Some(NoFilter::NotNeeded)) => {
            c.push(Check::ok("alias_rejection", format!("Out-of-band content at {:.1} dBFS lies below the converter's {:.1} dB range, so no anti-alias filter is needed.", 20.0 * level.log10(), filter::full_range_db(bits))));
        }
        (None, Some(NoFilter::Unrealisable)) => {
            c.push(Check::error("alias_rejection", "No filter section can be built from the capacitor series (47 pF … 10 µF) and the resistor window at this corner; widen parts.resistor_min … resistor_max or change the band."));
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
