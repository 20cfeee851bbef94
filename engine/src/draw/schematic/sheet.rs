//! The sheet: symbols and the stage blocks, left to right along the signal — sensor, series
//! path, amplifier stage, converter input — then the fallback area; the filter and drive
//! rows between the amplifier stage and the converter are in `rows`. Texts are queued here
//! and placed afterwards (see `annotate`), once every stroke is down.

use super::plan::{has, Leg, Plan, Rail, Step};
use super::{value_text, well_formed, SchematicConfig};
use crate::circuit::{Circuit, PartKind, StageRole, GND};
use crate::draw::svg::{text_width, Anchor, BoxRect, Pen, Segment, Svg};
use crate::solve::{DcSolution, Solver};
use crate::units::{format, Quantity};

pub(super) type Pt = (f64, f64);

pub(super) const X0: f64 = 20.0;
/// The signal line (the amplifier's upper input).
pub(super) const Y0: f64 = 220.0;
pub(super) const SENSOR_W: f64 = 150.0;
/// Free run of the sensor line, where TP1 goes.
pub(super) const TP_GAP: f64 = 80.0;
/// Length of a part on the signal line, and of a part in a leg.
pub(super) const HSPAN: f64 = 90.0;
pub(super) const SPAN: f64 = 80.0;
/// Spacing of leg columns (a part and its label).
pub(super) const PITCH: f64 = 95.0;
/// How far below the signal line a reference bus sits.
pub(super) const REF_DROP: f64 = 150.0;
/// Run of the output line to the converter, where TP and DC labels go.
pub(super) const OUT_RUN: f64 = 170.0;
/// Clearance kept round every text: from strokes and symbols, from other texts, and (where
/// possible) from wiring of other nets.
pub(super) const PAD: f64 = 2.0;
pub(super) const TEXT_GAP: f64 = 6.0;
pub(super) const ROOM: f64 = 10.0;
pub(super) const INK: &str = "#000000";
pub(super) const GREY: &str = "#777777";
pub(super) const BLUE: &str = "#1f4e9c";

#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Shape {
    Vertical,
    Horizontal,
    Amp,
}

/// A part label waiting for a free spot.
pub(super) struct Label {
    pub(super) lines: Vec<String>,
    pub(super) body: BoxRect,
    pub(super) shape: Shape,
    pub(super) colour: &'static str,
    /// Try below a horizontal part before above it (a loop under the amplifier).
    pub(super) below_first: bool,
}

/// A rail name or node name beside a bar or terminal.
pub(super) struct Mark {
    pub(super) text: String,
    pub(super) at: Pt,
    pub(super) up: bool,
    pub(super) colour: &'static str,
}

pub(super) struct Sheet<'a> {
    pub(super) c: &'a Circuit,
    pub(super) cfg: SchematicConfig,
    pub(super) op: Option<&'a DcSolution>,
    /// Operating point used for capacitor polarity (`op`, or solved here).
    pub(super) pol: Option<DcSolution>,
    pub(super) rails: Vec<Rail>,
    pub(super) svg: Svg,
    pub(super) done: Vec<bool>,
    pub(super) labels: Vec<Label>,
    pub(super) marks: Vec<Mark>,
    /// Areas of the bench (sensor, converter): no test point or DC level goes inside.
    pub(super) bench_areas: Vec<BoxRect>,
    pub(super) notes: Vec<String>,
    pub(super) polarised: bool,
    /// Part leads: runs a test point avoids (it would read as part of the symbol).
    pub(super) leads: Vec<Segment>,
    /// Signal line of the row being drawn (labels of horizontal parts below it prefer below).
    pub(super) row_y: f64,
    /// Nodes inside filter sections: their DC level is the section input's, so not repeated.
    pub(super) quiet: Vec<String>,
    /// Height above the line of the row being drawn (its loops and captions).
    pub(super) row_top: f64,
    /// Section captions waiting for their spot: lines, left x, top.
    pub(super) captions: Vec<(Vec<String>, f64, f64)>,
    /// Signal line of the gain stage: [`Y0`], or a row of its own below a buffer.
    pub(super) line: f64,
    /// Right end of what precedes the gain stage on its row (sensor box or flag): a
    /// reference block hanging leftward stays clear of it.
    pub(super) left: f64,
    /// The sensor's return terminal when it is not ground (a lifted return): point and node.
    pub(super) ret_at: Option<(Pt, String)>,
}

impl<'a> Sheet<'a> {
    pub(super) fn new(c: &'a Circuit, op: Option<&'a DcSolution>, cfg: SchematicConfig) -> Sheet<'a> {
        let rails = c
            .parts
            .iter()
            .enumerate()
            .filter(|(_, p)| {
                p.bench
                    && p.kind == PartKind::VoltageSource
                    && p.stage == StageRole::Supply
                    && p.nodes.len() == 2
                    && p.nodes[1] == GND
                    && p.nodes[0] != GND
            })
            .map(|(i, p)| Rail { node: p.nodes[0].clone(), name: p.reference.clone(), volts: p.value, part: i })
            .collect();
        let pol = match op {
            Some(o) => Some(o.clone()),
            None if well_formed(c) => {
                let x = c.sensor_source().map(|p| p.value).unwrap_or(0.0);
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
            row_y: Y0,
            row_top: 0.0,
            quiet: Vec::new(),
            captions: Vec::new(),
            line: Y0,
            left: X0 + SENSOR_W,
            ret_at: None,
        }
    }

    pub(super) fn pen(&self, bench: bool) -> Pen {
        Pen { colour: if bench { GREY } else { INK }, width: self.cfg.line_width, dashed: false }
    }

    pub(super) fn wire(&mut self, a: Pt, b: Pt, net: &str, bench: bool) {
        let pen = self.pen(bench);
        self.svg.segment(a, b, net, pen);
    }

    /// Two-terminal part `i` from `a` (node `na`) to `b` (node `nb`), `a` and `b` in line;
    /// `wired` false draws the leads as plain strokes (the fallback area).
    pub(super) fn two(&mut self, i: usize, a: Pt, na: &str, b: Pt, nb: &str, wired: bool) {
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
            PartKind::Diode => 9.0,
            PartKind::VoltageSource | PartKind::CurrentSource => 16.0,
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
                    let c =
                        if vertical { (m.0 - 21.0, q.1 + out * uy * 8.0) } else { (q.0 + out * ux * 9.0, m.1 - 12.0) };
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
            PartKind::CurrentSource => {
                // A circle with a line across the terminals' direction, and an arrow beside
                // it pointing the way the current flows (into the second node).
                self.svg.circle(m, 16.0, "none", Some(pen));
                let (c1, c2) = at(m, 16.0);
                self.svg.line(c1, c2, pen);
                let into_b = p.nodes.get(1).map(|n| n == nb).unwrap_or(true);
                let (dx, dy) = if into_b { (ux, uy) } else { (-ux, -uy) };
                let base = (m.0 + px * 26.0, m.1 + py * 26.0);
                let (t0, t1) = ((base.0 - dx * 12.0, base.1 - dy * 12.0), (base.0 + dx * 12.0, base.1 + dy * 12.0));
                self.svg.line(t0, t1, pen);
                let head = [
                    t1,
                    (t1.0 - dx * 6.0 + px * 4.0, t1.1 - dy * 6.0 + py * 4.0),
                    (t1.0 - dx * 6.0 - px * 4.0, t1.1 - dy * 6.0 - py * 4.0),
                ];
                self.svg.polygon(&head, colour, pen);
                vec![
                    (m.0 - 16.0, m.1 - 16.0),
                    (m.0 + 16.0, m.1 + 16.0),
                    (base.0 - 6.0, base.1 - 12.0),
                    (base.0 + 6.0, base.1 + 12.0),
                ]
            }
            PartKind::Diode => {
                // Triangle from the anode (the first node) to the bar at the cathode; the
                // bar's hooked ends mark a Schottky diode.
                let forward = p.nodes.first().map(|n| n == na).unwrap_or(true);
                let (base, tip, d) = if forward { (s, e, (ux, uy)) } else { (e, s, (-ux, -uy)) };
                let (b1, b2) = at(base, 9.0);
                let (t1, t2) = at(tip, 9.0);
                self.svg.polygon(&[b1, b2, tip], "#ffffff", pen);
                self.svg.segment(t1, t2, "", pen);
                let (h1, h2) = ((t1.0 - d.0 * 4.0, t1.1 - d.1 * 4.0), (t2.0 + d.0 * 4.0, t2.1 + d.1 * 4.0));
                self.svg.line(t1, h1, pen);
                self.svg.line(h1, (h1.0 + (t2.0 - t1.0) * 0.17, h1.1 + (t2.1 - t1.1) * 0.17), pen);
                self.svg.line(t2, h2, pen);
                self.svg.line(h2, (h2.0 - (t2.0 - t1.0) * 0.17, h2.1 - (t2.1 - t1.1) * 0.17), pen);
                vec![b1, b2, t1, t2, h1, h2]
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
        let below_first = !vertical && m.1 > self.row_y + 60.0;
        self.labels.push(Label { lines: vec![p.reference.clone(), value_text(p)], body, shape, colour, below_first });
        self.done[i] = true;
    }

    /// Ends a leg at `node`: the ground symbol, a rail bar, or a named terminal.
    pub(super) fn terminal(&mut self, p: Pt, node: &str, up: bool) {
        let pen = self.pen(false);
        if node == GND {
            for (k, w) in [12.0, 7.5, 3.0].iter().enumerate() {
                let y = p.1 + 5.0 * k as f64;
                self.svg.segment((p.0 - w, y), (p.0 + w, y), "", pen);
            }
        } else if let Some(r) = self.rails.iter().find(|r| r.node == node).cloned() {
            self.svg.segment((p.0 - 12.0, p.1), (p.0 + 12.0, p.1), "", self.pen(true));
            let sign = if r.volts > 0.0 { "+" } else { "" };
            self.marks.push(Mark {
                text: format!("{} {sign}{}", r.name, format(r.volts, Quantity::Voltage)),
                at: p,
                up,
                colour: GREY,
            });
            if let Some(d) = self.done.get_mut(r.part) {
                *d = true;
            }
        } else {
            self.svg.circle(p, 3.5, "#ffffff", Some(pen));
            self.marks.push(Mark { text: node.to_string(), at: p, up, colour: INK });
        }
    }

    pub(super) fn positive_rail(&self, node: &str) -> bool {
        self.rails.iter().any(|r| r.node == node && r.volts > 0.0)
    }

    /// The sensor block: EMF behind its impedance in a dashed box; returns the terminal's x.
    pub(super) fn sensor(&mut self) -> f64 {
        if let Some(right) = self.high_impedance_sensor().or_else(|| self.photodiode_sensor()) {
            return right;
        }
        let right = X0 + SENSOR_W;
        let y = Y0;
        let c = self.c;
        let vs = c.parts.iter().position(|p| {
            p.bench
                && p.kind == PartKind::VoltageSource
                && p.stage == StageRole::Sensor
                && p.nodes.len() == 2
                && p.nodes[1] == GND
        });
        let emf = vs.and_then(|i| c.parts[i].nodes.first().cloned());
        let rs = emf.as_ref().and_then(|e| {
            c.parts.iter().position(|p| {
                p.bench && p.kind == PartKind::Resistor && p.nodes.len() == 2 && has(p, e) && has(p, "sense")
            })
        });
        // A current sensor (a loop's current) feeds the terminal from ground.
        let is = c.parts.iter().position(|p| {
            p.bench
                && p.kind == PartKind::CurrentSource
                && p.stage == StageRole::Sensor
                && p.nodes.len() == 2
                && p.nodes[0] == GND
        });
        if let (Some(v), Some(r), Some(emf)) = (vs, rs, emf) {
            let sx = X0 + 40.0;
            self.two(v, (sx, y), &emf, (sx, y + 100.0), GND, true);
            self.terminal((sx, y + 100.0), GND, false);
            self.two(r, (sx, y), &emf, (right - 20.0, y), "sense", true);
            self.wire((right - 20.0, y), (right, y), "sense", true);
        } else if let Some(i) = is {
            let sx = X0 + 40.0;
            let to = c.parts[i].nodes[1].clone();
            self.two(i, (sx, y + 100.0), GND, (sx, y), &to, true);
            self.terminal((sx, y + 100.0), GND, false);
            self.wire((sx, y), (right, y), &to, true);
        }
        let dashed = Pen { colour: GREY, width: 1.5, dashed: true };
        self.svg.rect(X0, y - 60.0, SENSOR_W, 190.0, "none", dashed);
        self.svg.text(X0 + 4.0, y - 66.0, "sensor", self.cfg.font_size, Anchor::Start, GREY, "", "italic");
        self.bench_areas.push(BoxRect::new(X0, y - 60.0, SENSOR_W, 190.0));
        self.svg.circle((right, y), 3.5, "#ffffff", Some(self.pen(true)));
        right
    }

    /// The series path along the signal line; returns where the input line begins.
    /// `run`: the free line from `x_term` (where the sensor's test point goes).
    pub(super) fn series(&mut self, plan: &Plan, x_term: f64, run: f64) -> f64 {
        let y = self.line;
        let mut x = x_term + run;
        self.wire((x_term, y), (x, y), &plan.start, false);
        if !plan.connected {
            self.terminal((x, y), &plan.start, true);
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
    pub(super) fn leg(&mut self, leg: &Leg, x: f64, y: f64, top: bool) {
        if let Some(block) = &leg.block {
            let yr = y + REF_DROP;
            if let Some(st) = leg.steps.first() {
                self.two(st.part, (x, y), &st.from, (x, yr), &st.to, true);
            }
            self.block(block, x, yr, &leg.end, false);
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

    /// A reference block on a bus at `yr` from `x` (leftward, or `rightward`): a column per
    /// part, those to a positive rail up, the rest down (resistors first).
    pub(super) fn block(&mut self, block: &[Step], x: f64, yr: f64, net: &str, rightward: bool) {
        let (ups, mut downs): (Vec<&Step>, Vec<&Step>) = block.iter().partition(|s| self.positive_rail(&s.to));
        crate::order::sort_by_key(&mut downs, |s| {
            self.c.parts.get(s.part).map(|p| p.kind != PartKind::Resistor).unwrap_or(true)
        });
        let cols = ups.len().max(downs.len());
        let xl = if rightward { x + 60.0 } else { x - cols as f64 * PITCH };
        let xe = if rightward { xl + cols.saturating_sub(1) as f64 * PITCH } else { x };
        self.wire((xl.min(x), yr), (xe, yr), net, false);
        for j in 0..cols {
            let xc = xl + j as f64 * PITCH;
            for (st, dir) in [(ups.get(j), -1.0), (downs.get(j), 1.0)] {
                if let Some(st) = st {
                    self.two(st.part, (xc, yr), &st.from, (xc, yr + dir * SPAN), &st.to, true);
                    self.terminal((xc, yr + dir * SPAN), &st.to, dir < 0.0);
                }
            }
        }
    }

    /// The amplifier stage: legs, amplifier, feedback; returns the converter's input point.
    pub(super) fn amp_stage(&mut self, plan: &Plan, x_line: f64) -> Option<(f64, f64, String)> {
        let u = plan.amp?;
        let y0 = self.line;
        let (yt, yb, yo) = (y0, y0 + 40.0, y0 + 20.0);
        let mut cols = Vec::new();
        let mut x = x_line + 45.0;
        for leg in &plan.top_legs {
            if let Some(b) = &leg.block {
                let n = b
                    .iter()
                    .filter(|s| self.positive_rail(&s.to))
                    .count()
                    .max(b.iter().filter(|s| !self.positive_rail(&s.to)).count());
                x = x.max(self.left + 70.0 + n as f64 * PITCH);
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
        let (dir, base, y_in) = if fb_bottom { (1.0, y0 + 135.0, yb) } else { (-1.0, y0 - 90.0, yt) };
        let xr = x_out + 30.0;
        let loops: Vec<Option<usize>> =
            if plan.inn == plan.out { vec![None] } else { plan.feedback.iter().map(|&i| Some(i)).collect() };
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
        if self.c.parts.get(u).is_none_or(|p| p.nodes.len() < 5) {
            return None;
        }
        self.opamp(u, ux, yt, [plan.top == plan.inp, plan.bottom == plan.inp && plan.top != plan.inp]);
        self.supply_pins(u, ux, yt);
        // Into the converter box the run carries the pin's test point; into a continuation
        // flag (a filter follows) only the DC level, so it can be shorter.
        let xa = x_out + if plan.out == "adc" { OUT_RUN } else { OUT_RUN - 60.0 };
        self.wire((x_out, yo), (xa, yo), &plan.out, false);
        Some((xa, yo, plan.out.clone()))
    }

    /// The converter input: a box with its input impedance to ground.
    pub(super) fn converter(&mut self, at: Option<(f64, f64, String)>, plan: &Plan) {
        let (xa, y, net) = match at {
            Some(a) => a,
            None => {
                let right = self.svg.bounds().map(|b| b.2).unwrap_or(X0) + 80.0;
                (right, self.line + 20.0, if plan.out.is_empty() { "adc".to_string() } else { plan.out.clone() })
            }
        };
        let area = BoxRect::new(xa, y - 45.0, 120.0, 180.0);
        self.svg.rect(area.x, area.y, area.w, area.h, "none", self.pen(true));
        self.svg.text(xa + 10.0, y - 24.0, "ADC", self.cfg.font_size + 1.0, Anchor::Start, GREY, "bold", "");
        self.bench_areas.push(area);
        let radc =
            self.c.parts.iter().position(|p| {
                p.bench && p.kind == PartKind::Resistor && p.nodes.len() == 2 && has(p, &net) && has(p, GND)
            });
        self.wire((xa, y), (xa + 40.0, y), &net, true);
        if let Some(i) = radc {
            self.two(i, (xa + 40.0, y), &net, (xa + 40.0, y + SPAN), GND, true);
            self.terminal((xa + 40.0, y + SPAN), GND, false);
        }
    }

    /// Every part not placed by role, with its node names, below the drawing.
    pub(super) fn fallback(&mut self) {
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
            let lines = [p.reference.clone(), value_text(p), format!("nodes {}", p.nodes.join(", "))];
            let two = p.nodes.len() == 2 && p.kind != PartKind::OpAmp;
            let (na, nb) = if two { (p.nodes[0].clone(), p.nodes[1].clone()) } else { (String::new(), String::new()) };
            let (wa, wb) = (text_width(&na, fs), text_width(&nb, fs));
            let width =
                if two { wa + wb + 130.0 } else { lines.iter().map(|l| text_width(l, fs)).fold(0.0, f64::max) + 20.0 };
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
                    self.svg.text(
                        x + 10.0,
                        y - 30.0 + (k as f64 + 1.0) * 1.2 * fs + 2.0,
                        l,
                        fs,
                        Anchor::Start,
                        INK,
                        "",
                        "",
                    );
                }
                self.done[i] = true;
            }
            x += width + 30.0;
        }
    }
}
