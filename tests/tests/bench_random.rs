//! Bench truth over seeded random requests of every sensor kind: each design with no
//! error-severity check must hold up in ngspice on its exported netlist (tests/REFERENCES.md
//! §ngspice):
//! * the operating point at both ends of the sensor range (an AC-coupled design: at rest), with
//!   the nominal rails and with every rail at each end of its tolerance: every amplifier's
//!   output inside its swing, the converter pin inside the converter's range, and, on
//!   nominal rails, the pin where the engine predicts it;
//! * every aluminium electrolytic with its leakage limit (0.01·C·V or 3 µA, from memory, at
//!   the rating the part list gives it) pushed through it: the rest level at the pin moves by
//!   no more than the share of the headroom the leakage rule allows;
//! * AC: the response at band_high (and band_low when AC-coupled) within the request's in-band
//!   allowance of the mid-band gain, as the corner checks claim;
//! * broadband `.noise` of the resistors over the engine's band within 5 % of the engine's.
//!
//! Requests come from a seeded generator (rand_chacha ChaCha8Rng), our own numbers.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rangefit_engine::analysis::noise::{self, NoiseConfig};
use rangefit_engine::circuit::PartKind;
use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::ratings::{self, Dielectric};
use rangefit_engine::{design, Design, Request};
use rangefit_tests::rows::{at_most, check, fact, row, row_rel, Row};
use rangefit_tests::spice;
use serde_json::{json, Value};

const OP: &str = "ngspice operating point of the exported netlist (tests/REFERENCES.md, ngspice)";
const AC: &str = "ngspice AC analysis of the exported netlist (tests/REFERENCES.md, ngspice)";
const NOISE: &str = "ngspice .noise of the exported netlist over the engine's band (tests/REFERENCES.md, ngspice)";

/// Designs per kind.
const PER_KIND: usize = 6;

/// A random request of `kind` (our own ranges of values).
fn random_request(kind: &str, rng: &mut ChaCha8Rng) -> Value {
    let rails = [json!([3.3]), json!([5]), json!([12, -12]), json!([5, -5])];
    let supplies = rails[rng.random_range(0..rails.len())].clone();
    let dual = supplies.as_array().is_some_and(|a| a.len() == 2);
    let top: f64 = if dual { [2.5, 4.096][rng.random_range(0..2)] } else { [2.5, 3.3][rng.random_range(0..2)] };
    let (dmin, dmax) = if dual && rng.random_bool(0.5) { (-top, top) } else { (0.0, top.min(3.3)) };
    let band_high = [10.0, 100.0, 1000.0][rng.random_range(0..3)];
    let bits = [12, 16][rng.random_range(0..2)];
    let rate = band_high * [20.0, 50.0][rng.random_range(0..2)];
    let destination = json!({"min": dmin, "max": dmax, "bits": bits, "sample_rate": rate});
    let source = match kind {
        "single_ended" => {
            let span = 10f64.powf(rng.random_range(-1.3..0.7));
            let centre = if rng.random_bool(0.5) { 0.0 } else { rng.random_range(0.0..2.0) };
            let ac = rng.random_bool(0.3);
            let mut s = json!({"min": centre - span / 2.0, "max": centre + span / 2.0,
                "impedance": rng.random_range(0.0..5e3), "band_high": band_high});
            if ac {
                s["coupling"] = json!("ac");
                s["band_low"] = json!(band_high / 100.0);
            }
            s
        }
        "current_loop" => json!({"kind": "current_loop", "min": "4 mA", "max": "20 mA", "band_high": band_high}),
        // An electrode: slow (its own 200 MΩ and 100 pF put a corner near 8 Hz).
        "high_impedance" => {
            let peak = rng.random_range(0.2..1.0);
            let slow = [0.5, 1.0][rng.random_range(0..2)];
            json!({"kind": "high_impedance", "min": -peak, "max": peak, "impedance": "200M",
                "capacitance": "100 pF", "band_high": slow})
        }
        "photodiode" => json!({"kind": "photodiode", "min": 0, "max": format!("{} uA", rng.random_range(1.0..50.0)),
            "capacitance": "50 pF", "dark_current": "1 nA", "band_high": band_high}),
        "differential" => {
            let peak = 10f64.powf(rng.random_range(-1.5..0.0));
            let cm = if dual { 0.0 } else { 1.2 };
            json!({"kind": "differential", "min": -peak, "max": peak, "common_mode_min": cm - 0.1,
                "common_mode_max": cm + 0.1, "impedance": "100", "band_high": band_high})
        }
        _ => json!({"kind": "bridge", "excitation": "supply", "sensitivity": format!("{} m",
            rng.random_range(1.0..3.0)), "bridge_resistance": "350", "active_arms": 4, "band_high": band_high}),
    };
    let mut v = json!({"version": 1, "name": format!("random {kind}"), "source": source, "destination": destination,
        "supplies": supplies, "parts": {"resistor_series": "E96"}});
    // An electrode meets an amplifier with a CMOS or JFET input, as an engineer would choose.
    if kind == "high_impedance" {
        v["amplifier"] = json!({"bias_current": "5 pA"});
    }
    v
}

fn errors(d: &Design) -> Vec<String> {
    d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| format!("{}: {}", c.id, c.message)).collect()
}

/// The rails' bench sources and their tolerances, from the circuit.
fn rails(d: &Design) -> Vec<(String, f64, f64)> {
    let c = d.circuit.as_ref().expect("a circuit");
    c.parts
        .iter()
        .filter(|p| {
            p.bench && p.kind == PartKind::VoltageSource && p.role == Some(rangefit_engine::circuit::PartRole::Rail)
        })
        .map(|p| (p.reference.clone(), p.value, d.request.rail_tolerance(p.value)))
        .collect()
}

/// Every row for one design that has no error check.
fn hold_up(tag: &str, d: &Design, rows: &mut Vec<Row>) {
    let req = &d.request;
    let c = d.circuit.as_ref().expect("a circuit");
    let p = d.predicted.expect("a prediction");
    let net = netlist(req, c, NetlistConfig { testbench: false });
    let src = c.sensor_source().expect("a sensor source").reference.clone();
    let s = &req.source;
    let ac = s.coupling == rangefit_engine::request::Coupling::Ac;
    let xs: Vec<f64> = if ac { vec![0.5 * (s.min + s.max)] } else { vec![s.min, s.max] };
    let amps: Vec<String> = c.parts.iter().filter(|q| q.kind == PartKind::OpAmp).map(|q| q.nodes[4].clone()).collect();
    let mut nodes: Vec<&str> = amps.iter().map(String::as_str).collect();
    nodes.push("adc");
    nodes.sort_unstable();
    nodes.dedup();
    let rails = rails(d);
    let amp = &d.amplifier;
    // Nominal rails, then every rail low, then every rail high.
    for corner in [0.0, -1.0, 1.0] {
        let mut alters: Vec<Vec<String>> = Vec::new();
        for &x in &xs {
            let mut a: Vec<String> =
                rails.iter().map(|(r, v, t)| format!("alter {r} dc = {:e}", v * (1.0 + corner * t))).collect();
            a.push(format!("alter {src} dc = {x:e}"));
            alters.push(a);
        }
        let v = spice::operating_points(tag, &net, &alters, &nodes);
        let pos = rails.iter().map(|r| r.1 * (1.0 + corner * r.2)).fold(0.0, f64::max);
        let neg = rails.iter().map(|r| r.1 * (1.0 + corner * r.2)).fold(0.0, f64::min);
        let (lo, hi) = (neg + amp.swing_low, pos - amp.swing_high);
        for (k, &x) in xs.iter().enumerate() {
            for (j, n) in nodes.iter().enumerate() {
                let y = v[k][j];
                if amps.iter().any(|a| a == n) {
                    rows.push(fact(
                        format!(
                            "{tag}: rails ×(1{corner:+}·tol), sensor {x:.4e}: {n} {y:.4} V inside its \
                        swing {lo:.4} … {hi:.4} V"
                        ),
                        y > lo + 5e-4 && y < hi - 5e-4,
                        OP,
                    ));
                }
                if *n == "adc" {
                    let dd = &req.destination;
                    rows.push(fact(
                        format!(
                            "{tag}: rails ×(1{corner:+}·tol), sensor {x:.4e}: pin {y:.4} V inside \
                        {} … {} V",
                            dd.min, dd.max
                        ),
                        y >= dd.min - 1e-4 && y <= dd.max + 1e-4,
                        OP,
                    ));
                    if corner == 0.0 {
                        let want = if ac {
                            p.offset
                        } else if k == 0 {
                            p.output_at_min
                        } else {
                            p.output_at_max
                        };
                        rows.push(row(
                            format!("{tag}: pin at sensor {x:.4e} against the prediction (V)"),
                            y,
                            want,
                            1e-3,
                            OP,
                        ));
                    }
                }
            }
        }
    }
    // Electrolytics: each one's leakage limit pushed through it.
    let headroom = req.destination.headroom * (req.destination.max - req.destination.min);
    let mid = 0.5 * (s.min + s.max);
    for e in c.parts.iter().filter(|q| q.dielectric == Some(Dielectric::Electrolytic)) {
        let (a, b) = (&e.nodes[0], &e.nodes[1]);
        let rest = spice::operating_points(tag, &net, &[vec![format!("alter {src} dc = {mid:e}")]], &[a, b, "adc"]);
        let across = (rest[0][0] - rest[0][1]).abs();
        let leak = ratings::electrolytic_leakage(e.value, ratings::voltage_rating(across).unwrap_or(6.3));
        let with = format!("{}\nILEAK {a} {b} DC {leak:e}\n.end\n", net.trim_end().trim_end_matches(".end").trim_end());
        let moved = spice::operating_points(tag, &with, &[vec![format!("alter {src} dc = {mid:e}")]], &["adc"]);
        let shift = (moved[0][0] - rest[0][2]).abs();
        rows.push(at_most(
            format!("{tag}: {} leaking {leak:.2e} A moves the rest level (V)", e.reference),
            shift,
            ratings::LEAKAGE_SHARE * headroom,
            1e-4,
            OP,
        ));
    }
    // AC: the band's edges within the in-band allowance.
    let allowance = 10f64.powf(-req.filter.passband_error / 20.0);
    let mut freqs = vec![s.band_high, s.band_centre()];
    if ac {
        freqs.push(s.band_low);
    }
    let m = spice::ac_magnitudes(tag, &net, "adc", &freqs);
    for (i, &f) in freqs.iter().enumerate().filter(|(i, _)| *i != 1) {
        rows.push(fact(
            format!("{tag}: |H({f:.3e} Hz)| / |H(mid)| = {:.5} within the allowance {allowance:.5}", m[i] / m[1]),
            m[i] / m[1] >= allowance - 2e-3,
            AC,
        ));
    }
    // Resistor noise over the engine's band.
    let a = noise::noise(req, c, p.gain, &NoiseConfig { temperature: 300.15, points: 160, include_amplifier: false });
    let [f_lo, f_hi] = a.band;
    let control = format!("noise v(adc) {src} dec 20 {f_lo:e} {f_hi:e} 1\nprint onoise_total");
    let printed = spice::printed(tag, &net, &control);
    let total = printed.iter().find(|v| v.0 == "onoise_total").map(|v| v.1).unwrap_or(f64::NAN);
    rows.push(row_rel(
        format!("{tag}: resistor noise over {f_lo:.2e} … {f_hi:.2e} Hz (V)"),
        a.output_rms,
        total,
        0.05,
        0.0,
        NOISE,
    ));
}

#[test]
fn random_designs_of_every_kind_hold_up_in_ngspice() {
    let mut rng = ChaCha8Rng::seed_from_u64(14_014);
    let mut rows: Vec<Row> = Vec::new();
    for kind in ["single_ended", "current_loop", "high_impedance", "photodiode", "differential", "bridge"] {
        let mut built = 0;
        let mut refused = Vec::new();
        for i in 0..PER_KIND {
            let v = random_request(kind, &mut rng);
            let req = Request::from_json(&v.to_string()).unwrap_or_else(|e| panic!("request does not read: {e}\n{v}"));
            let d = design(&req);
            let e = errors(&d);
            if !e.is_empty() {
                refused.push(format!("{v}: {e:?}"));
                continue;
            }
            built += 1;
            hold_up(&format!("{kind}-{i}"), &d, &mut rows);
        }
        println!("{kind}: {built} of {PER_KIND} designs without an error check; refused: {refused:#?}");
        rows.push(fact(
            format!("{kind}: at least half the random requests design without an error ({built})"),
            2 * built >= PER_KIND,
            "design contract",
        ));
    }
    check(&rows);
}
