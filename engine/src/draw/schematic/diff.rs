//! The difference amplifier of a differential sensor, and that sensor's bench model.
//!
//! Found by roles (`by_role`): on the bench the pair's EMF between its two legs (`VSENSE`),
//! the common-mode source under the − leg (`VCM`), each leg's impedance to its terminal
//! (`RSENSEP`, `RSENSEN`); in the difference stage its amplifier, the input resistors R1
//! and R3 (each from one line to one input), the feedback R2 and R4 from the + input to the
//! reference: ground, a rail, or the node a reference follower drives from its divider and
//! bypass. Without roles the same is recognised by shape (`by_shape`). Anything short of
//! that is left to the other blocks.
//!
//! The layout takes the first row. The sensor box holds the legs: `VSENSE` upright between
//! them, `VCM` from the lower leg to ground, the leg resistors along the two lines to the
//! terminals (the upper line from the first node of `VSENSE`, the lower from its second).
//! Each line runs through its input resistor to the amplifier input on its own side (the
//! symbol's `+` and `−` follow), so the two lines never cross. The part to the reference
//! hangs from the + line; the feedback runs from the − line to the output column: along the
//! lower line under the amplifier when − is the lower input, as a loop above it when − is
//! the upper one. A reference pin driven by a follower ends at a terminal with the node's
//! name; the follower with its divider and bypass is a small block on a row of its own under
//! the stage, ending at a terminal of the same name. The output then runs on as the
//! single-ended gain stage's does (to the filter rows, or to the converter box).
//!
//! The pair's bench model ([`Pair`]) and the stage ([`Stage`], fed from any two lines) are
//! recognised and drawn apart, so that `inamp` draws the same box in front of its first
//! stage and the same difference stage behind it, fed from that stage's outputs.

use super::plan::{Leg, Step};
use super::rows::ROW_GAP;
use super::sheet::{Sheet, GREY, HSPAN, INK, OUT_RUN, PITCH, SPAN, X0, Y0};
use crate::circuit::GND;
use crate::draw::svg::{Anchor, BoxRect, Pen};

/// Width of the sensor box, and the drop from the upper line to the lower one.
const BOX_W: f64 = 200.0;
pub(super) const LOW: f64 = 130.0;
/// Free run of each line from the sensor box to its input resistor (where its test point goes).
const RUN: f64 = 100.0;
/// Feedback loops: the step between stacked loops, and the first loop above the line.
const LOOP_STEP: f64 = 60.0;
const LOOP_UP: f64 = 90.0;
/// The follower's output-to-− link below its symbol, clear of its supply stub.
const LINK: f64 = 105.0;

/// The bench model of a differential pair: the EMF between the legs, the common-mode
/// source, the leg resistors, and the terminals the legs end at.
#[derive(Debug, Clone)]
pub(super) struct Pair {
    pub(super) vsense: usize,
    pub(super) vcm: usize,
    pub(super) leg_up: usize,
    pub(super) leg_low: usize,
    /// The two legs (upper, lower) and the terminals they end at (upper, lower).
    pub(super) emf: [String; 2],
    pub(super) term: [String; 2],
    /// A bridge's load is on the bench: the box is wider for its label.
    pub(super) wide: bool,
    /// A bridge's excitation and its load, each from the excitation node to ground.
    pub(super) bridge: Option<(usize, usize)>,
}

/// The difference amplifier and what hangs from it, fed from two lines.
#[derive(Debug, Clone)]
pub(super) struct Stage {
    /// The nodes of the two lines (upper, lower): the pair's terminals, or the outputs of an
    /// instrumentation amplifier's first stage.
    pub(super) lines: [String; 2],
    pub(super) amp: usize,
    /// The input resistors from the upper and lower line, and the inputs they feed.
    pub(super) input: [usize; 2],
    pub(super) pin_node: [String; 2],
    /// The amplifier's + and − inputs and its output.
    pub(super) inp: String,
    pub(super) inn: String,
    pub(super) out: String,
    pub(super) feedback: Vec<usize>,
    /// The part from the + input to the reference, and the reference node.
    pub(super) to_ref: usize,
    pub(super) reference: String,
    /// A follower driving the reference: amplifier, its + input and the divider there.
    pub(super) follower: Option<(usize, String, Vec<Step>)>,
}

/// A differential sensor straight into the difference amplifier.
#[derive(Debug, Clone)]
pub(super) struct Diff {
    pub(super) pair: Pair,
    pub(super) stage: Stage,
}

impl Stage {
    /// The − input is fed from the upper line (its feedback loops above the amplifier).
    pub(super) fn minus_up(&self) -> bool {
        self.pin_node[0] != self.inp
    }
}

impl Sheet<'_> {
    /// The two-leg sensor in a dashed box, the lower leg `low` under the upper one (the
    /// signal line [`Y0`]); returns the terminals' x.
    pub(super) fn pair_sensor(&mut self, d: &Pair, low: f64) -> f64 {
        let (y, yl) = (Y0, Y0 + low);
        let sx = X0 + 40.0;
        // A bridge's excitation under the pair needs room for its load's label.
        let box_w = if d.wide { BOX_W + 40.0 } else { BOX_W };
        let right = X0 + box_w;
        self.two(d.vsense, (sx, y), &d.emf[0], (sx, yl), &d.emf[1], true);
        self.two(d.vcm, (sx, yl), &d.emf[1], (sx, yl + SPAN), GND, true);
        self.terminal((sx, yl + SPAN), GND, false);
        for (k, (part, yy)) in [(d.leg_up, y), (d.leg_low, yl)].into_iter().enumerate() {
            self.two(part, (sx, yy), &d.emf[k], (sx + HSPAN, yy), &d.term[k], true);
            self.wire((sx + HSPAN, yy), (right, yy), &d.term[k], true);
        }
        // The legs' inner nodes are the bench's own (their levels are the sources' values,
        // written beside them), with no free run outside the box for a DC label.
        self.quiet.extend(d.emf.iter().cloned());
        let mut bottom = yl + SPAN + 30.0;
        // A bridge's excitation and its load on it (bench `VEXC`, `RBRIDGE` from `exc` to
        // ground), side by side under the pair model.
        let c = self.c;
        if let Some((ve, rb)) = d.bridge {
            let (ye, xr) = (bottom + 30.0, sx + HSPAN);
            let exc = c.parts[ve].nodes[0].clone();
            self.two(ve, (sx, ye), &exc, (sx, ye + SPAN), GND, true);
            self.two(rb, (xr, ye), &exc, (xr, ye + SPAN), GND, true);
            self.wire((sx, ye), (xr, ye), &exc, true);
            self.wire((sx, ye + SPAN), (xr, ye + SPAN), GND, true);
            self.terminal((sx, ye + SPAN), GND, false);
            self.quiet.push(exc);
            bottom = ye + SPAN + 30.0;
        }
        let dashed = Pen { colour: GREY, width: 1.5, dashed: true };
        self.svg.rect(X0, y - 60.0, box_w, bottom - (y - 60.0), "none", dashed);
        self.svg.text(X0 + 4.0, y - 66.0, "sensor", self.cfg.font_size, Anchor::Start, GREY, "", "italic");
        self.bench_areas.push(BoxRect::new(X0, y - 60.0, box_w, bottom - (y - 60.0)));
        for (k, yy) in [y, yl].into_iter().enumerate() {
            self.svg.circle((right, yy), 3.5, "#ffffff", Some(self.pen(true)));
            // The terminal's name inside the box, over its line: the run outside is left to
            // the terminal's test point and DC level.
            let fs = self.cfg.font_size;
            self.svg.text(right - 8.0, yy - 7.0, &d.term[k], fs, Anchor::End, INK, "", "");
        }
        right
    }

    /// The sensor, the difference amplifier and (on a row below) the follower driving its
    /// reference; returns where the output line ends (x, y, net), as `amp_stage` does.
    pub(super) fn diff_row(&mut self, d: &Diff) -> Option<(f64, f64, String)> {
        let (y, yl) = (Y0, Y0 + LOW);
        let right = self.pair_sensor(&d.pair, LOW);
        let x_r = right + RUN;
        for (k, yy) in [y, yl].into_iter().enumerate() {
            self.wire((right, yy), (x_r, yy), &d.pair.term[k], false);
        }
        self.diff_stage(&d.stage, x_r, y, yl)
    }

    /// The difference amplifier from its input resistors, which start at `x_r` on the upper
    /// line `y` and the lower line `yl` (at least [`LOW`] below it); then the follower
    /// driving its reference (a row below). Returns where the output line ends.
    pub(super) fn diff_stage(&mut self, d: &Stage, x_r: f64, y: f64, yl: f64) -> Option<(f64, f64, String)> {
        let (yo, yb) = (y + 20.0, y + 40.0);
        let x_in = x_r + HSPAN;
        for (k, yy) in [y, yl].into_iter().enumerate() {
            self.two(d.input[k], (x_r, yy), &d.lines[k], (x_in, yy), &d.pin_node[k], true);
        }
        let plus_up = d.pin_node[0] == d.inp;
        let x4 = x_in + 45.0;
        let ux = x4 + 90.0;
        let x_m = ux - 25.0;
        let (x_out, xr) = (ux + 80.0, ux + 110.0);
        let leg = Leg {
            steps: vec![Step { part: d.to_ref, from: d.inp.clone(), to: d.reference.clone() }],
            end: d.reference.clone(),
            block: None,
        };
        if plus_up {
            // + on the upper line with the reference hanging from it; − on the lower line,
            // rising to the lower input, the feedback along that line under the amplifier.
            self.wire((x_in, y), (x4, y), &d.inp, false);
            self.wire((x4, y), (ux, y), &d.inp, false);
            self.leg(&leg, x4, y, true);
            self.wire((x_in, yl), (x_m, yl), &d.inn, false);
            self.wire((x_m, yl), (x_m, yb), &d.inn, false);
            self.wire((x_m, yb), (ux, yb), &d.inn, false);
            let (mut yp, mut yq, mut xp) = (yl, yo, x_m);
            for (k, &f) in d.feedback.iter().enumerate() {
                let yk = yl + LOOP_STEP * k as f64;
                if k == 0 {
                    self.wire((x_m, yl), (ux, yl), &d.inn, false);
                    xp = ux;
                } else {
                    self.wire((xp, yp), (xp, yk), &d.inn, false);
                }
                self.two(f, (xp, yk), &d.inn, (xr, yk), &d.out, true);
                if let Some(l) = self.labels.last_mut() {
                    l.below_first = true;
                }
                self.wire((xr, yk), (xr, yq), &d.out, false);
                yp = yk;
                yq = yk;
            }
        } else {
            // − on the upper line with the feedback looping above the amplifier; + on the
            // lower line with the reference hanging from it, rising to the lower input.
            let xf = ux - 40.0;
            self.wire((x_in, y), (xf, y), &d.inn, false);
            self.wire((xf, y), (ux, y), &d.inn, false);
            let (mut yp, mut yq) = (y, yo);
            for (k, &f) in d.feedback.iter().enumerate() {
                let yk = y - LOOP_UP - LOOP_STEP * k as f64;
                self.wire((xf, yp), (xf, yk), &d.inn, false);
                self.two(f, (xf, yk), &d.inn, (xr, yk), &d.out, true);
                self.wire((xr, yk), (xr, yq), &d.out, false);
                yp = yk;
                yq = yk;
            }
            self.wire((x_in, yl), (x4, yl), &d.inp, false);
            self.wire((x4, yl), (x_m, yl), &d.inp, false);
            self.leg(&leg, x4, yl, false);
            self.wire((x_m, yl), (x_m, yb), &d.inp, false);
            self.wire((x_m, yb), (ux, yb), &d.inp, false);
        }
        if self.c.parts.get(d.amp).is_none_or(|p| p.nodes.len() < 5) {
            return None;
        }
        self.opamp(d.amp, ux, y, [plus_up, !plus_up]);
        self.supply_pins(d.amp, ux, y);
        let xa = x_out + if d.out == self.pin { OUT_RUN } else { OUT_RUN - 60.0 };
        self.wire((x_out, yo), (xa, yo), &d.out, false);
        if let Some((f, dref, divider)) = &d.follower {
            self.reference_row(*f, dref, divider, &d.reference);
        }
        Some((xa, yo, d.out.clone()))
    }

    /// The follower `f` driving node `net` from the divider on `dref`, on a row of its own
    /// under what is drawn: the divider and bypass hanging from a bus, the follower with its
    /// − input looped round from the output below the symbol, the output ending at a
    /// terminal named `net`.
    fn reference_row(&mut self, f: usize, dref: &str, divider: &[Step], net: &str) {
        let ups = divider.iter().filter(|s| self.positive_rail(&s.to)).count();
        let cols = ups.max(divider.len() - ups).max(1);
        let bottom = self.svg.bounds().map(|b| b.3).unwrap_or(Y0);
        let yr = bottom + ROW_GAP + if ups > 0 { SPAN + 40.0 } else { 60.0 };
        let x_b = X0 + 40.0 + cols as f64 * PITCH;
        self.block(divider, x_b, yr, dref, false);
        let ux = x_b + 60.0;
        self.wire((x_b, yr), (ux, yr), dref, false);
        self.opamp(f, ux, yr, [true, false]);
        self.supply_pins(f, ux, yr);
        let (xf, xt) = (ux + 95.0, ux + 190.0);
        self.wire((ux + 80.0, yr + 20.0), (xf, yr + 20.0), net, false);
        self.wire((xf, yr + 20.0), (xt, yr + 20.0), net, false);
        self.wire((xf, yr + 20.0), (xf, yr + LINK), net, false);
        self.wire((xf, yr + LINK), (ux - 15.0, yr + LINK), net, false);
        self.wire((ux - 15.0, yr + LINK), (ux - 15.0, yr + 40.0), net, false);
        self.wire((ux - 15.0, yr + 40.0), (ux, yr + 40.0), net, false);
        self.terminal((xt, yr + 20.0), net, true);
    }
}
