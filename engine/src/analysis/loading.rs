//! Loading: what the design asks of the sensor, and of the rails.
//!
//! * the impedance the sensor sees (at DC for DC coupling, mid-band for AC coupling),
//!   found by injecting a test current at the sensor terminal with the sensor disconnected;
//! * the gain error its own impedance causes, and the one the converter's input impedance
//!   causes — each the ratio of the gain with that impedance to the gain without it, minus one.
//!   The synthesis already includes the nominal sensor impedance in its equations, so this
//!   error is what a change of the sensor's impedance would move the gain by, proportionally;
//! * the current the resistor network draws from each rail at the operating point (the
//!   amplifier's own supply current is not included: it belongs to the part chosen).

use serde::Serialize;

use crate::circuit::{Circuit, PartKind, PartRole};
use crate::request::Request;
use crate::solve::Solver;

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoadingAnalysis {
    /// Magnitude of the impedance presented to the sensor, Ω.
    pub input_impedance: f64,
    /// Frequency at which it was evaluated (0 = DC).
    pub at_frequency: f64,
    /// Gain change caused by the sensor and converter impedances together (fraction).
    pub gain_error: f64,
    /// Caused by the sensor's impedance alone.
    pub sensor_gain_error: f64,
    /// Caused by the converter's input impedance alone.
    pub converter_gain_error: f64,
    /// `(rail, amperes)` drawn by the resistor network from each rail source.
    pub rail_currents: Vec<(String, f64)>,
}

/// Loading analysis of `circuit`.
pub fn loading(req: &Request, circuit: &Circuit) -> LoadingAnalysis {
    let f = req.source.mid_band();
    let gain = |c: &Circuit| Solver::new(c).transfer(f, "adc").map(|h| h.norm()).unwrap_or(f64::NAN);
    let with = |changes: &[(&str, f64)]| {
        let mut c = circuit.clone();
        for (r, v) in changes {
            if let Some(p) = c.part_mut(r) {
                p.value = *v;
            }
        }
        c
    };
    let of_role = |f: fn(PartRole) -> bool| -> Vec<&str> {
        circuit.parts.iter().filter(|p| p.bench && p.role.is_some_and(f)).map(|p| p.reference.as_str()).collect()
    };
    // 1 mΩ stands for an ideal source (as in the bench model), 1 PΩ for an open circuit. A
    // differential sensor has one impedance per leg; the + leg's input is reported.
    let pair = of_role(|r| matches!(r, PartRole::LegImpedance(_)));
    let legs = if pair.is_empty() { of_role(|r| r == PartRole::SourceResistance) } else { pair };
    let node = circuit.sensor_terminals().into_iter().next().unwrap_or_default();
    let load = of_role(|r| r == PartRole::ConverterLoad);
    let set = |v: f64| legs.iter().map(|r| (*r, v)).collect::<Vec<_>>();
    let unload: Vec<(&str, f64)> = load.iter().map(|r| (*r, 1e15)).collect();
    let actual = gain(circuit);
    let ideal_source = gain(&with(&set(1e-3)));
    let unloaded = gain(&with(&unload));
    let mut both = set(1e-3);
    both.extend(unload);
    let ideal = gain(&with(&both));
    let open = with(&set(1e15));
    let solver = Solver::new(&open);
    let input_impedance = solver
        .injection_transfers(f, &node)
        .ok()
        .and_then(|z| solver.index_of(&node).map(|k| z[k].norm()))
        .unwrap_or(f64::NAN);
    let rail_currents = rail_currents(req, circuit);
    let ratio = |a: f64, b: f64| if b > 0.0 && a.is_finite() && b.is_finite() { a / b - 1.0 } else { 0.0 };
    LoadingAnalysis {
        input_impedance,
        at_frequency: f,
        gain_error: ratio(actual, ideal),
        sensor_gain_error: ratio(actual, ideal_source),
        converter_gain_error: ratio(actual, unloaded),
        rail_currents,
    }
}

/// Current into the resistor network from each rail at the operating point.
fn rail_currents(req: &Request, circuit: &Circuit) -> Vec<(String, f64)> {
    let mid = 0.5 * (req.source.min + req.source.max);
    let Ok(op) = Solver::new(circuit).dc(mid) else { return Vec::new() };
    let mut out = Vec::new();
    let rails = circuit.parts.iter().filter(|p| p.bench && p.role == Some(PartRole::Rail));
    for (name, node) in rails.filter_map(|p| Some((p.reference.as_str(), p.nodes.first()?.as_str()))) {
        let v_rail = op.voltage(node).unwrap_or(0.0);
        let i: f64 = circuit
            .parts
            .iter()
            .filter(|p| p.kind == PartKind::Resistor && !p.bench && p.nodes.iter().any(|n| n == node))
            .map(|p| {
                let other = if p.nodes[0] == node { &p.nodes[1] } else { &p.nodes[0] };
                (v_rail - op.voltage(other).unwrap_or(0.0)) / p.value
            })
            .sum();
        out.push((name.to_string(), i));
    }
    out
}
