//! The anti-alias filter and the converter drive against outside references: published
//! prototype tables, the reverse Bessel polynomial's roots by nalgebra, worked section
//! formulas, the alias and settling rules with their published values, and ngspice on the
//! exported netlists. The source is named beside each check ([C] confirmed by an independent
//! computation, [M] from memory, as in tests/REFERENCES.md). Requests are scenarios
//! of our own. ngspice must be installed; without it the simulator test fails, never skips.

// Handbook tables quote Q and the 1/√2 of a Butterworth pair to four or five digits; those
// values stay as printed.
#![allow(clippy::approx_constant)]

use std::f64::consts::PI;
use std::process::Command;

use nalgebra::{Complex, DMatrix};
use rangefit_engine::bom::bom;
use rangefit_engine::circuit::{PartKind, StageRole};
use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::request::{Coupling, ResponseKind};
use rangefit_engine::synth::drive;
use rangefit_engine::synth::filter::prototype::{prototype, reverse_bessel, Prototype};
use rangefit_engine::synth::filter::sections::{
    multiple_feedback, realise, response_of, sallen_key, PartsConfig, SectionKind,
};
use rangefit_engine::synth::filter::{self, full_range_db, required_rejection_db};
use rangefit_engine::synth::round::RoundConfig;
use rangefit_engine::values::Series;
use rangefit_engine::{design, Design, Request};
use rangefit_tests::rows::{check, fact, row, Row};

fn request(json: &str) -> Request {
    Request::from_json(json).unwrap_or_else(|e| panic!("request does not read: {e}\n{json}"))
}

// ---------------------------------------------------------------------------------------
// 1. Prototypes

const CM_TABLES: &str =
    "Carter & Mancini, Op Amps for Everyone, 5th ed. (2018), §16.9, Tables 16.6 (Bessel) / 16.7 (Butterworth) [C]";
const BUTTER_CLOSED: &str = "Butterworth closed form Q_k = 1/(2·sin((2k−1)π/(2n))), k = 1 … ⌊n/2⌋, f_n = 1, real pole \
    at 1 for odd n (textbook; agrees with Carter & Mancini Table 16.7) [C]";
const BESSEL_EIG: &str = "nalgebra complex_eigenvalues of the companion matrix of the reverse Bessel polynomial, −3 \
    dB normalised by bisection here [C]";

/// Sections of a prototype as (f_n, Q) in ascending Q, plus the real pole.
fn sections_of(p: &Prototype) -> (Option<f64>, Vec<(f64, f64)>) {
    (p.real, p.pairs.iter().map(|s| (s.fsf, s.q)).collect())
}

/// Bessel poles for order `n` independently of the engine: eigenvalues of the companion
/// matrix of θ_n(s) (monic), then scaled so that the magnitude is −3 dB at 1.
fn bessel_reference(n: usize) -> (Option<f64>, Vec<(f64, f64)>) {
    let a = reverse_bessel(n);
    let mut m = DMatrix::<f64>::zeros(n, n);
    for i in 1..n {
        m[(i, i - 1)] = 1.0;
    }
    for i in 0..n {
        m[(i, n - 1)] = -a[i];
    }
    let poles: Vec<Complex<f64>> = m.complex_eigenvalues().iter().copied().collect();
    let mag2 =
        |w: f64| poles.iter().map(|p| 1.0 / (Complex::new(0.0, w) - p).norm_sqr() * p.norm_sqr()).product::<f64>();
    let (mut lo, mut hi) = (1e-3f64, 1e3f64);
    for _ in 0..200 {
        let mid = (lo * hi).sqrt();
        if mag2(mid) > 0.5 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let w3 = (lo * hi).sqrt();
    let mut real = None;
    let mut pairs = Vec::new();
    for p in &poles {
        if p.im.abs() < 1e-9 {
            real = Some(-p.re / w3);
        } else if p.im > 0.0 {
            pairs.push((p.norm() / w3, p.norm() / (2.0 * -p.re)));
        }
    }
    pairs.sort_by(|x, y| x.1.total_cmp(&y.1));
    (real, pairs)
}

fn compare_sections(
    rows: &mut Vec<Row>, what: &str, got: (Option<f64>, Vec<(f64, f64)>), want: (Option<f64>, Vec<(f64, f64)>),
    tol: f64, source: &'static str,
) {
    rows.push(row(format!("{what}: number of sections"), got.1.len() as f64, want.1.len() as f64, 0.0, source));
    rows.push(fact(format!("{what}: real pole present alike"), got.0.is_some() == want.0.is_some(), source));
    if let (Some(a), Some(b)) = (got.0, want.0) {
        rows.push(row(format!("{what}: real pole"), a, b, tol, source));
    }
    for (k, (g, w)) in got.1.iter().zip(&want.1).enumerate() {
        rows.push(row(format!("{what}: section {} f_n", k + 1), g.0, w.0, tol, source));
        rows.push(row(format!("{what}: section {} Q", k + 1), g.1, w.1, tol, source));
    }
}

#[test]
fn prototypes_match_the_published_tables() {
    let mut rows = Vec::new();
    for n in 2..=8u32 {
        let p = prototype(ResponseKind::Flat, n).expect("Butterworth prototype");
        let want_pairs: Vec<(f64, f64)> =
            (1..=n / 2).map(|k| (1.0, 1.0 / (2.0 * ((2 * k - 1) as f64 * PI / (2 * n) as f64).sin()))).collect();
        let mut want_pairs = want_pairs;
        want_pairs.sort_by(|x, y| x.1.total_cmp(&y.1));
        compare_sections(
            &mut rows,
            &format!("Butterworth n={n}"),
            sections_of(&p),
            ((n % 2 == 1).then_some(1.0), want_pairs),
            1e-9,
            BUTTER_CLOSED,
        );
        // Every Butterworth prototype is −3 dB at its corner (definition).
        rows.push(row(
            format!("Butterworth n={n}: loss at the corner"),
            p.loss_db(1.0),
            10.0 * 2f64.log10(),
            1e-9,
            "definition of the −3 dB normalisation",
        ));

        let b = prototype(ResponseKind::LinearPhase, n).expect("Bessel prototype");
        compare_sections(
            &mut rows,
            &format!("Bessel n={n}"),
            sections_of(&b),
            bessel_reference(n as usize),
            1e-6,
            BESSEL_EIG,
        );
        rows.push(row(
            format!("Bessel n={n}: loss at the corner"),
            b.loss_db(1.0),
            10.0 * 2f64.log10(),
            1e-9,
            "table normalisation: −3 dB at 1",
        ));
    }
    // Key rows printed in the tables (four digits).
    let key: &[(ResponseKind, u32, usize, f64, f64)] = &[
        (ResponseKind::Flat, 2, 0, 1.0, 0.7071),
        (ResponseKind::Flat, 4, 0, 1.0, 0.5412),
        (ResponseKind::Flat, 4, 1, 1.0, 1.3066),
        (ResponseKind::LinearPhase, 2, 0, 1.2720, 0.5774),
        (ResponseKind::LinearPhase, 4, 0, 1.4302, 0.5219),
        (ResponseKind::LinearPhase, 4, 1, 1.6034, 0.8055),
    ];
    for &(resp, n, k, fsf, q) in key {
        let p = prototype(resp, n).unwrap();
        rows.push(row(format!("{resp:?} n={n} section {} FSF", k + 1), p.pairs[k].fsf, fsf, 1e-4, CM_TABLES));
        rows.push(row(format!("{resp:?} n={n} section {} Q", k + 1), p.pairs[k].q, q, 1e-4, CM_TABLES));
    }
    // The n = 7 real section of the Bessel table (printed 1.648, a misprint for 1.684).
    let b7 = prototype(ResponseKind::LinearPhase, 7).unwrap();
    rows.push(row(
        "Bessel n=7 real section FSF",
        b7.real.unwrap_or(0.0),
        1.684,
        1e-3,
        "Carter & Mancini Table 16.6, corrected per references.md [C]",
    ));
    // Chebyshev 0.5 dB, n = 2: pole −0.713 ± j1.004 (ripple-edge normalised).
    let c2 = prototype(ResponseKind::Steep, 2).unwrap();
    let pole = Complex::new(-0.713, 1.004);
    rows.push(row(
        "Chebyshev 0.5 dB n=2 f_n",
        c2.pairs[0].fsf,
        pole.norm(),
        1e-3,
        "S. Winder, Analog and Digital Filter Design, 2nd ed. (2002), pole table; scipy cheby1 [C]",
    ));
    rows.push(row(
        "Chebyshev 0.5 dB n=2 Q",
        c2.pairs[0].q,
        pole.norm() / (2.0 * 0.713),
        2e-3,
        "S. Winder, Analog and Digital Filter Design, 2nd ed. (2002), pole table; scipy cheby1 [C]",
    ));
    rows.push(row(
        "Chebyshev 0.5 dB n=2: loss at the ripple edge",
        c2.loss_db(1.0),
        0.0,
        1e-9,
        "even order, unity-gain sections: back at the DC level at the ripple edge (definition)",
    ));
    rows.push(row(
        "Chebyshev 0.5 dB n=3: loss at the ripple edge",
        prototype(ResponseKind::Steep, 3).unwrap().loss_db(1.0),
        0.5,
        1e-9,
        "odd order: the ripple depth below DC at the ripple edge (definition)",
    ));
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// 2. Section formulas and standard values

#[test]
fn section_formulas_match_worked_values() {
    const SRC: &str = "references.md, circuit formulas with worked values (each re-checked by nodal analysis) [C]";
    let mut rows = Vec::new();
    // Sallen-Key: (R1, R2, C_f, C_g) → f_n, Q.
    for &(r1, r2, cf, cg, f, q) in
        &[(10e3, 10e3, 20e-9, 10e-9, 1125.395, 0.70711), (4.7e3, 15e3, 22e-9, 4.7e-9, 1864.083, 0.92213)]
    {
        let (gf, gq) = sallen_key(r1, r2, cf, cg);
        rows.push(row(format!("Sallen-Key {r1}/{r2}/{cf}/{cg} f_n"), gf, f, 1e-3, SRC));
        rows.push(row(format!("Sallen-Key {r1}/{r2}/{cf}/{cg} Q"), gq, q, 1e-5, SRC));
    }
    // Multiple feedback: (R1, R2, R3, C_g, C_f) → gain, f_n, Q.
    for &(r1, r2, r3, cg, cf, g, f, q) in &[
        (10e3, 10e3, 10e3, 10e-9, 1e-9, -1.0, 5032.92, 1.05409),
        (10e3, 20e3, 10e3, 47e-9, 2.2e-9, -2.0, 1106.738, 1.30732),
    ] {
        let (gg, gf, gq) = multiple_feedback(r1, r2, r3, cg, cf);
        rows.push(row(format!("MFB {r1}/{r2}/{r3}/{cg}/{cf} gain"), gg, g, 1e-12, SRC));
        rows.push(row(format!("MFB {r1}/{r2}/{r3}/{cg}/{cf} f_n"), gf, f, 1e-2, SRC));
        rows.push(row(format!("MFB {r1}/{r2}/{r3}/{cg}/{cf} Q"), gq, q, 1e-5, SRC));
    }
    // RC corner: 10 kΩ with 10 nF → 1591.549 Hz.
    rows.push(row("first order 10k/10n", response_of(SectionKind::FirstOrder, &[10e3, 10e-9]).0, 1591.549, 1e-3, SRC));

    // Standard values: each realised section stays within a few per cent of the wanted f_n
    // and Q, its capacitors come from their series and its resistors from theirs, and the
    // formulas above recompute the rounded figures (common practice: E24 rounding moves f_n
    // by at most about ½ step).
    const STD: &str = "IEC 60063 series membership; rounding within half a series step (common practice)";
    let cfg =
        PartsConfig { resistors: RoundConfig { series: Series::E24, min: 1e3, max: 1e6 }, capacitors: Series::E6 };
    for &(kind, f, q) in &[
        (SectionKind::SallenKey, 1e3, 0.7071),
        (SectionKind::SallenKey, 15e3, 2.5629),
        (SectionKind::SallenKey, 7.5, 1.3066),
        (SectionKind::MultipleFeedback, 1e3, 0.7071),
        (SectionKind::MultipleFeedback, 25e3, 1.9319),
        (SectionKind::FirstOrder, 440.0, 0.0),
    ] {
        let what = format!("{kind:?} {f} Hz Q {q}");
        let Some(r) = realise(kind, f, q, cfg) else {
            rows.push(fact(format!("{what}: realised"), false, STD));
            continue;
        };
        rows.push(row(format!("{what}: f_n error"), r.f_n / f - 1.0, 0.0, 0.03, STD));
        if kind != SectionKind::FirstOrder {
            rows.push(row(format!("{what}: Q error"), r.q / q - 1.0, 0.0, 0.03, STD));
        }
        let n_r = r.values.len() - if kind == SectionKind::FirstOrder { 1 } else { 2 };
        for (i, v) in r.values.iter().enumerate() {
            let series = if i < n_r { Series::E24 } else { Series::E6 };
            let on = rangefit_engine::values::nearest(series, *v).is_some_and(|s| (s / v - 1.0).abs() < 1e-9);
            rows.push(fact(format!("{what}: value {i} = {v} is in {}", series.name()), on, STD));
        }
        let (rf, rq) = response_of(kind, &r.values);
        rows.push(row(format!("{what}: reported f_n"), r.f_n, rf, 1e-9 * rf, "formulas above"));
        rows.push(row(format!("{what}: reported Q"), r.q, rq, 1e-12, "formulas above"));
    }
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// 3. The alias rule and the settling rule

#[test]
fn alias_and_settling_rules_give_the_published_values() {
    const KESTER: &str =
        "Kester, Data Conversion Handbook (2005), anti-alias rule; references.md worked values [M rule, C values]";
    let mut rows = vec![
        row("full range 12 bits", full_range_db(12), 74.01, 0.005, "6.02N + 1.76 dB (Kester MT-001) [C]"),
        row("full range 16 bits", full_range_db(16), 98.09, 0.005, "6.02N + 1.76 dB (Kester MT-001) [C]"),
        row("required, 12 bits, full-scale content", required_rejection_db(12, 1.0), 74.0, 0.05, KESTER),
        row(
            "required, 12 bits, content at −40 dBFS",
            required_rejection_db(12, 0.01),
            34.01,
            0.005,
            "the rule reduced by the out-of-band level",
        ),
        // 4th-order Butterworth with its corner at 10 kHz, at f_s − band_high = 90 kHz.
        row(
            "4th-order Butterworth at 9 × corner",
            prototype(ResponseKind::Flat, 4).unwrap().loss_db(9.0),
            76.34,
            0.01,
            KESTER,
        ),
        row(
            "settling, 12 bits",
            drive::settling_time_constants(12),
            9.01,
            0.005,
            "ln(2^(N+1)); Silicon Labs AN119 gives ln(2^N·M) for 1/M LSB [C]",
        ),
        row(
            "settling, 16 bits",
            drive::settling_time_constants(16),
            11.78,
            0.005,
            "ln(2^(N+1)); Silicon Labs AN119 [C]",
        ),
    ];
    // The 12-bit, 100 kHz, 10 kHz-band case: the alias frequency and the rule in a design.
    let req = request(
        r#"{"name": "Greenhouse anemometer pulse counter", "source": {"min": 0, "max": 1, "band_high": "10 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "100 kHz"}, "supplies": [3.3]}"#,
    );
    rows.push(row(
        "alias frequency, 100 kHz − 10 kHz",
        filter::alias_frequency(&req).unwrap_or(0.0),
        90e3,
        1e-9,
        "f_s − band_high (definition)",
    ));
    let d = design(&req);
    let a = d.analysis.as_ref().and_then(|a| a.alias).expect("analysis.alias");
    rows.push(row("analysis.alias.required_db", a.required_db, 74.0, 0.05, KESTER));
    rows.push(fact("analysis.alias.achieved_db meets it", a.achieved_db >= a.required_db, KESTER));
    // Oversampling converters: the modulator rate minus band_high.
    let os = request(
        r#"{"name": "Kiln thermocouple logger", "source": {"min": 0, "max": 0.05, "band_high": "10 Hz"},
        "destination": {"min": 0, "max": 2.5, "bits": 24, "sample_rate": "50 Hz", "converter": "oversampling",
        "modulator_rate": "256 kHz"}, "supplies": [5]}"#,
    );
    rows.push(row(
        "alias frequency, oversampling",
        filter::alias_frequency(&os).unwrap_or(0.0),
        256e3 - 10.0,
        1e-9,
        "modulator rate − band_high (definition)",
    ));
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// 4. Designs: the infeasible case, node names, part list

#[test]
fn an_impossible_rule_gives_the_best_filter_and_a_way_out() {
    const SRC: &str =
        "references.md: 16 bits at 48 kHz with a 20 kHz band needs a 34th-order Butterworth at the band edge [C]";
    let req = request(
        r#"{"name": "Chapel organ recording", "source": {"min": -1, "max": 1, "coupling": "ac", "band_low": "20 Hz",
            "band_high": "20 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 16, "sample_rate": "48 kHz"}, "supplies": [3.3]}"#,
    );
    let d = design(&req);
    let f = d.filter.as_ref().expect("a filter is still designed");
    let alias = d.checks.iter().find(|c| c.id == "alias_rejection").expect("alias_rejection check");
    let sf = f.shortfall.as_ref().expect("shortfall");
    let rows = vec![
        fact("the alias check is an error", alias.severity == Severity::Error, SRC),
        row("order stays at max_order", f.order as f64, 8.0, 0.0, "filter.max_order default"),
        fact(
            "no section is absurd (Q < 5)",
            f.sections.iter().all(|s| s.q < 5.0),
            "Butterworth n = 8 has Q ≤ 2.56 (Carter & Mancini Table 16.7)",
        ),
        fact(
            "a sample rate that works is named",
            alias.message.contains("sample rate of") && sf.rate_needed > 48e3 && sf.rate_needed.is_finite(),
            SRC,
        ),
        fact("an oversampling converter is proposed", alias.message.contains("oversampling"), SRC),
        fact(
            "a lower out-of-band level is proposed",
            alias.message.contains("out_of_band_level") && sf.level_db_needed < 0.0,
            SRC,
        ),
        // The named sample rate really makes the rule feasible at order 8.
        {
            let mut r2 = req.clone();
            r2.destination.sample_rate = sf.rate_needed;
            r2.destination.acquisition_time = 0.25 / sf.rate_needed;
            let d2 = design(&r2);
            let ok = d2.filter.as_ref().is_some_and(|f| f.shortfall.is_none() && f.order <= 8)
                && d2.checks.iter().any(|c| c.id == "alias_rejection" && c.severity == Severity::Ok);
            fact("at the named sample rate a filter of order ≤ 8 meets the rule", ok, SRC)
        },
    ];
    check(&rows);
}

/// The node and stage names the schematic and scripts rely on.
#[test]
fn filter_and_drive_parts_carry_stable_names() {
    const API: &str = "circuit module documentation (node names)";
    let mut rows = Vec::new();
    for (what, json, mfb) in [
        (
            "Sallen-Key",
            r#"{"name": "Orchard irrigation flow meter", "source": {"min": 0, "max": 1, "band_high": "100 Hz"},
                "destination": {"min": 0, "max": 3.3, "sample_rate": "2 kHz"}, "supplies": [3.3]}"#,
            false,
        ),
        (
            "multiple feedback",
            r#"{"name": "Lighthouse lamp current", "source": {"min": 0, "max": 1, "band_high": "100 Hz"},
                "destination": {"min": 0, "max": 3.3, "sample_rate": "2 kHz"}, "supplies": [3.3],
                "filter": {"topology": "multiple_feedback", "order": 4}}"#,
            true,
        ),
    ] {
        let d = design(&request(json));
        let c = d.circuit.as_ref().expect("circuit");
        let nodes = c.nodes();
        let has = |n: &str| nodes.iter().any(|m| m == n);
        let f = d.filter.as_ref().expect("filter");
        rows.push(fact(
            format!("{what}: gain stage ends at out1"),
            c.parts.iter().any(|p| p.kind == PartKind::OpAmp && p.stage == StageRole::Gain && p.nodes[4] == "out1"),
            API,
        ));
        for k in 1..=f.sections.len() {
            let kind = f.sections[k - 1].kind;
            let mut want = vec![format!("f{k}p"), format!("f{k}o")];
            if kind != SectionKind::FirstOrder {
                want.push(format!("f{k}a"));
            }
            if kind == SectionKind::MultipleFeedback {
                want.retain(|n| !n.ends_with('p'));
                want.push(format!("f{k}n"));
            }
            for n in want {
                rows.push(fact(format!("{what}: node {n}"), has(&n), API));
            }
        }
        rows.push(fact(format!("{what}: fref present"), has("fref") == mfb, API));
        let drive_r = c.parts.iter().find(|p| p.stage == StageRole::Drive && p.kind == PartKind::Resistor);
        rows.push(fact(
            format!("{what}: drive resistor from the last section to adc"),
            drive_r.is_some_and(|p| p.nodes == [format!("f{}o", f.sections.len()), "adc".to_string()]),
            API,
        ));
        rows.push(fact(
            format!("{what}: charge bucket at adc"),
            c.parts
                .iter()
                .any(|p| p.stage == StageRole::Drive && p.kind == PartKind::Capacitor && p.nodes == ["adc", "0"]),
            API,
        ));
        rows.push(fact(
            format!("{what}: stage list has filter and drive"),
            d.stages.iter().any(|s| s.role == StageRole::Filter) && d.stages.iter().any(|s| s.role == StageRole::Drive),
            API,
        ));
        // Part list: capacitors that set a corner are C0G/NP0 (or film above 100 nF).
        for r in bom(&d).iter().filter(|r| r.kind == "capacitor") {
            let in_filter = r
                .designators
                .iter()
                .any(|des| c.part(des).is_some_and(|p| matches!(p.stage, StageRole::Filter | StageRole::Drive)));
            if in_filter {
                let ok = if r.value_si <= 100e-9 {
                    r.construction.starts_with("C0G/NP0")
                } else {
                    r.construction.starts_with("film")
                };
                rows.push(fact(
                    format!("{what}: {} ({}) is {}", r.designators.join(" "), r.value, r.construction),
                    ok,
                    "EIA-198 class 1 for filter corners (references.md, common practice)",
                ));
            }
        }
    }
    // An oversampling converter gets the drive's RC too (synth::drive): the last section
    // drives the drive resistor, which ends at adc; without a filter the gain stage drives it.
    // (The amplifier's rail equals the converter's range, so no protection resistor is needed.)
    let drive_in = |c: &rangefit_engine::circuit::Circuit| {
        c.with_role(rangefit_engine::circuit::PartRole::DriveResistor)
            .filter(|r| r.nodes.iter().any(|n| n == "adc"))
            .and_then(|r| r.nodes.iter().find(|n| *n != "adc").cloned())
    };
    let os = design(&request(
        r#"{"name": "Kiln thermocouple logger", "source": {"min": 0, "max": 0.05, "band_high": "10 Hz"},
        "destination": {"min": 0, "max": 3.3, "bits": 24, "sample_rate": "50 Hz", "converter": "oversampling",
        "modulator_rate": "256 kHz"}, "supplies": [3.3]}"#,
    ));
    let c = os.circuit.as_ref().expect("circuit");
    let input = drive_in(c);
    rows.push(fact("oversampling: the drive resistor ends at adc", input.is_some(), API));
    rows.push(fact(
        "oversampling: the last section drives the drive resistor",
        c.parts
            .iter()
            .any(|p| p.kind == PartKind::OpAmp && p.stage == StageRole::Filter && Some(&p.nodes[4]) == input.as_ref()),
        API,
    ));
    let none = design(&request(
        r#"{"name": "Kiln thermocouple logger", "source": {"min": 0, "max": 0.05, "band_high": "10 Hz"},
        "destination": {"min": 0, "max": 3.3, "bits": 24, "sample_rate": "50 Hz", "converter": "oversampling",
        "modulator_rate": "256 kHz"}, "supplies": [3.3], "filter": {"response": "none"}}"#,
    ));
    let c = none.circuit.as_ref().expect("circuit");
    let input = drive_in(c);
    rows.push(fact(
        "no filter: the gain stage drives the drive resistor",
        input.is_some() && c.parts.iter().any(|p| p.kind == PartKind::OpAmp && Some(&p.nodes[4]) == input.as_ref()),
        API,
    ));
    let warn = none.checks.iter().find(|c| c.id == "alias_rejection");
    rows.push(fact(
        "response none: a warning states the rejection given up",
        warn.is_some_and(|c| c.severity == Severity::Warning && c.message.contains("given up")),
        "the issue: stated in the checks as a warning",
    ));
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// 5. Against ngspice

/// Requests whose filter attenuation is compared with ngspice: every response, both
/// topologies, AC and DC coupling, single and dual rails, a clamp at the pin.
const SPICE_CASES: &[(&str, &str)] = &[
    (
        "flat, Sallen-Key",
        r#"{"name": "Greenhouse anemometer", "source": {"min": 0, "max": 1, "band_high": "10 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "100 kHz"}, "supplies": [3.3]}"#,
    ),
    (
        "flat, multiple feedback",
        r#"{"name": "Harbour crane load pin", "source": {"min": 0, "max": 1, "band_high": "10 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "100 kHz"}, "supplies": [3.3],
        "filter": {"topology": "multiple_feedback"}}"#,
    ),
    (
        "linear phase",
        r#"{"name": "Beehive weight pulses", "source": {"min": 0, "max": 1, "band_high": "1 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "50 kHz"}, "supplies": [3.3],
        "filter": {"response": "linear_phase", "passband_error": "0.5 dB"}}"#,
    ),
    (
        "steep, AC",
        r#"{"name": "Mill-race hydrophone", "source": {"min": 1.0, "max": 1.4, "coupling": "ac", "impedance": "600",
            "band_low": "50 Hz", "band_high": "4 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "32 kHz", "impedance": "20k"},
        "supplies": [3.3], "filter": {"response": "steep"}}"#,
    ),
    (
        "inverting multiple feedback, dual rails",
        r#"{"name": "Signal-box track circuit", "source": {"min": -1, "max": 1, "coupling": "ac", "band_low": "10 Hz",
            "band_high": "1 kHz"},
        "destination": {"min": -5, "max": 5, "bits": 12, "sample_rate": "10 kHz"}, "supplies": [12, -12],
        "keep_polarity": false, "filter": {"topology": "multiple_feedback", "order": 6}}"#,
    ),
    (
        "clamp to ground, ±12 V into 0–3.3 V",
        r#"{"name": "Pumping-station level", "source": {"min": -10, "max": 10, "band_high": "100 Hz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "1 kHz"}, "supplies": [12, -12]}"#,
    ),
];

/// Runs a deck in ngspice and returns every `name = value` that `print` wrote.
fn ngspice(tag: &str, deck: &str) -> Vec<(String, f64)> {
    let path = std::env::temp_dir().join(format!(
        "rangefit-filter-{}-{}.cir",
        std::process::id(),
        tag.replace(|c: char| !c.is_ascii_alphanumeric(), "-")
    ));
    std::fs::write(&path, deck).expect("write deck");
    let out = Command::new("ngspice").arg("-b").arg(&path).output();
    let _ = std::fs::remove_file(&path);
    let out = out.unwrap_or_else(|e| {
        panic!("ngspice is needed as the independent simulator (Debian: apt-get install ngspice): {e}")
    });
    String::from_utf8_lossy(&out.stdout)
        .lines()
        .filter_map(|l| {
            let (a, b) = l.split_once('=')?;
            let name = a.trim().to_ascii_lowercase();
            (name.contains('(') && !name.contains(' ')).then_some(())?;
            Some((name, b.split_whitespace().next()?.parse().ok()?))
        })
        .collect()
}

/// |H| at `f` from ngspice for the netlist of `d`.
fn spice_gain(tag: &str, req: &Request, d: &Design, freqs: &[f64]) -> Vec<f64> {
    let net = netlist(req, d.circuit.as_ref().expect("circuit"), NetlistConfig { testbench: false });
    let body = net.trim_end().strip_suffix(".end").expect("netlist ends with .end");
    let mut control = String::new();
    for f in freqs {
        control.push_str(&format!("ac lin 1 {f:e} {f:e}\nprint vr(adc) vi(adc)\n"));
    }
    let deck = format!("{body}.control\n{control}quit\n.endc\n.end\n");
    let v = ngspice(tag, &deck);
    assert_eq!(v.len(), 2 * freqs.len(), "[{tag}] ngspice printed {v:?}\n{deck}");
    v.chunks(2).map(|p| p[0].1.hypot(p[1].1)).collect()
}

#[test]
fn attenuation_at_the_alias_frequency_matches_ngspice() {
    const SRC: &str = "ngspice (Debian ngspice-39) AC analysis of the exported netlist, within 1 dB";
    let mut rows = Vec::new();
    for (what, json) in SPICE_CASES {
        let req = request(json);
        let d = design(&req);
        let errors: Vec<&str> = d
            .checks
            .iter()
            .filter(|c| c.severity == Severity::Error && c.id != "yield")
            .map(|c| c.message.as_str())
            .collect();
        rows.push(fact(format!("{what}: no error checks {errors:?}"), errors.is_empty(), "design contract"));
        let a = d.analysis.as_ref().and_then(|a| a.alias).expect("analysis.alias");
        let s = &req.source;
        // Mid-band: DC coupling far below the corner (flat to 1e-6 dB there), AC the band's middle.
        let f_ref = if s.coupling == Coupling::Ac { (s.band_low * s.band_high).sqrt() } else { s.band_high * 1e-3 };
        let g = spice_gain(what, &req, &d, &[f_ref, a.frequency]);
        let spice_db = 20.0 * (g[0] / g[1]).log10();
        println!(
            "{what:<45} alias {:>9.1} Hz: engine {:7.2} dB, ngspice {:7.2} dB (required {:.2} dB)",
            a.frequency, a.achieved_db, spice_db, a.required_db
        );
        rows.push(row(format!("{what}: rejection at {} Hz", a.frequency), a.achieved_db, spice_db, 1.0, SRC));
        // The rounded sections' own figure (ideal amplifiers) tells the same story.
        let f = d.filter.as_ref().expect("filter");
        rows.push(row(format!("{what}: rounded-section figure against ngspice"), f.rounded_db, spice_db, 1.0, SRC));
        rows.push(fact(format!("{what}: meets the rule"), a.achieved_db >= a.required_db, "the alias rule"));
    }
    check(&rows);
}

/// Requests whose first-order pole goes into the gain stage: inverting stages (a capacitor
/// across the feedback resistor) and a divider into the + input (a capacitor from the +
/// input to ground).
const MERGE_CASES: &[(&str, &str)] = &[
    (
        "inverting, + on a divider",
        r#"{"name": "Quarry blast microphone", "source": {"min": -2, "max": 0, "band_high": "1 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "20 kHz"}, "supplies": [3.3],
        "keep_polarity": false, "filter": {"order": 5}}"#,
    ),
    (
        "inverting summer, split rails",
        r#"{"name": "Dam seepage probe", "source": {"min": 0, "max": 2, "band_high": "1 kHz"},
        "destination": {"min": -2, "max": 2, "bits": 12, "sample_rate": "20 kHz"}, "supplies": [5, -5],
        "keep_polarity": false, "filter": {"order": 5}}"#,
    ),
    (
        "divider into the + input",
        r#"{"name": "Tram feeder monitor", "source": {"min": 0, "max": 10, "band_high": "1 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "20 kHz"}, "supplies": [12, -12],
        "keep_polarity": false, "filter": {"order": 5}}"#,
    ),
];

#[test]
fn the_first_pole_built_into_the_gain_stage_saves_an_amplifier_and_keeps_the_rule() {
    const SRC: &str = "ngspice (Debian ngspice-39) AC analysis of the exported netlist";
    let mut rows = Vec::new();
    for (what, json) in MERGE_CASES {
        let req = request(json);
        let d = design(&req);
        let f = d.filter.as_ref().expect("filter");
        let c = d.circuit.as_ref().expect("circuit");
        rows.push(fact(
            format!("{what}: section 1 is in the gain stage"),
            f.sections.first().is_some_and(|s| s.in_gain_stage && s.kind == SectionKind::FirstOrder),
            "design contract",
        ));
        let amps = c.parts.iter().filter(|p| p.kind == PartKind::OpAmp).count();
        let separate = f.sections.iter().filter(|s| !s.in_gain_stage).count();
        rows.push(row(
            format!("{what}: amplifiers (gain stage + separate sections)"),
            amps as f64,
            (1 + separate) as f64,
            0.0,
            "one amplifier saved",
        ));
        // The pole from the parts: 1/(2π·R·C) with R the feedback resistor across which the
        // capacitor sits, or, for a capacitor from the + input to ground, the resistance the
        // + input sees (its resistors in parallel, the sensor's impedance in series with the
        // one from the sensor; Thévenin) — first-order RC, closed form.
        let cap =
            c.parts.iter().find(|p| p.purpose.contains("built into the gain stage")).expect("the merged capacitor");
        let resistors = || c.parts.iter().filter(|p| p.kind == PartKind::Resistor && !p.bench);
        let r = if cap.nodes.iter().any(|n| n == "0") {
            let node = cap.nodes.iter().find(|n| *n != "0").expect("node");
            let rs = c.part("RSENSE").map_or(0.0, |p| p.value);
            1.0 / resistors()
                .filter(|p| p.nodes.contains(node))
                .map(|p| 1.0 / (p.value + if p.nodes.iter().any(|n| n == "sense") { rs } else { 0.0 }))
                .sum::<f64>()
        } else {
            resistors().find(|p| p.nodes.iter().all(|n| cap.nodes.contains(n))).expect("feedback resistor").value
        };
        // 1e-6: the bench models an ideal sensor as 1 mΩ, which the design leaves out.
        rows.push(row(
            format!("{what}: pole 1/(2π R C)"),
            f.sections[0].f_n_rounded,
            1.0 / (2.0 * PI * r * cap.value),
            1e-6 * f.sections[0].f_n_rounded,
            "first-order RC, closed form",
        ));
        let a = d.analysis.as_ref().expect("analysis");
        let x = a.alias.expect("analysis.alias");
        let g = spice_gain(&format!("merge-{what}"), &req, &d, &[a.ac.f_mid, x.frequency, req.source.band_high]);
        let rejection = 20.0 * (g[0] / g[1]).log10();
        let edge = 20.0 * (g[2] / g[0]).log10();
        rows.push(row(format!("{what}: rejection at the alias frequency"), x.achieved_db, rejection, 1.0, SRC));
        rows.push(fact(
            format!("{what}: ngspice's rejection {rejection:.1} dB meets the rule's {:.1} dB", x.required_db),
            rejection >= x.required_db,
            "the alias rule",
        ));
        rows.push(row(
            format!("{what}: gain at band_high relative to mid-band"),
            a.ac.gain_band_high_db - a.ac.gain_mid_db,
            edge,
            0.05,
            SRC,
        ));
        rows.push(fact(
            format!("{what}: ngspice's in-band error {edge:+.3} dB within the {} dB allowed", f.passband_allowed_db),
            edge.abs() <= f.passband_allowed_db + 0.01,
            SRC,
        ));
    }
    check(&rows);
}

/// Requests no other test holds, drawn from a seeded generator (rand_chacha ChaCha8Rng,
/// seed 20261202): resolution, sample rate, band, response, topology, out-of-band level,
/// coupling, rails and converter range at random. For each, the rejection the engine
/// claims at the alias frequency and its gain at band_high relative to mid-band (the
/// in-band flatness) must match ngspice on the exported netlist.
#[test]
fn random_requests_claim_what_ngspice_simulates() {
    use rand::{Rng, SeedableRng};
    const SRC: &str = "ngspice (Debian ngspice-39) AC analysis of the exported netlist";
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(20261202);
    let mut rows = Vec::new();
    let mut simulated = 0;
    for i in 0..12 {
        let bits = [10, 12, 14, 16][rng.random_range(0..4)];
        let fs = 10f64.powf(rng.random_range(2.5..5.5));
        let band_high = fs * rng.random_range(0.02..0.3);
        let response = ["flat", "linear_phase", "steep"][rng.random_range(0..3)];
        let topology = ["sallen_key", "multiple_feedback"][rng.random_range(0..2)];
        let level = ["1", "0.1", "0.01"][rng.random_range(0..3)];
        let (supplies, dest_max) = [("[3.3]", 3.3), ("[5]", 5.0), ("[12, -12]", 5.0)][rng.random_range(0..3)];
        let min: f64 = rng.random_range(-1.0..1.0);
        let max = min + rng.random_range(0.05..3.0);
        let source = if rng.random_bool(0.3) {
            let band_low = band_high * rng.random_range(0.001..0.05);
            format!(
                r#"{{"min": {min:.4}, "max": {max:.4}, "coupling": "ac", "band_low": {band_low:.4},
                    "band_high": {band_high:.4}}}"#
            )
        } else {
            format!(r#"{{"min": {min:.4}, "max": {max:.4}, "band_high": {band_high:.4}}}"#)
        };
        let json = format!(
            r#"{{"name": "Random bench {i}", "source": {source}, "destination": {{"min": 0, "max": {dest_max},
                "bits": {bits}, "sample_rate": {fs:.3}}},
            "supplies": {supplies}, "keep_polarity": false, "filter": {{"response": "{response}",
            "topology": "{topology}", "out_of_band_level": {level}}}}}"#
        );
        let req = request(&json);
        let d = design(&req);
        let (Some(a), Some(_)) = (d.analysis.as_ref(), d.circuit.as_ref()) else {
            println!(
                "case {i}: no circuit ({:?})",
                d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| &c.message).collect::<Vec<_>>()
            );
            continue;
        };
        simulated += 1;
        let what = format!(
            "case {i} ({bits} bits, fs {fs:.0} Hz, band {band_high:.0} Hz, {response}, {topology}, \
            level {level}, rails {supplies})"
        );
        let g = spice_gain(&format!("random-{i}"), &req, &d, &[a.ac.f_mid, req.source.band_high]);
        let flat_spice = 20.0 * (g[1] / g[0]).log10();
        let flat_engine = a.ac.gain_band_high_db - a.ac.gain_mid_db;
        rows.push(row(
            format!("{what}: gain at band_high relative to mid-band, dB"),
            flat_engine,
            flat_spice,
            0.05,
            SRC,
        ));
        if let Some(f) = &d.filter {
            let warned = d.checks.iter().any(|c| c.id == "band_flatness" && c.severity == Severity::Error);
            let beyond = flat_spice.abs() > f.passband_allowed_db + 0.01;
            rows.push(fact(
                format!(
                    "{what}: band_flatness is an error exactly when ngspice's band-edge error \
                {flat_spice:+.3} dB exceeds the {} dB allowed",
                    f.passband_allowed_db
                ),
                warned == beyond || (flat_spice.abs() - f.passband_allowed_db).abs() < 0.01,
                SRC,
            ));
        }
        if let Some(x) = a.alias {
            let g = spice_gain(&format!("random-{i}-alias"), &req, &d, &[a.ac.f_mid, x.frequency]);
            let spice_db = 20.0 * (g[0] / g[1]).log10();
            println!(
                "{what}: alias {:.0} Hz engine {:.2} dB ngspice {:.2} dB; band edge engine {flat_engine:.3} dB \
                ngspice {flat_spice:.3} dB",
                x.frequency, x.achieved_db, spice_db
            );
            rows.push(row(format!("{what}: rejection at the alias frequency, dB"), x.achieved_db, spice_db, 1.0, SRC));
        }
    }
    rows.push(fact(
        format!("at least 9 of 12 random requests built and simulated ({simulated})"),
        simulated >= 9,
        "test design",
    ));
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// 6. Malformed and odd requests

#[test]
fn filter_fields_are_read_and_refused_by_name() {
    const BASE: &str = r#"{"name": "Tram-stop display light sensor", "source": {"min": 0, "max": 1,
        "band_high": "100 Hz"}, "destination": {"min": 0, "max": 3.3, "sample_rate": "2 kHz"DEST},
        "supplies": [3.3]FILTER}"#;
    let with = |dest: &str, filter: &str| BASE.replace("DEST", dest).replace("FILTER", filter);
    let refused: &[(&str, &str, &str)] = &[
        ("", r#", "filter": {"response": "wobbly"}"#, "filter.response"),
        ("", r#", "filter": {"order": 0}"#, "filter.order"),
        ("", r#", "filter": {"order": 9}"#, "filter.order"),
        ("", r#", "filter": {"max_order": 13}"#, "filter.max_order"),
        ("", r#", "filter": {"topology": "ladder"}"#, "filter.topology"),
        ("", r#", "filter": {"passband_error": "5 dB"}"#, "filter.passband_error"),
        ("", r#", "filter": {"out_of_band_level": "+3 dB"}"#, "filter.out_of_band_level"),
        ("", r#", "filter": {"out_of_band_level": 2}"#, "filter.out_of_band_level"),
        ("", r#", "filter": {"ripple": 1}"#, "filter.ripple"),
        (r#", "converter": "flash""#, "", "destination.converter"),
        (r#", "converter": "oversampling""#, "", "destination.modulator_rate"),
        (r#", "modulator_rate": "1 MHz""#, "", "destination.modulator_rate"),
        (r#", "acquisition_time": "1 s""#, "", "destination.acquisition_time"),
        (r#", "input_capacitance": "-5 pF""#, "", "destination.input_capacitance"),
    ];
    let mut rows = Vec::new();
    for (dest, filter, field) in refused {
        let text = with(dest, filter);
        let got = Request::from_json(&text).err().map(|e| e.field).unwrap_or_default();
        rows.push(fact(
            format!("{dest}{filter}: refused naming {field} (got {got:?})"),
            got == *field,
            "request contract: errors name the field",
        ));
    }
    // Accepted forms normalise to SI numbers and fractions.
    let r = request(&with(
        r#", "converter": "sar", "acquisition_time": "2 µs", "input_capacitance": "30 pF""#,
        r#", "filter": {"response": "steep", "passband_error": "0.2 dB", "out_of_band_level": "-40 dB"}"#,
    ));
    rows.push(row("out_of_band_level −40 dB", r.filter.out_of_band_level, 0.01, 1e-12, "20·log10(0.01) = −40"));
    rows.push(row("passband_error 0.2 dB", r.filter.passband_error, 0.2, 1e-12, "request contract"));
    rows.push(row("acquisition_time 2 µs", r.destination.acquisition_time, 2e-6, 1e-18, "request contract"));
    rows.push(row(
        "steep default passband error",
        request(&with("", r#", "filter": {"response": "steep"}"#)).filter.passband_error,
        0.5,
        0.0,
        "README: the steep response's ripple",
    ));
    rows.push(row(
        "default acquisition time, a quarter period",
        request(&with("", "")).destination.acquisition_time,
        0.25 / 2000.0,
        1e-15,
        "README default",
    ));
    check(&rows);
}

#[test]
fn odd_filter_requests_never_panic() {
    // Our own extreme corners of the request space: every response at the order limits,
    // bands far below and far above the parts' reach, tiny and full passband errors.
    let mut done = 0;
    for response in ["flat", "linear_phase", "steep", "none"] {
        for (band, fs) in [("0.01 Hz", "1 Hz"), ("10 Hz", "1 kHz"), ("200 kHz", "1 MHz"), ("5 MHz", "40 MHz")] {
            for filter in [
                r#""max_order": 1"#,
                r#""order": 12, "max_order": 12"#,
                r#""passband_error": "3 dB""#,
                r#""passband_error": 0.001, "topology": "multiple_feedback""#,
            ] {
                for coupling in [r#""coupling": "dc""#, r#""coupling": "ac", "band_low": "0.001 Hz""#] {
                    let json = format!(
                        r#"{{"name": "odd", "source": {{"min": -0.5, "max": 0.5, {coupling}, "band_high": "{band}"}},
                            "destination": {{"min": 0, "max": 3.3, "bits": 16, "sample_rate": "{fs}"}},
                            "supplies": [5, -5], "keep_polarity": false,
                            "filter": {{"response": "{response}", {filter}}}, "analysis": {{"monte_carlo_runs": 10}}}}"#
                    );
                    let Ok(req) = Request::from_json(&json) else { continue };
                    let d = design(&req);
                    if let Some(f) = &d.filter {
                        assert!(
                            f.order >= 1
                                && f.order <= 12
                                && f.sections.iter().all(|s| s.f_n.is_finite() && s.q.is_finite()),
                            "{json}"
                        );
                    }
                    let _ = serde_json::to_string(&d).expect("serialises");
                    done += 1;
                }
            }
        }
    }
    assert!(done > 100, "only {done} requests read");
}
