//! Solver and synthesis checks against closed-form circuits, a naive reference solve and
//! facts of the trade. Sources are named beside each table row.

use rangefit_engine::amplifier::{Amplifier, Rails};
use rangefit_engine::circuit::{Builder, Circuit, PartKind, StageRole};
use rangefit_engine::request::{AmplifierSpec, Request};
use rangefit_engine::solve::Solver;
use rangefit_engine::synth::{self, dc::Template, Limits};
use rangefit_engine::{design, values};

/// An amplifier close to ideal but with the same macro-model the designs use.
fn amp(gbw: f64, a0: f64) -> Amplifier {
    let spec = AmplifierSpec {
        gbw: Some(gbw),
        open_loop_gain: Some(a0),
        swing_low: Some(0.0),
        swing_high: Some(0.0),
        cm_low: Some(0.0),
        cm_high: Some(0.0),
        ..AmplifierSpec::default()
    };
    Amplifier::resolve(&spec, Rails { pos: 15.0, neg: -15.0 })
}

/// A circuit on ±15 V with the sensor as VSENSE into node `sense` (through 1 mΩ).
fn circuit(a: Amplifier, build: impl Fn(&mut Builder)) -> Circuit {
    let mut b = Builder::default();
    b.bench("VSENSE", PartKind::VoltageSource, 0.0, &["emf", "0"], StageRole::Sensor, "source");
    b.bench("RSENSE", PartKind::Resistor, 1e-3, &["emf", "sense"], StageRole::Sensor, "source impedance");
    b.bench("VPOS", PartKind::VoltageSource, 15.0, &["vpos", "0"], StageRole::Supply, "rail");
    b.bench("VNEG", PartKind::VoltageSource, -15.0, &["vneg", "0"], StageRole::Supply, "rail");
    build(&mut b);
    Circuit { parts: b.parts, stages: vec![], amplifier: a, rail_pos: 15.0, rail_neg: -15.0 }
}

fn r(b: &mut Builder, v: f64, a: &str, c: &str) {
    b.add(PartKind::Resistor, v, None, &[a, c], StageRole::Gain, "");
}
fn c(b: &mut Builder, v: f64, a: &str, n: &str) {
    b.add(PartKind::Capacitor, v, None, &[a, n], StageRole::Gain, "");
}
fn u(b: &mut Builder, inp: &str, inn: &str) {
    b.add(PartKind::OpAmp, 0.0, None, &[inp, inn, "vpos", "vneg", "adc"], StageRole::Gain, "");
}

/// −3 dB frequency from the solver's response at node `adc`, relative to `ref_f`, searching upward.
fn f3db(c: &Circuit, ref_f: f64, upward: bool) -> f64 {
    let s = Solver::new(c);
    let h0 = s.transfer(ref_f, "adc").unwrap().norm();
    let mag = |f: f64| s.transfer(f, "adc").unwrap().norm();
    let (mut a, mut b) = if upward { (ref_f, ref_f * 1e8) } else { (ref_f * 1e-8, ref_f) };
    for _ in 0..200 {
        let m = (a * b).sqrt();
        let below = mag(m) < h0 / 2f64.sqrt();
        if below == upward {
            b = m;
        } else {
            a = m;
        }
    }
    (a * b).sqrt()
}

/// One closed-form case: a circuit, what to measure, the expected value and the tolerance.
struct Case {
    name: &'static str,
    circuit: Circuit,
    measure: fn(&Circuit) -> f64,
    expected: f64,
    rel_tol: f64,
}

fn check(case: Case) {
    let got = (case.measure)(&case.circuit);
    let err = (got / case.expected - 1.0).abs();
    assert!(
        err <= case.rel_tol,
        "{}: got {got}, expected {} (relative error {err:.2e} > {:.0e})",
        case.name,
        case.expected,
        case.rel_tol
    );
}

fn dc_gain(c: &Circuit) -> f64 {
    let s = Solver::new(c);
    let y1 = s.dc(1e-3).unwrap().voltage("adc").unwrap();
    let y0 = s.dc(0.0).unwrap().voltage("adc").unwrap();
    (y1 - y0) / 1e-3
}

#[test]
fn solver_matches_closed_form_circuits() {
    let ideal = amp(1e12, 1e9);
    let cases = vec![
        // RC high-pass f_c = 1/(2πRC): 10 kΩ with 1 µF → 15.9 Hz (common practice); 10 kΩ with
        // 10 nF → 1591.549 Hz (references.md, re-checked by nodal analysis).
        Case {
            name: "RC high-pass 10k/1µ",
            circuit: circuit(ideal.clone(), |b| {
                c(b, 1e-6, "sense", "inp1");
                r(b, 10e3, "inp1", "0");
                u(b, "inp1", "adc");
            }),
            measure: |c| f3db(c, 1e6, false),
            expected: 1.0 / (2.0 * std::f64::consts::PI * 10e3 * 1e-6),
            rel_tol: 1e-6,
        },
        Case {
            name: "RC high-pass 10k/10n",
            circuit: circuit(ideal.clone(), |b| {
                c(b, 10e-9, "sense", "inp1");
                r(b, 10e3, "inp1", "0");
                u(b, "inp1", "adc");
            }),
            measure: |c| f3db(c, 1e8, false),
            expected: 1591.549,
            rel_tol: 1e-6,
        },
        // Inverting −R_f/R_in: 100k/10k → −10; non-inverting 1 + R_f/R_g → 11 (references.md).
        Case {
            name: "inverting 100k/10k",
            circuit: circuit(ideal.clone(), |b| {
                r(b, 10e3, "sense", "inn1");
                r(b, 100e3, "adc", "inn1");
                u(b, "0", "inn1");
            }),
            measure: dc_gain,
            expected: -10.0,
            rel_tol: 1e-6,
        },
        Case {
            name: "non-inverting 1+100k/10k",
            circuit: circuit(ideal.clone(), |b| {
                r(b, 10e3, "inn1", "0");
                r(b, 100e3, "adc", "inn1");
                u(b, "sense", "inn1");
            }),
            measure: dc_gain,
            expected: 11.0,
            rel_tol: 1e-6,
        },
        // Closed-loop bandwidth of a single-pole amplifier = GBW / noise gain:
        // 10 MHz, noise gain 11 → 909.09 kHz (references.md).
        Case {
            name: "closed-loop bandwidth",
            circuit: circuit(amp(10e6, 1e6), |b| {
                r(b, 10e3, "inn1", "0");
                r(b, 100e3, "adc", "inn1");
                u(b, "sense", "inn1");
            }),
            measure: |c| f3db(c, 10.0, true),
            expected: 909.09e3,
            rel_tol: 2e-4,
        },
        // Unity-gain Sallen-Key low-pass: R1 10k, R2 10k, C_f 20 nF, C_g 10 nF → f_n 1125.395 Hz,
        // Q 0.70711 (references.md); at Q = 1/√2 the −3 dB point equals f_n (Butterworth).
        Case {
            name: "Sallen-Key 10k/10k/20n/10n",
            circuit: circuit(ideal.clone(), |b| {
                r(b, 10e3, "sense", "n1");
                r(b, 10e3, "n1", "inp1");
                c(b, 20e-9, "n1", "adc");
                c(b, 10e-9, "inp1", "0");
                u(b, "inp1", "adc");
            }),
            measure: |c| f3db(c, 1.0, true),
            expected: 1125.395,
            rel_tol: 1e-5,
        },
        // Second worked Sallen-Key: 4.7k, 15k, 22 nF, 4.7 nF → f_n 1864.083 Hz, Q 0.92213
        // (references.md); −3 dB point of a second-order low-pass from f_n and Q:
        // f = f_n·√(1 − 1/(2Q²) + √((1 − 1/(2Q²))² + 1)) (standard second-order result).
        Case {
            name: "Sallen-Key 4.7k/15k/22n/4.7n",
            circuit: circuit(ideal.clone(), |b| {
                r(b, 4.7e3, "sense", "n1");
                r(b, 15e3, "n1", "inp1");
                c(b, 22e-9, "n1", "adc");
                c(b, 4.7e-9, "inp1", "0");
                u(b, "inp1", "adc");
            }),
            measure: |c| f3db(c, 1.0, true),
            expected: {
                let (fnat, q) = (1864.083f64, 0.92213f64);
                let a = 1.0 - 1.0 / (2.0 * q * q);
                fnat * (a + (a * a + 1.0).sqrt()).sqrt()
            },
            rel_tol: 1e-4,
        },
        // Transimpedance stage, single-pole amplifier model (references.md, Graeme,
        // "Photodiode Amplifiers", 1996, from memory for the book): R_f 1 MΩ, C_in 10 pF,
        // GBW 10 MHz with the maximally flat C_f = 0.5640 pF → −3 dB at 388.15 kHz
        // (re-checked by nodal analysis in references.md). The photocurrent is VSENSE
        // through 1 GΩ; tolerance 1 % for that resistor and the finite open-loop gain.
        Case {
            name: "transimpedance 1M/10p/0.564p",
            circuit: circuit(amp(10e6, 1e7), |b| {
                r(b, 1e9, "sense", "inn1");
                c(b, 10e-12, "inn1", "0");
                r(b, 1e6, "adc", "inn1");
                c(b, 0.5640e-12, "adc", "inn1");
                u(b, "0", "inn1");
            }),
            measure: |c| f3db(c, 10.0, true),
            expected: 388.15e3,
            rel_tol: 1e-2,
        },
        // Multiple-feedback low-pass (R1 in→A, R2 A→out, R3 A→−in, C_g A→gnd, C_f out→−in):
        // 10k,10k,10k,10 nF,1 nF → gain −1, f_n 5032.92 Hz, Q 1.05409 (references.md);
        // a second-order low-pass has |H(f_n)| = Q·|H(0)|.
        Case { name: "MFB DC gain", circuit: mfb(ideal.clone()), measure: dc_gain, expected: -1.0, rel_tol: 1e-6 },
        Case {
            name: "MFB |H(f_n)| = Q",
            circuit: mfb(ideal.clone()),
            measure: |c| Solver::new(c).transfer(5032.92, "adc").unwrap().norm(),
            expected: 1.05409,
            rel_tol: 1e-4,
        },
    ];
    for case in cases {
        check(case);
    }
}

fn mfb(a: Amplifier) -> Circuit {
    circuit(a, |b| {
        r(b, 10e3, "sense", "na");
        r(b, 10e3, "na", "adc");
        r(b, 10e3, "na", "inn1");
        c(b, 10e-9, "na", "0");
        c(b, 1e-9, "adc", "inn1");
        u(b, "0", "inn1");
    })
}

/// Naive reference: Gaussian elimination with partial pivoting on the nodal equations of a
/// resistor network driven by one voltage source (written out here so it shares no code
/// with the engine's nalgebra-based solver).
#[allow(clippy::needless_range_loop)] // a naive reference: written in the textbook index form on purpose
fn naive_nodal(n: usize, resistors: &[(usize, usize, f64)], source_node: usize, volts: f64) -> Vec<f64> {
    // Unknowns: nodes 1..n (0 is ground); the source node is fixed by replacing its row.
    let mut a = vec![vec![0.0; n + 1]; n];
    for &(p, q, r) in resistors {
        let g = 1.0 / r;
        for (x, y) in [(p, q), (q, p)] {
            if x > 0 {
                a[x - 1][x - 1] += g;
                if y > 0 {
                    a[x - 1][y - 1] -= g;
                }
            }
        }
    }
    let row = source_node - 1;
    a[row] = vec![0.0; n + 1];
    a[row][row] = 1.0;
    a[row][n] = volts;
    for col in 0..n {
        let piv = (col..n).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs())).unwrap();
        a.swap(col, piv);
        for i in 0..n {
            if i != col {
                let f = a[i][col] / a[col][col];
                for k in col..=n {
                    a[i][k] -= f * a[col][k];
                }
            }
        }
    }
    (0..n).map(|i| a[i][n] / a[i][i]).collect()
}

#[test]
fn solver_matches_naive_reference_on_seeded_ladders() {
    // Seeded linear congruential generator (Numerical Recipes constants, from memory).
    let mut state: u64 = 0x5eed_1234;
    let mut rnd = || {
        state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    for trial in 0..50 {
        let n = 3 + (rnd() * 6.0) as usize; // nodes 1..n
        let mut resistors = Vec::new();
        for k in 1..n {
            resistors.push((k, k + 1, 10f64.powf(2.0 + 4.0 * rnd())));
            resistors.push((k + 1, 0, 10f64.powf(2.0 + 4.0 * rnd())));
        }
        resistors.push((1, n, 10f64.powf(2.0 + 4.0 * rnd())));
        let volts = 10.0 * rnd() - 5.0;
        let reference = naive_nodal(n, &resistors, 1, volts);
        let name = |k: usize| {
            if k == 0 {
                "0".to_string()
            } else if k == 1 {
                "emf".to_string()
            } else {
                format!("n{k}")
            }
        };
        let mut b = Builder::default();
        b.bench("VSENSE", PartKind::VoltageSource, 0.0, &["emf", "0"], StageRole::Sensor, "");
        for (p, q, r) in &resistors {
            b.add(PartKind::Resistor, *r, None, &[&name(*p), &name(*q)], StageRole::Gain, "");
        }
        let c = Circuit { parts: b.parts, stages: vec![], amplifier: amp(1e6, 1e5), rail_pos: 5.0, rail_neg: 0.0 };
        let sol = Solver::new(&c).dc(volts).unwrap();
        for k in 2..=n {
            let got = sol.voltage(&name(k)).unwrap();
            let want = reference[k - 1];
            // Tolerance: gmin (1e-12 S) against kΩ-range nodes moves voltages by < 1e-8 relative.
            assert!((got - want).abs() <= 1e-7 * (1.0 + want.abs()), "trial {trial} node {k}: {got} vs {want}");
        }
    }
}

fn request(json: &str) -> Request {
    Request::from_json(json).unwrap_or_else(|e| panic!("request: {e}"))
}

/// Facts of the trade (common practice, no single source).
#[test]
fn facts_of_the_trade() {
    // ±0.25 V on a 0.8 V DC level, AC-coupled into a 0–5 V input centred on 2.5 V, needs a
    // gain magnitude of 10 (common practice). Headroom 0, an output that reaches the rails
    // and a rail held exact.
    let req = request(
        r#"{"name": "fact", "source": {"min": 0.55, "max": 1.05, "coupling": "ac", "band_low": "100 Hz",
            "band_high": "5 kHz"},
            "destination": {"min": 0, "max": 5, "sample_rate": "50 kHz", "headroom": 0},
            "supplies": [5], "supply_tolerance": 0, "amplifier": {"swing_low": 0, "swing_high": 0}}"#,
    );
    let d = design(&req);
    let p = d.predicted.expect("design");
    assert!((p.gain.abs() - 10.0).abs() < 0.05, "gain {}", p.gain);
    assert!((p.offset - 2.5).abs() < 0.025, "DC level {}", p.offset);
    // Two equal resistors from 5 V give a 2.5 V mid-supply reference (common practice): the
    // reference divider of that design has equal legs.
    let legs: Vec<f64> =
        d.parts.iter().filter(|r| r.purpose.starts_with("reference divider")).map(|r| r.value).collect();
    assert_eq!(legs.len(), 2, "{:?}", d.parts);
    assert_eq!(legs[0], legs[1]);
    // and the best E24 divider for one half is two equal values (common practice).
    let div = values::best_divider(values::Series::E24, 0.5, None, values::Window::RESISTOR_DEFAULT).unwrap();
    assert_eq!(div.top, div.bottom);
    // A 10 kΩ input resistor with a 1 µF coupling capacitor gives a 15.9 Hz corner, below a
    // 100 Hz band edge (common practice): f = 1/(2π·10 kΩ·1 µF).
    let f = 1.0 / (2.0 * std::f64::consts::PI * 10e3 * 1e-6);
    assert_eq!(rangefit_engine::units::format(f, rangefit_engine::units::Quantity::Frequency), "15.9 Hz");
    assert!(p.band_low.unwrap() < 100.0);
}

/// The four sign cases of y = m·x + b on one supply (the gain-and-offset method for
/// single-supply stages; each case re-derived here by nodal analysis in the engine's solver
/// and by the ideal closed form recomputed from the part values).
struct SignCase {
    name: &'static str,
    template: Template,
    json: &'static str,
}

fn check_sign_case(case: &SignCase) {
    let req = request(case.json);
    let rails = Rails::choose(&req);
    let amp = Amplifier::resolve(&req.amplifier, rails);
    let mut notes = Vec::new();
    let t = synth::target(&req, &amp, rails, &mut notes).expect("target");
    let s = synth::dc::synthesize_with(&req, &amp, rails, t, Limits::of(&amp, rails), &[case.template])
        .unwrap_or_else(|| panic!("{}: no design", case.name));
    let p = rangefit_engine::design::predict(&req, &s.circuit).unwrap();
    let span = req.destination.max - req.destination.min;
    let (want_min, want_max) = if case.template.inverting() { (t.at_max, t.at_min) } else { (t.at_min, t.at_max) };
    // Tolerance: 1 % of the span for a single forced template (the full design picks the
    // best template and pulls the target in; its mapping is checked against ngspice to 0.5 %
    // in tests/spice.rs). A forced inverting stage rounds its gain pair and its divider
    // separately in E96 (ratios near 4 are sparse: 4.22k/1.07k = 3.944 is the nearest below
    // 4 that is not exact), which leaves up to about 0.7 % at an end.
    for (got, want) in [(p.output_at_min, want_min), (p.output_at_max, want_max)] {
        assert!((got - want).abs() <= 0.01 * span, "{}: output {got} vs wanted {want}", case.name);
    }
    assert_eq!(p.gain < 0.0, case.template.inverting(), "{}: sign of m", case.name);
}

#[test]
fn four_sign_cases_of_gain_and_offset() {
    let cases = [
        // m > 0, b > 0: 0.1–1.1 V into 0.5–4.5 V (m = 4, b = +0.1 V).
        SignCase {
            name: "m>0 b>0",
            template: Template::NonInvertingPlus,
            json: r#"{"source": {"min": 0.1, "max": 1.1, "band_high": 100}, "destination": {"min": 0, "max": 5,
                "sample_rate": 1000, "headroom": 0.1}, "supplies": [5], "parts": {"resistor_series": "E96"}}"#,
        },
        // m > 0, b < 0: 1–2 V into 0.5–4.5 V (m = 4, b = −3.5 V).
        SignCase {
            name: "m>0 b<0",
            template: Template::NonInvertingMinus,
            json: r#"{"source": {"min": 1, "max": 2, "band_high": 100}, "destination": {"min": 0, "max": 5,
                "sample_rate": 1000, "headroom": 0.1}, "supplies": [5], "parts": {"resistor_series": "E96"}}"#,
        },
        // m < 0, b > 0: 0–1 V into 4.5–0.5 V (m = −4, b = +4.5 V).
        SignCase {
            name: "m<0 b>0",
            template: Template::InvertingPlus,
            json: r#"{"source": {"min": 0, "max": 1, "band_high": 100}, "destination": {"min": 0, "max": 5,
                "sample_rate": 1000, "headroom": 0.1}, "supplies": [5], "keep_polarity": false,
                "parts": {"resistor_series": "E96"}}"#,
        },
        // m < 0, b < 0: −2…−1 V into 4.5–0.5 V (m = −4, b = −3.5 V).
        SignCase {
            name: "m<0 b<0",
            template: Template::InvertingSum,
            json: r#"{"source": {"min": -2, "max": -1, "band_high": 100}, "destination": {"min": 0, "max": 5,
                "sample_rate": 1000, "headroom": 0.1}, "supplies": [5], "keep_polarity": false,
                "parts": {"resistor_series": "E96"}}"#,
        },
    ];
    for case in &cases {
        check_sign_case(case);
    }
}

/// Closed form recomputed from the part values of a finished design (textbook formulas:
/// superposition at the + input, non-inverting gain 1 + R_f/R_g), against the solver's
/// prediction with the finite-gain amplifier (open-loop gain 1e5 → within 0.05 %).
#[test]
fn predicted_matches_closed_form_from_part_values() {
    let req = request(
        r#"{"name": "river gauge", "source": {"min": -1, "max": 1, "impedance": 0, "band_high": 10},
            "destination": {"min": 0, "max": 3.3, "sample_rate": 100}, "supplies": [3.3],
            "parts": {"resistor_series": "E24"}}"#,
    );
    let d = design(&req);
    let c = d.circuit.as_ref().expect("circuit");
    let p = d.predicted.unwrap();
    let val = |purpose: &str| c.parts.iter().find(|p| p.purpose.starts_with(purpose)).map(|p| p.value);
    let ra = val("input resistor from the sensor").expect("sensor leg");
    let rp = val("offset leg of the + input network").expect("rail leg");
    let rz = val("lower leg of the + input divider");
    let (rg, rf) = (val("gain-setting resistor"), val("feedback resistor"));
    let closed = |x: f64| {
        let mut g = 1.0 / ra + 1.0 / rp;
        let mut num = x / ra + 3.3 / rp;
        if let Some(rz) = rz {
            g += 1.0 / rz;
            num += 0.0;
        }
        let vp = num / g;
        match (rg, rf) {
            (Some(rg), Some(rf)) => vp * (1.0 + rf / rg),
            _ => vp,
        }
    };
    for (x, got) in [(-1.0, p.output_at_min), (1.0, p.output_at_max)] {
        let want = closed(x);
        assert!((got - want).abs() <= 5e-4 * want.abs().max(0.1), "x = {x}: solver {got}, closed form {want}");
    }
}
