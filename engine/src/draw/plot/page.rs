//! The page a plot is drawn on, and what every plot draws on it: panels with their grid,
//! frame, ticks and tick labels; curves clipped to a panel; fills; texts placed only where
//! free; the tags (see [`super::legend`]) and the legend.
//!
//! Two layers. Texts, the panel frames and the tick marks go through [`Svg`], which escapes
//! every text and records its box and every stroke. Fills, grid lines, marker lines, curves
//! and histograms go into an underlay written here, since [`Svg`] has no polyline or unstroked
//! fill; the underlay is placed right after the white background, so texts and frames stay
//! on top. Curve and marker strokes are recorded too, so labels inside a panel can keep clear
//! of them. No clip paths or ids: curves are clipped here, so several plots can share one
//! HTML page.

use std::fmt::Write;

use super::axis::Axis;
use super::legend::{Legend, Sample, Tag, LEAD, SAMPLE_W};
use super::ticks::TickSet;
use super::Plot;
use crate::draw::svg::{escape, text_box, text_width, Anchor, BoxRect, Pen, Segment, Svg};
use crate::units::{format, Quantity};

pub(super) type Pt = (f64, f64);

pub(super) const INK: &str = "#000000";
pub(super) const ACCENT: &str = "#1f4e9c";
pub(super) const GREY: &str = "#777777";
/// Limits a curve must respect (the anti-alias ceiling): a dark orange that stays apart from
/// the blue curves and reads on paper.
pub(super) const WARN: &str = "#b34700";
pub(super) const GRID: &str = "#e2e2e2";
/// The accent lightened: shaded bands and histogram bars.
pub(super) const TINT: &str = "#dce5f3";
/// Outer margin of the page, px.
pub(super) const PAD: f64 = 10.0;
/// Length of a tick mark, px.
pub(super) const TICK: f64 = 5.0;
/// From a panel's bottom edge to the top of its x tick labels, px (clear of the lowest y
/// tick label).
pub(super) const XLAB: f64 = TICK + 3.5;
/// Dash patterns.
pub(super) const DASH: &str = "6 4";
pub(super) const DOT: &str = "2 3";

/// A drawing under construction.
pub(super) struct Page {
    pub svg: Svg,
    under: String,
    pub width: f64,
    pub height: f64,
    pub fs: f64,
}

/// A plotting area and its two axes.
#[derive(Debug, Clone, Copy)]
pub(super) struct Panel {
    pub x: Axis,
    pub y: Axis,
    pub left: f64,
    pub top: f64,
    pub right: f64,
    pub bottom: f64,
}

/// A value with its unit, three significant digits ("192 kHz").
pub(super) fn si(v: f64, q: Quantity) -> String {
    format(v, q)
}

/// Share as a percentage, three significant digits ("36.6 %").
pub(super) fn percent(share: f64) -> String {
    crate::units::format_percent(share)
}

/// A number for an attribute, one decimal, no "-0" (non-finite prints as 0).
pub(super) fn num(v: f64) -> String {
    let v = if v.is_finite() { (v * 10.0).round() / 10.0 } else { 0.0 };
    if v == 0.0 {
        "0".to_string()
    } else {
        format!("{v}")
    }
}

/// `text` cut to at most `max_w` px at size `size`, ending in "…" when cut.
pub(super) fn fit(text: &str, max_w: f64, size: f64) -> String {
    if text_width(text, size) <= max_w {
        return text.to_string();
    }
    let mut out = String::new();
    for c in text.chars() {
        let next = format!("{out}{c}…");
        if text_width(&next, size) > max_w {
            break;
        }
        out.push(c);
    }
    format!("{}…", out.trim_end())
}

impl Panel {
    pub fn new(x: Axis, y: Axis) -> Panel {
        Panel { x, y, left: x.p0.min(x.p1), right: x.p0.max(x.p1), top: y.p0.min(y.p1), bottom: y.p0.max(y.p1) }
    }

    pub fn px(&self, x: f64, y: f64) -> Option<Pt> {
        Some((self.x.px(x)?, self.y.px(y)?))
    }

    pub fn width(&self) -> f64 {
        self.right - self.left
    }

    pub fn height(&self) -> f64 {
        self.bottom - self.top
    }

    /// The part of the segment a–b inside the panel (Liang–Barsky), if any.
    fn clip(&self, a: Pt, b: Pt) -> Option<(Pt, Pt)> {
        let (dx, dy) = (b.0 - a.0, b.1 - a.1);
        let (mut t0, mut t1) = (0.0f64, 1.0f64);
        for (p, q) in [(-dx, a.0 - self.left), (dx, self.right - a.0), (-dy, a.1 - self.top), (dy, self.bottom - a.1)] {
            if p == 0.0 {
                if q < 0.0 {
                    return None;
                }
            } else {
                let r = q / p;
                if p < 0.0 {
                    t0 = t0.max(r);
                } else {
                    t1 = t1.min(r);
                }
            }
        }
        (t0 <= t1).then_some(((a.0 + t0 * dx, a.1 + t0 * dy), (a.0 + t1 * dx, a.1 + t1 * dy)))
    }
}

/// Height of one line of text.
pub(super) fn line_h(fs: f64) -> f64 {
    (1.4 * fs).round()
}

impl Page {
    pub fn new(width: f64, height: f64, fs: f64) -> Page {
        Page { svg: Svg::new(), under: String::new(), width, height, fs }
    }

    /// An unstroked filled rectangle in the underlay.
    pub fn fill(&mut self, x: f64, y: f64, w: f64, h: f64, colour: &str) {
        if [x, y, w, h].iter().all(|v| v.is_finite()) && w > 0.0 && h > 0.0 {
            let _ = writeln!(
                self.under,
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{colour}\"/>",
                num(x),
                num(y),
                num(w),
                num(h)
            );
        }
    }

    /// A line in the underlay; recorded as a stroke of `net` unless `net` is empty.
    pub fn stroke(&mut self, a: Pt, b: Pt, colour: &str, width: f64, dash: &str, net: &str) {
        if ![a.0, a.1, b.0, b.1].iter().all(|v| v.is_finite()) {
            return;
        }
        let _ = writeln!(
            self.under,
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{colour}\" stroke-width=\"{}\"{}/>",
            num(a.0),
            num(a.1),
            num(b.0),
            num(b.1),
            num(width),
            dash_attr(dash)
        );
        if !net.is_empty() {
            self.svg.wires.push(Segment::new(a, b, net));
        }
    }

    /// A polyline in the underlay through pixel points, every segment recorded under `net`.
    pub fn polyline(&mut self, pts: &[Pt], colour: &str, width: f64, dash: &str, net: &str) {
        if pts.len() < 2 {
            return;
        }
        let list: Vec<String> = pts.iter().map(|p| format!("{},{}", num(p.0), num(p.1))).collect();
        let _ = writeln!(
            self.under,
            "<polyline points=\"{}\" fill=\"none\" stroke=\"{colour}\" stroke-width=\"{}\" stroke-linejoin=\"round\" stroke-linecap=\"round\"{}/>",
            list.join(" "),
            num(width),
            dash_attr(dash)
        );
        for w in pts.windows(2) {
            self.svg.wires.push(Segment::new(w[0], w[1], net));
        }
    }

    /// A filled, outlined polygon in the underlay; its edges recorded under `net`.
    pub fn shape(&mut self, pts: &[Pt], fill: &str, edge: &str, width: f64, net: &str) {
        if pts.len() < 3 {
            return;
        }
        let list: Vec<String> = pts.iter().map(|p| format!("{},{}", num(p.0), num(p.1))).collect();
        let _ = writeln!(
            self.under,
            "<polygon points=\"{}\" fill=\"{fill}\" stroke=\"{edge}\" stroke-width=\"{}\" stroke-linejoin=\"round\"/>",
            list.join(" "),
            num(width)
        );
        for (k, a) in pts.iter().enumerate() {
            self.svg.wires.push(Segment::new(*a, pts[(k + 1) % pts.len()], net));
        }
    }

    /// `data` (in axis values) as a curve clipped to `p`; points the scales cannot show
    /// break the curve.
    pub fn curve(&mut self, p: &Panel, data: &[(f64, f64)], colour: &str, width: f64, dash: &str, net: &str) {
        let mut run: Vec<Pt> = Vec::new();
        let mut prev: Option<Pt> = None;
        for &(x, y) in data {
            // Far-off points are pulled in to a million px: clipping stays finite, and the
            // visible part of a segment keeps its slope to well under a pixel.
            let Some(q) = p.px(x, y).map(|q| (q.0.clamp(-1e6, 1e6), q.1.clamp(-1e6, 1e6))) else {
                self.flush(&mut run, colour, width, dash, net);
                prev = None;
                continue;
            };
            if let Some(a) = prev {
                match p.clip(a, q) {
                    Some((c, d)) => {
                        let joined = run.last().is_some_and(|l| (l.0 - c.0).abs() < 1e-6 && (l.1 - c.1).abs() < 1e-6);
                        if !joined {
                            self.flush(&mut run, colour, width, dash, net);
                            run.push(c);
                        }
                        run.push(d);
                    }
                    None => self.flush(&mut run, colour, width, dash, net),
                }
            }
            prev = Some(q);
        }
        self.flush(&mut run, colour, width, dash, net);
    }

    fn flush(&mut self, run: &mut Vec<Pt>, colour: &str, width: f64, dash: &str, net: &str) {
        let pts = simplify(run);
        self.polyline(&pts, colour, width, dash, net);
        run.clear();
    }

    /// A text, always placed.
    pub fn text(&mut self, x: f64, y: f64, text: &str, anchor: Anchor, colour: &str, bold: bool) -> BoxRect {
        let fs = self.fs;
        self.svg.text(x, y, text, fs, anchor, colour, if bold { "bold" } else { "" }, "")
    }

    /// A text placed only where it fits the page and overlaps no text placed so far.
    pub fn text_if_free(&mut self, x: f64, y: f64, text: &str, anchor: Anchor, colour: &str) -> bool {
        let b = text_box(x, y, text, self.fs, anchor);
        if self.fits(&b) && !self.svg.texts.iter().any(|t| t.overlaps(&b)) {
            self.text(x, y, text, anchor, colour, false);
            true
        } else {
            false
        }
    }

    /// Like [`Page::text_if_free`], and also crossing no recorded stroke (curves, frames).
    pub fn label_if_clear(&mut self, x: f64, y: f64, text: &str, anchor: Anchor, colour: &str) -> bool {
        let b = text_box(x, y, text, self.fs, anchor);
        if self.fits(&b) && self.svg.is_free(&b.grow(2.0)) {
            self.text(x, y, text, anchor, colour, false);
            true
        } else {
            false
        }
    }

    pub fn fits(&self, b: &BoxRect) -> bool {
        b.x >= 0.0 && b.y >= 0.0 && b.x + b.w <= self.width && b.y + b.h <= self.height
    }

    /// A text read bottom to top, centred on `(x, y)` with its baseline on x; its box is
    /// recorded like any other.
    pub fn vertical_text(&mut self, x: f64, y: f64, text: &str, colour: &str) {
        let fs = self.fs;
        let w = text_width(text, fs);
        let _ = writeln!(
            self.under,
            "<text x=\"{0}\" y=\"{1}\" transform=\"rotate(-90 {0} {1})\" font-size=\"{2}\" text-anchor=\"middle\" fill=\"{colour}\">{3}</text>",
            num(x),
            num(y),
            num(fs),
            escape(text)
        );
        self.svg.texts.push(BoxRect { x: x - 0.8 * fs, y: y - w / 2.0, w: 1.05 * fs, h: w, text: text.to_string() });
    }

    /// Grid, frame, ticks and tick labels of a panel. Labels of `xt` go under the panel when
    /// `x_labels`, those of `yt` left of it when `y_labels`; a label that would overlap a
    /// text already placed is left out.
    pub fn panel(&mut self, p: &Panel, xt: &TickSet, yt: &TickSet, x_labels: bool, y_labels: bool) {
        let fs = self.fs;
        for (v, _) in &xt.major {
            if let Some(x) = p.x.px(*v).filter(|_| p.x.contains(*v)) {
                self.stroke((x, p.top), (x, p.bottom), GRID, 1.0, "", "");
            }
        }
        for (v, _) in &yt.major {
            if let Some(y) = p.y.px(*v).filter(|_| p.y.contains(*v)) {
                self.stroke((p.left, y), (p.right, y), GRID, 1.0, "", "");
            }
        }
        let pen = Pen { colour: INK, width: 1.0, dashed: false };
        let (l, t, r, b) = (p.left, p.top, p.right, p.bottom);
        for (a, c) in [((l, t), (r, t)), ((r, t), (r, b)), ((r, b), (l, b)), ((l, b), (l, t))] {
            self.svg.segment(a, c, "frame", pen);
        }
        let minor = Pen { colour: INK, width: 0.8, dashed: false };
        for v in &xt.minor {
            if let Some(x) = p.x.px(*v).filter(|_| p.x.contains(*v)) {
                self.svg.line((x, b), (x, b + 0.6 * TICK), minor);
            }
        }
        for v in &yt.minor {
            if let Some(y) = p.y.px(*v).filter(|_| p.y.contains(*v)) {
                self.svg.line((l - 0.6 * TICK, y), (l, y), minor);
            }
        }
        for (v, label) in &xt.major {
            let Some(x) = p.x.px(*v).filter(|_| p.x.contains(*v)) else { continue };
            self.svg.line((x, b), (x, b + TICK), pen);
            if let (true, Some(label)) = (x_labels, label) {
                self.text_if_free(x, b + XLAB + 0.8 * fs, label, Anchor::Middle, INK);
            }
        }
        for (v, label) in &yt.major {
            let Some(y) = p.y.px(*v).filter(|_| p.y.contains(*v)) else { continue };
            self.svg.line((l - TICK, y), (l, y), pen);
            if let (true, Some(label)) = (y_labels, label) {
                self.text_if_free(l - TICK - 3.0, y + 0.35 * fs, label, Anchor::End, INK);
            }
        }
    }

    /// Tags centred at `centres` (from [`spread`]) in the strip whose bottom is `panel_top`,
    /// each with a leader to its marker's top when it has one.
    pub fn tags(&mut self, tags: &[Tag], centres: &[Option<f64>], panel_top: f64, colour: &str) {
        let fs = self.fs;
        let base = panel_top - LEAD - 0.3 * fs;
        for (t, c) in tags.iter().zip(centres) {
            let Some(c) = c else { continue };
            if self.text_if_free(*c, base, &t.text, Anchor::Middle, colour) && t.leader {
                self.stroke((*c, base + 0.3 * fs), (t.x, panel_top), GREY, 0.8, "", "");
            }
        }
    }

    /// The legend lines, the first baseline at `top + 0.8 fs`.
    pub fn legend(&mut self, legend: &Legend, top: f64) {
        let fs = self.fs;
        let lh = line_h(fs);
        for (i, line) in legend.lines.iter().enumerate() {
            let base = top + i as f64 * lh + 0.8 * fs;
            let mid = base - 0.33 * fs;
            for (x, sample, text) in line {
                let tx = x + SAMPLE_W + 6.0;
                match *sample {
                    Sample::Line { colour, width, dash } => {
                        self.stroke((*x, mid), (x + SAMPLE_W, mid), colour, width, dash, "")
                    }
                    Sample::Fill { colour, edge } => {
                        let (y0, h) = (mid - 0.4 * fs, 0.8 * fs);
                        self.fill(*x, y0, SAMPLE_W, h, colour);
                        if edge != "none" {
                            self.stroke((*x, y0), (x + SAMPLE_W, y0), edge, 1.0, "", "");
                        }
                    }
                    Sample::Bracket => {
                        self.stroke((*x, mid), (x + SAMPLE_W, mid), INK, 1.2, "", "");
                        self.stroke((*x, mid - 4.0), (*x, mid + 4.0), INK, 1.2, "", "");
                        self.stroke((x + SAMPLE_W, mid - 4.0), (x + SAMPLE_W, mid + 4.0), INK, 1.2, "", "");
                    }
                    Sample::None => {}
                }
                self.text(tx, base, text, Anchor::Start, INK, false);
            }
        }
    }

    /// A note centred in a panel (no data to draw, and why).
    pub fn note(&mut self, p: &Panel, text: &str) {
        let t = fit(text, p.width() - 8.0, self.fs);
        self.text_if_free(0.5 * (p.left + p.right), 0.5 * (p.top + p.bottom), &t, Anchor::Middle, GREY);
    }

    /// The standalone document and its records.
    pub fn finish(self, title: &str) -> Plot {
        let doc = self.svg.finish((0.0, 0.0, self.width, self.height), title, self.fs);
        // The underlay goes right after the white background (the first element closing
        // with this fill; the title before it is escaped, so it cannot hold a quote).
        let key = "fill=\"#ffffff\"/>\n";
        let svg = match doc.find(key) {
            Some(i) => format!("{}{}{}", &doc[..i + key.len()], self.under, &doc[i + key.len()..]),
            None => doc,
        };
        Plot { svg, texts: self.svg.texts, wires: self.svg.wires }
    }
}

/// The vertices of `run` a drawing needs: a point is dropped when every point between the
/// last vertex kept and the next one lies within 0.2 px of the chord joining them (at most
/// 64 points are merged into one chord).
fn simplify(run: &[Pt]) -> Vec<Pt> {
    let Some(&first) = run.first() else { return Vec::new() };
    let mut out = vec![first];
    let mut anchor = 0;
    let off = |a: Pt, b: Pt, p: Pt| {
        let len = (b.0 - a.0).hypot(b.1 - a.1);
        if len < 1e-9 {
            (p.0 - a.0).hypot(p.1 - a.1)
        } else {
            ((b.0 - a.0) * (p.1 - a.1) - (b.1 - a.1) * (p.0 - a.0)).abs() / len
        }
    };
    for k in 2..run.len() {
        let chord_ok = k - anchor <= 64 && (anchor + 1..k).all(|m| off(run[anchor], run[k], run[m]) <= 0.2);
        if !chord_ok {
            out.push(run[k - 1]);
            anchor = k - 1;
        }
    }
    if run.len() > 1 {
        out.push(run[run.len() - 1]);
    }
    out
}

fn dash_attr(dash: &str) -> String {
    if dash.is_empty() {
        String::new()
    } else {
        format!(" stroke-dasharray=\"{dash}\"")
    }
}
