//! Bench truth: for each way a built circuit fails on the bench, ngspice on the exported
//! netlist shows the failure in a design the checks flag with an error, and shows that the
//! same job with the fault removed — a design with no error-severity check — holds up.
//! The simulator is Debian's ngspice (SPICE3-compatible; tests/REFERENCES.md §ngspice);
//! requests are scenarios of our own. ngspice must be installed: without it the test fails.

use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::{design, Design, Request};
use rangefit_tests::rows::{at_most, check, fact, row, Row};
use rangefit_tests::spice;
use serde_json::{json, Value};

const NGSPICE: &str = "ngspice AC analysis of the exported netlist (tests/REFERENCES.md, ngspice)";

fn request(v: &Value) -> Request {
    Request::from_json(&v.to_string()).unwrap_or_else(|e| panic!("request does not read: {e}\n{v}"))
}

fn errors(d: &Design) -> Vec<String> {
    d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| format!("{}: {}", c.id, c.message)).collect()
}

fn exported(d: &Design) -> String {
    netlist(&d.request, d.circuit.as_ref().expect("a circuit"), NetlistConfig { testbench: false })
}

/// A quay crane's boom strain channel: 0 … 10 mV from a strain amplifier's raw output into a
/// 12-bit converter at 500 kHz, 50 kHz of band, on one 5 V rail, with the amplifier's
/// gain-bandwidth given.
fn crane(gbw: &str) -> Request {
    request(&json!({
        "version": 1, "name": "Quay crane boom strain",
        "source": {"kind": "single_ended", "min": 0, "max": 0.01, "coupling": "dc", "impedance": "100",
                   "band_high": "50 kHz"},
        "destination": {"min": 0, "max": 1.8, "bits": 12, "sample_rate": "500 kHz", "impedance": "100k"},
        "supplies": [5],
        "amplifier": {"gbw": gbw}
    }))
}

/// Response corners anywhere: an amplifier with too little gain-bandwidth for its gain puts
/// the −3 dB point inside the band. The engine must find it where ngspice finds it and
/// call it an error; with a fast amplifier the band edge stays within the allowance.
#[test]
fn a_corner_inside_the_band_is_found_and_is_an_error() {
    let mut rows: Vec<Row> = Vec::new();
    let slow = design(&crane("1 MHz"));
    let p = slow.predicted.expect("a prediction");
    let fh = p.band_high.expect("an upper corner");
    let net = exported(&slow);
    let g = spice::ac_magnitudes("crane-slow", &net, "adc", &[50.0, fh, 50e3]);
    rows.push(row(
        "slow amplifier: ngspice gain at the engine's upper corner, dB re 50 Hz",
        20.0 * (g[1] / g[0]).log10(),
        -3.0103,
        0.05,
        NGSPICE,
    ));
    rows.push(fact(format!("slow amplifier: the corner {fh:.0} Hz lies inside the 50 kHz band"), fh < 50e3, NGSPICE));
    rows.push(fact(
        format!("slow amplifier: ngspice is below −3 dB at 50 kHz ({:.2} dB)", 20.0 * (g[2] / g[0]).log10()),
        g[2] / g[0] < std::f64::consts::FRAC_1_SQRT_2,
        NGSPICE,
    ));
    let e = errors(&slow);
    rows.push(fact(
        format!("slow amplifier: the bandwidth check is an error ({e:?})"),
        e.iter().any(|m| m.starts_with("bandwidth:")),
        "design contract",
    ));

    let fast = design(&crane("50 MHz"));
    let e = errors(&fast);
    rows.push(fact(format!("fast amplifier: no error-severity check ({e:?})"), e.is_empty(), "design contract"));
    let net = exported(&fast);
    let g = spice::ac_magnitudes("crane-fast", &net, "adc", &[50.0, 50e3]);
    let allowed = fast.filter.as_ref().map_or(fast.request.filter.passband_error, |f| f.passband_allowed_db);
    rows.push(at_most(
        "fast amplifier: ngspice droop at 50 kHz, dB",
        -20.0 * (g[1] / g[0]).log10(),
        allowed,
        0.01,
        NGSPICE,
    ));
    check(&rows);
}
