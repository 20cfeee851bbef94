//! Fast real-valued DC kernel for repeated solves of one circuit with perturbed parts.
//!
//! The tolerance analysis solves the same circuit tens of thousands of times with slightly
//! different part values, amplifier offsets and bias currents. The general [`crate::solve`]
//! solver (complex arithmetic, node lookup by name, a fresh dense matrix per solve) is built
//! for clarity; this kernel is built for that loop. The circuit is compiled once into
//! index-based stamp lists; every build then copies a constant base matrix, adds the
//! perturbed conductances and sources, and eliminates — no strings, no maps and no
//! allocation per build.
//!
//! The equations are those of the general solver's DC case (same macro-model, same
//! [`GMIN`]), reduced by three exact eliminations:
//!
//! * a node tied to ground by a voltage source (the sensor EMF `emf`, the rails) is known;
//!   its column moves to the right-hand side and its row (which only fixes the source's
//!   current) is dropped;
//! * an amplifier's output equals its internal node (the unity buffer), so the output
//!   shares the internal node's column and its own row (which only fixes the buffer's
//!   current) is dropped — no branch currents remain;
//! * the system is linear in the sensor EMF, so one elimination serves two right-hand
//!   sides: the EMF's unit contribution `u` and everything else `w`. The output is then
//!   `slope·source + intercept` for any source value.
//!
//! A second system treats every capacitor as a short (nodes joined, the rails at AC ground,
//! the EMF a unit small signal) for the mid-band gain of AC-coupled stages.
//!
//! What is left has a few unknowns (3–8 for the stages synthesis produces), solved by a
//! short hand-written Gaussian elimination: a general dense-matrix library allocates per
//! factorisation, which at this size costs more than the arithmetic. The output's unknown
//! is placed last, so forward elimination alone yields it. As circuit simulators do, the
//! row order is chosen once by partial pivoting on the nominal circuit and reused, and the
//! elimination is compiled into index lists that touch only the structural non-zeros and
//! only the rows the output depends on; a build whose pivot falls below half its nominal
//! size is redone with full partial pivoting. The tests check the elimination against
//! Cramer's rule and the whole kernel against the general solver.
//!
//! Offset voltage sits in series with an amplifier's + input; bias currents flow from the
//! nodes into the amplifier's input pins. Output swing limits are not applied here.
//! Circuits the eliminations do not cover — a voltage source between two non-ground nodes,
//! two sources or amplifiers fixing one node — are refused with a [`KernelError`].

use crate::circuit::{Circuit, Part, PartKind};
use crate::solve::{GM, GMIN};

/// What one parameter of a build is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ParamKind {
    /// Relative deviation of a resistor's value (0.01 = 1 % above nominal).
    Resistor,
    /// Relative deviation of a capacitor's value (open at DC, short at mid-band).
    Capacitor,
    /// An amplifier's input offset voltage (V), in series with its + input.
    Offset,
    /// Bias current (A) flowing from the node into the amplifier's + input pin.
    BiasPlus,
    /// Bias current (A) flowing from the node into the amplifier's − input pin.
    BiasMinus,
}

/// One parameter that varies between builds.
#[derive(Debug, Clone, PartialEq)]
pub struct Param {
    pub kind: ParamKind,
    /// Designator of the part it belongs to (`R3`, `U1`).
    pub part: String,
    /// Half-width of its range: the relative tolerance of a part, the stated figure of an amplifier.
    pub bound: f64,
}

/// The circuit has a feature the kernel's eliminations do not cover.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KernelError(pub String);

/// A circuit compiled for repeated DC solves.
#[derive(Debug, Clone)]
pub struct Kernel {
    params: Vec<Param>,
    dc: System,
    mid: Option<System>,
    /// The output node is an amplifier's output (so the swing limits apply to it).
    out_amp: bool,
    /// Every node of the circuit and where the DC system holds its voltage.
    nodes: Vec<(String, Col)>,
}

/// Buffers for systems larger than the stack arrays; make it with [`Kernel::workspace`].
#[derive(Debug, Clone)]
pub struct Workspace {
    a: Vec<f64>,
    u: Vec<f64>,
    w: Vec<f64>,
}

impl Kernel {
    /// Compiles `circuit` with `out` as the output node. Parameters are, in circuit order,
    /// every non-bench resistor and capacitor with a tolerance, then per amplifier its
    /// offset and the bias currents of its + and − inputs.
    pub fn compile(circuit: &Circuit, out: &str) -> Result<Kernel, KernelError> {
        let mut params = Vec::new();
        let mut part_param = vec![None; circuit.parts.len()];
        for (i, p) in circuit.parts.iter().enumerate() {
            let kind = match p.kind {
                PartKind::Resistor => ParamKind::Resistor,
                PartKind::Capacitor => ParamKind::Capacitor,
                _ => continue,
            };
            if let (false, Some(t)) = (p.bench, p.tolerance) {
                part_param[i] = Some(params.len());
                params.push(Param { kind, part: p.reference.clone(), bound: finite_abs(t) });
            }
        }
        let amp = &circuit.amplifier;
        let mut amp_param = Vec::new();
        for p in circuit.parts.iter().filter(|p| p.kind == PartKind::OpAmp) {
            amp_param.push(params.len());
            for (kind, bound) in [(ParamKind::Offset, amp.offset), (ParamKind::BiasPlus, amp.bias_current), (ParamKind::BiasMinus, amp.bias_current)] {
                params.push(Param { kind, part: p.reference.clone(), bound: finite_abs(bound) });
            }
        }
        let ctx = Ctx { circuit, part_param: &part_param, amp_param: &amp_param, out, n_params: params.len() };
        let (dc, nodes) = ctx.system(false)?;
        let mid = ctx.system(true).ok().map(|(s, _)| s);
        let out_amp = circuit.parts.iter().any(|p| p.kind == PartKind::OpAmp && p.nodes.get(4).is_some_and(|n| n == out));
        Ok(Kernel { params, dc, mid, out_amp, nodes })
    }

    /// The parameters, in the order a parameter slice must list them.
    pub fn params(&self) -> &[Param] {
        &self.params
    }

    /// Whether the output node is driven by an amplifier (its swing limits apply).
    pub fn output_is_amplifier(&self) -> bool {
        self.out_amp
    }

    /// Unknowns of the DC system and of the mid-band system (0 when there is none).
    pub fn unknowns(&self) -> (usize, usize) {
        (self.dc.n, self.mid.as_ref().map_or(0, |m| m.n))
    }

    /// Buffers large enough for either system.
    pub fn workspace(&self) -> Workspace {
        let n = self.dc.n.max(self.mid.as_ref().map_or(0, |m| m.n)).max(1);
        Workspace { a: vec![0.0; n * n], u: vec![0.0; n], w: vec![0.0; n] }
    }

    /// DC output as `(slope, intercept)`: output = slope·source + intercept for a build with
    /// parameters `p` (one value per [`Kernel::params`]). `None` for a singular build or a
    /// short parameter slice.
    pub fn dc_line(&self, p: &[f64], ws: &mut Workspace) -> Option<(f64, f64)> {
        self.dc.line(p, ws)
    }

    /// Mid-band small-signal gain from the sensor EMF to the output with every capacitor a
    /// short. `None` when the circuit cannot be reduced that way or the build is singular.
    pub fn short_gain(&self, p: &[f64], ws: &mut Workspace) -> Option<f64> {
        self.mid.as_ref()?.line(p, ws).map(|(slope, _)| slope)
    }

    /// Every node voltage at DC for sensor EMF `source`, by dense elimination with partial
    /// pivoting and back substitution (allocates; for checks and reports).
    pub fn dc_voltages(&self, p: &[f64], source: f64) -> Option<Vec<(String, f64)>> {
        let s = &self.dc;
        let n = s.n;
        if p.len() < s.n_params {
            return None;
        }
        let (mut a, mut u, mut w) = (vec![0.0; n * n], vec![0.0; n], vec![0.0; n]);
        s.assemble(p, &mut a, &mut u, &mut w);
        if n > 0 {
            eliminate(&mut a, n, &mut u, &mut w)?;
            back(&a, n, &mut u);
            back(&a, n, &mut w);
        }
        let value = |c: &Col| match *c {
            Col::Free(i) => u[i] * source + w[i],
            Col::Known { u, w } => u * source + w,
        };
        Some(self.nodes.iter().map(|(name, c)| (name.clone(), value(c))).collect())
    }
}

/// Solves `a·x = b` in place (`a` row-major `n×n`, overwritten; `b` overwritten by `x`)
/// with the kernel's elimination and partial pivoting. `false` for a singular matrix.
pub fn solve_dense(a: &mut [f64], n: usize, b: &mut [f64]) -> bool {
    if n == 0 || a.len() < n * n || b.len() < n {
        return n == 0;
    }
    let mut dummy = vec![0.0; n];
    if eliminate(a, n, b, &mut dummy).is_none() {
        return false;
    }
    back(a, n, b);
    b[..n].iter().all(|v| v.is_finite())
}

fn finite_abs(x: f64) -> f64 {
    if x.is_finite() {
        x.abs()
    } else {
        0.0
    }
}

/// Where a node's voltage lives: an unknown, or known as `u·source + w`.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Col {
    Free(usize),
    Known { u: f64, w: f64 },
}

/// A perturbed conductance: its nominal resistance, its parameter and where it stamps.
#[derive(Debug, Clone, Copy)]
struct Elem {
    param: usize,
    r0: f64,
    /// (flat matrix index, sign) — at most two rows × two columns.
    mat: [(usize, f64); 4],
    n_mat: usize,
    /// (row, coefficient into `u`, coefficient into `w`), to be multiplied by the conductance.
    rhs: [(usize, f64, f64); 2],
    n_rhs: usize,
}

/// A perturbed source term: `w[row] += coef·p[param]`.
#[derive(Debug, Clone, Copy)]
struct Src {
    param: usize,
    row: usize,
    coef: f64,
}

/// One elimination step of the compiled program: pivot `k`, the rows it updates
/// (`rows[r0..r1]`) and the columns right of the pivot that are non-zero (`cols[c0..c1]`).
#[derive(Debug, Clone, Copy)]
struct Step {
    k: usize,
    r0: usize,
    r1: usize,
    c0: usize,
    c1: usize,
    /// Magnitude of this pivot in the nominal build.
    nominal: f64,
}

/// One compiled linear system.
#[derive(Debug, Clone)]
struct System {
    n: usize,
    base: Vec<f64>,
    base_u: Vec<f64>,
    base_w: Vec<f64>,
    elems: Vec<Elem>,
    srcs: Vec<Src>,
    out: Col,
    n_params: usize,
    /// The compiled elimination is usable (else every build uses full partial pivoting).
    compiled: bool,
    steps: Vec<Step>,
    rows: Vec<usize>,
    cols: Vec<usize>,
}

impl System {
    /// Output `(slope, intercept)` of build `p`. Sizes up to 8 run on stack arrays of a size
    /// known at compile time.
    fn line(&self, p: &[f64], ws: &mut Workspace) -> Option<(f64, f64)> {
        if p.len() < self.n_params {
            return None;
        }
        if let Col::Known { u, w } = self.out {
            return Some((u, w));
        }
        match self.n {
            1 => self.line_in(p, &mut [0.0; 1], &mut [0.0; 1], &mut [0.0; 1]),
            2 => self.line_in(p, &mut [0.0; 4], &mut [0.0; 2], &mut [0.0; 2]),
            3 => self.line_in(p, &mut [0.0; 9], &mut [0.0; 3], &mut [0.0; 3]),
            4 => self.line_in(p, &mut [0.0; 16], &mut [0.0; 4], &mut [0.0; 4]),
            5 => self.line_in(p, &mut [0.0; 25], &mut [0.0; 5], &mut [0.0; 5]),
            6 => self.line_in(p, &mut [0.0; 36], &mut [0.0; 6], &mut [0.0; 6]),
            7 => self.line_in(p, &mut [0.0; 49], &mut [0.0; 7], &mut [0.0; 7]),
            8 => self.line_in(p, &mut [0.0; 64], &mut [0.0; 8], &mut [0.0; 8]),
            n if ws.a.len() >= n * n && ws.u.len() >= n => {
                let Workspace { a, u, w } = ws;
                self.line_in(p, &mut a[..n * n], &mut u[..n], &mut w[..n])
            }
            _ => None,
        }
    }

    /// Runs the compiled elimination; falls back to full partial pivoting when a pivot has
    /// shrunk below half its nominal size (or the program is empty).
    #[inline(always)]
    fn line_in(&self, p: &[f64], a: &mut [f64], u: &mut [f64], w: &mut [f64]) -> Option<(f64, f64)> {
        let n = self.n;
        self.assemble(p, a, u, w);
        let mut ok = self.compiled;
        for st in &self.steps {
            let d = a[st.k * n + st.k];
            let holds = d.abs() >= 0.5 * st.nominal;
            if !holds {
                ok = false;
                break;
            }
            let inv = 1.0 / d;
            let (uk, wk) = (u[st.k], w[st.k]);
            for &i in &self.rows[st.r0..st.r1] {
                let f = a[i * n + st.k] * inv;
                for &j in &self.cols[st.c0..st.c1] {
                    a[i * n + j] -= f * a[st.k * n + j];
                }
                u[i] -= f * uk;
                w[i] -= f * wk;
            }
        }
        if !ok {
            self.assemble(p, a, u, w);
            return eliminate(a, n, u, w);
        }
        let d = a[n * n - 1];
        let (s, i) = (u[n - 1] / d, w[n - 1] / d);
        (s.is_finite() && i.is_finite()).then_some((s, i))
    }

    #[inline(always)]
    fn assemble(&self, p: &[f64], a: &mut [f64], u: &mut [f64], w: &mut [f64]) {
        a.copy_from_slice(&self.base);
        u.copy_from_slice(&self.base_u);
        w.copy_from_slice(&self.base_w);
        for e in &self.elems {
            let r = e.r0 * (1.0 + p[e.param]);
            // As the general solver: resistance floored at 1 nΩ (a comparison, not f64::max,
            // which stays a library call when optimising for size).
            let g = 1.0 / if r > 1e-9 { r } else { 1e-9 };
            for &(k, s) in &e.mat[..e.n_mat] {
                a[k] += s * g;
            }
            for &(r, cu, cw) in &e.rhs[..e.n_rhs] {
                u[r] += cu * g;
                w[r] += cw * g;
            }
        }
        for s in &self.srcs {
            w[s.row] += s.coef * p[s.param];
        }
    }

    /// Chooses the row order by partial pivoting on the nominal build, reorders the stamps
    /// accordingly and compiles the elimination over the structural non-zeros, keeping only
    /// what the last row depends on.
    fn compile_program(&mut self) {
        let n = self.n;
        if n == 0 {
            return;
        }
        let zero = vec![0.0; self.n_params];
        let (mut a, mut u, mut w) = (vec![0.0; n * n], vec![0.0; n], vec![0.0; n]);
        self.assemble(&zero, &mut a, &mut u, &mut w);
        let mut order: Vec<usize> = (0..n).collect();
        for k in 0..n {
            let piv = (k..n).fold(k, |b, i| if a[i * n + k].abs() > a[b * n + k].abs() { i } else { b });
            let mag = a[piv * n + k].abs();
            if mag == 0.0 || mag.is_nan() {
                return;
            }
            for j in 0..n {
                a.swap(k * n + j, piv * n + j);
            }
            order.swap(k, piv);
            for i in k + 1..n {
                let f = a[i * n + k] / a[k * n + k];
                for j in k..n {
                    a[i * n + j] -= f * a[k * n + j];
                }
            }
        }
        // Row r of the assembled system moves to position pos[r].
        let mut pos = vec![0; n];
        for (k, &r) in order.iter().enumerate() {
            pos[r] = k;
        }
        let mv = |idx: usize| pos[idx / n] * n + idx % n;
        let mut base = vec![0.0; n * n];
        for (idx, v) in self.base.iter().enumerate() {
            base[mv(idx)] = *v;
        }
        self.base = base;
        self.base_u = (0..n).map(|k| self.base_u[order[k]]).collect();
        self.base_w = (0..n).map(|k| self.base_w[order[k]]).collect();
        for e in &mut self.elems {
            for m in &mut e.mat[..e.n_mat] {
                m.0 = mv(m.0);
            }
            for r in &mut e.rhs[..e.n_rhs] {
                r.0 = pos[r.0];
            }
        }
        for s in &mut self.srcs {
            s.row = pos[s.row];
        }
        // Structure, fill-in and the rows each pivot updates.
        let mut nz: Vec<bool> = self.base.iter().map(|v| *v != 0.0).collect();
        for e in &self.elems {
            for m in &e.mat[..e.n_mat] {
                nz[m.0] = true;
            }
        }
        let mut plan = Vec::new();
        for k in 0..n.saturating_sub(1) {
            let rows: Vec<usize> = (k + 1..n).filter(|&i| nz[i * n + k]).collect();
            let cols: Vec<usize> = (k + 1..n).filter(|&j| nz[k * n + j]).collect();
            for &i in &rows {
                for &j in &cols {
                    nz[i * n + j] = true;
                }
            }
            plan.push((k, rows, cols));
        }
        let mut needed = vec![false; n];
        needed[n - 1] = true;
        for (k, rows, _) in plan.iter_mut().rev() {
            rows.retain(|&i| needed[i]);
            needed[*k] = !rows.is_empty();
        }
        self.assemble(&zero, &mut a, &mut u, &mut w);
        for (k, rows, cols) in plan.into_iter().filter(|(k, _, _)| needed[*k]) {
            let nominal = a[k * n + k].abs();
            if !(nominal > 0.0 && nominal.is_finite()) {
                self.steps.clear();
                return;
            }
            let st = Step { k, r0: self.rows.len(), r1: self.rows.len() + rows.len(), c0: self.cols.len(), c1: self.cols.len() + cols.len(), nominal };
            for &i in &rows {
                let f = a[i * n + k] / a[k * n + k];
                for &j in &cols {
                    a[i * n + j] -= f * a[k * n + j];
                }
            }
            self.rows.extend(rows);
            self.cols.extend(cols);
            self.steps.push(st);
        }
        self.compiled = a[n * n - 1] != 0.0;
    }
}

/// Forward elimination with partial pivoting of `a·x = [u w]` (upper triangle left in `a`),
/// returning the last unknown for both right-hand sides. Plain comparisons and swaps keep it
/// free of library calls when the engine is optimised for size.
#[allow(clippy::manual_swap)]
fn eliminate(a: &mut [f64], n: usize, u: &mut [f64], w: &mut [f64]) -> Option<(f64, f64)> {
    if n == 0 || a.len() < n * n || u.len() < n || w.len() < n {
        return None;
    }
    for k in 0..n {
        let mut piv = k;
        let mut best = a[k * n + k].abs();
        for i in k + 1..n {
            let v = a[i * n + k].abs();
            if v > best {
                best = v;
                piv = i;
            }
        }
        if !(best > 0.0 && best < f64::INFINITY) {
            return None;
        }
        if piv != k {
            for j in k..n {
                let t = a[k * n + j];
                a[k * n + j] = a[piv * n + j];
                a[piv * n + j] = t;
            }
            let (tu, tw) = (u[k], w[k]);
            u[k] = u[piv];
            w[k] = w[piv];
            u[piv] = tu;
            w[piv] = tw;
        }
        let inv = 1.0 / a[k * n + k];
        let (uk, wk) = (u[k], w[k]);
        for i in k + 1..n {
            let f = a[i * n + k] * inv;
            if f != 0.0 {
                for j in k + 1..n {
                    a[i * n + j] -= f * a[k * n + j];
                }
                u[i] -= f * uk;
                w[i] -= f * wk;
            }
        }
    }
    let d = a[n * n - 1];
    let (s, i) = (u[n - 1] / d, w[n - 1] / d);
    (s.is_finite() && i.is_finite()).then_some((s, i))
}

/// Back substitution on the upper triangle [`eliminate`] leaves.
fn back(a: &[f64], n: usize, b: &mut [f64]) {
    for i in (0..n).rev() {
        let s: f64 = (i + 1..n).map(|j| a[i * n + j] * b[j]).sum();
        b[i] = (b[i] - s) / a[i * n + i];
    }
}

/// Compile-time context shared by both systems.
struct Ctx<'a> {
    circuit: &'a Circuit,
    part_param: &'a [Option<usize>],
    amp_param: &'a [usize],
    out: &'a str,
    n_params: usize,
}

impl Ctx<'_> {
    /// Builds the DC system (`short = false`) or the mid-band system with capacitors shorted.
    fn system(&self, short: bool) -> Result<(System, Vec<(String, Col)>), KernelError> {
        let c = self.circuit;
        let err = |m: String| Err(KernelError(m));
        let names = c.nodes();
        let at = |s: &str| names.iter().position(|n| n == s).unwrap_or(0);
        if let Some(p) = c.parts.iter().find(|p| p.nodes.len() < if p.kind == PartKind::OpAmp { 5 } else { 2 }) {
            return err(format!("{} has too few nodes", p.reference));
        }
        // Known potentials: ground, and every node a source ties to ground.
        let mut known: Vec<Option<(f64, f64)>> = vec![None; names.len()];
        known[0] = Some((0.0, 0.0));
        for p in c.parts.iter().filter(|p| p.kind == PartKind::VoltageSource) {
            let (u, w) = match (p.reference == "VSENSE", short) {
                (true, _) => (1.0, 0.0),
                (false, false) => (0.0, p.value),
                (false, true) => (0.0, 0.0),
            };
            let (node, val) = match (at(&p.nodes[0]), at(&p.nodes[1])) {
                (a, 0) if a != 0 => (a, (u, w)),
                (0, b) if b != 0 => (b, (-u, -w)),
                _ => return err(format!("{} is not a source from a node to ground", p.reference)),
            };
            if known[node].replace(val).is_some() {
                return err(format!("node {} is fixed twice", names[node]));
            }
        }
        // Shorted capacitors join nodes (one across two different known potentials stays open).
        let mut parent: Vec<usize> = (0..names.len()).collect();
        fn root(parent: &mut [usize], mut i: usize) -> usize {
            while parent[i] != i {
                parent[i] = parent[parent[i]];
                i = parent[i];
            }
            i
        }
        for p in c.parts.iter().filter(|p| short && p.kind == PartKind::Capacitor) {
            let (ra, rb) = (root(&mut parent, at(&p.nodes[0])), root(&mut parent, at(&p.nodes[1])));
            match (known[ra], known[rb]) {
                _ if ra == rb => {}
                (Some(x), Some(y)) if x != y => {}
                (ka, kb) => {
                    parent[rb] = ra;
                    known[ra] = ka.or(kb);
                }
            }
        }
        let roots: Vec<usize> = (0..names.len()).map(|i| root(&mut parent, i)).collect();
        let amps: Vec<&Part> = c.parts.iter().filter(|p| p.kind == PartKind::OpAmp).collect();
        let mut amp_out: Vec<Option<usize>> = vec![None; names.len()];
        for (k, p) in amps.iter().enumerate() {
            let r = roots[at(&p.nodes[4])];
            if known[r].is_some() || amp_out[r].replace(k).is_some() {
                return err(format!("the output of {} is fixed by another source or amplifier", p.reference));
            }
        }
        // Unknowns: the remaining nodes, then one internal node per amplifier; the output last.
        let mut ord = vec![usize::MAX; names.len()];
        let mut m = 0;
        for i in (0..names.len()).filter(|&i| roots[i] == i && known[i].is_none() && amp_out[i].is_none()) {
            ord[i] = m;
            m += 1;
        }
        let n = m + amps.len();
        let raw_col = |i: usize| match (known[roots[i]], amp_out[roots[i]]) {
            (Some((u, w)), _) => Col::Known { u, w },
            (None, Some(k)) => Col::Free(m + k),
            (None, None) => Col::Free(ord[roots[i]]),
        };
        let Some(out_node) = names.iter().position(|nm| nm == self.out) else {
            return err(format!("the circuit has no node {}", self.out));
        };
        let top = n.saturating_sub(1);
        let last = match raw_col(out_node) {
            Col::Free(k) => k,
            Col::Known { .. } => top,
        };
        let re = |i: usize| if i == last { top } else if i == top { last } else { i };
        let col = |i: usize| match raw_col(i) {
            Col::Free(k) => Col::Free(re(k)),
            known => known,
        };
        let row = |i: usize| (ord[roots[i]] != usize::MAX).then(|| re(ord[roots[i]]));
        let mut s = System { n, base: vec![0.0; n * n], base_u: vec![0.0; n], base_w: vec![0.0; n], elems: Vec::new(), srcs: Vec::new(), out: col(out_node), n_params: self.n_params, compiled: false, steps: Vec::new(), rows: Vec::new(), cols: Vec::new() };
        for i in 0..n {
            s.base[i * n + i] += GMIN;
        }
        for (pi, p) in c.parts.iter().enumerate().filter(|(_, p)| p.kind == PartKind::Resistor) {
            let (a, b) = (at(&p.nodes[0]), at(&p.nodes[1]));
            if roots[a] == roots[b] {
                continue;
            }
            let mut e = Elem { param: 0, r0: p.value, mat: [(0, 0.0); 4], n_mat: 0, rhs: [(0, 0.0, 0.0); 2], n_rhs: 0 };
            for (this, other) in [(a, b), (b, a)] {
                let Some(r) = row(this) else { continue };
                for (node, sign) in [(this, 1.0), (other, -1.0)] {
                    match col(node) {
                        Col::Free(k) => {
                            e.mat[e.n_mat] = (r * n + k, sign);
                            e.n_mat += 1;
                        }
                        Col::Known { u, w } => {
                            e.rhs[e.n_rhs] = (r, -sign * u, -sign * w);
                            e.n_rhs += 1;
                        }
                    }
                }
            }
            match self.part_param[pi] {
                Some(k) => s.elems.push(Elem { param: k, ..e }),
                None => {
                    let g = 1.0 / p.value.max(1e-9);
                    for &(k, sg) in &e.mat[..e.n_mat] {
                        s.base[k] += sg * g;
                    }
                    for &(r, cu, cw) in &e.rhs[..e.n_rhs] {
                        s.base_u[r] += cu * g;
                        s.base_w[r] += cw * g;
                    }
                }
            }
        }
        // Amplifier: −GM·(v+ + Vos − v−) + (GM/A0 + GMIN)·x = 0 on the internal node's row.
        let amp = &c.amplifier;
        for (k, p) in amps.iter().enumerate() {
            let x = re(m + k);
            for (node, g) in [(at(&p.nodes[0]), -GM), (at(&p.nodes[1]), GM)] {
                match col(node) {
                    Col::Free(j) => s.base[x * n + j] += g,
                    Col::Known { u, w } => {
                        s.base_u[x] -= g * u;
                        s.base_w[x] -= g * w;
                    }
                }
            }
            s.base[x * n + x] += 1.0 / (amp.open_loop_gain / GM);
            if !short {
                let b = self.amp_param[k];
                s.srcs.push(Src { param: b, row: x, coef: GM });
                for (j, node) in [(1, at(&p.nodes[0])), (2, at(&p.nodes[1]))] {
                    if let Some(r) = row(node) {
                        s.srcs.push(Src { param: b + j, row: r, coef: -1.0 });
                    }
                }
            }
        }
        let nodes = names.iter().enumerate().map(|(i, nm)| (nm.clone(), col(i))).collect();
        s.compile_program();
        Ok((s, nodes))
    }
}
