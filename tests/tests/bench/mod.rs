//! The data-driven check helper of the sensor tests (one row per expectation, each naming
//! its source) and the ngspice bench for differential pairs, shared by `sensors.rs` and
//! `inamp.rs`.
#![allow(dead_code)]

use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::{Design, Request};
use rangefit_tests::run_ngspice;

/// One expectation: what, the value, the reference, the tolerance and the reference's source.
pub struct Row {
    what: String,
    got: f64,
    want: f64,
    tol: f64,
    source: &'static str,
}

pub fn row(what: impl Into<String>, got: f64, want: f64, tol: f64, source: &'static str) -> Row {
    Row { what: what.into(), got, want, tol, source }
}

pub fn fact(what: impl Into<String>, ok: bool, source: &'static str) -> Row {
    row(what, if ok { 1.0 } else { 0.0 }, 1.0, 0.0, source)
}

/// The one check helper: every failing row is listed with its source.
pub fn check(rows: &[Row]) {
    let bad: Vec<String> = rows
        .iter()
        .filter(|r| !((r.got - r.want).abs() <= r.tol) || r.got.is_nan())
        .map(|r| format!("{}: got {}, want {} ± {} [{}]", r.what, r.got, r.want, r.tol, r.source))
        .collect();
    assert!(bad.is_empty(), "{} of {} checks failed:\n{}", bad.len(), rows.len(), bad.join("\n"));
}

pub fn request(json: &str) -> Request {
    Request::from_json(json).unwrap_or_else(|e| panic!("{e}\n{json}"))
}

/// v(adc) from ngspice at DC for each (VSENSE, VCM) pair.
pub fn spice_pairs(tag: &str, d: &Design, pairs: &[(f64, f64)]) -> Vec<f64> {
    let net = netlist(&d.request, d.circuit.as_ref().expect("circuit"), NetlistConfig { testbench: false });
    let body = net.trim_end().strip_suffix(".end").expect("netlist ends with .end");
    let mut control = String::new();
    for (v, cm) in pairs {
        control.push_str(&format!("alter VSENSE dc = {v:e}\nalter VCM dc = {cm:e}\nop\nprint v(adc)\n"));
    }
    let deck = format!("{body}.control\n{control}quit\n.endc\n.end\n");
    let (ok, stdout, stderr) = run_ngspice(tag, &deck);
    assert!(ok, "[{tag}] ngspice failed:\n{stderr}\n{deck}");
    let v: Vec<f64> = stdout.lines().filter_map(|l| l.trim().strip_prefix("v(adc) = ").and_then(|x| x.trim().parse().ok())).collect();
    assert_eq!(v.len(), pairs.len(), "[{tag}] ngspice printed:\n{stdout}");
    v
}

