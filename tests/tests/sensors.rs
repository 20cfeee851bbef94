//! Sensor kinds beyond the single-ended voltage, against outside references: the shunt
//! rule and the NAMUR NE 43 fault bands for a current loop (tests/REFERENCES.md,
//! [C] confirmed), IEC 60063 for the shunt's series value, and ngspice (Debian ngspice-39)
//! on the exported netlist for the DC mapping, the fault bands and seeded random loops the
//! other tests do not hold. Requests are scenarios of our own. ngspice must be installed;
//! without it these tests fail, never skip.

use rand::{Rng, SeedableRng};
use rangefit_engine::circuit::{PartKind, StageRole};
use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::{design, Design, Request};
use rangefit_tests::run_ngspice;

mod bench;
use bench::{request, spice_pairs};
use rangefit_tests::rows::{check, fact, row};

/// v(adc) from ngspice for each loop current (`ISENSE` altered, operating point).
fn spice_outputs(tag: &str, d: &Design, currents: &[f64]) -> Vec<f64> {
    let net = netlist(&d.request, d.circuit.as_ref().expect("circuit"), NetlistConfig { testbench: false });
    let body = net.trim_end().strip_suffix(".end").expect("netlist ends with .end");
    let mut control = String::new();
    for i in currents {
        control.push_str(&format!("alter ISENSE dc = {i:e}\nop\nprint v(adc)\n"));
    }
    let deck = format!("{body}.control\n{control}quit\n.endc\n.end\n");
    let (ok, stdout, stderr) = run_ngspice(tag, &deck);
    assert!(ok, "[{tag}] ngspice failed:\n{stderr}\n{deck}");
    let v: Vec<f64> =
        stdout.lines().filter_map(|l| l.trim().strip_prefix("v(adc) = ").and_then(|x| x.trim().parse().ok())).collect();
    assert_eq!(v.len(), currents.len(), "[{tag}] ngspice printed:\n{stdout}");
    v
}

const TANK: &str = r#"{"name": "Cistern level loop", "source": {"kind": "current_loop", "min": "4 mA", "max": "20 mA",
    "burden_max": "3 V", "band_high": "5 Hz"},
    "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "100 Hz"}, "supplies": [3.3],
    "parts": {"resistor_series": "E96", "resistor_tolerance": "0.1 %"}}"#;

#[test]
fn the_shunt_follows_the_burden_and_the_series() {
    const REFS: &str = "references.md: 4–20 mA with a shunt; NAMUR NE 43 [C]";
    let mut rows = Vec::new();
    // (request, wanted shunt): burden / 21 mA rounded down in the series (IEC 60063 E96 and
    // E24 tables: 137 140 143 …; 240 270 …).
    for (json, want, src) in [
        (TANK, 140.0, "IEC 60063 E96: 3 V / 21 mA = 142.9 Ω → 140 Ω"),
        (
            &TANK.replace("\"3 V\"", "\"5.5 V\"").replace("E96", "E24") as &str,
            240.0,
            "IEC 60063 E24: 5.5 V / 21 mA = 261.9 Ω → 240 Ω",
        ),
    ] {
        let d = design(&request(json));
        let l = d.current_loop().expect("a loop design");
        rows.push(row(format!("shunt for {src}"), l.shunt, want, 1e-9, src));
        let shunt = d.circuit.as_ref().and_then(|c| c.part(&l.shunt_ref)).expect("shunt part");
        rows.push(fact(
            format!("{src}: the shunt is a part from sense to ground in the shunt stage"),
            shunt.kind == PartKind::Resistor
                && !shunt.bench
                && shunt.stage == StageRole::Shunt
                && shunt.nodes == ["sense", "0"],
            "design contract",
        ));
        rows.push(row(format!("{src}: burden at 20 mA"), l.burden_at_max, 0.020 * want, 1e-12, "Ohm's law"));
        rows.push(row(format!("{src}: power at 21 mA"), l.power_at_fault_high, 0.021 * 0.021 * want, 1e-12, "P = I²R"));
    }
    // NAMUR NE 43 defaults for a 4–20 mA loop.
    let req = request(TANK);
    let spec = req.source.current_loop.as_ref().expect("loop fields");
    rows.push(row("fault_low default", spec.fault_low, 3.6e-3, 1e-15, REFS));
    rows.push(row("fault_high default", spec.fault_high, 21e-3, 1e-15, REFS));
    check(&rows);
}

#[test]
fn loop_states_land_where_ngspice_puts_them() {
    const SRC: &str = "ngspice (Debian ngspice-39) operating point of the exported netlist";
    let d = design(&request(TANK));
    let errors: Vec<&str> =
        d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| c.message.as_str()).collect();
    let mut rows = vec![fact(format!("no error checks {errors:?}"), errors.is_empty(), "design contract")];
    let p = d.predicted.expect("predicted");
    let l = d.current_loop().expect("loop");
    let span = 3.3;
    let currents: Vec<f64> = l.bands.iter().map(|b| b.current).collect();
    let spice = spice_outputs("tank", &d, &[4e-3, 20e-3]);
    rows.push(row("output at 4 mA (predicted.output_at_min)", p.output_at_min, spice[0], 1e-4 * span, SRC));
    rows.push(row("output at 20 mA (predicted.output_at_max)", p.output_at_max, spice[1], 1e-4 * span, SRC));
    let spice = spice_outputs("tank-bands", &d, &currents);
    for (b, s) in l.bands.iter().zip(&spice) {
        // Outside the linear range the solver's hard clamp and the netlist's diode clamp
        // differ by up to 20 mV (tests/tests/spice.rs).
        let tol = if b.current == 0.0 { 0.020 } else { 1e-4 * span };
        rows.push(row(format!("{} ({} A)", b.label, b.current), b.output, *s, tol, SRC));
    }
    // Firmware tells the states apart: codes strictly ordered (NAMUR NE 43 bands).
    let codes: Vec<u64> = l.bands.iter().map(|b| b.code).collect();
    rows.push(fact(
        format!("codes strictly increase {codes:?}"),
        codes.windows(2).all(|w| w[0] < w[1]),
        "NAMUR NE 43 [C]: fault bands distinguishable",
    ));
    // The fault limits sit at the headroom edges, the range inside them.
    rows.push(fact(
        "4–20 mA inside the 5 % headroom",
        p.output_at_min > 0.05 * span && p.output_at_max < 0.95 * span,
        "design contract",
    ));
    check(&rows);
}

/// Loops the other tests do not hold, from a seeded generator (rand_chacha ChaCha8Rng,
/// seed 4020): range, burden, series, rails and converter at random. The exported netlist
/// must map the loop's range as `predicted` says.
#[test]
fn random_loops_map_as_predicted() {
    const SRC: &str = "ngspice (Debian ngspice-39) operating point of the exported netlist";
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(4020);
    let mut rows = Vec::new();
    let mut simulated = 0;
    for i in 0..10 {
        let (min, max) = [(4e-3, 20e-3), (0.0, 20e-3), (0.0, 10e-3), (1e-3, 5e-3)][rng.random_range(0..4)];
        let burden: f64 = rng.random_range(1.0..10.0);
        let series = ["E24", "E96", "E12"][rng.random_range(0..3)];
        let (supplies, dmax) =
            [("[3.3]", 3.3), ("[5]", 5.0), ("[5, 3.3]", 3.3), ("[12, -12]", 5.0)][rng.random_range(0..4)];
        let bits = [10, 12, 16][rng.random_range(0..3)];
        let json = format!(
            r#"{{"name": "Random loop {i}", "source": {{"kind": "current_loop", "min": {min}, "max": {max},
                "burden_max": {burden:.3}, "band_high": 10}},
            "destination": {{"min": 0, "max": {dmax}, "bits": {bits}, "sample_rate": 1000}}, "supplies": {supplies},
            "parts": {{"resistor_series": "{series}"}}}}"#
        );
        let d = design(&request(&json));
        let (Some(p), Some(_)) = (d.predicted, d.circuit.as_ref()) else {
            println!(
                "loop {i}: no circuit: {:?}",
                d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| &c.message).collect::<Vec<_>>()
            );
            continue;
        };
        simulated += 1;
        let what = format!("loop {i} ({min}…{max} A, burden {burden:.2} V, {series}, rails {supplies}, 0…{dmax} V)");
        let spice = spice_outputs(&format!("loop-{i}"), &d, &[min, max]);
        println!(
            "{what}: predicted {:.5} … {:.5} V, ngspice {:.5} … {:.5} V",
            p.output_at_min, p.output_at_max, spice[0], spice[1]
        );
        rows.push(row(format!("{what}: output at min"), p.output_at_min, spice[0], 1e-4 * dmax, SRC));
        rows.push(row(format!("{what}: output at max"), p.output_at_max, spice[1], 1e-4 * dmax, SRC));
        rows.push(fact(
            format!("{what}: inside the converter range"),
            p.output_at_min >= 0.0 && p.output_at_max <= dmax,
            "design contract",
        ));
    }
    rows.push(fact(format!("at least 8 of 10 random loops built ({simulated})"), simulated >= 8, "test design"));
    check(&rows);
}

#[test]
fn loop_fields_are_read_and_refused_by_name() {
    let base = |source: &str| {
        format!(
            r#"{{"source": {source}, "destination": {{"min": 0, "max": 3.3, "sample_rate": 100}}, "supplies": [3.3]}}"#
        )
    };
    let cases = [
        (
            r#"{"kind": "current_loop", "min": "4 mA", "max": "20 mA", "coupling": "ac", "band_low": 1}"#,
            "source.coupling",
        ),
        (r#"{"kind": "current_loop", "min": "4 mA", "max": "20 mA", "impedance": 100}"#, "source.impedance"),
        (r#"{"kind": "current_loop", "min": "4 V", "max": "20 mA"}"#, "source.min"),
        (r#"{"kind": "current_loop", "min": "-1 mA", "max": "20 mA"}"#, "source.min"),
        (r#"{"kind": "current_loop", "min": "4 mA", "max": "20 mA", "fault_low": "5 mA"}"#, "source.fault_low"),
        (r#"{"kind": "current_loop", "min": "4 mA", "max": "20 mA", "fault_high": "19 mA"}"#, "source.fault_high"),
        (r#"{"kind": "current_loop", "min": "4 mA", "max": "20 mA", "burden_max": 0}"#, "source.burden_max"),
        (r#"{"min": 0, "max": 1, "burden_max": 5}"#, "source.burden_max"),
    ];
    let mut rows = Vec::new();
    for (source, field) in cases {
        let got = Request::from_json(&base(source)).err().map(|e| e.field);
        rows.push(fact(
            format!("{source} → error on {field} (got {got:?})"),
            got.as_deref() == Some(field),
            "request contract",
        ));
    }
    // A burden that leaves no usable shunt is an error check with a way out, not a panic.
    let d =
        design(&request(&base(r#"{"kind": "current_loop", "min": "4 mA", "max": "20 mA", "burden_max": "50 mV"}"#)));
    rows.push(fact(
        "50 mV burden: shunt error check",
        d.checks.iter().any(|c| c.id == "shunt" && c.severity == Severity::Error && c.message.contains("burden_max")),
        "design contract",
    ));
    // Other ranges: the NAMUR fractions of the span (−2.5 %, +6.25 %).
    let r = request(&base(r#"{"kind": "current_loop", "min": "0 mA", "max": "10 mA"}"#));
    let spec = r.source.current_loop.expect("loop");
    rows.push(row("0–10 mA: fault_low", spec.fault_low, 0.0, 1e-15, "README: NE 43 fractions, clamped at 0 A"));
    rows.push(row("0–10 mA: fault_high", spec.fault_high, 10.625e-3, 1e-15, "README: NE 43 fractions"));
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// High-impedance sensors

/// v(adc) from ngspice at DC for each sensor EMF (`VSENSE` altered, operating point).
fn spice_dc(tag: &str, d: &Design, emfs: &[f64]) -> Vec<f64> {
    let net = netlist(&d.request, d.circuit.as_ref().expect("circuit"), NetlistConfig { testbench: false });
    let body = net.trim_end().strip_suffix(".end").expect("netlist ends with .end");
    let mut control = String::new();
    for v in emfs {
        control.push_str(&format!("alter VSENSE dc = {v:e}\nop\nprint v(adc)\n"));
    }
    // Gigaohm nodes carry currents near ngspice's default abstol (1 pA) and its default
    // reltol (1e-3) stops Newton early: tighter tolerances for this comparison.
    let deck = format!("{body}.options reltol=1e-7 abstol=1e-18 vntol=1e-10\n.control\n{control}quit\n.endc\n.end\n");
    let (ok, stdout, stderr) = run_ngspice(tag, &deck);
    assert!(ok, "[{tag}] ngspice failed:\n{stderr}\n{deck}");
    let v: Vec<f64> =
        stdout.lines().filter_map(|l| l.trim().strip_prefix("v(adc) = ").and_then(|x| x.trim().parse().ok())).collect();
    assert_eq!(v.len(), emfs.len(), "[{tag}] ngspice printed:\n{stdout}");
    v
}

/// |v(adc)| from ngspice for a 1 V AC sensor EMF at `f` Hz.
fn spice_ac_gain(tag: &str, d: &Design, f: f64) -> f64 {
    let net = netlist(&d.request, d.circuit.as_ref().expect("circuit"), NetlistConfig { testbench: false });
    let body = net.trim_end().strip_suffix(".end").expect("netlist ends with .end");
    let deck = format!("{body}.control\nac lin 1 {f:e} {f:e}\nprint vr(adc) vi(adc)\nquit\n.endc\n.end\n");
    let (ok, stdout, stderr) = run_ngspice(tag, &deck);
    assert!(ok, "[{tag}] ngspice failed:\n{stderr}\n{deck}");
    let pick = |name: &str| {
        stdout
            .lines()
            .find_map(|l| l.trim().strip_prefix(name).and_then(|x| x.trim().parse::<f64>().ok()))
            .unwrap_or_else(|| panic!("[{tag}] no {name}:\n{stdout}"))
    };
    pick("vr(adc) = ").hypot(pick("vi(adc) = "))
}

const PH: &str = r#"{"name": "Aquarium pH electrode", "source": {"kind": "high_impedance", "min": "-0.25 V",
    "max": "0.25 V", "impedance": "300 MΩ", "capacitance": "150 pF", "band_high": "0.2 Hz"},
    "destination": {"min": 0, "max": 2.5, "bits": 12, "sample_rate": "5 Hz"}, "supplies": [2.5, -2.5],
    "parts": {"resistor_series": "E96"}}"#;
const FILM: &str = r#"{"name": "Footbridge vibration film", "source": {"kind": "high_impedance", "min": -0.5,
    "max": 0.5, "coupling": "ac", "impedance": "10 GΩ", "capacitance": "1.5 nF", "band_low": "2 Hz",
    "band_high": "500 Hz"},
    "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "5 kHz"}, "supplies": [3.3]}"#;

#[test]
fn the_buffer_follows_the_rules_and_ngspice() {
    use std::f64::consts::PI;
    const SRC: &str = "ngspice (Debian ngspice-39) on the exported netlist";
    let mut rows = Vec::new();
    // DC: an electrode that swings below ground, on split rails the follower can follow.
    let d = design(&request(PH));
    let b = d.high_impedance().expect("buffer design");
    let amp = &d.amplifier;
    rows.push(fact("pH: the follower passes the range on ±2.5 V", b.follows, "design contract"));
    // On a single 3.3 V rail it cannot follow below ground: the electrode floats on a return
    // lifted to half the rail, and the whole circuit maps as ngspice says.
    let single = design(&request(&PH.replace("[2.5, -2.5]", "[3.3]")));
    let lifted = single.high_impedance().expect("buffer design");
    rows.push(row(
        "pH on one 3.3 V rail: return lifted to half the rail (V)",
        lifted.return_level,
        1.65,
        1e-9,
        "README",
    ));
    rows.push(fact(
        "pH on one 3.3 V rail: no follower_range error",
        !single.checks.iter().any(|c| c.id == "follower_range" && c.severity == Severity::Error),
        "the follower's output cannot go below its negative rail (common practice), hence the lift",
    ));
    let (lo, hi) = (single.request.source.min, single.request.source.max);
    let lifted_spice = spice_dc("ph-lifted", &single, &[lo, hi]);
    let p1 = single.predicted.expect("predicted");
    rows.push(row("pH lifted: output at min (V)", p1.output_at_min, lifted_spice[0], 1e-4 * 3.3, SRC));
    rows.push(row("pH lifted: output at max (V)", p1.output_at_max, lifted_spice[1], 1e-4 * 3.3, SRC));
    rows.push(row(
        "pH: input corner 1/(2π R_s C_s)",
        b.input_corner.unwrap_or(f64::NAN),
        1.0 / (2.0 * PI * 300e6 * 150e-12),
        1e-9,
        "first-order RC, closed form",
    ));
    rows.push(row("pH: bias offset I_b·R_s", b.bias_error, amp.bias_current * 300e6, 1e-15, "Ohm's law"));
    let c = d.circuit.as_ref().expect("circuit");
    let u1 = c.part("U1").expect("U1");
    rows.push(fact(
        "pH: U1 is a follower on the sensor terminal",
        u1.stage == StageRole::Buffer && u1.nodes[0] == "sense" && u1.nodes[1] == u1.nodes[4],
        "design contract",
    ));
    rows.push(fact(
        "pH: nothing but U1 and the cable capacitance touches the sensor terminal",
        c.parts
            .iter()
            .filter(|p| p.nodes.iter().any(|n| n == "sense"))
            .all(|p| p.reference == "U1" || p.reference == "RSENSE" || p.reference == "CSENSE"),
        "design contract",
    ));
    let p = d.predicted.expect("predicted");
    let spice = spice_dc("ph", &d, &[-0.25, 0.25]);
    rows.push(row("pH: output at min", p.output_at_min, spice[0], 1e-4 * 2.5, SRC));
    rows.push(row("pH: output at max", p.output_at_max, spice[1], 1e-4 * 2.5, SRC));
    // AC: a piezo film behind 1.5 nF, bias resistor from the band_low/10 rule (IEC 60063 E24).
    let d = design(&request(FILM));
    let b = d.high_impedance().expect("buffer design");
    // R_b ∥ R_s ≥ 10/(2π C_s band_low): R_b ≥ want·R_s/(R_s − want), then E24 upwards.
    let want = 10.0 / (2.0 * PI * 1.5e-9 * 2.0);
    let need = want * 10e9 / (10e9 - want);
    let r_b = rangefit_engine::values::step_up(rangefit_engine::values::Series::E24, need).expect("E24 value");
    rows.push(row(
        "film: bias resistor, smallest E24 value with R_b ∥ R_s ≥ 10/(2π C_s band_low)",
        b.bias_resistor.unwrap_or(f64::NAN),
        r_b,
        1e-9 * r_b,
        "IEC 60063 E24; band_low/10 rule (README)",
    ));
    let par = r_b * 10e9 / (r_b + 10e9);
    rows.push(row(
        "film: low corner 1/(2π (R_b ∥ R_s) C_s)",
        b.low_corner.unwrap_or(f64::NAN),
        1.0 / (2.0 * PI * par * 1.5e-9),
        1e-9,
        "first-order RC, closed form",
    ));
    rows.push(fact(
        "film: low corner at or below band_low / 10",
        b.low_corner.unwrap_or(f64::INFINITY) <= 0.2 + 1e-9,
        "README rule",
    ));
    let p = d.predicted.expect("predicted");
    let f_mid = (2.0f64 * 500.0).sqrt();
    let g = spice_ac_gain("film", &d, f_mid);
    rows.push(row("film: mid-band gain", p.gain.abs(), g, 1e-3 * g, SRC));
    check(&rows);
}

/// High-impedance sensors the other tests do not hold, from a seeded generator
/// (rand_chacha ChaCha8Rng, seed 1e9): DC electrodes with and without a lifted return.
#[test]
fn random_electrodes_map_as_predicted() {
    const SRC: &str = "ngspice (Debian ngspice-39) operating point of the exported netlist";
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1_000_000_000);
    let mut rows = Vec::new();
    let mut simulated = 0;
    for i in 0..8 {
        let min: f64 = rng.random_range(-0.5..1.0);
        let max = min + rng.random_range(0.05..1.0);
        let r_s = 10f64.powf(rng.random_range(6.0..10.0));
        let c_s = 10f64.powf(rng.random_range(-11.0..-9.0));
        let (supplies, dmin, dmax) =
            [("[3.3]", 0.0, 3.3), ("[5]", 0.0, 5.0), ("[5, -5]", -2.5, 2.5)][rng.random_range(0..3)];
        let json = format!(
            r#"{{"name": "Random electrode {i}", "source": {{"kind": "high_impedance", "min": {min:.4},
                "max": {max:.4}, "impedance": {r_s:.4e}, "capacitance": {c_s:.4e}, "band_high": 0.5}},
            "destination": {{"min": {dmin}, "max": {dmax}, "bits": 12, "sample_rate": 10}}, "supplies": {supplies}}}"#
        );
        let d = design(&request(&json));
        // Beyond the follower's reach (on its return, lifted on one supply) the design says so.
        if d.checks.iter().any(|c| c.id == "follower_range" && c.severity == Severity::Error) {
            let b = d.high_impedance().expect("buffer design");
            rows.push(fact(
                format!("electrode {i}: flagged only when its range leaves the follower's reach"),
                b.input_range.0 < b.reach.0 || b.input_range.1 > b.reach.1,
                "design contract",
            ));
            continue;
        }
        let (Some(p), Some(_)) = (d.predicted, d.circuit.as_ref()) else { continue };
        simulated += 1;
        let what = format!("electrode {i} ({min:.3}…{max:.3} V, {r_s:.2e} Ω, rails {supplies})");
        // The request holds the values as written (four decimals): simulate those.
        let spice = spice_dc(&format!("electrode-{i}"), &d, &[d.request.source.min, d.request.source.max]);
        println!(
            "{what}: predicted {:.5} … {:.5} V, ngspice {:.5} … {:.5} V",
            p.output_at_min, p.output_at_max, spice[0], spice[1]
        );
        let span = dmax - dmin;
        rows.push(row(format!("{what}: output at min"), p.output_at_min, spice[0], 1e-4 * span, SRC));
        rows.push(row(format!("{what}: output at max"), p.output_at_max, spice[1], 1e-4 * span, SRC));
    }
    rows.push(fact(format!("at least 5 of 8 random electrodes built ({simulated})"), simulated >= 5, "test design"));
    check(&rows);
}

#[test]
fn high_impedance_fields_are_read_and_refused_by_name() {
    let base = |source: &str| {
        format!(
            r#"{{"source": {source}, "destination": {{"min": 0, "max": 3.3, "sample_rate": 100}}, "supplies": [3.3]}}"#
        )
    };
    let cases = [
        (r#"{"kind": "high_impedance", "min": 0, "max": 1}"#, "source.impedance"),
        (
            r#"{"kind": "high_impedance", "min": 0, "max": 1, "impedance": "1G", "coupling": "ac", "band_low": 1}"#,
            "source.capacitance",
        ),
        (
            r#"{"kind": "high_impedance", "min": 0, "max": 1, "impedance": "1G", "capacitance": "-1 pF"}"#,
            "source.capacitance",
        ),
        (r#"{"min": 0, "max": 1, "capacitance": "1 nF"}"#, "source.capacitance"),
    ];
    let mut rows = Vec::new();
    for (source, field) in cases {
        let got = Request::from_json(&base(source)).err().map(|e| e.field);
        rows.push(fact(
            format!("{source} → error on {field} (got {got:?})"),
            got.as_deref() == Some(field),
            "request contract",
        ));
    }
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// Photodiodes

/// |v(node)| from ngspice for a 1 A AC photocurrent at `f` Hz.
fn spice_ac_at(tag: &str, d: &Design, node: &str, f: f64) -> f64 {
    let net = netlist(&d.request, d.circuit.as_ref().expect("circuit"), NetlistConfig { testbench: false });
    let body = net.trim_end().strip_suffix(".end").expect("netlist ends with .end");
    let deck = format!("{body}.control\nac lin 1 {f:e} {f:e}\nprint vr({node}) vi({node})\nquit\n.endc\n.end\n");
    let (ok, stdout, stderr) = run_ngspice(tag, &deck);
    assert!(ok, "[{tag}] ngspice failed:\n{stderr}\n{deck}");
    let pick = |name: String| {
        stdout
            .lines()
            .find_map(|l| l.trim().strip_prefix(name.as_str()).and_then(|x| x.trim().parse::<f64>().ok()))
            .unwrap_or_else(|| panic!("[{tag}] no {name}:\n{stdout}"))
    };
    pick(format!("vr({node}) = ")).hypot(pick(format!("vi({node}) = ")))
}

const LIGHT: &str = r#"{"name": "Orchard frost-night light sensor", "source": {"kind": "photodiode", "min": 0,
    "max": "25 µA", "capacitance": "50 pF", "dark_current": "1 nA", "band_high": "10 Hz"},
    "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "100 Hz"}, "supplies": [3.3],
    "parts": {"resistor_series": "E96"}}"#;

#[test]
fn the_transimpedance_stage_follows_the_model_and_ngspice() {
    use rangefit_engine::synth::front::transimpedance as tia;
    const SRC: &str = "ngspice (Debian ngspice-39) on the exported netlist";
    const REF: &str = "references.md: single-pole transimpedance model, 1 MΩ, 10 pF, 10 MHz (Graeme, Photodiode \
        Amplifiers, 1996, from memory for the book; values re-checked by nodal analysis)";
    let mut rows = vec![
        // The worked values: maximally flat C_f = 0.5640 pF and −3 dB at 388.15 kHz.
        row("flat C_f, 1 MΩ / 10 pF / 10 MHz", tia::flat_capacitor(1e6, 10e-12, 10e6), 0.5640e-12, 0.0005e-12, REF),
        row("−3 dB with that C_f", tia::bandwidth(1e6, 0.5640e-12, 10e-12, 10e6), 388.15e3, 0.5e3, REF),
    ];
    let d = design(&request(LIGHT));
    let errors: Vec<&str> =
        d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| c.message.as_str()).collect();
    rows.push(fact(format!("light: no error checks {errors:?}"), errors.is_empty(), "design contract"));
    let t = d.photodiode().expect("transimpedance design");
    let c = d.circuit.as_ref().expect("circuit");
    let u1 = c.part("U1").expect("U1");
    rows.push(fact(
        "light: U1's − input holds the diode's cathode, its output is tia",
        u1.stage == StageRole::Transimpedance && u1.nodes[1] == "sense" && u1.nodes[4] == "tia",
        "design contract",
    ));
    rows.push(fact(
        "light: one supply biases the diode above the output's lower limit",
        t.bias > d.amplifier.swing_low,
        "design contract",
    ));
    // DC mapping: outputs at 0 and 25 µA (the dark current is a constant bench source).
    let p = d.predicted.expect("predicted");
    let spice = spice_outputs("light", &d, &[0.0, 25e-6]);
    rows.push(row("light: output at min", p.output_at_min, spice[0], 1e-4 * 3.3, SRC));
    rows.push(row("light: output at max", p.output_at_max, spice[1], 1e-4 * 3.3, SRC));
    // The stage's bandwidth: ngspice's |v(tia)| per ampere at the engine's −3 dB frequency.
    let z = spice_ac_at("light-tia", &d, "tia", t.bandwidth);
    rows.push(row(
        "light: |Z| at the stage's −3 dB frequency, relative to R_f/√2",
        z / (t.feedback_resistor / 2f64.sqrt()),
        1.0,
        0.01,
        SRC,
    ));
    check(&rows);
}

/// Photodiodes the other tests do not hold, from a seeded generator (rand_chacha
/// ChaCha8Rng, seed 7): full-scale current, capacitance, dark current, band and rails.
#[test]
fn random_photodiodes_map_as_predicted() {
    const SRC: &str = "ngspice (Debian ngspice-39) operating point of the exported netlist";
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
    let mut rows = Vec::new();
    let mut simulated = 0;
    for i in 0..8 {
        let max = 10f64.powf(rng.random_range(-8.0..-3.5));
        let min = if rng.random_bool(0.5) { 0.0 } else { max * rng.random_range(0.01..0.3) };
        let cj = 10f64.powf(rng.random_range(-12.0..-9.5));
        let dark = max * rng.random_range(0.0..0.01);
        let band = 10f64.powf(rng.random_range(0.0..4.0));
        let (supplies, dmin, dmax) =
            [("[3.3]", 0.0, 3.3), ("[5]", 0.0, 5.0), ("[5, -5]", -2.0, 2.0)][rng.random_range(0..3)];
        let json = format!(
            r#"{{"name": "Random photodiode {i}", "source": {{"kind": "photodiode", "min": {min:e}, "max": {max:e},
                "capacitance": {cj:e}, "dark_current": {dark:e}, "band_high": {band:e}}},
            "destination": {{"min": {dmin}, "max": {dmax}, "bits": 12, "sample_rate": {}}}, "supplies": {supplies}}}"#,
            20.0 * band
        );
        let d = design(&request(&json));
        let (Some(p), Some(_)) = (d.predicted, d.circuit.as_ref()) else { continue };
        simulated += 1;
        let what = format!("photodiode {i} ({min:.2e}…{max:.2e} A, C_j {cj:.1e} F, rails {supplies})");
        let spice = spice_outputs(&format!("photodiode-{i}"), &d, &[d.request.source.min, d.request.source.max]);
        println!(
            "{what}: predicted {:.5} … {:.5} V, ngspice {:.5} … {:.5} V",
            p.output_at_min, p.output_at_max, spice[0], spice[1]
        );
        rows.push(row(format!("{what}: output at min"), p.output_at_min, spice[0], 1e-4 * (dmax - dmin), SRC));
        rows.push(row(format!("{what}: output at max"), p.output_at_max, spice[1], 1e-4 * (dmax - dmin), SRC));
    }
    rows.push(fact(format!("at least 6 of 8 random photodiodes built ({simulated})"), simulated >= 6, "test design"));
    check(&rows);
}

#[test]
fn photodiode_fields_are_read_and_refused_by_name() {
    let base = |source: &str| {
        format!(
            r#"{{"source": {source}, "destination": {{"min": 0, "max": 3.3, "sample_rate": 100}}, "supplies": [3.3]}}"#
        )
    };
    let cases = [
        (r#"{"kind": "photodiode", "min": 0, "max": "10 µA"}"#, "source.capacitance"),
        (r#"{"kind": "photodiode", "min": "-1 µA", "max": "10 µA", "capacitance": "10 pF"}"#, "source.min"),
        (
            r#"{"kind": "photodiode", "min": 0, "max": "10 µA", "capacitance": "10 pF", "impedance": "1M"}"#,
            "source.impedance",
        ),
        (
            r#"{"kind": "photodiode", "min": 0, "max": "10 µA", "capacitance": "10 pF", "dark_current": "-1 nA"}"#,
            "source.dark_current",
        ),
        (r#"{"min": 0, "max": 1, "dark_current": "1 nA"}"#, "source.dark_current"),
        (r#"{"kind": "photodiode", "min": 0, "max": "10 V", "capacitance": "10 pF"}"#, "source.max"),
    ];
    let mut rows = Vec::new();
    for (source, field) in cases {
        let got = Request::from_json(&base(source)).err().map(|e| e.field);
        rows.push(fact(
            format!("{source} → error on {field} (got {got:?})"),
            got.as_deref() == Some(field),
            "request contract",
        ));
    }
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// Differential sensors

const PAIR: &str = r#"{"name": "Kiln draught differential sensor", "source": {"kind": "differential", "min": "-1.5 V",
    "max": "1.5 V", "common_mode_min": "2 V", "common_mode_max": "3 V", "impedance": "200", "band_high": "5 Hz"},
    "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "50 Hz"}, "supplies": [5],
    "parts": {"resistor_series": "E96", "resistor_tolerance": "0.1 %"}}"#;

#[test]
fn the_difference_amplifier_follows_the_references_and_ngspice() {
    use rangefit_engine::analysis::cmrr;
    use rangefit_engine::solve::Solver;
    use rangefit_engine::synth::front::difference as diffamp;
    const SRC: &str = "ngspice (Debian ngspice-39) operating point of the exported netlist";
    // references.md: worst-case CMRR (1 + G)/(4t), G = 1, 1 % → 33.98 dB (Kitchin & Counts,
    // A Designer's Guide to Instrumentation Amplifiers, 3rd ed., from memory; brute force confirmed).
    let mut rows = vec![row(
        "CMRR formula, G 1, 1 %",
        diffamp::cmrr_worst_db(1.0, 0.01),
        33.98,
        0.01,
        "references.md (Kitchin & Counts) [M], brute force [C]",
    )];
    let req = request(PAIR);
    let d = design(&req);
    let errors: Vec<&str> =
        d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| c.message.as_str()).collect();
    rows.push(fact(format!("pair: no error checks {errors:?}"), errors.is_empty(), "design contract"));
    let dd = d.differential().expect("difference amplifier design");
    // The gain from the parts: R2/(R1 + R_s) (references.md, difference amplifier).
    rows.push(row(
        "pair: gain R2/(R1 + R_s)",
        dd.gain,
        dd.r2 / (dd.r1 + 200.0),
        1e-12,
        "references.md: difference amplifier",
    ));
    let c = d.circuit.as_ref().expect("circuit").clone();
    // Brute force over the sixteen tolerance corners of R1…R4: the smallest CMRR, from the
    // engine's own solver (a 1 V common-mode step), against the closed form.
    let t = req.parts.resistor_tolerance;
    let gain_dm = d.predicted.expect("predicted").gain.abs();
    let refs: Vec<String> = ["input resistor R1", "feedback resistor R2", "input resistor R3", "resistor R4"]
        .iter()
        .map(|w| c.parts.iter().find(|p| p.purpose.starts_with(w)).expect("resistor").reference.clone())
        .collect();
    let mut worst = f64::INFINITY;
    for mask in 0..16u32 {
        let mut pc = c.clone();
        for (k, r) in refs.iter().enumerate() {
            let p = pc.part_mut(r).expect("part");
            p.value *= if mask & (1 << k) != 0 { 1.0 + t } else { 1.0 - t };
        }
        let out_at = |cm: f64| {
            let mut q = pc.clone();
            q.part_mut("VCM").expect("VCM").value = cm;
            Solver::new(&q).dc(0.0).ok().and_then(|o| o.voltage("adc")).unwrap_or(f64::NAN)
        };
        let g_cm = (out_at(2.5) - out_at(1.5)).abs();
        worst = worst.min(20.0 * (gain_dm / g_cm).log10());
    }
    println!("pair: brute-force worst CMRR {worst:.2} dB, formula {:.2} dB", dd.cmrr_worst_db);
    rows.push(row(
        "pair: worst CMRR over the tolerance corners vs (1 + G)/(4t)",
        worst,
        dd.cmrr_worst_db,
        0.5,
        "brute force over ±t corners (engine solver) against Kitchin & Counts' closed form",
    ));
    // The Monte Carlo's 0.1 % quantile lies above the worst case (which bounds every build)
    // and is reproducible from the seed.
    let mc = dd.cmrr_monte_carlo_db.expect("Monte Carlo CMRR");
    rows.push(fact(
        format!("pair: Monte Carlo CMRR quantile {mc:.2} dB ≥ worst case {:.2} dB", dd.cmrr_worst_db),
        mc >= dd.cmrr_worst_db - 1e-6,
        "the worst case bounds every build",
    ));
    rows.push(fact(
        format!("pair: brute-force worst {worst:.2} dB ≤ Monte Carlo quantile {mc:.2} dB"),
        worst <= mc + 1e-6,
        "the corners bound the uniform draws",
    ));
    rows.push(row(
        "pair: the same seed gives the same Monte Carlo CMRR",
        cmrr::cmrr_monte_carlo(&c, cmrr::CMRR_RUNS, req.analysis.seed).unwrap_or(f64::NAN),
        mc,
        0.0,
        "seeded ChaCha8 (rand_chacha)",
    ));
    // ngspice: the mapping at the signal's ends and the common mode's ends.
    let p = d.predicted.expect("predicted");
    let vcm = |cm: f64, v: f64| cm - 0.5 * v; // VCM holds the − leg: the pair's middle is VCM + VSENSE/2
    let spice = spice_pairs("pair", &d, &[(-1.5, vcm(2.5, 0.0)), (1.5, vcm(2.5, 0.0))]);
    let mid_cm = c.part("VCM").expect("VCM").value;
    let spice_nominal = spice_pairs("pair-nominal", &d, &[(-1.5, mid_cm), (1.5, mid_cm)]);
    rows.push(row("pair: output at min (VCM nominal)", p.output_at_min, spice_nominal[0], 1e-4 * 3.3, SRC));
    rows.push(row("pair: output at max (VCM nominal)", p.output_at_max, spice_nominal[1], 1e-4 * 3.3, SRC));
    // With nominal parts the common mode does not move the output (beyond the amplifier's
    // finite gain): the two ends of the common-mode range give the same output to 1 mV.
    rows.push(row("pair: common mode 2.5 V vs nominal, output at min", spice[0], spice_nominal[0], 0.01, SRC));
    check(&rows);
}

/// Differential pairs the other tests do not hold, from a seeded generator (rand_chacha
/// ChaCha8Rng, seed 11).
#[test]
fn random_pairs_map_as_predicted() {
    const SRC: &str = "ngspice (Debian ngspice-39) operating point of the exported netlist";
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
    let mut rows = Vec::new();
    let mut simulated = 0;
    for i in 0..8 {
        let half = 10f64.powf(rng.random_range(-2.0..0.3));
        let (min, max) = if rng.random_bool(0.5) { (-half, half) } else { (0.0, 2.0 * half) };
        let cm: f64 = rng.random_range(0.5..2.5);
        let rs = 10f64.powf(rng.random_range(0.0..3.0));
        let (supplies, dmin, dmax) =
            [("[5]", 0.0, 3.3), ("[5]", 0.0, 5.0), ("[5, -5]", -2.0, 2.0)][rng.random_range(0..3)];
        let json = format!(
            r#"{{"name": "Random pair {i}", "source": {{"kind": "differential", "min": {min:.5}, "max": {max:.5},
                "common_mode_min": {:.3}, "common_mode_max": {:.3}, "impedance": {rs:.2}, "band_high": 10}},
            "destination": {{"min": {dmin}, "max": {dmax}, "bits": 12, "sample_rate": 100}}, "supplies": {supplies},
            "keep_polarity": {}}}"#,
            cm - 0.2,
            cm + 0.2,
            rng.random_bool(0.7)
        );
        let d = design(&request(&json));
        let (Some(p), Some(c)) = (d.predicted, d.circuit.as_ref()) else { continue };
        simulated += 1;
        let vcm = c.part("VCM").map_or(0.0, |p| p.value);
        let what = format!("pair {i} ({min:.4}…{max:.4} V, cm {cm:.2} V, {rs:.0} Ω, rails {supplies})");
        let spice = spice_pairs(&format!("pair-{i}"), &d, &[(d.request.source.min, vcm), (d.request.source.max, vcm)]);
        println!(
            "{what}: predicted {:.5} … {:.5} V, ngspice {:.5} … {:.5} V",
            p.output_at_min, p.output_at_max, spice[0], spice[1]
        );
        rows.push(row(format!("{what}: output at min"), p.output_at_min, spice[0], 1e-4 * (dmax - dmin), SRC));
        rows.push(row(format!("{what}: output at max"), p.output_at_max, spice[1], 1e-4 * (dmax - dmin), SRC));
    }
    rows.push(fact(format!("at least 6 of 8 random pairs built ({simulated})"), simulated >= 6, "test design"));
    check(&rows);
}

#[test]
fn differential_fields_are_read_and_refused_by_name() {
    let base = |source: &str| {
        format!(
            r#"{{"source": {source}, "destination": {{"min": 0, "max": 3.3, "sample_rate": 100}}, "supplies": [5]}}"#
        )
    };
    let cases = [
        (r#"{"min": 0, "max": 1, "common_mode_min": 1}"#, "source.common_mode_min"),
        (
            r#"{"kind": "differential", "min": 0, "max": 1, "common_mode_min": 2, "common_mode_max": 1}"#,
            "source.common_mode_max",
        ),
        (r#"{"kind": "differential", "min": 0, "max": 1, "coupling": "ac", "band_low": 1}"#, "source.coupling"),
    ];
    let mut rows = Vec::new();
    for (source, field) in cases {
        let got = Request::from_json(&base(source)).err().map(|e| e.field);
        rows.push(fact(
            format!("{source} → error on {field} (got {got:?})"),
            got.as_deref() == Some(field),
            "request contract",
        ));
    }
    check(&rows);
}

// ---------------------------------------------------------------------------------------
// Bridges

#[test]
fn bridges_follow_the_bridge_formula_and_ngspice() {
    const REF: &str =
        "references.md: Wheatstone bridge, one active arm R(1+x): V_out = V_exc·x/(4+2x); 5 V, x = 0.002 → 2.4975 mV";
    const SRC: &str = "ngspice (Debian ngspice-39) operating point of the exported netlist";
    let mut rows = Vec::new();
    // One active arm, x = 0.002 on 5 V: sensitivity S = x/(4 + 2x) per volt.
    let s = 0.002 / (4.0 + 2.0 * 0.002);
    let json = format!(
        r#"{{"name": "Cold-room floor strain gauge", "source": {{"kind": "bridge", "excitation": 5,
            "sensitivity": {s:e}, "bridge_resistance": 120, "active_arms": 1, "band_high": 2}},
        "destination": {{"min": 0, "max": 3.3, "bits": 16, "sample_rate": 20}}, "supplies": [5],
        "parts": {{"resistor_series": "E96", "resistor_tolerance": "0.1 %"}}}}"#
    );
    let req = request(&json);
    // The worked value is given to 0.1 µV: half of that as the tolerance.
    rows.push(row("one arm, x 0.002, 5 V: full-scale output (source.max)", req.source.max, 2.4975e-3, 0.05e-6, REF));
    let d = design(&req);
    let b = d.bridge().expect("bridge design");
    rows.push(row(
        "one arm: shortfall from the straight line at full scale, 2x/(4+2x)",
        b.nonlinearity,
        0.004 / 4.004,
        1e-12,
        REF,
    ));
    rows.push(row("excitation current V/R", b.excitation_current, 5.0 / 120.0, 1e-15, "Ohm's law"));
    rows.push(row("power per arm (V/2)²/R", b.arm_power, 2.5 * 2.5 / 120.0, 1e-15, "P = V²/R"));
    rows.push(fact(
        "120 Ω at 5 V heats each arm by 52 mW: a self-heating warning",
        d.checks.iter().any(|c| c.id == "self_heating" && c.severity == Severity::Warning),
        "common practice: a few mW per arm",
    ));
    // The demo-like full bridge through ngspice: the mapping at the ends of the range.
    let req = request(
        r#"{"name": "Grain silo load cell", "source": {"kind": "bridge", "excitation": "5 V", "sensitivity": "3 m",
            "bridge_resistance": "700", "band_high": "1 Hz"},
        "destination": {"min": 0, "max": 3.3, "bits": 16, "sample_rate": "10 Hz"}, "supplies": [5],
        "parts": {"resistor_series": "E96", "resistor_tolerance": "0.1 %"}}"#,
    );
    rows.push(row(
        "full bridge 3 mV/V on 5 V: range 0 … 15 mV",
        req.source.max,
        15e-3,
        1e-12,
        "S × V_exc (the bridge's sensitivity definition)",
    ));
    let d = design(&req);
    let c = d.circuit.as_ref().expect("circuit");
    rows.push(fact(
        "silo: VEXC on the bench",
        c.part("VEXC").is_some_and(|p| p.bench && p.value == 5.0),
        "README netlist contract",
    ));
    let p = d.predicted.expect("predicted");
    let vcm = c.part("VCM").map_or(0.0, |p| p.value);
    let spice = spice_pairs("silo", &d, &[(0.0, vcm), (15e-3, vcm)]);
    rows.push(row("silo: output at 0", p.output_at_min, spice[0], 1e-4 * 3.3, SRC));
    rows.push(row("silo: output at 15 mV", p.output_at_max, spice[1], 1e-4 * 3.3, SRC));
    // Zero balance: ±2 % of the 15 mV full scale by default (common practice for load cells),
    // times the stage's gain at the output.
    let b = d.bridge().expect("bridge");
    rows.push(row(
        "silo: zero balance at the bridge, 2 % of 15 mV",
        b.zero_offset,
        0.02 * 15e-3,
        1e-15,
        "rangefit-engine DEFAULT_ZERO_BALANCE (common practice)",
    ));
    let trim = d.checks.iter().find(|c| c.id == "zero_trim").expect("zero_trim check");
    rows.push(fact(
        format!("silo: zero_trim names the output shift: {}", trim.message),
        trim.message.contains(&rangefit_engine::units::format(
            p.gain.abs() * 0.02 * 15e-3,
            rangefit_engine::units::Quantity::Voltage,
        )),
        "design contract",
    ));
    // Excitation "supply": the highest positive rail.
    let r = request(
        r#"{"source": {"kind": "bridge", "excitation": "supply", "sensitivity": "2 m", "bridge_resistance": 350},
            "destination": {"min": 0, "max": 3.3, "sample_rate": 10}, "supplies": [12, 5, -5]}"#,
    );
    rows.push(row(
        "excitation \"supply\" with rails 12, 5, −5 V",
        r.source.bridge.as_ref().map_or(f64::NAN, |b| b.excitation),
        12.0,
        0.0,
        "request contract",
    ));
    check(&rows);
}

#[test]
fn bridge_fields_are_read_and_refused_by_name() {
    let base = |source: &str| {
        format!(
            r#"{{"source": {source}, "destination": {{"min": 0, "max": 3.3, "sample_rate": 100}}, "supplies": [5]}}"#
        )
    };
    let cases = [
        (r#"{"kind": "bridge", "sensitivity": "2 m", "bridge_resistance": 350}"#, "source.excitation"),
        (r#"{"kind": "bridge", "excitation": 5, "bridge_resistance": 350}"#, "source.sensitivity"),
        (r#"{"kind": "bridge", "excitation": 5, "sensitivity": "2 m"}"#, "source.bridge_resistance"),
        (
            r#"{"kind": "bridge", "excitation": 5, "sensitivity": "2 m", "bridge_resistance": 350, "active_arms": 3}"#,
            "source.active_arms",
        ),
        (
            r#"{"kind": "bridge", "excitation": 5, "sensitivity": "2 m", "bridge_resistance": 350,
                "common_mode_min": 1}"#,
            "source.common_mode_min",
        ),
        (r#"{"min": 0, "max": 1, "excitation": 5}"#, "source.excitation"),
        (
            r#"{"kind": "bridge", "excitation": 5, "sensitivity": "2 m", "bridge_resistance": 350, "zero_balance": 2}"#,
            "source.zero_balance",
        ),
        (
            r#"{"kind": "bridge", "excitation": "mains", "sensitivity": "2 m", "bridge_resistance": 350}"#,
            "source.excitation",
        ),
    ];
    let mut rows = Vec::new();
    for (source, field) in cases {
        let got = Request::from_json(&base(source)).err().map(|e| e.field);
        rows.push(fact(
            format!("{source} → error on {field} (got {got:?})"),
            got.as_deref() == Some(field),
            "request contract",
        ));
    }
    check(&rows);
}
