//! Modified nodal analysis of the circuit model: DC operating point and small-signal AC.
//!
//! One complex system `A(ω)·x = z` is assembled from the [`Circuit`] for each frequency
//! (ω = 0 is the DC case: capacitors are open) and solved with nalgebra's dense LU on
//! `num_complex::Complex<f64>` — well-kept crates, so no hand-written factorisation.
//! Unknowns are the node voltages (ground excluded) followed by one branch current per
//! voltage source and per amplifier output.
//!
//! Each amplifier is the same macro-model the netlist exports (see [`crate::netlist`]):
//! a transconductance `GM` from the input difference into an internal node loaded by
//! `open_loop_gain / GM` ohms and `GM / (2π·gbw)` farads (one dominant pole at
//! `gbw / open_loop_gain`, unity-gain frequency at `gbw`), followed by a unity-gain buffer
//! to the output. At DC the internal node is limited to the output swing: when a solve puts
//! it beyond a limit, the node is pinned at that limit and the system solved again, which
//! is what the netlist's clamp diodes do (to within their few-millivolt knee).
//! A conductance of [`GMIN`] from every node to ground keeps the system regular, as SPICE
//! simulators do. Clamp diodes are open: they conduct only beyond the converter's range,
//! which the design keeps clear of (the netlist exports them as real diodes, whose leakage
//! at the operating point is far below the solver's precision).

use nalgebra::{DMatrix, DVector};
use num_complex::Complex;
use serde::Serialize;
use std::collections::HashMap;

use crate::circuit::{Circuit, PartKind, GND};

/// Transconductance of the amplifier macro-model's input stage, A/V.
pub const GM: f64 = 1e-3;
/// Conductance from every node to ground, S (the SPICE default gmin).
pub const GMIN: f64 = 1e-12;

type C64 = Complex<f64>;

/// Node voltages at one DC operating point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DcSolution {
    /// `(node, volts)` for every node, ground included.
    pub voltages: Vec<(String, f64)>,
    /// Designators of amplifiers whose output sits at a swing limit.
    pub clamped: Vec<String>,
}

impl DcSolution {
    pub fn voltage(&self, node: &str) -> Option<f64> {
        self.voltages.iter().find(|(n, _)| n == node).map(|(_, v)| *v)
    }
}

/// The solver could not produce a solution (a singular system: a node with no path).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SolveError(pub String);

impl std::fmt::Display for SolveError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", self.0)
    }
}

/// A circuit prepared for repeated solves.
pub struct Solver<'a> {
    circuit: &'a Circuit,
    /// Node name → unknown index (ground is absent).
    index: HashMap<String, usize>,
    names: Vec<String>,
    /// Internal amplifier nodes: (designator, index of internal node).
    amps: Vec<(String, usize)>,
    n_nodes: usize,
}

impl<'a> Solver<'a> {
    pub fn new(circuit: &'a Circuit) -> Solver<'a> {
        let mut index = HashMap::new();
        let mut names = Vec::new();
        for n in circuit.nodes() {
            if n != GND {
                index.insert(n.clone(), names.len());
                names.push(n);
            }
        }
        let mut amps = Vec::new();
        for p in circuit.parts.iter().filter(|p| p.kind == PartKind::OpAmp) {
            let name = format!("{}:x", p.reference);
            index.insert(name.clone(), names.len());
            amps.push((p.reference.clone(), names.len()));
            names.push(name);
        }
        let n_nodes = names.len();
        Solver { circuit, index, names, amps, n_nodes }
    }

    /// DC operating point with the sensor EMF (`VSENSE`) at `source` volts.
    pub fn dc(&self, source: f64) -> Result<DcSolution, SolveError> {
        let amp = &self.circuit.amplifier;
        let lo = self.circuit.rail_neg + amp.swing_low;
        let hi = self.circuit.rail_pos - amp.swing_high;
        let mut pins: Vec<Option<f64>> = vec![None; self.amps.len()];
        let mut x = self.solve(0.0, Excite::Dc(source), &pins)?;
        for _ in 0..(2 * self.amps.len() + 2) {
            let mut changed = false;
            for (k, (_, node)) in self.amps.iter().enumerate() {
                let want = match pins[k] {
                    None if x[*node].re > hi + 1e-12 => Some(hi),
                    None if x[*node].re < lo - 1e-12 => Some(lo),
                    None => None,
                    // Release a pin once the amplifier no longer drives beyond it.
                    Some(p) => {
                        let free = self.unclamped(&x, k);
                        if (p == hi && free <= hi) || (p == lo && free >= lo) {
                            None
                        } else {
                            Some(p)
                        }
                    }
                };
                if want != pins[k] {
                    pins[k] = want;
                    changed = true;
                }
            }
            if !changed {
                break;
            }
            x = self.solve(0.0, Excite::Dc(source), &pins)?;
        }
        let mut voltages = vec![(GND.to_string(), 0.0)];
        for (i, n) in self.names.iter().enumerate().take(self.n_nodes) {
            if !n.contains(':') {
                voltages.push((n.clone(), x[i].re));
            }
        }
        let clamped = self.amps.iter().zip(&pins).filter(|(_, p)| p.is_some()).map(|((r, _), _)| r.clone()).collect();
        Ok(DcSolution { voltages, clamped })
    }

    /// Small-signal transfer from the sensor EMF to `node` at `f` Hz (amplifiers linear).
    pub fn transfer(&self, f: f64, node: &str) -> Result<C64, SolveError> {
        let pins = vec![None; self.amps.len()];
        let x = self.solve(2.0 * std::f64::consts::PI * f, Excite::Ac, &pins)?;
        Ok(self.index.get(node).map(|&i| x[i]).unwrap_or(C64::new(0.0, 0.0)))
    }

    /// The internal-node voltage amplifier `k` would reach without its swing limit.
    fn unclamped(&self, x: &DVector<C64>, k: usize) -> f64 {
        let Some(part) = self.circuit.parts.iter().find(|q| q.reference == self.amps[k].0) else { return 0.0 };
        (self.v(x, &part.nodes[0]) - self.v(x, &part.nodes[1])) * self.circuit.amplifier.open_loop_gain
    }

    fn v(&self, x: &DVector<C64>, node: &str) -> f64 {
        self.index.get(node).map(|&i| x[i].re).unwrap_or(0.0)
    }

    fn solve(&self, omega: f64, excite: Excite, pins: &[Option<f64>]) -> Result<DVector<C64>, SolveError> {
        let (a, z) = self.assemble(omega, excite, pins);
        let lu = a.lu();
        match lu.solve(&z) {
            Some(x) if x.iter().all(|v| v.re.is_finite() && v.im.is_finite()) => Ok(x),
            _ => Err(SolveError("the circuit has a node without a path to the rest of the circuit".to_string())),
        }
    }

    /// Output response at `out` to a unit current injected into each unknown, at `f` Hz
    /// (amplifiers linear), from one adjoint solve Aᵀ·z = e_out: injecting current I into
    /// unknown k moves V(out) by z[k]·I. Index with [`Solver::index_of`]; the amplifiers'
    /// internal nodes are `"U1:x"` etc.
    pub fn injection_transfers(&self, f: f64, out: &str) -> Result<Vec<C64>, SolveError> {
        let pins = vec![None; self.amps.len()];
        let (a, _) = self.assemble(2.0 * std::f64::consts::PI * f, Excite::Ac, &pins);
        let mut e = DVector::<C64>::zeros(a.nrows());
        if let Some(&k) = self.index.get(out) {
            e[k] = C64::new(1.0, 0.0);
        }
        match a.transpose().lu().solve(&e) {
            Some(z) if z.iter().all(|v| v.re.is_finite() && v.im.is_finite()) => Ok(z.iter().copied().collect()),
            _ => Err(SolveError("the circuit has a node without a path to the rest of the circuit".to_string())),
        }
    }

    /// Index of a node (or amplifier internal node `"U1:x"`) among the unknowns.
    pub fn index_of(&self, node: &str) -> Option<usize> {
        self.index.get(node).copied()
    }

    fn assemble(&self, omega: f64, excite: Excite, pins: &[Option<f64>]) -> (DMatrix<C64>, DVector<C64>) {
        let c = self.circuit;
        let n_branch = c.parts.iter().filter(|p| matches!(p.kind, PartKind::VoltageSource | PartKind::OpAmp)).count()
            + pins.iter().filter(|p| p.is_some()).count();
        let size = self.n_nodes + n_branch;
        let mut a = DMatrix::<C64>::zeros(size, size);
        let mut z = DVector::<C64>::zeros(size);
        let idx = |n: &str| self.index.get(n).copied();
        for i in 0..self.n_nodes {
            a[(i, i)] += GMIN;
        }
        let mut branch = self.n_nodes;
        let amp = &c.amplifier;
        for p in &c.parts {
            match p.kind {
                PartKind::Resistor | PartKind::Capacitor => {
                    let y = if p.kind == PartKind::Resistor {
                        C64::new(1.0 / p.value.max(1e-9), 0.0)
                    } else {
                        C64::new(0.0, omega * p.value)
                    };
                    stamp_admittance(&mut a, idx(&p.nodes[0]), idx(&p.nodes[1]), y);
                }
                PartKind::VoltageSource => {
                    let value = match excite {
                        Excite::Dc(s) if p.reference == "VSENSE" => s,
                        Excite::Dc(_) => p.value,
                        Excite::Ac if p.reference == "VSENSE" => 1.0,
                        Excite::Ac => 0.0,
                    };
                    stamp_source(&mut a, &mut z, branch, idx(&p.nodes[0]), idx(&p.nodes[1]), value);
                    branch += 1;
                }
                PartKind::Diode => {}
                PartKind::OpAmp => {
                    let k = self.amps.iter().position(|(r, _)| *r == p.reference).unwrap_or(0);
                    let xi = self.amps[k].1;
                    let (inp, inn, out) = (idx(&p.nodes[0]), idx(&p.nodes[1]), idx(&p.nodes[4]));
                    // Transconductance into the internal node.
                    if let Some(i) = inp {
                        a[(xi, i)] -= GM;
                    }
                    if let Some(i) = inn {
                        a[(xi, i)] += GM;
                    }
                    let r = amp.open_loop_gain / GM;
                    let cap = GM / (2.0 * std::f64::consts::PI * amp.gbw);
                    a[(xi, xi)] += C64::new(1.0 / r, omega * cap);
                    // Unity-gain buffer: V(out) − V(x) = 0.
                    if let Some(o) = out {
                        a[(o, branch)] += 1.0;
                        a[(branch, o)] += 1.0;
                    }
                    a[(branch, xi)] -= 1.0;
                    branch += 1;
                    if let Some(pin) = pins[k] {
                        let value = if let Excite::Dc(_) = excite { pin } else { 0.0 };
                        stamp_source(&mut a, &mut z, branch, Some(xi), None, value);
                        branch += 1;
                    }
                }
            }
        }
        (a, z)
    }
}

#[derive(Clone, Copy)]
enum Excite {
    /// DC operating point with VSENSE at this value.
    Dc(f64),
    /// Small signal: VSENSE is 1 V, every other source 0.
    Ac,
}

fn stamp_admittance(a: &mut DMatrix<C64>, p: Option<usize>, n: Option<usize>, y: C64) {
    if let Some(i) = p {
        a[(i, i)] += y;
    }
    if let Some(j) = n {
        a[(j, j)] += y;
    }
    if let (Some(i), Some(j)) = (p, n) {
        a[(i, j)] -= y;
        a[(j, i)] -= y;
    }
}

fn stamp_source(a: &mut DMatrix<C64>, z: &mut DVector<C64>, k: usize, p: Option<usize>, n: Option<usize>, value: f64) {
    if let Some(i) = p {
        a[(i, k)] += 1.0;
        a[(k, i)] += 1.0;
    }
    if let Some(j) = n {
        a[(j, k)] -= 1.0;
        a[(k, j)] -= 1.0;
    }
    z[k] = C64::new(value, 0.0);
}
