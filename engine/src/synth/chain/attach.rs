//! The filter, its reference and the drive appended to the gain stage's circuit under the
//! stable node names of [`super`], with the equations that explain them.

use super::{Chain, Reference};
use crate::amplifier::Rails;
use crate::circuit::{Builder, PartKind, PartRole, SectionPart, Stage, StageKind, StageRole};
use crate::request::Request;
use crate::synth::drive::{self, DriveDesign};
use crate::synth::filter::{self, sections::SectionKind, FilterDesign};
use crate::synth::Synthesis;
use crate::units::{format, Quantity};

impl Chain {
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
        let merged = filter.as_mut().and_then(|f| crate::synth::merge::plan(&s.circuit, req, f, "out1"));
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
                crate::synth::reference_pin(&mut bld, req, rails, node);
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
            "Alias rule: content at {} ({rate} − band_high) must fall to the converter's noise floor: 6.02·N + 1.76 = \
                {:.2} dB for N = {}, {} {:.1} dB for content at {:.1} dBFS → {:.2} dB",
            hz(f.alias_frequency),
            filter::full_range_db(d.bits),
            d.bits,
            if level < 0.0 { "less" } else { "plus" },
            level.abs(),
            level,
            f.required_db
        ),
        format!(
            "Order {}: the corner must lie between {} (error ≤ {} dB at band_high {}) and {} (rejection at {}) → \
                corner {}",
            f.order,
            hz(f.corner_range[0]),
            f.passband_allowed_db,
            hz(req.source.band_high),
            hz(f.corner_range[1]),
            hz(f.alias_frequency),
            hz(f.corner)
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
            SectionKind::FirstOrder => format!(
                "Section {}: first order f_c = 1/(2πRC) = {} with R, C = {} (wanted {}, \
                {:+.2} %)",
                k + 1,
                hz(s.f_n_rounded),
                vals.join(", "),
                hz(s.f_n),
                100.0 * s.f_n_error
            ),
            SectionKind::SallenKey => format!(
                "Section {}: Sallen-Key f_n = 1/(2π√(R1R2C_fC_g)), Q = √(R1R2C_fC_g)/(C_g(R1+R2)); R1, R2, C_f, C_g = \
                    {} → f_n {} ({:+.2} %), Q {:.4} ({:+.2} %) for wanted {} and {:.4}",
                k + 1,
                vals.join(", "),
                hz(s.f_n_rounded),
                100.0 * s.f_n_error,
                s.q_rounded,
                100.0 * s.q_error,
                hz(s.f_n),
                s.q
            ),
            SectionKind::MultipleFeedback => format!(
                "Section {}: multiple feedback, gain −R2/R1 = −1, f_n = 1/(2π√(R2R3C_gC_f)), Q = \
                    √(R2R3C_gC_f)/(C_f(R2+R3+R2R3/R1)); R1 = R2, R3, C_g, C_f = {} → f_n {} ({:+.2} %), Q {:.4} \
                    ({:+.2} %) for wanted {} and {:.4}",
                k + 1,
                vals.join(", "),
                hz(s.f_n_rounded),
                100.0 * s.f_n_error,
                s.q_rounded,
                100.0 * s.q_error,
                hz(s.f_n),
                s.q
            ),
        });
    }
    out.push(format!(
        "Rounded sections (ideal amplifiers): {:.2} dB at {}, in-band error ≤ {:.3} dB up to band_high; amplifier GBW \
            ≥ {} (100 × noise gain × Q × f_n per section)",
        f.rounded_db,
        hz(f.alias_frequency),
        f.passband_error_db,
        hz(f.gbw_min)
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
            "Settling to ½ LSB: ln(2^(N+1)) = {:.2} time constants; ln(2^(N+1))·(R·C_b + 1/(2π·GBW)) = {} ≤ t_acq {} \
                needs R ≤ {}",
            d.settling_time_constants,
            t(d.settling_time.unwrap_or(f64::NAN)),
            t(d.acquisition_time),
            r(d.r_settling_max.unwrap_or(f64::NAN))
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
