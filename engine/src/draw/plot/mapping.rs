//! The transfer: output against sensor with the converter range, headroom bands, output
//! limits and the sensor's extremes.

use super::axis::{bounds_for, usable_range, Axis, Scale};
use super::layout::{
    draw_title, extent, finite, interpolate, left_edge, min_panel_h, min_panel_w, right_edge, title, widen, Rows,
    HEADROOM, Y_SPACING,
};
use super::legend::{spread, Legend, Sample, Tag};
use super::page::{fit, percent, si, Page, Panel, ACCENT, DASH, DOT, GREY, INK, PAD};
use super::ticks::{TickSet, Unit};
use super::{Plot, PlotConfig};
use crate::analysis::Analysis;
use crate::design::Design;
use crate::draw::svg::{text_width, Anchor};
use crate::units::Quantity;

pub(super) fn draw(d: &Design, a: &Analysis, cfg: &PlotConfig) -> Plot {
    let (mut w, fs) = (cfg.width, cfg.font_size);
    let rows = Rows { fs };
    let s = &d.request.source;
    let dst = &d.request.destination;
    let ac = a.dc.kind == "midband";
    let mut data = finite(a.dc.transfer.iter().map(|p| (p.x, p.y)));
    crate::order::sort_by(&mut data, |p, q| p.0.total_cmp(&q.0));
    let [lim_lo, lim_hi] = a.dc.output_limits;
    let span = dst.max - dst.min;
    let head = dst.headroom * span;

    let (x0, x1) = match extent(data.iter().map(|p| p.0)) {
        Some((lo, hi)) if hi > lo => (lo, hi),
        _ => {
            let sp = (s.max - s.min).abs();
            (s.min - 0.1 * sp, s.max + 0.1 * sp)
        }
    };
    let ys = data.iter().map(|p| p.1).chain([dst.min, dst.max, lim_lo, lim_hi]);
    let (y0, y1) = extent(ys).unwrap_or((0.0, 1.0));
    let (y0, y1) = usable_range(Scale::Linear, y0, y1);
    let pad_y = 0.04 * (y1 - y0);
    let (y0, y1) = (y0 - pad_y, y1 + pad_y);

    let v = |x: f64| si(x, Quantity::Voltage);
    // The sensor axis is in the measured quantity: volts, or amperes for a current loop.
    let sq = s.kind.quantity();
    let sv = |x: f64| si(x, sq);
    let mut items: Vec<(Sample, String)> = Vec::new();
    let curve_text = if ac {
        let p = d.predicted.as_ref();
        match p {
            Some(p) => {
                let mid = 0.5 * (s.min + s.max);
                let excursion = if mid == 0.0 { "sensor".to_string() } else { format!("(sensor − {})", v(mid)) };
                format!(
                    "mid-band output: DC level {} + gain {} × {excursion}",
                    v(p.offset),
                    si(p.gain, Quantity::Ratio)
                )
            }
            None => "mid-band output".to_string(),
        }
    } else {
        "output at the converter input".to_string()
    };
    items.push((Sample::Line { colour: ACCENT, width: 2.0, dash: "" }, curve_text));
    items.push((
        Sample::Line { colour: INK, width: 1.4, dash: "" },
        format!("converter range {} … {}", v(dst.min), v(dst.max)),
    ));
    if head > 0.0 {
        items.push((
            Sample::Fill { colour: HEADROOM, edge: "none" },
            format!("headroom {} of the range at each end ({})", percent(dst.headroom), v(head)),
        ));
    }
    items.push((
        Sample::Line { colour: GREY, width: 1.2, dash: DASH },
        format!("amplifier output limits {} and {}: the output clips there", v(lim_lo), v(lim_hi)),
    ));
    items.push((
        Sample::Line { colour: GREY, width: 1.2, dash: DOT },
        format!("sensor range {} … {}", sv(s.min), sv(s.max)),
    ));
    if let Some((c0, c1)) = extent(a.dc.clipped_in_range.iter().copied()) {
        let at = if c1 > c0 { format!("{} … {}", sv(c0), sv(c1)) } else { sv(c0) };
        items.push((Sample::None, format!("Clips inside the sensor range, at sensor {at}")));
    }

    let mut label_w = text_width("-10.5 V", fs);
    let mut geo = None;
    for _ in 0..2 {
        let left = left_edge(fs, label_w);
        w = widen(w, left, min_panel_w(fs), fs);
        let right = right_edge(w, fs);
        let x_axis = Axis::new(Scale::Linear, x0, x1, left, right);
        let mut tags = Vec::new();
        for (x, t) in [(s.min, "sensor min"), (s.max, "sensor max")] {
            if let Some(px) = x_axis.px(x).filter(|_| x_axis.contains(x)) {
                let text = match interpolate(&data, x, false) {
                    Some(y) => format!("{t} {} → {}", sv(x), v(y)),
                    None => format!("{t} {}", sv(x)),
                };
                tags.push(Tag { x: px, text, leader: true, edge: 0 });
            }
        }
        let placed = spread(&tags, PAD, w - PAD, fs);
        let legend = Legend::flow(&items, PAD, w - PAD, fs);
        let top = rows.title().1 + rows.strip(placed.iter().any(Option::is_some));
        let below = rows.below(&legend);
        let h = (cfg.height - top - below).max(min_panel_h(fs)).floor();
        let height = (top + h + below).max(cfg.height);
        let (y0, y1) = bounds_for(y0, y1, h, Y_SPACING * fs, false);
        let p = Panel::new(x_axis, Axis::new(Scale::Linear, y0, y1, top + h, top));
        let yt = TickSet::linear(&p.y, Unit::Si(Quantity::Voltage), Y_SPACING * fs, fs, false, false);
        let need = yt.label_width(fs);
        let done = need <= label_w + 0.5;
        label_w = label_w.max(need);
        geo = Some((p, yt, tags, placed, legend, height));
        if done {
            break;
        }
    }
    let Some((p, yt, tags, placed, legend, height)) = geo else { return Page::new(w, cfg.height, fs).finish("") };
    let xt = TickSet::linear(&p.x, Unit::Si(sq), 3.0 * fs, fs, false, true);

    let what = if ac { "midband transfer (AC coupling)" } else { "DC transfer" };
    let (name, full) = title(&d.name, what, w, fs);
    let mut page = Page::new(w, height, fs);
    draw_title(&mut page, &name);
    page.legend(&legend, rows.legend_top(p.bottom));
    page.vertical_text(PAD + 0.8 * fs, 0.5 * (p.top + p.bottom), &fit("Output (V)", p.height(), fs), INK);
    let x_title = if sq == Quantity::Current { "Loop current (A)" } else { "Sensor (V)" };
    page.text(0.5 * (p.left + p.right), rows.xtitle_base(p.bottom), x_title, Anchor::Middle, INK, false);

    let ypx = |v: f64| p.y.px(v).map(|y| y.clamp(p.top, p.bottom));
    if head > 0.0 {
        for (a_, b_) in [(dst.min, dst.min + head), (dst.max - head, dst.max)] {
            if let (Some(ya), Some(yb)) = (ypx(a_), ypx(b_)) {
                page.fill(p.left, ya.min(yb), p.width(), (ya - yb).abs(), HEADROOM);
            }
        }
    }
    page.panel(&p, &xt, &yt, true, true);
    for (lim, colour, width, dash, net) in [
        (dst.min, INK, 1.4, "", "converter"),
        (dst.max, INK, 1.4, "", "converter"),
        (lim_lo, GREY, 1.2, DASH, "limit"),
        (lim_hi, GREY, 1.2, DASH, "limit"),
    ] {
        if let Some(y) = p.y.px(lim).filter(|_| p.y.contains(lim)) {
            page.stroke((p.left, y), (p.right, y), colour, width, dash, net);
        }
    }
    for x in [s.min, s.max] {
        if let Some(px) = p.x.px(x).filter(|_| p.x.contains(x)) {
            page.stroke((px, p.top), (px, p.bottom), GREY, 1.2, DOT, "sensor");
        }
    }
    if data.is_empty() {
        page.note(&p, "no transfer computed");
    }
    page.curve(&p, &data, ACCENT, 2.0, "", "transfer");
    // The sensor's extremes on the curve, with the output there.
    for x in [s.min, s.max] {
        if let Some(y) = interpolate(&data, x, false) {
            if let Some(c) = p.px(x, y).filter(|c| c.1 >= p.top && c.1 <= p.bottom && c.0 >= p.left && c.0 <= p.right) {
                page.svg.circle(c, 3.5, ACCENT, None);
            }
        }
    }
    page.tags(&tags, &placed, p.top, INK);
    page.finish(&full)
}
