//! Layout shared by the four plots, each laid out in the same order: title; tag strip;
//! panel(s); tick labels and the x-axis title; legend. Geometry comes first (the left margin
//! depends on the widest y tick label, which depends on the panel height), then drawing:
//! mandatory texts, fills, grid and frames, markers, data, tags.

use super::legend::{Legend, LEAD};
use super::page::{fit, line_h, Page, INK, PAD, TICK, XLAB};
use crate::draw::svg::{text_width, Anchor};

/// Light grey of the headroom bands.
pub(super) const HEADROOM: &str = "#e5e5e5";
/// Least distance between labelled ticks up a y axis, in font sizes.
pub(super) const Y_SPACING: f64 = 1.8;

/// Smallest panel height, px; the page grows rather than squeeze a panel below it.
pub(super) fn min_panel_h(fs: f64) -> f64 {
    (4.5 * fs).max(56.0)
}

/// Vertical bookkeeping shared by the plots.
pub(super) struct Rows {
    pub(super) fs: f64,
}

impl Rows {
    /// Baseline of the title and the top of what follows it.
    pub(super) fn title(&self) -> (f64, f64) {
        let ts = self.fs + 1.0;
        (PAD + 0.8 * ts, PAD + line_h(ts) + 2.0)
    }

    /// Height of the tag strip: one row and room for the leaders, when there are tags.
    pub(super) fn strip(&self, any: bool) -> f64 {
        if any {
            line_h(self.fs) + LEAD
        } else {
            0.0
        }
    }

    /// From a panel's bottom: the tick labels, the x-axis title and the legend.
    pub(super) fn below(&self, legend: &Legend) -> f64 {
        XLAB + 2.0 * line_h(self.fs) + 4.0 + legend.height(self.fs) + PAD
    }

    pub(super) fn xtitle_base(&self, bottom: f64) -> f64 {
        bottom + XLAB + line_h(self.fs) + 0.8 * self.fs + 1.0
    }

    pub(super) fn legend_top(&self, bottom: f64) -> f64 {
        bottom + XLAB + 2.0 * line_h(self.fs) + 4.0
    }
}

/// Left edge of a panel whose y tick labels are at most `label_w` wide (rotated y title,
/// gap, labels, tick).
pub(super) fn left_edge(fs: f64, label_w: f64) -> f64 {
    PAD + 1.05 * fs + 6.0 + label_w + TICK + 3.0
}

/// Right edge of the panels: room for half of the last x tick label.
pub(super) fn right_edge(width: f64, fs: f64) -> f64 {
    width - PAD - 2.4 * fs
}

/// The page width that leaves `need` px between a panel's left edge `left` and the right
/// edge: `width` itself when it does.
pub(super) fn widen(width: f64, left: f64, need: f64, fs: f64) -> f64 {
    width.max((left + need + (width - right_edge(width, fs))).ceil())
}

/// Narrowest panel, px: the page grows rather than squeeze one below it.
pub(super) fn min_panel_w(fs: f64) -> f64 {
    12.0 * fs
}

/// The title as shown — "name — what", the name cut to leave room for what the plot is —
/// and in full, for the document's title element.
pub(super) fn title(name: &str, what: &str, width: f64, fs: f64) -> (String, String) {
    let full = if name.trim().is_empty() { what.to_string() } else { format!("{} — {what}", name.trim()) };
    (shown_title(name, what, width, fs), full)
}

fn shown_title(name: &str, what: &str, width: f64, fs: f64) -> String {
    let size = fs + 1.0;
    let avail = width - 2.0 * PAD;
    let name = name.trim();
    if name.is_empty() {
        let mut w = what.to_string();
        if let Some(c) = w.get(..1) {
            w = format!("{}{}", c.to_ascii_uppercase(), w.get(1..).unwrap_or(""));
        }
        return fit(&w, avail, size);
    }
    let tail = format!(" — {what}");
    let room = avail - text_width(&tail, size);
    if room >= 8.0 * size {
        format!("{}{}", fit(name, room, size), tail)
    } else {
        fit(&format!("{name}{tail}"), avail, size)
    }
}

pub(super) fn draw_title(page: &mut Page, text: &str) {
    let fs = page.fs;
    let (base, _) = Rows { fs }.title();
    page.svg.text(PAD, base, text, fs + 1.0, Anchor::Start, INK, "bold", "");
}

/// The finite `(x, y)` pairs.
pub(super) fn finite(pts: impl Iterator<Item = (f64, f64)>) -> Vec<(f64, f64)> {
    pts.filter(|(x, y)| x.is_finite() && y.is_finite()).collect()
}

/// Least and greatest of the finite values, if any.
pub(super) fn extent(vals: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    vals.filter(|v| v.is_finite()).fold(None, |acc, v| match acc {
        None => Some((v, v)),
        Some((a, b)) => Some((a.min(v), b.max(v))),
    })
}

/// `y` at `x` on the curve through `pts` (sorted by x), linear in x (or in log x).
pub(super) fn interpolate(pts: &[(f64, f64)], x: f64, log_x: bool) -> Option<f64> {
    let t = |v: f64| if log_x { v.ln() } else { v };
    pts.windows(2).find(|w| (w[0].0 <= x && x <= w[1].0) || (w[1].0 <= x && x <= w[0].0)).map(|w| {
        let d = t(w[1].0) - t(w[0].0);
        if d.abs() < 1e-300 {
            w[0].1
        } else {
            w[0].1 + (w[1].1 - w[0].1) * (t(x) - t(w[0].0)) / d
        }
    })
}
