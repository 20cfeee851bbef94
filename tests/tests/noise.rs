//! Noise analysis (`rangefit_engine::analysis::noise`) against outside references.
//!
//! * Johnson–Nyquist noise, kT/C and the ideal converter's LSB, quantisation noise, SNR and
//!   ENOB against the confirmed values of `tests/REFERENCES.md` ("Noise and
//!   conversion"); the source is named beside each row.
//! * A single resistor into a buffer: √(4kTR·Δf), and with amplifier noise of known density
//!   the quadrature sum of uncorrelated sources.
//! * Designs of our own scenarios against ngspice's `.noise` analysis of the exported netlist
//!   over the same band: resistor noise within 5 % (the contract). The netlist's amplifier
//!   model has no noise of its own except its internal resistor and clamp diodes; ngspice
//!   reports their share, which must be negligible.
//! * The converter figures are consistent with the output noise, and no demo design gives a
//!   non-finite number.
//!
//! ngspice must be installed (Debian package `ngspice`); without it the cross-check fails,
//! it never skips.

use std::collections::BTreeMap;
use std::time::Instant;

use rangefit_engine::amplifier::{Amplifier, Rails};
use rangefit_engine::analysis::noise::{self, NoiseAnalysis, NoiseConfig};
use rangefit_engine::circuit::{Builder, Circuit, PartKind, StageRole};
use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::request::AmplifierSpec;
use rangefit_engine::{demos, design, Request};
use rangefit_tests::rows::{check, row_rel};

/// Boltzmann constant, J/K, exact since the 2019 SI redefinition.
const K_B: f64 = 1.380649e-23;

/// ngspice runs at its default 27 °C.
const NGSPICE_KELVIN: f64 = 300.15;

/// The contract against ngspice: integrated output noise within 5 %.
const SPICE_TOL: f64 = 0.05;

// ---------------------------------------------------------------------------------------
// Hand-built circuits

fn request(json: &str) -> Request {
    Request::from_json(json).unwrap_or_else(|e| panic!("request does not read: {e}"))
}

/// A well-behaved amplifier (GBW 1 GHz, gain 1e9) with the given noise figures.
fn quiet_amp(e_n: f64, i_n: f64, corner: f64) -> Amplifier {
    let spec = AmplifierSpec {
        gbw: Some(1e9),
        open_loop_gain: Some(1e9),
        swing_low: Some(0.0),
        swing_high: Some(0.0),
        cm_low: Some(0.0),
        cm_high: Some(0.0),
        noise_voltage: Some(e_n),
        noise_current: Some(i_n),
        noise_corner: Some(corner),
        ..AmplifierSpec::default()
    };
    Amplifier::resolve(&spec, Rails { pos: 5.0, neg: -5.0 })
}

/// The sensor (EMF behind `ohms`) straight into a unity buffer that drives the converter.
fn resistor_into_buffer(ohms: f64, amp: Amplifier) -> Circuit {
    let mut b = Builder::default();
    b.bench("VSENSE", PartKind::VoltageSource, 0.0, &["emf", "0"], StageRole::Sensor, "sensor EMF");
    b.bench("RSENSE", PartKind::Resistor, ohms, &["emf", "sense"], StageRole::Sensor, "sensor impedance");
    b.bench("VPOS", PartKind::VoltageSource, 5.0, &["vpos", "0"], StageRole::Supply, "rail");
    b.bench("VNEG", PartKind::VoltageSource, -5.0, &["vneg", "0"], StageRole::Supply, "rail");
    b.add(PartKind::OpAmp, amp.gbw, None, &["sense", "adc", "vpos", "vneg", "adc"], StageRole::Gain, "buffer");
    b.bench("RADC", PartKind::Resistor, 10e3, &["adc", "0"], StageRole::Converter, "converter input");
    Circuit { parts: b.parts, stages: vec![], amplifier: amp, rail_pos: 5.0, rail_neg: -5.0 }
}

/// The sensor behind `ohms` loaded by `farads` at the converter input, no amplifier.
fn rc(ohms: f64, farads: f64) -> Circuit {
    let mut b = Builder::default();
    b.bench("VSENSE", PartKind::VoltageSource, 0.0, &["emf", "0"], StageRole::Sensor, "sensor EMF");
    b.bench("RSENSE", PartKind::Resistor, ohms, &["emf", "adc"], StageRole::Sensor, "sensor impedance");
    b.add(PartKind::Capacitor, farads, None, &["adc", "0"], StageRole::Converter, "sampling capacitor");
    Circuit { parts: b.parts, stages: vec![], amplifier: quiet_amp(0.0, 0.0, 0.0), rail_pos: 5.0, rail_neg: -5.0 }
}

/// A DC-coupled request: a soil-temperature probe logged by a 3.3 V, 12-bit oversampling
/// converter with output rate `sample_rate`, so the band runs from 0.1 Hz to `sample_rate`/2.
fn probe_request(sample_rate: f64) -> Request {
    probe_request_for(sample_rate, "oversampling")
}

/// The probe's request for a converter of kind `converter` ("sar" or "oversampling").
fn probe_request_for(sample_rate: f64, converter: &str) -> Request {
    let modulator = if converter == "oversampling" {
        format!(r#", "modulator_rate": {}"#, (64.0 * sample_rate).min(1e10))
    } else {
        String::new()
    };
    request(&format!(
        r#"{{"name": "Soil-temperature probe", "source": {{"min": 0, "max": 1, "impedance": "10k", "band_high": 1}},
            "destination": {{"min": 0, "max": 3.3, "bits": 12, "sample_rate": {sample_rate},
            "converter": "{converter}"{modulator}}}, "supplies": [5, -5]}}"#
    ))
}

fn cfg(temperature: f64, points: usize, include_amplifier: bool) -> NoiseConfig {
    NoiseConfig { temperature, points, include_amplifier }
}

fn contributor(a: &NoiseAnalysis, part: &str) -> f64 {
    a.contributors.iter().find(|c| c.part == part).map(|c| c.output_rms).unwrap_or(f64::NAN)
}

// ---------------------------------------------------------------------------------------
// 1. Reference values

#[test]
fn johnson_noise_and_conversion_match_references() {
    const REF_C: &str = "references.md: Johnson–Nyquist √(4kTR), k = 1.380649e-23 J/K (SI 2019)";
    const REF_KTC: &str = "references.md: kT/C at 300 K, 10 pF → 20.352 µV rms";
    const REF_ADC: &str = "references.md: Kester, MT-001: SNR = 6.02N + 1.76 dB, LSB = FSR/2^N, q/√12";
    const REF_ENOB: &str = "references.md: Kester, MT-001: ENOB = (SINAD − 1.76)/6.02";

    // kT/C: 10 MΩ into 10 pF (corner 1.59 kHz), integrated from 0.1 Hz to 2.5 GHz, which
    // misses (2/π)·(0.1 Hz / 1.59 kHz) = 4e-5 of the total below and 4e-7 above.
    let ktc = noise::noise(&probe_request(5e9), &rc(10e6, 10e-12), 1.0, &cfg(300.0, 2000, false));

    // A circuit with no noise at all (0 K, amplifier left out): the converter's own figures.
    let ideal = noise::noise(
        &probe_request(100.0),
        &resistor_into_buffer(10e3, quiet_amp(0.0, 0.0, 0.0)),
        1.0,
        &cfg(0.0, 160, false),
    );

    check(&[
        row_rel("√(4kTR), 1 kΩ, 300 K (V/√Hz)", noise::johnson_density(1e3, 300.0), 4.0704e-9, 1e-4, 0.0, REF_C),
        row_rel(
            "√(4kTR·Δf), 10 kΩ, 300 K, 10 kHz (V rms)",
            noise::johnson_density(10e3, 300.0) * 1e4f64.sqrt(),
            1.2872e-6,
            1e-4,
            0.0,
            REF_C,
        ),
        row_rel("Boltzmann constant (J/K)", noise::BOLTZMANN, 1.380649e-23, 0.0, 0.0, REF_C),
        row_rel(
            "kT/C from the analysis, 10 kΩ and 10 pF, 300 K (V rms)",
            ktc.output_rms,
            20.352e-6,
            0.005,
            0.0,
            REF_KTC,
        ),
        row_rel("ideal SNR, 12 bits (dB)", noise::ideal_snr_db(12), 74.01, 0.0, 0.005, REF_ADC),
        row_rel("ideal SNR, 16 bits (dB)", noise::ideal_snr_db(16), 98.09, 0.0, 0.005, REF_ADC),
        row_rel("LSB, 3.3 V, 12 bits (V)", noise::lsb(3.3, 12), 805.66e-6, 1e-5, 0.0, REF_ADC),
        row_rel(
            "q/√12, 3.3 V, 12 bits (V rms)",
            noise::quantization_rms(noise::lsb(3.3, 12)),
            232.58e-6,
            3e-5,
            0.0,
            REF_ADC,
        ),
        row_rel("ENOB of a 74.01 dB SINAD (bits)", noise::enob(74.01), 12.0, 0.0, 0.005, REF_ENOB),
        row_rel("noiseless 3.3 V 12-bit design: output noise (V)", ideal.output_rms, 0.0, 0.0, 0.0, REF_ADC),
        row_rel("noiseless 3.3 V 12-bit design: lsb (V)", ideal.lsb, 805.66e-6, 1e-5, 0.0, REF_ADC),
        row_rel(
            "noiseless 3.3 V 12-bit design: quantization_rms (V)",
            ideal.quantization_rms,
            232.58e-6,
            3e-5,
            0.0,
            REF_ADC,
        ),
        row_rel("noiseless 3.3 V 12-bit design: snr_db (dB)", ideal.snr_db, 74.01, 0.0, 0.005, REF_ADC),
        row_rel("noiseless 3.3 V 12-bit design: enob (bits)", ideal.enob, 12.0, 0.0, 0.005, REF_ENOB),
    ]);
}

// ---------------------------------------------------------------------------------------
// 2. One resistor into a buffer

#[test]
fn resistor_into_buffer_gives_johnson_noise() {
    const REF_C: &str = "references.md: Johnson–Nyquist √(4kTR·Δf), k exact (SI 2019)";
    const REF_SUM: &str =
        "uncorrelated sources add in power; 1/f density e²(1 + f_c/f) integrates to e²(Δf + f_c·ln(f_hi/f_lo))";
    const RULE: &str = "band rule of analysis::noise: DC coupling 0.1 Hz … Nyquist (oversampling converter)";
    let t = 300.0;
    let r = 10e3;
    // 20 kHz sampling: the band is 0.1 Hz … 10 kHz.
    let req = probe_request(20e3);
    let quiet = noise::noise(&req, &resistor_into_buffer(r, quiet_amp(0.0, 0.0, 0.0)), 1.0, &cfg(t, 160, false));
    let [f_lo, f_hi] = quiet.band;
    let df = f_hi - f_lo;
    let johnson = (4.0 * K_B * t * r * df).sqrt();

    // Amplifier noise of known density: e_n 20 nV/√Hz, i_n 1 pA/√Hz, corner 100 Hz.
    let (e_n, i_n, f_c) = (20e-9, 1e-12, 100.0);
    let noisy = noise::noise(&req, &resistor_into_buffer(r, quiet_amp(e_n, i_n, f_c)), 1.0, &cfg(t, 160, true));
    let flicker = df + f_c * (f_hi / f_lo).ln();
    let want_v = e_n * flicker.sqrt();
    let want_i = i_n * r * flicker.sqrt();
    let want_total = (johnson.powi(2) + want_v.powi(2) + want_i.powi(2)).sqrt();

    // A sampling converter takes the buffer's whole roll-off: the follower's closed-loop pole
    // sits at GBW·(1 + 1/A0), and |H|² = 1/(1 + (f/f_b)²) integrates to f_b·(atan(f_hi/f_b) −
    // atan(f_lo/f_b)).
    let amp = quiet_amp(0.0, 0.0, 0.0);
    let sampled =
        noise::noise(&probe_request_for(20e3, "sar"), &resistor_into_buffer(r, amp.clone()), 1.0, &cfg(t, 160, false));
    let f_b = amp.gbw * (1.0 + 1.0 / amp.open_loop_gain);
    let [s_lo, s_hi] = sampled.band;
    let rolled = (4.0 * K_B * t * r * f_b * ((s_hi / f_b).atan() - (s_lo / f_b).atan())).sqrt();
    const SAMPLED: &str = "single-pole roll-off integrated in closed form; sampling band rule of analysis::noise";

    check(&[
        row_rel(
            "sampling converter: band high within 10…100 × GBW",
            (s_hi >= 10.0 * amp.gbw && s_hi <= 100.0 * amp.gbw * (1.0 + 1e-9)) as u8 as f64,
            1.0,
            0.0,
            0.0,
            SAMPLED,
        ),
        row_rel(
            "sampling converter: 10 kΩ through the buffer's roll-off (V rms)",
            sampled.output_rms,
            rolled,
            0.005,
            0.0,
            SAMPLED,
        ),
        row_rel("band low (Hz)", f_lo, 0.1, 0.0, 0.0, RULE),
        row_rel("band high (Hz)", f_hi, 10e3, 0.0, 0.0, RULE),
        row_rel("10 kΩ into a buffer, resistors only (V rms)", quiet.output_rms, johnson, 0.005, 0.0, REF_C),
        row_rel(
            "10 kΩ over 10 kHz, 300 K (V rms)",
            quiet.output_rms,
            1.2872e-6,
            0.005,
            0.0,
            "references.md: 10 kΩ at 300 K over 10 kHz → 1.2872 µV rms",
        ),
        row_rel("RSENSE contribution (V rms)", contributor(&quiet, "RSENSE"), johnson, 0.005, 0.0, REF_C),
        row_rel(
            "RADC contribution, driven by the buffer (V rms)",
            contributor(&quiet, "RADC"),
            0.0,
            0.0,
            1e-12,
            "a resistor across an ideal voltage source makes no noise there",
        ),
        row_rel("input-referred, gain 1 (V rms)", quiet.input_rms, johnson, 0.005, 0.0, REF_C),
        row_rel(
            "with amplifier: U1 voltage noise (V rms)",
            contributor(&noisy, "U1 voltage noise"),
            want_v,
            0.005,
            0.0,
            REF_SUM,
        ),
        row_rel(
            "with amplifier: U1 current noise through 10 kΩ (V rms)",
            contributor(&noisy, "U1 current noise"),
            want_i,
            0.005,
            0.0,
            REF_SUM,
        ),
        row_rel("with amplifier: total (V rms)", noisy.output_rms, want_total, 0.005, 0.0, REF_SUM),
        row_rel(
            "with amplifier: contributors",
            noisy.contributors.len() as f64,
            4.0,
            0.0,
            0.0,
            "two resistors and the amplifier's two sources",
        ),
    ]);
}

// ---------------------------------------------------------------------------------------
// 3. ngspice

/// A request of our own.
struct Scenario {
    name: &'static str,
    json: &'static str,
}

/// Our own scenarios: AC and DC coupling, gains 0.5 … 40, sensor impedance 0 … 10 kΩ, rails
/// 3.3 V, 5 V and ±12 V. All numbers are invented for them.
const SCENARIOS: &[Scenario] = &[
    // DC, 3.3 V, gain ≈ 37, ideal (0 Ω) sensor.
    Scenario {
        name: "orchard frost-alarm thermocouple",
        json: r#"{"name": "Orchard frost-alarm thermocouple amplifier",
            "source": {"min": 0, "max": "80 mV", "impedance": 0, "band_high": "5 Hz"},
            "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "50 Hz", "impedance": "100k"},
            "supplies": [3.3]}"#,
    },
    // AC, 5 V, gain ≈ 22, 4.7 kΩ sensor; frame vibration above 500 Hz stays 40 dB below
    // full scale, which lets the anti-alias filter meet the rule for 16 bits at 2 kHz.
    Scenario {
        name: "bicycle-frame strain gauge",
        json: r#"{"name": "Bicycle-frame strain gauge",
            "source": {"min": 2.4, "max": 2.6, "coupling": "ac", "impedance": "4.7k", "band_low": "5 Hz",
            "band_high": "500 Hz"},
            "destination": {"min": 0, "max": 5, "bits": 16, "sample_rate": "2 kHz", "impedance": "47k"},
            "supplies": [5], "parts": {"resistor_series": "E96"}, "filter": {"out_of_band_level": "-40 dB"}}"#,
    },
    // DC, ±12 V, gain 0.5, 10 kΩ sensor.
    Scenario {
        name: "ferry engine-room temperature transmitter",
        json: r#"{"name": "Ferry engine-room temperature transmitter",
            "source": {"min": "-4.5 V", "max": "4.5 V", "impedance": "10k", "band_high": "2 Hz"},
            "destination": {"min": -2.5, "max": 2.5, "bits": 16, "sample_rate": "20 Hz", "impedance": "1M"},
            "supplies": [12, -12]}"#,
    },
    // AC, 3.3 V, gain ≈ 2, 1 kΩ sensor; knocks put little above 5 kHz (40 dB below full
    // scale), so the anti-alias filter can meet the rule at 16 kHz; its rounded parts leave
    // 0.15 dB at the band edge, so the case allows 0.2 dB there.
    Scenario {
        name: "stable-door knock sensor",
        json: r#"{"name": "Stable-door knock sensor",
            "source": {"min": 1.0, "max": 2.4, "coupling": "ac", "impedance": "1k", "band_low": "50 Hz",
            "band_high": "5 kHz"},
            "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "16 kHz", "impedance": "20k"},
            "supplies": [3.3], "filter": {"out_of_band_level": "-40 dB", "passband_error": "0.2 dB"}}"#,
    },
    // AC, ±12 V, gain ≈ 37, 2.2 kΩ sensor, bipolar converter input; ground vibration above
    // 300 Hz stays 60 dB below full scale (the band edge lies close to Nyquist, so the rule
    // needs that much).
    Scenario {
        name: "tunnel-boring vibration geophone",
        json: r#"{"name": "Tunnel-boring vibration geophone",
            "source": {"min": "-120 mV", "max": "120 mV", "coupling": "ac", "impedance": "2.2k", "band_low": "1 Hz",
            "band_high": "300 Hz"},
            "destination": {"min": -5, "max": 5, "bits": 16, "sample_rate": "1 kHz", "impedance": "1M"},
            "supplies": [12, -12], "filter": {"out_of_band_level": "-60 dB"}}"#,
    },
    // DC, 5 V, gain ≈ 4.5 with an offset, 2.2 kΩ sensor.
    Scenario {
        name: "compost-heap temperature probe",
        json: r#"{"name": "Compost-heap temperature probe",
            "source": {"min": "0.2 V", "max": "1.2 V", "impedance": "2.2k", "band_high": "1 Hz"},
            "destination": {"min": 0, "max": 5, "bits": 14, "sample_rate": "10 Hz", "impedance": "200k"},
            "supplies": [5], "parts": {"resistor_series": "E12"}}"#,
    },
];

/// Every `name = value` line ngspice printed, per section (sections split by `echo ==part==`).
fn parse_sections(stdout: &str) -> Vec<BTreeMap<String, f64>> {
    let mut out = vec![BTreeMap::new()];
    for line in stdout.lines() {
        if line.trim() == "==part==" {
            out.push(BTreeMap::new());
            continue;
        }
        let Some((lhs, rhs)) = line.split_once(" = ") else { continue };
        let name = lhs.trim().to_ascii_lowercase();
        if name.is_empty() || name.contains(char::is_whitespace) {
            continue;
        }
        if let Some(v) = rhs.split_whitespace().next().and_then(|s| s.parse::<f64>().ok()) {
            if let Some(last) = out.last_mut() {
                last.insert(name, v);
            }
        }
    }
    out
}

/// Runs `deck` in ngspice batch mode and returns its standard output (shared runner in
/// the tests crate's library).
fn run_ngspice(tag: &str, deck: &str) -> String {
    let (ok, stdout, stderr) = rangefit_tests::run_ngspice(tag, deck);
    assert!(ok, "[{tag}] ngspice failed:\n{stderr}\n{stdout}\n--- deck ---\n{deck}");
    stdout
}

/// ngspice's `.noise` over exactly `[f_lo, f_hi]`: a decade sweep of 20 points per decade up
/// to the last grid point below `f_hi`, then one linear step to `f_hi` (ngspice integrates
/// only up to the last point of its sweep). Returns the integrated output noise of every
/// vector, the pieces added in power.
fn ngspice_noise(tag: &str, net: &str, f_lo: f64, f_hi: f64) -> BTreeMap<String, f64> {
    let per_decade = 20.0;
    let steps = (per_decade * (f_hi / f_lo).log10() + 1e-9).floor();
    let f_x = f_lo * 10f64.powf(steps / per_decade);
    let mut control = Vec::new();
    if steps >= 1.0 {
        control.push(format!("noise v(adc) VSENSE dec {per_decade} {:e} {:e} 1", f_lo, f_x * (1.0 + 1e-9)));
        control.push("print all".to_string());
        control.push("echo ==part==".to_string());
    }
    let start = if steps >= 1.0 { f_x } else { f_lo };
    if f_hi > start * (1.0 + 1e-9) {
        control.push(format!("noise v(adc) VSENSE lin 2 {:e} {:e} 1", start, f_hi));
        control.push("print all".to_string());
    }
    let body = net.trim_end();
    assert_eq!(body.lines().last(), Some(".end"), "the netlist must end with .end");
    let deck = format!("{}.control\n{}\nquit\n.endc\n.end\n", &body[..body.len() - ".end".len()], control.join("\n"));
    let mut total = BTreeMap::new();
    for section in parse_sections(&run_ngspice(tag, &deck)) {
        for (k, v) in section {
            *total.entry(k).or_insert(0.0) += v * v;
        }
    }
    assert!(total.contains_key("onoise_total"), "[{tag}] ngspice printed no onoise_total\n--- deck ---\n{deck}");
    total.into_iter().map(|(k, v)| (k, f64::sqrt(v))).collect()
}

#[test]
fn resistor_noise_matches_ngspice() {
    const SRC: &str = "ngspice .noise, onoise_total over the same band";
    let mut rows = Vec::new();
    let mut worst = (0.0f64, "");
    let mut worst_internal = (0.0f64, "");
    for s in SCENARIOS {
        let req = request(s.json);
        let d = design(&req);
        // The yield (clipped builds, the rails' tolerance) and an electrolytic's leakage (the
        // geophone's 220 µF DC block) are not this test's subject; they are checked in
        // tests/tolerance.rs and tests/bench_truth.rs.
        let errors: Vec<&str> = d
            .checks
            .iter()
            .filter(|c| c.severity == Severity::Error && c.id != "yield" && c.id != "leakage")
            .map(|c| c.message.as_str())
            .collect();
        assert!(errors.is_empty(), "[{}] design has errors: {errors:?}", s.name);
        let (Some(circuit), Some(p)) = (d.circuit.as_ref(), d.predicted) else { panic!("[{}] no circuit", s.name) };
        let a = noise::noise(&req, circuit, p.gain, &cfg(NGSPICE_KELVIN, 160, false));
        let [f_lo, f_hi] = a.band;
        let net = netlist(&req, circuit, NetlistConfig { testbench: false });
        let spice = ngspice_noise(s.name, &net, f_lo, f_hi);
        let total = spice["onoise_total"];
        let dev = (a.output_rms / total - 1.0).abs();
        println!(
            "{:<45} gain {:>8.3}, band {:.4e} … {:.4e} Hz: engine {:.5e} V, ngspice {:.5e} V, deviation {:.2e}",
            s.name, p.gain, f_lo, f_hi, a.output_rms, total, dev
        );
        if dev > worst.0 {
            worst = (dev, s.name);
        }
        rows.push(row_rel(format!("{}: output noise", s.name), a.output_rms, total, SPICE_TOL, 0.0, SRC));
        // Part by part, for the parts that matter (≥ 0.1 % of the total).
        for c in &a.contributors {
            let key = format!("onoise_total_{}", c.part.to_ascii_lowercase());
            let Some(&want) = spice.get(&key) else {
                rows.push(row_rel(format!("{}: {} missing in ngspice", s.name, c.part), 1.0, 0.0, 0.0, 0.0, SRC));
                continue;
            };
            rows.push(row_rel(format!("{}: {}", s.name, c.part), c.output_rms, want, SPICE_TOL, 1e-3 * total, SRC));
        }
        // What ngspice counts that the engine leaves out: the amplifier model's internal
        // resistor and clamp diodes. Their share of the output noise power must be negligible.
        let internal: f64 = spice
            .iter()
            .filter(|(k, _)| {
                let k = k.as_str();
                (k.starts_with("onoise_total_r.x") || k.starts_with("onoise_total_d.x")) && k.matches('_').count() == 2
            })
            .map(|(_, v)| v * v)
            .sum::<f64>();
        let share = internal / (total * total);
        println!("{:<45} amplifier-internal R and diodes: {:.3e} of the output noise power", "", share);
        if share > worst_internal.0 {
            worst_internal = (share, s.name);
        }
        rows.push(row_rel(
            format!("{}: amplifier-internal share of noise power", s.name),
            share,
            0.0,
            0.0,
            1e-4,
            "ngspice per-device summary",
        ));
    }
    println!("worst deviation from ngspice: {:.2e} ({})", worst.0, worst.1);
    println!("largest amplifier-internal noise power share: {:.3e} ({})", worst_internal.0, worst_internal.1);
    check(&rows);
}

/// The amplifiers' white voltage noise against ngspice: the exported netlist's amplifier
/// model gets a noise-equivalent resistor e_n²/(4kT) in series with its + input (no current
/// flows there, so the operating point is unchanged), and the engine runs with the same
/// amplifier (white voltage noise only: no current noise, no 1/f corner). Over the sampling
/// band this is the noise the converter folds: the filter sections' noise gain peaking near
/// f₀ and every amplifier's roll-off above its GBW included.
#[test]
fn amplifier_noise_over_the_sampled_band_matches_ngspice() {
    const SRC: &str = "ngspice .noise, onoise_total over the same band; noise-equivalent resistor e_n²/(4kT)";
    let mut rows = Vec::new();
    for s in SCENARIOS {
        let req = request(s.json);
        let d = design(&req);
        let (Some(built), Some(p)) = (d.circuit.as_ref(), d.predicted) else { panic!("[{}] no circuit", s.name) };
        let mut circuit = built.clone();
        circuit.amplifier.noise_current = 0.0;
        circuit.amplifier.noise_corner = 0.0;
        let e_n = circuit.amplifier.noise_voltage;
        let a = noise::noise(&req, &circuit, p.gain, &cfg(NGSPICE_KELVIN, 160, true));
        let [f_lo, f_hi] = a.band;
        let r_en = e_n * e_n / (4.0 * K_B * NGSPICE_KELVIN);
        let net = netlist(&req, &circuit, NetlistConfig { testbench: false });
        let g1 = net.lines().find(|l| l.starts_with("G1 0 x inp inn ")).expect("the amplifier model's input stage");
        let noisy = net.replacen(g1, &format!("RNOISE inp inpn {r_en:e}\n{}", g1.replacen(" inp ", " inpn ", 1)), 1);
        let spice = ngspice_noise(s.name, &noisy, f_lo, f_hi);
        let total = spice["onoise_total"];
        let share = contributor_share(&a, "voltage noise");
        println!(
            "{:<45} band {:.3e} … {:.3e} Hz: engine {:.5e} V (amplifiers {:.0} % of the power), ngspice {:.5e} V, \
             deviation {:.2e}",
            s.name,
            f_lo,
            f_hi,
            a.output_rms,
            100.0 * share,
            total,
            (a.output_rms / total - 1.0).abs()
        );
        rows.push(row_rel(
            format!("{}: output noise with amplifier noise", s.name),
            a.output_rms,
            total,
            SPICE_TOL,
            0.0,
            SRC,
        ));
    }
    check(&rows);
}

/// Share of the output noise power from the contributors whose name contains `part`.
fn contributor_share(a: &NoiseAnalysis, part: &str) -> f64 {
    let p: f64 = a.contributors.iter().filter(|c| c.part.contains(part)).map(|c| c.output_rms.powi(2)).sum();
    if a.output_rms > 0.0 {
        p / a.output_rms.powi(2)
    } else {
        0.0
    }
}

// ---------------------------------------------------------------------------------------
// 4. Consistency and the demos

#[test]
fn converter_figures_are_consistent_and_demos_finite() {
    const DEF: &str = "definitions in analysis::noise (references.md, Kester MT-001)";
    const BAND_RULE: &str = "band rule of analysis::noise (sampling: REACH × fastest corner; oversampling: Nyquist)";
    let mut rows = Vec::new();
    for demo in demos::ALL {
        let req = request(demo.json);
        let d = design(&req);
        let (Some(circuit), Some(p)) = (d.circuit.as_ref(), d.predicted) else { panic!("[{}] no circuit", demo.id) };
        let start = Instant::now();
        let a = noise::noise(
            &req,
            circuit,
            p.gain,
            &NoiseConfig { temperature: req.analysis.temperature, ..NoiseConfig::default() },
        );
        println!(
            "[{}] one noise analysis took {:?}; output {:.4e} V rms = {:.3} LSB, SNR {:.2} dB, ENOB {:.2}",
            demo.id,
            start.elapsed(),
            a.output_rms,
            a.lsb_ratio,
            a.snr_db,
            a.enob
        );
        let id = demo.id;
        let nyquist = 0.5 * req.destination.sample_rate;
        // A sampling converter: up to REACH × the fastest corner, or where the tail stopped
        // (at least a decade past that corner); an oversampling one: Nyquist.
        let corner = noise::fastest_corner(circuit).unwrap_or(nyquist);
        let (band_min, band_max) = if req.destination.converter.samples() {
            (10.0 * corner, noise::REACH * corner)
        } else {
            (nyquist, nyquist)
        };
        let span = req.destination.max - req.destination.min;
        let fs_rms = span / (2.0 * 2f64.sqrt());
        let numbers = [
            a.band[0],
            a.band[1],
            a.output_rms,
            a.input_rms,
            a.lsb,
            a.quantization_rms,
            a.lsb_ratio,
            a.snr_db,
            a.enob,
            a.temperature,
        ];
        let bad = numbers
            .iter()
            .chain(a.contributors.iter().map(|c| &c.output_rms))
            .chain(a.density.iter().flat_map(|p| [&p.f, &p.output]))
            .filter(|x| !x.is_finite())
            .count();
        let rss = a.contributors.iter().map(|c| c.output_rms.powi(2)).sum::<f64>().sqrt();
        let sorted = a.contributors.windows(2).all(|w| w[0].output_rms >= w[1].output_rms);
        let resistors = circuit.parts.iter().filter(|q| q.kind == PartKind::Resistor).count();
        let amplifiers = circuit.parts.iter().filter(|q| q.kind == PartKind::OpAmp).count();
        let has = |name: &str| a.contributors.iter().any(|c| c.part == name) as u8 as f64;
        rows.extend([
            row_rel(format!("{id}: non-finite numbers"), bad as f64, 0.0, 0.0, 0.0, "never NaN"),
            row_rel(
                format!("{id}: output noise is positive"),
                (a.output_rms > 0.0) as u8 as f64,
                1.0,
                0.0,
                0.0,
                "resistors are noisy above 0 K",
            ),
            row_rel(format!("{id}: lsb_ratio"), a.lsb_ratio, a.output_rms / a.lsb, 1e-12, 0.0, DEF),
            row_rel(
                format!("{id}: lsb"),
                a.lsb,
                span / 2f64.powi(req.destination.bits as i32),
                1e-12,
                0.0,
                "references.md: LSB = FSR/2^N",
            ),
            row_rel(
                format!("{id}: snr_db"),
                a.snr_db,
                20.0 * (fs_rms / a.output_rms.hypot(a.lsb / 12f64.sqrt())).log10(),
                1e-12,
                0.0,
                DEF,
            ),
            row_rel(
                format!("{id}: snr_db below the ideal"),
                (a.snr_db < noise::ideal_snr_db(req.destination.bits)) as u8 as f64,
                1.0,
                0.0,
                0.0,
                "noise only adds",
            ),
            row_rel(
                format!("{id}: enob"),
                a.enob,
                (a.snr_db - 1.76) / 6.02,
                1e-12,
                0.0,
                "references.md: ENOB = (SINAD − 1.76)/6.02",
            ),
            row_rel(format!("{id}: input_rms × |gain|"), a.input_rms * p.gain.abs(), a.output_rms, 1e-12, 0.0, DEF),
            row_rel(format!("{id}: contributors add in power"), rss, a.output_rms, 1e-12, 0.0, "uncorrelated sources"),
            row_rel(format!("{id}: contributors sorted"), sorted as u8 as f64, 1.0, 0.0, 0.0, "API"),
            row_rel(
                format!("{id}: contributors"),
                a.contributors.len() as f64,
                (resistors + 2 * amplifiers) as f64,
                0.0,
                0.0,
                "every resistor and each amplifier's two sources",
            ),
            // The sensor's own resistance: RSENSE for voltage kinds; a loop's shunt is a part.
            // (a photodiode has none: its current source and capacitance are noiseless here).
            row_rel(
                format!("{id}: sensor resistance listed"),
                if req.source.current_loop.is_some() {
                    has(&d.current_loop().map_or(String::new(), |l| l.shunt_ref.clone()))
                } else if d.photodiode().is_some() {
                    1.0
                } else if d.differential().is_some() {
                    has("RSENSEP") * has("RSENSEN")
                } else {
                    has("RSENSE")
                },
                1.0,
                0.0,
                0.0,
                "API",
            ),
            row_rel(format!("{id}: RADC listed"), has("RADC"), 1.0, 0.0, 0.0, "API"),
            row_rel(format!("{id}: U1 voltage noise listed"), has("U1 voltage noise"), 1.0, 0.0, 0.0, "API"),
            row_rel(format!("{id}: U1 current noise listed"), has("U1 current noise"), 1.0, 0.0, 0.0, "API"),
            row_rel(
                format!("{id}: density points below Nyquist"),
                a.density.iter().filter(|q| q.f <= nyquist * (1.0 + 1e-12)).count() as f64,
                if a.band[1] >= nyquist { 160.0 } else { a.density.len() as f64 },
                0.0,
                0.0,
                "NoiseConfig::points",
            ),
            row_rel(
                format!("{id}: band high within the rule"),
                (a.band[1] >= band_min * (1.0 - 1e-9) && a.band[1] <= band_max * (1.0 + 1e-9)) as u8 as f64,
                1.0,
                0.0,
                0.0,
                BAND_RULE,
            ),
        ]);
    }

    // Odd inputs give numbers, not NaN or a panic: zero gain, a corner below the band,
    // no points, an undefined temperature.
    let demo = request(demos::ALL[0].json);
    let d = design(&demo);
    let circuit = d.circuit.as_ref().expect("the first demo designs");
    for (what, gain, c) in [
        ("zero gain", 0.0, NoiseConfig::default()),
        ("no points", 1.0, cfg(300.0, 0, true)),
        ("NaN temperature", f64::NAN, cfg(f64::NAN, 3, true)),
    ] {
        let a = noise::noise(&demo, circuit, gain, &c);
        let numbers = [
            a.band[0],
            a.band[1],
            a.output_rms,
            a.input_rms,
            a.lsb,
            a.quantization_rms,
            a.lsb_ratio,
            a.snr_db,
            a.enob,
            a.temperature,
        ];
        let bad = numbers
            .iter()
            .chain(a.contributors.iter().map(|c| &c.output_rms))
            .chain(a.density.iter().flat_map(|p| [&p.f, &p.output]))
            .filter(|x| !x.is_finite())
            .count();
        rows.push(row_rel(format!("odd input ({what}): non-finite numbers"), bad as f64, 0.0, 0.0, 0.0, "never NaN"));
    }
    check(&rows);
}
