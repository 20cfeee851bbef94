//! Fast real-valued DC kernel for repeated solves of one circuit with perturbed parts.
//!
//! The tolerance analysis solves the same circuit tens of thousands of times with slightly
//! different part values, amplifier offsets and bias currents. The general [`crate::solve`]
//! solver (complex arithmetic, node lookup by name, a fresh dense matrix per solve) is built
//! for clarity; this kernel is built for that loop. The circuit is compiled once into
//! index-based stamp lists, then every build only copies a constant base matrix, adds the
//! perturbed conductances and sources, factorises and substitutes — no strings, no maps and
//! no allocation per build.
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
//! * the system is linear in the sensor EMF, so one factorisation serves two right-hand
//!   sides: the EMF's unit contribution `u` and everything else `w`. The output is then
//!   `slope·source + intercept` for any source value.
//!
//! A second system treats every capacitor as a short (nodes joined, the rails at AC ground,
//! the EMF a unit small signal) for the mid-band gain of AC-coupled stages.
//!
//! What is left has a few unknowns (3–8 for the stages synthesis produces), so it is solved
//! by a short hand-written LU factorisation with partial pivoting on buffers allocated once
//! per analysis: a general dense-matrix library allocates per factorisation, which at this
//! size costs more than the arithmetic. The tests check this factorisation against
//! nalgebra's LU and the whole kernel against the general solver.
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

/// Buffers for one thread of solves; make it with [`Kernel::workspace`].
#[derive(Debug, Clone)]
pub struct Workspace {
    a: Vec<f64>,
    u: Vec<f64>,
    w: Vec<f64>,
    perm: Vec<usize>,
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
        let ctx = Ctx { circuit, part_param: &part_param, amp_param: &amp_param, out };
        let (dc, cols) = ctx.system(false)?;
        let mid = ctx.system(true).ok().map(|(s, _)| s);
        let out_amp = circuit.parts.iter().any(|p| p.kind == PartKind::OpAmp && p.nodes.get(4).is_some_and(|n| n == out));
        Ok(Kernel { params, dc, mid, out_amp, nodes: cols })
    }

    /// The parameters, in the order a parameter slice must list them.
    pub fn params(&self) -> &[Param] {
        &self.params
    }

    /// Whether the output node is driven by an amplifier (its swing limits apply).
    pub fn output_is_amplifier(&self) -> bool {
        self.out_amp
    }

    /// Buffers large enough for either system.
    pub fn workspace(&self) -> Workspace {
        let n = self.dc.n.max(self.mid.as_ref().map_or(0, |m| m.n)).max(1);
        Workspace { a: vec![0.0; n * n], u: vec![0.0; n], w: vec![0.0; n], perm: vec![0; n] }
    }

    /// DC output as `(slope, intercept)`: output = slope·source + intercept for a build with
    /// parameters `p` (one value per [`Kernel::params`]). `None` for a singular build or a
    /// short parameter slice.
    pub fn dc_line(&self, p: &[f64], ws: &mut Workspace) -> Option<(f64, f64)> {
        self.dc.solve(p, ws)?;
        self.dc.output(ws)
    }

    /// Mid-band small-signal gain from the sensor EMF to the output with every capacitor a
    /// short. `None` when the circuit cannot be reduced that way or the build is singular.
    pub fn short_gain(&self, p: &[f64], ws: &mut Workspace) -> Option<f64> {
        let m = self.mid.as_ref()?;
        m.solve(p, ws)?;
        m.output(ws).map(|(slope, _)| slope)
    }

    /// Every node voltage at DC for sensor EMF `source` (allocates; for checks and reports).
    pub fn dc_voltages(&self, p: &[f64], source: f64) -> Option<Vec<(String, f64)>> {
        let mut ws = self.workspace();
        self.dc.solve(p, &mut ws)?;
        Some(self.nodes.iter().map(|(name, col)| (name.clone(), col.value(&ws, source))).collect())
    }
}

/// Solves `a·x = b` in place (`a` row-major `n×n`, overwritten by its LU factors; `b`
/// overwritten by `x`) with the kernel's factorisation. `false` for a singular matrix.
pub fn solve_dense(a: &mut [f64], n: usize, b: &mut [f64]) -> bool {
    if a.len() < n * n || b.len() < n {
        return false;
    }
    let mut perm = vec![0; n];
    if !factor(a, n, &mut perm) {
        return false;
    }
    substitute(a, n, &perm, b);
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

impl Col {
    fn value(&self, ws: &Workspace, source: f64) -> f64 {
        match *self {
            Col::Free(i) => ws.u[i] * source + ws.w[i],
            Col::Known { u, w } => u * source + w,
        }
    }
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
}

impl System {
    /// Assembles and factorises the build `p`, then substitutes both right-hand sides.
    fn solve(&self, p: &[f64], ws: &mut Workspace) -> Option<()> {
        let n = self.n;
        if p.len() < self.n_params || ws.perm.len() < n {
            return None;
        }
        let (a, u, w) = (&mut ws.a[..n * n], &mut ws.u[..n], &mut ws.w[..n]);
        a.copy_from_slice(&self.base);
        u.copy_from_slice(&self.base_u);
        w.copy_from_slice(&self.base_w);
        for e in &self.elems {
            let g = 1.0 / (e.r0 * (1.0 + p[e.param])).max(1e-9);
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
        if !factor(a, n, &mut ws.perm[..n]) {
            return None;
        }
        substitute(a, n, &ws.perm[..n], u);
        substitute(a, n, &ws.perm[..n], w);
        Some(())
    }

    fn output(&self, ws: &Workspace) -> Option<(f64, f64)> {
        let (s, i) = match self.out {
            Col::Free(k) => (ws.u[k], ws.w[k]),
            Col::Known { u, w } => (u, w),
        };
        (s.is_finite() && i.is_finite()).then_some((s, i))
    }
}

/// LU factorisation with partial pivoting in place (unit lower factor below the diagonal).
fn factor(a: &mut [f64], n: usize, perm: &mut [usize]) -> bool {
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
        if !(best > 0.0 && best.is_finite()) {
            return false;
        }
        perm[k] = piv;
        if piv != k {
            for j in 0..n {
                a.swap(k * n + j, piv * n + j);
            }
        }
        let d = a[k * n + k];
        for i in k + 1..n {
            let f = a[i * n + k] / d;
            a[i * n + k] = f;
            if f != 0.0 {
                for j in k + 1..n {
                    a[i * n + j] -= f * a[k * n + j];
                }
            }
        }
    }
    true
}

fn substitute(a: &[f64], n: usize, perm: &[usize], b: &mut [f64]) {
    for (k, &p) in perm.iter().enumerate().take(n) {
        b.swap(k, p);
    }
    for i in 0..n {
        let s: f64 = (0..i).map(|j| a[i * n + j] * b[j]).sum();
        b[i] -= s;
    }
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
}

impl Ctx<'_> {
    /// Builds the DC system (`short = false`) or the mid-band system with capacitors shorted.
    fn system(&self, short: bool) -> Result<(System, Vec<(String, Col)>), KernelError> {
        let c = self.circuit;
        let err = |m: &str| Err(KernelError(m.to_string()));
        let names = c.nodes();
        let at = |s: &str| names.iter().position(|n| n == s).unwrap_or(0);
        let mut parent: Vec<usize> = (0..names.len()).collect();
        let mut known: Vec<Option<(f64, f64)>> = vec![None; names.len()];
        known[0] = Some((0.0, 0.0));
        for p in &c.parts {
            let want = if p.kind == PartKind::OpAmp { 5 } else { 2 };
            if p.nodes.len() < want {
                return err(&format!("{} has {} nodes, {want} expected", p.reference, p.nodes.len()));
            }
        }
        for p in c.parts.iter().filter(|p| p.kind == PartKind::VoltageSource) {
            let (pos, neg) = (at(&p.nodes[0]), at(&p.nodes[1]));
            let (u, w) = match (p.reference == "VSENSE", short) {
                (true, _) => (1.0, 0.0),
                (false, false) => (0.0, p.value),
                (false, true) => (0.0, 0.0),
            };
            let (node, val) = match (pos, neg) {
                (a, 0) if a != 0 => (a, (u, w)),
                (0, b) if b != 0 => (b, (-u, -w)),
                _ => return err(&format!("{} is not a source from a node to ground", p.reference)),
            };
            if known[node].is_some() {
                return err(&format!("node {} is fixed twice", names[node]));
            }
            known[node] = Some(val);
        }
        fn root(parent: &mut [usize], mut i: usize) -> usize {
            while parent[i] != i {
                parent[i] = parent[parent[i]];
                i = parent[i];
            }
            i
        }
        if short {
            for p in c.parts.iter().filter(|p| p.kind == PartKind::Capacitor) {
                let (ra, rb) = (root(&mut parent, at(&p.nodes[0])), root(&mut parent, at(&p.nodes[1])));
                match (known[ra], known[rb]) {
                    _ if ra == rb => {}
                    // A capacitor across two different known potentials stays open.
                    (Some(x), Some(y)) if x != y => {}
                    (ka, kb) => {
                        parent[rb] = ra;
                        known[ra] = ka.or(kb);
                    }
                }
            }
        }
        let roots: Vec<usize> = (0..names.len()).map(|i| root(&mut parent, i)).collect();
        let amps: Vec<&Part> = c.parts.iter().filter(|p| p.kind == PartKind::OpAmp).collect();
        let mut amp_out: Vec<Option<usize>> = vec![None; names.len()];
        for (k, p) in amps.iter().enumerate() {
            let r = roots[at(&p.nodes[4])];
            if known[r].is_some() || amp_out[r].is_some() {
                return err(&format!("the output of {} is fixed by another source or amplifier", p.reference));
            }
            amp_out[r] = Some(k);
        }
        let mut ord = vec![usize::MAX; names.len()];
        let mut m = 0;
        for i in 0..names.len() {
            if roots[i] == i && known[i].is_none() && amp_out[i].is_none() {
                ord[i] = m;
                m += 1;
            }
        }
        let n = m + amps.len();
        let col = |i: usize| {
            let r = roots[i];
            match (known[r], amp_out[r]) {
                (Some((u, w)), _) => Col::Known { u, w },
                (None, Some(k)) => Col::Free(m + k),
                (None, None) => Col::Free(ord[r]),
            }
        };
        let row = |i: usize| (ord[roots[i]] != usize::MAX).then(|| ord[roots[i]]);
        let mut s = System { n, base: vec![0.0; n * n], base_u: vec![0.0; n], base_w: vec![0.0; n], elems: Vec::new(), srcs: Vec::new(), out: Col::Known { u: 0.0, w: 0.0 }, n_params: 0 };
        s.n_params = self.amp_param.iter().map(|&b| b + 3).chain(self.part_param.iter().flatten().map(|&i| i + 1)).max().unwrap_or(0);
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
        let amp = &c.amplifier;
        for (k, p) in amps.iter().enumerate() {
            let x = m + k;
            for (node, sign) in [(at(&p.nodes[0]), -GM), (at(&p.nodes[1]), GM)] {
                match col(node) {
                    Col::Free(j) => s.base[x * n + j] += sign,
                    Col::Known { u, w } => {
                        s.base_u[x] -= sign * u;
                        s.base_w[x] -= sign * w;
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
        match names.iter().position(|nm| nm == self.out) {
            Some(i) => s.out = col(i),
            None => return err(&format!("the circuit has no node {}", self.out)),
        }
        let cols = names.iter().enumerate().map(|(i, nm)| (nm.clone(), col(i))).collect();
        Ok((s, cols))
    }
}
