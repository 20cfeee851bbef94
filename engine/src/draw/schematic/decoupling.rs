//! The supply decoupling block, below the signal rows: for each rail a bar with the rail's
//! name, a bus from it, and hanging from the bus to ground the rail's local capacitors (each
//! labelled with its designator, its value and the amplifier whose supply pin it serves)
//! and its bulk capacitor. The capacitors are found by their roles
//! ([`PartRole::LocalDecoupling`], [`PartRole::BulkDecoupling`]); nodes only say which rail
//! a capacitor hangs from. A rail with many amplifiers continues on a further bus, and the
//! buses of several rails share a row while the width allows.

use super::sheet::{Sheet, INK, PITCH, SPAN, X0};
use crate::circuit::{PartKind, PartRole, GND};
use crate::draw::svg::Anchor;

/// Drop from the caption to the rail bar, and from the bar to the bus.
const CAPTION_DROP: f64 = 42.0;
const STUB: f64 = 28.0;
/// Height of one row of buses (caption excluded): bar, bus, capacitors, ground.
const ROW: f64 = 170.0;
/// Room right of a bus's last capacitor for its label, and between two buses.
const LABEL_ROOM: f64 = 70.0;
const GAP: f64 = 40.0;

impl Sheet<'_> {
    /// Draws the decoupling capacitors not placed yet, grouped by rail, below the drawing.
    pub(super) fn decoupling(&mut self) {
        let c = self.c;
        let decoupling = |i: usize| {
            let p = &c.parts[i];
            p.kind == PartKind::Capacitor && p.nodes.len() == 2 && p.role.is_some_and(PartRole::is_decoupling)
        };
        let mut groups: Vec<(String, Vec<usize>)> = Vec::new();
        for r in &self.rails {
            let caps: Vec<usize> = (0..c.parts.len())
                .filter(|&i| !self.done[i] && decoupling(i) && c.parts[i].nodes.contains(&r.node))
                .collect();
            if !caps.is_empty() && !groups.iter().any(|g| g.0 == r.node) {
                groups.push((r.node.clone(), caps));
            }
        }
        if groups.is_empty() {
            return;
        }
        let fs = self.cfg.font_size;
        let (_, _, x1, y1) = self.svg.bounds().unwrap_or((X0, 0.0, X0 + 900.0, 0.0));
        let top = y1 + 60.0;
        let caption = "Supply decoupling: each local capacitor at the supply pin of the amplifier it names";
        self.svg.text(X0, top, caption, fs, Anchor::Start, INK, "bold", "");
        let left = X0 + 40.0;
        let right = x1.max(X0 + 900.0);
        let per_bus = (((right - left - LABEL_ROOM) / PITCH).floor() as usize + 1).max(1);
        let (mut x, mut bar) = (left, top + CAPTION_DROP);
        for (node, caps) in groups {
            for chunk in caps.chunks(per_bus) {
                let width = (chunk.len() - 1) as f64 * PITCH + LABEL_ROOM;
                if x > left && x + width > right {
                    x = left;
                    bar += ROW;
                }
                self.bus(&node, chunk, x, bar);
                x += width + GAP;
            }
        }
    }

    /// One bus: the rail's bar at `(x, bar)`, the bus below it and `caps` hanging from it.
    fn bus(&mut self, node: &str, caps: &[usize], x: f64, bar: f64) {
        let y = bar + STUB;
        self.terminal((x, bar), node, true);
        self.wire((x, bar), (x, y), node, false);
        for (k, &i) in caps.iter().enumerate() {
            let xk = x + k as f64 * PITCH;
            if k > 0 {
                self.wire((xk - PITCH, y), (xk, y), node, false);
            }
            self.two(i, (xk, y), node, (xk, y + SPAN), GND, true);
            let serves = match self.c.parts[i].role {
                Some(PartRole::LocalDecoupling { amplifier, .. }) => format!("for U{amplifier}"),
                _ => "bulk".to_string(),
            };
            if let Some(l) = self.labels.last_mut() {
                l.lines.push(serves);
            }
            self.terminal((xk, y + SPAN), GND, false);
        }
    }
}
