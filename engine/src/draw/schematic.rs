//! The annotated schematic of a design as a standalone SVG.
//!
//! Symbols follow one convention, IEC 60617: a rectangle for a resistor; two plates for a
//! capacitor, with a `+` beside the positive plate when it is polarised; a triangle for the
//! amplifier (its simplified form) with `+` and `−` at the inputs; a circle with a line
//! through it along the terminals for the sensor's EMF; the earth symbol (three bars of
//! falling width) for ground; a small circle for a terminal or test point; a dot at every
//! junction. A supply rail is a short bar with the rail's name and voltage.
//!
//! Layout is by role, not by a generic graph layout. The signal flows left to right through
//! a sequence of stage blocks: sensor (EMF behind its impedance, in a dashed box) → series
//! path (coupling capacitor, series resistors) → amplifier stage (the + and − input networks
//! as columns of legs hanging from the two input lines, a reference divider with its bypass
//! below the leg it feeds, feedback looping round the amplifier) → converter input (a box
//! with its input impedance). A new stage kind is a new block in that sequence. Any part
//! the blocks cannot place by role goes into a fallback area below the drawing with its node
//! names: never dropped. The bench (sensor, supplies, converter load) is drawn in grey.
//!
//! Annotation: designator and value of every part, rail names and voltages, the DC level of
//! every node that matters (from the operating point, blue italic) and the numbered test
//! points with the signal range there. Every text goes to the first free spot among a few
//! candidates round its part or net, checked against every text, stroke and symbol placed
//! so far (see [`super::svg`] for the text size estimate); a label with no free spot goes to
//! the notes under the drawing. Capacitors of [`SchematicConfig::polarised_from`] (1 µF) and
//! more are drawn polarised — above about 1 µF aluminium and tantalum parts are the usual
//! choice (common practice) — with `+` on the side the operating point makes more positive.

use serde::Serialize;

use super::svg::{text_box, text_width, Anchor, BoxRect, Pen, Segment, Svg};
use crate::circuit::{Circuit, Part, PartKind, StageRole, GND};
use crate::request::{Coupling, Request};
use crate::solve::{DcSolution, Solver};
use crate::units::{format, Quantity};

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
        SchematicConfig { title: true, dc_levels: true, font_size: 13.0, line_width: 1.8, polarised_from: 1e-6 }
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

/// Test points the design wants, numbered in signal order: the sensor terminal (`sense`);
/// for AC coupling the amplifier's + input after the coupling; the amplifier output, which is
/// the converter input (`adc`). DC coupling: the node voltages at the sensor's minimum and
/// maximum. AC coupling: the operating point (sensor at mid-range) ± the mid-band swing, the
/// magnitude of the response at √(band_low·band_high) times half the sensor's swing.
pub fn test_points(req: &Request, circuit: &Circuit) -> Vec<TestPoint> {
    if !well_formed(circuit) {
        return Vec::new();
    }
    let amp = circuit.parts.iter().find(|p| p.kind == PartKind::OpAmp);
    let s = &req.source;
    let mut want = vec!["sense".to_string()];
    if s.coupling == Coupling::Ac {
        want.extend(amp.and_then(|u| u.nodes.first()).cloned());
    }
    want.push(amp.and_then(|u| u.nodes.get(4)).cloned().unwrap_or_else(|| "adc".to_string()));
    let known = circuit.nodes();
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
            let (f, half) = ((s.band_low * s.band_high).sqrt(), 0.5 * (s.max - s.min).abs());
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

/// Draws `circuit` with the operating point `op` (for the DC levels and capacitor polarity),
/// the test points `ranges` and the design `name` as title.
pub fn schematic(circuit: &Circuit, op: Option<&DcSolution>, ranges: &[TestPoint], name: &str, cfg: &SchematicConfig) -> Schematic {
    let mut cfg = cfg.clone();
    cfg.font_size = if cfg.font_size.is_finite() { cfg.font_size.clamp(8.0, 24.0) } else { 13.0 };
    cfg.line_width = if cfg.line_width.is_finite() { cfg.line_width.clamp(1.5, 4.0) } else { 1.8 };
    let mut sh = Sheet::new(circuit, op, cfg);
    let plan = Plan::of(circuit, &sh.rails);
    let x_term = sh.sensor();
    let x_line = sh.series(&plan, x_term);
    let out = sh.amp_stage(&plan, x_line);
    sh.converter(out, &plan);
    sh.fallback();
    for p in sh.svg.junctions() {
        sh.svg.circle(p, 3.2, INK, None);
    }
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

// ---------------------------------------------------------------------------------------
// Placement by role.

type Pt = (f64, f64);

const X0: f64 = 20.0;
/// The signal line (the amplifier's upper input).
const Y0: f64 = 220.0;
const SENSOR_W: f64 = 150.0;
/// Free run of the sensor line, where TP1 goes.
const TP_GAP: f64 = 80.0;
/// Length of a part on the signal line, and of a part in a leg.
const HSPAN: f64 = 90.0;
const SPAN: f64 = 80.0;
/// Spacing of leg columns (a part and its label).
const PITCH: f64 = 95.0;
/// How far below the signal line a reference bus sits.
const REF_DROP: f64 = 150.0;
/// Run of the output line to the converter, where TP and DC labels go.
const OUT_RUN: f64 = 170.0;
/// Clearance kept round every text: from strokes and symbols, from other texts, and (where
/// possible) from wiring of other nets.
const PAD: f64 = 2.0;
const TEXT_GAP: f64 = 6.0;
const ROOM: f64 = 10.0;
const INK: &str = "#000000";
const GREY: &str = "#777777";
const BLUE: &str = "#1f4e9c";

/// One part of a chain, drawn from node `from` to node `to`.
#[derive(Debug, Clone)]
struct Step {
    part: usize,
    from: String,
    to: String,
}

/// A column hanging from an input line: parts in series to a rail or ground, or one part to
/// a node tied to rails and ground by several parts (a reference divider and its bypass).
#[derive(Debug, Clone)]
struct Leg {
    steps: Vec<Step>,
    end: String,
    block: Option<Vec<Step>>,
}

/// Where each part goes, by the role of the nodes it joins.
#[derive(Debug, Default)]
struct Plan {
    amp: Option<usize>,
    inp: String,
    inn: String,
    out: String,
    /// The input the sensor feeds (drawn on the signal line) and the other one.
    top: String,
    bottom: String,
    /// A series path joins the sensor terminal to `top`.
    connected: bool,
    series: Vec<Step>,
    top_legs: Vec<Leg>,
    bottom_legs: Vec<Leg>,
    feedback: Vec<usize>,
}

/// A supply rail: a bench source from `node` to ground.
#[derive(Debug, Clone)]
struct Rail {
    node: String,
    name: String,
    volts: f64,
    part: usize,
}

fn has(p: &Part, n: &str) -> bool {
    p.nodes.iter().any(|x| x == n)
}

fn other(p: &Part, n: &str) -> String {
    p.nodes.iter().find(|x| *x != n).cloned().unwrap_or_else(|| n.to_string())
}

/// A resistor or capacitor to build, with two nodes.
fn plain(p: &Part) -> bool {
    !p.bench && p.nodes.len() == 2 && matches!(p.kind, PartKind::Resistor | PartKind::Capacitor)
}

/// The solver can take the circuit: whole node lists and at least one node besides ground.
fn well_formed(c: &Circuit) -> bool {
    c.nodes().len() > 1 && c.parts.iter().all(|p| p.nodes.len() >= if p.kind == PartKind::OpAmp { 5 } else { 2 })
}

impl Plan {
    fn of(c: &Circuit, rails: &[Rail]) -> Plan {
        let Some(u) = c.parts.iter().position(|p| p.kind == PartKind::OpAmp && p.nodes.len() >= 5 && !p.bench) else {
            return Plan::default();
        };
        let nodes = &c.parts[u].nodes;
        let mut plan = Plan { amp: Some(u), inp: nodes[0].clone(), inn: nodes[1].clone(), out: nodes[4].clone(), ..Plan::default() };
        let terminal = |n: &str| n == GND || rails.iter().any(|r| r.node == n);
        let mut used = vec![false; c.parts.len()];
        used[u] = true;
        if plan.inn != plan.out {
            for (i, p) in c.parts.iter().enumerate() {
                if plain(p) && has(p, &plan.out) && has(p, &plan.inn) && !used[i] {
                    plan.feedback.push(i);
                    used[i] = true;
                }
            }
        }
        let (inp, inn, out) = (plan.inp.clone(), plan.inn.clone(), plan.out.clone());
        let blocked = |n: &str, avoid: &str| terminal(n) || n == out || n == "emf" || n == avoid;
        let (top, series, connected) = if inp == "sense" || inn == "sense" {
            ("sense".to_string(), Vec::new(), true)
        } else if let Some(s) = path(c, &inp, &|n| blocked(n, &inn), &used) {
            (inp.clone(), s, true)
        } else if let Some(s) = path(c, &inn, &|n| blocked(n, &inp), &used) {
            (inn.clone(), s, true)
        } else {
            (inp.clone(), Vec::new(), false)
        };
        for s in &series {
            used[s.part] = true;
        }
        plan.bottom = if top == inp { inn.clone() } else { inp.clone() };
        plan.top = top;
        plan.series = series;
        plan.connected = connected;
        let special = [plan.inp.clone(), plan.inn.clone(), plan.out.clone(), "sense".to_string(), "emf".to_string()];
        plan.top_legs = legs(c, &plan.top, true, &mut used, &terminal, &special);
        if plan.bottom != plan.out && plan.bottom != plan.top {
            plan.bottom_legs = legs(c, &plan.bottom, false, &mut used, &terminal, &special);
        }
        plan
    }
}

/// Shortest chain of unused parts from the sensor terminal to `target`.
fn path(c: &Circuit, target: &str, blocked: &dyn Fn(&str) -> bool, used: &[bool]) -> Option<Vec<Step>> {
    let mut seen: Vec<(String, Option<(usize, String)>)> = vec![("sense".to_string(), None)];
    let mut head = 0;
    while head < seen.len() {
        let at = seen[head].0.clone();
        head += 1;
        for (i, p) in c.parts.iter().enumerate() {
            if used[i] || !plain(p) || !has(p, &at) {
                continue;
            }
            let next = other(p, &at);
            if seen.iter().any(|(n, _)| *n == next) || (next != target && blocked(&next)) {
                continue;
            }
            seen.push((next.clone(), Some((i, at.clone()))));
            if next == target {
                let mut steps = Vec::new();
                let mut cur = next;
                while let Some((_, Some((part, prev)))) = seen.iter().find(|(n, _)| *n == cur).cloned() {
                    steps.push(Step { part, from: prev.clone(), to: cur });
                    cur = prev;
                }
                steps.reverse();
                return Some(steps);
            }
        }
    }
    None
}

/// The legs hanging from input node `node`: reference blocks first.
fn legs(c: &Circuit, node: &str, allow_block: bool, used: &mut [bool], terminal: &dyn Fn(&str) -> bool, special: &[String]) -> Vec<Leg> {
    let mut out = Vec::new();
    if terminal(node) {
        return out;
    }
    for i in 0..c.parts.len() {
        let p = &c.parts[i];
        if used[i] || !plain(p) || !has(p, node) {
            continue;
        }
        let m = other(p, node);
        let first = Step { part: i, from: node.to_string(), to: m.clone() };
        if terminal(&m) {
            used[i] = true;
            out.push(Leg { steps: vec![first], end: m, block: None });
            continue;
        }
        if m == node || special.contains(&m) {
            continue;
        }
        let rest: Vec<usize> = (0..c.parts.len()).filter(|&j| j != i && has(&c.parts[j], &m)).collect();
        if rest.is_empty() || !rest.iter().all(|&j| !used[j] && plain(&c.parts[j]) && terminal(&other(&c.parts[j], &m))) {
            continue;
        }
        let steps: Vec<Step> = rest.iter().map(|&j| Step { part: j, from: m.clone(), to: other(&c.parts[j], &m) }).collect();
        if steps.len() == 1 {
            let end = steps[0].to.clone();
            out.push(Leg { steps: vec![first, steps[0].clone()], end, block: None });
        } else if allow_block {
            out.push(Leg { steps: vec![first], end: m.clone(), block: Some(steps) });
        } else {
            continue;
        }
        used[i] = true;
        for j in rest {
            used[j] = true;
        }
    }
    out.sort_by_key(|l| l.block.is_none());
    out
}

// ---------------------------------------------------------------------------------------
// The sheet: symbols, stage blocks and the placing of text.

#[derive(Debug, Clone, Copy, PartialEq)]
enum Shape {
    Vertical,
    Horizontal,
    Amp,
}

/// A part label waiting for a free spot.
struct Label {
    lines: Vec<String>,
    body: BoxRect,
    shape: Shape,
    colour: &'static str,
    /// Try below a horizontal part before above it (a loop under the amplifier).
    below_first: bool,
}

/// A rail name or node name beside a bar or terminal.
struct Mark {
    text: String,
    at: Pt,
    up: bool,
    colour: &'static str,
}

struct Sheet<'a> {
    c: &'a Circuit,
    cfg: SchematicConfig,
    op: Option<&'a DcSolution>,
    /// Operating point used for capacitor polarity (`op`, or solved here).
    pol: Option<DcSolution>,
    rails: Vec<Rail>,
    svg: Svg,
    done: Vec<bool>,
    labels: Vec<Label>,
    marks: Vec<Mark>,
    /// Areas of the bench (sensor, converter): no test point or DC level goes inside.
    bench_areas: Vec<BoxRect>,
    notes: Vec<String>,
    polarised: bool,
    /// Part leads: runs a test point avoids (it would read as part of the symbol).
    leads: Vec<Segment>,
}

impl<'a> Sheet<'a> {
    fn new(c: &'a Circuit, op: Option<&'a DcSolution>, cfg: SchematicConfig) -> Sheet<'a> {
        let rails = c
            .parts
            .iter()
            .enumerate()
            .filter(|(_, p)| {
                p.bench && p.kind == PartKind::VoltageSource && p.stage == StageRole::Supply && p.nodes.len() == 2 && p.nodes[1] == GND && p.nodes[0] != GND
            })
            .map(|(i, p)| Rail { node: p.nodes[0].clone(), name: p.reference.clone(), volts: p.value, part: i })
            .collect();
        let pol = match op {
            Some(o) => Some(o.clone()),
            None if well_formed(c) => {
                let x = c.part("VSENSE").map(|p| p.value).unwrap_or(0.0);
                Solver::new(c).dc(x).ok()
            }
            None => None,
        };
        Sheet {
            c,
            cfg,
            op,
            pol,
            rails,
            svg: Svg::new(),
            done: vec![false; c.parts.len()],
            labels: Vec::new(),
            marks: Vec::new(),
            bench_areas: Vec::new(),
            notes: Vec::new(),
            polarised: false,
            leads: Vec::new(),
        }
    }

    fn pen(&self, bench: bool) -> Pen {
        Pen { colour: if bench { GREY } else { INK }, width: self.cfg.line_width, dashed: false }
    }

    fn wire(&mut self, a: Pt, b: Pt, net: &str, bench: bool) {
        let pen = self.pen(bench);
        self.svg.segment(a, b, net, pen);
    }

    /// Two-terminal part `i` from `a` (node `na`) to `b` (node `nb`), `a` and `b` in line;
    /// `wired` false draws the leads as plain strokes (the fallback area).
    fn two(&mut self, i: usize, a: Pt, na: &str, b: Pt, nb: &str, wired: bool) {
        let c = self.c;
        let Some(p) = c.parts.get(i) else { return };
        let pen = self.pen(p.bench);
        let len = (b.0 - a.0).hypot(b.1 - a.1).max(1e-9);
        let (ux, uy) = ((b.0 - a.0) / len, (b.1 - a.1) / len);
        let (px, py) = (-uy, ux);
        let vertical = uy.abs() > ux.abs();
        let m = ((a.0 + b.0) / 2.0, (a.1 + b.1) / 2.0);
        let half = match p.kind {
            PartKind::Capacitor => 4.0,
            PartKind::VoltageSource => 16.0,
            _ => 20.0,
        };
        let s = (m.0 - ux * half, m.1 - uy * half);
        let e = (m.0 + ux * half, m.1 + uy * half);
        self.svg.open_group("part", &p.reference);
        self.svg.segment(a, s, if wired { na } else { "" }, pen);
        self.svg.segment(e, b, if wired { nb } else { "" }, pen);
        self.leads.push(Segment::new(a, s, na));
        self.leads.push(Segment::new(e, b, nb));
        let at = |q: Pt, w: f64| ((q.0 + px * w, q.1 + py * w), (q.0 - px * w, q.1 - py * w));
        let fs = self.cfg.font_size;
        let colour = if p.bench { GREY } else { INK };
        let corners = match p.kind {
            PartKind::Capacitor => {
                let (s1, s2) = at(s, 13.0);
                let (e1, e2) = at(e, 13.0);
                self.svg.segment(s1, s2, "", pen);
                self.svg.segment(e1, e2, "", pen);
                if p.value >= self.cfg.polarised_from {
                    self.polarised = true;
                    let v = |n: &str| self.pol.as_ref().and_then(|o| o.voltage(n));
                    let at_a = match (v(na), v(nb)) {
                        (Some(x), Some(y)) => x >= y,
                        _ => true,
                    };
                    let (q, out) = if at_a { (s, -1.0) } else { (e, 1.0) };
                    let c = if vertical { (m.0 - 21.0, q.1 + out * uy * 8.0) } else { (q.0 + out * ux * 9.0, m.1 - 12.0) };
                    self.svg.text(c.0, c.1 + 0.35 * fs, "+", fs, Anchor::Middle, colour, "bold", "");
                }
                vec![s1, s2, e1, e2]
            }
            PartKind::VoltageSource => {
                self.svg.circle(m, 16.0, "none", Some(pen));
                self.svg.line(s, e, pen);
                // The + terminal is the source's first node.
                let q = if p.nodes.first().map(|n| n == na).unwrap_or(true) { s } else { e };
                let c = (m.0 + 0.55 * (q.0 - m.0) + px * 24.0, m.1 + 0.55 * (q.1 - m.1) + py * 24.0);
                self.svg.text(c.0, c.1 + 0.35 * fs, "+", fs, Anchor::Middle, colour, "bold", "");
                vec![(m.0 - 16.0, m.1 - 16.0), (m.0 + 16.0, m.1 + 16.0)]
            }
            _ => {
                let (s1, s2) = at(s, 7.0);
                let (e1, e2) = at(e, 7.0);
                self.svg.polygon(&[s1, e1, e2, s2], "#ffffff", pen);
                vec![s1, s2, e1, e2]
            }
        };
        self.svg.close_group();
        let (x0, x1) = corners.iter().fold((f64::MAX, f64::MIN), |(l, h), c| (l.min(c.0), h.max(c.0)));
        let (y0, y1) = corners.iter().fold((f64::MAX, f64::MIN), |(l, h), c| (l.min(c.1), h.max(c.1)));
        let body = BoxRect::new(x0, y0, x1 - x0, y1 - y0);
        self.svg.keepout.push(body.clone());
        let shape = if vertical { Shape::Vertical } else { Shape::Horizontal };
        let below_first = !vertical && m.1 > Y0 + 60.0;
        self.labels.push(Label { lines: vec![p.reference.clone(), value_text(p)], body, shape, colour, below_first });
        self.done[i] = true;
    }

    /// Ends a leg at `node`: the ground symbol, a rail bar, or a named terminal.
    fn terminal(&mut self, p: Pt, node: &str, up: bool) {
        let pen = self.pen(false);
        if node == GND {
            for (k, w) in [12.0, 7.5, 3.0].iter().enumerate() {
                let y = p.1 + 5.0 * k as f64;
                self.svg.segment((p.0 - w, y), (p.0 + w, y), "", pen);
            }
        } else if let Some(r) = self.rails.iter().find(|r| r.node == node).cloned() {
            self.svg.segment((p.0 - 12.0, p.1), (p.0 + 12.0, p.1), "", self.pen(true));
            let sign = if r.volts > 0.0 { "+" } else { "" };
            self.marks.push(Mark { text: format!("{} {sign}{}", r.name, format(r.volts, Quantity::Voltage)), at: p, up, colour: GREY });
            if let Some(d) = self.done.get_mut(r.part) {
                *d = true;
            }
        } else {
            self.svg.circle(p, 3.5, "#ffffff", Some(pen));
            self.marks.push(Mark { text: node.to_string(), at: p, up, colour: INK });
        }
    }

    fn positive_rail(&self, node: &str) -> bool {
        self.rails.iter().any(|r| r.node == node && r.volts > 0.0)
    }

    /// The sensor block: EMF behind its impedance in a dashed box; returns the terminal's x.
    fn sensor(&mut self) -> f64 {
        let right = X0 + SENSOR_W;
        let y = Y0;
        let c = self.c;
        let vs = c
            .parts
            .iter()
            .position(|p| p.bench && p.kind == PartKind::VoltageSource && p.stage == StageRole::Sensor && p.nodes.len() == 2 && p.nodes[1] == GND);
        let emf = vs.and_then(|i| c.parts[i].nodes.first().cloned());
        let rs = emf
            .as_ref()
            .and_then(|e| c.parts.iter().position(|p| p.bench && p.kind == PartKind::Resistor && p.nodes.len() == 2 && has(p, e) && has(p, "sense")));
        if let (Some(v), Some(r), Some(emf)) = (vs, rs, emf) {
            let sx = X0 + 40.0;
            self.two(v, (sx, y), &emf, (sx, y + 100.0), GND, true);
            self.terminal((sx, y + 100.0), GND, false);
            self.two(r, (sx, y), &emf, (right - 20.0, y), "sense", true);
            self.wire((right - 20.0, y), (right, y), "sense", true);
        }
        let dashed = Pen { colour: GREY, width: 1.5, dashed: true };
        self.svg.rect(X0, y - 60.0, SENSOR_W, 190.0, "none", dashed);
        self.svg.text(X0 + 4.0, y - 66.0, "sensor", self.cfg.font_size, Anchor::Start, GREY, "", "italic");
        self.bench_areas.push(BoxRect::new(X0, y - 60.0, SENSOR_W, 190.0));
        self.svg.circle((right, y), 3.5, "#ffffff", Some(self.pen(true)));
        right
    }

    /// The series path along the signal line; returns where the input line begins.
    fn series(&mut self, plan: &Plan, x_term: f64) -> f64 {
        let y = Y0;
        let mut x = x_term + TP_GAP;
        self.wire((x_term, y), (x, y), "sense", false);
        if !plan.connected {
            self.terminal((x, y), "sense", true);
            x += 50.0;
            self.terminal((x, y), &plan.top, true);
            return x;
        }
        for (k, st) in plan.series.iter().enumerate() {
            if k > 0 {
                self.wire((x, y), (x + 20.0, y), &st.from, false);
                x += 20.0;
            }
            self.two(st.part, (x, y), &st.from, (x + HSPAN, y), &st.to, true);
            x += HSPAN;
        }
        x
    }

    /// A leg at column `x` hanging from the input line at `y`.
    fn leg(&mut self, leg: &Leg, x: f64, y: f64, top: bool) {
        if let Some(block) = &leg.block {
            let yr = y + REF_DROP;
            if let Some(st) = leg.steps.first() {
                self.two(st.part, (x, y), &st.from, (x, yr), &st.to, true);
            }
            let (ups, mut downs): (Vec<&Step>, Vec<&Step>) = block.iter().partition(|s| self.positive_rail(&s.to));
            downs.sort_by_key(|s| self.c.parts.get(s.part).map(|p| p.kind != PartKind::Resistor).unwrap_or(true));
            let cols = ups.len().max(downs.len());
            let xl = x - cols as f64 * PITCH;
            self.wire((xl, yr), (x, yr), &leg.end, false);
            for j in 0..cols {
                let xc = xl + j as f64 * PITCH;
                for (st, dir) in [(ups.get(j), -1.0), (downs.get(j), 1.0)] {
                    if let Some(st) = st {
                        self.two(st.part, (xc, yr), &st.from, (xc, yr + dir * SPAN), &st.to, true);
                        self.terminal((xc, yr + dir * SPAN), &st.to, dir < 0.0);
                    }
                }
            }
            return;
        }
        let up = top && self.positive_rail(&leg.end);
        let dir = if up { -1.0 } else { 1.0 };
        let mut yy = y;
        for st in &leg.steps {
            self.two(st.part, (x, yy), &st.from, (x, yy + dir * SPAN), &st.to, true);
            yy += dir * SPAN;
        }
        self.terminal((x, yy), &leg.end, up);
    }

    /// The amplifier stage: legs, amplifier, feedback; returns the converter's input point.
    fn amp_stage(&mut self, plan: &Plan, x_line: f64) -> Option<(f64, f64, String)> {
        let u = plan.amp?;
        let (yt, yb, yo) = (Y0, Y0 + 40.0, Y0 + 20.0);
        let mut cols = Vec::new();
        let mut x = x_line + 45.0;
        for leg in &plan.top_legs {
            if let Some(b) = &leg.block {
                let n = b.iter().filter(|s| self.positive_rail(&s.to)).count().max(b.iter().filter(|s| !self.positive_rail(&s.to)).count());
                x = x.max(X0 + SENSOR_W + 70.0 + n as f64 * PITCH);
            }
            self.leg(leg, x, yt, true);
            cols.push(x);
            x += PITCH;
        }
        let first_bottom = x;
        for leg in &plan.bottom_legs {
            self.leg(leg, x, yb, false);
            cols.push(x);
            x += PITCH;
        }
        let x_fb = cols.last().map(|l| l + 82.0).unwrap_or(x_line + 30.0);
        let ux = x_fb + 40.0;
        let x_out = ux + 80.0;
        self.wire((x_line, yt), (ux, yt), &plan.top, false);
        let fb_bottom = plan.bottom == plan.inn;
        if plan.bottom == GND || self.rails.iter().any(|r| r.node == plan.bottom) {
            self.wire((ux - 25.0, yb), (ux, yb), &plan.bottom, false);
            self.wire((ux - 25.0, yb), (ux - 25.0, yb + 20.0), &plan.bottom, false);
            self.terminal((ux - 25.0, yb + 20.0), &plan.bottom, false);
        } else {
            let start = if plan.bottom_legs.is_empty() { x_fb.min(ux - 30.0) } else { first_bottom };
            self.wire((start, yb), (ux, yb), &plan.bottom, false);
            if plan.bottom_legs.is_empty() && !fb_bottom {
                self.terminal((start, yb), &plan.bottom.clone(), false);
            }
        }
        // Feedback loops: below the amplifier to the lower input, above it to the upper one.
        let (dir, base, y_in) = if fb_bottom { (1.0, Y0 + 135.0, yb) } else { (-1.0, Y0 - 90.0, yt) };
        let xr = x_out + 30.0;
        let loops: Vec<Option<usize>> = if plan.inn == plan.out { vec![None] } else { plan.feedback.iter().map(|&i| Some(i)).collect() };
        let (mut yl, mut yr) = (y_in, yo);
        for (k, f) in loops.iter().enumerate() {
            let yk = base + dir * 60.0 * k as f64;
            self.wire((x_fb, yl), (x_fb, yk), &plan.inn, false);
            match f {
                Some(i) => self.two(*i, (x_fb, yk), &plan.inn, (xr, yk), &plan.out, true),
                None => self.wire((x_fb, yk), (xr, yk), &plan.out, false),
            }
            self.wire((xr, yk), (xr, yr), &plan.out, false);
            yl = yk;
            yr = yk;
        }
        // The amplifier.
        let pen = self.pen(false);
        let c = self.c;
        let p = c.parts.get(u)?;
        self.svg.open_group("part", &p.reference);
        self.svg.polygon(&[(ux, Y0 - 20.0), (x_out, yo), (ux, Y0 + 60.0)], "#ffffff", pen);
        for (y, plus) in [(yt, plan.top == plan.inp), (yb, plan.bottom == plan.inp && plan.top != plan.inp)] {
            self.svg.line((ux + 7.0, y), (ux + 15.0, y), pen);
            if plus {
                self.svg.line((ux + 11.0, y - 4.0), (ux + 11.0, y + 4.0), pen);
            }
        }
        self.svg.close_group();
        self.svg.keepout.push(BoxRect::new(ux + 3.0, yt - 8.0, 16.0, 56.0));
        let (vp, vn) = (p.nodes[2].clone(), p.nodes[3].clone());
        self.wire((ux + 30.0, Y0 - 5.0), (ux + 30.0, Y0 - 40.0), &vp, false);
        self.terminal((ux + 30.0, Y0 - 40.0), &vp, true);
        self.wire((ux + 30.0, Y0 + 45.0), (ux + 30.0, Y0 + 75.0), &vn, false);
        self.terminal((ux + 30.0, Y0 + 75.0), &vn, false);
        self.labels.push(Label {
            lines: vec![p.reference.clone(), value_text(p)],
            body: BoxRect::new(ux, Y0 - 20.0, 80.0, 80.0),
            shape: Shape::Amp,
            colour: INK,
            below_first: false,
        });
        self.done[u] = true;
        let xa = x_out + OUT_RUN;
        self.wire((x_out, yo), (xa, yo), &plan.out, false);
        Some((xa, yo, plan.out.clone()))
    }

    /// The converter input: a box with its input impedance to ground.
    fn converter(&mut self, at: Option<(f64, f64, String)>, plan: &Plan) {
        let (xa, y, net) = match at {
            Some(a) => a,
            None => {
                let right = self.svg.bounds().map(|b| b.2).unwrap_or(X0) + 80.0;
                (right, Y0 + 20.0, if plan.out.is_empty() { "adc".to_string() } else { plan.out.clone() })
            }
        };
        let area = BoxRect::new(xa, y - 45.0, 120.0, 180.0);
        self.svg.rect(area.x, area.y, area.w, area.h, "none", self.pen(true));
        self.svg.text(xa + 10.0, y - 24.0, "ADC", self.cfg.font_size + 1.0, Anchor::Start, GREY, "bold", "");
        self.bench_areas.push(area);
        let radc = self.c.parts.iter().position(|p| p.bench && p.kind == PartKind::Resistor && p.nodes.len() == 2 && has(p, &net) && has(p, GND));
        self.wire((xa, y), (xa + 40.0, y), &net, true);
        if let Some(i) = radc {
            self.two(i, (xa + 40.0, y), &net, (xa + 40.0, y + SPAN), GND, true);
            self.terminal((xa + 40.0, y + SPAN), GND, false);
        }
    }

    /// Every part not placed by role, with its node names, below the drawing.
    fn fallback(&mut self) {
        let rest: Vec<usize> = (0..self.c.parts.len()).filter(|&i| !self.done[i]).collect();
        if rest.is_empty() {
            return;
        }
        let fs = self.cfg.font_size;
        let (_, _, x1, y1) = self.svg.bounds().unwrap_or((X0, Y0, X0 + 900.0, Y0));
        let top = y1 + 70.0;
        self.svg.text(X0, top, "Not placed by role (connected by node name):", fs, Anchor::Start, INK, "bold", "");
        let max_x = x1.max(X0 + 900.0);
        let (mut x, mut y) = (X0, top + 60.0);
        let pen = self.pen(false);
        let c = self.c;
        for i in rest {
            let p = &c.parts[i];
            let lines = vec![p.reference.clone(), value_text(p), format!("nodes {}", p.nodes.join(", "))];
            let two = p.nodes.len() == 2 && p.kind != PartKind::OpAmp;
            let (na, nb) = if two { (p.nodes[0].clone(), p.nodes[1].clone()) } else { (String::new(), String::new()) };
            let (wa, wb) = (text_width(&na, fs), text_width(&nb, fs));
            let width = if two { wa + wb + 130.0 } else { lines.iter().map(|l| text_width(l, fs)).fold(0.0, f64::max) + 20.0 };
            if x + width > max_x && x > X0 {
                x = X0;
                y += 90.0;
            }
            if two {
                self.svg.text(x + wa, y + 0.3 * fs, &na, fs, Anchor::End, INK, "", "italic");
                let (a, b) = ((x + wa + 12.0, y), (x + wa + 102.0, y));
                self.svg.circle(a, 3.0, "#ffffff", Some(pen));
                self.svg.circle(b, 3.0, "#ffffff", Some(pen));
                self.two(i, a, &na, b, &nb, false);
                self.svg.text(b.0 + 10.0, y + 0.3 * fs, &nb, fs, Anchor::Start, INK, "", "italic");
            } else {
                self.svg.rect(x, y - 30.0, width, 3.6 * fs + 10.0, "none", pen);
                for (k, l) in lines.iter().enumerate() {
                    self.svg.text(x + 10.0, y - 30.0 + (k as f64 + 1.0) * 1.2 * fs + 2.0, l, fs, Anchor::Start, INK, "", "");
                }
                self.done[i] = true;
            }
            x += width + 30.0;
        }
    }

    /// Writes `lines` at the first free spot `(x, top of first line, anchor)`.
    /// Writes `lines` at the first free spot `(x, top of first line, anchor)`. With `net`, a
    /// first pass wants the spot well clear of other nets' wiring, so the text reads as its own.
    fn put(&mut self, lines: &[String], spots: &[(f64, f64, Anchor)], fs: f64, colour: &str, style: &str, net: Option<&str>) -> bool {
        let lh = 1.2 * fs;
        let passes: &[bool] = if net.is_some() { &[true, false] } else { &[false] };
        for &roomy in passes {
            for &(x, top, anchor) in spots {
                let at = |k: usize| top + 0.8 * fs + k as f64 * lh;
                let boxes: Vec<BoxRect> = lines.iter().enumerate().map(|(k, s)| text_box(x, at(k), s, fs, anchor)).collect();
                let clear = |b: &BoxRect| {
                    self.svg.is_free(&b.grow(PAD))
                        && !self.svg.texts.iter().any(|t| t.overlaps(&b.grow(TEXT_GAP)))
                        && !(roomy && self.svg.wires.iter().any(|w| !w.net.is_empty() && Some(w.net.as_str()) != net && b.grow(ROOM).crosses(w)))
                };
                if boxes.iter().all(clear) {
                    for (k, s) in lines.iter().enumerate() {
                        self.svg.text(x, at(k), s, fs, anchor, colour, "", style);
                    }
                    return true;
                }
            }
        }
        false
    }

    fn part_labels(&mut self) {
        let fs = self.cfg.font_size;
        for l in std::mem::take(&mut self.labels) {
            let h = 1.2 * fs * (l.lines.len() as f64 - 1.0) + 1.05 * fs;
            let b = &l.body;
            let (cx, cy) = (b.x + b.w / 2.0, b.y + b.h / 2.0);
            let mut spots = Vec::new();
            match l.shape {
                Shape::Vertical => {
                    for (gap, side) in [(6.0, 1.0), (6.0, -1.0), (18.0, 1.0), (18.0, -1.0)] {
                        for dy in [0.0, -10.0, 10.0, -20.0, 20.0, -32.0, 32.0, -45.0, 45.0] {
                            let (x, a) = if side > 0.0 { (b.x + b.w + gap, Anchor::Start) } else { (b.x - gap, Anchor::End) };
                            spots.push((x, cy - h / 2.0 + dy, a));
                        }
                    }
                }
                Shape::Horizontal => {
                    let order = if l.below_first {
                        [(5.0, false), (5.0, true), (18.0, false), (18.0, true)]
                    } else {
                        [(5.0, true), (5.0, false), (18.0, true), (18.0, false)]
                    };
                    for (lift, above) in order {
                        for dx in [0.0, 15.0, -15.0, 30.0, -30.0, 45.0, -45.0] {
                            let top = if above { b.y - lift - h } else { b.y + b.h + lift };
                            spots.push((cx + dx, top, Anchor::Middle));
                        }
                    }
                }
                Shape::Amp => {
                    // Above the upper slope, below the output line, below the lower slope.
                    for dy in [0.0, -12.0, -24.0] {
                        spots.push((b.x + 46.0, b.y + 11.0 - h + dy, Anchor::Start));
                    }
                    for dy in [0.0, 12.0] {
                        spots.push((b.x + b.w - 10.0, cy + 14.0 + dy, Anchor::Start));
                    }
                    for dy in [0.0, 12.0, 24.0] {
                        spots.push((b.x + 50.0, b.y + b.h - 8.0 + dy, Anchor::Start));
                    }
                    spots.push((b.x - 8.0, b.y - h - 6.0, Anchor::End));
                    spots.push((b.x - 8.0, b.y + b.h + 6.0, Anchor::End));
                }
            }
            if !self.put(&l.lines, &spots, fs, l.colour, "", None) {
                self.notes.push(format!("{} (no free place beside the part)", l.lines.join(" ")));
            }
        }
    }

    fn marks(&mut self) {
        let fs = self.cfg.font_size;
        let h = 1.05 * fs;
        for m in std::mem::take(&mut self.marks) {
            let (x, y) = m.at;
            let v = if m.up { -1.0 } else { 1.0 };
            let beyond = |d: f64| if m.up { y - d - h } else { y + d };
            let spots = [
                (x, beyond(6.0), Anchor::Middle),
                (x + 16.0, y - h / 2.0, Anchor::Start),
                (x - 16.0, y - h / 2.0, Anchor::End),
                (x + 16.0, y - h / 2.0 + v * 12.0, Anchor::Start),
                (x - 16.0, y - h / 2.0 + v * 12.0, Anchor::End),
                (x, beyond(18.0), Anchor::Middle),
            ];
            if !self.put(&[m.text.clone()], &spots, fs, m.colour, "", None) {
                self.notes.push(format!("{} (no free place beside its symbol)", m.text));
            }
        }
    }

    /// A test point on a free run of `node`'s wiring: stub, open circle and label. Short
    /// stubs upward are tried first, along the longest run (the signal line rather than a
    /// feedback lead) from its middle outward.
    fn test_point(&mut self, node: &str, text: &str) -> bool {
        let fs = self.cfg.font_size;
        let h = 1.05 * fs;
        let mut runs: Vec<Segment> =
            self.svg.wires.iter().filter(|w| w.net == node && (w.y1 - w.y2).abs() < 1e-9 && (w.x2 - w.x1).abs() >= 30.0).cloned().collect();
        runs.sort_by(|a, b| self.leads.contains(a).cmp(&self.leads.contains(b)).then(b.len().total_cmp(&a.len())));
        let mut taps_at: Vec<Vec<(f64, f64)>> = Vec::new();
        for s in &runs {
            let mut here = Vec::new();
            let y = s.y1;
            let (xa, xb) = (s.x1.min(s.x2) + 12.0, s.x1.max(s.x2) - 12.0);
            let taps: Vec<f64> = self
                .svg
                .wires
                .iter()
                .filter(|w| w.net == node && *w != s)
                .flat_map(|w| [(w.x1, w.y1), (w.x2, w.y2)])
                .filter(|p| (p.1 - y).abs() < 1e-9)
                .map(|p| p.0)
                .collect();
            let mid = 0.5 * (xa + xb);
            let mut k = 0.0;
            while mid - k >= xa {
                for x in [mid - k, mid + k] {
                    let clear = !taps.iter().any(|t| (t - x).abs() < 12.0) && !self.bench_areas.iter().any(|b| b.grow(4.0).contains(x, y));
                    if clear && x <= xb && !here.contains(&(x, y)) {
                        here.push((x, y));
                    }
                }
                k += 8.0;
            }
            taps_at.push(here);
        }
        for here in &taps_at {
            for (dir, len) in [(-1.0, 18.0), (1.0, 18.0), (-1.0, 42.0), (-1.0, 66.0), (1.0, 42.0)] {
                for &(x, y) in here {
                    let tip = (x, y + dir * len);
                    let c = (x, y + dir * (len + 4.0));
                    let stub = Segment::new((x, y + dir * 1.5), tip, node);
                    let ring = BoxRect::new(c.0 - 4.0, c.1 - 4.0, 8.0, 8.0);
                    if !self.svg.segment_is_free(&stub) || !self.svg.is_free(&ring.grow(1.0)) {
                        continue;
                    }
                    let spots = [
                        (x + 9.0, c.1 - h / 2.0, Anchor::Start),
                        (x - 9.0, c.1 - h / 2.0, Anchor::End),
                        (x, if dir < 0.0 { c.1 - 7.0 - h } else { c.1 + 7.0 }, Anchor::Middle),
                    ];
                    for (lx, top, a) in spots {
                        let b = text_box(lx, top + 0.8 * fs, text, fs, a);
                        // Keep well clear of other wiring, so the label does not read as theirs.
                        let roomy = !self.svg.wires.iter().any(|w| !w.net.is_empty() && w.net != node && b.grow(ROOM).crosses(w));
                        let apart = !self.svg.texts.iter().any(|t| t.overlaps(&b.grow(TEXT_GAP)));
                        if roomy && apart && self.svg.is_free(&b.grow(PAD)) && !b.grow(PAD).crosses(&stub) && !b.grow(PAD).overlaps(&ring) {
                            self.svg.segment((x, y), tip, node, self.pen(false));
                            self.svg.circle(c, 4.0, "#ffffff", Some(self.pen(false)));
                            self.svg.circle((x, y), 3.2, INK, None);
                            self.svg.text(lx, top + 0.8 * fs, text, fs, a, INK, "bold", "");
                            return true;
                        }
                    }
                }
            }
        }
        false
    }

    /// The DC level of every node that matters, beside a run of its wiring.
    fn dc_levels(&mut self) {
        let Some(op) = self.op else { return };
        if !self.cfg.dc_levels {
            return;
        }
        let fs = self.cfg.font_size - 1.0;
        let h = 1.05 * fs;
        let mut nets: Vec<String> = Vec::new();
        for w in &self.svg.wires {
            if !w.net.is_empty() && w.net != GND && w.net != "emf" && !self.rails.iter().any(|r| r.node == w.net) && !nets.contains(&w.net) {
                nets.push(w.net.clone());
            }
        }
        for net in nets {
            let Some(v) = op.voltage(&net) else { continue };
            // Solver residue at a node held at 0 V (below 10 ppm of the supply) prints as 0.
            let tiny = 1e-5 * (self.c.rail_pos - self.c.rail_neg).abs();
            let text = format(if v.abs() < tiny { 0.0 } else { v }, Quantity::Voltage);
            let mut spots = Vec::new();
            let mut runs: Vec<Segment> = self.svg.wires.iter().filter(|w| w.net == net && w.len() >= 12.0).cloned().collect();
            runs.sort_by(|a, b| self.leads.contains(a).cmp(&self.leads.contains(b)).then(b.len().total_cmp(&a.len())));
            for horizontal in [true, false] {
                for s in runs.iter().filter(|s| ((s.y1 - s.y2).abs() < 1e-9) == horizontal) {
                    // From the middle of the run outward, every 6 px.
                    let n = (s.len() / 12.0).floor() as i32;
                    for f in (0..=2 * n).map(|k| 0.5 + if k % 2 == 1 { 1.0 } else { -1.0 } * ((k + 1) / 2) as f64 * 6.0 / s.len().max(1.0)).filter(|f| (0.0..=1.0).contains(f)) {
                        let (px, py) = (s.x1 + f * (s.x2 - s.x1), s.y1 + f * (s.y2 - s.y1));
                        if self.bench_areas.iter().any(|b| b.contains(px, py)) {
                            continue;
                        }
                        if horizontal {
                            spots.push((px, py - 6.0 - h, Anchor::Middle));
                            spots.push((px, py + 6.0, Anchor::Middle));
                        } else {
                            spots.push((px + 6.0, py - h / 2.0, Anchor::Start));
                            spots.push((px - 6.0, py - h / 2.0, Anchor::End));
                        }
                    }
                }
            }
            if !self.put(&[text.clone()], &spots, fs, BLUE, "italic", Some(&net)) {
                self.notes.push(format!("DC level at {net}: {text}"));
            }
        }
    }

    /// Title, notes and the document.
    fn finish(mut self, name: &str) -> Schematic {
        let fs = self.cfg.font_size;
        let (x0, y0, _, y1) = self.svg.bounds().unwrap_or((0.0, 0.0, 400.0, 300.0));
        let mut lines = vec!["Grey: the bench around the design (sensor model, supplies, converter input), not built.".to_string()];
        if self.op.is_some() && self.cfg.dc_levels {
            lines.push("Blue italic: DC level of each node at the operating point.".to_string());
        }
        if self.polarised {
            lines.push(format!(
                "Capacitors of {} and more are drawn polarised, + on the side at the higher DC level.",
                format(self.cfg.polarised_from, Quantity::Capacitance)
            ));
        }
        lines.extend(self.notes.iter().cloned());
        let mut y = y1 + 2.0 * fs;
        for l in &lines {
            self.svg.text(x0, y, l, fs - 1.0, Anchor::Start, "#333333", "", "");
            y += 1.35 * (fs - 1.0);
        }
        if self.cfg.title {
            let mut t: String = name.chars().take(90).collect();
            if name.chars().count() > 90 {
                t.push('…');
            }
            self.svg.text(x0, y0 - 14.0, &t, fs + 4.0, Anchor::Start, INK, "bold", "");
        }
        let (x0, y0, x1, y1) = self.svg.bounds().unwrap_or((0.0, 0.0, 400.0, 300.0));
        let m = 16.0;
        let view = ((x0 - m).floor(), (y0 - m).floor(), (x1 - x0 + 2.0 * m).ceil(), (y1 - y0 + 2.0 * m).ceil());
        let svg = self.svg.finish(view, name, fs);
        Schematic { svg, texts: self.svg.texts, wires: self.svg.wires }
    }
}

/// Designator's companion: the value with its unit.
fn value_text(p: &Part) -> String {
    match p.kind {
        PartKind::Resistor => format(p.value, Quantity::Resistance),
        PartKind::Capacitor => format(p.value, Quantity::Capacitance),
        PartKind::VoltageSource => format(p.value, Quantity::Voltage),
        PartKind::OpAmp => format!("GBW ≥ {}", format(p.value, Quantity::Frequency)),
    }
}

/// "1.16 … 1.24 V", or "-250 mV … 1.2 V" when the prefixes differ; an end within 0.1 % of
/// the range's size from zero prints as 0 (solver residue at a virtual ground).
fn range_text(min: f64, max: f64) -> String {
    let tiny = 1e-3 * min.abs().max(max.abs());
    let snap = |v: f64| if v.abs() < tiny { 0.0 } else { v };
    let (a, b) = (format(snap(min), Quantity::Voltage), format(snap(max), Quantity::Voltage));
    match (a.rsplit_once(' '), b.rsplit_once(' ')) {
        (Some((na, ua)), Some((nb, ub))) if ua == ub => format!("{na} … {nb} {ua}"),
        _ => format!("{a} … {b}"),
    }
}
