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
//! A second system treats every coupling, gain and reference capacitor as a short (nodes
//! joined, the rails at AC ground, the EMF a unit small signal) for the mid-band gain of
//! AC-coupled stages; filter and drive capacitors, whose corners lie above the band, stay open.
//!
//! Several amplifiers (a gain stage followed by filter sections) are handled alike: each
//! output shares its internal node's column. The output node need not be an amplifier's:
//! behind a drive resistor it is an ordinary unknown, and [`Kernel::output_is_amplifier`]
//! still reports the amplifier limits as applying, since the resistor into the converter's
//! input impedance only scales the amplifier's output slightly.
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

mod compile;

use compile::Ctx;

use crate::circuit::{is_decoupling, Circuit, PartKind};

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
    /// (parameter, nominal resistance) of every perturbed resistor.
    res: Vec<(usize, f64)>,
}

/// Buffers for systems larger than the stack arrays; make it with [`Kernel::workspace`].
#[derive(Debug, Clone)]
pub struct Workspace {
    a: Vec<f64>,
    u: Vec<f64>,
    w: Vec<f64>,
    /// The perturbed conductances of one build, indexed by parameter.
    g: Vec<f64>,
}

impl Kernel {
    /// Compiles `circuit` with `out` as the output node. Parameters are, in circuit order,
    /// every non-bench resistor and capacitor with a tolerance (supply decoupling excluded),
    /// then per amplifier its
    /// offset and the bias currents of its + and − inputs.
    pub fn compile(circuit: &Circuit, out: &str) -> Result<Kernel, KernelError> {
        let mut params = Vec::new();
        let mut res = Vec::new();
        let mut part_param = vec![None; circuit.parts.len()];
        for (i, p) in circuit.parts.iter().enumerate() {
            let kind = match p.kind {
                PartKind::Resistor => ParamKind::Resistor,
                PartKind::Capacitor => ParamKind::Capacitor,
                _ => continue,
            };
            // Supply decoupling (a rail to ground) moves no quantity: not a parameter.
            if let (false, Some(t), false) = (p.bench, p.tolerance, is_decoupling(p)) {
                part_param[i] = Some(params.len());
                if kind == ParamKind::Resistor {
                    res.push((params.len(), p.value));
                }
                params.push(Param { kind, part: p.reference.clone(), bound: finite_abs(t) });
            }
        }
        let amp = &circuit.amplifier;
        let mut amp_param = Vec::new();
        for p in circuit.parts.iter().filter(|p| p.kind == PartKind::OpAmp) {
            amp_param.push(params.len());
            for (kind, bound) in [
                (ParamKind::Offset, amp.offset),
                (ParamKind::BiasPlus, amp.bias_current),
                (ParamKind::BiasMinus, amp.bias_current),
            ] {
                params.push(Param { kind, part: p.reference.clone(), bound: finite_abs(bound) });
            }
        }
        let ctx = Ctx { circuit, part_param: &part_param, amp_param: &amp_param, out, n_params: params.len() };
        let (dc, nodes) = ctx.system(false)?;
        let mid = ctx.system(true).ok().map(|(s, _)| s);
        // The output is an amplifier's, or the far end of a resistor from one (a drive
        // resistor into a light load): the amplifier's swing limits bound it either way.
        let amp_out =
            |n: &str| circuit.parts.iter().any(|p| p.kind == PartKind::OpAmp && p.nodes.get(4).is_some_and(|m| m == n));
        let out_amp = amp_out(out)
            || circuit.parts.iter().any(|p| {
                !p.bench
                    && p.kind == PartKind::Resistor
                    && p.nodes.len() == 2
                    && p.nodes.iter().any(|n| n == out)
                    && p.nodes.iter().any(|n| n != out && amp_out(n))
            });
        Ok(Kernel { params, dc, mid, out_amp, nodes, res })
    }

    /// The parameters, in the order a parameter slice must list them.
    pub fn params(&self) -> &[Param] {
        &self.params
    }

    /// Whether the output node is driven by an amplifier, directly or through one resistor
    /// (its swing limits apply).
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
        Workspace { a: vec![0.0; n * n], u: vec![0.0; n], w: vec![0.0; n], g: vec![0.0; self.params.len()] }
    }

    /// DC output as `(slope, intercept)`: output = slope·source + intercept for a build with
    /// parameters `p` (one value per [`Kernel::params`]). `None` for a singular build or a
    /// short parameter slice.
    pub fn dc_line(&self, p: &[f64], ws: &mut Workspace) -> Option<(f64, f64)> {
        self.conductances(p, ws)?;
        self.dc.line(ws)
    }

    /// Mid-band small-signal gain from the sensor EMF to the output with every capacitor a
    /// short. `None` when the circuit cannot be reduced that way or the build is singular.
    pub fn short_gain(&self, p: &[f64], ws: &mut Workspace) -> Option<f64> {
        self.conductances(p, ws)?;
        self.mid.as_ref()?.line(ws).map(|(slope, _)| slope)
    }

    /// [`Kernel::dc_line`] and [`Kernel::short_gain`] of one build together, sharing its
    /// conductances.
    pub fn dc_line_and_short_gain(&self, p: &[f64], ws: &mut Workspace) -> Option<((f64, f64), f64)> {
        self.conductances(p, ws)?;
        let dc = self.dc.line(ws)?;
        Some((dc, self.mid.as_ref()?.line(ws)?.0))
    }

    /// The build's parameters into `ws.g`, each resistor's as its perturbed conductance.
    fn conductances(&self, p: &[f64], ws: &mut Workspace) -> Option<()> {
        let n = self.params.len();
        if p.len() < n || ws.g.len() < n {
            return None;
        }
        // Slices, not Vecs, inside the loop: Vec indexing stays a call when optimising for size.
        let (g, p) = (&mut ws.g[..n], &p[..n]);
        g.copy_from_slice(p);
        for &(i, r0) in &self.res {
            let r = r0 * (1.0 + p[i]);
            // As the general solver: resistance floored at 1 nΩ (a comparison, not f64::max,
            // which is a library call too).
            g[i] = 1.0 / if r > 1e-9 { r } else { 1e-9 };
        }
        Some(())
    }

    /// Every node voltage at DC for sensor EMF `source`, by dense elimination with partial
    /// pivoting and back substitution (allocates; for checks and reports).
    pub fn dc_voltages(&self, p: &[f64], source: f64) -> Option<Vec<(String, f64)>> {
        let s = &self.dc;
        let n = s.n;
        let mut ws = self.workspace();
        self.conductances(p, &mut ws)?;
        let (mut a, mut u, mut w) = (vec![0.0; n * n], vec![0.0; n], vec![0.0; n]);
        s.assemble(&ws.g, &mut a, &mut u, &mut w);
        if n > 0 {
            eliminate(&mut a, n, &mut u, &mut w)?;
            back(&a, n, &mut u);
            back(&a, n, &mut w);
        }
        let value = |c: &Col| match *c {
            Col::Free(i, du, dw) => (u[i] + du) * source + w[i] + dw,
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
    /// Unknown `k`, plus a known shift `u·source + w` (a node that a floating source ties to
    /// another node: both share one unknown, the source's terminal shifted by its value).
    Free(usize, f64, f64),
    Known {
        u: f64,
        w: f64,
    },
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
    rhs: [(usize, f64, f64); 4],
    n_rhs: usize,
}

/// A perturbed source term: `w[row] += coef·g[param]` (the parameter's value).
#[derive(Debug, Clone, Copy)]
struct Src {
    param: usize,
    row: usize,
    coef: f64,
}

/// One elimination step of the compiled program: pivot `k`, the rows it updates and the
/// columns right of the pivot that are non-zero.
#[derive(Debug, Clone)]
struct Step {
    k: usize,
    rows: Vec<usize>,
    cols: Vec<usize>,
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
    /// Compile-time form of the perturbed conductances; [`System::flatten`] turns it into
    /// the flat lists below.
    elems: Vec<Elem>,
    /// (flat matrix index, parameter, sign): `a[index] += sign·g[parameter]`.
    mat: Vec<(usize, usize, f64)>,
    /// (row, parameter, coefficient into `u`, coefficient into `w`).
    rhs: Vec<(usize, usize, f64, f64)>,
    srcs: Vec<Src>,
    out: Col,
    /// The compiled elimination is usable (else every build uses full partial pivoting).
    compiled: bool,
    steps: Vec<Step>,
    /// Flat indices the compiled elimination reads or writes (structural non-zeros with
    /// their fill-in): only these are reset from the base per build.
    touched: Vec<usize>,
}

impl System {
    /// Output `(slope, intercept)` of the build whose conductances and sources are in
    /// `ws.g`. Sizes up to 8 run on stack arrays of a size known at compile time.
    fn line(&self, ws: &mut Workspace) -> Option<(f64, f64)> {
        let (du, dw) = match self.out {
            Col::Known { u, w } => return Some((u, w)),
            Col::Free(_, du, dw) => (du, dw),
        };
        let Workspace { a, u, w, g } = ws;
        let g = &g[..];
        let line = match self.n {
            1 => self.line_in(g, &mut [0.0; 1], &mut [0.0; 1], &mut [0.0; 1]),
            2 => self.line_in(g, &mut [0.0; 4], &mut [0.0; 2], &mut [0.0; 2]),
            3 => self.line_in(g, &mut [0.0; 9], &mut [0.0; 3], &mut [0.0; 3]),
            4 => self.line_in(g, &mut [0.0; 16], &mut [0.0; 4], &mut [0.0; 4]),
            5 => self.line_in(g, &mut [0.0; 25], &mut [0.0; 5], &mut [0.0; 5]),
            6 => self.line_in(g, &mut [0.0; 36], &mut [0.0; 6], &mut [0.0; 6]),
            7 => self.line_in(g, &mut [0.0; 49], &mut [0.0; 7], &mut [0.0; 7]),
            8 => self.line_in(g, &mut [0.0; 64], &mut [0.0; 8], &mut [0.0; 8]),
            n if a.len() >= n * n && u.len() >= n => self.line_in(g, &mut a[..n * n], &mut u[..n], &mut w[..n]),
            _ => None,
        };
        line.map(|(s, i)| (s + du, i + dw))
    }

    /// Runs the compiled elimination; falls back to full partial pivoting when a pivot has
    /// shrunk below half its nominal size (or there is no program).
    #[inline(always)]
    fn line_in(&self, g: &[f64], a: &mut [f64], u: &mut [f64], w: &mut [f64]) -> Option<(f64, f64)> {
        let n = self.n;
        let mut ok = self.compiled;
        if ok {
            self.assemble_touched(g, a, u, w);
        } else {
            self.assemble(g, a, u, w);
        }
        for st in &self.steps {
            let d = a[st.k * n + st.k];
            let holds = d.abs() >= 0.5 * st.nominal;
            if !holds {
                ok = false;
                break;
            }
            let inv = 1.0 / d;
            let (uk, wk) = (u[st.k], w[st.k]);
            for &i in &st.rows {
                let f = a[i * n + st.k] * inv;
                for &j in &st.cols {
                    a[i * n + j] -= f * a[st.k * n + j];
                }
                u[i] -= f * uk;
                w[i] -= f * wk;
            }
        }
        if !ok {
            self.assemble(g, a, u, w);
            return eliminate(a, n, u, w);
        }
        let inv = 1.0 / a[n * n - 1];
        let (s, i) = (u[n - 1] * inv, w[n - 1] * inv);
        (s.is_finite() && i.is_finite()).then_some((s, i))
    }

    /// [`System::assemble`] for the compiled elimination: only the entries it touches are
    /// reset, which for the chain-shaped systems of a gain stage and its filter sections is a
    /// small part of the n² a full copy would move.
    #[inline(always)]
    fn assemble_touched(&self, g: &[f64], a: &mut [f64], u: &mut [f64], w: &mut [f64]) {
        for &k in &self.touched {
            a[k] = self.base[k];
        }
        self.add_perturbations(g, a, u, w);
    }

    /// The right-hand sides from the base, and each perturbed conductance `g[param]` added at
    /// its flat stamp positions of `a` and each source `g[param]` into `w`.
    #[inline(always)]
    fn add_perturbations(&self, g: &[f64], a: &mut [f64], u: &mut [f64], w: &mut [f64]) {
        u.copy_from_slice(&self.base_u);
        w.copy_from_slice(&self.base_w);
        for &(k, e, sign) in &self.mat {
            a[k] += sign * g[e];
        }
        for &(r, e, cu, cw) in &self.rhs {
            u[r] += cu * g[e];
            w[r] += cw * g[e];
        }
        for s in &self.srcs {
            w[s.row] += s.coef * g[s.param];
        }
    }

    /// The build's matrix and right-hand sides: the base, plus each perturbed conductance
    /// `g[param]` at its flat stamp positions, plus each source `g[param]`.
    #[inline(always)]
    fn assemble(&self, g: &[f64], a: &mut [f64], u: &mut [f64], w: &mut [f64]) {
        a.copy_from_slice(&self.base);
        self.add_perturbations(g, a, u, w);
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
