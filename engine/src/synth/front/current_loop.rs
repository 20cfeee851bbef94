//! The sensor's front end: what turns the measured quantity into the voltage at the `sense`
//! node that the gain stage works on. A single-ended voltage sensor needs nothing; a current
//! loop needs a shunt.
//!
//! **Current loop.** The loop current I flows through the shunt R from `sense` to ground.
//! Seen from `sense` that is a voltage source I·R behind R (Thévenin's theorem), so the gain
//! stage is synthesised for that equivalent single-ended sensor ([`equivalent`]) and the
//! finished circuit is turned back into the loop current `ISENSE` feeding the shunt
//! ([`to_loop`]) — the same circuit, exactly, with the shunt now a part with its tolerance.
//!
//! *Shunt.* The largest value of the resistor series whose voltage at the highest current
//! the loop signals (`fault_high`) stays within `burden_max`: R ≤ burden_max / I_fault_high
//! (common practice: the largest shunt the loop allows gives the largest signal over the
//! amplifier's offset). A shunt below a few ohms is refused: the wiring's own resistance
//! would be part of it.
//!
//! *Mapping.* The fault bands must stay readable: the equivalent sensor spans
//! `fault_low … fault_high` (NAMUR NE 43 for 4–20 mA: 3.6 … 21 mA), so that range lands on
//! the converter's usable span and the measuring range 4 … 20 mA sits inside it; a broken
//! loop (0 mA) drives the output to its lower limit.
//!
//! *Terminal* ([`terminal`]). What the terminal tolerates is stated, not built: the least of
//! what the shunt takes as the part list rates it ([`crate::ratings::fault_across`]; the
//! part list rates it for I²R at the range's largest current) and
//! what keeps the amplifier input behind it inside its rails (0.3 V beyond them, or as far
//! as a series resistor allows, [`super::series_fault`]); beyond that the amplifier's input
//! protection conducts with only the loop to limit it. A warning when the upper fault limit
//! already lies beyond it.

use serde::Serialize;

use crate::amplifier::Rails;
use crate::circuit::{Circuit, PartKind, PartRole, Stage, StageKind, StageRole, GND};
use crate::diag::{Check, Severity};
use crate::figures::{Block, Table};
use crate::request::{Request, SourceKind};
use crate::units::{format, Quantity};
use crate::values;

/// Smallest shunt accepted, Ω: below it the wiring and contacts are part of the shunt.
pub const SHUNT_MIN: f64 = 5.0;

/// The designed shunt of a current loop (`current_loop` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoopDesign {
    /// The shunt's designator and value, Ω.
    pub shunt_ref: String,
    pub shunt: f64,
    /// Largest value the burden allows, Ω (burden_max / fault_high).
    pub shunt_max: f64,
    /// Voltage across the shunt at the measuring range's ends and at fault_high, V.
    pub burden_at_max: f64,
    pub burden_at_fault_high: f64,
    /// Power in the shunt at fault_high, W.
    pub power_at_fault_high: f64,
    /// Where currents of interest land: filled in by the design from the solver.
    pub bands: Vec<LoopBand>,
}

/// One loop current and where it lands on the converter.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoopBand {
    pub label: String,
    pub current: f64,
    /// Output at the converter input, V.
    pub output: f64,
    /// The converter code (0 … 2^bits − 1) for that output.
    pub code: u64,
}

/// The shunt for a current-loop request; `None` for other kinds. An error check when the
/// burden allows no usable shunt.
pub fn plan(req: &Request) -> Option<Result<LoopDesign, Check>> {
    if req.source.kind != SourceKind::CurrentLoop {
        return None;
    }
    let spec = req.source.current_loop.as_ref()?;
    let shunt_max = spec.burden_max / spec.fault_high.max(req.source.max);
    let Some(shunt) = values::step_down(req.parts.resistor_series, shunt_max).filter(|r| *r >= SHUNT_MIN) else {
        return Some(Err(Check::error(
            "shunt",
            format!(
                "The loop allows only {} across the input at {} (burden_max), which leaves a shunt below {}; allow a \
                    larger burden voltage (source.burden_max) or measure the loop with a dedicated loop receiver.",
                format(spec.burden_max, Quantity::Voltage),
                format(spec.fault_high, Quantity::Current),
                format(SHUNT_MIN, Quantity::Resistance)
            ),
        )));
    };
    Some(Ok(LoopDesign {
        shunt_ref: String::new(),
        shunt,
        shunt_max,
        burden_at_max: req.source.max * shunt,
        burden_at_fault_high: spec.fault_high * shunt,
        power_at_fault_high: spec.fault_high * spec.fault_high * shunt,
        bands: Vec::new(),
    }))
}

/// The single-ended sensor the gain stage is synthesised for: the voltage across the shunt
/// over the fault-band range, behind the shunt's resistance.
pub fn equivalent(req: &Request, l: &LoopDesign) -> Request {
    let mut eq = req.clone();
    let spec = req.source.current_loop.clone();
    let (lo, hi) = spec.map_or((req.source.min, req.source.max), |s| (s.fault_low, s.fault_high));
    eq.source.kind = SourceKind::SingleEnded;
    eq.source.min = lo * l.shunt;
    eq.source.max = hi * l.shunt;
    eq.source.impedance = l.shunt;
    eq.source.current_loop = None;
    eq.source.measurand = None;
    eq
}

/// Turns the circuit synthesised for [`equivalent`] into the loop: `VSENSE` and `RSENSE`
/// give way to the loop current `ISENSE` into `sense` and the shunt from `sense` to ground.
/// Records the shunt's designator in `l`.
pub fn to_loop(circuit: &mut Circuit, req: &Request, l: &mut LoopDesign) {
    let emf_node =
        circuit.with_role(PartRole::Emf).and_then(|p| p.nodes.first().cloned()).unwrap_or_else(|| "emf".to_string());
    circuit.parts.retain(|p| !(p.bench && matches!(p.role, Some(PartRole::Emf | PartRole::SourceResistance))));
    let mut bld = crate::circuit::Builder::resume(std::mem::take(&mut circuit.parts));
    let mid = 0.5 * (req.source.min + req.source.max);
    let shunt = bld.add(
        PartKind::Resistor,
        l.shunt,
        Some(req.parts.resistor_tolerance),
        &["sense", GND],
        (StageRole::Shunt, PartRole::Shunt),
        "shunt: turns the loop current into the voltage the amplifier measures",
    );
    bld.bench(
        "ISENSE",
        PartKind::CurrentSource,
        mid,
        &[GND, "sense"],
        (StageRole::Sensor, PartRole::LoopCurrent),
        "loop current (swept over the source range)",
    );
    circuit.parts = bld.parts;
    // Nothing else may hang on the vanished EMF node.
    for p in circuit.parts.iter_mut() {
        for n in p.nodes.iter_mut().filter(|n| **n == emf_node) {
            *n = "sense".to_string();
        }
    }
    circuit.stages.insert(
        0,
        Stage {
            role: StageRole::Shunt,
            kind: StageKind::LoopShunt,
            description: format!("shunt {} for the loop current", format(l.shunt, Quantity::Resistance)),
            parts: vec![shunt.clone()],
        },
    );
    l.shunt_ref = shunt;
}

/// Design equations of the shunt, with the numbers substituted.
pub fn equations(req: &Request, l: &LoopDesign) -> Vec<String> {
    let Some(spec) = &req.source.current_loop else { return Vec::new() };
    let a = |x: f64| format(x, Quantity::Current);
    let v = |x: f64| format(x, Quantity::Voltage);
    vec![
        format!(
            "shunt {} ≤ burden_max / I_fault_high = {} / {} = {} → {} from {} ({} at {}, {} at {})",
            l.shunt_ref,
            v(spec.burden_max),
            a(spec.fault_high),
            format(l.shunt_max, Quantity::Resistance),
            format(l.shunt, Quantity::Resistance),
            req.parts.resistor_series.name(),
            v(l.burden_at_max),
            a(req.source.max),
            v(l.burden_at_fault_high),
            a(spec.fault_high)
        ),
        format!(
            "the gain stage maps the shunt voltage over the fault bands' limits, {} … {} ({} … {}), onto the \
                converter's usable span",
            a(spec.fault_low),
            a(spec.fault_high),
            v(spec.fault_low * l.shunt),
            v(spec.fault_high * l.shunt)
        ),
    ]
}

/// Checks of the loop: burden, shunt power, and where the fault bands land.
pub fn checks(req: &Request, l: &LoopDesign) -> Vec<Check> {
    let Some(spec) = &req.source.current_loop else { return Vec::new() };
    let mut c = Vec::new();
    c.push(Check::ok(
        "burden",
        format!(
            "The shunt drops {} at {} and {} at {}, within the {} the loop allows (burden_max).",
            format(l.burden_at_max, Quantity::Voltage),
            format(req.source.max, Quantity::Current),
            format(l.burden_at_fault_high, Quantity::Voltage),
            format(spec.fault_high, Quantity::Current),
            format(spec.burden_max, Quantity::Voltage)
        ),
    ));
    c.push(Check::ok(
        "shunt_tolerance",
        format!(
            "The shunt's ±{} tolerance moves the gain by as much (it is in the Monte Carlo); a ±0.1 % shunt, or a \
                two-point calibration in firmware, keeps that small.",
            crate::units::format_percent(req.parts.resistor_tolerance)
        ),
    ));
    let code = |label: &str| l.bands.iter().find(|b| b.label == label).map(|b| b.code);
    let (broken, low, min) = (code("broken loop (0 A)"), code("fault below"), code("range bottom"));
    let (max, high) = (code("range top"), code("fault above"));
    if let (Some(b), Some(lo), Some(mn), Some(mx), Some(hi)) = (broken, low, min, max, high) {
        let apart = b < lo && lo < mn && mx < hi;
        let text = format!(
            "Codes: broken loop {b}, fault limit {} → {lo}, {} → {mn}, {} → {mx}, fault limit {} → {hi}",
            format(spec.fault_low, Quantity::Current),
            format(req.source.min, Quantity::Current),
            format(req.source.max, Quantity::Current),
            format(spec.fault_high, Quantity::Current)
        );
        c.push(if apart {
            Check::ok(
                "fault_bands",
                format!(
                    "{text}: firmware can tell a broken loop and both fault bands from \
                readings in range (NAMUR NE 43)."
                ),
            )
        } else {
            Check::warning(
                "fault_bands",
                format!(
                    "{text}: some of these share a code, so firmware cannot tell them \
                apart; give more headroom or more bits."
                ),
            )
        });
    }
    c
}

/// The check that states what the loop terminal tolerates (see the module documentation).
pub fn terminal(req: &Request, c: &Circuit, rails: Rails, l: &LoopDesign) -> Option<Check> {
    let spec = req.source.current_loop.as_ref()?;
    let shunt = c.parts.iter().find(|p| p.reference == l.shunt_ref)?;
    // The part list's rule for the shunt: twice I²R at the range's largest current.
    let i = req.source.max.abs().max(req.source.min.abs());
    let rating = crate::ratings::power_rating(i * i * l.shunt).unwrap_or(2.0);
    let by_shunt = crate::ratings::fault_across(l.shunt, rating);
    let terminals = [shunt.nodes[0].clone()];
    let beyond = match super::series_fault(req, c, &terminals) {
        Some(f) => f.beyond_rail,
        None => crate::synth::drive::CLAMP_DROP,
    };
    let (lo, hi) = ((rails.neg - beyond).max(-by_shunt), (rails.pos + beyond).min(by_shunt));
    let over = spec.fault_high * l.shunt > hi;
    let msg = format!(
        "The loop terminal tolerates {} … {} (up to {} through the {} shunt, rated {}){}; beyond, the shunt \
         overheats or the amplifier's input protection conducts: a miswired loop supply needs a series resistor \
         and clamps.",
        format(lo, Quantity::Voltage),
        format(hi, Quantity::Voltage),
        format(hi / l.shunt, Quantity::Current),
        format(l.shunt, Quantity::Resistance),
        format(rating, Quantity::Power),
        if over { ", less than the upper fault limit" } else { "" }
    );
    Some(Check::new("loop_terminal", if over { Severity::Warning } else { Severity::Ok }, msg))
}

/// Where a broken loop, the fault limits and the measuring range's ends land, from the
/// solver (amplifier swing limits included).
pub fn bands(req: &Request, c: &Circuit) -> Vec<LoopBand> {
    let Some(spec) = &req.source.current_loop else { return Vec::new() };
    let solver = crate::solve::Solver::new(c);
    [
        ("broken loop (0 A)", 0.0),
        ("fault below", spec.fault_low),
        ("range bottom", req.source.min),
        ("range top", req.source.max),
        ("fault above", spec.fault_high),
    ]
    .into_iter()
    .filter_map(|(label, current)| {
        let output = solver.dc(current).ok()?.voltage("adc")?;
        Some(LoopBand { label: label.to_string(), current, output, code: code_of(req, output) })
    })
    .collect()
}

/// The converter code of output `v` (clamped to the converter's codes).
pub fn code_of(req: &Request, v: f64) -> u64 {
    let d = &req.destination;
    let levels = d.levels();
    let x = ((v - d.min) / (d.max - d.min) * levels).floor();
    x.clamp(0.0, levels - 1.0) as u64
}

impl super::Steps for LoopDesign {
    fn equivalent(&self, ctx: &super::Context) -> Request {
        equivalent(ctx.req, self)
    }

    /// The equivalent sensor's impedance is the shunt, which the loop's checks cover.
    fn supersedes(&self) -> &'static [&'static str] {
        &["sensor_impedance"]
    }

    fn insert(&mut self, circuit: &mut Circuit, ctx: &super::Context) {
        to_loop(circuit, ctx.req, self);
    }

    fn equations(&self, ctx: &super::Context) -> Vec<String> {
        equations(ctx.req, self)
    }

    fn checks(&mut self, circuit: &Circuit, _p: &crate::predict::Predicted, ctx: &super::Context) -> Vec<Check> {
        self.bands = bands(ctx.req, circuit);
        let mut c = checks(ctx.req, self);
        c.extend(terminal(ctx.req, circuit, ctx.rails, self));
        c
    }

    fn section(&self) -> &'static str {
        "Current loop"
    }

    fn figures(&self, ctx: &super::Context) -> Vec<Block> {
        let r = |x: f64| format(x, Quantity::Resistance);
        let rows = self
            .bands
            .iter()
            .map(|b| {
                vec![
                    b.label.clone(),
                    format(b.current, Quantity::Current),
                    format(b.output, Quantity::Voltage),
                    b.code.to_string(),
                ]
            })
            .collect();
        let table = Table {
            header: ["Loop state", "Current", "Converter input", "Code"].map(String::from).to_vec(),
            numeric: vec![false, true, true, true],
            rows,
        };
        let at_max = format!("Burden at {}", format(ctx.req.source.max, Quantity::Current));
        vec![Block::new("loop-bands", format!("Loop: shunt {} = {}", self.shunt_ref, r(self.shunt)))
            .quantity("Shunt", self.shunt, Quantity::Resistance)
            .quantity(&at_max, self.burden_at_max, Quantity::Voltage)
            .quantity("Burden at the upper fault limit", self.burden_at_fault_high, Quantity::Voltage)
            .quantity("Shunt power at the upper fault limit", self.power_at_fault_high, Quantity::Power)
            .table(table)]
    }
}
