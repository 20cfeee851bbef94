//! The transimpedance stage of a photodiode, and the photodiode's bench model.
//!
//! Found by the transimpedance stage's roles (`by_role`: its amplifier, whose − input is the
//! sensor terminal, the diode's cathode; R_f and C_f from the output back to it; the bias
//! divider and its bypass at the + input, which is otherwise at ground or a rail) or,
//! without roles, by shape (`by_shape`). It gets the first
//! row to itself, as a high-impedance sensor's follower does (`buffer`): the sensor box, the
//! free run of the sensor line (TP1) into the − input on the signal line, R_f and C_f as
//! parallel loops above the amplifier from a tap on that line to the output column, the +
//! input dropping to ground (or a rail) or to a bus carrying the bias divider and its bypass
//! (the reference block, `Sheet::block`, hanging leftward under the line), the output
//! running on to a continuation flag. The gain stage then starts its own row from that flag.
//!
//! The sensor model (bench, grey): each current source from the terminal to ground (the
//! photocurrent `ISENSE`, the dark current `IDARK` beside it), drawn with its arrow the way
//! the current leaves the terminal, and the junction capacitance `CSENSE` from the terminal
//! to ground; their feet share one ground.

use super::blocks::Diode;
use super::plan::Step;
use super::sheet::{Sheet, GREY, PITCH, REF_DROP, TP_GAP, X0, Y0};
use crate::circuit::GND;
use crate::draw::svg::{Anchor, BoxRect, Pen};

/// Spacing of the sensor model's columns (a source's arrow left of it, its label right),
/// and the box's margin right of the last one (that one's label).
const COL: f64 = 115.0;
const MARGIN: f64 = 90.0;
/// Feedback loops above the line: the first, and the step between them.
const LOOP: f64 = 90.0;
const LOOP_STEP: f64 = 60.0;

/// The transimpedance amplifier and what hangs from it.
#[derive(Debug, Clone)]
pub(super) struct Tia {
    pub(super) amp: usize,
    /// The − input (the sensor terminal), the + input and the output.
    pub(super) input: String,
    pub(super) plus: String,
    pub(super) out: String,
    /// Parts from the output back to the − input (R_f, C_f).
    pub(super) feedback: Vec<usize>,
    /// Parts from the + input's bias node to rails and ground (divider legs, bypass).
    pub(super) bias: Vec<Step>,
    /// The sensor's current enters the − input.
    pub(super) fed: bool,
}

impl Tia {
    /// Every part the stage's block draws.
    pub(super) fn parts(&self) -> Vec<usize> {
        let mut v = vec![self.amp];
        v.extend(&self.feedback);
        v.extend(self.bias.iter().map(|s| s.part));
        v
    }
}

impl Sheet<'_> {
    /// The photodiode model `d` in a dashed box: its current sources and capacitance in
    /// columns from the terminal to ground; returns the terminal's x.
    pub(super) fn photodiode_sensor(&mut self, d: &Diode) -> f64 {
        let (cols, term) = (&d.cols, &d.term);
        let y = Y0;
        let yg = y + 100.0;
        let sx = X0 + 55.0;
        let last = sx + (cols.len().max(1) - 1) as f64 * COL;
        let box_w = last + MARGIN - X0;
        let right = X0 + box_w;
        for (k, &i) in cols.iter().enumerate() {
            let x = sx + k as f64 * COL;
            self.two(i, (x, y), term, (x, yg), GND, true);
        }
        self.wire((sx, y), (right, y), term, true);
        if last > sx {
            self.wire((sx, yg), (last, yg), GND, true);
        }
        self.terminal((sx, yg), GND, false);
        let dashed = Pen { colour: GREY, width: 1.5, dashed: true };
        self.svg.rect(X0, y - 60.0, box_w, 190.0, "none", dashed);
        self.svg.text(X0 + 4.0, y - 66.0, "sensor", self.cfg.font_size, Anchor::Start, GREY, "", "italic");
        self.bench_areas.push(BoxRect::new(X0, y - 60.0, box_w, 190.0));
        self.svg.circle((right, y), 3.5, "#ffffff", Some(self.pen(true)));
        right
    }

    /// The transimpedance row from the sensor terminal at `x_term`; then starts the gain
    /// stage's row below it (see [`Sheet::gain_row`]) and returns the flag's tip.
    pub(super) fn tia_row(&mut self, t: &Tia, x_term: f64, top: f64) -> f64 {
        let y = Y0;
        let (yb, yo) = (y + 40.0, y + 20.0);
        let (ups, downs) =
            t.bias.iter().fold((0, 0), |(u, d), s| if self.positive_rail(&s.to) { (u + 1, d) } else { (u, d + 1) });
        let cols = ups.max(downs);
        // The bias block hangs leftward from the + input's drop: clear of the sensor box.
        let ux = (x_term + TP_GAP + 100.0).max(x_term + 55.0 + cols as f64 * PITCH);
        let xf = ux - 40.0;
        // − input on the signal line, from the sensor terminal; when the sensor's current
        // goes elsewhere, the line starts at a terminal with the input's name instead, so no
        // wire claims a connection the circuit does not have.
        if t.fed {
            self.wire((x_term, y), (xf, y), &t.input, false);
        } else {
            let xs = x_term + 50.0;
            self.terminal((xs, y), &t.input, true);
            self.wire((xs, y), (xf, y), &t.input, false);
        }
        self.wire((xf, y), (ux, y), &t.input, false);
        // + input: to ground or a rail, or down to the bias block.
        let xd = ux - 20.0;
        self.wire((xd, yb), (ux, yb), &t.plus, false);
        if t.bias.is_empty() {
            self.wire((xd, yb), (xd, yb + 20.0), &t.plus, false);
            self.terminal((xd, yb + 20.0), &t.plus, false);
        } else {
            let yr = y + REF_DROP;
            self.wire((xd, yb), (xd, yr), &t.plus, false);
            self.block(&t.bias, xd, yr, &t.plus, false);
        }
        // R_f and C_f: parallel loops above the amplifier, from the tap to the output column.
        let x_out = ux + 80.0;
        let xr = x_out + 30.0;
        let (mut yl, mut yr) = (y, yo);
        for (k, &i) in t.feedback.iter().enumerate() {
            let yk = y - LOOP - LOOP_STEP * k as f64;
            self.wire((xf, yl), (xf, yk), &t.input, false);
            self.two(i, (xf, yk), &t.input, (xr, yk), &t.out, true);
            self.wire((xr, yk), (xr, yr), &t.out, false);
            yl = yk;
            yr = yk;
        }
        self.opamp(t.amp, ux, y, [false, true]);
        self.supply_pins(t.amp, ux, y);
        let x_flag = xr + 90.0;
        self.wire((x_out, yo), (x_flag, yo), &t.out, false);
        self.flag(x_flag, yo, &t.out);
        self.gain_row(&t.out.clone(), top)
    }
}
