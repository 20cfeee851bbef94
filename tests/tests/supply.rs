//! References, not rails: a level shift taken from a supply rail moves the converter pin with
//! the rail's tolerance; the `supply` check states that shift in LSB, and taking the level
//! from the converter's reference pin (`destination.reference_pin`) removes it. Shown in
//! ngspice on the exported netlist (operating points with the rail at the ends of its
//! tolerance; tests/REFERENCES.md §ngspice); the request is a scenario of our own.

use rangefit_engine::analysis::tolerance::rails::SupplyShift;
use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::{design, Design, Request};
use rangefit_tests::rows::{check, fact, row_rel, Row};
use rangefit_tests::spice;
use serde_json::{json, Value};

const OP: &str = "ngspice operating point of the exported netlist (tests/REFERENCES.md, ngspice)";

/// An allotment water-butt pressure sensor: 0.4 … 2.9 V into a 0 … 2.5 V, 12-bit converter
/// on one 3.3 V rail (±5 %, the default), so the stage needs a negative level shift; with
/// `pin` the converter's 2.5 V reference is brought out for the circuit to take it from.
fn water_butt(pin: bool) -> Request {
    let mut v = json!({
        "version": 1, "name": "Allotment water-butt pressure",
        "source": {"min": 0.4, "max": 2.9, "impedance": "1k", "band_high": "5 Hz"},
        "destination": {"min": 0, "max": 2.5, "bits": 12, "sample_rate": "1 kHz"},
        "supplies": [3.3]
    });
    if pin {
        v["destination"]["reference_pin"] = Value::Bool(true);
    }
    Request::from_json(&v.to_string()).unwrap_or_else(|e| panic!("request does not read: {e}"))
}

fn supply(d: &Design) -> &SupplyShift {
    d.analysis.as_ref().and_then(|a| a.tolerance.supply.as_ref()).expect("supply figures")
}

fn errors(d: &Design) -> Vec<String> {
    d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| format!("{}: {}", c.id, c.message)).collect()
}

/// ngspice's `v(adc)` at both ends of the sensor range with `VPOS` at each end of ±5 %,
/// as `[[low rail: at min, at max], [high rail: …]]`.
fn rail_extremes(tag: &str, d: &Design) -> [[f64; 2]; 2] {
    let net = netlist(&d.request, d.circuit.as_ref().expect("a circuit"), NetlistConfig { testbench: false });
    let s = &d.request.source;
    let mut alters = Vec::new();
    for rail in [3.3 * 0.95, 3.3 * 1.05] {
        for x in [s.min, s.max] {
            alters.push(vec![format!("alter VPOS dc = {rail:e}"), format!("alter VSENSE dc = {x:e}")]);
        }
    }
    let v = spice::operating_points(tag, &net, &alters, &["adc"]);
    [[v[0][0], v[1][0]], [v[2][0], v[3][0]]]
}

#[test]
fn a_level_from_the_rail_moves_the_pin_and_one_from_the_reference_does_not() {
    let mut rows: Vec<Row> = Vec::new();
    let lsb = 2.5 / 4096.0;

    // From the rail: ngspice's pin moves with VPOS as the check says (its level-shift part:
    // the netlist's amplifier model has no supply rejection, which the engine adds on top).
    let railed = design(&water_butt(false));
    assert!(errors(&railed).is_empty(), "errors: {:?}", errors(&railed));
    let s = supply(&railed);
    let v = rail_extremes("water-butt-rail", &railed);
    let moved = (0..2).map(|q| 0.5 * (v[1][q] - v[0][q]).abs()).fold(0.0, f64::max);
    println!("rail: ngspice moves the pin by ±{moved:.5e} V; engine says {:.5e} V, {:.1} LSB", s.total, s.total_lsb);
    rows.push(fact(
        format!("ngspice: the rail moves the pin by more than 10 LSB ({moved:.3e} V)"),
        moved > 10.0 * lsb,
        OP,
    ));
    rows.push(row_rel(
        "engine's rail shift (level-shift part) against ngspice (V)",
        s.total - s.rejection,
        moved,
        0.01,
        1e-6,
        OP,
    ));
    let check_of = |d: &Design| d.checks.iter().find(|c| c.id == "supply").expect("a supply check").clone();
    let c = check_of(&railed);
    rows.push(fact(
        format!("the supply check warns and names the reference pin: {}", c.message),
        c.severity == Severity::Warning && c.message.contains("reference_pin"),
        "design contract",
    ));

    // From the reference pin: the netlist carries VREF, the rail moves the pin by under a
    // tenth of an LSB in ngspice, and the design holds up at both rail extremes.
    let pinned = design(&water_butt(true));
    assert!(errors(&pinned).is_empty(), "errors: {:?}", errors(&pinned));
    let net = netlist(&pinned.request, pinned.circuit.as_ref().expect("a circuit"), NetlistConfig { testbench: false });
    rows.push(fact("the netlist has the reference pin VREF", net.lines().any(|l| l.starts_with("VREF vref 0")), OP));
    let v = rail_extremes("water-butt-pin", &pinned);
    let moved = (0..2).map(|q| 0.5 * (v[1][q] - v[0][q]).abs()).fold(0.0, f64::max);
    println!("pin: ngspice moves the pin by ±{moved:.5e} V");
    rows.push(fact(
        format!("ngspice: with the reference pin the rail moves the pin by under 0.1 LSB ({moved:.3e} V)"),
        moved < 0.1 * lsb,
        OP,
    ));
    let inside = v.iter().flatten().all(|&y| (0.0..=2.5).contains(&y));
    rows.push(fact(format!("ngspice: the pin stays inside 0 … 2.5 V at both rail extremes ({v:?})"), inside, OP));
    let c = check_of(&pinned);
    rows.push(fact(
        format!("the supply check is content with the reference pin: {}", c.message),
        c.severity == Severity::Ok,
        "design contract",
    ));
    check(&rows);
}

/// Every amplifier inside its limits: the beehive scale's instrumentation amplifier runs its
/// bridge from a fixed 3.3 V excitation while the amplifiers' rail may sit 5 % low. The first
/// stage's outputs are inner nodes the engine watches; ngspice on the exported netlist with
/// the rail at each end of its tolerance puts them where the engine's rows and rail effects
/// say, inside their swing, and the design's stage_limits check is content.
#[test]
fn inner_stages_hold_their_limits_at_both_rail_extremes() {
    let req = Request::from_json(rangefit_engine::demos::ALL.iter().find(|d| d.id == "beehive-scale").unwrap().json)
        .expect("the demo reads");
    let d = design(&req);
    assert!(errors(&d).is_empty(), "errors: {:?}", errors(&d));
    let a = d.analysis.as_ref().expect("analyses");
    let c = d.checks.iter().find(|c| c.id == "stage_limits").expect("a stage_limits check");
    let mut rows: Vec<Row> =
        vec![fact(format!("stage_limits is ok: {}", c.message), c.severity == Severity::Ok, "design contract")];
    let net = netlist(&req, d.circuit.as_ref().expect("a circuit"), NetlistConfig { testbench: false });
    let first: Vec<_> = a
        .tolerance
        .stages
        .iter()
        .filter(|r| r.what == "output" && (r.amplifier == "U1" || r.amplifier == "U2"))
        .collect();
    assert!(!first.is_empty(), "the first stage's outputs are watched: {:?}", a.tolerance.stages);
    let amp = &d.amplifier;
    for r in first {
        let node = d.circuit.as_ref().unwrap().part(&r.amplifier).unwrap().nodes[4].clone();
        let mut alters = Vec::new();
        for rail in [3.3, 3.3 * 0.95] {
            alters.push(vec![format!("alter VPOS dc = {rail:e}"), format!("alter VSENSE dc = {:e}", r.at)]);
        }
        let v = spice::operating_points("beehive-inner", &net, &alters, &[&node]);
        rows.push(row_rel(
            format!("{} output at sensor {:.3e}: engine nominal against ngspice (V)", r.amplifier, r.at),
            r.nominal,
            v[0][0],
            1e-4,
            1e-5,
            OP,
        ));
        let low_limit = 3.3 * 0.95 - amp.swing_high;
        rows.push(fact(
            format!(
                "ngspice: {} output {:.4} V stays under its {:.4} V limit with the rail 5 % low",
                r.amplifier, v[1][0], low_limit
            ),
            v[1][0] < low_limit,
            OP,
        ));
    }
    check(&rows);
}
