//! Every amplifier inside its limits: the worst case of each amplifier's output (the one
//! driving the converter is the yield's own subject) and of its + input (the − input follows
//! it in linear operation) over the tolerance box, at both ends of the sensor range (an
//! AC-coupled design: at its rest level), against the output swing and the input
//! common-mode range on the rails at the low end of their tolerance.
//!
//! The extremes are found as the worst case finds the output's: each parameter's full-range
//! effect on the node picks the vertex that pushes it up and the one that pushes it down.
//! The rows are on nominal rails. Where the rails' tolerance could use up a node's margin,
//! the Monte Carlo solves that node in every build too, moves it and its limits with the
//! build's rails, and counts a build whose stage leaves its limit as clipped
//! ([`Inner::clips`]).

use serde::Serialize;

use std::cell::RefCell;

use super::{rails, Model};
use crate::analysis::perturb::{Kernel, Workspace};
use crate::circuit::{Circuit, PartKind, PartRole, StageKind};
use crate::request::{Coupling, Request};
use crate::solve::Solver;

/// One amplifier node's worst case against its limits.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StageRow {
    /// The amplifier's designator.
    pub amplifier: String,
    /// `"output"` or `"input"`.
    pub what: &'static str,
    /// The sensor value (V or A) it is taken at.
    pub at: f64,
    pub nominal: f64,
    /// Lowest and highest over the tolerance box, V.
    pub worst: [f64; 2],
    /// What the amplifier allows there, V.
    pub limits: [f64; 2],
}

impl StageRow {
    /// How far inside its limits the worst case stays, V (negative: beyond them).
    pub fn margin(&self) -> f64 {
        (self.worst[0] - self.limits[0]).min(self.limits[1] - self.worst[1])
    }
}

/// A node the Monte Carlo watches in every build.
#[derive(Debug, Clone)]
pub(super) struct Watched {
    node: String,
    /// The sensor value it is watched at.
    at: f64,
    /// Its limits on nominal rails.
    limits: (f64, f64),
    /// Its change per unit of each rail's relative deviation (in the order of the model's
    /// rails; the reference moves no voltage).
    rail_effect: Vec<f64>,
}

/// The nodes the Monte Carlo watches in every build, each with the kernel compiled with it as
/// its output (the same parameters as the Monte Carlo's kernel, so a build solves it as fast).
#[derive(Debug, Clone, Default)]
pub(super) struct Inner {
    watch: Vec<Watched>,
    kernels: Vec<Option<(Kernel, RefCell<Workspace>)>>,
}

impl Inner {
    pub fn is_empty(&self) -> bool {
        self.watch.is_empty()
    }

    /// Compiles each watched node's kernel on the Monte Carlo's circuit.
    pub fn compile(&mut self, circuit: &Circuit) {
        self.kernels = self
            .watch
            .iter()
            .map(|w| {
                let k = Kernel::compile(circuit, &w.node).ok()?;
                let ws = RefCell::new(k.workspace());
                Some((k, ws))
            })
            .collect();
    }

    /// Whether build `p` (the kernel's parameters, then the rails') takes a watched node
    /// beyond its limits; each rail moves the node by its effect and the limit on its side.
    pub fn clips(&self, model: &Model, p: &[f64]) -> bool {
        let n = model.kernel.params().len();
        let deviations = &p[n..];
        self.watch.iter().zip(&self.kernels).any(|(w, k)| {
            let Some((kernel, ws)) = k else { return false };
            let Some((slope, icpt)) = kernel.dc_line(&p[..n], &mut ws.borrow_mut()) else { return false };
            let (mut lo, mut hi) = w.limits;
            let mut y = slope * w.at + icpt;
            for ((rail, d), e) in model.rails.iter().zip(deviations).zip(&w.rail_effect) {
                y += e * d;
                if rail.moves_swing && rail.volts > 0.0 {
                    hi += rail.volts * d;
                } else if rail.moves_swing {
                    lo += rail.volts * d;
                }
            }
            y < lo || y > hi
        })
    }
}

/// The worst case of every amplifier node over the parts' box on nominal rails (see the
/// module documentation), and the nodes the Monte Carlo must watch: those whose margin the
/// rails' tolerance could use up.
pub(super) fn stage_limits(req: &Request, circuit: &Circuit, model: &Model) -> (Vec<StageRow>, Inner) {
    let s = &req.source;
    let rails = circuit.rails();
    let amp = &circuit.amplifier;
    let (out_lo, out_hi) = amp.output_limits(rails);
    let (in_lo, in_hi) = amp.input_limits(rails);
    // The amplifier that drives the pin (directly or through the drive resistor) is the
    // yield's own subject.
    let driver = circuit.stage_part(StageKind::ConverterDrive, PartRole::DriveResistor).and_then(|r| r.nodes.first());
    let nodes: Vec<(String, &'static str, String, (f64, f64))> = circuit
        .parts
        .iter()
        .filter(|p| p.kind == PartKind::OpAmp && p.nodes.len() == 5)
        .flat_map(|p| {
            let out = &p.nodes[4];
            let drives = out == "adc" || driver == Some(out);
            let mut v = vec![(p.reference.clone(), "input", p.nodes[0].clone(), (in_lo, in_hi))];
            if !drives {
                v.push((p.reference.clone(), "output", out.clone(), (out_lo, out_hi)));
            }
            v
        })
        .collect();
    let xs = if s.coupling == Coupling::Ac { vec![0.5 * (s.min + s.max)] } else { vec![s.min, s.max] };
    let params = model.kernel.params();
    let n = params.len();
    let mut p = vec![0.0; n];
    let at = |p: &[f64], x: f64| -> Option<Vec<f64>> {
        let v = model.kernel.dc_voltages(p, x)?;
        Some(nodes.iter().map(|(_, _, node, _)| v.iter().find(|(m, _)| m == node).map_or(f64::NAN, |q| q.1)).collect())
    };
    // Each rail's effect on every node per unit of relative deviation, from the solver.
    const STEP: f64 = 1e-3;
    let rail_effects = |x: f64| -> Vec<Vec<f64>> {
        let solve = |c: &Circuit| {
            let o = Solver::new(c).dc(x).ok();
            nodes.iter().map(|(_, _, node, _)| o.as_ref().and_then(|o| o.voltage(node)).unwrap_or(f64::NAN)).collect()
        };
        let base: Vec<f64> = solve(circuit);
        model
            .rails
            .iter()
            .map(|r| {
                let mut c = circuit.clone();
                match c.parts.iter_mut().find(|q| q.reference == r.reference && r.moves_swing) {
                    Some(part) => part.value *= 1.0 + STEP,
                    None => return vec![0.0; nodes.len()],
                }
                solve(&c).iter().zip(&base).map(|(a, b)| (a - b) / STEP).collect()
            })
            .collect()
    };
    let mut rows = Vec::new();
    let mut inner = Inner::default();
    for &x in &xs {
        let Some(nominal) = at(&p, x) else { continue };
        // Each parameter's effect on every watched node, from one side of its range (only its
        // sign is used).
        let mut effect = vec![vec![0.0; nodes.len()]; n];
        for i in 0..n {
            let b = params[i].bound;
            if !(b > 0.0) {
                continue;
            }
            p[i] = b;
            let hi = at(&p, x);
            p[i] = 0.0;
            if let Some(hi) = hi {
                effect[i] = hi.iter().zip(&nominal).map(|(a, b)| a - b).collect();
            }
        }
        let mut by_rail: Option<Vec<Vec<f64>>> = None;
        for (k, (reference, what, node, limits)) in nodes.iter().enumerate() {
            let mut worst = [nominal[k]; 2];
            for (side, dir) in [(0, -1.0), (1, 1.0)] {
                let vertex: Vec<f64> = (0..n)
                    .map(|i| if dir * effect[i][k] >= 0.0 { params[i].bound } else { -params[i].bound })
                    .collect();
                if let Some(v) = at(&vertex, x) {
                    worst[side] = v[k];
                }
            }
            if !worst.iter().chain([&nominal[k]]).all(|v| v.is_finite()) {
                continue;
            }
            let row = StageRow {
                amplifier: reference.clone(),
                what,
                at: x,
                nominal: nominal[k],
                worst,
                limits: [limits.0, limits.1],
            };
            // What the rails could take of each side's margin: a rail moves the node by its
            // effect and the limit on its own side by its voltage.
            let by_rail = by_rail.get_or_insert_with(|| rail_effects(x));
            let rail_effect: Vec<f64> = by_rail.iter().map(|e| e[k]).collect();
            let reach = |side: f64| -> f64 {
                let moves = |r: &rails::Rail| if r.moves_swing && side * r.volts > 0.0 { r.volts } else { 0.0 };
                model.rails.iter().zip(&rail_effect).map(|(r, e)| (moves(r) - e).abs() * r.tolerance).sum()
            };
            let low_margin = row.worst[0] - row.limits[0];
            let high_margin = row.limits[1] - row.worst[1];
            if low_margin < reach(-1.0) || high_margin < reach(1.0) {
                inner.watch.push(Watched { node: node.clone(), at: x, limits: *limits, rail_effect });
            }
            rows.push(row);
        }
    }
    (rows, inner)
}
