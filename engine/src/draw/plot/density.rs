//! Output noise density across the integration band against the LSB level.

use super::axis::{usable_range, Axis, Scale};
use super::layout::{draw_title, extent, left_edge, min_panel_h, min_panel_w, right_edge, title, widen, Rows};
use super::legend::{Legend, Sample};
use super::page::{fit, si, Page, Panel, ACCENT, DASH, INK, PAD};
use super::ticks::{TickSet, Unit};
use super::{Plot, PlotConfig};
use crate::analysis::Analysis;
use crate::design::Design;
use crate::draw::svg::{text_width, Anchor};
use crate::units::Quantity;

pub(super) fn draw(d: &Design, a: &Analysis, cfg: &PlotConfig) -> Plot {
    let (mut w, fs) = (cfg.width, cfg.font_size);
    let rows = Rows { fs };
    let n = &a.noise;
    let [f_lo, f_hi] = n.band;
    let mut data: Vec<(f64, f64)> = n
        .density
        .iter()
        .map(|p| (p.f, p.output))
        .filter(|(f, v)| f.is_finite() && *f > 0.0 && v.is_finite() && *v > 0.0)
        .collect();
    crate::order::sort_by(&mut data, |p, q| p.0.total_cmp(&q.0));
    let band_ok = f_lo.is_finite() && f_hi.is_finite() && f_lo > 0.0 && f_hi > f_lo;
    let lsb_level = if band_ok && n.lsb.is_finite() && n.lsb > 0.0 { Some(n.lsb / (f_hi - f_lo).sqrt()) } else { None };
    let (x0, x1) = if band_ok {
        (f_lo, f_hi)
    } else {
        match extent(data.iter().map(|p| p.0)) {
            Some((a, b)) => (a, b),
            None => (f_lo, f_hi),
        }
    };
    let (x0, x1) = usable_range(Scale::Log, x0, x1);
    let (y0, y1) = match extent(data.iter().map(|p| p.1).chain(lsb_level)) {
        Some((lo, hi)) => {
            let hi = 10f64.powf((hi.log10() + 1e-9).ceil());
            let lo = 10f64.powf((lo.log10() - 1e-9).floor()).max(hi * 1e-8);
            (lo, if hi > lo { hi } else { lo * 10.0 })
        }
        None => (1e-9, 1e-6),
    };

    let v = |x: f64| si(x, Quantity::Voltage);
    let hz = |f: f64| si(f, Quantity::Frequency);
    let mut items: Vec<(Sample, String)> = Vec::new();
    let band_text = if band_ok { format!("{} … {}", hz(f_lo), hz(f_hi)) } else { "an empty band".to_string() };
    items.push((
        Sample::Line { colour: ACCENT, width: 2.0, dash: "" },
        format!(
            "output noise density: {} rms over {} = {} LSB",
            v(n.output_rms),
            band_text,
            si(n.lsb_ratio, Quantity::Ratio)
        ),
    ));
    if let Some(l) = lsb_level {
        items.push((
            Sample::Line { colour: INK, width: 1.2, dash: DASH },
            format!("LSB level {} = LSB / √(f_hi − f_lo),", si(l, Quantity::VoltageNoise)),
        ));
        items.push((
            Sample::None,
            format!("the flat density that integrates to one LSB ({}) rms over the band", v(n.lsb)),
        ));
    }

    let mut label_w = text_width("100 nV/√Hz", fs);
    let mut geo = None;
    for _ in 0..2 {
        let left = left_edge(fs, label_w);
        w = widen(w, left, min_panel_w(fs), fs);
        let right = right_edge(w, fs);
        let x_axis = Axis::new(Scale::Log, x0, x1, left, right);
        let legend = Legend::flow(&items, PAD, w - PAD, fs);
        let top = rows.title().1 + 0.5 * fs;
        let below = rows.below(&legend);
        let h = (cfg.height - top - below).max(min_panel_h(fs)).floor();
        let height = (top + h + below).max(cfg.height);
        let p = Panel::new(x_axis, Axis::new(Scale::Log, y0, y1, top + h, top));
        let yt = TickSet::log(&p.y, Unit::Si(Quantity::VoltageNoise), fs, false);
        let need = yt.label_width(fs);
        let done = need <= label_w + 0.5;
        label_w = label_w.max(need);
        geo = Some((p, yt, legend, height));
        if done {
            break;
        }
    }
    let Some((p, yt, legend, height)) = geo else { return Page::new(w, cfg.height, fs).finish("") };
    let xt = TickSet::log(&p.x, Unit::Si(Quantity::Frequency), fs, true);

    let (name, full) = title(&d.name, "output noise density against the LSB", w, fs);
    let mut page = Page::new(w, height, fs);
    draw_title(&mut page, &name);
    page.legend(&legend, rows.legend_top(p.bottom));
    let y_title = if text_width("Noise density (V/√Hz)", fs) <= p.height() {
        "Noise density (V/√Hz)"
    } else {
        "Noise (V/√Hz)"
    };
    page.vertical_text(PAD + 0.8 * fs, 0.5 * (p.top + p.bottom), &fit(y_title, p.height(), fs), INK);
    page.text(0.5 * (p.left + p.right), rows.xtitle_base(p.bottom), "Frequency (Hz)", Anchor::Middle, INK, false);
    page.panel(&p, &xt, &yt, true, true);
    if let Some(l) = lsb_level {
        if let Some(y) = p.y.px(l) {
            page.stroke((p.left, y), (p.right, y), INK, 1.2, DASH, "lsb");
        }
    }
    if !band_ok {
        page.note(&p, "the integration band is empty: no noise to show");
    } else if data.is_empty() {
        page.note(&p, "no noise density computed");
    }
    page.curve(&p, &data, ACCENT, 2.0, "", "density");
    if let Some(y) = lsb_level.and_then(|l| p.y.px(l)) {
        let x = p.right - 6.0;
        let _ = page.label_if_clear(x, y - 5.0, "1 LSB rms", Anchor::End, INK)
            || page.label_if_clear(x, y + 0.8 * fs + 5.0, "1 LSB rms", Anchor::End, INK);
    }
    page.finish(&full)
}
