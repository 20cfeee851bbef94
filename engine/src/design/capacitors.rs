//! Capacitors chosen on the built circuit: which technology each one is (the rules in
//! [`crate::ratings`]), whether an electrolytic's leakage would move a rest level, and how
//! long the circuit takes to settle after power-up.
//!
//! **Leakage.** An electrolytic's leakage (its data-sheet limit at the rated voltage, see
//! [`ratings::electrolytic_leakage`]) is a current through the part; the solver's DC
//! injection transfers (capacitors open) turn it into the shift of the converter pin and of
//! every amplifier's output. Beyond [`ratings::LEAKAGE_SHARE`] of the converter's headroom
//! a class-2 multilayer ceramic takes the part's place up to [`ratings::CERAMIC_UP_TO`];
//! above that the `leakage` check is an error with the figures. A kept electrolytic gets
//! the ±20 % tolerance of its kind.
//!
//! **Settling.** Each capacitor outside the filter and the drive starts at 0 V after
//! power-up instead of its rest voltage V₀. Its charge is followed quasi-statically: the
//! part replaced by a voltage source v, the solver (amplifier outputs clamped at their swing,
//! as they are while the circuit recovers) gives the current the circuit drives through it,
//! and dt = C·dv / i is summed on a geometric ladder of the remaining voltage until the
//! converter pin is within ½ LSB of its rest level. (A linear estimate τ·ln(k·V₀ / ½ LSB)
//! misses the time a clamped amplifier holds the part charging through the whole feedback
//! network: ngspice showed 9 s where it gave 1.3 s.) Other capacitors are taken at rest; the
//! slowest part sets the `settling` check: a warning beyond [`SETTLE_WARN`].

use std::collections::HashMap;

use crate::circuit::{Circuit, PartKind, StageRole};
use crate::diag::Check;
use crate::ratings::{self, Dielectric};
use crate::request::Request;
use crate::solve::Solver;
use crate::units::{format, format_percent, Quantity};

/// Settling time after power-up beyond which the `settling` check warns, s (common
/// practice: a logger woken from sleep expects its first reading within about a second).
pub const SETTLE_WARN: f64 = 1.0;

/// Options of the capacitor step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CapacitorConfig {
    /// Share of the converter's headroom an electrolytic's leakage may move a rest level by.
    pub leakage_share: f64,
    /// Settling time beyond which the check warns, s.
    pub settle_warn: f64,
}

impl Default for CapacitorConfig {
    fn default() -> Self {
        CapacitorConfig { leakage_share: ratings::LEAKAGE_SHARE, settle_warn: SETTLE_WARN }
    }
}

/// Chooses every built capacitor's technology on `circuit` (setting `dielectric`, and an
/// electrolytic's tolerance) and returns the `leakage` and `settling` checks.
pub fn choose(circuit: &mut Circuit, req: &Request, cfg: &CapacitorConfig) -> Vec<Check> {
    let d = &req.destination;
    let span = d.max - d.min;
    let lsb = d.lsb();
    let limit = cfg.leakage_share * (d.headroom * span).max(lsb);
    let s = &req.source;
    let solver = Solver::new(circuit);
    let Ok(op) = solver.dc(0.5 * (s.min + s.max)) else { return Vec::new() };
    let mut watched: Vec<String> = vec!["adc".to_string()];
    for p in circuit.parts.iter().filter(|p| p.kind == PartKind::OpAmp) {
        if let Some(n) = p.nodes.get(4).filter(|n| !watched.contains(n)) {
            watched.push(n.clone());
        }
    }
    // The DC response at `node` to a unit current into each unknown, computed once a node.
    let mut cache: HashMap<String, Option<Vec<f64>>> = HashMap::new();
    let mut response = |node: &str| -> Option<Vec<f64>> {
        cache
            .entry(node.to_string())
            .or_insert_with(|| solver.injection_transfers(0.0, node).ok().map(|z| z.iter().map(|x| x.re).collect()))
            .clone()
    };
    let at = |z: &[f64], node: &str| solver.index_of(node).and_then(|k| z.get(k).copied()).unwrap_or(0.0);
    let mut plan: Vec<(usize, Dielectric)> = Vec::new();
    let mut leak_texts: Vec<String> = Vec::new();
    let mut leak_errors: Vec<String> = Vec::new();
    let mut slowest: Option<(f64, String, f64)> = None;
    for (i, p) in circuit.parts.iter().enumerate().filter(|(_, p)| p.kind == PartKind::Capacitor && !p.bench) {
        // Supply decoupling is ceramic at any value and takes no part in the signal's levels.
        if crate::circuit::is_decoupling(p) {
            plan.push((i, Dielectric::Class2));
            continue;
        }
        let sets_corner = matches!(p.stage, StageRole::Filter | StageRole::Drive);
        let in_signal_path = matches!(p.stage, StageRole::Coupling | StageRole::Gain);
        let mut kind = ratings::dielectric_by_place(p.value, sets_corner, in_signal_path);
        let (a, b) = (p.nodes[0].as_str(), p.nodes[1].as_str());
        let v0 = op.voltage(a).unwrap_or(0.0) - op.voltage(b).unwrap_or(0.0);
        // A current J into `a` and out of `b` moves node x by J·(z_x[a] − z_x[b]).
        let moves = |z: &[f64]| at(z, a) - at(z, b);
        if kind == Dielectric::Electrolytic {
            let v_rated = ratings::voltage_rating(v0).unwrap_or(ratings::VOLTAGE_RATINGS[0]);
            let leak = ratings::electrolytic_leakage(p.value, v_rated);
            let shift =
                watched.iter().filter_map(|w| response(w).map(|z| (leak * moves(&z)).abs())).fold(0.0f64, f64::max);
            let what = format!(
                "{} ({}) as an aluminium electrolytic leaks up to {} at its {} rating, which moves a rest level by \
                 {}",
                p.reference,
                format(p.value, Quantity::Capacitance),
                format(leak, Quantity::Current),
                format(v_rated, Quantity::Voltage),
                format(shift, Quantity::Voltage)
            );
            if shift > limit && p.value <= ratings::CERAMIC_UP_TO {
                kind = Dielectric::Class2;
                leak_texts.push(format!("{what}: a multilayer ceramic takes its place"));
            } else if shift > limit {
                leak_errors.push(what);
            } else {
                leak_texts.push(format!("{what}: an electrolytic will do"));
            }
        }
        plan.push((i, kind));
        if sets_corner {
            continue;
        }
        let (Some(za), Some(zb)) = (response(a), response(b)) else { continue };
        let r_th = moves(&za) - moves(&zb);
        if !(r_th > 0.0 && r_th.is_finite()) {
            continue;
        }
        let Some(settle) = charge_time(circuit, i, v0, 0.5 * lsb) else { continue };
        if slowest.as_ref().is_none_or(|x| settle > x.0) {
            slowest = Some((settle, p.reference.clone(), r_th * p.value));
        }
    }
    for (i, kind) in plan {
        let p = &mut circuit.parts[i];
        p.dielectric = Some(kind);
        if kind == Dielectric::Electrolytic {
            p.tolerance = Some(p.tolerance.unwrap_or(0.0).max(ratings::ELECTROLYTIC_TOLERANCE));
        }
    }
    let mut checks = Vec::new();
    let allowed = format!(
        "{} of the converter's headroom is {}",
        format_percent(cfg.leakage_share),
        format(limit, Quantity::Voltage)
    );
    if !leak_errors.is_empty() {
        checks.push(Check::error(
            "leakage",
            format!(
                "{}; {allowed}, and no ceramic reaches that value ({} at most). Lower the resistance the part works \
                 against, raise band_low, or split the gain into two stages.{}",
                leak_errors.join("; "),
                format(ratings::CERAMIC_UP_TO, Quantity::Capacitance),
                if leak_texts.is_empty() { String::new() } else { format!(" Besides: {}.", leak_texts.join("; ")) }
            ),
        ));
    } else if !leak_texts.is_empty() {
        checks.push(Check::ok("leakage", format!("{} ({allowed}).", leak_texts.join("; "))));
    }
    if let Some((t, reference, tau)) = slowest {
        let text = format!(
            "After power-up the converter pin comes within ½ LSB of its rest level in {} ({reference} charging \
             from 0 V; τ = {} at rest)",
            format(t, Quantity::Time),
            format(tau, Quantity::Time)
        );
        checks.push(if t > cfg.settle_warn {
            Check::warning(
                "settling",
                format!(
                    "{text}: discard the readings of that time after power-up, or keep the circuit powered \
                     between readings."
                ),
            )
        } else {
            Check::ok("settling", format!("{text}."))
        });
    }
    checks
}

/// Steps of the charge ladder: the remaining voltage shrinks by this factor a step.
const LADDER: f64 = 0.85;

/// The time capacitor `idx` of `circuit` takes from 0 V until the converter pin is within
/// `tol` of its rest level (its rest voltage `v0`), the rest of the circuit at rest; `None`
/// when the circuit does not drive it there.
fn charge_time(circuit: &Circuit, idx: usize, v0: f64, tol: f64) -> Option<f64> {
    const PROBE: f64 = 1.0;
    let p = &circuit.parts[idx];
    let (a, b, c) = (p.nodes[0].clone(), p.nodes[1].clone(), p.value);
    let mut probe = circuit.clone();
    // The sensor held at the middle of its range; the part becomes the swept source (in
    // series with a 1 Ω sense resistor, whose voltage is the current through it).
    for q in probe.parts.iter_mut().filter(|q| crate::circuit::is_sensor_source(q)) {
        q.bench = false;
    }
    let mid = "settle:probe";
    {
        let q = &mut probe.parts[idx];
        q.kind = PartKind::VoltageSource;
        q.reference = "VSENSE".to_string();
        q.bench = true;
        q.nodes = vec![a.clone(), mid.to_string()];
    }
    let mut sense = probe.parts[idx].clone();
    sense.kind = PartKind::Resistor;
    sense.reference = "RSETTLE".to_string();
    sense.value = PROBE;
    sense.bench = true;
    sense.nodes = vec![mid.to_string(), b.clone()];
    probe.parts.push(sense);
    let solver = Solver::new(&probe);
    let at = |v: f64| -> Option<(f64, f64)> {
        let s = solver.dc(v).ok()?;
        let i = (s.voltage(mid)? - s.voltage(&b)?) / PROBE;
        Some((i, s.voltage("adc")?))
    };
    let (_, rest) = at(v0)?;
    let sign = if v0 >= 0.0 { 1.0 } else { -1.0 };
    let mut u = v0.abs();
    let mut t = 0.0;
    for _ in 0..400 {
        let (_, pin) = at(v0 - sign * u)?;
        if (pin - rest).abs() <= tol || u < 1e-12 {
            return Some(t);
        }
        let next = u * LADDER;
        let (i, _) = at(v0 - sign * (u * next).sqrt())?;
        if !(sign * i > 0.0) {
            return None;
        }
        t += c * (u - next) / (sign * i);
        u = next;
    }
    Some(t)
}
