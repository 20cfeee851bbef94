//! The instrumentation amplifier of a differential pair or a bridge: a first stage of two
//! input amplifiers, then the difference amplifier that `diff` draws.
//!
//! Found by roles (`by_role`): the pair's bench model (as `diff` finds it); in the input
//! stage each leg's protection resistor from its terminal to the + input of that leg's
//! input amplifier, the + leg's first; either both amplifiers followers, or each − input
//! joined to its output by that leg's R_F and to the other − input by R_G; then the
//! difference stage fed from the two outputs. Without roles the same is recognised by
//! shape (`by_shape`). Anything short of that is left to the other blocks (the pair's
//! difference amplifier, or the fallback area).
//!
//! The first stage takes the first row, in the classic three-amplifier arrangement: the
//! sensor box with its legs as `diff` draws them, the lower leg as far under the upper one
//! as the stage needs; each leg's free run (its test point), its protection resistor, and
//! the + input of its amplifier, the upper amplifier with + above −, the lower one mirrored
//! (− above +), so the two − inputs face each other across the middle of the row. There a
//! column joins them: from the upper − input down to R_F's line, R_G vertical to the lower
//! R_F's line, on down to the lower − input; each R_F runs from the column to its
//! amplifier's output column (a loop under the upper amplifier, over the lower one).
//! Followers instead close a link from the output round to the − input, below the upper
//! amplifier and above the lower one. Both outputs run on (their test points) to
//! continuation flags; the difference stage starts the next row from a pair of flags, upper
//! over lower, and is drawn from its input resistors on as `diff` draws it. The stage's
//! caption is the circuit model's description of it. The lower amplifier on the same
//! supply pins as the upper one gets no stubs of its own; a note under the drawing says so.

use super::diff::{Pair, Stage, LOW};
use super::rows::ROW_GAP;
use super::sheet::{Sheet, HSPAN, X0, Y0};

/// Free run of each leg from the sensor box to its protection resistor (its test point).
const RUN: f64 = 100.0;
/// Gain variant: R_F's line under the upper amplifier's + input (clear of its supply stub),
/// the length of R_G, and the lower R_F's line over the lower amplifier's − input.
const FB_DOWN: f64 = 110.0;
const RG_SPAN: f64 = 120.0;
const FB_UP: f64 = 60.0;
/// Followers: the upper link under the + input (clear of the supply stub), the gap to the
/// lower link, and that link over the lower amplifier's − input.
const LINK_DOWN: f64 = 105.0;
const LINK_GAP: f64 = 35.0;
const LINK_UP: f64 = 45.0;
/// Each output's run from its amplifier's output column to its flag (its test point).
const OUT_RUN: f64 = 140.0;

/// The first stage, the pair it reads and the difference stage after it.
#[derive(Debug, Clone)]
pub(super) struct Inamp {
    pub(super) pair: Pair,
    /// Protection resistors (upper, lower leg) and the + inputs they feed.
    pub(super) protect: [usize; 2],
    pub(super) plus: [String; 2],
    /// The input amplifiers (upper, lower), their − inputs and their outputs.
    pub(super) amps: [usize; 2],
    pub(super) minus: [String; 2],
    pub(super) outs: [String; 2],
    /// R_F of each amplifier and R_G between the − inputs; `None` for two followers.
    pub(super) gain: Option<([usize; 2], usize)>,
    pub(super) stage: Stage,
    /// The first stage's description in the circuit model, in one or two lines.
    pub(super) caption: Vec<String>,
}

impl Sheet<'_> {
    /// The sensor and the first stage on the first row, the difference stage from a pair of
    /// flags on the next (and the follower driving its reference under that); returns where
    /// the difference stage's output line ends, as `amp_stage` does.
    pub(super) fn inamp_rows(&mut self, a: &Inamp) -> Option<(f64, f64, String)> {
        let y = Y0;
        // The lower amplifier's − input (upper pin) and + input (lower pin, the lower leg).
        let y2 = match a.gain {
            Some(_) => y + FB_DOWN + RG_SPAN + FB_UP,
            None => y + LINK_DOWN + LINK_GAP + LINK_UP,
        };
        let yl = y2 + 40.0;
        let right = self.pair_sensor(&a.pair, yl - y);
        let x_r = right + RUN;
        let x_p = x_r + HSPAN;
        let ux = x_p + 70.0;
        let (x_m, x_out, xr) = (ux - 25.0, ux + 80.0, ux + 110.0);
        if !a.caption.is_empty() {
            self.captions.push((a.caption.clone(), x_r, y - 110.0));
        }
        for (k, yy) in [y, yl].into_iter().enumerate() {
            self.wire((right, yy), (x_r, yy), &a.pair.term[k], false);
            self.two(a.protect[k], (x_r, yy), &a.pair.term[k], (x_p, yy), &a.plus[k], true);
            self.wire((x_p, yy), (ux, yy), &a.plus[k], false);
        }
        // The two − inputs and what closes each amplifier's loop.
        let (ym, ym2) = (y + 40.0, y2);
        match a.gain {
            Some((rf, rg)) => {
                let (yf1, yf2) = (y + FB_DOWN, y + FB_DOWN + RG_SPAN);
                self.wire((x_m, ym), (ux, ym), &a.minus[0], false);
                self.wire((x_m, ym), (x_m, yf1), &a.minus[0], false);
                self.two(rg, (x_m, yf1), &a.minus[0], (x_m, yf2), &a.minus[1], true);
                self.wire((x_m, yf2), (x_m, ym2), &a.minus[1], false);
                self.wire((x_m, ym2), (ux, ym2), &a.minus[1], false);
                // Each R_F's label faces the middle of the row, R_G's beside it.
                for (k, yf, below) in [(0, yf1, true), (1, yf2, false)] {
                    self.two(rf[k], (x_m, yf), &a.minus[k], (xr, yf), &a.outs[k], true);
                    if let Some(l) = self.labels.last_mut() {
                        l.below_first = below;
                    }
                }
                self.wire((xr, yf1), (xr, y + 20.0), &a.outs[0], false);
                self.wire((xr, yf2), (xr, y2 + 20.0), &a.outs[1], false);
            }
            None => {
                let (xf, xl) = (ux + 95.0, ux - 15.0);
                for (k, yo, yk, yi) in [(0, y + 20.0, y + LINK_DOWN, ym), (1, y2 + 20.0, y2 - LINK_UP, ym2)] {
                    self.wire((xf, yo), (xf, yk), &a.outs[k], false);
                    self.wire((xf, yk), (xl, yk), &a.outs[k], false);
                    self.wire((xl, yk), (xl, yi), &a.outs[k], false);
                    self.wire((xl, yi), (ux, yi), &a.outs[k], false);
                }
            }
        }
        self.opamp(a.amps[0], ux, y, [true, false]);
        self.supply_pins(a.amps[0], ux, y);
        self.opamp(a.amps[1], ux, y2, [false, true]);
        let pins =
            |u: usize| self.c.parts.get(u).and_then(|p| Some((p.nodes.get(2)?.clone(), p.nodes.get(3)?.clone())));
        match (pins(a.amps[0]), pins(a.amps[1])) {
            (Some(p), Some(q)) if p == q => {
                let (u1, u2) = (&self.c.parts[a.amps[0]].reference, &self.c.parts[a.amps[1]].reference);
                self.notes.push(format!(
                    "{u2} runs from the same supply pins as {u1} ({} and {}); its supply stubs are not drawn.",
                    p.0, p.1
                ));
            }
            _ => self.supply_pins(a.amps[1], ux, y2),
        }
        // The outputs run on to their flags; the difference stage starts the next row.
        let x_flag = xr + OUT_RUN;
        for (k, yo) in [(0, y + 20.0), (1, y2 + 20.0)] {
            self.wire((x_out, yo), (xr, yo), &a.outs[k], false);
            self.wire((xr, yo), (x_flag, yo), &a.outs[k], false);
            self.flag(x_flag, yo, &a.outs[k]);
        }
        let top = if a.stage.minus_up() { 140.0 } else { 80.0 };
        let bottom = self.svg.bounds().map(|b| b.3).unwrap_or(Y0);
        let yd = bottom + ROW_GAP + top;
        self.line = yd;
        self.row_y = yd;
        let tips = [self.flag(X0, yd, &a.outs[0]), self.flag(X0, yd + LOW, &a.outs[1])];
        self.left = tips[0].max(tips[1]);
        let x_d = self.left + 60.0;
        for (k, yy) in [yd, yd + LOW].into_iter().enumerate() {
            self.wire((tips[k], yy), (x_d, yy), &a.outs[k], false);
        }
        self.diff_stage(&a.stage, x_d, yd, yd + LOW)
    }
}

/// "instrumentation-amplifier input stage, gain 441.000 (R_G 75 Ω)" → the stage's name and
/// the rest, split at its first ", " or ": " (the model's own words); one line otherwise.
pub(super) fn caption(description: &str) -> Vec<String> {
    let cut = [", ", ": "].iter().filter_map(|s| description.find(s).map(|i| (i, s.len()))).min();
    match cut {
        Some((i, l)) => vec![description[..i].to_string(), description[i + l..].to_string()],
        None if description.is_empty() => Vec::new(),
        None => vec![description.to_string()],
    }
}

#[cfg(test)]
mod tests {
    use super::caption;

    // Source: synth::front::instrumentation::insert, the stage descriptions it writes.
    #[test]
    fn caption_splits_the_model_text() {
        assert_eq!(
            caption("instrumentation-amplifier input stage, gain 441.000 (R_G 75 Ω)"),
            ["instrumentation-amplifier input stage", "gain 441.000 (R_G 75 Ω)"]
        );
        assert_eq!(
            caption("instrumentation-amplifier input stage: two followers"),
            ["instrumentation-amplifier input stage", "two followers"]
        );
        assert!(caption("").is_empty());
    }
}
