//! A small SVG writer for drawings: elements with escaped attributes and text, an estimate
//! of each text's bounding box, and a record of every text box, wire segment and symbol
//! body placed, so that placement can ask whether a spot is free and tests can check that
//! nothing overlaps.
//!
//! Output follows W3C SVG 1.1: one `<svg>` root in the SVG namespace with `width`, `height`
//! and `viewBox`, presentation attributes only — no style sheet, script or external
//! reference — so a file stands alone and prints as drawn.
//!
//! Text box estimate (no font metrics are available in the engine): 0.6 × font size per
//! character, [`WIDE_EM`] for a few wide glyphs (`Ω`, `…`, `M`, `W`, `≥`, …); 0.8 × size
//! above the baseline and 0.25 × size below it. That errs on the wide side for common
//! sans-serif faces.

use std::fmt::Write;

/// Width of an ordinary character, in units of the font size.
pub const CHAR_EM: f64 = 0.6;
/// Width of a wide glyph, in units of the font size.
pub const WIDE_EM: f64 = 0.95;

/// An axis-aligned box: where a text (or a symbol body) sits.
#[derive(Debug, Clone, PartialEq)]
pub struct BoxRect {
    pub x: f64,
    pub y: f64,
    pub w: f64,
    pub h: f64,
    /// The text it holds (empty for a symbol body).
    pub text: String,
}

/// A straight stroke: a wire of net `net`, or a symbol's outline when `net` is empty.
#[derive(Debug, Clone, PartialEq)]
pub struct Segment {
    pub x1: f64,
    pub y1: f64,
    pub x2: f64,
    pub y2: f64,
    pub net: String,
}

/// Horizontal alignment of a text at its x coordinate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Anchor {
    Start,
    Middle,
    End,
}

/// Stroke colour, stroke width and dashing of an outline.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pen {
    pub colour: &'static str,
    pub width: f64,
    pub dashed: bool,
}

/// The drawing under construction.
#[derive(Debug, Default)]
pub struct Svg {
    body: String,
    /// Every text placed.
    pub texts: Vec<BoxRect>,
    /// Every wire and recorded outline stroke.
    pub wires: Vec<Segment>,
    /// Symbol bodies and marks that text must keep clear of.
    pub keepout: Vec<BoxRect>,
}

impl BoxRect {
    pub fn new(x: f64, y: f64, w: f64, h: f64) -> BoxRect {
        BoxRect { x, y, w, h, text: String::new() }
    }

    /// The box grown by `d` on every side.
    pub fn grow(&self, d: f64) -> BoxRect {
        BoxRect { x: self.x - d, y: self.y - d, w: self.w + 2.0 * d, h: self.h + 2.0 * d, text: self.text.clone() }
    }

    /// The interiors of the two boxes share area.
    pub fn overlaps(&self, o: &BoxRect) -> bool {
        self.x < o.x + o.w && o.x < self.x + self.w && self.y < o.y + o.h && o.y < self.y + self.h
    }

    /// The segment passes through or touches the box.
    pub fn crosses(&self, s: &Segment) -> bool {
        let inside = |x: f64, y: f64| x >= self.x && x <= self.x + self.w && y >= self.y && y <= self.y + self.h;
        if inside(s.x1, s.y1) || inside(s.x2, s.y2) {
            return true;
        }
        let (x0, y0, x1, y1) = (self.x, self.y, self.x + self.w, self.y + self.h);
        [(x0, y0, x1, y0), (x1, y0, x1, y1), (x1, y1, x0, y1), (x0, y1, x0, y0)]
            .iter()
            .any(|&(a, b, c, d)| s.intersects(&Segment { x1: a, y1: b, x2: c, y2: d, net: String::new() }))
    }

    /// `(x, y)` lies strictly inside the box.
    pub fn contains(&self, x: f64, y: f64) -> bool {
        x > self.x && x < self.x + self.w && y > self.y && y < self.y + self.h
    }
}

impl Segment {
    pub fn new(a: (f64, f64), b: (f64, f64), net: &str) -> Segment {
        Segment { x1: a.0, y1: a.1, x2: b.0, y2: b.1, net: net.to_string() }
    }

    /// The closed segments share at least one point.
    pub fn intersects(&self, o: &Segment) -> bool {
        let cross =
            |ax: f64, ay: f64, bx: f64, by: f64, cx: f64, cy: f64| (bx - ax) * (cy - ay) - (by - ay) * (cx - ax);
        let eps = 1e-9;
        let d1 = cross(o.x1, o.y1, o.x2, o.y2, self.x1, self.y1);
        let d2 = cross(o.x1, o.y1, o.x2, o.y2, self.x2, self.y2);
        let d3 = cross(self.x1, self.y1, self.x2, self.y2, o.x1, o.y1);
        let d4 = cross(self.x1, self.y1, self.x2, self.y2, o.x2, o.y2);
        if ((d1 > eps && d2 < -eps) || (d1 < -eps && d2 > eps)) && ((d3 > eps && d4 < -eps) || (d3 < -eps && d4 > eps))
        {
            return true;
        }
        let on = |ax: f64, ay: f64, bx: f64, by: f64, px: f64, py: f64, d: f64| {
            d.abs() <= eps
                && px >= ax.min(bx) - eps
                && px <= ax.max(bx) + eps
                && py >= ay.min(by) - eps
                && py <= ay.max(by) + eps
        };
        on(o.x1, o.y1, o.x2, o.y2, self.x1, self.y1, d1)
            || on(o.x1, o.y1, o.x2, o.y2, self.x2, self.y2, d2)
            || on(self.x1, self.y1, self.x2, self.y2, o.x1, o.y1, d3)
            || on(self.x1, self.y1, self.x2, self.y2, o.x2, o.y2, d4)
    }

    /// `(x, y)` lies on the segment, strictly between its ends.
    fn interior(&self, x: f64, y: f64) -> bool {
        let eps = 1e-6;
        let on_line = ((self.x2 - self.x1) * (y - self.y1) - (self.y2 - self.y1) * (x - self.x1)).abs()
            <= eps * (1.0 + self.len());
        let within = x >= self.x1.min(self.x2) - eps
            && x <= self.x1.max(self.x2) + eps
            && y >= self.y1.min(self.y2) - eps
            && y <= self.y1.max(self.y2) + eps;
        on_line && within && !near((x, y), (self.x1, self.y1)) && !near((x, y), (self.x2, self.y2))
    }

    pub fn len(&self) -> f64 {
        (self.x2 - self.x1).hypot(self.y2 - self.y1)
    }
}

fn near(a: (f64, f64), b: (f64, f64)) -> bool {
    (a.0 - b.0).abs() < 1e-6 && (a.1 - b.1).abs() < 1e-6
}

/// Estimated width of `text` at font size `size`.
pub fn text_width(text: &str, size: f64) -> f64 {
    text.chars().map(|c| if "ΩMWmw…—≥≤µ%@".contains(c) { WIDE_EM } else { CHAR_EM }).sum::<f64>() * size
}

/// Estimated box of `text` with its baseline at `y` and anchored at `x`.
pub fn text_box(x: f64, y: f64, text: &str, size: f64, anchor: Anchor) -> BoxRect {
    let w = text_width(text, size);
    let left = match anchor {
        Anchor::Start => x,
        Anchor::Middle => x - w / 2.0,
        Anchor::End => x - w,
    };
    BoxRect { x: left, y: y - 0.8 * size, w, h: 1.05 * size, text: text.to_string() }
}

/// Escapes text for XML character data and attribute values; drops characters XML 1.0 does
/// not allow (control characters other than tab and newline, U+FFFE, U+FFFF).
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' | '\n' => out.push(' '),
            c if (c as u32) < 0x20 || c == '\u{FFFE}' || c == '\u{FFFF}' => {}
            c => out.push(c),
        }
    }
    out
}

/// A number for an attribute, one decimal, no "-0".
fn n(v: f64) -> String {
    let v = if v.is_finite() { (v * 10.0).round() / 10.0 } else { 0.0 };
    if v == 0.0 {
        "0".to_string()
    } else {
        format!("{v}")
    }
}

impl Pen {
    fn attrs(&self) -> String {
        let dash = if self.dashed { " stroke-dasharray=\"6 4\"" } else { "" };
        format!(
            "stroke=\"{}\" stroke-width=\"{}\" stroke-linecap=\"round\" stroke-linejoin=\"round\"{dash}",
            self.colour,
            n(self.width)
        )
    }
}

impl Svg {
    pub fn new() -> Svg {
        Svg::default()
    }

    /// A recorded stroke (a wire when `net` is not empty).
    pub fn segment(&mut self, a: (f64, f64), b: (f64, f64), net: &str, pen: Pen) {
        self.line(a, b, pen);
        self.wires.push(Segment::new(a, b, net));
    }

    /// A stroke that is not recorded (marks inside a symbol's keep-out box).
    pub fn line(&mut self, a: (f64, f64), b: (f64, f64), pen: Pen) {
        let _ = writeln!(
            self.body,
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" {}/>",
            n(a.0),
            n(a.1),
            n(b.0),
            n(b.1),
            pen.attrs()
        );
    }

    /// A closed outline whose edges are recorded as strokes.
    pub fn polygon(&mut self, pts: &[(f64, f64)], fill: &str, pen: Pen) {
        let list: Vec<String> = pts.iter().map(|p| format!("{},{}", n(p.0), n(p.1))).collect();
        let _ = writeln!(self.body, "<polygon points=\"{}\" fill=\"{}\" {}/>", list.join(" "), fill, pen.attrs());
        for (k, a) in pts.iter().enumerate() {
            let b = pts[(k + 1) % pts.len()];
            self.wires.push(Segment::new(*a, b, ""));
        }
    }

    /// A rectangle whose edges are recorded as strokes.
    pub fn rect(&mut self, x: f64, y: f64, w: f64, h: f64, fill: &str, pen: Pen) {
        self.polygon(&[(x, y), (x + w, y), (x + w, y + h), (x, y + h)], fill, pen);
    }

    /// A circle; its bounding box becomes a keep-out area.
    pub fn circle(&mut self, c: (f64, f64), r: f64, fill: &str, pen: Option<Pen>) {
        let stroke = pen.map(|p| p.attrs()).unwrap_or_else(|| "stroke=\"none\"".to_string());
        let _ = writeln!(
            self.body,
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{}\" {}/>",
            n(c.0),
            n(c.1),
            n(r),
            fill,
            stroke
        );
        self.keepout.push(BoxRect::new(c.0 - r, c.1 - r, 2.0 * r, 2.0 * r));
    }

    /// A recorded text; `weight` and `style` are fixed words ("bold", "italic") or empty.
    #[allow(clippy::too_many_arguments)]
    pub fn text(
        &mut self, x: f64, y: f64, text: &str, size: f64, anchor: Anchor, colour: &str, weight: &str, style: &str,
    ) -> BoxRect {
        let b = text_box(x, y, text, size, anchor);
        let a = match anchor {
            Anchor::Start => "start",
            Anchor::Middle => "middle",
            Anchor::End => "end",
        };
        let mut extra = String::new();
        if !weight.is_empty() {
            let _ = write!(extra, " font-weight=\"{}\"", escape(weight));
        }
        if !style.is_empty() {
            let _ = write!(extra, " font-style=\"{}\"", escape(style));
        }
        let _ = writeln!(
            self.body,
            "<text x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"{a}\" fill=\"{}\"{extra}>{}</text>",
            n(x),
            n(y),
            n(size),
            escape(colour),
            escape(text)
        );
        self.texts.push(b.clone());
        b
    }

    /// Opens a group labelled with a class and a data attribute (both escaped).
    pub fn open_group(&mut self, class: &str, data_ref: &str) {
        let _ = writeln!(self.body, "<g class=\"{}\" data-ref=\"{}\">", escape(class), escape(data_ref));
    }

    pub fn close_group(&mut self) {
        self.body.push_str("</g>\n");
    }

    /// Nothing placed so far covers or crosses `b`.
    pub fn is_free(&self, b: &BoxRect) -> bool {
        !self.texts.iter().any(|t| t.overlaps(b))
            && !self.keepout.iter().any(|k| k.overlaps(b))
            && !self.wires.iter().any(|s| b.crosses(s))
    }

    /// The segment would cross no text, keep-out area or recorded stroke.
    pub fn segment_is_free(&self, s: &Segment) -> bool {
        !self.texts.iter().chain(self.keepout.iter()).any(|t| t.crosses(s))
            && !self.wires.iter().any(|w| w.intersects(s))
    }

    /// Points where three or more wire ends of one net meet, or where a wire ends on the
    /// inside of another wire of its net: the places that need a junction dot.
    pub fn junctions(&self) -> Vec<(f64, f64)> {
        let mut out: Vec<(f64, f64)> = Vec::new();
        let wires: Vec<&Segment> = self.wires.iter().filter(|w| !w.net.is_empty()).collect();
        for w in &wires {
            for p in [(w.x1, w.y1), (w.x2, w.y2)] {
                if out.iter().any(|q| near(*q, p)) {
                    continue;
                }
                let mut count = 0;
                for o in wires.iter().filter(|o| o.net == w.net) {
                    if near((o.x1, o.y1), p) || near((o.x2, o.y2), p) {
                        count += 1;
                    } else if o.interior(p.0, p.1) {
                        count += 2;
                    }
                }
                if count >= 3 {
                    out.push(p);
                }
            }
        }
        out
    }

    /// The box around everything placed, or `None` for an empty drawing.
    pub fn bounds(&self) -> Option<(f64, f64, f64, f64)> {
        let mut b: Option<(f64, f64, f64, f64)> = None;
        let mut add = |x0: f64, y0: f64, x1: f64, y1: f64| {
            if [x0, y0, x1, y1].iter().all(|v| v.is_finite()) {
                b = Some(match b {
                    None => (x0, y0, x1, y1),
                    Some((a, c, d, e)) => (a.min(x0), c.min(y0), d.max(x1), e.max(y1)),
                });
            }
        };
        for t in self.texts.iter().chain(self.keepout.iter()) {
            add(t.x, t.y, t.x + t.w, t.y + t.h);
        }
        for s in &self.wires {
            add(s.x1.min(s.x2), s.y1.min(s.y2), s.x1.max(s.x2), s.y1.max(s.y2));
        }
        b
    }

    /// The standalone document: white background, `title` as the SVG title element.
    pub fn finish(&self, view: (f64, f64, f64, f64), title: &str, font_size: f64) -> String {
        let (x, y, w, h) = view;
        let mut s = String::new();
        let _ = writeln!(
            s,
            "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"{}\" height=\"{}\" viewBox=\"{} {} {} \
                {}\" font-family=\"DejaVu Sans, Arial, Helvetica, sans-serif\" font-size=\"{}\">",
            n(w),
            n(h),
            n(x),
            n(y),
            n(w),
            n(h),
            n(font_size)
        );
        let _ = writeln!(s, "<title>{}</title>", escape(title));
        let _ = writeln!(
            s,
            "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"#ffffff\"/>",
            n(x),
            n(y),
            n(w),
            n(h)
        );
        s.push_str(&self.body);
        s.push_str("</svg>\n");
        s
    }
}
