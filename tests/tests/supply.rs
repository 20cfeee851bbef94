//! References, not rails: a level shift taken from a supply rail moves the converter pin with
//! the rail's tolerance; the `supply` check states that shift in LSB, and taking the level
//! from the converter's reference pin (`destination.reference_pin`) removes it. Shown in
//! ngspice on the exported netlist (operating points with the rail at the ends of its
//! tolerance; tests/REFERENCES.md §ngspice); the request is a scenario of our own.

use rangefit_engine::analysis::tolerance::rails::SupplyShift;
use rangefit_engine::circuit::PartKind;
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

/// The failure `stage_limits` guards against: a slurry tank's level pair on a 4 V common mode
/// into an instrumentation amplifier on one 5 V rail. At the low end of the range the
/// difference stage U3 sits 130 mV above its swing limit; the engine's worst case takes it
/// below the limit and the check warns, the Monte Carlo counting such builds as clipped.
/// ngspice on the exported netlist at the same vertex (each resistor at ±1 % and each
/// amplifier's offset at ± its figure, the sign of each from ngspice's own sensitivities)
/// holds U3 at its swing limit.
#[test]
fn an_inner_stage_at_the_tolerance_vertex_reaches_its_swing_limit() {
    let v = json!({"version": 1, "name": "Slurry-tank level pair",
        "source": {"kind": "differential", "min": -0.05, "max": 0.05, "common_mode_min": 3.9, "common_mode_max": 4.1,
            "impedance": "100", "band_high": "10 Hz", "front_end": "instrumentation"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "1 kHz"},
        "supplies": [5], "parts": {"resistor_series": "E96", "resistor_tolerance": "1 %"}});
    let req = Request::from_json(&v.to_string()).expect("reads");
    let d = design(&req);
    let c = d.circuit.as_ref().expect("a circuit");
    let a = d.analysis.as_ref().expect("analyses");
    let check_of = d.checks.iter().find(|c| c.id == "stage_limits").expect("a stage_limits check");
    let row = a.tolerance.stages.iter().find(|r| r.amplifier == "U3" && r.what == "output" && r.at < 0.0).expect("U3");
    let mut rows: Vec<Row> = vec![
        fact(
            format!("stage_limits warns: {}", check_of.message),
            check_of.severity == Severity::Warning,
            "design contract",
        ),
        fact(
            format!("engine: U3's worst case {:.4} V lies below its {:.4} V limit", row.worst[0], row.limits[0]),
            row.worst[0] < row.limits[0],
            "design contract",
        ),
        fact(
            format!("the Monte Carlo counts clipped builds ({})", a.tolerance.monte_carlo.clipped),
            a.tolerance.monte_carlo.clipped > 0,
            "design contract",
        ),
    ];
    // Every amplifier gets an offset source (0 V), so one ngspice run can step each parameter.
    let amps: Vec<String> = c.parts.iter().filter(|p| p.kind == PartKind::OpAmp).map(|p| p.reference.clone()).collect();
    let mut net = netlist(&req, c, NetlistConfig { testbench: false });
    for u in &amps {
        net = spice::with_offset(&net, u, 0.0);
    }
    let node = c.part("U3").expect("U3").nodes[4].clone();
    let resistors: Vec<(String, f64)> = c
        .parts
        .iter()
        .filter(|p| !p.bench && p.kind == PartKind::Resistor && p.tolerance.is_some())
        .map(|p| (p.reference.clone(), p.value))
        .collect();
    let vos = d.amplifier.offset;
    let sensor = "alter VSENSE dc = -0.05".to_string();
    // Each parameter stepped up alone, then set back: its sign from ngspice.
    let mut steps: Vec<Vec<String>> = vec![vec![sensor.clone()]];
    for (r, x) in &resistors {
        steps.push(vec![format!("alter {r} = {:e}", x * 1.01)]);
        steps.push(vec![format!("alter {r} = {x:e}")]);
    }
    for u in &amps {
        steps.push(vec![format!("alter VOS_{u} dc = {vos:e}")]);
        steps.push(vec![format!("alter VOS_{u} dc = 0")]);
    }
    let v = spice::operating_points("slurry-signs", &net, &steps, &[&node]);
    let base = v[0][0];
    let down = |k: usize| v[1 + 2 * k][0] < base;
    let mut vertex = vec![sensor];
    for (k, (r, x)) in resistors.iter().enumerate() {
        vertex.push(format!("alter {r} = {:e}", if down(k) { x * 1.01 } else { x * 0.99 }));
    }
    for (j, u) in amps.iter().enumerate() {
        let k = resistors.len() + j;
        vertex.push(format!("alter VOS_{u} dc = {:e}", if down(k) { vos } else { -vos }));
    }
    let at = spice::operating_points("slurry-vertex", &net, &[vertex], &[&node])[0][0];
    println!("U3 output: nominal {base:.4} V, at the vertex {at:.4} V, limit {:.4} V", row.limits[0]);
    rows.push(fact(
        format!("ngspice: U3 at the vertex {at:.4} V is held at its {:.4} V swing limit", row.limits[0]),
        at <= row.limits[0] + 2e-3,
        OP,
    ));
    rows.push(row_rel("ngspice: U3 nominal against the engine's row (V)", base, row.nominal, 1e-3, 1e-4, OP));
    check(&rows);
}
