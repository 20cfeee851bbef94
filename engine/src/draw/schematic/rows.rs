//! The rows after the gain stage: filter sections, then the drive and the converter box,
//! each a block on one signal line, left to right. What does not fit within [`X_MAX`] goes
//! on a new row below; a row ends and the next begins with a continuation flag (a pentagon
//! pointing along the signal) holding the node's name, so the two ends read as one net.
//!
//! A section: its input resistors along the line, capacitors to ground hanging below it,
//! the amplifier (the same symbol as U1), the feedback parts in loops above the line (C_f of
//! a Sallen-Key section; R2 and C_f of a multiple-feedback section, R2 outermost), the
//! follower's output-to-− link in a loop below. The output leaves the apex, joins the loops
//! at an output column and steps back up to the signal line, so every block starts and ends
//! on the same line. An inverting section's + input drops to its reference: ground or a
//! rail symbol, or the reference divider with its bypass hanging from a short bus at the
//! first section that uses it (later sections show the node's name). Each section carries
//! a caption from its amplifier's description. Amplifiers on the same supply pins as U1 get
//! no supply stubs; a note under the drawing says so.
//!
//! The drive: the series resistor along the line to the pin, the charge bucket and the
//! clamp diode hanging from the pin, then the converter box.

use super::chain::{Chain, Section, Shape as Net};
use super::plan::{Leg, Step};
use super::sheet::{Label, Mark, Shape, Sheet, HSPAN, INK, PITCH, X0};
use super::value_text;
use crate::circuit::GND;
use crate::draw::svg::{text_width, Anchor, BoxRect};

/// Rightmost x of a row's strokes: with the 16-unit margins the drawing stays within 1100
/// user units, which fits a 1280-pixel-wide screen at full scale.
pub(super) const X_MAX: f64 = 1080.0;
/// Signal line between two blocks, and before a continuation flag.
const GAP: f64 = 40.0;
/// Room between the lowest stroke of a row and the top of the next (for labels under it).
pub(super) const ROW_GAP: f64 = 56.0;
/// Loops above the line: a Sallen-Key section's C_f; a multiple-feedback section's C_f and R2.
const LOOP: f64 = 80.0;
const MFB_INNER: f64 = 65.0;
const MFB_OUTER: f64 = 120.0;
/// The follower's link below the line, and the drop to a reference bus.
const BELOW: f64 = 85.0;
const BUS: f64 = 170.0;
/// Free run of the pin's line before the converter box: room for its test point and label.
const PIN_RUN: f64 = 175.0;

/// The blocks of the chain: a section, or the pin with the drive and the converter box.
#[derive(Clone, Copy)]
enum Block<'c> {
    Section(&'c Section),
    Pin,
}

impl Sheet<'_> {
    /// Draws `chain` from the gain stage's output `start` (x, y, net); returns where the
    /// converter box goes. `u1`: the gain stage's amplifier (for the supply pins).
    pub(super) fn chain_rows(
        &mut self, chain: &Chain, start: (f64, f64, String), u1: Option<usize>,
    ) -> (f64, f64, String) {
        if chain.is_empty() && !chain.short() {
            return start;
        }
        let supply =
            u1.and_then(|u| self.c.parts.get(u)).and_then(|p| Some((p.nodes.get(2)?.clone(), p.nodes.get(3)?.clone())));
        let mut shared = Vec::new();
        let mut blocks: Vec<Block> = chain.sections.iter().map(Block::Section).collect();
        blocks.push(Block::Pin);
        let (mut x, mut y, mut net) = start;
        let rows = self.pack(&blocks, chain, x, &net);
        for (r, row) in rows.iter().enumerate() {
            if r > 0 || x + self.run(row, chain) > X_MAX {
                self.wire((x, y), (x + GAP, y), &net.clone(), false);
                self.flag(x + GAP, y, &net);
                (x, y) = self.new_row(row, &net);
            } else {
                self.row_top = row.iter().map(|b| self.top(*b)).fold(0.0, f64::max);
                self.wire((x, y), (x + GAP, y), &net.clone(), false);
                x += GAP;
            }
            self.row_y = y;
            for (k, b) in row.iter().enumerate() {
                if k > 0 {
                    self.wire((x, y), (x + GAP, y), &net.clone(), false);
                    x += GAP;
                }
                match b {
                    Block::Section(s) => {
                        x = self.section(s, x, y);
                        net = s.out.clone();
                        let amp = &self.c.parts[s.amp];
                        let pins = (amp.nodes[2].clone(), amp.nodes[3].clone());
                        if supply.as_ref() == Some(&pins) {
                            shared.push(amp.reference.clone());
                        } else {
                            self.supply_pins(s.amp, x - 115.0, y);
                        }
                    }
                    Block::Pin => {
                        x = self.pin(chain, &net, x, y);
                        net = chain.pin.clone().unwrap_or_else(|| chain.end.clone());
                    }
                }
            }
        }
        if let (false, Some(u), Some((vp, vn))) = (shared.is_empty(), u1, supply) {
            let who = self.c.parts[u].reference.clone();
            let (verb, whose) =
                if shared.len() == 1 { ("runs", "its supply stubs are") } else { ("run", "their supply stubs are") };
            self.notes.push(format!(
                "{} {verb} from the same supply pins as {who} ({vp} and {vn}); {whose} not drawn.",
                shared.join(", ")
            ));
        }
        (x, y, net)
    }

    /// Width of a block from its input to its output (the pin block: to the box's right edge).
    fn width(&self, b: Block, chain: &Chain) -> f64 {
        match b {
            Block::Section(s) => match s.shape {
                Net::FirstOrder { .. } => 305.0,
                _ => 410.0,
            },
            Block::Pin => {
                let r = if chain.drive.resistor.is_some() { HSPAN } else { 0.0 };
                let n = chain.drive.at_pin.len();
                r + if n == 0 { PIN_RUN } else { 45.0 + (n - 1) as f64 * PITCH + PIN_RUN } + 120.0
            }
        }
    }

    /// Height above the line a block needs: its loops and its caption.
    fn top(&self, b: Block) -> f64 {
        let caption = 2.4 * (self.cfg.font_size - 1.0) + 12.0;
        match b {
            Block::Section(s) => {
                caption
                    + match s.shape {
                        Net::FirstOrder { .. } => 60.0,
                        Net::SallenKey { .. } => LOOP,
                        Net::MultipleFeedback { .. } => MFB_OUTER,
                    }
            }
            Block::Pin => 60.0,
        }
    }

    /// The blocks row by row: everything on the gain stage's row when it fits after `x`
    /// (where node `net` leaves the gain stage);
    /// otherwise on new rows, a block going on the current row when it and what must follow
    /// it there (a flag, unless it is the last) end within [`X_MAX`].
    fn pack<'c>(&self, blocks: &[Block<'c>], chain: &Chain, x: f64, net: &str) -> Vec<Vec<Block<'c>>> {
        if x + self.run(blocks, chain) <= X_MAX {
            return vec![blocks.to_vec()];
        }
        let mut rows: Vec<Vec<Block>> = Vec::new();
        let mut row: Vec<Block> = Vec::new();
        let mut net = net;
        let mut x = 0.0;
        for b in blocks {
            let tail = match b {
                Block::Pin => 0.0,
                Block::Section(s) => GAP + self.flag_width(&s.out),
            };
            if !row.is_empty() && x + GAP + self.width(*b, chain) + tail > X_MAX {
                rows.push(std::mem::take(&mut row));
            }
            if row.is_empty() {
                x = X0 + self.flag_width(net);
            }
            x += GAP + self.width(*b, chain);
            row.push(*b);
            if let Block::Section(s) = b {
                net = &s.out;
            }
        }
        rows.push(row);
        rows
    }

    /// Length of `blocks` on one line, the lead-in included.
    fn run(&self, blocks: &[Block], chain: &Chain) -> f64 {
        blocks.iter().map(|b| GAP + self.width(*b, chain)).sum()
    }

    /// Starts a row below everything drawn, with a flag for `net`; returns the line's start.
    fn new_row(&mut self, row: &[Block], net: &str) -> (f64, f64) {
        let bottom = self.svg.bounds().map(|b| b.3).unwrap_or(0.0);
        let top = row.iter().map(|b| self.top(*b)).fold(0.0, f64::max);
        let y = bottom + ROW_GAP + top;
        self.row_top = top;
        let tip = self.flag(X0, y, net);
        self.wire((tip, y), (tip + GAP, y), net, false);
        (tip + GAP, y)
    }

    fn flag_width(&self, net: &str) -> f64 {
        text_width(net, self.cfg.font_size) + 22.0
    }

    /// A continuation flag from `x` pointing along the signal, holding `net`; returns its tip.
    pub(super) fn flag(&mut self, x: f64, y: f64, net: &str) -> f64 {
        let fs = self.cfg.font_size;
        let w = self.flag_width(net) - 10.0;
        let pen = self.pen(false);
        self.svg.polygon(
            &[(x, y - 11.0), (x + w, y - 11.0), (x + w + 10.0, y), (x + w, y + 11.0), (x, y + 11.0)],
            "#ffffff",
            pen,
        );
        self.svg.text(x + 6.0, y + 0.35 * fs, net, fs, Anchor::Start, INK, "", "");
        x + w + 10.0
    }

    /// One section from its input at (`x0`, `y`); returns the x of its output on the line.
    fn section(&mut self, s: &Section, x0: f64, y: f64) -> f64 {
        let caption_at = (x0, y - self.row_top + 6.0);
        if !s.caption.is_empty() {
            self.captions.push((s.caption.clone(), caption_at.0, caption_at.1));
        }
        let x1 = x0 + HSPAN;
        let ux = x0 + 295.0;
        match s.shape {
            Net::FirstOrder { r, cg } => {
                let ux = x0 + 190.0;
                self.two(r, (x0, y), &s.input, (x1, y), &s.plus, true);
                self.wire((x1, y), (ux, y), &s.plus, false);
                self.hang(cg, x1 + 25.0, y, &s.plus);
                self.quiet.push(s.plus.clone());
                self.follower(s, ux, y, None)
            }
            Net::SallenKey { r1, r2, cf, cg } => {
                let xa = x1 + 20.0;
                self.two(r1, (x0, y), &s.input, (x1, y), &s.a, true);
                self.wire((x1, y), (xa, y), &s.a, false);
                self.two(r2, (xa, y), &s.a, (xa + HSPAN, y), &s.plus, true);
                self.wire((xa + HSPAN, y), (ux, y), &s.plus, false);
                self.hang(cg, xa + HSPAN + 25.0, y, &s.plus);
                self.quiet.extend([s.a.clone(), s.plus.clone()]);
                self.follower(s, ux, y, Some((cf, xa)))
            }
            Net::MultipleFeedback { r1, r2, r3, cg, cf } => {
                let (xl, x_r) = (x1 + 60.0, ux + 115.0);
                let xm = xl + HSPAN + 18.0;
                self.two(r1, (x0, y), &s.input, (x1, y), &s.a, true);
                self.wire((x1, y), (xl, y), &s.a, false);
                self.hang(cg, x1 + 20.0, y, &s.a);
                self.two(r3, (xl, y), &s.a, (xl + HSPAN, y), &s.minus, true);
                self.wire((xl + HSPAN, y), (ux, y), &s.minus, false);
                self.opamp(s.amp, ux, y, [false, true]);
                self.reference(s, ux - 20.0, y);
                self.wire((xl, y), (xl, y - MFB_OUTER), &s.a, false);
                self.loop_part(r2, (xl, y - MFB_OUTER), &s.a, (x_r, y - MFB_OUTER), &s.out, false);
                self.wire((xm, y), (xm, y - MFB_INNER), &s.minus, false);
                self.loop_part(cf, (xm, y - MFB_INNER), &s.minus, (x_r, y - MFB_INNER), &s.out, true);
                self.quiet.extend([s.a.clone(), s.minus.clone()]);
                self.output(s, ux, y, y - MFB_OUTER)
            }
        }
    }

    /// A part from the line down to ground (up to a positive rail), ended by its terminal.
    fn hang(&mut self, i: usize, x: f64, y: f64, node: &str) {
        let Some(p) = self.c.parts.get(i) else { return };
        let end = p.nodes.iter().find(|n| *n != node).cloned().unwrap_or_else(|| GND.to_string());
        let leg = Leg { steps: vec![Step { part: i, from: node.to_string(), to: end.clone() }], end, block: None };
        self.leg(&leg, x, y, true);
    }

    /// A feedback part in a loop above the line; the label of an `inner` loop's part goes
    /// inside it, below the part, an outer one's above.
    fn loop_part(&mut self, i: usize, a: (f64, f64), na: &str, b: (f64, f64), nb: &str, inner: bool) {
        self.two(i, a, na, b, nb, true);
        if let Some(l) = self.labels.last_mut() {
            l.below_first = inner;
        }
    }

    /// A follower: + on the line, − linked to the output by a loop below; with `cf`, the
    /// Sallen-Key feedback capacitor from the junction at `xa` in a loop above.
    fn follower(&mut self, s: &Section, ux: f64, y: f64, cf: Option<(usize, f64)>) -> f64 {
        self.opamp(s.amp, ux, y, [true, false]);
        let x_r = ux + 115.0;
        let xf = ux + 95.0;
        self.wire((xf, y + 20.0), (xf, y + BELOW), &s.out, false);
        self.wire((xf, y + BELOW), (ux - 15.0, y + BELOW), &s.out, false);
        self.wire((ux - 15.0, y + BELOW), (ux - 15.0, y + 40.0), &s.out, false);
        self.wire((ux - 15.0, y + 40.0), (ux, y + 40.0), &s.out, false);
        let top = match cf {
            Some((i, xa)) => {
                self.wire((xa, y), (xa, y - LOOP), &s.a, false);
                self.loop_part(i, (xa, y - LOOP), &s.a, (x_r, y - LOOP), &s.out, false);
                y - LOOP
            }
            None => y,
        };
        self.output(s, ux, y, top)
    }

    /// The output: apex to the output column, which runs from `top` down to the apex's
    /// level; the signal line leaves the column at `y`. Returns the column's x.
    fn output(&mut self, s: &Section, ux: f64, y: f64, top: f64) -> f64 {
        let x_r = ux + 115.0;
        self.wire((ux + 80.0, y + 20.0), (x_r, y + 20.0), &s.out, false);
        self.wire((x_r, top), (x_r, y + 20.0), &s.out, false);
        x_r
    }

    /// An inverting section's + input (at `x` + 20, `y` + 40) down to its reference.
    fn reference(&mut self, s: &Section, x: f64, y: f64) {
        let yp = y + 40.0;
        self.wire((x + 20.0, yp), (x, yp), &s.plus, false);
        match &s.reference {
            Some(block) => {
                self.wire((x, yp), (x, y + BUS), &s.plus, false);
                self.block(block, x, y + BUS, &s.plus, true);
                self.marks.push(Mark { text: s.plus.clone(), at: (x, y + BUS), up: false, colour: INK });
            }
            None => {
                self.wire((x, yp), (x, yp + 30.0), &s.plus, false);
                self.terminal((x, yp + 30.0), &s.plus, false);
            }
        }
    }

    /// The amplifier symbol with its + (`plus[0]`: upper input) and − marks; inputs at `y`
    /// and `y` + 40, output at `y` + 20.
    pub(super) fn opamp(&mut self, u: usize, ux: f64, y: f64, plus: [bool; 2]) {
        let pen = self.pen(false);
        let c = self.c;
        let Some(p) = c.parts.get(u) else { return };
        self.svg.open_group("part", &p.reference);
        self.svg.polygon(&[(ux, y - 20.0), (ux + 80.0, y + 20.0), (ux, y + 60.0)], "#ffffff", pen);
        for (yy, plus) in [(y, plus[0]), (y + 40.0, plus[1])] {
            self.svg.line((ux + 7.0, yy), (ux + 15.0, yy), pen);
            if plus {
                self.svg.line((ux + 11.0, yy - 4.0), (ux + 11.0, yy + 4.0), pen);
            }
        }
        self.svg.close_group();
        self.svg.keepout.push(BoxRect::new(ux + 3.0, y - 8.0, 16.0, 56.0));
        self.labels.push(Label {
            lines: vec![p.reference.clone(), value_text(p)],
            body: BoxRect::new(ux, y - 20.0, 80.0, 80.0),
            shape: Shape::Amp,
            colour: INK,
            below_first: false,
        });
        if let Some(d) = self.done.get_mut(u) {
            *d = true;
        }
    }

    /// Supply stubs of amplifier `u` (its symbol's left edge at `ux`), as U1 has them.
    pub(super) fn supply_pins(&mut self, u: usize, ux: f64, y: f64) {
        let Some(p) = self.c.parts.get(u) else { return };
        let (Some(vp), Some(vn)) = (p.nodes.get(2).cloned(), p.nodes.get(3).cloned()) else { return };
        self.wire((ux + 30.0, y - 5.0), (ux + 30.0, y - 40.0), &vp, false);
        self.terminal((ux + 30.0, y - 40.0), &vp, true);
        self.wire((ux + 30.0, y + 45.0), (ux + 30.0, y + 75.0), &vn, false);
        self.terminal((ux + 30.0, y + 75.0), &vn, false);
    }

    /// The pin: drive resistor along the line from `net`, the parts at the pin hanging
    /// from it; returns where the converter box begins.
    fn pin(&mut self, chain: &Chain, net: &str, x0: f64, y: f64) -> f64 {
        if let (true, Some(pin)) = (chain.short(), chain.pin.as_ref()) {
            // The walk stopped short: the line ends at a named terminal, and the converter
            // box gets its own, so no wire claims a connection the circuit does not have.
            self.wire((x0, y), (x0 + 50.0, y), net, false);
            self.terminal((x0 + 50.0, y), net, true);
            self.terminal((x0 + 130.0, y), pin, true);
            return x0 + 130.0;
        }
        let mut x = x0;
        let pin = chain.end.clone();
        if let Some(r) = chain.drive.resistor {
            self.two(r, (x, y), net, (x + HSPAN, y), &pin, true);
            x += HSPAN;
        }
        let taps: Vec<f64> = (0..chain.drive.at_pin.len()).map(|j| x + 45.0 + j as f64 * PITCH).collect();
        let last = taps.last().copied().unwrap_or(x);
        let xa = last + PIN_RUN;
        // Split at the last tap: the free run before the box is where the test point goes.
        if last > x {
            self.wire((x, y), (last, y), &pin, false);
        }
        self.wire((last, y), (xa, y), &pin, false);
        for (st, xt) in chain.drive.at_pin.iter().zip(taps) {
            let leg = Leg { steps: vec![st.clone()], end: st.to.clone(), block: None };
            self.leg(&leg, xt, y, true);
        }
        xa
    }

    /// Captions of the sections, above their loops.
    pub(super) fn captions(&mut self) {
        let fs = self.cfg.font_size - 1.0;
        for (lines, x, top) in std::mem::take(&mut self.captions) {
            let spots: Vec<(f64, f64, Anchor)> = [0.0, -8.0, -16.0]
                .iter()
                .flat_map(|dy| [(x, top + dy, Anchor::Start), (x + 20.0, top + dy, Anchor::Start)])
                .collect();
            if !self.put(&lines, &spots, fs, "#333333", "", None) {
                self.notes.push(lines.join(", "));
            }
        }
    }
}
