//! The plots (frequency response, transfer, tolerance histograms, noise density): SVG
//! structure (W3C SVG 1.1), axis titles with units and tick labels with SI prefixes
//! (IEC 60027-1 / SI Brochure for unit symbols and prefixes), tick placement (common
//! practice), text placement, escaping of user text, and degenerate data. Every demo and a
//! few requests of our own scenarios are drawn. Sources are named beside each check;
//! "common practice" marks a rule of the trade rather than a standard.
//!
//! Set `RANGEFIT_PLOT_DIR` to a directory to have every plot written there for a look.

use std::sync::OnceLock;

use rangefit_engine::draw::plot::{
    self, angle_ticks, bounds_for, linear_ticks, log_ticks, nice_bounds, Plot, PlotConfig,
};
use rangefit_engine::request::Request;
use rangefit_engine::units::{format, parse, Quantity};
use rangefit_engine::{demos, design, Design};

// ---------------------------------------------------------------------------------------
// One check helper for every table.

/// Records a failed expectation: what was checked, where the expectation comes from, and
/// what was found. Every test collects its failures and asserts none at the end.
fn check(fails: &mut Vec<String>, source: &str, what: &str, ok: bool, found: impl std::fmt::Debug) {
    if !ok {
        fails.push(format!("{what} [{source}]: found {found:?}"));
    }
}

fn finish(fails: Vec<String>) {
    assert!(fails.is_empty(), "{} failed checks:\n{}", fails.len(), fails.join("\n"));
}

// ---------------------------------------------------------------------------------------
// Designs: every demo and our own scenarios.

/// A request of our own scenario; Monte Carlo kept short so the tests stay quick.
#[allow(clippy::too_many_arguments)]
fn request(
    name: &str, min: f64, max: f64, coupling: &str, band: (f64, f64), dest: (f64, f64), bits: u32, fs: &str,
    supplies: &str, keep_polarity: bool,
) -> Request {
    let name = serde_json::to_string(name).unwrap();
    let json = format!(
        r#"{{"version":1,"name":{name},"source":{{"kind":"single_ended","min":{min},"max":{max},"coupling":"{coupling}",
            "impedance":"1k","band_low":{},"band_high":{}}},
        "destination":{{"min":{},"max":{},"bits":{bits},"sample_rate":"{fs}","impedance":"100k"}},"supplies":{supplies},
        "keep_polarity":{keep_polarity},
        "analysis":{{"monte_carlo_runs":2000}}}}"#,
        band.0, band.1, dest.0, dest.1
    );
    Request::from_json(&json).unwrap_or_else(|e| panic!("request does not read: {e}\n{json}"))
}

fn scenarios() -> Vec<Request> {
    vec![
        // A lighthouse lamp's current through a shunt, 20 … 400 mV, slow, into a 3.3 V converter.
        request("Lighthouse lamp current monitor", 0.02, 0.4, "dc", (0.0, 5.0), (0.0, 3.3), 12, "100 Hz", "[5]", true),
        // An orchard frost sensor (thermistor divider, 0.6 … 2.1 V) into a 2.5 V, 16-bit converter.
        request("Orchard frost sensor", 0.6, 2.1, "dc", (0.0, 1.0), (0.0, 2.5), 16, "10 Hz", "[3.3]", true),
        // A cold-store probe, -1 … 0 V, read through an inverting stage on one 5 V rail.
        request("Cold-store probe, inverted", -1.0, 0.0, "dc", (0.0, 5.0), (0.0, 3.3), 12, "100 Hz", "[5]", false),
        // A quarry geophone, ±50 mV around 0 V, 2 Hz … 500 Hz, AC coupled into 0 … 5 V.
        request("Quarry blast geophone", -0.05, 0.05, "ac", (2.0, 500.0), (0.0, 5.0), 16, "2 kHz", "[5]", true),
        // Markup in the name stays text.
        request("<img src=x onerror=alert(1)>", 0.5, 4.5, "dc", (0.0, 50.0), (0.0, 3.3), 12, "1 kHz", "[3.3]", true),
    ]
}

/// (what, design) for every demo and scenario, designed once.
fn designs() -> &'static [(String, Design)] {
    static ALL: OnceLock<Vec<(String, Design)>> = OnceLock::new();
    ALL.get_or_init(|| {
        let mut out: Vec<(String, Design)> = Vec::new();
        for d in demos::ALL {
            let req = Request::from_json(d.json).unwrap_or_else(|e| panic!("demo {}: {e}", d.id));
            out.push((d.id.to_string(), design(&req)));
        }
        for req in scenarios() {
            out.push((req.name.clone(), design(&req)));
        }
        out
    })
}

type PlotFn = fn(&Design, &PlotConfig) -> Option<Plot>;

/// Each plot with the axis titles it must carry (any one of the alternatives).
const PLOTS: [(&str, PlotFn, &[&[&str]]); 4] = [
    ("response", plot::response, &[&["Frequency (Hz)"], &["Magnitude (dB)", "Gain (dB)"], &["Phase (°)"]]),
    ("transfer", plot::transfer, &[&["Sensor (V)", "Loop current (A)"], &["Output (V)"]]),
    ("tolerance", plot::tolerance, &[&["Output (V)"], &["Builds per bin"]]),
    ("noise", plot::noise, &[&["Frequency (Hz)"], &["Noise density (V/√Hz)", "Noise (V/√Hz)"]]),
];

fn save(what: &str, kind: &str, p: &Plot) {
    if let Ok(dir) = std::env::var("RANGEFIT_PLOT_DIR") {
        let file: String = what.chars().map(|c| if c.is_ascii_alphanumeric() { c } else { '-' }).collect();
        let file = file.trim_matches('-');
        let _ = std::fs::create_dir_all(&dir);
        let _ = std::fs::write(format!("{dir}/{file}-{kind}.svg"), &p.svg);
    }
}

fn texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants().filter(|n| n.has_tag_name("text")).map(|n| n.text().unwrap_or("").to_string()).collect()
}

/// Texts set in bold, in document order (the title comes first).
fn bold_texts(svg: &str) -> Vec<String> {
    let Ok(doc) = roxmltree::Document::parse(svg) else { return Vec::new() };
    doc.descendants()
        .filter(|n| n.has_tag_name("text") && n.attribute("font-weight") == Some("bold"))
        .map(|n| n.text().unwrap_or("").to_string())
        .collect()
}

/// Structure and placement checks that hold for every plot.
fn structure(fails: &mut Vec<String>, what: &str, p: &Plot) -> Vec<String> {
    let doc = match roxmltree::Document::parse(&p.svg) {
        Ok(doc) => doc,
        Err(e) => {
            fails.push(format!("{what}: not XML [W3C SVG 1.1]: {e}"));
            return Vec::new();
        }
    };
    let root = doc.root_element();
    check(
        fails,
        "W3C SVG 1.1",
        &format!("{what}: root svg in the SVG namespace"),
        root.has_tag_name(("http://www.w3.org/2000/svg", "svg")),
        root.tag_name().name(),
    );
    let view: Vec<f64> =
        root.attribute("viewBox").unwrap_or("").split_whitespace().filter_map(|v| v.parse().ok()).collect();
    let size: Vec<f64> = ["width", "height"].iter().filter_map(|a| root.attribute(*a)?.parse().ok()).collect();
    check(
        fails,
        "W3C SVG 1.1",
        &format!("{what}: width and height equal the viewBox"),
        view.len() == 4 && size.len() == 2 && size[0] == view[2] && size[1] == view[3],
        (&view, &size),
    );
    for n in doc.descendants().filter(|n| n.is_element()) {
        let tag = n.tag_name().name();
        check(
            fails,
            "W3C SVG 1.1",
            &format!("{what}: standalone, no <{tag}>"),
            !["script", "image", "use", "foreignObject", "a", "style", "img"].contains(&tag),
            tag,
        );
        for a in n.attributes() {
            let ok = !a.name().contains("href")
                && !a.name().starts_with("on")
                && !a.value().contains("url(")
                && a.name() != "id";
            check(fails, "W3C SVG 1.1", &format!("{what}: no reference, handler or id"), ok, (a.name(), a.value()));
        }
    }
    let words = texts(&doc);
    check(
        fails,
        "this module's record",
        &format!("{what}: one recorded box per text"),
        words.len() == p.texts.len(),
        (words.len(), p.texts.len()),
    );
    // No two texts overlap, and every text lies on the page (common practice).
    let (w, h) = if view.len() == 4 { (view[2], view[3]) } else { (0.0, 0.0) };
    for (i, a) in p.texts.iter().enumerate() {
        check(
            fails,
            "common practice",
            &format!("{what}: text on the page"),
            a.x >= -0.01 && a.y >= -0.01 && a.x + a.w <= w + 0.01 && a.y + a.h <= h + 0.01,
            (&a.text, a.x, a.y, a.w, a.h),
        );
        for b in &p.texts[i + 1..] {
            let overlap = a.x < b.x + b.w && b.x < a.x + a.w && a.y < b.y + b.h && b.y < a.y + a.h;
            check(fails, "common practice", &format!("{what}: texts do not overlap"), !overlap, (&a.text, &b.text));
        }
    }
    // No text sits on the data: a curve or histogram crossing a label would hide both
    // (common practice).
    for t in &p.texts {
        for w in p
            .wires
            .iter()
            .filter(|w| ["magnitude", "phase", "transfer", "density", "histogram"].contains(&w.net.as_str()))
        {
            check(
                fails,
                "common practice",
                &format!("{what}: text clear of the data"),
                !t.crosses(w),
                (&t.text, &w.net),
            );
        }
    }
    // Numbers in the markup are finite.
    check(
        fails,
        "W3C SVG 1.1",
        &format!("{what}: no NaN or inf in the markup"),
        !p.svg.contains("NaN") && !p.svg.contains("inf"),
        "",
    );
    words
}

// ---------------------------------------------------------------------------------------
// Tick logic.

#[test]
fn ticks_follow_the_125_and_decade_rules() {
    let mut fails = Vec::new();
    let near = |a: &[f64], b: &[f64]| {
        a.len() == b.len() && a.iter().zip(b).all(|(x, y)| (x - y).abs() <= 1e-9 * y.abs().max(1e-12))
    };
    // Linear: the smallest 1-2-5 × 10^k step giving at most `max` ticks (common practice).
    let linear: &[(f64, f64, usize, &[f64])] = &[
        (0.0, 3.3, 8, &[0.0, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0]),
        (0.0, 3.3, 4, &[0.0, 1.0, 2.0, 3.0]),
        (0.0, 5.0, 6, &[0.0, 1.0, 2.0, 3.0, 4.0, 5.0]),
        (-5.0, 5.0, 6, &[-4.0, -2.0, 0.0, 2.0, 4.0]),
        (-12.0, 12.0, 6, &[-10.0, -5.0, 0.0, 5.0, 10.0]),
        (1.152, 1.248, 6, &[1.16, 1.18, 1.2, 1.22, 1.24]),
        (0.1, 0.4, 4, &[0.1, 0.2, 0.3, 0.4]),
        (-45.0, 15.0, 4, &[-40.0, -20.0, 0.0]),
        (0.0, 12000.0, 7, &[0.0, 2000.0, 4000.0, 6000.0, 8000.0, 10000.0, 12000.0]),
        (3.0944, 3.3, 6, &[3.1, 3.15, 3.2, 3.25, 3.3]),
    ];
    for &(lo, hi, max, want) in linear {
        let got = linear_ticks(lo, hi, max);
        check(
            &mut fails,
            "common practice",
            &format!("linear ticks {lo} … {hi}, at most {max}"),
            near(&got, want),
            &got,
        );
    }
    // Log: decades labelled; 2 and 5 sub-ticks when few decades show (common practice).
    let log: &[(f64, f64, &[f64], usize)] = &[
        (20.0, 200e3, &[100.0, 1e3, 1e4, 1e5], 9),
        (0.1, 500.0, &[0.1, 1.0, 10.0, 100.0], 8),
        (1.0, 1e9, &[1.0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9], 0),
        // Under two decades: the 1, 2 and 5 values carry the labels.
        (20.0, 600.0, &[20.0, 50.0, 100.0, 200.0, 500.0], 0),
    ];
    for &(lo, hi, want, minor) in log {
        let got = log_ticks(lo, hi);
        check(&mut fails, "common practice", &format!("log decades {lo} … {hi}"), near(&got.major, want), &got.major);
        check(
            &mut fails,
            "common practice",
            &format!("log sub-ticks {lo} … {hi}"),
            got.minor.len() == minor,
            &got.minor,
        );
    }
    let sub = log_ticks(20.0, 200e3).minor;
    check(
        &mut fails,
        "common practice",
        "sub-ticks at 2 and 5 per decade",
        near(&sub, &[20.0, 50.0, 200.0, 500.0, 2e3, 5e3, 2e4, 5e4, 2e5]),
        &sub,
    );
    // Phase: quadrant multiples when they give at least three ticks (common practice).
    let angles: &[(f64, f64, usize, &[f64])] = &[
        (-90.0, 225.0, 5, &[-90.0, 0.0, 90.0, 180.0]),
        (-45.0, 45.0, 4, &[-45.0, 0.0, 45.0]),
        (-180.0, 0.0, 5, &[-180.0, -135.0, -90.0, -45.0, 0.0]),
    ];
    for &(lo, hi, max, want) in angles {
        let got = angle_ticks(lo, hi, max);
        check(&mut fails, "common practice", &format!("angle ticks {lo} … {hi}"), near(&got, want), &got);
    }
    // Bounds reach outward to the step, so ticks sit on both ends (common practice).
    let bounds = [
        ("nice bounds -0.27 … 3.57, at most 8 ticks", nice_bounds(-0.27, 3.57, 8), (-0.5, 4.0)),
        ("-0.27 … 3.57 V on 200 px, ticks 21.6 px apart", bounds_for(-0.27, 3.57, 200.0, 21.6, false), (-0.5, 4.0)),
        ("-34 … 33 dB on 90 px, ticks 21.6 px apart", bounds_for(-34.0, 33.0, 90.0, 21.6, false), (-40.0, 40.0)),
        ("phase -82° … 150° on 90 px: 90° steps", bounds_for(-82.0, 150.0, 90.0, 21.6, true), (-90.0, 180.0)),
        ("flat phase -5° … 5°: 45° steps", bounds_for(-5.0, 5.0, 90.0, 21.6, true), (-45.0, 45.0)),
    ];
    for (what, got, want) in bounds.iter() {
        check(&mut fails, "common practice", what, (got.0 - want.0).abs() < 1e-9 && (got.1 - want.1).abs() < 1e-9, got);
    }
    // Tick labels read as SI values: "100 Hz", "1 kHz", "500 mV", "1.65 V" (IEC 60027-1 / SI Brochure).
    for (v, q, want) in [
        (100.0, Quantity::Frequency, "100 Hz"),
        (1e3, Quantity::Frequency, "1 kHz"),
        (1e5, Quantity::Frequency, "100 kHz"),
        (1.65, Quantity::Voltage, "1.65 V"),
        (0.5, Quantity::Voltage, "500 mV"),
    ] {
        check(
            &mut fails,
            "IEC 60027-1 / SI Brochure for unit symbols and prefixes",
            &format!("label of {v}"),
            format(v, q) == want,
            format(v, q),
        );
    }
    // Nothing panics and nothing comes back unusable on bad ranges.
    for (lo, hi) in [(f64::NAN, 1.0), (0.0, 0.0), (f64::INFINITY, 1.0), (5.0, -5.0), (1e-300, 1e300), (-1.0, 10.0)] {
        let l = linear_ticks(lo, hi, 6);
        check(
            &mut fails,
            "robustness",
            &format!("linear ticks {lo} … {hi} finite, at most 64"),
            l.len() <= 64 && l.iter().all(|v| v.is_finite()),
            &l,
        );
        let g = log_ticks(lo, hi);
        check(
            &mut fails,
            "robustness",
            &format!("log ticks {lo} … {hi} positive"),
            g.major.len() <= 64 && g.major.iter().chain(&g.minor).all(|v| v.is_finite() && *v > 0.0),
            &g,
        );
    }
    finish(fails);
}

// ---------------------------------------------------------------------------------------
// Every demo and scenario.

#[test]
fn every_plot_of_every_design_reads() {
    let mut fails = Vec::new();
    let cfg = PlotConfig::default();
    for (what, d) in designs() {
        check(&mut fails, "design", &format!("{what}: has an analysis"), d.analysis.is_some(), &d.checks);
        let Some(a) = d.analysis.as_ref() else { continue };
        for (kind, f, titles) in PLOTS {
            let name = format!("{what} {kind}");
            let Some(p) = f(d, &cfg) else {
                fails.push(format!("{name}: no plot"));
                continue;
            };
            save(what, kind, &p);
            let words = structure(&mut fails, &name, &p);
            for alts in titles {
                // Axis titles name the quantity and its unit (IEC 60027-1 / SI Brochure).
                check(
                    &mut fails,
                    "IEC 60027-1 / SI Brochure for unit symbols and prefixes",
                    &format!("{name}: axis title {alts:?}"),
                    words.iter().any(|w| alts.contains(&w.as_str())),
                    &words,
                );
            }
            // Tick labels with a unit read back as SI values: a space between number and
            // prefixed unit symbol (IEC 60027-1 / SI Brochure for unit symbols and prefixes).
            let ticks: Vec<&String> = words
                .iter()
                .filter(|w| {
                    !w.contains(' ')
                        || (w.split(' ').count() == 2 && w.split(' ').next().is_some_and(|n| n.parse::<f64>().is_ok()))
                })
                .collect();
            for t in ticks.iter().filter(|t| t.ends_with("Hz") && !t.ends_with("√Hz")) {
                check(
                    &mut fails,
                    "IEC 60027-1 / SI Brochure for unit symbols and prefixes",
                    &format!("{name}: tick {t} reads as a frequency"),
                    parse(t, Quantity::Frequency).is_ok(),
                    t,
                );
            }
            for t in ticks.iter().filter(|t| t.ends_with(" V") || t.ends_with(" mV") || t.ends_with(" µV")) {
                check(
                    &mut fails,
                    "IEC 60027-1 / SI Brochure for unit symbols and prefixes",
                    &format!("{name}: tick {t} reads as a voltage"),
                    parse(t, Quantity::Voltage).is_ok(),
                    t,
                );
            }
            let title = bold_texts(&p.svg).first().cloned().unwrap_or_default();
            // Painter's order (W3C SVG 1.1, rendering model): data under the texts and frames.
            let (data, text) = (p.svg.find("<poly"), p.svg.find("font-weight=\"bold\""));
            check(
                &mut fails,
                "W3C SVG 1.1 (rendering order)",
                &format!("{name}: data drawn before the texts"),
                data.is_some() && data < text,
                (data, text),
            );
            check(
                &mut fails,
                "this module's contract",
                &format!("{name}: title names the design"),
                title.starts_with(d.name.chars().take(8).collect::<String>().as_str()),
                &title,
            );
            let all = words.join(" | ");
            match kind {
                "response" => {
                    // Log frequency axis: labelled ticks are decades (common practice).
                    let hz: Vec<f64> = ticks
                        .iter()
                        .filter(|t| t.ends_with("Hz"))
                        .filter_map(|t| parse(t, Quantity::Frequency).ok())
                        .collect();
                    check(
                        &mut fails,
                        "common practice",
                        &format!("{name}: at least three decade labels"),
                        hz.len() >= 3,
                        &hz,
                    );
                    check(
                        &mut fails,
                        "common practice",
                        &format!("{name}: frequency labels are decades"),
                        hz.iter().all(|f| (f.log10() - f.log10().round()).abs() < 1e-6),
                        &hz,
                    );
                    let fs_ = d.request.destination.sample_rate;
                    for want in [
                        format!("fs/2 = {}", format(fs_ / 2.0, Quantity::Frequency)),
                        format!("fs = {}", format(fs_, Quantity::Frequency)),
                        format!("= {}", format(fs_ - d.request.source.band_high, Quantity::Frequency)),
                    ] {
                        check(
                            &mut fails,
                            "this module's contract",
                            &format!("{name}: legend gives {want}"),
                            all.contains(&want),
                            &all,
                        );
                    }
                    check(
                        &mut fails,
                        "this module's contract",
                        &format!("{name}: band shaded and named"),
                        all.contains("band "),
                        &all,
                    );
                }
                "transfer" => {
                    let midband = a.dc.kind == "midband";
                    check(
                        &mut fails,
                        "this module's contract",
                        &format!("{name}: title says midband for AC coupling"),
                        title.contains("midband") == midband,
                        &title,
                    );
                    for want in ["converter range", "output limits", "sensor range", "headroom"] {
                        check(
                            &mut fails,
                            "this module's contract",
                            &format!("{name}: legend names {want}"),
                            all.contains(want),
                            &all,
                        );
                    }
                }
                "tolerance" => {
                    let y = format!("yield {}", format(100.0 * a.tolerance.monte_carlo.yield_, Quantity::Ratio));
                    check(
                        &mut fails,
                        "this module's contract",
                        &format!("{name}: {y} in the title"),
                        title.contains(&y),
                        &title,
                    );
                    let doc_title =
                        p.svg.split("<title>").nth(1).and_then(|t| t.split("</title>").next()).unwrap_or("");
                    check(
                        &mut fails,
                        "this module's contract",
                        &format!("{name}: {y} in the document title"),
                        doc_title.contains(&y),
                        doc_title,
                    );
                }
                "noise" => {
                    let n = &a.noise;
                    let level = n.lsb / (n.band[1] - n.band[0]).sqrt();
                    let want = format!("LSB level {} = LSB / √(f_hi − f_lo)", format(level, Quantity::VoltageNoise));
                    check(
                        &mut fails,
                        "this module's contract",
                        &format!("{name}: legend states {want}"),
                        all.contains(&want),
                        &all,
                    );
                }
                _ => {}
            }
        }
    }
    finish(fails);
}

#[test]
fn markup_in_the_name_stays_text() {
    let mut fails = Vec::new();
    let evil = "<img src=x onerror=alert(1)>";
    let (_, d) = designs().iter().find(|(_, d)| d.name == evil).expect("scenario with markup in its name");
    for (kind, f, _) in PLOTS {
        let Some(p) = f(d, &PlotConfig::default()) else {
            fails.push(format!("{kind}: no plot"));
            continue;
        };
        // XML 1.0 / W3C SVG 1.1: markup in character data is escaped, so it stays text.
        check(
            &mut fails,
            "XML 1.0 (escaping) / W3C SVG 1.1",
            &format!("{kind}: no raw <img"),
            !p.svg.contains("<img"),
            "",
        );
        let doc = roxmltree::Document::parse(&p.svg).expect("XML");
        check(
            &mut fails,
            "XML 1.0 (escaping)",
            &format!("{kind}: no img element"),
            !doc.descendants().any(|n| n.has_tag_name("img")),
            "",
        );
        let t = texts(&doc);
        check(
            &mut fails,
            "XML 1.0 (escaping)",
            &format!("{kind}: the name reads back as text"),
            t.iter().any(|w| w.contains("<img src=x")),
            &t,
        );
    }
    finish(fails);
}

// ---------------------------------------------------------------------------------------
// Degenerate input: None or a valid drawing, never a panic.

#[test]
fn degenerate_designs_draw_or_return_none() {
    let mut fails = Vec::new();
    let (_, base) = designs().iter().find(|(w, _)| w == "harbour-hydrophone").expect("demo");
    let mut none = base.clone();
    none.analysis = None;
    for (kind, f, _) in PLOTS {
        check(
            &mut fails,
            "this module's contract",
            &format!("{kind}: None without an analysis"),
            f(&none, &PlotConfig::default()).is_none(),
            "",
        );
    }
    // A request that cannot be built gives a design without analysis.
    let bad = request("Zero span", 1.0, 1.0, "dc", (0.0, 10.0), (0.0, 3.3), 12, "1 kHz", "[3.3]", true);
    let bad = design(&bad);
    for (kind, f, _) in PLOTS {
        check(
            &mut fails,
            "this module's contract",
            &format!("{kind}: None for an infeasible request"),
            bad.analysis.is_none() == f(&bad, &PlotConfig::default()).is_none(),
            "",
        );
    }

    type Edit = fn(&mut Design);
    let edits: &[(&str, Edit)] = &[
        ("empty data", |d| {
            let a = d.analysis.as_mut().unwrap();
            a.ac.points.clear();
            a.dc.transfer.clear();
            a.noise.density.clear();
            a.tolerance.monte_carlo.histograms.output_at_min.counts.clear();
            a.tolerance.monte_carlo.histograms.output_at_max.counts.clear();
        }),
        ("NaN everywhere", |d| {
            let a = d.analysis.as_mut().unwrap();
            for p in &mut a.ac.points {
                p.mag_db = f64::NAN;
                p.phase_deg = f64::NAN;
            }
            for p in &mut a.dc.transfer {
                p.y = f64::NAN;
            }
            for p in &mut a.noise.density {
                p.output = f64::NAN;
            }
            a.ac.f_low_3db = Some(f64::NAN);
            a.noise.band = [f64::NAN, f64::NAN];
            a.noise.lsb = f64::NAN;
            a.dc.output_limits = [f64::NAN, f64::INFINITY];
            let h = &mut a.tolerance.monte_carlo.histograms;
            h.output_at_min.lo = f64::NAN;
            h.output_at_max.hi = f64::INFINITY;
            a.tolerance.worst_case.output_at_min = [f64::NAN, f64::NAN];
            a.tolerance.monte_carlo.yield_ = f64::NAN;
        }),
        ("some NaN points", |d| {
            let a = d.analysis.as_mut().unwrap();
            for (i, p) in a.ac.points.iter_mut().enumerate() {
                if i % 7 == 0 {
                    p.mag_db = f64::NAN;
                }
                if i % 11 == 0 {
                    p.f = f64::NAN;
                }
            }
            for p in a.noise.density.iter_mut().step_by(5) {
                p.output = f64::NAN;
            }
        }),
        ("a single point", |d| {
            let a = d.analysis.as_mut().unwrap();
            a.ac.points.truncate(1);
            a.dc.transfer.truncate(1);
            a.noise.density.truncate(1);
            a.tolerance.monte_carlo.histograms.output_at_min.counts.truncate(1);
        }),
        ("zero ranges", |d| {
            let a = d.analysis.as_mut().unwrap();
            for p in &mut a.ac.points {
                p.f = 1000.0;
                p.mag_db = 0.0;
                p.phase_deg = 0.0;
            }
            for p in &mut a.dc.transfer {
                p.x = 1.0;
                p.y = 1.0;
            }
            a.noise.band = [100.0, 100.0];
            for p in &mut a.noise.density {
                p.f = 100.0;
                p.output = 0.0;
            }
            let h = &mut a.tolerance.monte_carlo.histograms;
            h.output_at_min.hi = h.output_at_min.lo;
            h.output_at_max.counts.iter_mut().for_each(|c| *c = 0);
            d.request.destination.sample_rate = 0.0;
            d.request.destination.max = d.request.destination.min;
        }),
        ("huge values", |d| {
            let a = d.analysis.as_mut().unwrap();
            for p in &mut a.ac.points {
                p.mag_db *= 1e200;
            }
            for p in &mut a.dc.transfer {
                p.y *= 1e300;
            }
            for p in &mut a.noise.density {
                p.output *= 1e-290;
            }
            a.tolerance.monte_carlo.histograms.output_at_min.counts.iter_mut().for_each(|c| *c = u32::MAX);
        }),
    ];
    for (label, edit) in edits {
        let mut d = base.clone();
        edit(&mut d);
        for (kind, f, _) in PLOTS {
            let name = format!("{label} {kind}");
            match f(&d, &PlotConfig::default()) {
                Some(p) => {
                    save(&format!("degenerate {label}"), kind, &p);
                    structure(&mut fails, &name, &p);
                }
                None => fails.push(format!("{name}: None although the design has an analysis")),
            }
        }
    }
    // Odd options: tiny, huge font, NaN.
    let odd = [
        PlotConfig { width: 240.0, height: 160.0, font_size: 24.0 },
        PlotConfig { width: f64::NAN, height: -5.0, font_size: 0.0 },
        PlotConfig { width: 1200.0, height: 800.0, font_size: 13.0 },
        PlotConfig { width: 420.0, height: 300.0, font_size: 12.0 },
    ];
    for cfg in &odd {
        for (what, d) in designs().iter().take(2) {
            for (kind, f, _) in PLOTS {
                if let Some(p) = f(d, cfg) {
                    save(&format!("{what} at {} x {} font {}", cfg.width, cfg.height, cfg.font_size), kind, &p);
                    structure(&mut fails, &format!("{what} {kind} at {cfg:?}"), &p);
                }
            }
        }
    }
    finish(fails);
}
