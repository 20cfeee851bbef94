//! The common-mode rejection of a difference or instrumentation amplifier as built: a
//! seeded Monte Carlo over the resistor tolerances on the compiled DC kernel, from which the
//! CMRR that 99.9 % of builds exceed is read.

use serde::Serialize;

use crate::circuit::{Circuit, PartKind, PartRole, StageRole};

/// The spread of a pair's common-mode rejection over seeded builds (`analysis.cmrr`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CmrrAnalysis {
    pub runs: usize,
    pub seed: u64,
    /// The CMRR that 99.9 % of the builds exceed, dB.
    pub p001_db: f64,
}

/// The common-mode Monte Carlo of a circuit whose bench holds a common-mode source (`VCM`,
/// a differential pair's or a bridge's), `None` for every other circuit.
pub fn cmrr(circuit: &Circuit, seed: u64) -> Option<CmrrAnalysis> {
    circuit.with_role(PartRole::CommonMode).filter(|p| p.bench)?;
    let p001_db = cmrr_monte_carlo(circuit, CMRR_RUNS, seed)?;
    Some(CmrrAnalysis { runs: CMRR_RUNS, seed, p001_db })
}

/// Builds drawn for the common-mode Monte Carlo (a 0.1 % quantile needs a few thousand).
pub const CMRR_RUNS: usize = 4000;

/// The CMRR that 99.9 % of `runs` seeded builds exceed, dB: each build draws every resistor
/// uniformly within its tolerance (as the tolerance analysis does); its differential gain is
/// the slope against `VSENSE`, its common-mode gain the slope against `VCM` (the same circuit
/// with the two sources' roles swapped). Both are taken at the difference stage's output:
/// the filter and drive after it scale both alike, so they are left out of the builds.
pub fn cmrr_monte_carlo(circuit: &Circuit, runs: usize, seed: u64) -> Option<f64> {
    use crate::analysis::perturb::{Kernel, ParamKind};
    use rand::{RngCore, SeedableRng};
    let out = circuit.parts.iter().find(|p| !p.bench && p.kind == PartKind::OpAmp && p.stage == StageRole::Gain)?.nodes
        [4]
    .clone();
    let mut circuit = circuit.clone();
    circuit.parts.retain(|p| !matches!(p.stage, StageRole::Filter | StageRole::Drive | StageRole::Converter));
    let circuit = &circuit;
    let dm = Kernel::compile(circuit, &out).ok()?;
    let mut swapped = circuit.clone();
    // The solver sweeps the source named VSENSE: the common-mode source takes that name.
    for p in swapped.parts.iter_mut().filter(|p| p.bench) {
        match p.role {
            Some(PartRole::DifferentialEmf) => p.reference = "VDIFF".to_string(),
            Some(PartRole::CommonMode) => p.reference = "VSENSE".to_string(),
            _ => {}
        }
    }
    let cm = Kernel::compile(&swapped, &out).ok()?;
    if dm.params() != cm.params() {
        return None;
    }
    let resistors: Vec<(usize, f64)> = dm
        .params()
        .iter()
        .enumerate()
        .filter(|(_, q)| q.kind == ParamKind::Resistor)
        .map(|(i, q)| (i, q.bound))
        .collect();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let (mut ws_dm, mut ws_cm) = (dm.workspace(), cm.workspace());
    let mut p = vec![0.0; dm.params().len()];
    let mut out = Vec::with_capacity(runs);
    for _ in 0..runs {
        for &(i, bound) in &resistors {
            let word = rng.next_u32();
            p[i] = bound * ((word as f64 + 0.5) * (2.0 / 4_294_967_296.0) - 1.0);
        }
        let (Some((g_dm, _)), Some((g_cm, _))) = (dm.dc_line(&p, &mut ws_dm), cm.dc_line(&p, &mut ws_cm)) else {
            continue;
        };
        // A build with no measurable common-mode gain counts as 200 dB.
        let db = if g_cm.abs() > 0.0 { 20.0 * (g_dm.abs() / g_cm.abs()).log10() } else { 200.0 };
        if db.is_finite() {
            out.push(db.min(200.0));
        }
    }
    if out.is_empty() {
        return None;
    }
    crate::order::sort_by(&mut out, |a, b| a.total_cmp(b));
    Some(out[(out.len() / 1000).min(out.len() - 1)])
}
