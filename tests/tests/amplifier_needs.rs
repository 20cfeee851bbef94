//! What the amplifier must be: the largest input offset the requirements state keeps the
//! output inside the usable range, and an amplifier beyond what the range leaves pushes the
//! pin out of it. Shown in ngspice on the exported netlist with the offset as a DC source in
//! series with the amplifier's + input (tests/REFERENCES.md §ngspice); the request is a
//! scenario of our own.

use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::{design, Request};
use rangefit_tests::rows::{check, fact, row_rel, Row};
use rangefit_tests::spice;
use serde_json::json;

const OP: &str = "ngspice operating point of the exported netlist (tests/REFERENCES.md, ngspice)";

/// A cold-frame soil heater's thermocouple: 0 … 20 mV into a 12-bit converter's 0 … 3.3 V
/// on one 3.3 V rail, no filter (one amplifier carries every offset), 0.1 % resistors, the
/// rail held exact so that the offset and the resistors share the margin.
fn cold_frame() -> Request {
    let v = json!({
        "version": 1, "name": "Cold-frame soil heater thermocouple",
        "source": {"min": 0, "max": "20 mV", "impedance": 0, "band_high": "2 Hz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "20 Hz", "impedance": "1M", "headroom": 0.02},
        "supplies": [3.3], "supply_tolerance": 0,
        "parts": {"resistor_series": "E96", "resistor_tolerance": "0.1 %"},
        "filter": {"response": "none"},
        "amplifier": {"offset": "1 mV", "bias_current": "1 nA"}
    });
    Request::from_json(&v.to_string()).unwrap_or_else(|e| panic!("request does not read: {e}"))
}

#[test]
fn the_stated_offset_limit_holds_and_a_larger_offset_leaves_the_range() {
    let req = cold_frame();
    let d = design(&req);
    // The stated 1 mV amplifier fails the yield (that is what the requirement is for); no
    // other check is an error.
    let errors: Vec<_> =
        d.checks.iter().filter(|c| c.severity == Severity::Error && c.id != "yield").map(|c| &c.message).collect();
    assert!(errors.is_empty(), "errors: {errors:?}");
    let y = d.checks.iter().find(|c| c.id == "yield").expect("a yield check");
    let a = d.analysis.as_ref().expect("analyses");
    let b = a.tolerance.budget.as_ref().expect("a budget");
    let offset_max = b.offset_max.expect("an offset limit");
    let p = d.predicted.expect("a prediction");
    let c = d.circuit.as_ref().expect("a circuit");
    let amps = c.parts.iter().filter(|q| q.kind == rangefit_engine::circuit::PartKind::OpAmp).count();
    assert_eq!(amps, 1, "one amplifier carries every offset");
    let (lo, hi) = c.output_limits();
    let usable = (lo.max(0.0), hi.min(3.3));
    let net = netlist(&req, c, NetlistConfig { testbench: false });
    let ends = |volts: f64| {
        let alters = [vec!["alter VSENSE dc = 0".to_string()], vec!["alter VSENSE dc = 0.02".to_string()]];
        let v = spice::operating_points("cold-frame", &spice::with_offset(&net, "U1", volts), &alters, &["adc"]);
        [v[0][0], v[1][0]]
    };
    let inside = |y: [f64; 2]| y.iter().all(|&v| v >= usable.0 - 1e-6 && v <= usable.1 + 1e-6);
    let mut rows: Vec<Row> = vec![fact(
        format!("the yield check names the offset as the fix: {}", y.message),
        y.severity == Severity::Error && y.message.contains("input offset below"),
        "design contract",
    )];
    let req_text = d.requirements.as_ref().map(|r| r.summary.join("; ")).unwrap_or_default();
    rows.push(fact(
        format!("the requirements state the offset limit: {req_text}"),
        req_text.contains("input offset ≤"),
        "design contract",
    ));
    // At the stated limit, either sign, nominal resistors: inside the usable range, with the
    // resistors' share of the margin still to spare.
    for sign in [-1.0, 1.0] {
        let y = ends(sign * offset_max);
        println!("offset {:+.4e} V: ngspice {y:?}, usable {usable:?}", sign * offset_max);
        rows.push(fact(
            format!("ngspice: at {:+.3e} V of offset the pin stays inside {usable:?}: {y:?}", sign * offset_max),
            inside(y),
            OP,
        ));
    }
    // The offset's own gain to the pin, measured in the linear region: half the change at the
    // top across ± the stated limit (1 mV would drive the pin into the swing limit).
    let (up, down) = (ends(offset_max), ends(-offset_max));
    let g = 0.5 * (up[1] - down[1]).abs() / offset_max;
    // The offset that uses up the whole margin with exact resistors, and a fifth beyond it:
    // the pin leaves the usable range (the failure the requirement guards against).
    let beyond = 1.2 * b.margin / g;
    let worst = [-beyond, beyond].map(ends);
    println!("offset ±{beyond:.4e} V: ngspice {worst:?}");
    rows.push(fact(
        format!("ngspice: ±{beyond:.3e} V of offset takes the pin out of {usable:?}: {worst:?}"),
        !inside(worst[0]) || !inside(worst[1]),
        OP,
    ));
    rows.push(fact(
        format!("the stated limit {offset_max:.3e} V lies below the offset that leaves the range"),
        offset_max < beyond,
        "design contract",
    ));
    // The budget's offset share at the stated 1 mV against ngspice's ±1 mV swing at the top.
    let share = b.contributors.iter().find(|c| c.what == "amplifier input offset").map_or(0.0, |c| c.spread);
    rows.push(row_rel("budget: offset spread at the top (V)", share, g * 1e-3, 1e-3, 0.0, OP));
    println!("signal gain {:.3}, offset gain {g:.3} (ngspice), offset limit {offset_max:.4e} V", p.gain);
    check(&rows);
}
