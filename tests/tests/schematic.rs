//! The annotated schematic: SVG structure (W3C SVG 1.1), symbol choices (IEC 60617),
//! annotation and placement, for the demos and a table of our own scenarios covering every
//! topology synthesis produces. Sources are named beside each check; "common practice"
//! marks a rule of the trade rather than a standard.
//!
//! Set `RANGEFIT_SVG_DIR` to a directory to have every drawing written there for a look.

use rangefit_engine::amplifier::{Amplifier, Rails};
use rangefit_engine::circuit::{Builder, Circuit, PartKind, StageRole};
use rangefit_engine::draw::schematic::{schematic, test_points, Schematic, SchematicConfig};
use rangefit_engine::draw::svg::{BoxRect, Segment};
use rangefit_engine::request::Request;
use rangefit_engine::solve::Solver;
use rangefit_engine::synth::filter::sections::SectionKind;
use rangefit_engine::synth::{self, dc::Template, Limits};
use rangefit_engine::units::{format, Quantity};
use rangefit_engine::{demos, design};

/// A request of our own scenario (sensor range, coupling, band, converter range, supplies).
#[allow(clippy::too_many_arguments)]
fn request(
    name: &str, min: f64, max: f64, coupling: &str, band: (f64, f64), dest: (f64, f64), supplies: &str,
    keep_polarity: bool,
) -> String {
    format!(
        r#"{{"version":1,"name":"{name}","source":{{"kind":"single_ended","min":{min},"max":{max},
            "coupling":"{coupling}","impedance":"1k","band_low":{},"band_high":{}}},
        "destination":{{"min":{},"max":{},"bits":12,"sample_rate":"100 kHz","impedance":"100k"}},"supplies":{supplies},
        "keep_polarity":{keep_polarity}}}"#,
        band.0, band.1, dest.0, dest.1
    )
}

/// The same request with an oversampling converter (modulator at 64 × the 100 kHz rate).
fn oversampling(json: &str) -> String {
    json.replace(
        r#""impedance":"100k"}"#,
        r#""impedance":"100k","converter":"oversampling","modulator_rate":"6.4 MHz"}"#,
    )
}

/// The circuit `design` makes for `json`.
fn designed(json: &str) -> (Request, Circuit, String) {
    let req = Request::from_json(json).unwrap_or_else(|e| panic!("request does not read: {e}\n{json}"));
    let d = design(&req);
    let c = d.circuit.clone().unwrap_or_else(|| panic!("{}: no circuit: {:?}", req.name, d.checks));
    (req, c, d.topology)
}

/// The circuit one DC template makes for `json` (to reach the inverting stages directly).
fn forced(json: &str, template: Template) -> (Request, Circuit, String) {
    let req = Request::from_json(json).unwrap_or_else(|e| panic!("request does not read: {e}"));
    let rails = Rails::choose(&req);
    let amp = Amplifier::resolve(&req.amplifier, rails);
    let mut notes = Vec::new();
    let t = synth::target(&req, &amp, rails, &mut notes).expect("target");
    let s = synth::dc::synthesize_with(&req, &amp, rails, t, Limits::of(&amp, rails), &[template])
        .unwrap_or_else(|| panic!("{}: no {template:?} design", req.name));
    (req, s.circuit, s.topology)
}

/// Draws `c` as the application does: operating point at the sensor's mid-range.
fn draw(req: &Request, c: &Circuit, name: &str) -> Schematic {
    let mid = 0.5 * (req.source.min + req.source.max);
    let op = Solver::new(c).dc(mid).ok();
    let tps = test_points(req, c);
    let s = schematic(c, op.as_ref(), &tps, name, &SchematicConfig::default());
    if let Ok(dir) = std::env::var("RANGEFIT_SVG_DIR") {
        let file: String = name
            .chars()
            .map(|ch| {
                if ch.is_ascii_alphanumeric() {
                    ch
                } else if ch == '+' {
                    'P'
                } else if ch == '−' {
                    'M'
                } else {
                    '-'
                }
            })
            .collect();
        let _ = std::fs::write(format!("{dir}/{file}.svg"), &s.svg);
    }
    s
}

fn texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants().filter(|n| n.has_tag_name("text")).map(|n| n.text().unwrap_or("").to_string()).collect()
}

fn num(n: &roxmltree::Node, attr: &str) -> f64 {
    n.attribute(attr).and_then(|v| v.parse().ok()).unwrap_or(f64::NAN)
}

fn overlap(a: &BoxRect, b: &BoxRect) -> bool {
    a.x < b.x + b.w && b.x < a.x + a.w && a.y < b.y + b.h && b.y < a.y + a.h
}

/// Closed segments share a point.
fn meet(a: &Segment, b: &Segment) -> bool {
    let o = |ax: f64, ay: f64, bx: f64, by: f64, cx: f64, cy: f64| (bx - ax) * (cy - ay) - (by - ay) * (cx - ax);
    let within = |s: &Segment, x: f64, y: f64| {
        x >= s.x1.min(s.x2) - 1e-9
            && x <= s.x1.max(s.x2) + 1e-9
            && y >= s.y1.min(s.y2) - 1e-9
            && y <= s.y1.max(s.y2) + 1e-9
    };
    let (d1, d2) = (o(b.x1, b.y1, b.x2, b.y2, a.x1, a.y1), o(b.x1, b.y1, b.x2, b.y2, a.x2, a.y2));
    let (d3, d4) = (o(a.x1, a.y1, a.x2, a.y2, b.x1, b.y1), o(a.x1, a.y1, a.x2, a.y2, b.x2, b.y2));
    if d1 * d2 < 0.0 && d3 * d4 < 0.0 {
        return true;
    }
    (d1 == 0.0 && within(b, a.x1, a.y1))
        || (d2 == 0.0 && within(b, a.x2, a.y2))
        || (d3 == 0.0 && within(a, b.x1, b.y1))
        || (d4 == 0.0 && within(a, b.x2, b.y2))
}

/// The segment passes through the box (edges included).
fn crosses(b: &BoxRect, s: &Segment) -> bool {
    let inside = |x: f64, y: f64| x >= b.x && x <= b.x + b.w && y >= b.y && y <= b.y + b.h;
    if inside(s.x1, s.y1) || inside(s.x2, s.y2) {
        return true;
    }
    let e = |x1: f64, y1: f64, x2: f64, y2: f64| Segment { x1, y1, x2, y2, net: String::new() };
    let (x0, y0, x1, y1) = (b.x, b.y, b.x + b.w, b.y + b.h);
    [e(x0, y0, x1, y0), e(x1, y0, x1, y1), e(x1, y1, x0, y1), e(x0, y1, x0, y0)].iter().any(|edge| meet(s, edge))
}

/// Points where three or more wire ends of one net meet (a T counts the through wire twice).
fn junctions(wires: &[Segment]) -> Vec<(f64, f64)> {
    let same = |a: (f64, f64), b: (f64, f64)| (a.0 - b.0).abs() < 1e-6 && (a.1 - b.1).abs() < 1e-6;
    let mut out: Vec<(f64, f64)> = Vec::new();
    let nets: Vec<&Segment> = wires.iter().filter(|w| !w.net.is_empty()).collect();
    for w in &nets {
        for p in [(w.x1, w.y1), (w.x2, w.y2)] {
            let mut n = 0;
            for o in nets.iter().filter(|o| o.net == w.net) {
                if same(p, (o.x1, o.y1)) || same(p, (o.x2, o.y2)) {
                    n += 1;
                } else if meet(o, &Segment { x1: p.0, y1: p.1, x2: p.0, y2: p.1, net: String::new() }) {
                    n += 2;
                }
            }
            if n >= 3 && !out.iter().any(|q| same(*q, p)) {
                out.push(p);
            }
        }
    }
    out
}

/// The one check of a drawing: structure, readability, annotation and placement; with the
/// request also the design's own numbers (DC levels, test points, rails), each beside its
/// part, rail or net rather than in the notes under the drawing.
fn check(what: &str, c: &Circuit, s: &Schematic, req: Option<&Request>) {
    // W3C SVG 1.1: well-formed XML with an `svg` root in the SVG namespace, width, height and viewBox.
    let doc = roxmltree::Document::parse(&s.svg).unwrap_or_else(|e| panic!("{what}: not XML: {e}"));
    let root = doc.root_element();
    assert!(root.has_tag_name(("http://www.w3.org/2000/svg", "svg")), "{what}: root is not svg:svg");
    let view: Vec<f64> = root
        .attribute("viewBox")
        .unwrap_or_else(|| panic!("{what}: no viewBox"))
        .split_whitespace()
        .map(|v| v.parse().unwrap())
        .collect();
    assert_eq!(view.len(), 4, "{what}: viewBox {view:?}");
    assert_eq!(
        (num(&root, "width"), num(&root, "height")),
        (view[2], view[3]),
        "{what}: width/height differ from the viewBox"
    );
    // Standalone (W3C SVG 1.1 linking and scripting): no script, no external reference, no event handler.
    for n in doc.descendants().filter(|n| n.is_element()) {
        let tag = n.tag_name().name();
        assert!(!["script", "image", "use", "foreignObject", "a", "style"].contains(&tag), "{what}: element <{tag}>");
        for a in n.attributes() {
            assert!(!a.name().contains("href") && !a.name().starts_with("on"), "{what}: attribute {}", a.name());
            assert!(!a.value().contains("url("), "{what}: reference in {}", a.name());
        }
    }
    // Readable on screen and printed (common practice): text 12 px or more, strokes 1.5 px
    // or more, a white background. Width at most 1100 user units, so the drawing fits a
    // 1280-pixel-wide screen at full scale. Height: 700 for the gain stage's row (the limit
    // before the filter rows existed), plus at most 450 per further row (loops and caption
    // above a row's line, a reference divider hanging below it). The drawer puts at least
    // two filter sections on a row (410 units each, within the 1100), and the drive with
    // the converter box may take a row of its own: ⌈sections / 2⌉ + 1 rows at most.
    let sections = c.parts.iter().filter(|p| p.kind == PartKind::OpAmp && p.stage == StageRole::Filter).count();
    let drive = c.parts.iter().any(|p| p.stage == StageRole::Drive);
    // A high-impedance sensor's follower, a photodiode's transimpedance amplifier, or an
    // instrumentation amplifier's first stage takes a row of its own before the gain stage's.
    let buffer = c.parts.iter().any(|p| {
        p.kind == PartKind::OpAmp
            && matches!(p.stage, StageRole::Buffer | StageRole::Transimpedance | StageRole::InputStage)
    }) as usize;
    let rows = if sections + drive as usize == 0 { 0 } else { sections.div_ceil(2) + 1 } + buffer;
    let tall = 700.0 + 450.0 * rows as f64;
    assert!(
        view[2] <= 1100.0 && view[3] <= tall,
        "{what}: viewBox {} × {} is larger than 1100 × {tall}",
        view[2],
        view[3]
    );
    for n in doc.descendants().filter(|n| n.has_tag_name("text")) {
        let size = num(&n, "font-size");
        assert!((12.0..=18.0).contains(&size), "{what}: text {:?} at {size} px", n.text());
    }
    for n in doc.descendants().filter(|n| n.attribute("stroke-width").is_some()) {
        assert!(num(&n, "stroke-width") >= 1.5, "{what}: stroke width {:?}", n.attribute("stroke-width"));
    }
    let bg = doc.descendants().find(|n| n.has_tag_name("rect")).expect("background");
    assert_eq!(bg.attribute("fill"), Some("#ffffff"), "{what}: first rect is not a white background");

    let words = texts(&doc);
    // Every part to build carries its designator and its value with unit (common practice).
    for p in c.build_parts() {
        assert!(words.contains(&p.reference), "{what}: no text {}", p.reference);
        let value = match p.kind {
            PartKind::Resistor => format(p.value, Quantity::Resistance),
            PartKind::Capacitor => format(p.value, Quantity::Capacitance),
            PartKind::OpAmp => format(p.value, Quantity::Frequency),
            PartKind::VoltageSource | PartKind::Diode => format(p.value, Quantity::Voltage),
            PartKind::CurrentSource => format(p.value, Quantity::Current),
        };
        assert!(words.iter().any(|w| w.contains(&value)), "{what}: no text with {value} for {}", p.reference);
    }
    // The bench is drawn distinct from the parts to build: grey text.
    for n in doc.descendants().filter(|n| n.has_tag_name("text")) {
        let t = n.text().unwrap_or("");
        if c.parts.iter().any(|p| p.bench && p.reference == t) {
            assert_ne!(n.attribute("fill"), Some("#000000"), "{what}: bench part {t} drawn in black");
        }
    }
    // IEC 60617: a resistor is a rectangle, the amplifier a triangle.
    let polys: Vec<usize> = doc
        .descendants()
        .filter(|n| n.has_tag_name("polygon"))
        .map(|n| n.attribute("points").unwrap_or("").split_whitespace().count())
        .collect();
    let resistors = c.parts.iter().filter(|p| p.kind == PartKind::Resistor).count();
    assert!(polys.iter().filter(|&&k| k == 4).count() >= resistors, "{what}: fewer rectangles than resistors");
    let amps = c.parts.iter().filter(|p| p.kind == PartKind::OpAmp && p.nodes.len() >= 5).count();
    assert!(polys.iter().filter(|&&k| k == 3).count() >= amps.min(1), "{what}: no triangle for the amplifier");

    // Placement: the record matches the document; no two texts overlap; no text touches a
    // stroke; wires of different nets never meet (they would read as a connection).
    assert_eq!(s.texts.len(), words.len(), "{what}: recorded texts differ from the document");
    for (i, a) in s.texts.iter().enumerate() {
        for b in &s.texts[i + 1..] {
            assert!(!overlap(a, b), "{what}: text {:?} overlaps {:?}", a.text, b.text);
        }
        for w in &s.wires {
            assert!(!crosses(a, w), "{what}: text {:?} crosses the stroke {w:?}", a.text);
        }
        assert!(
            a.x >= view[0] && a.y >= view[1] && a.x + a.w <= view[0] + view[2] && a.y + a.h <= view[1] + view[3],
            "{what}: text {:?} outside the view",
            a.text
        );
    }
    let nets: Vec<&Segment> = s.wires.iter().filter(|w| !w.net.is_empty()).collect();
    for (i, a) in nets.iter().enumerate() {
        for b in &nets[i + 1..] {
            assert!(a.net == b.net || !meet(a, b), "{what}: wire of {} meets wire of {}: {a:?} {b:?}", a.net, b.net);
        }
    }
    // A dot at every junction and nowhere else (IEC 60617: junction of conductors).
    let dots: Vec<(f64, f64)> = doc
        .descendants()
        .filter(|n| n.has_tag_name("circle") && n.attribute("fill") == Some("#000000"))
        .map(|n| (num(&n, "cx"), num(&n, "cy")))
        .collect();
    let joins = junctions(&s.wires);
    for j in &joins {
        assert!(
            dots.iter().any(|d| (d.0 - j.0).abs() < 0.06 && (d.1 - j.1).abs() < 0.06),
            "{what}: no dot at the junction {j:?}"
        );
    }
    for d in &dots {
        assert!(
            joins.iter().any(|j| (d.0 - j.0).abs() < 0.06 && (d.1 - j.1).abs() < 0.06),
            "{what}: dot at {d:?} is no junction"
        );
    }
    // The surroundings: the sensor in a dashed box, the converter input as a box "ADC".
    assert!(words.iter().any(|w| w == "sensor") && words.iter().any(|w| w == "ADC"), "{what}: no sensor or ADC block");
    assert!(doc.descendants().any(|n| n.attribute("stroke-dasharray").is_some()), "{what}: no dashed sensor box");
    let Some(req) = req else { return };
    for w in &words {
        assert!(
            !w.contains("(no free place") && !w.starts_with("DC level at ") && !w.contains(" (node "),
            "{what}: moved to the notes: {w}"
        );
    }
    let op = Solver::new(c).dc(0.5 * (req.source.min + req.source.max)).unwrap();
    for node in ["ref", "inp1", "inn1", "adc", "sense", "cin1", "rg1"] {
        if let Some(v) = op.voltage(node) {
            let t = format(v, Quantity::Voltage);
            let zero = v.abs() < 1e-5 * (c.rail_pos - c.rail_neg) && words.iter().any(|w| w == "0 V");
            assert!(words.contains(&t) || zero, "{what}: no DC level {t} for {node}");
        }
    }
    for tp in test_points(req, c) {
        assert!(
            words.iter().any(|w| w.starts_with(&format!("{} ", tp.label))),
            "{what}: no {} on the drawing",
            tp.label
        );
    }
    for rail in c.parts.iter().filter(|p| p.stage == StageRole::Supply) {
        assert!(
            words.iter().any(|w| w.starts_with(&format!("{} ", rail.reference))),
            "{what}: no rail label {}",
            rail.reference
        );
    }
}

#[test]
fn demos_draw_cleanly() {
    for demo in demos::ALL {
        let (req, c, _) = designed(demo.json);
        let s = draw(&req, &c, demo.id);
        check(demo.id, &c, &s, Some(&req));
    }
}

/// A scenario: what it covers, its design (request, circuit, topology), the topology expected
/// and nodes that must exist.
type Row = (&'static str, (Request, Circuit, String), &'static str, &'static [&'static str]);

#[test]
fn every_topology_draws_cleanly() {
    // Our own scenarios; the expected topology names what each row covers.
    let rows: Vec<Row> = vec![
        (
            "offset at the + input",
            designed(&request("offset at +", -1.0, 1.0, "dc", (0.0, 100.0), (0.0, 3.3), "[3.3]", true)),
            "offset summed into its + input",
            &["inp1", "inn1"],
        ),
        (
            "offset at the − input",
            designed(&request("offset at -", 0.5, 2.5, "dc", (0.0, 100.0), (0.0, 3.3), "[3.3]", true)),
            "negative offset from the positive rail",
            &["inn1"],
        ),
        (
            "offset from the negative rail",
            designed(&request("negative rail", 0.0, 1.0, "dc", (0.0, 100.0), (-3.0, 3.0), "[5, -5]", false)),
            "offset summed into its + input",
            &["vneg"],
        ),
        (
            "divider into a buffer, dual supply",
            designed(&request("divider buffer", -4.0, 4.0, "dc", (0.0, 100.0), (-2.0, 2.0), "[5, -5]", true)),
            "divider into a buffer",
            &["vneg", "inp1"],
        ),
        (
            "summing divider into a buffer",
            designed(&request("summing buffer", 0.0, 3.3, "dc", (0.0, 100.0), (0.0, 3.3), "[3.3]", true)),
            "buffer",
            &["inp1"],
        ),
        (
            "sensor straight into the + input, dual supply",
            designed(&request("direct", -0.5, 0.5, "dc", (0.0, 100.0), (-4.0, 4.0), "[5, -5]", true)),
            "non-inverting amplifier",
            &["inn1", "vneg"],
        ),
        (
            "polarity may flip",
            designed(&request("free polarity", 0.0, 2.0, "dc", (0.0, 100.0), (0.0, 3.3), "[3.3]", false)),
            "amplifier",
            &["adc"],
        ),
        (
            "inverting, + input on a divider",
            forced(
                &request("inverting divider", 0.0, 2.0, "dc", (0.0, 100.0), (0.0, 3.3), "[3.3]", false),
                Template::InvertingPlus,
            ),
            "inverting amplifier with its + input on a divider",
            &["inn1", "inp1"],
        ),
        (
            "inverting, + input at ground",
            forced(
                &request("inverting ground", -1.0, 1.0, "dc", (0.0, 100.0), (-2.0, 2.0), "[5, -5]", false),
                Template::InvertingPlus,
            ),
            "inverting amplifier",
            &["inn1"],
        ),
        (
            "inverting summer from the negative rail",
            forced(
                &request("inverting summer", 0.0, 2.0, "dc", (0.0, 100.0), (0.0, 3.3), "[5, -5]", false),
                Template::InvertingSum,
            ),
            "inverting summer",
            &["inn1", "vneg"],
        ),
        (
            "AC attenuator and buffer",
            designed(&request("ac attenuator", -2.0, 2.0, "ac", (10.0, 1000.0), (0.0, 3.3), "[3.3]", true)),
            "attenuator and buffer",
            &["cin1", "ref"],
        ),
        (
            // An oversampling converter behind a rail-to-rail amplifier on the converter's own
            // supply: its switched-capacitor input gets the RC at the pin (synth::drive), whose
            // DC loss the gain stage makes up, so it is an amplifier just above unity gain. The
            // ±1.485 V swing fills the 90 % window of an exact 3.3 V rail, so the rail is held
            // exact (supply_tolerance 0).
            "AC near-unity amplifier, oversampling",
            designed(&oversampling(
                &request("ac buffer", -1.485, 1.485, "ac", (10.0, 1000.0), (0.0, 3.3), "[3.3]", true)
                    .replace(r#""supplies":[3.3]"#, r#""supplies":[3.3],"supply_tolerance":0"#),
            )),
            "non-inverting amplifier",
            &["ref", "adc"],
        ),
        (
            "gain in two stages, one rail",
            designed(&request("two stages", 0.0, 0.002, "dc", (0.0, 2.0), (0.0, 2.5), "[5]", true)),
            "two stages",
            &["pre", "pinp", "pinn"],
        ),
        (
            "gain in two stages, split rails",
            designed(&request("two stages split", 0.0, 0.001, "dc", (0.0, 5.0), (-2.5, 2.5), "[5, -5]", true)),
            "two stages",
            &["pre", "pinn"],
        ),
        (
            "AC amplifier, bias to ground, dual supply",
            designed(&request("ac ground bias", 1.0, 1.2, "ac", (10.0, 1000.0), (-2.0, 2.0), "[5, -5]", true)),
            "non-inverting amplifier",
            &["rg1", "vneg"],
        ),
        (
            "AC amplifier, polarised capacitors",
            designed(&request("ac polarised", 1.1, 1.3, "ac", (1.0, 1000.0), (0.0, 3.3), "[3.3]", true)),
            "non-inverting amplifier",
            &["ref", "rg1"],
        ),
    ];
    for (what, (req, c, topology), expect, nodes) in &rows {
        assert!(topology.contains(expect), "{what}: topology {topology:?}, expected {expect:?}");
        let all = c.nodes();
        for n in *nodes {
            assert!(all.iter().any(|m| m == n), "{what}: no node {n} (nodes {all:?})");
        }
        let s = draw(req, c, what);
        check(what, c, &s, Some(req));
        // Nothing of the design lands in the fallback area.
        assert!(
            !texts(&roxmltree::Document::parse(&s.svg).unwrap()).iter().any(|t| t.starts_with("Not placed")),
            "{what}: a part fell back"
        );
    }
}

#[test]
fn user_text_is_escaped() {
    // W3C XML 1.0 §2.4: "<" and "&" in character data must be escaped.
    let names = ["<img src=x onerror=alert(1)>", "R&D \"quoted\" 'single'", "tab\tand\u{1}control", "]]> & <![CDATA["];
    for name in names {
        let (req, c, _) = designed(&demos::ALL[0].json.replace(
            "Harbour hydrophone tap",
            &name.replace('\\', "\\\\").replace('"', "\\\"").replace('\t', "\\t").replace('\u{1}', "\\u0001"),
        ));
        let s = draw(&req, &c, name);
        let doc = roxmltree::Document::parse(&s.svg).unwrap_or_else(|e| panic!("{name:?}: not XML: {e}"));
        assert!(!doc.descendants().any(|n| n.has_tag_name("img")), "{name:?}: became an element");
        let kept: String =
            name.chars().filter(|c| !c.is_control() || *c == '\t').map(|c| if c == '\t' { ' ' } else { c }).collect();
        assert!(texts(&doc).contains(&kept), "{name:?}: title text missing");
        let title = doc.descendants().find(|n| n.has_tag_name("title")).and_then(|n| n.text()).unwrap_or("");
        assert_eq!(title, kept, "{name:?}: <title>");
        check(name, &c, &s, Some(&req));
    }
}

#[test]
fn polarised_capacitor_plus_faces_the_higher_dc_level() {
    // IEC 60617: a polarised capacitor carries "+" at its positive plate. A band reaching
    // down to 0.1 Hz makes the gain leg's DC block large enough to be an electrolytic (the
    // coupling capacitor, whose leakage would matter, is a ceramic): "+" on its side at the
    // reference level, the other plate at ground.
    let (req, c, _) =
        designed(&request("polarised coupling", 1.1, 1.3, "ac", (0.1, 1000.0), (0.0, 3.3), "[3.3]", true));
    let c1 = c
        .parts
        .iter()
        .find(|p| p.dielectric == Some(rangefit_engine::ratings::Dielectric::Electrolytic))
        .expect("an electrolytic");
    let op = Solver::new(&c).dc(1.2).unwrap();
    let (lo, hi) = (c1.nodes[0].clone(), c1.nodes[1].clone());
    let (lo, hi) = if op.voltage(&lo) < op.voltage(&hi) { (lo, hi) } else { (hi, lo) };
    assert!(
        op.voltage(&hi).unwrap() - op.voltage(&lo).unwrap() > 0.3,
        "{} sits between {lo} and {hi} at nearly the same level",
        c1.reference
    );
    let s = draw(&req, &c, "polarised coupling");
    // C1's leads: a wire end of each net facing the other across the plates.
    let ends = |net: &str| -> Vec<(f64, f64)> {
        s.wires.iter().filter(|w| w.net == net).flat_map(|w| [(w.x1, w.y1), (w.x2, w.y2)]).collect()
    };
    let mut pair = None;
    for a in ends(&lo) {
        for b in ends(&hi) {
            let d = (a.0 - b.0).hypot(a.1 - b.1);
            if d > 0.0 && d <= 10.0 {
                pair = Some((a, b));
            }
        }
    }
    let (a, b) = pair.unwrap_or_else(|| panic!("{}'s plates not found between its two nets", c1.reference));
    let mid = ((a.0 + b.0) / 2.0, (a.1 + b.1) / 2.0);
    let centre = |t: &BoxRect| (t.x + t.w / 2.0, t.y + t.h / 2.0);
    let plus = s.texts.iter().filter(|t| t.text == "+").min_by(|p, q| {
        let (cp, cq) = (centre(p), centre(q));
        (cp.0 - mid.0).hypot(cp.1 - mid.1).total_cmp(&(cq.0 - mid.0).hypot(cq.1 - mid.1))
    });
    let p = centre(plus.expect("no + mark"));
    assert!((p.0 - mid.0).hypot(p.1 - mid.1) < 30.0, "the nearest + mark is far from {}", c1.reference);
    let r = &c1.reference;
    assert!((p.0 - b.0).hypot(p.1 - b.1) < (p.0 - a.0).hypot(p.1 - a.1), "+ of {r} is on the {lo} side, not on {hi}");
    check("polarised coupling", &c, &s, Some(&req));
}

#[test]
fn test_points_follow_the_solver() {
    // TP1 sensor terminal, TP2 (AC) amplifier + input, TP3 converter input; the converter's
    // range is the design's own prediction (same solver, computed apart in design::predict).
    for demo in demos::ALL {
        let (req, c, _) = designed(demo.json);
        let d = design(&req);
        let p = d.predicted.expect("predicted");
        let tps = test_points(&req, &c);
        let ac = req.source.coupling == rangefit_engine::request::Coupling::Ac;
        // A differential pair (synth::front::difference: bench legs to `sensep` and `sensen`) has a
        // test point on each terminal instead of the one `sense`; behind an instrumentation
        // amplifier (synth::front::instrumentation::insert: U1 drives `oa`, U2 `ob`) one on each of the
        // first stage's outputs as well.
        let pair = c.nodes().iter().any(|n| n == "sensep");
        let inamp = c.parts.iter().any(|p| p.stage == StageRole::InputStage);
        let mut first: Vec<&str> = if pair { vec!["sensep", "sensen"] } else { vec!["sense"] };
        if inamp {
            first.extend(["oa", "ob"]);
        }
        let want: Vec<&str> = first.into_iter().chain(if ac { vec!["inp1", "adc"] } else { vec!["adc"] }).collect();
        assert_eq!(tps.iter().map(|t| t.node.as_str()).collect::<Vec<_>>(), want, "{}", demo.id);
        for (k, t) in tps.iter().enumerate() {
            assert_eq!(t.label, format!("TP{}", k + 1), "{}", demo.id);
            assert!(t.min <= t.max, "{}: {} range reversed", demo.id, t.label);
        }
        let out = tps.last().unwrap();
        let (lo, hi) = (p.output_at_min.min(p.output_at_max), p.output_at_min.max(p.output_at_max));
        assert!(
            (out.min - lo).abs() < 1e-6 && (out.max - hi).abs() < 1e-6,
            "{}: converter range {} … {} vs predicted {lo} … {hi}",
            demo.id,
            out.min,
            out.max
        );
        // The sensor terminal follows the sensor (loaded at most by a few per cent); a loop's
        // terminal carries the loop current times the shunt (Ohm's law).
        if req.source.kind == rangefit_engine::request::SourceKind::Photodiode {
            // A photodiode's terminal is the transimpedance amplifier's − input, held at the
            // + input's bias (virtual earth, synth::front::transimpedance): it barely moves while U1's output
            // `tia` swings by the photocurrent times R_f.
            let solver = Solver::new(&c);
            let at = |x: f64| solver.dc(x).ok().and_then(|o| o.voltage("tia")).expect("tia level");
            let swing = (at(req.source.max) - at(req.source.min)).abs();
            assert!(
                tps[0].max - tps[0].min < 0.01 * swing,
                "{}: TP1 span {} vs U1's output swing {swing}",
                demo.id,
                tps[0].max - tps[0].min
            );
            continue;
        }
        let span = (req.source.max - req.source.min) * d.current_loop().map_or(1.0, |l| l.shunt);
        assert!(
            (tps[0].max - tps[0].min - span).abs() < 0.05 * span,
            "{}: TP1 span {} vs sensor span {span}",
            demo.id,
            tps[0].max - tps[0].min
        );
    }
}

/// A circuit built part by part for the robustness rows.
fn odd(build: impl Fn(&mut Builder)) -> Circuit {
    let (_, base, _) = designed(demos::ALL[0].json);
    let mut b = Builder::default();
    build(&mut b);
    Circuit { parts: b.parts, stages: vec![], amplifier: base.amplifier, rail_pos: 3.3, rail_neg: 0.0 }
}

#[test]
fn odd_circuits_never_panic_and_parts_are_never_dropped() {
    let (_, two_stages, _) = designed(&request("two stages", 0.0, 0.002, "dc", (0.0, 2.0), (0.0, 2.5), "[5]", true));
    let (req, harbour, _) = designed(demos::ALL[0].json);
    let mut extra = harbour.clone();
    let mut b = Builder::default();
    b.add(PartKind::Resistor, 2.2e6, None, &["inp1", "adc"], StageRole::Gain, "positive feedback");
    b.add(PartKind::OpAmp, 1e6, None, &["x1", "x2", "vpos", "0", "x3"], StageRole::Gain, "second stage");
    b.add(PartKind::Capacitor, 1e-9, None, &["x3", "x1"], StageRole::Gain, "filter");
    for (p, name) in b.parts.iter_mut().zip(["R9", "U2", "C9"]) {
        p.reference = name.to_string();
    }
    extra.parts.extend(b.parts);
    // The filter chain broken in the middle: without section 2's amplifier the walk stops
    // at section 1's output; the rest of the filter and the drive go to the fallback area.
    let mut broken = harbour.clone();
    let second = broken
        .parts
        .iter()
        .filter(|p| p.kind == PartKind::OpAmp && p.stage == StageRole::Filter)
        .nth(1)
        .map(|p| p.reference.clone());
    broken.parts.retain(|p| Some(&p.reference) != second.as_ref());
    // An instrumentation amplifier without its gain resistor R_G (synth::front::instrumentation::insert):
    // not the first stage the drawing recognises, so it draws as before, parts not placed
    // by role in the fallback area.
    let beehive = demos::ALL.iter().find(|d| d.id == "beehive-scale").expect("beehive demo").json;
    let (_, mut no_rg, _) = designed(beehive);
    no_rg.parts.retain(|p| !p.purpose.starts_with("gain resistor R_G"));
    let rows: Vec<(&str, Circuit, bool)> = vec![
        ("extra parts off the roles", extra, true),
        ("filter chain broken", broken, true),
        ("instrumentation amplifier without R_G", no_rg, true),
        ("empty", odd(|_| {}), true),
        (
            "no amplifier",
            odd(|b| {
                b.add(PartKind::Resistor, 1e3, None, &["sense", "adc"], StageRole::Gain, "");
            }),
            true,
        ),
        (
            "short node lists",
            odd(|b| {
                b.add(PartKind::Resistor, 1e3, None, &["sense"], StageRole::Gain, "");
                b.add(PartKind::OpAmp, 1e6, None, &["a", "b"], StageRole::Gain, "");
                b.add(PartKind::Capacitor, 1e-9, None, &[], StageRole::Gain, "");
            }),
            true,
        ),
        (
            "values that are not numbers",
            odd(|b| {
                b.add(PartKind::Resistor, f64::NAN, None, &["sense", "inp1"], StageRole::Gain, "");
                b.add(PartKind::Capacitor, f64::INFINITY, None, &["inp1", "0"], StageRole::Gain, "");
                b.add(PartKind::OpAmp, -1.0, None, &["inp1", "adc", "vpos", "0", "adc"], StageRole::Gain, "");
            }),
            false,
        ),
        (
            "hostile node names",
            odd(|b| {
                b.add(PartKind::Resistor, 1e3, None, &["<a&b>", "\"q\""], StageRole::Gain, "");
                b.add(PartKind::OpAmp, 1e6, None, &["<a&b>", "adc", "vpos", "0", "adc"], StageRole::Gain, "");
            }),
            true,
        ),
        (
            // A transimpedance amplifier with no feedback, its + input at a node nothing
            // holds, and a photocurrent into a terminal nothing else uses.
            "transimpedance stage half built",
            odd(|b| {
                b.add(PartKind::OpAmp, 1e6, None, &["pdb", "sense", "vpos", "0", "tia"], StageRole::Transimpedance, "");
                b.add(PartKind::Resistor, 1e3, None, &["tia", "adc"], StageRole::Gain, "");
                b.bench("ISENSE", PartKind::CurrentSource, 1e-6, &["diode", "0"], StageRole::Sensor, "");
            }),
            true,
        ),
        // Gain in two stages (a design one stage cannot give), whole and with its first stage's
        // feedback resistor removed after synthesis.
        ("two stages", two_stages.clone(), true),
        (
            "two stages, first feedback removed",
            {
                let mut c = two_stages.clone();
                let fb =
                    |p: &rangefit_engine::circuit::Part| p.nodes.iter().any(|n| n == "pinn") && p.nodes[0] == "pre";
                c.parts.retain(|p| !fb(p));
                c
            },
            false,
        ),
        (
            "self loop",
            odd(|b| {
                b.add(PartKind::Resistor, 1e3, None, &["inp1", "inp1"], StageRole::Gain, "");
                b.add(PartKind::OpAmp, 1e6, None, &["inp1", "inp1", "inp1", "inp1", "inp1"], StageRole::Gain, "");
            }),
            false,
        ),
    ];
    for (what, c, strict) in rows {
        let tps = test_points(&req, &c);
        // The solver wants whole node lists; the drawing must cope without an operating point.
        let whole = c.nodes().len() > 1
            && c.parts.iter().all(|p| p.nodes.len() >= if p.kind == PartKind::OpAmp { 5 } else { 2 });
        let op = if whole { Solver::new(&c).dc(1.2).ok() } else { None };
        for cfg in [
            SchematicConfig::default(),
            SchematicConfig {
                title: false,
                dc_levels: false,
                font_size: f64::NAN,
                line_width: 0.0,
                polarised_from: 0.0,
            },
        ] {
            let s = schematic(&c, op.as_ref(), &tps, what, &cfg);
            if let (Ok(dir), true) = (std::env::var("RANGEFIT_SVG_DIR"), cfg.title) {
                let _ = std::fs::write(format!("{dir}/odd-{}.svg", what.replace(' ', "-")), &s.svg);
            }
            let doc = roxmltree::Document::parse(&s.svg).unwrap_or_else(|e| panic!("{what}: not XML: {e}"));
            let words = texts(&doc);
            for p in &c.parts {
                // A rail is drawn as its bar labelled "VPOS +3.3 V".
                assert!(
                    words.iter().any(|w| *w == p.reference || w.starts_with(&format!("{} ", p.reference))),
                    "{what}: part {} dropped",
                    p.reference
                );
            }
            if strict {
                check(what, &c, &s, None);
            }
        }
    }
}

/// What a design with a filter must show: the section kinds (`None`: whatever the design
/// chose), whether a drive resistor and a clamp diode are there.
struct Chain {
    kinds: Option<Vec<SectionKind>>,
    drive: bool,
    clamp: bool,
}

/// The one check of the rows after the gain stage: the design's sections and drive match
/// the expectation; every filter, filter-reference and drive part is drawn by role (its own
/// group, no fallback area at all); each section's amplifier is a triangle; each section
/// carries its caption; continuation flags come in pairs (end of one row, start of the next).
fn check_chain(what: &str, req: &Request, c: &Circuit, s: &Schematic, want: &Chain) {
    check(what, c, s, Some(req));
    let d = design(req);
    let f = d.filter.as_ref().unwrap_or_else(|| panic!("{what}: no filter"));
    let kinds: Vec<SectionKind> = f.sections.iter().map(|x| x.kind).collect();
    if let Some(k) = &want.kinds {
        assert_eq!(&kinds, k, "{what}: section kinds");
    }
    assert_eq!(
        c.parts.iter().any(|p| p.stage == StageRole::Drive && p.kind == PartKind::Resistor),
        want.drive,
        "{what}: drive resistor"
    );
    assert_eq!(c.parts.iter().any(|p| p.kind == PartKind::Diode), want.clamp, "{what}: clamp diode");

    let doc = roxmltree::Document::parse(&s.svg).unwrap();
    let words = texts(&doc);
    assert!(!words.iter().any(|t| t.starts_with("Not placed")), "{what}: a part fell back");
    let group = |r: &str| part_group(&doc, r);
    let amps: Vec<&rangefit_engine::circuit::Part> =
        c.parts.iter().filter(|p| p.kind == PartKind::OpAmp && p.stage == StageRole::Filter).collect();
    // A first-order pole built into the gain stage has no amplifier of its own.
    let separate = f.sections.iter().filter(|x| !x.in_gain_stage).count();
    assert_eq!(amps.len(), separate, "{what}: one amplifier per separate section");
    let refs: Vec<&String> = amps.iter().filter_map(|u| u.nodes.first()).collect();
    for p in c.parts.iter().filter(|p| !p.bench) {
        let filter_ref = p.stage == StageRole::Reference && p.nodes.iter().any(|n| refs.contains(&n) && n != "0");
        if matches!(p.stage, StageRole::Filter | StageRole::Drive) || filter_ref {
            let g = group(&p.reference).unwrap_or_else(|| panic!("{what}: {} is not drawn by role", p.reference));
            if matches!(p.kind, PartKind::OpAmp | PartKind::Diode) {
                assert!(is_triangle(g), "{what}: {} has no triangle", p.reference);
            }
        }
    }
    for (k, x) in f.sections.iter().enumerate().map(|(i, x)| (i + 1, x)).filter(|(_, x)| !x.in_gain_stage) {
        assert!(
            words.iter().any(|w| w.starts_with(&format!("section {k} · "))),
            "{what}: no caption for section {k} ({:?})",
            x.kind
        );
    }
    // Continuation flags: pentagons, each holding a node name that appears in exactly two.
    let mut names: Vec<String> = Vec::new();
    for p in doc.descendants().filter(|n| {
        n.has_tag_name("polygon") && n.attribute("points").is_some_and(|p| p.split_whitespace().count() == 5)
    }) {
        let pts: Vec<(f64, f64)> = p
            .attribute("points")
            .unwrap()
            .split_whitespace()
            .filter_map(|xy| xy.split_once(','))
            .map(|(x, y)| (x.parse().unwrap(), y.parse().unwrap()))
            .collect();
        let (x0, x1) = pts.iter().fold((f64::MAX, f64::MIN), |(a, b), q| (a.min(q.0), b.max(q.0)));
        let (y0, y1) = pts.iter().fold((f64::MAX, f64::MIN), |(a, b), q| (a.min(q.1), b.max(q.1)));
        let inside = doc
            .descendants()
            .find(|t| t.has_tag_name("text") && (x0..x1).contains(&num(t, "x")) && (y0..y1).contains(&num(t, "y")));
        names.push(inside.and_then(|t| t.text()).unwrap_or_else(|| panic!("{what}: an empty flag")).to_string());
    }
    for n in &names {
        assert_eq!(names.iter().filter(|m| *m == n).count(), 2, "{what}: flag {n} is not one of a pair ({names:?})");
        assert!(c.nodes().contains(n), "{what}: flag {n} names no node");
    }
}

#[test]
fn filter_and_drive_are_drawn_by_role() {
    use SectionKind::{FirstOrder, MultipleFeedback, SallenKey};
    let harbour = demos::ALL.iter().find(|d| d.id == "harbour-hydrophone").expect("harbour demo").json;
    let with_filter = |filter: &str| harbour.replacen('{', &format!(r#"{{"filter": {filter},"#), 1);
    let rows: Vec<(&str, String, Chain)> = vec![
        // The demo: the default topology is Sallen-Key (request::FilterSpec); a converter of
        // unknown kind samples its input, so the drive has a charge bucket behind a resistor
        // (synth::drive); one 3.3 V supply cannot drive the pin below ground, so no clamp.
        ("harbour hydrophone", harbour.to_string(), Chain { kinds: None, drive: true, clamp: false }),
        // Multiple feedback with the polarity kept: an odd number of inverting sections would
        // flip the output, so the lowest-Q section stays Sallen-Key (synth::chain's
        // filter_topology note); the order (6) is the design's for the demo's alias rule.
        (
            "harbour, multiple feedback",
            with_filter(r#"{"topology": "multiple_feedback"}"#),
            Chain { kinds: Some(vec![SallenKey, MultipleFeedback, MultipleFeedback]), drive: true, clamp: false },
        ),
        // Multiple feedback throughout (polarity free): every section inverting, one reference.
        (
            "harbour, multiple feedback throughout",
            with_filter(r#"{"topology": "multiple_feedback"}, "keep_polarity": false"#),
            Chain { kinds: Some(vec![MultipleFeedback; 3]), drive: true, clamp: false },
        ),
        // Odd order: ⌈3/2⌉ sections, a first-order one and one of second order (a cascade of
        // second-order sections, the odd pole alone; standard cascade design), lowest Q first.
        (
            "harbour, order 3",
            with_filter(r#"{"order": 3}"#),
            Chain { kinds: Some(vec![FirstOrder, SallenKey]), drive: true, clamp: false },
        ),
        // Order 8, the request's largest (request::DEFAULT_MAX_ORDER): four sections, three rows.
        (
            "harbour, order 8",
            with_filter(r#"{"order": 8}"#),
            Chain { kinds: Some(vec![SallenKey; 4]), drive: true, clamp: false },
        ),
        // ±5 V supplies into a 0 … 3.3 V converter: the amplifier can pull the pin 5 V below
        // ground, more than the 0.3 V clamp drop, so a Schottky clamp from ground goes in
        // (synth::drive).
        (
            "dual supply, clamp",
            request("clamp", -1.0, 1.0, "dc", (0.0, 1000.0), (0.0, 3.3), "[5, -5]", true),
            Chain { kinds: None, drive: true, clamp: true },
        ),
        // An oversampling converter's switched-capacitor input gets its RC at the pin too
        // (synth::drive), settled at the modulator rate.
        (
            "oversampling, drive",
            oversampling(&request("os drive", -1.485, 1.485, "ac", (10.0, 1000.0), (0.0, 3.3), "[3.3]", true)),
            Chain { kinds: None, drive: true, clamp: false },
        ),
    ];
    for (what, json, want) in &rows {
        let (req, c, _) = designed(json);
        let s = draw(&req, &c, what);
        check_chain(what, &req, &c, &s, want);
    }
}

/// A high-impedance request of our own (sensor range, coupling, source resistance and
/// capacitance, band, converter range, supplies).
#[allow(clippy::too_many_arguments)]
fn high_impedance(
    name: &str, min: f64, max: f64, coupling: &str, source: (&str, &str), band: (&str, &str), dest: (f64, f64),
    supplies: &str,
) -> String {
    format!(
        r#"{{"version":1,"name":"{name}","source":{{"kind":"high_impedance","min":{min},"max":{max},
            "coupling":"{coupling}","impedance":"{}","capacitance":"{}","band_low":"{}","band_high":"{}"}},
        "destination":{{"min":{},"max":{},"bits":12,"sample_rate":"5 kHz"}},"supplies":{supplies}}}"#,
        source.0, source.1, band.0, band.1, dest.0, dest.1
    )
}

/// Every point a part's group draws through (lines, circles, polygons).
/// The drawn group of part `r` (`<g class="part" data-ref="r">`).
fn part_group<'a, 'i>(doc: &'a roxmltree::Document<'i>, r: &str) -> Option<roxmltree::Node<'a, 'i>> {
    doc.descendants()
        .find(|n| n.has_tag_name("g") && n.attribute("class") == Some("part") && n.attribute("data-ref") == Some(r))
}

/// IEC 60617: an amplifier's symbol is a triangle (a three-point polygon in its group).
fn is_triangle(g: roxmltree::Node) -> bool {
    g.children()
        .any(|k| k.has_tag_name("polygon") && k.attribute("points").is_some_and(|p| p.split_whitespace().count() == 3))
}

/// Every part placed by role: nothing in the fallback area, every part but the supplies
/// drawn as its own group.
fn placed_by_role(what: &str, doc: &roxmltree::Document, words: &[String], c: &Circuit) {
    assert!(!words.iter().any(|t| t.starts_with("Not placed")), "{what}: a part fell back");
    for p in &c.parts {
        if !(p.bench && p.stage == StageRole::Supply) {
            assert!(part_group(doc, &p.reference).is_some(), "{what}: {} not drawn", p.reference);
        }
    }
}

fn group_points(g: roxmltree::Node) -> Vec<(f64, f64)> {
    let mut v = Vec::new();
    for n in g.descendants().filter(|n| n.is_element()) {
        match n.tag_name().name() {
            "line" => v.extend([(num(&n, "x1"), num(&n, "y1")), (num(&n, "x2"), num(&n, "y2"))]),
            "circle" => v.push((num(&n, "cx"), num(&n, "cy"))),
            "polygon" | "polyline" => v.extend(
                n.attribute("points")
                    .unwrap_or("")
                    .split_whitespace()
                    .filter_map(|xy| xy.split_once(','))
                    .map(|(x, y)| (x.parse().unwrap(), y.parse().unwrap())),
            ),
            _ => {}
        }
    }
    v
}

/// The one check of a high-impedance front end: the drawing passes [`check`]; every part is
/// drawn by role (no fallback area); the follower is a triangle and carries its designator
/// and GBW line; the sensor box (the dashed rectangle) holds VSENSE, RSENSE and CSENSE; a
/// lifted return shows its node's name, a return at ground none; the follower's output
/// continues to the gain stage's row through a pair of flags.
fn check_buffer(what: &str, req: &Request, c: &Circuit, s: &Schematic, lifted: bool) {
    check(what, c, s, Some(req));
    let doc = roxmltree::Document::parse(&s.svg).unwrap();
    let words = texts(&doc);
    // Design contract (synth::front::follower::insert): U1 is the follower of the buffer stage, + at
    // the sensor terminal, − tied to its output.
    let u1 = c.parts.iter().find(|p| p.reference == "U1").unwrap_or_else(|| panic!("{what}: no U1"));
    assert_eq!((u1.kind, u1.stage), (PartKind::OpAmp, StageRole::Buffer), "{what}: U1 is not the buffer");
    assert_eq!(
        (u1.nodes[0].as_str(), u1.nodes[1] == u1.nodes[4]),
        ("sense", true),
        "{what}: U1 is not a follower at sense"
    );
    placed_by_role(what, &doc, &words, c);
    let group = |r: &str| part_group(&doc, r);
    // IEC 60617: the amplifier is a triangle; labelled like the other amplifiers (common
    // practice: designator and the requirement on it).
    let g = group("U1").unwrap_or_else(|| panic!("{what}: U1 not drawn"));
    assert!(is_triangle(g), "{what}: U1 has no triangle");
    assert!(
        words.iter().any(|w| w == "U1") && words.iter().filter(|w| w.starts_with("GBW ≥")).count() >= 2,
        "{what}: U1 unlabelled"
    );
    // Design contract: the bench's sensor model is VSENSE, RSENSE and CSENSE; drawn inside
    // the dashed sensor box (the bench shown apart from what is built, common practice).
    let bx = doc.descendants().find(|n| n.attribute("stroke-dasharray").is_some()).expect("sensor box");
    let corners = group_points(bx).into_iter();
    let (x0, x1, y0, y1) = corners.fold((f64::MAX, f64::MIN, f64::MAX, f64::MIN), |(a, b, c, d), (x, y)| {
        (a.min(x), b.max(x), c.min(y), d.max(y))
    });
    let (w, h) = (x1 - x0, y1 - y0);
    for r in ["VSENSE", "RSENSE", "CSENSE"] {
        let g = group(r).unwrap_or_else(|| panic!("{what}: {r} not drawn"));
        for (x, y) in group_points(g) {
            assert!(
                (x0 - 0.5..=x0 + w + 0.5).contains(&x) && (y0 - 0.5..=y0 + h + 0.5).contains(&y),
                "{what}: {r} outside the sensor box at ({x}, {y})"
            );
        }
    }
    // Design contract: the bias reference `bref` exists (AC on one supply) exactly when
    // expected (its parts are drawn by role: checked above with every other part).
    assert_eq!(c.nodes().iter().any(|n| n == "bref"), lifted, "{what}: bias reference?");
    // Continuation: the follower's output leaves its row in a flag and the gain row starts
    // from one (two flags holding "buf").
    let flags = doc.descendants().filter(|n| n.has_tag_name("text") && n.text() == Some(u1.nodes[4].as_str())).count();
    assert!(flags >= 2, "{what}: {} flags for the follower's output", flags);
}

#[test]
fn high_impedance_front_ends_are_drawn_by_role() {
    let ph = demos::ALL.iter().find(|d| d.id == "greenhouse-ph").expect("pH demo").json;
    let rows: Vec<(&str, String, bool)> = vec![
        // The demo: ±0.3 V about ground on a ±5 V board; no bias reference is needed.
        ("pH electrode, DC, split rails", ph.to_string(), false),
        // 0.2 … 1 V fits the follower on 3.3 V: the return stays at ground, CSENSE shunts the
        // terminal to ground.
        (
            "electrode, DC, return at ground",
            high_impedance("dc ground", 0.2, 1.0, "dc", ("100 MΩ", "100 pF"), ("0 Hz", "10 Hz"), (0.0, 3.3), "[3.3]"),
            false,
        ),
        // A piezo film on one supply: R_b to the mid-rail return, divider with its bypass.
        (
            "piezo film, AC, one supply",
            high_impedance("ac single", -0.5, 0.5, "ac", ("10 GΩ", "1.5 nF"), ("2 Hz", "500 Hz"), (0.0, 3.3), "[3.3]"),
            true,
        ),
        // Split rails: R_b and the return to ground, no divider.
        (
            "piezo film, AC, split rails",
            high_impedance("ac dual", -0.5, 0.5, "ac", ("10 GΩ", "1.5 nF"), ("2 Hz", "500 Hz"), (-2.0, 2.0), "[5, -5]"),
            false,
        ),
    ];
    for (what, json, lifted) in &rows {
        let (req, c, _) = designed(json);
        let s = draw(&req, &c, what);
        check_buffer(what, &req, &c, &s, *lifted);
    }
}

/// The one check of a photodiode front end: the drawing passes [`check`]; every part is
/// drawn by role (no fallback area); U1 is a triangle with its designator and GBW line; the
/// sensor box holds ISENSE, IDARK when present, and CSENSE; the bias node `pdb` exists
/// exactly when expected; U1's output continues to the gain stage's row through a pair of
/// flags.
fn check_photodiode(what: &str, req: &Request, c: &Circuit, s: &Schematic, dark: bool, biased: bool) {
    check(what, c, s, Some(req));
    let doc = roxmltree::Document::parse(&s.svg).unwrap();
    let words = texts(&doc);
    // Design contract (synth::front::transimpedance::insert): U1 is the transimpedance amplifier, − input at
    // the sensor terminal, output `tia`, + input at `pdb` (one supply) or ground (split rails).
    let u1 = c.parts.iter().find(|p| p.reference == "U1").unwrap_or_else(|| panic!("{what}: no U1"));
    assert_eq!(
        (u1.kind, u1.stage),
        (PartKind::OpAmp, StageRole::Transimpedance),
        "{what}: U1 is not the transimpedance stage"
    );
    assert_eq!((u1.nodes[1].as_str(), u1.nodes[4].as_str()), ("sense", "tia"), "{what}: U1's − input or output");
    assert_eq!(u1.nodes[0] == "pdb", biased, "{what}: U1's + input");
    placed_by_role(what, &doc, &words, c);
    let group = |r: &str| part_group(&doc, r);
    // IEC 60617: the amplifier is a triangle; labelled like the other amplifiers (common
    // practice: designator and the requirement on it).
    let g = group("U1").unwrap_or_else(|| panic!("{what}: U1 not drawn"));
    assert!(is_triangle(g), "{what}: U1 has no triangle");
    assert!(
        words.iter().any(|w| w == "U1") && words.iter().filter(|w| w.starts_with("GBW ≥")).count() >= 2,
        "{what}: U1 unlabelled"
    );
    // Design contract: the bench's sensor model is ISENSE (and IDARK with a dark current)
    // and CSENSE; drawn inside the dashed sensor box (the bench shown apart from what is
    // built, common practice). IEC 60617: a current source is a circle with the arrow beside
    // it, which lies outside the circle but inside the box.
    let bx = doc.descendants().find(|n| n.attribute("stroke-dasharray").is_some()).expect("sensor box");
    let corners = group_points(bx).into_iter();
    let (x0, x1, y0, y1) = corners.fold((f64::MAX, f64::MIN, f64::MAX, f64::MIN), |(a, b, c, d), (x, y)| {
        (a.min(x), b.max(x), c.min(y), d.max(y))
    });
    let mut inside = vec!["ISENSE", "CSENSE"];
    if dark {
        inside.push("IDARK");
    }
    assert_eq!(c.parts.iter().any(|p| p.reference == "IDARK"), dark, "{what}: IDARK?");
    for r in inside {
        let g = group(r).unwrap_or_else(|| panic!("{what}: {r} not drawn"));
        for (x, y) in group_points(g) {
            assert!(
                (x0 - 0.5..=x1 + 0.5).contains(&x) && (y0 - 0.5..=y1 + 0.5).contains(&y),
                "{what}: {r} outside the sensor box at ({x}, {y})"
            );
        }
    }
    // Design contract: no VSENSE or RSENSE in a photodiode's bench.
    assert!(
        !c.parts.iter().any(|p| p.reference == "VSENSE" || p.reference == "RSENSE"),
        "{what}: a voltage sensor model"
    );
    // Continuation: U1's output leaves its row in a flag and the gain row starts from one
    // (two flags holding "tia").
    let flags = doc.descendants().filter(|n| n.has_tag_name("text") && n.text() == Some("tia")).count();
    assert!(flags >= 2, "{what}: {} flags for U1's output", flags);
}

#[test]
fn photodiode_front_ends_are_drawn_by_role() {
    let light = demos::ALL.iter().find(|d| d.id == "greenhouse-light").expect("light demo").json;
    let rows: Vec<(&str, String, bool, bool)> = vec![
        // The demo: one 3.3 V supply, so the + input sits on the bias divider `pdb` with its
        // bypass (synth::front::transimpedance: the output kept off the lower rail); a dark current is stated.
        ("greenhouse light, one supply, dark current", light.to_string(), true, true),
        // Split rails: the + input at ground, no divider; no dark current stated, no IDARK.
        (
            "slit diode, split rails",
            r#"{"name": "Spectrometer slit diode", "source": {"kind": "photodiode", "min": 0, "max": "2 µA",
                "capacitance": "15 pF", "band_high": "2 kHz"},
                "destination": {"min": -2, "max": 2, "bits": 14, "sample_rate": "20 kHz"}, "supplies": [5, -5]}"#
                .to_string(),
            false,
            false,
        ),
    ];
    for (what, json, dark, biased) in &rows {
        let (req, c, _) = designed(json);
        let s = draw(&req, &c, what);
        check_photodiode(what, &req, &c, &s, *dark, *biased);
    }
}

/// The one check of a differential front end: the drawing passes [`check`]; every part is
/// drawn by role (no fallback area); U1 (and the reference follower U2 when there is one) is
/// a triangle with its designator and GBW line; the sensor box holds both legs (VSENSE,
/// VCM, RSENSEP, RSENSEN); the reference node `ref` exists exactly when expected.
fn check_differential(what: &str, req: &Request, c: &Circuit, s: &Schematic, follower: bool) {
    check(what, c, s, Some(req));
    let doc = roxmltree::Document::parse(&s.svg).unwrap();
    let words = texts(&doc);
    // Design contract (synth::front::difference::synthesize): U1 is the difference amplifier of the
    // gain stage, + input `inp1`, − input `inn1`; with a non-zero reference U2 follows the
    // divider node `dref` and drives `ref`, where R4 of the amplifier ends.
    let u1 = c.parts.iter().find(|p| p.reference == "U1").unwrap_or_else(|| panic!("{what}: no U1"));
    assert_eq!((u1.kind, u1.stage), (PartKind::OpAmp, StageRole::Gain), "{what}: U1 is not the gain stage");
    assert_eq!((u1.nodes[0].as_str(), u1.nodes[1].as_str()), ("inp1", "inn1"), "{what}: U1's inputs");
    assert_eq!(c.nodes().iter().any(|n| n == "ref"), follower, "{what}: reference follower?");
    placed_by_role(what, &doc, &words, c);
    let group = |r: &str| part_group(&doc, r);
    // IEC 60617: an amplifier is a triangle; labelled like the other amplifiers (common
    // practice: designator and the requirement on it), U2 as well when it is there.
    let mut amps = vec!["U1"];
    if follower {
        let u2 = c.parts.iter().find(|p| p.reference == "U2").unwrap_or_else(|| panic!("{what}: no U2"));
        assert_eq!(
            (u2.stage, u2.nodes[1].as_str(), u2.nodes[4].as_str()),
            (StageRole::Reference, "ref", "ref"),
            "{what}: U2 is not the reference follower"
        );
        amps.push("U2");
    }
    for u in &amps {
        let g = group(u).unwrap_or_else(|| panic!("{what}: {u} not drawn"));
        assert!(is_triangle(g), "{what}: {u} has no triangle");
        assert!(words.iter().any(|w| w == u), "{what}: {u} unlabelled");
    }
    let amplifiers = c.parts.iter().filter(|p| p.kind == PartKind::OpAmp).count();
    assert!(
        words.iter().filter(|w| w.starts_with("GBW ≥")).count() >= amplifiers,
        "{what}: an amplifier without its GBW line"
    );
    // Design contract: the bench's model of the pair is VSENSE between the legs, VCM from
    // the − leg to ground and a resistor in each leg; drawn inside the dashed sensor box
    // (the bench shown apart from what is built, common practice).
    let bx = doc.descendants().find(|n| n.attribute("stroke-dasharray").is_some()).expect("sensor box");
    let corners = group_points(bx).into_iter();
    let (x0, x1, y0, y1) = corners.fold((f64::MAX, f64::MIN, f64::MAX, f64::MIN), |(a, b, c, d), (x, y)| {
        (a.min(x), b.max(x), c.min(y), d.max(y))
    });
    for r in ["VSENSE", "VCM", "RSENSEP", "RSENSEN"] {
        let g = group(r).unwrap_or_else(|| panic!("{what}: {r} not drawn"));
        for (x, y) in group_points(g) {
            assert!(
                (x0 - 0.5..=x1 + 0.5).contains(&x) && (y0 - 0.5..=y1 + 0.5).contains(&y),
                "{what}: {r} outside the sensor box at ({x}, {y})"
            );
        }
    }
    // The terminals are named in the drawing, the + leg's above the − leg's (as the bench
    // model puts them: sensep upper, sensen lower).
    let at = |t: &str| {
        doc.descendants()
            .find(|n| n.has_tag_name("text") && n.text() == Some(t))
            .map(|n| num(&n, "y"))
            .unwrap_or_else(|| panic!("{what}: no terminal {t}"))
    };
    assert!(at("sensep") < at("sensen"), "{what}: sensep is not above sensen");
}

#[test]
fn differential_front_ends_are_drawn_by_role() {
    let airflow = demos::ALL.iter().find(|d| d.id == "polytunnel-airflow").expect("airflow demo").json;
    let rows: Vec<(&str, String, bool)> = vec![
        // The demo: ±2 V riding near 2.5 V into a 0 … 3.3 V converter on one 5 V supply, so
        // the output needs an offset: R4 ends at `ref`, driven by U2 from a divider with its
        // bypass (synth::front::difference: a divider alone would add its resistance to R4).
        ("polytunnel airflow, one supply, buffered reference", airflow.to_string(), true),
        // Split rails, ±1 V into ±2.5 V: no offset, so R4 goes to ground and there is no U2.
        (
            "bench probe, split rails, reference at ground",
            r#"{"name": "Bench differential probe", "source": {"kind": "differential", "min": -1, "max": 1,
                "common_mode_min": -2, "common_mode_max": 2, "impedance": "100", "band_high": "1 kHz"},
                "destination": {"min": -2.5, "max": 2.5, "bits": 12, "sample_rate": "20 kHz"}, "supplies": [5, -5]}"#
                .to_string(),
            false,
        ),
    ];
    for (what, json, follower) in &rows {
        let (req, c, _) = designed(json);
        let s = draw(&req, &c, what);
        check_differential(what, &req, &c, &s, *follower);
    }
}

/// A differential pair of our own with `front_end` set (`source.front_end`: auto,
/// difference or instrumentation) on one supply into a 0 … 3.3 V converter.
fn pair(
    name: &str, range: (&str, &str), common_mode: (f64, f64), impedance: &str, band_high: &str, supply: f64,
) -> String {
    format!(
        r#"{{"version":1,"name":"{name}","source":{{"kind":"differential","min":"{}","max":"{}","common_mode_min":{},
            "common_mode_max":{},"impedance":"{impedance}","band_high":"{band_high}","front_end":"instrumentation"}},
        "destination":{{"min":0,"max":3.3,"bits":12,"sample_rate":"10 kHz"}},"supplies":[{supply}]}}"#,
        range.0, range.1, common_mode.0, common_mode.1
    )
}

/// The one check of an instrumentation amplifier: the drawing passes [`check`]; every part
/// is drawn by role (no fallback area); U1 on the upper leg above U2 on the lower, each a
/// triangle with its designator, U3 (the difference amplifier) as well; with gain in the
/// first stage R_G stands upright between the two amplifiers and each R_F lies between
/// them, followers have neither; the first stage's outputs carry test points and continue
/// to the difference stage's row through a pair of flags each; the caption is the model's
/// description of the stage.
fn check_instrumentation(what: &str, req: &Request, c: &Circuit, s: &Schematic, followers: bool) {
    check(what, c, s, Some(req));
    let doc = roxmltree::Document::parse(&s.svg).unwrap();
    let words = texts(&doc);
    // Design contract (synth::front::instrumentation::insert): U1 and U2 are the input stage, + inputs `ipp`
    // and `ipn` behind the protection resistors, outputs `oa` and `ob`; followers tie the
    // − input to the output, otherwise R_F joins each output to its − input and R_G the two
    // − inputs; U3 is the difference amplifier, fed from `oa` and `ob`.
    let part = |r: &str| c.parts.iter().find(|p| p.reference == r).unwrap_or_else(|| panic!("{what}: no {r}"));
    let (u1, u2, u3) = (part("U1"), part("U2"), part("U3"));
    assert_eq!(
        (u1.stage, u2.stage, u3.stage),
        (StageRole::InputStage, StageRole::InputStage, StageRole::Gain),
        "{what}: U1, U2, U3 roles"
    );
    assert_eq!(
        (u1.nodes[0].as_str(), u1.nodes[4].as_str(), u2.nodes[0].as_str(), u2.nodes[4].as_str()),
        ("ipp", "oa", "ipn", "ob"),
        "{what}: U1's and U2's nodes"
    );
    assert_eq!(u1.nodes[1] == u1.nodes[4] && u2.nodes[1] == u2.nodes[4], followers, "{what}: followers?");
    let between = |a: &str, b: &str| {
        c.parts
            .iter()
            .find(|p| p.kind == PartKind::Resistor && p.nodes.iter().any(|n| n == a) && p.nodes.iter().any(|n| n == b))
    };
    assert!(
        between("sensep", "ipp").is_some() && between("sensen", "ipn").is_some(),
        "{what}: no protection resistor in a leg"
    );
    assert!(between("oa", "inp1").is_some() || between("oa", "inn1").is_some(), "{what}: U3 not fed from oa");
    placed_by_role(what, &doc, &words, c);
    let group = |r: &str| part_group(&doc, r);
    // IEC 60617: an amplifier is a triangle; each labelled (common practice: designator).
    let span = |r: &str| {
        let pts = group_points(group(r).unwrap_or_else(|| panic!("{what}: {r} not drawn")));
        pts.iter().fold((f64::MAX, f64::MIN, f64::MAX, f64::MIN), |(a, b, c, d), &(x, y)| {
            (a.min(x), b.max(x), c.min(y), d.max(y))
        })
    };
    for u in ["U1", "U2", "U3"] {
        let g = group(u).unwrap();
        assert!(is_triangle(g), "{what}: {u} has no triangle");
        assert!(words.iter().any(|w| w == u), "{what}: {u} unlabelled");
    }
    // The three-amplifier arrangement (common practice): U1 above U2 in one column; R_G
    // upright between them, each R_F lying between them too.
    let (a, b) = (span("U1"), span("U2"));
    assert!(a.3 < b.2 && (a.0 - b.0).abs() < 1e-6, "{what}: U1 {a:?} is not straight above U2 {b:?}");
    let gain: Vec<&rangefit_engine::circuit::Part> = c
        .parts
        .iter()
        .filter(|p| {
            p.stage == StageRole::InputStage
                && p.kind == PartKind::Resistor
                && !p.nodes.iter().any(|n| n.starts_with("sense"))
        })
        .collect();
    assert_eq!(gain.len(), if followers { 0 } else { 3 }, "{what}: R_F, R_G, R_F");
    for p in gain {
        let r = span(&p.reference);
        assert!(r.2 > a.2 && r.3 < b.3, "{what}: {} {r:?} is not between U1 and U2", p.reference);
        let upright = r.3 - r.2 > r.1 - r.0;
        assert_eq!(upright, p.nodes.iter().all(|n| n != "oa" && n != "ob"), "{what}: {} upright?", p.reference);
    }
    // Test points on both outputs (checked on the drawing by [`check`]), each output in a
    // pair of flags.
    let tps: Vec<String> = test_points(req, c).into_iter().map(|t| t.node).collect();
    assert!(tps.contains(&"oa".to_string()) && tps.contains(&"ob".to_string()), "{what}: test points {tps:?}");
    for net in ["oa", "ob"] {
        let flags = doc.descendants().filter(|n| n.has_tag_name("text") && n.text() == Some(net)).count();
        assert_eq!(flags, 2, "{what}: {flags} flags for {net}");
    }
    // The caption: the circuit model's own description of the stage, its first line.
    let stage =
        c.stages.iter().find(|st| st.role == StageRole::InputStage).unwrap_or_else(|| panic!("{what}: no input stage"));
    let head = stage.description.split([',', ':']).next().unwrap_or("");
    assert!(!head.is_empty() && words.iter().any(|w| w == head), "{what}: no caption {head:?}");
}

#[test]
fn instrumentation_front_ends_are_drawn_by_role() {
    let beehive = demos::ALL.iter().find(|d| d.id == "beehive-scale").expect("beehive demo").json;
    let rows: Vec<(&str, String, bool)> = vec![
        // The demo: a load-cell bridge always gets the instrumentation amplifier
        // (synth::front::instrumentation::wanted), with most of its gain of about 450 in the first stage.
        ("beehive scale, bridge", beehive.to_string(), false),
        // A soil-moisture probe's pair, ±40 mV on a 1.1 … 1.5 V common mode: a gain of about
        // 40 wanted, of which the first stage's outputs can swing most.
        (
            "soil-moisture probe pair",
            pair("Soil-moisture probe pair", ("-40 mV", "40 mV"), (1.1, 1.5), "2k", "5 Hz", 3.3),
            false,
        ),
        // ±2 V about 2.5 V into 3.3 V wants a gain below one, so the first stage stays at
        // unity: two followers, no R_F or R_G (synth::front::instrumentation::plan).
        ("valve coil sense, followers", pair("Valve coil sense", ("-2", "2"), (2.4, 2.6), "500", "200 Hz", 5.0), true),
    ];
    for (what, json, followers) in &rows {
        let (req, c, _) = designed(json);
        let s = draw(&req, &c, what);
        check_instrumentation(what, &req, &c, &s, *followers);
    }
}

/// Instrumentation amplifiers on requests no other test holds, from a seeded generator
/// (rand_chacha ChaCha8Rng, seed 31): split rails and a converter range around zero, a
/// falling mapping, bridges of each arm count. Each draws cleanly, every part by role.
#[test]
fn random_instrumentation_front_ends_draw_cleanly() {
    use rand::{Rng, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(31);
    let mut drawn = 0;
    for i in 0..8 {
        let (supplies, dmin, dmax) =
            [("[5]", 0.0, 3.3), ("[12, -12]", -5.0, 5.0), ("[3.3]", 0.0, 2.5)][rng.random_range(0..3)];
        let keep = rng.random_bool(0.5);
        let json = if i % 2 == 0 {
            let half = 10f64.powf(rng.random_range(-2.5..-0.5));
            let cm: f64 =
                if supplies == "[12, -12]" { rng.random_range(-2.0..2.0) } else { rng.random_range(1.0..1.5) };
            format!(
                r#"{{"version":1,"name":"Random in-amp pair {i}","source":{{"kind":"differential","min":{:.6},
                    "max":{half:.6},"common_mode_min":{:.3},"common_mode_max":{:.3},"impedance":"1k",
                    "band_high":"20 Hz","front_end":"instrumentation"}},
                "destination":{{"min":{dmin},"max":{dmax},"bits":12,"sample_rate":"1 kHz"}},"supplies":{supplies},
                "keep_polarity":{keep}}}"#,
                -half,
                cm - 0.1,
                cm + 0.1
            )
        } else {
            let arms = [1, 2, 4][rng.random_range(0..3)];
            format!(
                r#"{{"version":1,"name":"Random bridge {i}","source":{{"kind":"bridge","excitation":"supply",
                    "sensitivity":"{:.2} m","bridge_resistance":350,"active_arms":{arms},"band_high":"2 Hz"}},
                "destination":{{"min":{dmin},"max":{dmax},"bits":16,"sample_rate":"20 Hz"}},"supplies":{supplies},
                "keep_polarity":{keep}}}"#,
                rng.random_range(1.0..3.0)
            )
        };
        let req = Request::from_json(&json).unwrap_or_else(|e| panic!("{e}\n{json}"));
        let d = design(&req);
        let (Some(c), Some(ia)) = (d.circuit.clone(), d.instrumentation()) else { continue };
        drawn += 1;
        let what = format!("{} (G1 {:.2}, rails {supplies})", req.name, ia.first_gain);
        let s = draw(&req, &c, &what);
        check_instrumentation(&what, &req, &c, &s, ia.gain_resistor.is_none());
    }
    assert!(drawn >= 6, "only {drawn} of 8 random front ends designed");
}
