//! The tolerance spread: the Monte Carlo histograms of the output at the sensor's min and
//! max, each beside the converter and headroom limits near it, with the worst case.

use super::axis::{bounds_for, usable_range, Axis, Scale};
use super::layout::{
    draw_title, left_edge, min_panel_h, min_panel_w, right_edge, title, widen, Rows, HEADROOM, Y_SPACING,
};
use super::legend::{spread, Legend, Sample, Tag};
use super::page::{fit, line_h, percent, si, Page, Panel, ACCENT, DASH, GREY, INK, PAD, TINT, WARN};
use super::ticks::{TickSet, Unit};
use super::{Plot, PlotConfig};
use crate::analysis::tolerance::Histogram;
use crate::analysis::Analysis;
use crate::design::Design;
use crate::draw::svg::{text_width, Anchor};
use crate::units::Quantity;

/// One histogram panel's data: the histogram, what it is, and the limits near it.
struct Side<'a> {
    h: &'a Histogram,
    what: String,
    worst: [f64; 2],
    lo: f64,
    hi: f64,
    /// Limits inside the panel: (value, tag, is converter limit).
    inside: Vec<(f64, &'static str, bool)>,
    /// The converter limit off the panel's scale, if none is on it: (value, name, to the right).
    outside: Vec<(f64, &'static str, bool)>,
}

pub(super) fn draw(d: &Design, a: &Analysis, cfg: &PlotConfig) -> Plot {
    let (mut w, fs) = (cfg.width, cfg.font_size);
    let rows = Rows { fs };
    let s = &d.request.source;
    let dst = &d.request.destination;
    let mc = &a.tolerance.monte_carlo;
    let wc = &a.tolerance.worst_case;
    let span = dst.max - dst.min;
    let head = dst.headroom * span;
    let v = |x: f64| si(x, Quantity::Voltage);
    let limits: [(f64, &'static str, bool); 4] = [
        (dst.min, "converter min", true),
        (dst.max, "converter max", true),
        (dst.min + head, "headroom", false),
        (dst.max - head, "headroom", false),
    ];

    let mut sides = [
        make_side(&mc.histograms.output_at_min, format!("at sensor min ({})", v(s.min)), wc.output_at_min, &limits),
        make_side(&mc.histograms.output_at_max, format!("at sensor max ({})", v(s.max)), wc.output_at_max, &limits),
    ];
    // Lower outputs on the left, as on the converter's range.
    if sides[0].lo > sides[1].lo {
        sides.swap(0, 1);
    }
    let most = sides.iter().flat_map(|sd| sd.h.counts.iter()).copied().max().unwrap_or(0) as f64;
    let c_top = (most * 1.18).max(1.0);
    let runs = mc.runs;
    let has_worst = sides.iter().any(|sd| sd.worst.iter().all(|v| v.is_finite()));

    let mut items: Vec<(Sample, String)> = Vec::new();
    let bin_w: Vec<String> = sides
        .iter()
        .filter(|sd| !sd.h.counts.is_empty() && sd.h.hi > sd.h.lo)
        .map(|sd| v((sd.h.hi - sd.h.lo) / sd.h.counts.len() as f64))
        .collect();
    items.push((
        Sample::Fill { colour: TINT, edge: ACCENT },
        format!("builds per bin (bins {} wide)", if bin_w.is_empty() { "—".to_string() } else { bin_w.join(" and ") }),
    ));
    items.push((
        Sample::Line { colour: INK, width: 1.6, dash: "" },
        format!("converter limit ({} … {})", v(dst.min), v(dst.max)),
    ));
    if head > 0.0 {
        items.push((
            Sample::Fill { colour: HEADROOM, edge: "none" },
            format!("headroom band, {} of the range", percent(dst.headroom)),
        ));
        items.push((
            Sample::Line { colour: GREY, width: 1.2, dash: DASH },
            format!("headroom limit ({} and {})", v(dst.min + head), v(dst.max - head)),
        ));
    }
    if has_worst {
        items.push((Sample::Bracket, "worst case over the tolerance box".to_string()));
    }
    let held = [&mc.histograms.output_at_min, &mc.histograms.output_at_max].map(|h| h.clipped);
    if held.iter().any(|&n| n > 0) {
        items.push((
            Sample::Fill { colour: WARN, edge: WARN },
            format!(
                "held at the amplifier's swing limit, not in the bars (failures): {} at sensor min, {} at sensor max",
                held[0], held[1]
            ),
        ));
    }

    let mut label_w = text_width("10000", fs);
    let gap = (2.5 * fs).round();
    let mut geo = None;
    for _ in 0..2 {
        let left = left_edge(fs, label_w);
        w = widen(w, left, 2.0 * min_panel_w(fs) + gap, fs);
        let right = right_edge(w, fs);
        let pw = (right - left - gap) / 2.0;
        let xs = [(left, left + pw), (left + pw + gap, left + 2.0 * pw + gap)];
        let axes: Vec<Axis> =
            sides.iter().zip(xs).map(|(sd, (l, r))| Axis::new(Scale::Linear, sd.lo, sd.hi, l, r)).collect();
        let mut tags: Vec<Vec<Tag>> = Vec::new();
        let mut placed: Vec<Vec<Option<f64>>> = Vec::new();
        for (sd, ax) in sides.iter().zip(&axes) {
            let mut t = Vec::new();
            for &(val, name, conv) in &sd.inside {
                if let Some(x) = ax.px(val) {
                    t.push(Tag {
                        x,
                        text: if conv { format!("{name} {}", v(val)) } else { name.to_string() },
                        leader: true,
                        edge: 0,
                    });
                }
            }
            for &(val, name, right_side) in &sd.outside {
                let text = if right_side { format!("{name} {} →", v(val)) } else { format!("← {name} {}", v(val)) };
                let half = 0.5 * text_width(&text, fs);
                let x = if right_side { ax.p1 - half } else { ax.p0 + half };
                t.push(Tag { x, text, leader: false, edge: if right_side { 1 } else { -1 } });
            }
            placed.push(spread(&t, ax.p0.min(ax.p1), ax.p0.max(ax.p1), fs));
            tags.push(t);
        }
        let strip_rows = placed.iter().flatten().any(Option::is_some);
        let legend = Legend::flow(&items, PAD, w - PAD, fs);
        let heading = line_h(fs);
        let top = rows.title().1 + heading + rows.strip(strip_rows);
        let below = rows.below(&legend);
        let h = (cfg.height - top - below).max(min_panel_h(fs)).floor();
        let height = (top + h + below).max(cfg.height);
        let (_, c1) = bounds_for(0.0, c_top, h, Y_SPACING * fs, false);
        let panels: Vec<Panel> =
            axes.iter().map(|ax| Panel::new(*ax, Axis::new(Scale::Linear, 0.0, c1, top + h, top))).collect();
        let yt = TickSet::linear(&panels[0].y, Unit::Plain(""), Y_SPACING * fs, fs, false, false);
        let need = yt.label_width(fs);
        let done = need <= label_w + 0.5;
        label_w = label_w.max(need);
        geo = Some((panels, yt, tags, placed, legend, height, top - rows.strip(strip_rows)));
        if done {
            break;
        }
    }
    let Some((panels, yt, tags, placed, legend, height, strip_top)) = geo else {
        return Page::new(w, cfg.height, fs).finish("");
    };

    let yield_text = if mc.runs > 0 && mc.yield_.is_finite() {
        format!("yield {} ({} with full headroom), {runs} builds", percent(mc.yield_), percent(mc.yield_headroom))
    } else {
        "tolerance spread: no builds run".to_string()
    };
    let (name, full) = title(&d.name, &yield_text, w, fs);
    let mut page = Page::new(w, height, fs);
    draw_title(&mut page, &name);
    let bottom = panels[0].bottom;
    page.legend(&legend, rows.legend_top(bottom));
    page.vertical_text(
        PAD + 0.8 * fs,
        0.5 * (panels[0].top + bottom),
        &fit("Builds per bin", panels[0].height(), fs),
        INK,
    );
    page.text(
        0.5 * (panels[0].left + panels[1].right),
        rows.xtitle_base(bottom),
        "Output (V)",
        Anchor::Middle,
        INK,
        false,
    );
    for (sd, p) in sides.iter().zip(&panels) {
        let heading = format!("Output {}", sd.what);
        page.text(p.left, strip_top - 0.3 * fs, &fit(&heading, p.width(), fs), Anchor::Start, INK, true);
    }

    for (k, (sd, p)) in sides.iter().zip(&panels).enumerate() {
        let xt = TickSet::linear(&p.x, Unit::Si(Quantity::Voltage), 3.0 * fs, fs, false, true);
        // Headroom bands: between each converter limit and its headroom limit.
        for (a_, b_) in [(dst.min, dst.min + head), (dst.max - head, dst.max)] {
            if head > 0.0 {
                let xa = p.x.px(a_).unwrap_or(p.left).clamp(p.left, p.right);
                let xb = p.x.px(b_).unwrap_or(p.left).clamp(p.left, p.right);
                page.fill(xa.min(xb), p.top, (xb - xa).abs(), p.height(), HEADROOM);
            }
        }
        page.panel(p, &xt, &yt, true, k == 0);
        histogram(&mut page, p, sd.h);
        for &(val, _, conv) in &sd.inside {
            if let Some(x) = p.x.px(val) {
                let (colour, width, dash) = if conv { (INK, 1.6, "") } else { (GREY, 1.2, DASH) };
                page.stroke((x, p.top), (x, p.bottom), colour, width, dash, "limit");
            }
        }
        if sd.worst.iter().all(|v| v.is_finite()) {
            let y = p.top + 0.35 * fs + 6.0;
            let (xa, xb) = (p.x.px(sd.worst[0]), p.x.px(sd.worst[1]));
            if let (Some(xa), Some(xb)) = (xa, xb) {
                let (xa, xb) = (xa.clamp(p.left, p.right), xb.clamp(p.left, p.right));
                page.stroke((xa, y), (xb, y), INK, 1.2, "", "worst");
                for x in [xa, xb] {
                    page.stroke((x, y - 4.0), (x, y + 4.0), INK, 1.2, "", "worst");
                }
            }
        }
        if sd.h.counts.iter().all(|&c| c == 0) {
            page.note(p, "no builds to show");
        }
        page.tags(&tags[k], &placed[k], p.top, INK);
    }
    page.finish(&full)
}

fn make_side<'a>(h: &'a Histogram, what: String, worst: [f64; 2], limits: &[(f64, &'static str, bool)]) -> Side<'a> {
    let (lo, hi) = if h.lo.is_finite() && h.hi.is_finite() && h.hi >= h.lo { (h.lo, h.hi) } else { (0.0, 1.0) };
    let width = (hi - lo).max(1e-6 * lo.abs().max(hi.abs())).max(1e-12);
    let reach = 3.0 * width;
    let near = |x: f64| x >= lo - reach && x <= hi + reach;
    let mut a = lo;
    let mut b = hi;
    for x in worst.iter().copied().filter(|x| x.is_finite() && near(*x)) {
        a = a.min(x);
        b = b.max(x);
    }
    let mut inside: Vec<(f64, &'static str, bool)> = Vec::new();
    for &(x, name, conv) in limits {
        if x.is_finite() && near(x) {
            a = a.min(x);
            b = b.max(x);
            inside.push((x, name, conv));
        }
    }
    let (a, b) = usable_range(Scale::Linear, a, b);
    let pad = 0.06 * (b - a);
    let (a, b) = (a - pad, b + pad);
    // With no converter limit on the scale, the nearer one is named at the panel's edge.
    let mut outside: Vec<(f64, &'static str, bool)> = Vec::new();
    if !inside.iter().any(|l| l.2) {
        let conv = limits.iter().filter(|l| l.2 && l.0.is_finite());
        let nearest = conv.min_by(|l, m| dist(l.0, a, b).total_cmp(&dist(m.0, a, b)));
        if let Some(&(x, name, _)) = nearest {
            outside.push((x, name, x > b));
        }
    }
    Side { h, what, worst, lo: a, hi: b, inside, outside }
}

/// Distance of `x` from the interval `a … b`.
fn dist(x: f64, a: f64, b: f64) -> f64 {
    if x < a {
        a - x
    } else if x > b {
        x - b
    } else {
        0.0
    }
}

/// Bars as one stepped outline over `h.lo … h.hi`.
fn histogram(page: &mut Page, p: &Panel, h: &Histogram) {
    let n = h.counts.len();
    if n == 0 || h.hi <= h.lo || !h.lo.is_finite() || !h.hi.is_finite() {
        return;
    }
    let base = p.bottom;
    let x = |i: usize| p.x.px(h.lo + (h.hi - h.lo) * i as f64 / n as f64).map(|v| v.clamp(p.left, p.right));
    let mut pts = Vec::with_capacity(2 * n + 2);
    if let Some(x0) = x(0) {
        pts.push((x0, base));
    }
    for (i, &c) in h.counts.iter().enumerate() {
        let (Some(xa), Some(xb), Some(y)) = (x(i), x(i + 1), p.y.px(c as f64)) else { continue };
        let y = y.clamp(p.top, p.bottom);
        pts.push((xa, y));
        pts.push((xb, y));
    }
    if let Some(x1) = x(n) {
        pts.push((x1, base));
    }
    // Runs of empty bins draw on the base line; drop repeated points.
    pts.dedup_by(|a, b| (a.0 - b.0).abs() < 1e-9 && (a.1 - b.1).abs() < 1e-9);
    page.shape(&pts, TINT, ACCENT, 1.2, "histogram");
}
