//! The Monte Carlo builds: parts drawn uniformly over their tolerance, the amplifiers'
//! offsets and bias currents from a truncated normal, the rails uniformly over theirs; each
//! build solved by the compiled kernel, clipped builds marked, and the good builds counted.

use rand::{Rng, RngCore, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

use super::stages::Inner;
use super::{summary, Model, ToleranceConfig};

/// Clip bit of a build whose inner stage (an amplifier other than the one at the pin) leaves
/// its limits.
pub(super) const INNER_CLIP: u8 = 0b1000;
use crate::analysis::perturb::{ParamKind, Workspace};
use crate::request::Request;

/// Draws and solves the builds: each build's limited quantities, and the counts of builds
/// inside the converter range, inside the headroom, and covering the range-use fraction.
pub(super) fn draw_builds(
    model: &Model, ws: &mut Workspace, req: &Request, cfg: &ToleranceConfig, drawn: &[bool], inner: &Inner,
) -> (Vec<[f64; 4]>, Vec<u8>, [usize; 4]) {
    let params = model.kernel.params();
    let mut rng = ChaCha8Rng::seed_from_u64(cfg.seed);
    let mut p_buf = vec![0.0; params.len() + model.rails.len()];
    let p = &mut p_buf[..];
    // Resistors are drawn uniformly, two per 64-bit word; the amplifier's figures from a
    // normal. Capacitors move none of the quantities, so they are not drawn.
    let pick = |want: fn(ParamKind) -> bool| -> Vec<(usize, f64)> {
        params
            .iter()
            .enumerate()
            .filter(|(i, q)| want(q.kind) && drawn.get(*i).copied().unwrap_or(true))
            .map(|(i, q)| (i, q.bound))
            .collect()
    };
    let parts = pick(|k| k == ParamKind::Resistor);
    let amps = pick(|k| matches!(k, ParamKind::Offset | ParamKind::BiasPlus | ParamKind::BiasMinus));
    let d = &req.destination;
    let span = d.max - d.min;
    let slack = 1e-9 * span.abs();
    let (h_lo, h_hi) = (d.min + d.headroom * span - slack, d.max - d.headroom * span + slack);
    let fraction = summary::range_use_fraction(req);
    let mut builds = Vec::with_capacity(cfg.runs);
    let mut counts = [0usize; 4];
    let mut clips = Vec::with_capacity(cfg.runs);
    for _ in 0..cfg.runs {
        for pair in parts.chunks(2) {
            let bits = rng.next_u64();
            p[pair[0].0] = pair[0].1 * uniform_pm1(bits as u32);
            if let Some(&(i, bound)) = pair.get(1) {
                p[i] = bound * uniform_pm1((bits >> 32) as u32);
            }
        }
        for &(i, bound) in &amps {
            p[i] = bound * truncated_normal(&mut rng);
        }
        // Rails: uniform over ±their tolerance, like the parts.
        for (j, rail) in model.rails.iter().enumerate() {
            p[params.len() + j] = rail.tolerance * uniform_pm1(rng.next_u32());
        }
        let Some(r) = model.raw(p, ws) else { continue };
        let limits = model.limits_of(p);
        let y = model.clamped(r, limits);
        if !(y[0].is_finite() && y[1].is_finite() && y[2].is_finite() && y[3].is_finite()) {
            continue;
        }
        let mut clip = model.clips(r, limits);
        // An inner stage beyond its limits: the build fails, shown apart in both histograms.
        if !inner.is_empty() && inner.clips(model, p) {
            clip |= INNER_CLIP | 0b11;
        }
        let (lo, hi) = if y[0] < y[1] { (y[0], y[1]) } else { (y[1], y[0]) };
        counts[0] += (clip == 0 && lo >= d.min && hi <= d.max) as usize;
        counts[3] += (clip != 0) as usize;
        clips.push(clip);
        counts[1] += (clip == 0 && lo >= h_lo && hi <= h_hi) as usize;
        counts[2] += (hi - lo >= fraction * span) as usize;
        builds.push(y);
    }
    (builds, clips, counts)
}

/// Uniform over (−1, 1) from 32 random bits, symmetric about 0 (steps of 2⁻³¹, far finer
/// than any tolerance).
fn uniform_pm1(word: u32) -> f64 {
    (word as f64 + 0.5) * (2.0 / 4_294_967_296.0) - 1.0
}

/// Normal with σ = 1/3 truncated at ±1 (the stated figure is 3σ), by rejection: 0.27 % of
/// draws are redrawn; after 64 misses in a row (never in practice) it gives 0.
fn truncated_normal(rng: &mut ChaCha8Rng) -> f64 {
    for _ in 0..64 {
        let z: f64 = rng.sample(StandardNormal);
        if z.abs() <= 3.0 {
            return z / 3.0;
        }
    }
    0.0
}
