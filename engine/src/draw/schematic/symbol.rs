//! The two-terminal symbols (IEC 60617): a rectangle for a resistor, two plates for a
//! capacitor (with `+` at the positive plate when it is polarised), a circle with a line
//! along the terminals for a voltage source and across them with an arrow for a current
//! source, a triangle with a hooked bar for a Schottky diode; each queues its label.

use super::sheet::{Label, Pt, Shape, Sheet, GREY, INK};
use super::value_text;
use crate::circuit::{is_decoupling, PartKind};
use crate::draw::svg::{Anchor, BoxRect, Segment};

impl Sheet<'_> {
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
                let polarised = match p.dielectric {
                    Some(d) => d == crate::ratings::Dielectric::Electrolytic,
                    None => p.value >= self.cfg.polarised_from && !is_decoupling(p),
                };
                if polarised {
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
}
