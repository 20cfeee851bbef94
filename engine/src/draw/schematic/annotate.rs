//! Annotation: part labels, rail names, test points and DC levels, each at the first free
//! spot among a few candidates round its part or net; then the notes and the document.

use super::sheet::{Shape, Sheet, BLUE, INK, PAD, ROOM, TEXT_GAP};
use super::Schematic;
use crate::circuit::GND;
use crate::draw::svg::{text_box, Anchor, BoxRect, Segment};
use crate::units::{format, Quantity};

impl Sheet<'_> {
    /// Writes `lines` at the first free spot `(x, top of first line, anchor)`. With `net`, a
    /// first pass wants the spot well clear of other nets' wiring, so the text reads as its own.
    pub(super) fn put(
        &mut self, lines: &[String], spots: &[(f64, f64, Anchor)], fs: f64, colour: &str, style: &str,
        net: Option<&str>,
    ) -> bool {
        let lh = 1.2 * fs;
        let passes: &[bool] = if net.is_some() { &[true, false] } else { &[false] };
        for &roomy in passes {
            for &(x, top, anchor) in spots {
                let at = |k: usize| top + 0.8 * fs + k as f64 * lh;
                let boxes: Vec<BoxRect> =
                    lines.iter().enumerate().map(|(k, s)| text_box(x, at(k), s, fs, anchor)).collect();
                let clear =
                    |b: &BoxRect| {
                        self.svg.is_free(&b.grow(PAD))
                            && !self.svg.texts.iter().any(|t| t.overlaps(&b.grow(TEXT_GAP)))
                            && !(roomy
                                && self.svg.wires.iter().any(|w| {
                                    !w.net.is_empty() && Some(w.net.as_str()) != net && b.grow(ROOM).crosses(w)
                                }))
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

    pub(super) fn part_labels(&mut self) {
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
                            let (x, a) =
                                if side > 0.0 { (b.x + b.w + gap, Anchor::Start) } else { (b.x - gap, Anchor::End) };
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
                    // A filter section's amplifier: above the symbol, short of the output
                    // column; or right of the follower's link, under the output.
                    for dy in [-8.0, -20.0] {
                        spots.push((b.x + b.w + 25.0, b.y - h + dy, Anchor::End));
                    }
                    for dy in [10.0, 22.0] {
                        spots.push((b.x + b.w + 22.0, cy + dy, Anchor::Start));
                    }
                }
            }
            if !self.put(&l.lines, &spots, fs, l.colour, "", None) {
                self.notes.push(format!("{} (no free place beside the part)", l.lines.join(" ")));
            }
        }
    }

    pub(super) fn marks(&mut self) {
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
            if !self.put(std::slice::from_ref(&m.text), &spots, fs, m.colour, "", None) {
                self.notes.push(format!("{} (no free place beside its symbol)", m.text));
            }
        }
    }

    /// A test point on a free run of `node`'s wiring: stub, open circle and label. Short
    /// stubs upward are tried first, along the longest run (the signal line rather than a
    /// feedback lead) from its middle outward.
    pub(super) fn test_point(&mut self, node: &str, text: &str) -> bool {
        let fs = self.cfg.font_size;
        let h = 1.05 * fs;
        let mut runs: Vec<Segment> = self
            .svg
            .wires
            .iter()
            .filter(|w| w.net == node && (w.y1 - w.y2).abs() < 1e-9 && (w.x2 - w.x1).abs() >= 30.0)
            .cloned()
            .collect();
        crate::order::sort_by(&mut runs, |a, b| {
            self.leads.contains(a).cmp(&self.leads.contains(b)).then(b.len().total_cmp(&a.len()))
        });
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
                    let clear = !taps.iter().any(|t| (t - x).abs() < 12.0)
                        && !self.bench_areas.iter().any(|b| b.grow(4.0).contains(x, y));
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
                        let roomy = !self
                            .svg
                            .wires
                            .iter()
                            .any(|w| !w.net.is_empty() && w.net != node && b.grow(ROOM).crosses(w));
                        let apart = !self.svg.texts.iter().any(|t| t.overlaps(&b.grow(TEXT_GAP)));
                        if roomy
                            && apart
                            && self.svg.is_free(&b.grow(PAD))
                            && !b.grow(PAD).crosses(&stub)
                            && !b.grow(PAD).overlaps(&ring)
                        {
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
    pub(super) fn dc_levels(&mut self) {
        let Some(op) = self.op else { return };
        if !self.cfg.dc_levels {
            return;
        }
        let fs = self.cfg.font_size - 1.0;
        let h = 1.05 * fs;
        let mut nets: Vec<String> = Vec::new();
        for w in &self.svg.wires {
            let quiet = self.quiet.contains(&w.net);
            if !w.net.is_empty()
                && w.net != GND
                && Some(&w.net) != self.emf.as_ref()
                && !quiet
                && !self.rails.iter().any(|r| r.node == w.net)
                && !nets.contains(&w.net)
            {
                nets.push(w.net.clone());
            }
        }
        for net in nets {
            let Some(v) = op.voltage(&net) else { continue };
            // Solver residue at a node held at 0 V (below 10 ppm of the supply) prints as 0.
            let tiny = 1e-5 * (self.c.rail_pos - self.c.rail_neg).abs();
            let text = format(if v.abs() < tiny { 0.0 } else { v }, Quantity::Voltage);
            let mut spots = Vec::new();
            let mut runs: Vec<Segment> =
                self.svg.wires.iter().filter(|w| w.net == net && w.len() >= 12.0).cloned().collect();
            crate::order::sort_by(&mut runs, |a, b| {
                self.leads.contains(a).cmp(&self.leads.contains(b)).then(b.len().total_cmp(&a.len()))
            });
            for horizontal in [true, false] {
                for s in runs.iter().filter(|s| ((s.y1 - s.y2).abs() < 1e-9) == horizontal) {
                    // From the middle of the run outward, every 6 px.
                    let n = (s.len() / 12.0).floor() as i32;
                    for f in (0..=2 * n)
                        .map(|k| {
                            0.5 + if k % 2 == 1 { 1.0 } else { -1.0 } * ((k + 1) / 2) as f64 * 6.0 / s.len().max(1.0)
                        })
                        .filter(|f| (0.0..=1.0).contains(f))
                    {
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
            if !self.put(std::slice::from_ref(&text), &spots, fs, BLUE, "italic", Some(&net)) {
                self.notes.push(format!("DC level at {net}: {text}"));
            }
        }
    }

    /// Title, notes and the document.
    pub(super) fn finish(mut self, name: &str) -> Schematic {
        let fs = self.cfg.font_size;
        let (x0, y0, _, y1) = self.svg.bounds().unwrap_or((0.0, 0.0, 400.0, 300.0));
        let mut lines =
            vec!["Grey: the bench around the design (sensor model, supplies, converter input), not built.".to_string()];
        if self.op.is_some() && self.cfg.dc_levels {
            lines.push("Blue italic: DC level of each node at the operating point.".to_string());
        }
        if self.polarised {
            lines
                .push("Electrolytic capacitors are drawn polarised, + on the side at the higher DC level.".to_string());
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
