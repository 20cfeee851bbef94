//! Modified nodal analysis of the circuit model: DC operating point and small-signal AC.
//!
//! One complex system `A(ω)·x = z` is assembled from the [`Circuit`] for each frequency
//! (ω = 0 is the DC case: capacitors are open) and solved by Gaussian elimination with
//! partial pivoting. Unknowns are the node voltages (ground excluded) plus one internal node
//! per amplifier, reduced by two exact eliminations that keep the system small once filter
//! sections multiply the amplifiers:
//!
//! * a node tied to ground by a voltage source (the sensor EMF, the rails) is known: its
//!   column moves to the right-hand side and its row, which would only fix the source's
//!   current, is not written;
//! * an amplifier's output equals its internal node (the unity buffer of the macro-model), so
//!   the output shares the internal node's column and has no row of its own (it would only
//!   fix the buffer's current).
//!
//! Whatever these do not cover — a source between two nodes, an output on a fixed node —
//! gets the textbook stamp with a branch current. The elimination skips zero entries, which
//! keeps the chain-shaped systems of a gain stage and its filter sections cheap to solve.
//!
//! Each amplifier is the macro-model of [`crate::amplifier::model`], which the netlist exports
//! too: a transconductance `GM` from the input difference into an internal node loaded by
//! `open_loop_gain / GM` ohms and `GM / (2π·gbw)` farads (one dominant pole at
//! `gbw / open_loop_gain`, unity-gain frequency at `gbw`), followed by a unity-gain buffer
//! to the output. At DC the internal node is limited to the output swing: when a solve puts
//! it beyond a limit, the node is pinned at that limit and the system solved again, which
//! is what the netlist's clamp diodes do (to within their few-millivolt knee).
//! A conductance of [`GMIN`] from every node to ground keeps the system regular, as SPICE
//! simulators do. Clamp diodes are open: they conduct only beyond the converter's range,
//! which the design keeps clear of (the netlist exports them as real diodes, whose leakage
//! at the operating point is far below the solver's precision).

use num_complex::Complex;
use serde::Serialize;
use std::collections::HashMap;

use crate::amplifier::MacroModel;
use crate::circuit::{is_sensor_source, Circuit, PartKind, GND};

/// Transconductance of the amplifier macro-model's input stage, A/V.
pub use crate::amplifier::GM;
/// Conductance from every node to ground, S: keeps every node tied to something without
/// loading any real one. Far below the SPICE default gmin (1e-12 S, which SPICE puts across
/// junctions, not on every node), because a node behind a teraohm sensor would feel that.
pub const GMIN: f64 = 1e-18;

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

/// Where a node's voltage lives.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Loc {
    Ground,
    /// Fixed by source `k` (index into the circuit's parts) with this sign.
    Known(usize, f64),
    /// Unknown number `c`.
    Col(usize),
}

/// One element as the assembly sees it.
#[derive(Debug, Clone, Copy)]
enum Stamp {
    /// Resistor (`cap` false, value in S) or capacitor (`cap` true, value in F) between
    /// `a` and `b`; `ra`/`rb` are the rows their currents enter, if any.
    Admittance { a: Loc, b: Loc, ra: Option<usize>, rb: Option<usize>, value: f64, cap: bool },
    /// Amplifier `k`: transconductance from `inp`, `inn` into row/column `x`.
    Amp { k: usize, inp: Loc, inn: Loc, x: usize },
    /// A textbook voltage-source stamp with branch current unknown `branch`: V(p) − V(n) =
    /// value of part `part` (or, with `part` None, the buffer V(p) − V(x_col) = 0).
    Branch { branch: usize, p: Loc, n: Loc, rp: Option<usize>, rn: Option<usize>, part: Option<usize> },
    /// Current source `part`: its current leaves row `from` and enters row `to`.
    Current { from: Option<usize>, to: Option<usize>, part: usize },
}

/// A circuit prepared for repeated solves.
pub struct Solver<'a> {
    circuit: &'a Circuit,
    /// The macro-model every amplifier is stamped with.
    model: MacroModel,
    /// Node name → where its voltage lives (amplifier internal nodes as `"U1:x"`).
    loc: HashMap<String, Loc>,
    /// Node name → its row (free nodes and internal nodes only).
    row: HashMap<String, usize>,
    /// Circuit nodes in order of first use, ground excluded.
    names: Vec<String>,
    /// Amplifiers: (designator, internal node's unknown, + input, − input).
    amps: Vec<(String, usize, Loc, Loc)>,
    stamps: Vec<Stamp>,
    size: usize,
}

impl<'a> Solver<'a> {
    pub fn new(circuit: &'a Circuit) -> Solver<'a> {
        let names: Vec<String> = circuit.nodes().into_iter().filter(|n| n != GND).collect();
        let mut loc: HashMap<String, Loc> = HashMap::new();
        loc.insert(GND.to_string(), Loc::Ground);
        // Known nodes: a source from a node to ground, the node not yet fixed.
        let mut branch_sources = Vec::new();
        for (i, p) in circuit.parts.iter().enumerate().filter(|(_, p)| p.kind == PartKind::VoltageSource) {
            let (Some(a), Some(b)) = (p.nodes.first(), p.nodes.get(1)) else { continue };
            let fixed = |n: &str, loc: &HashMap<String, Loc>| loc.contains_key(n);
            match (a.as_str(), b.as_str()) {
                (x, GND) if !fixed(x, &loc) => {
                    loc.insert(x.to_string(), Loc::Known(i, 1.0));
                }
                (GND, y) if !fixed(y, &loc) => {
                    loc.insert(y.to_string(), Loc::Known(i, -1.0));
                }
                _ => branch_sources.push(i),
            }
        }
        // Free nodes get a column and a row; amplifier outputs take their internal node's.
        let amp_parts: Vec<usize> = circuit
            .parts
            .iter()
            .enumerate()
            .filter(|(_, p)| p.kind == PartKind::OpAmp && p.nodes.len() >= 5)
            .map(|(i, _)| i)
            .collect();
        let outputs: Vec<&str> = amp_parts.iter().map(|&i| circuit.parts[i].nodes[4].as_str()).collect();
        let mut row: HashMap<String, usize> = HashMap::new();
        let mut size = 0;
        for n in &names {
            if loc.contains_key(n) || outputs.contains(&n.as_str()) {
                continue;
            }
            loc.insert(n.clone(), Loc::Col(size));
            row.insert(n.clone(), size);
            size += 1;
        }
        let mut amps = Vec::new();
        let mut buffers = Vec::new();
        for &i in &amp_parts {
            let p = &circuit.parts[i];
            let x = size;
            size += 1;
            let name = format!("{}:x", p.reference);
            loc.insert(name.clone(), Loc::Col(x));
            row.insert(name, x);
            let out = &p.nodes[4];
            if loc.contains_key(out) {
                // Fixed by a source or by another amplifier: the textbook buffer stamp.
                buffers.push((i, x));
            } else {
                loc.insert(out.clone(), Loc::Col(x));
            }
            amps.push((p.reference.clone(), x, Loc::Ground, Loc::Ground));
        }
        // Nodes only a malformed part names (or an amplifier whose output is missing) are free too.
        for p in &circuit.parts {
            for n in &p.nodes {
                if !loc.contains_key(n) {
                    loc.insert(n.clone(), Loc::Col(size));
                    row.insert(n.clone(), size);
                    size += 1;
                }
            }
        }
        let at = |n: &str| loc.get(n).copied().unwrap_or(Loc::Ground);
        let row_of = |n: &str| row.get(n).copied();
        let mut stamps = Vec::new();
        for p in &circuit.parts {
            match p.kind {
                PartKind::Resistor | PartKind::Capacitor if p.nodes.len() >= 2 => {
                    let (a, b) = (&p.nodes[0], &p.nodes[1]);
                    let cap = p.kind == PartKind::Capacitor;
                    let value = if cap { p.value } else { 1.0 / p.value.max(1e-9) };
                    stamps.push(Stamp::Admittance { a: at(a), b: at(b), ra: row_of(a), rb: row_of(b), value, cap });
                }
                PartKind::CurrentSource if p.nodes.len() >= 2 => {
                    let part = circuit.parts.iter().position(|q| std::ptr::eq(q, p)).unwrap_or(0);
                    stamps.push(Stamp::Current { from: row_of(&p.nodes[0]), to: row_of(&p.nodes[1]), part });
                }
                PartKind::OpAmp if p.nodes.len() >= 5 => {
                    let k = amps.iter().position(|(r, ..)| *r == p.reference).unwrap_or(0);
                    let (inp, inn) = (at(&p.nodes[0]), at(&p.nodes[1]));
                    if let Some(a) = amps.get_mut(k) {
                        a.2 = inp;
                        a.3 = inn;
                    }
                    stamps.push(Stamp::Amp { k, inp, inn, x: amps.get(k).map_or(0, |a| a.1) });
                }
                _ => {}
            }
        }
        for i in branch_sources {
            let p = &circuit.parts[i];
            let branch = size;
            size += 1;
            stamps.push(Stamp::Branch {
                branch,
                p: at(&p.nodes[0]),
                n: at(&p.nodes[1]),
                rp: row_of(&p.nodes[0]),
                rn: row_of(&p.nodes[1]),
                part: Some(i),
            });
        }
        for (i, x) in buffers {
            let out = &circuit.parts[i].nodes[4];
            let branch = size;
            size += 1;
            stamps.push(Stamp::Branch { branch, p: at(out), n: Loc::Col(x), rp: row_of(out), rn: None, part: None });
        }
        Solver { circuit, model: circuit.amplifier.macro_model(), loc, row, names, amps, stamps, size }
    }

    /// DC operating point with the sensor source (`VSENSE` volts or `ISENSE` amperes) at `source`.
    pub fn dc(&self, source: f64) -> Result<DcSolution, SolveError> {
        let (lo, hi) = self.model.output_limits(self.circuit.rails());
        let mut pins: Vec<Option<f64>> = vec![None; self.amps.len()];
        let mut x = self.solve(0.0, Excite::Dc(source), &pins)?;
        for _ in 0..(2 * self.amps.len() + 2) {
            let mut changed = false;
            for (k, (_, node, ..)) in self.amps.iter().enumerate() {
                let want = match pins[k] {
                    None if x[*node].re > hi + 1e-12 => Some(hi),
                    None if x[*node].re < lo - 1e-12 => Some(lo),
                    None => None,
                    // Release a pin once the amplifier no longer drives beyond it.
                    Some(p) => {
                        let free = self.unclamped(&x, k, Excite::Dc(source));
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
        for n in &self.names {
            voltages.push((n.clone(), self.value(&x, self.loc_of(n), Excite::Dc(source)).re));
        }
        let clamped = self.amps.iter().zip(&pins).filter(|(_, p)| p.is_some()).map(|((r, ..), _)| r.clone()).collect();
        Ok(DcSolution { voltages, clamped })
    }

    /// Small-signal transfer from the sensor EMF to `node` at `f` Hz (amplifiers linear).
    pub fn transfer(&self, f: f64, node: &str) -> Result<C64, SolveError> {
        let pins = vec![None; self.amps.len()];
        let x = self.solve(2.0 * std::f64::consts::PI * f, Excite::Ac, &pins)?;
        Ok(match self.loc.get(node) {
            Some(&l) => self.value(&x, l, Excite::Ac),
            None => C64::new(0.0, 0.0),
        })
    }

    /// Output response at `out` to a unit current injected into each unknown, at `f` Hz
    /// (amplifiers linear), from one adjoint solve Aᵀ·z = e_out: injecting current I into
    /// unknown k moves V(out) by z[k]·I. Index with [`Solver::index_of`]; the amplifiers'
    /// internal nodes are `"U1:x"` etc. Nodes a source or an amplifier output fixes take no
    /// current and have no index.
    pub fn injection_transfers(&self, f: f64, out: &str) -> Result<Vec<C64>, SolveError> {
        let pins = vec![None; self.amps.len()];
        let (a, _) = self.assemble(2.0 * std::f64::consts::PI * f, Excite::Ac, &pins);
        let n = self.size;
        let mut t = vec![C64::new(0.0, 0.0); n * n];
        for i in 0..n {
            for j in 0..n {
                t[j * n + i] = a[i * n + j];
            }
        }
        let mut e = vec![C64::new(0.0, 0.0); n];
        if let Some(Loc::Col(k)) = self.loc.get(out) {
            e[*k] = C64::new(1.0, 0.0);
        }
        if solve_in_place(&mut t, n, &mut e) {
            Ok(e)
        } else {
            Err(singular())
        }
    }

    /// Index of a node (or amplifier internal node `"U1:x"`) among the unknowns' rows.
    pub fn index_of(&self, node: &str) -> Option<usize> {
        self.row.get(node).copied()
    }

    fn loc_of(&self, node: &str) -> Loc {
        self.loc.get(node).copied().unwrap_or(Loc::Ground)
    }

    /// Voltage at `l` in solution `x` under `excite`.
    fn value(&self, x: &[C64], l: Loc, excite: Excite) -> C64 {
        match l {
            Loc::Ground => C64::new(0.0, 0.0),
            Loc::Known(k, sign) => C64::new(sign * self.source_value(k, excite), 0.0),
            Loc::Col(c) => x.get(c).copied().unwrap_or(C64::new(0.0, 0.0)),
        }
    }

    fn source_value(&self, k: usize, excite: Excite) -> f64 {
        let Some(p) = self.circuit.parts.get(k) else { return 0.0 };
        match excite {
            Excite::Dc(s) if is_sensor_source(p) => s,
            Excite::Dc(_) => p.value,
            Excite::Ac if is_sensor_source(p) => 1.0,
            Excite::Ac => 0.0,
        }
    }

    /// The internal-node voltage amplifier `k` would reach without its swing limit.
    fn unclamped(&self, x: &[C64], k: usize, excite: Excite) -> f64 {
        let Some(&(_, _, inp, inn)) = self.amps.get(k) else { return 0.0 };
        self.model.unclamped(self.value(x, inp, excite).re - self.value(x, inn, excite).re)
    }

    fn solve(&self, omega: f64, excite: Excite, pins: &[Option<f64>]) -> Result<Vec<C64>, SolveError> {
        let (mut a, mut z) = self.assemble(omega, excite, pins);
        if solve_in_place(&mut a, self.size, &mut z) {
            Ok(z)
        } else {
            Err(singular())
        }
    }

    /// The system at `omega` (row-major) and its right-hand side.
    fn assemble(&self, omega: f64, excite: Excite, pins: &[Option<f64>]) -> (Vec<C64>, Vec<C64>) {
        let n = self.size;
        let mut a = vec![C64::new(0.0, 0.0); n * n];
        let mut z = vec![C64::new(0.0, 0.0); n];
        let zero: Vec<C64> = Vec::new();
        for r in self.row.values() {
            a[r * n + r] += GMIN;
        }
        let m = &self.model;
        // Adds y·V(l) to row r of the left side (or moves it to the right side when known).
        let put = |a: &mut Vec<C64>, z: &mut Vec<C64>, r: usize, l: Loc, y: C64| match l {
            Loc::Col(c) => a[r * n + c] += y,
            Loc::Known(..) => z[r] -= y * self.value(&zero, l, excite),
            Loc::Ground => {}
        };
        for s in &self.stamps {
            match *s {
                Stamp::Admittance { a: la, b: lb, ra, rb, value, cap } => {
                    let y = if cap { C64::new(0.0, omega * value) } else { C64::new(value, 0.0) };
                    if let Some(r) = ra {
                        put(&mut a, &mut z, r, la, y);
                        put(&mut a, &mut z, r, lb, -y);
                    }
                    if let Some(r) = rb {
                        put(&mut a, &mut z, r, lb, y);
                        put(&mut a, &mut z, r, la, -y);
                    }
                }
                Stamp::Amp { k, inp, inn, x } => {
                    if let Some(Some(pin)) = pins.get(k) {
                        // Pinned at a swing limit: x = limit (DC), 0 (small signal).
                        a[x * n + x] += 1.0;
                        z[x] += if let Excite::Dc(_) = excite { *pin } else { 0.0 };
                        continue;
                    }
                    put(&mut a, &mut z, x, inp, C64::new(-m.gm, 0.0));
                    put(&mut a, &mut z, x, inn, C64::new(m.gm, 0.0));
                    a[x * n + x] += m.load_admittance(omega);
                }
                Stamp::Current { from, to, part } => {
                    let i = self.source_value(part, excite);
                    if let Some(r) = to {
                        z[r] += i;
                    }
                    if let Some(r) = from {
                        z[r] -= i;
                    }
                }
                Stamp::Branch { branch, p, n: m, rp, rn, part } => {
                    if let Some(r) = rp {
                        a[r * n + branch] += 1.0;
                    }
                    if let Some(r) = rn {
                        a[r * n + branch] -= 1.0;
                    }
                    put(&mut a, &mut z, branch, p, C64::new(1.0, 0.0));
                    put(&mut a, &mut z, branch, m, C64::new(-1.0, 0.0));
                    if let Some(k) = part {
                        z[branch] += self.source_value(k, excite);
                    }
                }
            }
        }
        // A pinned amplifier's row holds only x = limit: drop the GMIN and anything else.
        for (k, pin) in pins.iter().enumerate() {
            if pin.is_some() {
                if let Some(&(_, x, ..)) = self.amps.get(k) {
                    for j in 0..n {
                        a[x * n + j] = C64::new(if j == x { 1.0 } else { 0.0 }, 0.0);
                    }
                }
            }
        }
        (a, z)
    }
}

fn singular() -> SolveError {
    SolveError("the circuit has a node without a path to the rest of the circuit".to_string())
}

#[derive(Clone, Copy)]
enum Excite {
    /// DC operating point with the sensor source (`VSENSE` or `ISENSE`) at this value.
    Dc(f64),
    /// Small signal: the sensor source is 1 V (or 1 A), every other source 0.
    Ac,
}

/// Solves `a·x = b` in place (`a` row-major `n×n`, overwritten; `b` becomes `x`) by Gaussian
/// elimination with partial pivoting (pivot size |re| + |im|), skipping zero entries.
/// `false` for a singular or non-finite system.
fn solve_in_place(a: &mut [C64], n: usize, b: &mut [C64]) -> bool {
    if a.len() < n * n || b.len() < n {
        return false;
    }
    let mag = |c: C64| c.re.abs() + c.im.abs();
    let zero = C64::new(0.0, 0.0);
    for k in 0..n {
        let mut piv = k;
        let mut best = mag(a[k * n + k]);
        for i in k + 1..n {
            let m = mag(a[i * n + k]);
            if m > best {
                best = m;
                piv = i;
            }
        }
        if !(best > 0.0 && best.is_finite()) {
            return false;
        }
        if piv != k {
            for j in k..n {
                a.swap(k * n + j, piv * n + j);
            }
            b.swap(k, piv);
        }
        let inv = C64::new(1.0, 0.0) / a[k * n + k];
        // Columns right of the pivot that are non-zero in the pivot row.
        let (top, rest) = a.split_at_mut((k + 1) * n);
        let pivot_row = &top[k * n..(k + 1) * n];
        let bk = b[k];
        for i in k + 1..n {
            let r = &mut rest[(i - k - 1) * n..(i - k) * n];
            if r[k] == zero {
                continue;
            }
            let f = r[k] * inv;
            r[k] = zero;
            for j in k + 1..n {
                let p = pivot_row[j];
                if p != zero {
                    r[j] -= f * p;
                }
            }
            b[i] -= f * bk;
        }
    }
    for i in (0..n).rev() {
        let mut s = b[i];
        for j in i + 1..n {
            let v = a[i * n + j];
            if v != zero {
                s -= v * b[j];
            }
        }
        b[i] = s / a[i * n + i];
    }
    b[..n].iter().all(|v| v.re.is_finite() && v.im.is_finite())
}
