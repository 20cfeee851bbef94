//! The frequency response: magnitude and phase against log frequency, two panels sharing
//! the frequency axis, with the band, the −3 dB points, f_s, f_s/2 and the first frequency
//! that folds into the band (f_s − band_high, or the modulator rate − band_high) marked, and
//! the anti-alias requirement drawn as a ceiling from that frequency up: the mid-band gain
//! less the rejection the rule asks for (`analysis.alias`).

use super::axis::{bounds_for, usable_range, Axis, Scale};
use super::layout::{
    draw_title, extent, finite, interpolate, left_edge, min_panel_h, min_panel_w, right_edge, title, widen, Rows,
    Y_SPACING,
};
use super::legend::{spread, Legend, Sample, Tag};
use super::page::{fit, si, Page, Panel, ACCENT, DASH, DOT, GREY, INK, PAD, TINT, WARN};
use super::ticks::{TickSet, Unit};
use super::{Plot, PlotConfig};
use crate::analysis::Analysis;
use crate::design::Design;
use crate::draw::svg::{text_width, Anchor};
use crate::request::Coupling;
use crate::units::Quantity;

/// A marker across the panels of the response plot.
struct Marker {
    f: f64,
    tag: &'static str,
    colour: &'static str,
    width: f64,
    dash: &'static str,
}

/// Phase unwrapped along frequency (no jumps of more than 180° between neighbours), then
/// shifted by whole turns so that the point nearest `f_ref` lies within ±180°.
fn unwrap_phase(pts: &[(f64, f64)], f_ref: f64) -> Vec<(f64, f64)> {
    let mut out = Vec::with_capacity(pts.len());
    let mut offset = 0.0;
    let mut prev: Option<f64> = None;
    for &(f, p) in pts {
        if !p.is_finite() {
            continue;
        }
        let mut q = p + offset;
        if let Some(pr) = prev {
            let k = ((q - pr) / 360.0).round();
            offset -= 360.0 * k;
            q -= 360.0 * k;
        }
        prev = Some(q);
        out.push((f, q));
    }
    let nearest = out.iter().min_by(|a, b| (a.0.ln() - f_ref.ln()).abs().total_cmp(&(b.0.ln() - f_ref.ln()).abs()));
    if let Some(&(_, r)) = nearest {
        let shift = 360.0 * (r / 360.0).round();
        if shift.is_finite() {
            for p in &mut out {
                p.1 -= shift;
            }
        }
    }
    out
}

pub(super) fn draw(d: &Design, a: &Analysis, cfg: &PlotConfig) -> Plot {
    let (mut w, fs) = (cfg.width, cfg.font_size);
    let rows = Rows { fs };
    let s = &d.request.source;
    let f_s = d.request.destination.sample_rate;
    let mut pts: Vec<(f64, f64, f64)> =
        a.ac.points.iter().filter(|p| p.f.is_finite() && p.f > 0.0).map(|p| (p.f, p.mag_db, p.phase_deg)).collect();
    crate::order::sort_by(&mut pts, |x, y| x.0.total_cmp(&y.0));
    let mag = finite(pts.iter().map(|p| (p.0, p.1)));
    let f_ref =
        if s.coupling == Coupling::Ac && a.ac.f_mid > 0.0 { a.ac.f_mid } else { pts.first().map_or(1.0, |p| p.0) };
    let phase = unwrap_phase(&finite(pts.iter().map(|p| (p.0, p.2))), f_ref);
    // The level content at the fold frequency must stay under, dB (mid-band gain − rejection).
    let ceiling = a.alias.as_ref().map(|x| (a.ac.gain_mid_db - x.required_db, x)).filter(|(c, _)| c.is_finite());

    let (f0, f1) = match extent(pts.iter().map(|p| p.0)) {
        Some((a, b)) if b > a => (a, b),
        _ => (s.band_low.max(s.band_high / 1e4).max(1e-3), (10.0 * f_s).max(10.0 * s.band_high)),
    };
    let (f0, f1) = usable_range(Scale::Log, f0, f1);
    // Magnitude: at least 20 dB shown, at most 100 dB below the peak; phase: 5° clear of the
    // frame. Both widened to their tick steps once the panel height is known.
    let (m0, m1) = match extent(mag.iter().map(|p| p.1)) {
        Some((lo, hi)) => {
            let floor = ceiling.map_or(hi - 100.0, |(c, _)| (c - 10.0).max(hi - 140.0));
            let lo = lo.max(floor.min(hi - 100.0)).min(hi - 20.0);
            (lo - 0.03 * (hi - lo), hi + 2.0)
        }
        None => (-40.0, 20.0),
    };
    let (p0, p1) = extent(phase.iter().map(|p| p.1)).map_or((-180.0, 180.0), |(lo, hi)| (lo - 5.0, hi + 5.0));

    // Markers, their legend entries and what lies off the scale.
    let mut markers: Vec<Marker> = Vec::new();
    let off = |f: f64| if f >= f0 * (1.0 - 1e-9) && f <= f1 * (1.0 + 1e-9) { "" } else { " (off scale)" };
    let corners: Vec<f64> =
        [a.ac.f_low_3db, a.ac.f_high_3db].into_iter().flatten().filter(|f| f.is_finite() && *f > 0.0).collect();
    for &f in &corners {
        markers.push(Marker { f, tag: "−3 dB", colour: ACCENT, width: 1.2, dash: DASH });
    }
    let fold = a.alias.as_ref().map_or(f_s - s.band_high, |x| x.frequency);
    let nyq = 0.5 * f_s;
    if nyq.is_finite() && nyq > 0.0 {
        markers.push(Marker { f: nyq, tag: "fs/2", colour: GREY, width: 1.2, dash: DASH });
    }
    if fold.is_finite() && fold > 0.0 {
        markers.push(Marker { f: fold, tag: "fold", colour: GREY, width: 1.4, dash: DOT });
    }
    if f_s.is_finite() && f_s > 0.0 {
        markers.push(Marker { f: f_s, tag: "fs", colour: GREY, width: 1.0, dash: "" });
    }
    let hz = |f: f64| si(f, Quantity::Frequency);
    let mut items: Vec<(Sample, String)> = Vec::new();
    let band_lo = if s.coupling == Coupling::Ac { s.band_low } else { 0.0 };
    items.push((
        Sample::Fill { colour: TINT, edge: "none" },
        format!("band {} … {}", if band_lo > 0.0 { hz(band_lo) } else { "DC".to_string() }, hz(s.band_high)),
    ));
    if corners.is_empty() {
        items.push((Sample::None, "no −3 dB point in reach".to_string()));
    } else {
        let list: Vec<String> = corners.iter().map(|&f| format!("{}{}", hz(f), off(f))).collect();
        let shown = corners.iter().any(|&f| off(f).is_empty());
        let sample = if shown { Sample::Line { colour: ACCENT, width: 1.2, dash: DASH } } else { Sample::None };
        items.push((sample, format!("−3 dB at {}", list.join(" and "))));
    }
    if nyq.is_finite() && nyq > 0.0 {
        items.push((
            Sample::Line { colour: GREY, width: 1.2, dash: DASH },
            format!("fs/2 = {} (Nyquist){}", hz(nyq), off(nyq)),
        ));
        items.push((
            Sample::Line { colour: GREY, width: 1.0, dash: "" },
            format!("fs = {} (sample rate){}", hz(f_s), off(f_s)),
        ));
    }
    if fold.is_finite() && fold > 0.0 {
        let how = if a.alias.is_some() && (fold - (f_s - s.band_high)).abs() > 1e-9 * fold {
            "modulator rate − band high"
        } else {
            "fs − band high"
        };
        items.push((
            Sample::Line { colour: GREY, width: 1.4, dash: DOT },
            format!("fold: {how} = {}, the lowest frequency that aliases into the band{}", hz(fold), off(fold)),
        ));
    }
    if let Some((_, x)) = ceiling {
        items.push((
            Sample::Line { colour: WARN, width: 2.0, dash: "" },
            format!(
                "rejection needed from the fold up: {:.1} dB below mid-band (built: {:.1} dB)",
                x.required_db, x.achieved_db
            ),
        ));
    }

    // Geometry: twice, the second time with the y tick labels the first one found.
    let mut label_w = text_width("-100 dB", fs);
    let gap = (1.4 * fs).round();
    let mut geo = None;
    for _ in 0..2 {
        let left = left_edge(fs, label_w);
        w = widen(w, left, min_panel_w(fs), fs);
        let right = right_edge(w, fs);
        let x_axis = Axis::new(Scale::Log, f0, f1, left, right);
        let mut tags: Vec<Tag> = Vec::new();
        let mut tag_x: Vec<f64> = Vec::new();
        for m in &markers {
            let Some(x) = x_axis.px(m.f).filter(|_| x_axis.contains(m.f)) else { continue };
            // Markers within 3 px read as one line: one tag for both.
            if let Some(k) = tag_x.iter().position(|&t| (t - x).abs() < 3.0) {
                if !tags[k].text.split(", ").any(|t| t == m.tag) {
                    tags[k].text = format!("{}, {}", tags[k].text, m.tag);
                }
                continue;
            }
            tag_x.push(x);
            tags.push(Tag { x, text: m.tag.to_string(), leader: true, edge: 0 });
        }
        let placed = spread(&tags, PAD, w - PAD, fs);
        let legend = Legend::flow(&items, PAD, w - PAD, fs);
        let (_, top0) = rows.title();
        let top = top0 + rows.strip(placed.iter().any(Option::is_some));
        let below = rows.below(&legend);
        let each = ((cfg.height - top - below - gap) / 2.0).max(min_panel_h(fs)).floor();
        let height = (top + 2.0 * each + gap + below).max(cfg.height);
        let (m0, m1) = bounds_for(m0, m1, each, Y_SPACING * fs, false);
        let (p0, p1) = bounds_for(p0, p1, each, Y_SPACING * fs, true);
        let mag_p = Panel::new(x_axis, Axis::new(Scale::Linear, m0, m1, top + each, top));
        let ph_top = top + each + gap;
        let ph_p = Panel::new(x_axis, Axis::new(Scale::Linear, p0, p1, ph_top + each, ph_top));
        let yt_m = TickSet::linear(&mag_p.y, Unit::Plain(" dB"), Y_SPACING * fs, fs, false, false);
        let yt_p = TickSet::linear(&ph_p.y, Unit::Plain("°"), Y_SPACING * fs, fs, true, false);
        let need = yt_m.label_width(fs).max(yt_p.label_width(fs));
        let done = need <= label_w + 0.5;
        label_w = label_w.max(need);
        geo = Some((mag_p, ph_p, yt_m, yt_p, tags, placed, legend, height));
        if done {
            break;
        }
    }
    let Some((mag_p, ph_p, yt_m, yt_p, tags, placed, legend, height)) = geo else {
        return Page::new(w, cfg.height, fs).finish("");
    };
    let xt = TickSet::log(&mag_p.x, Unit::Si(Quantity::Frequency), fs, true);

    let (name, full) = title(&d.name, "frequency response, sensor to converter input", w, fs);
    let mut page = Page::new(w, height, fs);
    draw_title(&mut page, &name);
    page.legend(&legend, rows.legend_top(ph_p.bottom));
    let mag_title =
        if text_width("Magnitude (dB)", fs) <= mag_p.height() + gap - 2.0 { "Magnitude (dB)" } else { "Gain (dB)" };
    let x_title = PAD + 0.8 * fs;
    page.vertical_text(x_title, 0.5 * (mag_p.top + mag_p.bottom), &fit(mag_title, mag_p.height() + gap - 2.0, fs), INK);
    page.vertical_text(x_title, 0.5 * (ph_p.top + ph_p.bottom), &fit("Phase (°)", ph_p.height() + gap - 2.0, fs), INK);
    page.text(
        0.5 * (ph_p.left + ph_p.right),
        rows.xtitle_base(ph_p.bottom),
        "Frequency (Hz)",
        Anchor::Middle,
        INK,
        false,
    );

    // Band shading, grid and frames, markers, curves.
    for p in [&mag_p, &ph_p] {
        let xa = p.x.px(band_lo.max(f0)).unwrap_or(p.left).clamp(p.left, p.right);
        let xb = p.x.px(s.band_high).unwrap_or(p.left).clamp(p.left, p.right);
        page.fill(xa, p.top, xb - xa, p.height(), TINT);
    }
    page.panel(&mag_p, &xt, &yt_m, false, true);
    page.panel(&ph_p, &xt, &yt_p, true, true);
    for m in &markers {
        let Some(x) = mag_p.x.px(m.f).filter(|_| mag_p.x.contains(m.f)) else { continue };
        for p in [&mag_p, &ph_p] {
            page.stroke((x, p.top), (x, p.bottom), m.colour, m.width, m.dash, "marker");
        }
    }
    if mag.is_empty() {
        page.note(&mag_p, "no response computed");
    }
    if let Some((c, _)) = ceiling {
        let from = fold.max(f0);
        if from < f1 && c >= mag_p.y.lo.min(mag_p.y.hi) && c <= mag_p.y.lo.max(mag_p.y.hi) {
            if let (Some(a), Some(b)) = (mag_p.px(from, c), mag_p.px(f1, c)) {
                page.stroke(a, b, WARN, 2.0, "", "alias-ceiling");
                page.stroke(a, (a.0, mag_p.top), WARN, 2.0, "", "alias-ceiling");
            }
        }
    }
    page.curve(&mag_p, &mag, ACCENT, 1.8, "", "magnitude");
    page.curve(&ph_p, &phase, ACCENT, 1.8, "", "phase");
    for &f in &corners {
        if let (Some(m), true) = (interpolate(&mag, f, true), mag_p.x.contains(f)) {
            if let Some(c) = mag_p.px(f, m).filter(|c| c.1 >= mag_p.top && c.1 <= mag_p.bottom) {
                page.svg.circle(c, 3.0, ACCENT, None);
            }
        }
    }
    page.tags(&tags, &placed, mag_p.top, INK);
    page.finish(&full)
}
