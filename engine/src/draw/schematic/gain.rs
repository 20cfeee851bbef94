//! The sensor block, the series path, the legs and reference blocks hanging from the input
//! lines, and the amplifier stage with its feedback: the single-ended gain stage's row.

use super::blocks::{Plain, Sensor};
use super::plan::{Leg, Plan, Step};
use super::sheet::{Sheet, GREY, HSPAN, OUT_RUN, PITCH, REF_DROP, SENSOR_W, SPAN, X0, Y0};
use crate::circuit::{PartKind, GND};
use crate::draw::svg::{Anchor, BoxRect, Pen};

impl Sheet<'_> {
    /// The sensor block: the bench's model in a dashed box; returns the terminal's x.
    pub(super) fn sensor(&mut self) -> f64 {
        let plain = match self.sensor.clone() {
            Sensor::HighImpedance(h) => return self.high_impedance_sensor(&h),
            Sensor::Photodiode(d) => return self.photodiode_sensor(&d),
            Sensor::Plain(p) => p,
        };
        self.plain_sensor(&plain)
    }

    /// The ordinary sensor block: an EMF behind its resistance, or a loop's current from
    /// ground into the terminal.
    fn plain_sensor(&mut self, p: &Plain) -> f64 {
        let right = X0 + SENSOR_W;
        let y = Y0;
        if let Some((v, r, emf)) = &p.source {
            let sx = X0 + 40.0;
            self.two(*v, (sx, y), emf, (sx, y + 100.0), GND, true);
            self.terminal((sx, y + 100.0), GND, false);
            self.two(*r, (sx, y), emf, (right - 20.0, y), &p.term, true);
            self.wire((right - 20.0, y), (right, y), &p.term, true);
        } else if let Some((i, to)) = &p.current {
            let sx = X0 + 40.0;
            self.two(*i, (sx, y + 100.0), GND, (sx, y), to, true);
            self.terminal((sx, y + 100.0), GND, false);
            self.wire((sx, y), (right, y), to, true);
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
        let xa = x_out + if plan.out == self.pin { OUT_RUN } else { OUT_RUN - 60.0 };
        self.wire((x_out, yo), (xa, yo), &plan.out, false);
        Some((xa, yo, plan.out.clone()))
    }
}
