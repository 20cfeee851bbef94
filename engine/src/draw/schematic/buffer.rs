//! The input buffer of a high-impedance sensor, and that sensor's bench model.
//!
//! Found by the follower stage's roles (`by_role`: its amplifier, the bias resistor R_b, the
//! return divider and its bypass) or, without roles, by shape (`by_shape`). It gets the
//! first row to itself: the sensor box, the free run of the sensor line
//! (TP1), the legs hanging from that line (the bias resistor: to ground or a rail as a leg,
//! to the sensor's return node down onto the return bus), the follower with its − input
//! looped round from the output below the symbol, and the output stepping back up to the
//! line, which runs on to a continuation flag. The gain stage then starts its own row from
//! that flag. When the sensor's return is lifted off ground (a node tied to rails and
//! ground: a divider with its bypass), the return leaves the sensor box at a terminal on its
//! lower edge and runs as a bus under the row; the divider hangs from the bus right of the
//! follower, as the gain stage's reference block does (`Sheet::block`).
//!
//! The sensor model (bench, grey, [`HighZ`]): the EMF `VSENSE` from its node to the return;
//! DC coupling with `RSENSE` (source resistance) along the line and `CSENSE` (cable
//! capacitance) from the terminal to the return; AC coupling with `CSENSE` (the capacitance
//! the signal sits behind) along the line and `RSENSE` (leakage) across it in a loop below.
//! A sensor with neither a lifted return nor a `CSENSE` is left to the ordinary sensor
//! block, so it draws as before.

use super::blocks::HighZ;
use super::plan::Step;
use super::rows::ROW_GAP;
use super::sheet::{Mark, Sheet, HSPAN, INK, PITCH, REF_DROP, TP_GAP, X0, Y0};
use crate::draw::svg::{Anchor, BoxRect, Pen};

/// Width of the sensor box holding the high-impedance model.
const BOX_W: f64 = 240.0;
/// The return bus under the buffer's row.
const BUS: f64 = REF_DROP + 20.0;
/// The follower's output-to-− link below the symbol, clear of its supply stub.
const LINK: f64 = 105.0;

/// The follower and what hangs from its input.
#[derive(Debug, Clone)]
pub(super) struct Buffer {
    pub(super) amp: usize,
    /// The sensor terminal (the + input) and the follower's output.
    pub(super) input: String,
    pub(super) out: String,
    /// Parts from the input to ground, a rail, or the lifted return (the bias resistor).
    pub(super) bias: Vec<Step>,
    /// The lifted return node, and the parts from it to rails and ground.
    pub(super) ret: Option<String>,
    pub(super) reference: Vec<Step>,
}

impl Buffer {
    /// Every part the buffer's block draws.
    pub(super) fn parts(&self) -> Vec<usize> {
        let mut v = vec![self.amp];
        v.extend(self.bias.iter().map(|s| s.part));
        v.extend(self.reference.iter().map(|s| s.part));
        v
    }
}

impl Sheet<'_> {
    /// The high-impedance sensor model `h` in a wider dashed box; returns the terminal's x.
    pub(super) fn high_impedance_sensor(&mut self, h: &HighZ) -> f64 {
        let HighZ { vs, rs, series_c, shunt_c, lifted, .. } = *h;
        let (emf, ret, term) = (h.emf.as_str(), h.ret.as_str(), h.term.as_str());
        let y = Y0;
        let right = X0 + BOX_W;
        let sx = X0 + 40.0;
        let yr = y + 100.0;
        self.two(vs, (sx, y), emf, (sx, yr), ret, true);
        match series_c {
            Some(cs) => {
                // The signal behind the capacitance, the leakage across it in a loop below.
                let (xa, xb, yl) = (sx + 45.0, right - 30.0, y + 50.0);
                self.wire((sx, y), (xa, y), emf, true);
                self.two(cs, (xa, y), emf, (xb, y), term, true);
                self.wire((xa, y), (xa, yl), emf, true);
                self.two(rs, (xa, yl), emf, (xb, yl), term, true);
                if let Some(l) = self.labels.last_mut() {
                    l.below_first = true;
                }
                self.wire((xb, yl), (xb, y), term, true);
                self.wire((xb, y), (right, y), term, true);
            }
            None => {
                self.two(rs, (sx, y), emf, (sx + HSPAN, y), term, true);
                self.wire((sx + HSPAN, y), (right, y), term, true);
            }
        }
        // A shunt capacitance from the terminal down to the return, joined to the EMF's foot.
        if let Some(cp) = shunt_c.filter(|_| series_c.is_none()) {
            let cx = right - 80.0;
            self.two(cp, (cx, y), term, (cx, yr), ret, true);
            self.wire((sx, yr), (cx, yr), ret, true);
        }
        let bottom = y + 130.0;
        if lifted {
            self.wire((sx, yr), (sx, bottom), ret, true);
            self.svg.circle((sx, bottom), 3.5, "#ffffff", Some(self.pen(true)));
            self.marks.push(Mark { text: ret.to_string(), at: (sx, bottom), up: false, colour: INK });
            self.ret_at = Some(((sx, bottom), ret.to_string()));
        } else {
            self.terminal((sx, yr), ret, false);
        }
        let dashed = Pen { colour: super::sheet::GREY, width: 1.5, dashed: true };
        self.svg.rect(X0, y - 60.0, BOX_W, 190.0, "none", dashed);
        self.svg.text(
            X0 + 4.0,
            y - 66.0,
            "sensor",
            self.cfg.font_size,
            Anchor::Start,
            super::sheet::GREY,
            "",
            "italic",
        );
        self.bench_areas.push(BoxRect::new(X0, y - 60.0, BOX_W, 190.0));
        self.svg.circle((right, y), 3.5, "#ffffff", Some(self.pen(true)));
        right
    }

    /// The buffer's row from the sensor terminal at `x_term`; then starts the gain stage's
    /// row below it (its line [`ROW_GAP`] plus `top`, the room the gain stage needs above its
    /// line, below the lowest stroke so far) with a flag, and returns the flag's tip.
    pub(super) fn buffer_row(&mut self, b: &Buffer, x_term: f64, top: f64) -> f64 {
        let y = Y0;
        let yb = y + BUS;
        let xb = x_term + TP_GAP + 20.0;
        let mut x = xb;
        let mut on_bus = Vec::new();
        for st in &b.bias {
            if b.ret.as_deref() == Some(st.to.as_str()) {
                self.two(st.part, (x, y), &st.from, (x, yb), &st.to, true);
                on_bus.push(x);
            } else {
                let leg = super::plan::Leg { steps: vec![st.clone()], end: st.to.clone(), block: None };
                self.leg(&leg, x, y, true);
            }
            x += PITCH;
        }
        let ux = if b.bias.is_empty() { xb + 40.0 } else { x - PITCH + 60.0 };
        self.wire((x_term, y), (ux, y), &b.input, false);
        // The follower: + on the line, − looped round from the output below the symbol.
        self.opamp(b.amp, ux, y, [true, false]);
        self.supply_pins(b.amp, ux, y);
        let (x_r, xf) = (ux + 115.0, ux + 95.0);
        let out = b.out.clone();
        self.wire((ux + 80.0, y + 20.0), (x_r, y + 20.0), &out, false);
        self.wire((x_r, y + 20.0), (x_r, y), &out, false);
        self.wire((xf, y + 20.0), (xf, y + LINK), &out, false);
        self.wire((xf, y + LINK), (ux - 15.0, y + LINK), &out, false);
        self.wire((ux - 15.0, y + LINK), (ux - 15.0, y + 40.0), &out, false);
        self.wire((ux - 15.0, y + 40.0), (ux, y + 40.0), &out, false);
        // The lifted return: a bus from the sensor's terminal under the row, the divider and
        // its bypass hanging from it right of the follower.
        let mut end = x_r;
        if let Some(ret) = b.ret.clone() {
            let start = match self.ret_at.clone() {
                Some(((sx, sy), _)) => {
                    self.wire((sx, sy), (sx, yb), &ret, false);
                    Some(sx)
                }
                None => on_bus.first().copied(),
            };
            if !b.reference.is_empty() {
                self.block(&b.reference, x_r, yb, &ret, true);
                let (ups, downs) =
                    b.reference
                        .iter()
                        .fold((0, 0), |(u, d), s| if self.positive_rail(&s.to) { (u + 1, d) } else { (u, d + 1) });
                end = x_r + 60.0 + (ups.max(downs).max(1) - 1) as f64 * PITCH;
                if let Some(s) = start {
                    self.wire((s, yb), (x_r, yb), &ret, false);
                }
            } else if let (Some(s), Some(&last)) = (start, on_bus.last()) {
                self.wire((s, yb), (last.max(s), yb), &ret, false);
            } else if let Some(((sx, _), _)) = self.ret_at.clone() {
                self.terminal((sx, yb), &ret, false);
            }
        }
        let x_flag = (x_r + 100.0).max(end + 60.0);
        self.wire((x_r, y), (x_flag, y), &out, false);
        self.flag(x_flag, y, &out);
        self.gain_row(&out, top)
    }

    /// Starts the gain stage's row below what is drawn (its line [`ROW_GAP`] plus `top`, the
    /// room the gain stage needs above its line, below the lowest stroke so far) with a flag
    /// holding `net`, and returns the flag's tip.
    pub(super) fn gain_row(&mut self, net: &str, top: f64) -> f64 {
        let bottom = self.svg.bounds().map(|bb| bb.3).unwrap_or(Y0);
        let y0 = bottom + ROW_GAP + top;
        self.line = y0;
        self.row_y = y0;
        let tip = self.flag(X0, y0, net);
        self.left = tip;
        tip
    }
}
