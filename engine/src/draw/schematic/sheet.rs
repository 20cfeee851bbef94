//! The sheet: what is drawn so far and what waits to be placed, wires, terminals and rails,
//! the converter input, and the fallback area for parts no block placed. The symbols are in
//! `symbol`; the blocks left to right along the signal in `gain` (sensor, series path,
//! amplifier stage), the front ends' modules and `rows` (filter and drive). Texts are queued
//! here and placed afterwards (see `annotate`), once every stroke is down.

use super::blocks::{Blocks, Mode, Sensor};
use super::plan::{has, Plan, Rail};
use super::{value_text, well_formed, SchematicConfig};
use crate::circuit::{Circuit, PartKind, PartRole, GND};
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
    /// How the blocks were found (the converter's load is looked up the same way).
    pub(super) mode: Mode,
    /// The sensor's bench model, its EMF node and the converter pin.
    pub(super) sensor: Sensor,
    pub(super) emf: Option<String>,
    pub(super) pin: String,
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
    /// A sheet for `c` with the rails, the sensor's model and the converter pin that
    /// `blocks` found.
    pub(super) fn new(c: &'a Circuit, op: Option<&'a DcSolution>, cfg: SchematicConfig, blocks: &Blocks) -> Sheet<'a> {
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
            rails: blocks.rails.clone(),
            mode: blocks.mode,
            sensor: blocks.sensor.clone(),
            emf: blocks.emf.clone(),
            pin: blocks.pin.clone(),
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

    /// The converter input: a box with its input impedance to ground.
    pub(super) fn converter(&mut self, at: Option<(f64, f64, String)>, plan: &Plan) {
        let (xa, y, net) = match at {
            Some(a) => a,
            None => {
                let right = self.svg.bounds().map(|b| b.2).unwrap_or(X0) + 80.0;
                (right, self.line + 20.0, if plan.out.is_empty() { self.pin.clone() } else { plan.out.clone() })
            }
        };
        let area = BoxRect::new(xa, y - 45.0, 120.0, 180.0);
        self.svg.rect(area.x, area.y, area.w, area.h, "none", self.pen(true));
        self.svg.text(xa + 10.0, y - 24.0, "ADC", self.cfg.font_size + 1.0, Anchor::Start, GREY, "bold", "");
        self.bench_areas.push(area);
        let radc = match self.mode {
            Mode::Roles => self
                .c
                .parts
                .iter()
                .position(|p| p.role == Some(PartRole::ConverterLoad) && p.nodes.len() == 2 && has(p, &net)),
            Mode::Shapes => super::blocks::shape_load(self.c, &net),
        };
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
