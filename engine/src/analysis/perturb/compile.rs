//! Compilation of a circuit into the kernel's index-based systems: which nodes are known,
//! which unknowns remain (the output's last), where each conductance, amplifier and source
//! stamps, and the elimination program reused by every build (see [`super`]).

use super::{Col, Elem, KernelError, Src, Step, System};
use crate::circuit::{is_decoupling, is_sensor_source, open_at_mid_band, Circuit, Part, PartKind};
use crate::solve::GMIN;

/// Compile-time context shared by both systems.
pub(super) struct Ctx<'a> {
    pub circuit: &'a Circuit,
    pub part_param: &'a [Option<usize>],
    pub amp_param: &'a [usize],
    pub out: &'a str,
    pub n_params: usize,
}

impl Ctx<'_> {
    /// Builds the DC system (`short = false`) or the mid-band system with capacitors shorted.
    pub fn system(&self, short: bool) -> Result<(System, Vec<(String, Col)>), KernelError> {
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
        // A source fixes its + node from its − node (V+ − V− = value) once one of them is
        // known; chains of sources (a differential sensor on its common-mode source) resolve
        // over several passes.
        let mut pending: Vec<(usize, usize, f64, f64, &str)> = c
            .parts
            .iter()
            .filter(|p| p.kind == PartKind::VoltageSource)
            .map(|p| {
                let (u, w) = match (is_sensor_source(p), short) {
                    (true, _) => (1.0, 0.0),
                    (false, false) => (0.0, p.value),
                    (false, true) => (0.0, 0.0),
                };
                (at(&p.nodes[0]), at(&p.nodes[1]), u, w, p.reference.as_str())
            })
            .collect();
        while !pending.is_empty() {
            let before = pending.len();
            let mut rest = Vec::new();
            for (a, b, u, w, r) in std::mem::take(&mut pending) {
                match (known[a], known[b]) {
                    (None, Some((ku, kw))) => known[a] = Some((ku + u, kw + w)),
                    (Some((ku, kw)), None) => known[b] = Some((ku - u, kw - w)),
                    (Some(_), Some(_)) => return err(format!("node {} is fixed twice (by {r})", names[a])),
                    (None, None) => rest.push((a, b, u, w, r)),
                }
            }
            let stalled = rest.len() == before;
            pending = rest;
            if stalled {
                break;
            }
        }
        // Nodes joined into one unknown: V(i) = V(parent[i]) + shift[i] (u·source + w). A
        // floating source (a sensor on a lifted return) joins its + node to its − node shifted
        // by its value; shorted capacitors join with no shift (one across two different known
        // potentials stays open).
        let mut parent: Vec<usize> = (0..names.len()).collect();
        let mut shift: Vec<(f64, f64)> = vec![(0.0, 0.0); names.len()];
        fn root(parent: &[usize], shift: &[(f64, f64)], mut i: usize) -> (usize, (f64, f64)) {
            let mut s = (0.0, 0.0);
            while parent[i] != i {
                s = (s.0 + shift[i].0, s.1 + shift[i].1);
                i = parent[i];
            }
            (i, s)
        }
        for (a, b, u, w, r) in pending {
            let ((ra, sa), (rb, sb)) = (root(&parent, &shift, a), root(&parent, &shift, b));
            if ra == rb {
                return err(format!("{r} closes a loop of sources"));
            }
            // V(a) − V(b) = (u, w): V(ra) = V(rb) + sb + (u, w) − sa.
            parent[ra] = rb;
            shift[ra] = (sb.0 + u - sa.0, sb.1 + w - sa.1);
        }
        // Filter and drive capacitors set corners above the band: open at mid-band.
        // Supply decoupling joins a rail to ground, both fixed already: left out.
        for p in c
            .parts
            .iter()
            .filter(|p| short && p.kind == PartKind::Capacitor && !open_at_mid_band(p) && !is_decoupling(p))
        {
            let ((ra, sa), (rb, sb)) = (root(&parent, &shift, at(&p.nodes[0])), root(&parent, &shift, at(&p.nodes[1])));
            let pot = |k: Option<(f64, f64)>, s: (f64, f64)| k.map(|k| (k.0 + s.0, k.1 + s.1));
            match (pot(known[ra], sa), pot(known[rb], sb)) {
                _ if ra == rb => {}
                (Some(x), Some(y)) if x != y => {}
                (_, kb) => {
                    // V(rb) = V(ra) + sa − sb.
                    parent[rb] = ra;
                    shift[rb] = (sa.0 - sb.0, sa.1 - sb.1);
                    if known[ra].is_none() {
                        known[ra] = kb.map(|k| (k.0 - sa.0, k.1 - sa.1));
                    }
                }
            }
        }
        let joined: Vec<(usize, (f64, f64))> = (0..names.len()).map(|i| root(&parent, &shift, i)).collect();
        let roots: Vec<usize> = joined.iter().map(|j| j.0).collect();
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
        let raw_col = |i: usize| {
            let (du, dw) = joined[i].1;
            match (known[roots[i]], amp_out[roots[i]]) {
                (Some((u, w)), _) => Col::Known { u: u + du, w: w + dw },
                (None, Some(k)) => Col::Free(m + k, du, dw),
                (None, None) => Col::Free(ord[roots[i]], du, dw),
            }
        };
        let Some(out_node) = names.iter().position(|nm| nm == self.out) else {
            return err(format!("the circuit has no node {}", self.out));
        };
        let top = n.saturating_sub(1);
        let last = match raw_col(out_node) {
            Col::Free(k, ..) => k,
            Col::Known { .. } => top,
        };
        let re = |i: usize| {
            if i == last {
                top
            } else if i == top {
                last
            } else {
                i
            }
        };
        let col = |i: usize| match raw_col(i) {
            Col::Free(k, du, dw) => Col::Free(re(k), du, dw),
            known => known,
        };
        let row = |i: usize| (ord[roots[i]] != usize::MAX).then(|| re(ord[roots[i]]));
        let mut s = System {
            n,
            base: vec![0.0; n * n],
            base_u: vec![0.0; n],
            base_w: vec![0.0; n],
            elems: Vec::new(),
            mat: Vec::new(),
            rhs: Vec::new(),
            srcs: Vec::new(),
            out: col(out_node),
            compiled: false,
            steps: Vec::new(),
            touched: Vec::new(),
        };
        for i in 0..n {
            s.base[i * n + i] += GMIN;
        }
        for (pi, p) in c.parts.iter().enumerate().filter(|(_, p)| p.kind == PartKind::Resistor) {
            let (a, b) = (at(&p.nodes[0]), at(&p.nodes[1]));
            if roots[a] == roots[b] {
                continue;
            }
            let mut e = Elem { param: 0, r0: p.value, mat: [(0, 0.0); 4], n_mat: 0, rhs: [(0, 0.0, 0.0); 4], n_rhs: 0 };
            for (this, other) in [(a, b), (b, a)] {
                let Some(r) = row(this) else { continue };
                for (node, sign) in [(this, 1.0), (other, -1.0)] {
                    match col(node) {
                        Col::Free(k, du, dw) => {
                            e.mat[e.n_mat] = (r * n + k, sign);
                            e.n_mat += 1;
                            if du != 0.0 || dw != 0.0 {
                                e.rhs[e.n_rhs] = (r, -sign * du, -sign * dw);
                                e.n_rhs += 1;
                            }
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
        // Current sources inject into the right side: the sensor's as the swept value u,
        // the others as constants (zero in the mid-band system, like the voltage sources).
        for p in c.parts.iter().filter(|p| p.kind == PartKind::CurrentSource) {
            let (u, w) = match (is_sensor_source(p), short) {
                (true, _) => (1.0, 0.0),
                (false, false) => (0.0, p.value),
                (false, true) => (0.0, 0.0),
            };
            for (node, sign) in [(at(&p.nodes[1]), 1.0), (at(&p.nodes[0]), -1.0)] {
                if let Some(r) = row(node) {
                    s.base_u[r] += sign * u;
                    s.base_w[r] += sign * w;
                }
            }
        }
        // Amplifier (the macro-model of crate::amplifier::model):
        // −GM·(v+ + Vos − v−) + (GM/A0 + GMIN)·x = 0 on the internal node's row.
        let model = c.amplifier.macro_model();
        for (k, p) in amps.iter().enumerate() {
            let x = re(m + k);
            for (node, g) in [(at(&p.nodes[0]), -model.gm), (at(&p.nodes[1]), model.gm)] {
                match col(node) {
                    Col::Free(j, du, dw) => {
                        s.base[x * n + j] += g;
                        s.base_u[x] -= g * du;
                        s.base_w[x] -= g * dw;
                    }
                    Col::Known { u, w } => {
                        s.base_u[x] -= g * u;
                        s.base_w[x] -= g * w;
                    }
                }
            }
            s.base[x * n + x] += model.load_conductance();
            if !short {
                let b = self.amp_param[k];
                s.srcs.push(Src { param: b, row: x, coef: model.gm });
                for (j, node) in [(1, at(&p.nodes[0])), (2, at(&p.nodes[1]))] {
                    if let Some(r) = row(node) {
                        s.srcs.push(Src { param: b + j, row: r, coef: -1.0 });
                    }
                }
            }
        }
        let nodes = names.iter().enumerate().map(|(i, nm)| (nm.clone(), col(i))).collect();
        s.compile_program(self.n_params);
        Ok((s, nodes))
    }
}

impl System {
    /// Chooses the row order by partial pivoting on the nominal build, reorders the stamps
    /// accordingly and compiles the elimination over the structural non-zeros, keeping only
    /// what the last row depends on.
    fn compile_program(&mut self, n_params: usize) {
        self.flatten();
        let n = self.n;
        if n == 0 {
            return;
        }
        // The nominal build: every conductance at its nominal value, every source at 0.
        let mut g = vec![0.0; n_params];
        for e in &self.elems {
            g[e.param] = 1.0 / e.r0.max(1e-9);
        }
        let (mut a, mut u, mut w) = (vec![0.0; n * n], vec![0.0; n], vec![0.0; n]);
        self.assemble(&g, &mut a, &mut u, &mut w);
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
        self.touched = (0..n * n).filter(|&i| nz[i]).collect();
        let mut needed = vec![false; n];
        needed[n - 1] = true;
        for (k, rows, _) in plan.iter_mut().rev() {
            rows.retain(|&i| needed[i]);
            needed[*k] = !rows.is_empty();
        }
        self.flatten();
        self.assemble(&g, &mut a, &mut u, &mut w);
        for (k, rows, cols) in plan.into_iter().filter(|(k, _, _)| needed[*k]) {
            let nominal = a[k * n + k].abs();
            if nominal == 0.0 || !nominal.is_finite() {
                self.steps.clear();
                return;
            }
            for &i in &rows {
                let f = a[i * n + k] / a[k * n + k];
                for &j in &cols {
                    a[i * n + j] -= f * a[k * n + j];
                }
            }
            self.steps.push(Step { k, rows, cols, nominal });
        }
        self.compiled = a[n * n - 1] != 0.0;
    }

    /// The per-build form of the perturbed conductances: flat lists of where each stamps.
    fn flatten(&mut self) {
        self.mat.clear();
        self.rhs.clear();
        for e in &self.elems {
            self.mat.extend(e.mat[..e.n_mat].iter().map(|&(k, s)| (k, e.param, s)));
            self.rhs.extend(e.rhs[..e.n_rhs].iter().map(|&(r, cu, cw)| (r, e.param, cu, cw)));
        }
    }
}
