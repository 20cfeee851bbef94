//! The annotated schematic of a design as a standalone SVG.
//!
//! Symbols follow one convention, IEC 60617: a rectangle for a resistor; two plates for a
//! capacitor, with a `+` beside the positive plate when it is polarised; a triangle for the
//! amplifier (its simplified form) with `+` and `−` at the inputs; a triangle with a bar at
//! the cathode for a diode, the bar's ends hooked for a Schottky diode; a circle with a line
//! through it along the terminals for the sensor's EMF, and across them (with an arrow
//! beside it for the direction) for a loop current; the earth symbol (three bars of
//! falling width) for ground; a small circle for a terminal or test point; a dot at every
//! junction. A supply rail is a short bar with the rail's name and voltage. A row that
//! continues on the next ends, and the next begins, with a flag (a pentagon pointing along
//! the signal) holding the node's name.
//!
//! Layout is by the stage kinds and part roles of the circuit model (see `blocks`: a
//! circuit built by hand without roles falls back to recognising its blocks by the shapes
//! of their nodes), not by a generic graph layout. The signal flows left to right through
//! a sequence of stage blocks: sensor (EMF behind its impedance, in a dashed box) → series
//! path (coupling capacitor, series resistors) → amplifier stage (the + and − input networks
//! as columns of legs hanging from the two input lines, a reference divider with its bypass
//! below the leg it feeds, feedback looping round the amplifier) → filter sections (each
//! with its amplifier, captioned with the model's words) → drive (series resistor, charge
//! bucket and clamp at the pin) → converter input (a box with its input impedance). The
//! gain stage has the first row (after a high-impedance sensor's follower, which takes the
//! first row with the bias path and the lifted return, the gain stage starts the second
//! from a flag; see `buffer`; a photodiode's transimpedance amplifier takes the first row
//! the same way, with R_f and C_f looping above it and its + input at ground or at the bias
//! divider; see `tia`; an instrumentation amplifier's first stage takes the first row with
//! the pair's sensor box, in the three-amplifier arrangement, and its difference stage starts
//! the second from a pair of flags; see `inamp`); what follows it goes on rows below, at least two sections
//! to a row, within 1100 user units of width (see `rows`). A new stage kind is a new block
//! in that sequence. The supply decoupling (by role) goes below the signal rows in a block
//! of its own: a bus from each rail with the local capacitors, each naming the amplifier it
//! serves, and the rail's bulk capacitor (see `decoupling`). Any part the blocks cannot
//! place by role goes into a fallback area below the drawing with its node names: never
//! dropped. The bench (sensor, supplies, converter load) is drawn in grey.
//!
//! Annotation: designator and value of every part, rail names and voltages, the DC level of
//! every node that matters (from the operating point, blue italic; not the nodes inside a
//! filter section, which sit at the section input's level) and the numbered test
//! points with the signal range there. Every text goes to the first free spot among a few
//! candidates round its part or net, checked against every text, stroke and symbol placed
//! so far (see [`super::svg`] for the text size estimate); a label with no free spot goes to
//! the notes under the drawing. Aluminium electrolytics (the technology the design step chose,
//! see [`crate::ratings`]; for a circuit built by hand, capacitors of
//! [`SchematicConfig::polarised_from`] and more) are drawn polarised, with `+` on the side the
//! operating point makes more positive.

use serde::Serialize;

mod annotate;
mod blocks;
mod buffer;
mod by_role;
#[cfg(feature = "shape-fallback")]
mod by_shape;
mod chain;
mod decoupling;
mod diff;
mod gain;
mod inamp;
mod plan;
mod rows;
mod sheet;
mod symbol;
mod tia;

use super::svg::{BoxRect, Segment};
use crate::circuit::{Circuit, Part, PartKind, PartRole, StageRole, GND};
use crate::request::{Coupling, Request};
use crate::solve::{DcSolution, Solver};
use crate::units::{format, format_sig, Quantity};
use blocks::Blocks;
use buffer::Buffer;
use plan::Plan;
use sheet::{Sheet, INK};
use tia::Tia;

/// Options of the drawing; `Default` gives the documented defaults.
#[derive(Debug, Clone, PartialEq)]
pub struct SchematicConfig {
    /// Draw the design name as a title.
    pub title: bool,
    /// Annotate each node with its DC level from the operating point.
    pub dc_levels: bool,
    /// Size of label text, px (12–14 reads well printed on A4 or Letter).
    pub font_size: f64,
    /// Stroke width of wires and symbols, px.
    pub line_width: f64,
    /// Capacitors of at least this value, F, are drawn polarised.
    pub polarised_from: f64,
}

impl Default for SchematicConfig {
    fn default() -> Self {
        SchematicConfig {
            title: true,
            dc_levels: true,
            font_size: 13.0,
            line_width: 1.8,
            polarised_from: crate::ratings::ELECTROLYTIC_FROM,
        }
    }
}

/// The drawing and, for overlap checks, every text box and stroke placed.
#[derive(Debug, Clone, PartialEq)]
pub struct Schematic {
    pub svg: String,
    pub texts: Vec<BoxRect>,
    pub wires: Vec<Segment>,
}

/// A numbered test point: a node and the signal range expected there.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TestPoint {
    pub node: String,
    /// "TP1", "TP2", …
    pub label: String,
    pub min: f64,
    pub max: f64,
}

/// Test points the design wants, numbered in signal order: the sensor terminal (`sense`,
/// or a differential pair's two terminals `sensep` and `sensen`, as the bench's roles give
/// them, [`Circuit::sensor_terminals`]); the outputs of an
/// instrumentation amplifier's first stage (its input-stage amplifiers);
/// for AC coupling the amplifier's + input after the coupling; the converter input (`adc`:
/// the amplifier output, or the end of the filter and drive that follow it). DC coupling:
/// the node voltages at the sensor's minimum and maximum. AC coupling: the operating point
/// (sensor at mid-range) ± the mid-band swing, the magnitude of the response at
/// √(band_low·band_high) times half the sensor's swing.
pub fn test_points(req: &Request, circuit: &Circuit) -> Vec<TestPoint> {
    if !well_formed(circuit) {
        return Vec::new();
    }
    let amp = circuit.parts.iter().find(|p| p.kind == PartKind::OpAmp && p.stage != StageRole::InputStage);
    let s = &req.source;
    let mut want = circuit.sensor_terminals();
    if circuit.parts.iter().all(|p| p.role.is_none()) {
        // FALLBACK for a circuit built by hand without roles: the bench's documented names.
        want = ["sense", "sensep", "sensen"].iter().map(|n| n.to_string()).collect();
    }
    let first =
        circuit.parts.iter().filter(|p| !p.bench && p.kind == PartKind::OpAmp && p.stage == StageRole::InputStage);
    want.extend(first.filter_map(|p| p.nodes.get(4).cloned()));
    if s.coupling == Coupling::Ac {
        want.extend(amp.and_then(|u| u.nodes.first()).cloned());
    }
    let known = circuit.nodes();
    let converter = if known.iter().any(|n| n == "adc") {
        Some("adc".to_string())
    } else {
        amp.and_then(|u| u.nodes.get(4)).cloned()
    };
    want.extend(converter);
    let mut nodes: Vec<String> = Vec::new();
    for n in want {
        if n != GND && known.contains(&n) && !nodes.contains(&n) {
            nodes.push(n);
        }
    }
    let solver = Solver::new(circuit);
    let ranges: Vec<Option<(f64, f64)>> = match s.coupling {
        Coupling::Dc => {
            let (a, b) = (solver.dc(s.min).ok(), solver.dc(s.max).ok());
            nodes
                .iter()
                .map(|n| -> Option<(f64, f64)> {
                    let (x, y) = (a.as_ref()?.voltage(n)?, b.as_ref()?.voltage(n)?);
                    Some((x.min(y), x.max(y)))
                })
                .collect()
        }
        Coupling::Ac => {
            let op = solver.dc(0.5 * (s.min + s.max)).ok();
            let (f, half) = (s.band_centre(), 0.5 * (s.max - s.min).abs());
            nodes
                .iter()
                .map(|n| -> Option<(f64, f64)> {
                    let v = op.as_ref()?.voltage(n)?;
                    let h = solver.transfer(f, n).ok()?.norm();
                    Some((v - h * half, v + h * half))
                })
                .collect()
        }
    };
    let found = nodes.into_iter().zip(ranges).filter_map(|(n, r)| r.map(|(min, max)| (n, min, max)));
    found.enumerate().map(|(k, (node, min, max))| TestPoint { node, label: format!("TP{}", k + 1), min, max }).collect()
}

/// The schematic of a finished design: its circuit, the operating point with the sensor at
/// the middle of its range, and the design's test points. `None` without a circuit.
pub fn of_design(d: &crate::design::Design, cfg: &SchematicConfig) -> Option<Schematic> {
    let model = d.circuit.as_ref()?;
    let s = &d.request.source;
    let op = crate::solve::Solver::new(model).dc(0.5 * (s.min + s.max)).ok();
    // An amplifier is labelled with what the design requires of it (as in the part list),
    // not with the assumed class's figure the simulation used.
    let mut c = model.clone();
    if let Some(r) = &d.requirements {
        for p in c.parts.iter_mut().filter(|p| p.kind == PartKind::OpAmp) {
            p.value = r.gbw_min;
        }
    }
    Some(schematic(&c, op.as_ref(), &test_points(&d.request, model), &d.name, cfg))
}

/// Draws `circuit` with the operating point `op` (for the DC levels and capacitor polarity),
/// the test points `ranges` and the design `name` as title.
pub fn schematic(
    circuit: &Circuit, op: Option<&DcSolution>, ranges: &[TestPoint], name: &str, cfg: &SchematicConfig,
) -> Schematic {
    let mut cfg = cfg.clone();
    cfg.font_size = if cfg.font_size.is_finite() { cfg.font_size.clamp(8.0, 24.0) } else { 13.0 };
    cfg.line_width = if cfg.line_width.is_finite() { cfg.line_width.clamp(1.5, 4.0) } else { 1.8 };
    let blocks = Blocks::of(circuit);
    let mut sh = Sheet::new(circuit, op, cfg, &blocks);
    // A differential sensor's instrumentation amplifier, or its difference amplifier, draws
    // its own first row, sensor included (the instrumentation amplifier's difference stage
    // on the second); otherwise the sensor, any front end with a row of its own (a
    // high-impedance sensor's follower, a photodiode's transimpedance stage) and the
    // single-ended gain stage.
    let stage = |s: &diff::Stage| Plan { amp: Some(s.amp), out: s.out.clone(), ..Plan::default() };
    let (plan, out) = match (&blocks.inamp, &blocks.diff) {
        (Some(a), _) => (stage(&a.stage), sh.inamp_rows(a)),
        (None, Some(d)) => (stage(&d.stage), sh.diff_row(d)),
        (None, None) => {
            let plan = blocks.plan.clone().unwrap_or_default();
            let out = front(&mut sh, &plan, blocks.buffer.as_ref(), blocks.tia.as_ref(), blocks.pre.as_ref());
            (plan, out)
        }
    };
    let at = out.map(|o| {
        let chain = match &blocks.chain {
            Some(chain) => chain.clone(),
            #[cfg(feature = "shape-fallback")]
            None => {
                let mut used = sh.done.clone();
                by_shape::chain(circuit, &o.2, &sh.rails, &mut used)
            }
            // Without the fallback an unrecognised chain is left to the unplaced-parts area.
            #[cfg(not(feature = "shape-fallback"))]
            None => Default::default(),
        };
        sh.chain_rows(&chain, o, plan.amp)
    });
    sh.converter(at, &plan);
    sh.decoupling();
    sh.fallback();
    for p in sh.svg.junctions() {
        sh.svg.circle(p, 3.2, INK, None);
    }
    sh.captions();
    sh.part_labels();
    sh.marks();
    for tp in ranges {
        let text = format!("{} {}", tp.label, range_text(tp.min, tp.max));
        if !sh.test_point(&tp.node, &text) {
            sh.notes.push(format!("{text} (node {})", tp.node));
        }
    }
    sh.dc_levels();
    sh.finish(name)
}

/// The sensor, whatever front end has a row of its own (a first gain stage `pre` too), the
/// series path and the single-ended gain stage; returns where the gain stage's output line ends.
fn front(
    sh: &mut Sheet, plan: &Plan, buffer: Option<&Buffer>, tia: Option<&Tia>, pre: Option<&Plan>,
) -> Option<(f64, f64, String)> {
    let x_term = sh.sensor();
    // The gain stage's own row: room above its line for the loops drawn there.
    let top = if plan.bottom == plan.inn && plan.inn != plan.out { 80.0 } else { 140.0 };
    let x_line = match (buffer, tia) {
        (Some(b), _) => {
            let tip = sh.buffer_row(b, x_term, top);
            sh.series(plan, tip, sheet::TP_GAP / 2.0)
        }
        (None, Some(t)) => {
            let tip = sh.tia_row(t, x_term, top);
            sh.series(plan, tip, sheet::TP_GAP / 2.0)
        }
        (None, None) => match pre {
            Some(p) => {
                let x = sh.series(p, x_term, sheet::TP_GAP);
                let (xa, y, net) = sh.amp_stage(p, x)?;
                sh.flag(xa, y, &net);
                let tip = sh.gain_row(&net, top);
                sh.series(plan, tip, sheet::TP_GAP / 2.0)
            }
            None => sh.series(plan, x_term, sheet::TP_GAP),
        },
    };
    sh.amp_stage(plan, x_line)
}

/// Designator's companion: the value with its unit.
fn value_text(p: &Part) -> String {
    match p.kind {
        // The bench models an ideal source as 1 mΩ so that its terminal stays a node.
        PartKind::Resistor if p.role == Some(PartRole::SourceResistance) && p.value <= 1e-3 => "0 Ω".to_string(),
        PartKind::Resistor => format(p.value, Quantity::Resistance),
        PartKind::Capacitor => format(p.value, Quantity::Capacitance),
        PartKind::VoltageSource => format(p.value, Quantity::Voltage),
        PartKind::CurrentSource => format(p.value, Quantity::Current),
        PartKind::OpAmp => format!("GBW ≥ {}", format(p.value, Quantity::Frequency)),
        PartKind::Diode => format!("Schottky {}", format(p.value, Quantity::Voltage)),
    }
}

/// "1.16 … 1.24 V", or "-250 mV … 1.2 V" when the prefixes differ; an end within 0.1 % of
/// the range's size from zero prints as 0 (solver residue at a virtual ground). Ends that
/// differ get up to six significant digits until they print apart ("1.648 … 1.652 V": a
/// bridge's leg moving by millivolts on half its excitation).
fn range_text(min: f64, max: f64) -> String {
    let tiny = 1e-3 * min.abs().max(max.abs());
    let snap = |v: f64| if v.abs() < tiny { 0.0 } else { v };
    let at =
        |sig: usize| (format_sig(snap(min), Quantity::Voltage, sig), format_sig(snap(max), Quantity::Voltage, sig));
    let (mut a, mut b) = at(3);
    for sig in 4..=6 {
        if a != b || snap(min) == snap(max) {
            break;
        }
        (a, b) = at(sig);
    }
    match (a.rsplit_once(' '), b.rsplit_once(' ')) {
        (Some((na, ua)), Some((nb, ub))) if ua == ub => format!("{na} … {nb} {ua}"),
        _ => format!("{a} … {b}"),
    }
}

/// The solver can take the circuit: whole node lists and at least one node besides ground.
fn well_formed(c: &Circuit) -> bool {
    c.nodes().len() > 1 && c.parts.iter().all(|p| p.nodes.len() >= if p.kind == PartKind::OpAmp { 5 } else { 2 })
}
