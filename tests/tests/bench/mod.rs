//! The request reader and the ngspice bench for differential pairs, shared by `sensors.rs`
//! and `inamp.rs`. The row/check helper they use is `rangefit_tests::rows`.
#![allow(dead_code)]

use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::{Design, Request};
use rangefit_tests::run_ngspice;

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
    let v: Vec<f64> =
        stdout.lines().filter_map(|l| l.trim().strip_prefix("v(adc) = ").and_then(|x| x.trim().parse().ok())).collect();
    assert_eq!(v.len(), pairs.len(), "[{tag}] ngspice printed:\n{stdout}");
    v
}
