//! The outputs a design is handed over with: the part list (CSV), the printable report
//! (HTML), the scaling for the firmware (JSON figures and a C header), and snapshots of the
//! part list and netlist of every demo.
//!
//! Each check names where its expectation comes from, beside it:
//! * RFC 4180 (CSV), read back with the `csv` crate's reader;
//! * the HTML Living Standard, through html5ever (the `scraper` crate), which reports every
//!   parse error the standard defines;
//! * IEC 60062 tolerance letters (B 0.1 %, C 0.25 %, D 0.5 %, F 1 %, G 2 %, J 5 %, K 10 %,
//!   M 20 %);
//! * ISO C99, by compiling the C header with gcc (`-std=c99 -Wall -Werror`) and running it;
//! * the MNA solver at the operating point and the signal extremes, recomputed here, for the
//!   part stresses;
//! * "common practice" marks a rule of the trade rather than a standard (rating margins).
//!
//! Every request is a scenario of our own. Snapshots: `tests/snapshots/<demo>.bom.csv` and
//! `<demo>.cir`; after an intended change, rewrite them with
//! `UPDATE_SNAPSHOTS=1 cargo test -p rangefit-tests --test outputs` and review the diff.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;

use rangefit_engine::bom::{bom, to_csv, BomRow};
use rangefit_engine::circuit::{is_decoupling, Circuit, Part, PartKind};
use rangefit_engine::draw::plot::{self, PlotConfig};
use rangefit_engine::draw::schematic::{self, SchematicConfig};
use rangefit_engine::report::report;
use rangefit_engine::request::Coupling;
use rangefit_engine::scaling::c_header;
use rangefit_engine::solve::Solver;
use rangefit_engine::{cli, demos, design, Design, Request};
use rangefit_tests::rows::{at_most, check, fact};
use serde_json::{json, Value};

// ---------------------------------------------------------------------------------------
// Failures are collected, each with its source, and asserted at the end of a test.

#[derive(Default)]
struct Fails(Vec<String>);

impl Fails {
    /// Records a failed expectation: what, the source of the expectation, what was found.
    fn expect(&mut self, source: &str, what: &str, ok: bool, found: impl std::fmt::Debug) {
        if !ok {
            self.0.push(format!("{what} [{source}]: found {found:?}"));
        }
    }

    fn finish(self) {
        assert!(self.0.is_empty(), "{} failed checks:\n{}", self.0.len(), self.0.join("\n"));
    }
}

// ---------------------------------------------------------------------------------------
// Requests of our own scenarios.

fn request(v: &Value) -> Request {
    Request::from_json(&v.to_string()).unwrap_or_else(|e| panic!("request does not read: {e}\n{v}"))
}

/// A DC-coupled request; `extra` entries are merged into the top level (parts, analysis…).
#[allow(clippy::too_many_arguments)]
fn dc(
    name: &str, min: f64, max: f64, impedance: &str, band_high: &str, dest: (f64, f64), bits: u32, fs: &str,
    supplies: Value, extra: Value,
) -> Value {
    let mut v = json!({
        "version": 1, "name": name,
        "source": {
            "kind": "single_ended", "min": min, "max": max, "coupling": "dc", "impedance": impedance,
            "band_high": band_high
        },
        "destination": {"min": dest.0, "max": dest.1, "bits": bits, "sample_rate": fs, "impedance": "100k"},
        "supplies": supplies,
        "analysis": {"monte_carlo_runs": 600}
    });
    merge(&mut v, extra);
    v
}

/// An AC-coupled request with band `band_low … band_high`.
#[allow(clippy::too_many_arguments)]
fn ac(
    name: &str, min: f64, max: f64, impedance: &str, band: (&str, &str), dest: (f64, f64), bits: u32, fs: &str,
    supplies: Value, extra: Value,
) -> Value {
    let mut v = json!({
        "version": 1, "name": name,
        "source": {
            "kind": "single_ended", "min": min, "max": max, "coupling": "ac", "impedance": impedance,
            "band_low": band.0, "band_high": band.1
        },
        "destination": {"min": dest.0, "max": dest.1, "bits": bits, "sample_rate": fs, "impedance": "100k"},
        "supplies": supplies,
        "analysis": {"monte_carlo_runs": 600}
    });
    merge(&mut v, extra);
    v
}

/// Merges `extra` into `v`, object by object.
fn merge(v: &mut Value, extra: Value) {
    if let (Value::Object(a), Value::Object(b)) = (v, extra) {
        for (k, x) in b {
            match a.get_mut(&k) {
                Some(slot @ Value::Object(_)) if x.is_object() => merge(slot, x),
                _ => {
                    a.insert(k, x);
                }
            }
        }
    }
}

/// The scenarios, as (id, request JSON).
fn scenario_requests() -> Vec<(&'static str, Value)> {
    vec![
        // A beekeeper's hive scale: its bridge amplifier gives 0.25 … 2.75 V for 0 … 150 kg.
        (
            "hive",
            dc(
                "Beekeeper's hive-weight scale",
                0.25,
                2.75,
                "100",
                "2 Hz",
                (0.0, 3.3),
                12,
                "50 Hz",
                json!([3.3]),
                json!({"source": {"measurand": {"name": "hive weight", "unit": "kg", "at_min": 0, "at_max": 150}}}),
            ),
        ),
        // A sauna thermistor divider: 0.4 V when hot (120 °C), 2.9 V when cold (15 °C).
        (
            "sauna",
            dc(
                "Sauna bench thermistor divider",
                0.4,
                2.9,
                "10k",
                "1 Hz",
                (0.0, 2.5),
                16,
                "10 Hz",
                json!([3.3]),
                json!({"source": {"measurand": {
                    "name": "bench temperature", "unit": "°C", "at_min": 120, "at_max": 15
                }}}),
            ),
        ),
        // A vineyard irrigation main: pressure transmitter 0.5 … 4.5 V for 0 … 600 kPa.
        (
            "vineyard",
            dc(
                "Vineyard irrigation main pressure",
                0.5,
                4.5,
                "250",
                "20 Hz",
                (0.0, 3.3),
                14,
                "500 Hz",
                json!([5]),
                json!({"source": {"measurand": {"name": "line pressure", "unit": "kPa", "at_min": 0, "at_max": 600}}}),
            ),
        ),
        // A ferry engine-room vibration pickup resting at 2.0 V, into a stage biased at 1.65 V.
        (
            "ferry",
            ac(
                "Ferry engine-room vibration pickup",
                1.7,
                2.3,
                "500",
                ("10 Hz", "5 kHz"),
                (0.0, 3.3),
                12,
                "50 kHz",
                json!([3.3]),
                json!({}),
            ),
        ),
        // A grain-silo sway sensor resting at 2.5 V, band down to 0.1 Hz: electrolytic coupling.
        (
            "silo",
            ac(
                "Grain-silo sway sensor",
                2.2,
                2.8,
                "2k",
                ("0.1 Hz", "20 Hz"),
                (0.0, 3.3),
                16,
                "200 Hz",
                json!([3.3]),
                json!({}),
            ),
        ),
        // An orchard wind-machine vibration tap resting at 0.8 V, below the 1.65 V bias.
        (
            "orchard",
            ac(
                "Orchard wind-machine vibration tap",
                0.6,
                1.0,
                "1k",
                ("0.1 Hz", "50 Hz"),
                (0.0, 3.3),
                12,
                "500 Hz",
                json!([3.3]),
                json!({}),
            ),
        ),
        // A ferry propeller-shaft accelerometer on a 10 V bias, into ±5 V on ±15 V rails.
        (
            "shaft",
            ac(
                "Ferry propeller-shaft accelerometer",
                8.0,
                12.0,
                "100",
                ("0.1 Hz", "1 kHz"),
                (-5.0, 5.0),
                16,
                "10 kHz",
                json!([15, -15]),
                json!({}),
            ),
        ),
        // A greenhouse vent anemometer resting right at the 1.65 V bias: no DC across the coupling.
        (
            "vent",
            ac(
                "Greenhouse vent anemometer ripple",
                1.45,
                1.85,
                "1k",
                ("0.1 Hz", "20 Hz"),
                (0.0, 3.3),
                12,
                "200 Hz",
                json!([3.3]),
                json!({}),
            ),
        ),
        // A marina battery-bank monitor, 0 … 24 V through a low-ohm divider window.
        (
            "marina",
            dc(
                "Marina battery-bank monitor",
                0.0,
                24.0,
                "0.1",
                "5 Hz",
                (0.0, 3.3),
                12,
                "100 Hz",
                json!([5]),
                json!({"parts": {"resistor_min": "100", "resistor_max": "10k"}}),
            ),
        ),
        // A tram-depot charger sense line, 0 … 28 V, with a 10 Ω … 1 kΩ window: watts to burn.
        (
            "tram",
            dc(
                "Tram-depot charger sense line",
                0.0,
                28.0,
                "0.1",
                "5 Hz",
                (0.0, 3.3),
                12,
                "100 Hz",
                json!([5]),
                json!({"parts": {"resistor_min": "10", "resistor_max": "1k"}}),
            ),
        ),
    ]
}

/// Every demo and scenario, designed once: (id, design).
fn designs() -> &'static [(String, Design)] {
    static ALL: OnceLock<Vec<(String, Design)>> = OnceLock::new();
    ALL.get_or_init(|| {
        let mut out = Vec::new();
        for d in demos::ALL {
            let req = Request::from_json(d.json).unwrap_or_else(|e| panic!("demo {}: {e}", d.id));
            out.push((d.id.to_string(), design(&req)));
        }
        for (id, v) in scenario_requests() {
            out.push((id.to_string(), design(&request(&v))));
        }
        out
    })
}

fn designed(id: &str) -> &'static Design {
    designs().iter().find(|(i, _)| i == id).map(|(_, d)| d).unwrap_or_else(|| panic!("no design {id}"))
}

fn circuit<'a>(id: &str, d: &'a Design) -> &'a Circuit {
    d.circuit.as_ref().unwrap_or_else(|| panic!("{id}: no circuit: {:?}", d.checks))
}

// ---------------------------------------------------------------------------------------
// 1. The part list as CSV (RFC 4180).

const CSV_HEADER: [&str; 9] =
    ["designators", "quantity", "kind", "value", "tolerance", "tolerance_code", "rating", "construction", "notes"];

fn fields(r: &BomRow) -> [String; 9] {
    [
        r.designators.join(" "),
        r.quantity.to_string(),
        r.kind.clone(),
        r.value.clone(),
        r.tolerance.clone(),
        r.tolerance_code.clone(),
        r.rating.clone(),
        r.construction.clone(),
        r.notes.clone(),
    ]
}

/// `to_csv(rows)` reads back through an RFC 4180 reader to the same header and fields, one
/// record per row, every record ended by CRLF.
fn check_csv(f: &mut Fails, what: &str, rows: &[BomRow]) {
    let text = to_csv(rows);
    // RFC 4180 §2 rules 3–4 and the csv crate's default (not flexible): every record has the
    // header's field count, or reading fails.
    let mut rdr = csv::ReaderBuilder::new().has_headers(true).from_reader(text.as_bytes());
    let header: Vec<String> = match rdr.headers() {
        Ok(h) => h.iter().map(str::to_string).collect(),
        Err(e) => {
            f.expect("RFC 4180", &format!("{what}: header reads"), false, e.to_string());
            return;
        }
    };
    f.expect("RFC 4180 §2 rule 3", &format!("{what}: header names the fields"), header == CSV_HEADER, &header);
    let mut records = Vec::new();
    for r in rdr.records() {
        match r {
            Ok(r) => records.push(r),
            Err(e) => {
                f.expect("RFC 4180", &format!("{what}: every record reads"), false, e.to_string());
                return;
            }
        }
    }
    f.expect(
        "RFC 4180",
        &format!("{what}: one record per part-list row"),
        records.len() == rows.len(),
        (records.len(), rows.len()),
    );
    for (rec, row) in records.iter().zip(rows) {
        let got: Vec<&str> = rec.iter().collect();
        let want = fields(row);
        f.expect(
            "RFC 4180",
            &format!("{what}: {} reads back field for field", row.designators.join(" ")),
            got == want,
            (&got, &want),
        );
        // RFC 4180 §2 rule 1: records are delimited by CRLF, so each record after the first
        // starts right after one.
        if let Some(pos) = rec.position() {
            // The reader counts a record as starting at the LF of the CRLF before it.
            let start = pos.byte() as usize + usize::from(text[pos.byte() as usize..].starts_with('\n'));
            f.expect(
                "RFC 4180 §2 rule 1",
                &format!("{what}: CRLF before the record of {}", row.designators.join(" ")),
                text[..start].ends_with("\r\n"),
                &text[start.saturating_sub(4)..start],
            );
        }
    }
    f.expect(
        "RFC 4180 §2 rule 2 (the optional final CRLF, which bom.rs promises)",
        &format!("{what}: the last record ends with CRLF"),
        text.ends_with("\r\n"),
        text.chars().rev().take(4).collect::<String>(),
    );
    let bare_lf = text.match_indices('\n').filter(|(i, _)| !text[..*i].ends_with('\r')).count();
    f.expect(
        "RFC 4180 §2 rule 1",
        &format!("{what}: no bare LF line end"),
        bare_lf == 0 || rows.iter().any(|r| fields(r).iter().any(|x| x.contains('\n'))),
        bare_lf,
    );
}

fn hand_made(designators: &[&str], value: &str, construction: &str, notes: &str) -> BomRow {
    BomRow {
        designators: designators.iter().map(|s| s.to_string()).collect(),
        quantity: designators.len(),
        kind: "resistor".to_string(),
        value: value.to_string(),
        value_si: 1500.0,
        tolerance: "±1 %".to_string(),
        tolerance_code: "F".to_string(),
        rating: "≥ 63 mW".to_string(),
        construction: construction.to_string(),
        stress: 0.001,
        notes: notes.to_string(),
    }
}

#[test]
fn part_list_csv_reads_back_per_rfc_4180() {
    let mut f = Fails::default();
    for (id, d) in designs() {
        let rows = bom(d);
        f.expect("own scenario", &format!("{id}: has a part list"), !rows.is_empty(), rows.len());
        check_csv(&mut f, id, &rows);
        // The command prints the same text.
        if let Some(demo) = demos::find(id) {
            let out = cli::run(&["bom".to_string(), "in.json".to_string()], &|_| Ok(demo.json.to_string()));
            f.expect(
                "rangefit bom",
                &format!("{id}: `rangefit bom` prints to_csv(bom(design))"),
                out.status == 0 && out.stdout == to_csv(&rows),
                &out.stderr,
            );
        }
    }
    // Real part lists need quoting too (requirements and constructions carry commas).
    f.expect(
        "RFC 4180 §2 rule 6",
        "some design's part list has a quoted field",
        designs().iter().any(|(_, d)| to_csv(&bom(d)).contains('"')),
        "no quotes",
    );
    // Fields that must be quoted: comma, double quote, line breaks (LF and CRLF); and a
    // leading space, which is part of the field (RFC 4180 §2 rule 4).
    let awkward = [
        hand_made(&["R1", "R7"], "1,5 kΩ", "thin-film, \"low noise\"", "line one\nline two"),
        hand_made(&["R2"], "\"quoted\"", "a\r\nb", " leading space, trailing space "),
        hand_made(&["R3"], "plain", "", ""),
    ];
    check_csv(&mut f, "hand-made rows", &awkward);
    // RFC 4180 §2 rules 6–7, written out by hand: such fields are enclosed in double quotes
    // and a double quote inside is escaped by another double quote.
    let text = to_csv(&awkward);
    let lines: Vec<&str> = text.split_inclusive("\r\n").collect();
    let want_first =
        "R1 R7,2,resistor,\"1,5 kΩ\",±1 %,F,≥ 63 mW,\"thin-film, \"\"low noise\"\"\",\"line one\nline two\"\r\n";
    f.expect(
        "RFC 4180 §2 rules 6–7",
        "hand-made row with comma, quotes and LF is quoted exactly",
        lines.get(1) == Some(&want_first),
        lines.get(1),
    );
    let want_second =
        "R2,1,resistor,\"\"\"quoted\"\"\",±1 %,F,≥ 63 mW,\"a\r\nb\",\" leading space, trailing space \"\r\n";
    let second = format!("{}{}", lines.get(2).copied().unwrap_or(""), lines.get(3).copied().unwrap_or(""));
    f.expect(
        "RFC 4180 §2 rules 6–7",
        "hand-made row with quotes and CRLF inside is quoted exactly",
        second == want_second,
        &second,
    );
    f.expect(
        "RFC 4180 §2 rule 5 (quotes only where needed, as bom.rs documents)",
        "an ordinary row is left unquoted",
        lines.get(4) == Some(&"R3,1,resistor,plain,±1 %,F,≥ 63 mW,,\r\n"),
        lines.get(4),
    );
    // An empty list is the header alone.
    f.expect(
        "RFC 4180 §2 rules 1 and 3",
        "empty part list is the header line",
        to_csv(&[]) == format!("{}\r\n", CSV_HEADER.join(",")),
        to_csv(&[]),
    );
    f.finish();
}

// ---------------------------------------------------------------------------------------
// 2. One row per distinct part.

fn row_of<'a>(rows: &'a [BomRow], reference: &str) -> Option<&'a BomRow> {
    rows.iter().find(|r| r.designators.iter().any(|x| x == reference))
}

/// Quantities add up to the parts to build, designators are unique, each row describes the
/// parts it lists, and identical parts share a row. Returns the number of pairs of
/// identical parts seen (so the caller can make sure the sharing was exercised).
fn check_rows(f: &mut Fails, id: &str, d: &Design) -> usize {
    let rows = bom(d);
    let Some(c) = &d.circuit else {
        f.expect("own scenario", &format!("{id}: no circuit, no part list"), rows.is_empty(), rows.len());
        return 0;
    };
    let parts: Vec<&Part> = c.build_parts().into_iter().filter(|p| p.kind != PartKind::VoltageSource).collect();
    let total: usize = rows.iter().map(|r| r.quantity).sum();
    f.expect(
        "part list",
        &format!("{id}: quantities add up to the parts to build"),
        total == parts.len(),
        (total, parts.len()),
    );
    let mut seen = BTreeSet::new();
    for r in &rows {
        f.expect(
            "part list",
            &format!("{id}: quantity equals the designators listed in {:?}", r.designators),
            r.quantity == r.designators.len(),
            r.quantity,
        );
        for x in &r.designators {
            f.expect("part list", &format!("{id}: designator {x} appears once"), seen.insert(x.clone()), x);
            match parts.iter().find(|p| &p.reference == x) {
                Some(p) => {
                    f.expect(
                        "part list",
                        &format!("{id}: {x} is listed as a {}", p.kind.name()),
                        r.kind == p.kind.name(),
                        &r.kind,
                    );
                    if p.kind != PartKind::OpAmp {
                        f.expect(
                            "part list",
                            &format!("{id}: {x} has its row's value"),
                            (p.value - r.value_si).abs() <= 1e-9 * p.value.abs(),
                            (p.value, r.value_si),
                        );
                        f.expect(
                            "part list",
                            &format!("{id}: {x} has a tolerance iff its row states one"),
                            p.tolerance.is_some() != r.tolerance.is_empty(),
                            (p.tolerance, &r.tolerance),
                        );
                    }
                }
                None => f.expect("part list", &format!("{id}: {x} is a part to build"), false, x),
            }
        }
    }
    let want: BTreeSet<String> = parts.iter().map(|p| p.reference.clone()).collect();
    f.expect("part list", &format!("{id}: every part to build is listed"), seen == want, (&seen, &want));
    // Identical parts (kind, value, tolerance) with the same rating and construction share
    // one row; amplifiers are listed one by one with their requirements.
    let mut pairs = 0;
    for (i, a) in parts.iter().enumerate() {
        for b in &parts[i + 1..] {
            if a.kind == PartKind::OpAmp || a.kind != b.kind || a.value != b.value || a.tolerance != b.tolerance {
                continue;
            }
            let (Some(ra), Some(rb)) = (row_of(&rows, &a.reference), row_of(&rows, &b.reference)) else { continue };
            if ra.rating == rb.rating && ra.construction == rb.construction {
                pairs += 1;
                f.expect(
                    "part list",
                    &format!("{id}: identical {} and {} share a row", a.reference, b.reference),
                    std::ptr::eq(ra, rb),
                    (&ra.designators, &rb.designators),
                );
            }
        }
    }
    pairs
}

#[test]
fn part_list_has_one_row_per_distinct_part() {
    let mut f = Fails::default();
    let mut pairs = 0;
    for (id, d) in designs() {
        pairs += check_rows(&mut f, id, d);
    }
    // The AC stages bias at 1.65 V from 3.3 V with two equal divider legs.
    f.expect("own scenario", "some design has identical parts that share a row", pairs > 0, pairs);
    let ferry = bom(designed("ferry"));
    f.expect(
        "own scenario",
        "ferry: fewer rows than parts (equal divider legs merged)",
        ferry.iter().any(|r| r.quantity >= 2 && r.kind == "resistor"),
        ferry.iter().map(|r| &r.designators).collect::<Vec<_>>(),
    );
    // A request that cannot be built has no circuit and an empty list.
    let zero_span = design(&request(&dc(
        "Hive scale with a stuck bridge",
        1.2,
        1.2,
        "100",
        "2 Hz",
        (0.0, 3.3),
        12,
        "50 Hz",
        json!([3.3]),
        json!({}),
    )));
    check_rows(&mut f, "zero-span", &zero_span);
    f.finish();
}

// ---------------------------------------------------------------------------------------
// 3. The part list and the schematic name the same parts and values.

fn svg_texts(svg: &str) -> Result<Vec<String>, String> {
    let doc = roxmltree::Document::parse(svg).map_err(|e| e.to_string())?;
    Ok(doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| n.descendants().filter(|t| t.is_text()).filter_map(|t| t.text()).collect::<String>())
        .collect())
}

fn check_schematic_labels(f: &mut Fails, id: &str, d: &Design) {
    let Some(s) = schematic::of_design(d, &SchematicConfig::default()) else {
        f.expect("own scenario", &format!("{id}: schematic drawn"), false, "none");
        return;
    };
    let texts = match svg_texts(&s.svg) {
        Ok(t) => t,
        Err(e) => {
            f.expect("W3C SVG 1.1 (XML)", &format!("{id}: schematic parses"), false, e);
            return;
        }
    };
    for r in bom(d) {
        for x in &r.designators {
            // The label itself, or a note under the drawing that names the part with its value.
            let labelled = texts.iter().any(|t| t == x)
                || texts.iter().any(|t| t.split_whitespace().any(|w| w == x) && t.contains(&r.value));
            f.expect(
                "part list ↔ schematic",
                &format!("{id}: designator {x} is labelled on the schematic"),
                labelled,
                x,
            );
        }
        // A diode's row says "Schottky, V_F ≈ 300 mV at 1 mA"; the drawing, short of room at
        // the pin, says "Schottky 300 mV": the same type and forward voltage.
        let diode = r.kind == "diode"
            && r.value
                .split("≈ ")
                .nth(1)
                .and_then(|v| v.split(" at").next())
                .is_some_and(|vf| texts.iter().any(|t| t.starts_with("Schottky") && t.contains(vf)));
        let valued = diode
            || texts.iter().any(|t| t == &r.value)
            || texts
                .iter()
                .any(|t| t.contains(&r.value) && r.designators.iter().any(|x| t.split_whitespace().any(|w| w == x)));
        f.expect(
            "part list ↔ schematic",
            &format!("{id}: value {:?} of {} is on the schematic", r.value, r.designators.join(" ")),
            valued,
            texts.iter().filter(|t| t.contains("GBW") || t.contains(&r.value)).collect::<Vec<_>>(),
        );
    }
}

#[test]
fn schematic_shows_every_part_list_designator_and_value() {
    let mut f = Fails::default();
    for (id, d) in designs() {
        check_schematic_labels(&mut f, id, d);
    }
    f.finish();
}

// ---------------------------------------------------------------------------------------
// 4. Tolerance letters (IEC 60062).

/// IEC 60062 letter codes for the tolerances requested here; `None` where the standard has
/// no letter.
fn iec_60062(percent: f64) -> Option<&'static str> {
    const TABLE: [(f64, &str); 8] =
        [(0.1, "B"), (0.25, "C"), (0.5, "D"), (1.0, "F"), (2.0, "G"), (5.0, "J"), (10.0, "K"), (20.0, "M")];
    TABLE.iter().find(|(p, _)| (p - percent).abs() < 1e-9).map(|(_, l)| *l)
}

fn check_tolerance(f: &mut Fails, resistor_pct: f64, capacitor_pct: f64) {
    let v = ac(
        "Ferry engine-room vibration pickup, tolerance study",
        1.7,
        2.3,
        "500",
        ("10 Hz", "5 kHz"),
        (0.0, 3.3),
        12,
        "50 kHz",
        json!([3.3]),
        json!({"parts": {
            "resistor_tolerance": format!("{resistor_pct} %"), "capacitor_tolerance": format!("{capacitor_pct} %")
        }}),
    );
    let d = design(&request(&v));
    let what = format!("resistors ±{resistor_pct} %, capacitors ±{capacitor_pct} %");
    let rows = bom(&d);
    // Supply decoupling keeps its own ±10 % (X7R, common practice) whatever the request asks.
    let c = d.circuit.as_ref().expect("circuit");
    let decoupling = |r: &&BomRow| r.designators.iter().all(|x| c.part(x).is_some_and(is_decoupling));
    for r in rows.iter().filter(decoupling) {
        let what = format!("{what}: decoupling {}", r.designators.join(" "));
        f.expect("common practice", &what, (r.tolerance.as_str(), r.tolerance_code.as_str()) == ("±10 %", "K"), r);
    }
    for (kind, pct) in [("resistor", resistor_pct), ("capacitor", capacitor_pct)] {
        let of_kind: Vec<&BomRow> = rows.iter().filter(|r| r.kind == kind && !decoupling(r)).collect();
        f.expect("own scenario", &format!("{what}: the design has {kind}s"), !of_kind.is_empty(), rows.len());
        for r in of_kind {
            let letter = iec_60062(pct).unwrap_or("");
            f.expect(
                "IEC 60062",
                &format!("{what}: {} letter for ±{pct} %", r.designators.join(" ")),
                r.tolerance_code == letter,
                (&r.tolerance_code, letter),
            );
            let text = format!("±{pct} %");
            f.expect(
                "IEC 60062 (tolerance as ± percent)",
                &format!("{what}: {} tolerance text", r.designators.join(" ")),
                r.tolerance == text,
                (&r.tolerance, &text),
            );
        }
    }
    let amp: Vec<&BomRow> = rows.iter().filter(|r| r.kind == "amplifier").collect();
    f.expect(
        "IEC 60062",
        &format!("{what}: an amplifier has no tolerance letter"),
        amp.iter().all(|r| r.tolerance_code.is_empty()),
        amp.iter().map(|r| &r.tolerance_code).collect::<Vec<_>>(),
    );
}

#[test]
fn tolerance_letters_follow_iec_60062() {
    let mut f = Fails::default();
    for (r, c) in [(0.1, 0.25), (1.0, 2.0), (5.0, 20.0), (10.0, 0.5), (1.0, 10.0), (15.0, 10.0)] {
        check_tolerance(&mut f, r, c);
    }
    f.finish();
}

/// The longest run of decimal digits in `text` (a binary fraction printed raw, such as
/// 0.06999999999999999, makes a run of 17).
fn longest_digit_run(text: &str) -> usize {
    text.split(|c: char| !c.is_ascii_digit()).map(str::len).max().unwrap_or(0)
}

#[test]
fn percentages_print_as_requested() {
    // 0.07 % is no binary fraction: 0.0007 × 100 prints as 0.06999999999999999 unless it goes
    // through the units formatter. A tight-tolerance scenario of our own.
    const SRC: &str =
        "tests/REFERENCES.md §8.1 (SI Brochure §5.4.3, a space before %); the value as requested, common practice";
    let v = dc(
        "Greenhouse light logger, matched network",
        0.2,
        2.2,
        "100",
        "5 Hz",
        (0.0, 3.3),
        12,
        "100 Hz",
        json!([3.3]),
        json!({"parts": {"resistor_tolerance": "0.07 %", "capacitor_tolerance": "2 %"}}),
    );
    let d = design(&request(&v));
    let html = report(&d);
    let text: String = scraper::Html::parse_document(&html).root_element().text().collect();
    let resistors: Vec<BomRow> = bom(&d).into_iter().filter(|r| r.kind == "resistor").collect();
    let parts = &d.request.parts;
    let row = format!(
        "resistors {} ±0.07 %, capacitors {} ±2 %",
        parts.resistor_series.name(),
        parts.capacitor_series.name()
    );
    check(&[
        fact(format!("report: the parts row reads \"{row}\""), text.contains(&row), SRC),
        fact("report: no raw binary fraction", !text.contains("0.0699999"), SRC),
        at_most("report: longest run of digits in the text", longest_digit_run(&text) as f64, 10.0, 0.0, SRC),
        fact("part list: the design has resistors", !resistors.is_empty(), SRC),
        fact("part list: every resistor reads ±0.07 %", resistors.iter().all(|r| r.tolerance == "±0.07 %"), SRC),
    ]);
}

// ---------------------------------------------------------------------------------------
// 5. Ratings from the operating point.

/// Largest voltage across `p` and whether its sign stays one way, from the solver:
/// DC coupling, the sensor at its minimum, middle and maximum; AC coupling, the operating
/// point (sensor at mid-range) plus and minus the peak of the difference of the two nodes'
/// small-signal responses at band_low, the geometric middle and band_high.
struct Across {
    at_rest: f64,
    lo: f64,
    hi: f64,
}

fn across(d: &Design, c: &Circuit, p: &Part) -> Across {
    let solver = Solver::new(c);
    let s = &d.request.source;
    let mid = 0.5 * (s.min + s.max);
    let diff = |x: f64| {
        let sol = solver.dc(x).expect("operating point solves");
        sol.voltage(&p.nodes[0]).unwrap_or(0.0) - sol.voltage(&p.nodes[1]).unwrap_or(0.0)
    };
    let at_rest = diff(mid);
    match s.coupling {
        Coupling::Dc => {
            let (a, b) = (diff(s.min), diff(s.max));
            Across { at_rest, lo: a.min(b).min(at_rest), hi: a.max(b).max(at_rest) }
        }
        Coupling::Ac => {
            let half = 0.5 * (s.max - s.min);
            let peak = [s.band_low, (s.band_low * s.band_high).sqrt(), s.band_high]
                .iter()
                .map(|&fr| {
                    let h = |n: &str| solver.transfer(fr, n).expect("small-signal solve");
                    (h(&p.nodes[0]) - h(&p.nodes[1])).norm() * half
                })
                .fold(0.0, f64::max);
            Across { at_rest, lo: at_rest - peak, hi: at_rest + peak }
        }
    }
}

/// "850 mV" / "1.65 V" / "63 mW" → value in the base unit, with SI prefixes (SI Brochure,
/// 9th ed., Table 7).
fn si_value(text: &str, base: &str) -> Option<f64> {
    let mut words = text.split_whitespace();
    let number: f64 = words.next()?.parse().ok()?;
    let prefix = words.next()?.strip_suffix(base)?;
    let scale = match prefix {
        "" => 1.0,
        "m" => 1e-3,
        "µ" => 1e-6,
        "k" => 1e3,
        _ => return None,
    };
    Some(number * scale)
}

/// "≥ 63 mW" / "≥ 25 V" / "≥ 5.62 W (use a power resistor)" → the rating in the base unit.
fn rating_value(text: &str, base: &str) -> Option<f64> {
    si_value(text.strip_prefix("≥ ")?, base)
}

/// Common practice: the usual resistor power ratings (W) and capacitor working voltages (V).
const COMMON_WATTS: [f64; 7] = [0.063, 0.1, 0.125, 0.25, 0.5, 1.0, 2.0];
const COMMON_VOLTS: [f64; 12] = [6.3, 10.0, 16.0, 25.0, 35.0, 50.0, 63.0, 100.0, 250.0, 400.0, 630.0, 1000.0];
/// Common practice: rate a part for at least twice its stress (50 % derating).
const MARGIN: f64 = 2.0;

fn check_ratings(f: &mut Fails, id: &str, d: &Design) {
    let c = circuit(id, d);
    let rows = bom(d);
    let solver = Solver::new(c);
    let s = &d.request.source;
    let op = solver.dc(0.5 * (s.min + s.max)).expect("operating point");
    for p in c.build_parts() {
        let Some(r) = row_of(&rows, &p.reference) else { continue };
        let x = &p.reference;
        match p.kind {
            PartKind::Resistor => {
                let a = across(d, c, p);
                let v = a.lo.abs().max(a.hi.abs());
                // The drive resistor is rated for the power it takes at the amplifier's swing
                // limit with the pin held at its range too (synth/drive.rs).
                let fault = match (&d.drive, p.role) {
                    (Some(dd), Some(rangefit_engine::circuit::PartRole::DriveResistor)) => dd.fault_power,
                    _ => 0.0,
                };
                let watts = (v * v / p.value).max(fault);
                let need = MARGIN * watts;
                match rating_value(&r.rating, "W") {
                    Some(w) => {
                        f.expect(
                            "common practice: ≥ 2 × V²/R",
                            &format!("{id}: {x} ({}) rated {} for {watts:.3e} W", r.value, r.rating),
                            w >= need * (1.0 - 1e-9),
                            (w, need),
                        );
                        let usual = COMMON_WATTS.iter().copied().find(|&u| u >= need);
                        match usual {
                            Some(u) => f.expect(
                                "common practice: the smallest usual rating that covers it",
                                &format!("{id}: {x} not over-rated"),
                                w <= u * (1.0 + 1e-9),
                                (w, u),
                            ),
                            None => f.expect(
                                "common practice: beyond 2 W, a power resistor",
                                &format!("{id}: {x} flagged as a power resistor"),
                                r.rating.contains("power resistor"),
                                &r.rating,
                            ),
                        }
                    }
                    None => f.expect("part list", &format!("{id}: {x} rating reads as a power"), false, &r.rating),
                }
            }
            PartKind::Capacitor => {
                let a = across(d, c, p);
                let v = a.lo.abs().max(a.hi.abs());
                let need = MARGIN * v;
                match rating_value(&r.rating, "V") {
                    Some(rated) => {
                        f.expect(
                            "common practice: ≥ 2 × the largest voltage across",
                            &format!("{id}: {x} ({}) rated {} for {v:.3} V", r.value, r.rating),
                            rated >= need * (1.0 - 1e-9),
                            (rated, need),
                        );
                        let usual = COMMON_VOLTS.iter().copied().find(|&u| u >= need).unwrap_or(f64::INFINITY);
                        f.expect(
                            "common practice: the smallest usual rating that covers it",
                            &format!("{id}: {x} not over-rated"),
                            rated <= usual * (1.0 + 1e-9),
                            (rated, usual),
                        );
                    }
                    None => f.expect("part list", &format!("{id}: {x} rating reads as a voltage"), false, &r.rating),
                }
                // Supply decoupling is X7R ceramic at any value (common practice), so the
                // electrolytic rule below is for the signal parts.
                let decoupling = is_decoupling(p);
                if decoupling {
                    f.expect(
                        "common practice: supply decoupling is X7R ceramic",
                        &format!("{id}: {x} ({}) is an X7R ceramic", r.value),
                        r.construction.starts_with("X7R ceramic"),
                        &r.construction,
                    );
                }
                let large = p.value >= 10e-6 && !decoupling;
                let one_sign = (a.lo > 0.1 && a.hi > 0.1) || (a.lo < -0.1 && a.hi < -0.1);
                // 10 µF and more is an electrolytic, or a multilayer ceramic (up to 100 µF)
                // where the design's leakage check says an electrolytic would leak too much.
                let ceramic = r.construction.starts_with("X5R/X7R multilayer ceramic");
                let electrolytic = r.construction.contains("electrolytic") && !ceramic;
                if large {
                    let named = d.checks.iter().any(|c| c.id == "leakage" && c.message.contains(&format!("{x} (")));
                    f.expect(
                        "common practice: 10 µF and more is an electrolytic; tests/REFERENCES.md §13 (leakage)",
                        &format!("{id}: {x} ({}) is an electrolytic, or a ceramic the leakage check names", r.value),
                        electrolytic || (ceramic && named && p.value <= 100e-6),
                        &r.construction,
                    );
                }
                match r.construction.split_once("+ to node ") {
                    Some((_, plus)) => {
                        let plus = plus.trim();
                        let other = p.nodes.iter().find(|n| n.as_str() != plus);
                        let named = p.nodes.iter().any(|n| n == plus);
                        f.expect(
                            "circuit",
                            &format!("{id}: {x}'s + node {plus:?} is one of its nodes {:?}", p.nodes),
                            named,
                            plus,
                        );
                        if let (true, Some(other)) = (named, other) {
                            let (vp, vo) = (op.voltage(plus).unwrap_or(0.0), op.voltage(other).unwrap_or(0.0));
                            f.expect(
                                "solver operating point",
                                &format!(
                                    "{id}: {x}'s + goes to the higher DC level ({plus} {vp:.3} V vs {other} {vo:.3} V)"
                                ),
                                vp > vo,
                                (vp, vo),
                            );
                        }
                        f.expect(
                            "common practice: a polarised part keeps one polarity",
                            &format!("{id}: {x} keeps one sign over the swing"),
                            one_sign,
                            (a.lo, a.hi),
                        );
                    }
                    None if large && electrolytic => {
                        f.expect(
                            "common practice: no polarising DC, non-polarised type",
                            &format!("{id}: {x} without + is non-polarised"),
                            r.construction.contains("non-polarised") && !one_sign,
                            (&r.construction, a.lo, a.hi),
                        );
                    }
                    None => {}
                }
                // The note states the DC across the part at rest (solver), to three digits;
                // below 1 mV it says "about 0 V" (the amplifiers' finite gain, not a bias).
                let stated = r
                    .notes
                    .split("; ")
                    .filter_map(|n| si_value(n.strip_suffix(" across at rest")?.trim_start_matches("about "), "V"))
                    .any(|v| {
                        (v - a.at_rest).abs() <= 0.006 * a.at_rest.abs() + 1e-6 || (v == 0.0 && a.at_rest.abs() < 1e-3)
                    });
                f.expect(
                    "solver operating point",
                    &format!("{id}: {x} note states {:.4} V at rest", a.at_rest),
                    stated,
                    &r.notes,
                );
            }
            _ => {}
        }
    }
}

#[test]
fn ratings_follow_the_operating_point() {
    let mut f = Fails::default();
    for (id, d) in designs() {
        check_ratings(&mut f, id, d);
    }
    // The scenarios reach the cases the rules are about.
    let construction = |id: &str, reference: &str| {
        row_of(&bom(designed(id)), reference).map(|r| r.construction.clone()).unwrap_or_default()
    };
    let rating =
        |id: &str, reference: &str| row_of(&bom(designed(id)), reference).map(|r| r.rating.clone()).unwrap_or_default();
    let coupling = |id: &str| {
        circuit(id, designed(id))
            .build_parts()
            .into_iter()
            .find(|p| p.kind == PartKind::Capacitor && p.nodes.iter().any(|n| n == "sense"))
            .map(|p| p.reference.clone())
            .unwrap_or_default()
    };
    let ferry = coupling("ferry");
    let ferry_part = circuit("ferry", designed("ferry")).part(&ferry).cloned();
    if let Some(p) = ferry_part {
        let a = across(designed("ferry"), circuit("ferry", designed("ferry")), &p);
        // The stage rests at the middle of its output window (the rails at the low end of
        // their tolerance), about 1.6 V; the sensor's 2.0 V rest is on the other side.
        let level = designed("ferry").predicted.map_or(f64::NAN, |p| p.offset);
        f.expect(
            "own scenario",
            &format!("ferry: 2.0 V sensor into a {level:.3} V stage puts DC across the coupling capacitor"),
            (a.at_rest - (2.0 - level)).abs() < 0.02,
            a.at_rest,
        );
    } else {
        f.expect("own scenario", "ferry: a coupling capacitor at the sensor", false, &ferry);
    }
    // The coupling capacitors here work against the bias resistor: an electrolytic's 3 µA
    // would move the rest level by far more than a tenth of the headroom, so each is a
    // ceramic (and, were it kept an electrolytic, its + would go to the side named).
    for (id, plus_side) in [("silo", "sense"), ("shaft", "sense"), ("orchard", "stage")] {
        let x = coupling(id);
        let text = construction(id, &x);
        let to_sense = text.ends_with("+ to node sense");
        f.expect(
            "tests/REFERENCES.md §13 (leakage)",
            &format!("{id}: coupling capacitor {x} is a ceramic, or polarised with + on the {plus_side} side"),
            text.starts_with("X5R/X7R multilayer ceramic")
                || (text.contains("polarised: + to node") && to_sense == (plus_side == "sense")),
            &text,
        );
    }
    f.expect(
        "own scenario",
        "shaft: 10 V bias across the coupling capacitor needs ≥ 20 V",
        rating_value(&rating("shaft", &coupling("shaft")), "V").is_some_and(|v| v >= 20.0),
        rating("shaft", &coupling("shaft")),
    );
    let vent = construction("vent", &coupling("vent"));
    f.expect(
        "own scenario",
        "vent: no DC across the coupling capacitor, non-polarised (a ceramic is)",
        vent.contains("non-polarised") || vent.starts_with("X5R/X7R multilayer ceramic"),
        &vent,
    );
    let marina: Vec<String> =
        bom(designed("marina")).iter().filter(|r| r.kind == "resistor").map(|r| r.rating.clone()).collect();
    f.expect(
        "own scenario",
        "marina: some resistor needs more than the smallest rating",
        marina.iter().any(|r| rating_value(r, "W").is_some_and(|w| w > 0.063)),
        &marina,
    );
    let tram: Vec<String> =
        bom(designed("tram")).iter().filter(|r| r.kind == "resistor").map(|r| r.rating.clone()).collect();
    f.expect(
        "own scenario",
        "tram: some resistor dissipates beyond the usual ratings",
        tram.iter().any(|r| r.contains("power resistor")),
        &tram,
    );
    f.finish();
}

// ---------------------------------------------------------------------------------------
// 6. The report (HTML Living Standard).

fn text_of(e: scraper::ElementRef) -> String {
    e.text().collect::<String>()
}

fn sel(s: &str) -> scraper::Selector {
    scraper::Selector::parse(s).expect("selector")
}

/// The `<section>` whose heading is `title`.
fn section<'a>(doc: &'a scraper::Html, title: &str) -> Option<scraper::ElementRef<'a>> {
    doc.select(&sel("section")).find(|s| s.select(&sel("h2")).next().map(text_of).as_deref() == Some(title))
}

fn rows_of(s: scraper::ElementRef) -> Vec<Vec<String>> {
    s.select(&sel("tr"))
        .map(|tr| tr.select(&sel("td")).map(text_of).collect())
        .filter(|cells: &Vec<String>| !cells.is_empty())
        .collect()
}

/// Every `http://` or `https://` in `html` that is not the SVG namespace name of an inline
/// `<svg>` (a namespace name identifies; it is not fetched: Namespaces in XML 1.0).
fn external_references(html: &str) -> Vec<String> {
    let cleaned = html.replace("xmlns=\"http://www.w3.org/2000/svg\"", "");
    ["http://", "https://"]
        .iter()
        .flat_map(|p| cleaned.match_indices(p).map(|(i, _)| cleaned[i..(i + 60).min(cleaned.len())].to_string()))
        .collect()
}

fn check_report(f: &mut Fails, id: &str, d: &Design) {
    let html = report(d);
    // HTML Living Standard, parsing HTML documents: the parser reports every parse error; a
    // conforming document has none, and its doctype keeps the page out of quirks mode.
    let doc = scraper::Html::parse_document(&html);
    f.expect(
        "HTML Living Standard, parsing (html5ever)",
        &format!("{id}: report parses without errors"),
        doc.errors.is_empty(),
        &doc.errors,
    );
    f.expect(
        "HTML Living Standard, the initial insertion mode",
        &format!("{id}: no-quirks doctype"),
        format!("{:?}", doc.quirks_mode) == "NoQuirks",
        format!("{:?}", doc.quirks_mode),
    );
    // Self-contained: no script, no external reference.
    f.expect(
        "self-contained",
        &format!("{id}: no <script"),
        !html.to_ascii_lowercase().contains("<script") && doc.select(&sel("script")).next().is_none(),
        "script",
    );
    let external = external_references(&html);
    f.expect("self-contained", &format!("{id}: no http(s):// reference"), external.is_empty(), &external);
    let fetching: Vec<String> = doc
        .tree
        .nodes()
        .filter_map(|n| {
            n.value()
                .as_element()
                .map(|e| (e.name().to_string(), e.attrs().map(|(k, _)| k.to_string()).collect::<Vec<_>>()))
        })
        .filter(|(name, attrs)| {
            ["img", "link", "iframe", "object", "embed", "image", "use"].contains(&name.as_str())
                || attrs.iter().any(|a| ["src", "href", "xlink:href", "srcset"].contains(&a.as_str()))
        })
        .map(|(name, attrs)| format!("{name} {attrs:?}"))
        .collect();
    f.expect("self-contained", &format!("{id}: no element that loads a resource"), fetching.is_empty(), &fetching);
    let style: String = doc.select(&sel("style")).map(text_of).collect();
    f.expect(
        "self-contained",
        &format!("{id}: styles import nothing"),
        !style.contains("url(") && !style.contains("@import"),
        "url( / @import",
    );

    // The drawings, verbatim.
    let sch = schematic::of_design(d, &SchematicConfig { title: false, ..SchematicConfig::default() }).map(|s| s.svg);
    f.expect(
        "report",
        &format!("{id}: holds the schematic SVG"),
        sch.as_ref().is_some_and(|s| html.contains(s.as_str())),
        sch.is_some(),
    );
    let cfg = PlotConfig::default();
    for (name, draw) in [
        ("response", plot::response as fn(&Design, &PlotConfig) -> Option<plot::Plot>),
        ("transfer", plot::transfer),
        ("tolerance", plot::tolerance),
        ("noise", plot::noise),
    ] {
        let p = draw(d, &cfg).map(|p| p.svg);
        f.expect(
            "report",
            &format!("{id}: holds the {name} plot"),
            p.as_ref().is_some_and(|s| html.contains(s.as_str())),
            p.is_some(),
        );
    }
    let svgs = doc.select(&sel("svg")).count();
    f.expect("report", &format!("{id}: five drawings (schematic and four plots)"), svgs == 5, svgs);

    // The part list, row for row.
    let bom_rows = bom(d);
    match section(&doc, "Part list") {
        Some(s) => {
            let rows = rows_of(s);
            f.expect(
                "report",
                &format!("{id}: one table row per part-list row"),
                rows.len() == bom_rows.len(),
                (rows.len(), bom_rows.len()),
            );
            for r in &bom_rows {
                let found = rows.iter().find(|cells| {
                    cells.first().is_some_and(|c0| {
                        c0.split(|ch: char| !ch.is_ascii_alphanumeric()).filter(|w| !w.is_empty()).collect::<Vec<_>>()
                            == r.designators
                    })
                });
                match found {
                    Some(cells) => {
                        let line = cells.join(" | ");
                        for field in [
                            &r.quantity.to_string(),
                            &r.kind,
                            &r.value,
                            &r.tolerance,
                            &r.tolerance_code,
                            &r.rating,
                            &r.construction,
                            &r.notes,
                        ] {
                            f.expect(
                                "report",
                                &format!("{id}: part-list row {} shows {field:?}", r.designators.join(" ")),
                                line.contains(field.as_str()),
                                &line,
                            );
                        }
                    }
                    None => f.expect(
                        "report",
                        &format!("{id}: part-list row for {}", r.designators.join(" ")),
                        false,
                        &rows,
                    ),
                }
            }
        }
        None => f.expect("report", &format!("{id}: has a Part list section"), false, "none"),
    }
    // The checks, each with its id and message.
    match section(&doc, "Checks") {
        Some(s) => {
            let rows = rows_of(s);
            for c in &d.checks {
                let shown =
                    rows.iter().any(|cells| cells.iter().any(|x| x == &c.id) && cells.iter().any(|x| x == &c.message));
                f.expect("report", &format!("{id}: check {} shown with its message", c.id), shown, &c.message);
            }
            f.expect(
                "report",
                &format!("{id}: one row per check"),
                rows.len() == d.checks.len(),
                (rows.len(), d.checks.len()),
            );
        }
        None => f.expect("report", &format!("{id}: has a Checks section"), false, "none"),
    }
    // The sensor's front end, where it has one: its parts as the design holds them.
    let front = section(&doc, "Sensor front end")
        .map(rows_of)
        .unwrap_or_default()
        .iter()
        .map(|c| c.join(" | "))
        .collect::<Vec<_>>()
        .join("\n");
    let fmt_r = |x: f64| rangefit_engine::units::format(x, rangefit_engine::units::Quantity::Resistance);
    let mut wanted: Vec<String> = Vec::new();
    if let Some(ia) = &d.instrumentation() {
        wanted.extend([ia.feedback, ia.gain_resistor, Some(ia.protection)].into_iter().flatten().map(fmt_r));
        wanted.push(ia.reason.clone());
    }
    if let Some(dd) = &d.differential() {
        wanted.extend([fmt_r(dd.r1), fmt_r(dd.r2), format!("{:.1} dB", dd.cmrr_worst_db)]);
    }
    if let Some(t) = &d.photodiode() {
        wanted.push(fmt_r(t.feedback_resistor));
    }
    if let Some(b) = &d.high_impedance() {
        wanted.extend(b.bias_resistor.map(fmt_r));
    }
    let has_front = d.instrumentation().is_some()
        || d.differential().is_some()
        || d.photodiode().is_some()
        || d.high_impedance().is_some()
        || d.bridge().is_some();
    f.expect(
        "report",
        &format!("{id}: a Sensor front end section exactly when the design has a front end"),
        has_front != front.is_empty(),
        &front,
    );
    for w in wanted {
        f.expect("report", &format!("{id}: front end shows {w}"), front.contains(&w), &front);
    }
    // Assumptions: Monte Carlo count and seed, temperature.
    match section(&doc, "Assumptions") {
        Some(s) => {
            let rows = rows_of(s);
            let a = &d.request.analysis;
            let words = |t: &str| {
                t.split(|ch: char| !(ch.is_ascii_alphanumeric() || ch == '.')).map(str::to_string).collect::<Vec<_>>()
            };
            let mc = rows
                .iter()
                .find(|cells| cells.first().is_some_and(|c| c.contains("Monte Carlo")))
                .map(|cells| words(&cells.join(" ")))
                .unwrap_or_default();
            f.expect(
                "report",
                &format!("{id}: Monte Carlo count {} stated", a.monte_carlo_runs),
                mc.contains(&a.monte_carlo_runs.to_string()),
                &mc,
            );
            f.expect(
                "report",
                &format!("{id}: Monte Carlo seed {} stated", a.seed),
                mc.contains(&a.seed.to_string()),
                &mc,
            );
            let temp = rows
                .iter()
                .find(|cells| cells.first().is_some_and(|c| c.contains("Temperature")))
                .map(|cells| words(&cells.join(" ")))
                .unwrap_or_default();
            f.expect(
                "report",
                &format!("{id}: temperature {} K stated", a.temperature),
                temp.contains(&a.temperature.to_string()) && temp.iter().any(|w| w == "K"),
                &temp,
            );
        }
        None => f.expect("report", &format!("{id}: has an Assumptions section"), false, "none"),
    }
    // Safety cautions: every caution of the design, and the four subjects.
    match section(&doc, "Safety") {
        Some(s) => {
            let items: Vec<String> = s.select(&sel("li")).map(text_of).collect();
            for c in &d.cautions {
                f.expect("report", &format!("{id}: caution listed: {c}"), items.contains(c), &items);
            }
            let all = items.join(" ").to_lowercase();
            for subject in ["isolation", "absolute maximum", "qualified person", "local codes"] {
                f.expect(
                    "common practice: safety cautions",
                    &format!("{id}: cautions mention {subject}"),
                    all.contains(subject),
                    &items,
                );
            }
        }
        None => f.expect("report", &format!("{id}: has a Safety section"), false, "none"),
    }
}

#[test]
fn report_is_valid_self_contained_html_with_every_section() {
    let mut f = Fails::default();
    for (id, d) in
        designs().iter().filter(|(id, _)| demos::find(id).is_some() || ["sauna", "silo"].contains(&id.as_str()))
    {
        check_report(&mut f, id, d);
    }
    // Distinctive analysis options show up as given.
    let v = dc(
        "Beekeeper's hive-weight scale, long run",
        0.25,
        2.75,
        "100",
        "2 Hz",
        (0.0, 3.3),
        12,
        "50 Hz",
        json!([3.3]),
        json!({"analysis": {"monte_carlo_runs": 1700, "seed": 4242424242u64, "temperature": 318}}),
    );
    let d = design(&request(&v));
    check_report(&mut f, "hive with distinctive analysis options", &d);
    f.finish();
}

#[test]
fn report_escapes_request_text() {
    let mut f = Fails::default();
    let name = "<img src=x onerror=alert(1)>";
    let notes = "</p><script>alert(1)</script>";
    let v = dc(name, 0.25, 2.75, "100", "2 Hz", (0.0, 3.3), 12, "50 Hz", json!([3.3]), json!({"notes": notes}));
    let d = design(&request(&v));
    let html = report(&d);
    let doc = scraper::Html::parse_document(&html);
    f.expect(
        "HTML Living Standard, parsing (html5ever)",
        "hostile report parses without errors",
        doc.errors.is_empty(),
        &doc.errors,
    );
    f.expect(
        "HTML Living Standard (text is escaped, html5ever)",
        "no img element injected",
        doc.select(&sel("img")).next().is_none(),
        "img",
    );
    f.expect(
        "HTML Living Standard (text is escaped, html5ever)",
        "no script element injected",
        doc.select(&sel("script")).next().is_none(),
        "script",
    );
    f.expect(
        "HTML Living Standard (text is escaped, html5ever)",
        "no <script in the text",
        !html.to_ascii_lowercase().contains("<script"),
        "<script",
    );
    let handlers: Vec<String> = doc
        .tree
        .nodes()
        .filter_map(|n| n.value().as_element())
        .flat_map(|e| e.attrs().map(|(k, _)| k.to_string()))
        .filter(|k| k.starts_with("on"))
        .collect();
    f.expect(
        "HTML Living Standard (event handler content attributes)",
        "no event-handler attribute",
        handlers.is_empty(),
        &handlers,
    );
    let h1: Vec<String> = doc.select(&sel("h1")).map(text_of).collect();
    f.expect("report", "the name shows as text in the heading", h1 == [name], &h1);
    let title: String = doc.select(&sel("title")).map(text_of).collect();
    f.expect("report", "the name shows as text in the title", title.starts_with(name), &title);
    let shown_notes: Vec<String> = doc.select(&sel("header p")).map(text_of).filter(|t| t.contains("alert")).collect();
    f.expect("report", "the notes show as text", shown_notes == [notes], &shown_notes);
    f.finish();
}

// ---------------------------------------------------------------------------------------
// 7. Scaling for the firmware.

/// `value = (code − c0) × k` at the extreme codes gives the sensor's extremes within one
/// resolution step, and the codes are where the design's predicted output lands on an
/// ideal straight-binary converter (code c ↔ min + c·span/2^bits).
fn check_scaling(f: &mut Fails, id: &str, d: &Design) {
    let Some(sc) = d.scaling.clone() else {
        f.expect("own scenario", &format!("{id}: has a scaling"), false, "none");
        return;
    };
    f.expect(
        "scaling",
        &format!("{id}: the design carries the same scaling"),
        d.scaling.as_ref() == Some(&sc),
        "differs",
    );
    let dst = &d.request.destination;
    let s = &d.request.source;
    let p = d.predicted.expect("predicted");
    let lsb = (dst.max - dst.min) / 2f64.powi(dst.bits as i32);
    f.expect(
        "ideal straight-binary converter",
        &format!("{id}: LSB = span / 2^bits"),
        (sc.lsb - lsb).abs() <= 1e-12 * lsb,
        (sc.lsb, lsb),
    );
    let code = |y: f64| ((y - dst.min) / lsb).round() as i64;
    f.expect(
        "ideal straight-binary converter",
        &format!("{id}: code at the sensor minimum"),
        sc.sensor.code_at_min == code(p.output_at_min),
        (sc.sensor.code_at_min, code(p.output_at_min)),
    );
    f.expect(
        "ideal straight-binary converter",
        &format!("{id}: code at the sensor maximum"),
        sc.sensor.code_at_max == code(p.output_at_max),
        (sc.sensor.code_at_max, code(p.output_at_max)),
    );
    let at = |c: i64, l: &rangefit_engine::scaling::Linear| (c as f64 - l.c0) * l.k;
    let l = &sc.sensor;
    for (c, want, end) in [(l.code_at_min, s.min, "minimum"), (l.code_at_max, s.max, "maximum")] {
        let got = at(c, l);
        f.expect(
            "value = (code − c0) × k",
            &format!("{id}: sensor {end} {want} V from code {c}"),
            (got - want).abs() <= l.resolution,
            (got, want, l.resolution),
        );
    }
    f.expect(
        "value = (code − c0) × k",
        &format!("{id}: resolution is |k|"),
        (l.resolution - l.k.abs()).abs() <= 1e-15,
        (l.resolution, l.k),
    );
    match (&s.measurand, &sc.measurand) {
        (Some(m), Some(q)) => {
            for (c, want, end) in [(q.code_at_min, m.at_min, "minimum"), (q.code_at_max, m.at_max, "maximum")] {
                let got = at(c, q);
                f.expect(
                    "value = (code − c0) × k",
                    &format!("{id}: {} at the sensor {end}: {want} {} from code {c}", m.name, m.unit),
                    (got - want).abs() <= q.resolution,
                    (got, want, q.resolution),
                );
            }
            // The measurand is linear in the sensor voltage: at_min at s.min, at_max at s.max.
            let slope = (m.at_max - m.at_min) / (s.max - s.min);
            for c in [0, 1000, l.code_at_max / 2] {
                let via_sensor = m.at_min + (at(c, l) - s.min) * slope;
                f.expect(
                    "linear measurand",
                    &format!("{id}: code {c} gives the same {} either way", m.name),
                    (at(c, q) - via_sensor).abs() <= 1e-9 * via_sensor.abs().max(m.at_max.abs()),
                    (at(c, q), via_sensor),
                );
            }
            f.expect(
                "request",
                &format!("{id}: measurand name and unit carried"),
                q.name == m.name && q.unit == m.unit,
                (&q.name, &q.unit),
            );
        }
        (None, None) => {}
        (a, b) => f.expect(
            "request",
            &format!("{id}: measurand scaling iff the request names one"),
            false,
            (a.is_some(), b.is_some()),
        ),
    }
}

#[test]
fn scaling_reproduces_the_sensor_extremes() {
    let mut f = Fails::default();
    for (id, d) in designs() {
        if d.circuit.is_some() {
            check_scaling(&mut f, id, d);
        }
    }
    // The vineyard transmitter: 0 … 600 kPa in that unit.
    let sc = designed("vineyard").scaling.clone().expect("vineyard scaling");
    let q = sc.measurand.expect("vineyard measurand");
    f.expect(
        "own scenario",
        "vineyard: measurand in kPa",
        q.unit == "kPa" && q.at_min == 0.0 && q.at_max == 600.0,
        (&q.unit, q.at_min, q.at_max),
    );
    f.finish();
}

/// A scratch directory for one C build.
fn scratch(tag: &str) -> PathBuf {
    let safe: String = tag.chars().map(|c| if c.is_ascii_alphanumeric() { c } else { '-' }).collect();
    let dir = std::env::temp_dir().join(format!("rangefit-outputs-{}-{safe}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch directory");
    dir
}

const C_PROGRAM: &str = r#"#include <stdio.h>
#include "rangefit_scaling.h"
#include "rangefit_scaling.h" /* twice: the include guard must hold */

static double value_at(long long code, double c0, double k) { return ((double)code - c0) * k; }

int main(void) {
    printf("%.17g %.17g\n", value_at(RANGEFIT_SENSOR_CODE_AT_MIN, RANGEFIT_SENSOR_C0, RANGEFIT_SENSOR_K),
           value_at(RANGEFIT_SENSOR_CODE_AT_MAX, RANGEFIT_SENSOR_C0, RANGEFIT_SENSOR_K));
#ifdef RANGEFIT_MEASURAND_C0
    printf("%.17g %.17g\n", value_at(RANGEFIT_MEASURAND_CODE_AT_MIN, RANGEFIT_MEASURAND_C0, RANGEFIT_MEASURAND_K),
           value_at(RANGEFIT_MEASURAND_CODE_AT_MAX, RANGEFIT_MEASURAND_C0, RANGEFIT_MEASURAND_K));
#endif
    printf("%d %.17g\n", RANGEFIT_BITS, RANGEFIT_LSB_VOLTS);
    return 0;
}
"#;

/// The header compiles with `gcc -std=c99 -Wall -Werror` in a program that prints the value
/// at each extreme code, and the printed numbers equal the Rust ones.
fn check_c_header(f: &mut Fails, what: &str, d: &Design) {
    let Some(sc) = d.scaling.as_ref() else {
        f.expect("own scenario", &format!("{what}: has a scaling"), false, "none");
        return;
    };
    let header = c_header(&d.request, sc);
    let dir = scratch(what);
    std::fs::write(dir.join("rangefit_scaling.h"), &header).expect("write header");
    std::fs::write(dir.join("main.c"), C_PROGRAM).expect("write program");
    let compiled = Command::new("gcc")
        .args(["-std=c99", "-Wall", "-Werror", "main.c", "-o", "scaling"])
        .current_dir(&dir)
        .output()
        .unwrap_or_else(|e| panic!("gcc is needed for the C header test and could not run: {e}"));
    let stderr = String::from_utf8_lossy(&compiled.stderr).to_string();
    f.expect(
        "ISO C99 (gcc -std=c99 -Wall -Werror)",
        &format!("{what}: the header compiles without warnings"),
        compiled.status.success(),
        format!("{stderr}\n--- header ---\n{header}"),
    );
    if !compiled.status.success() {
        let _ = std::fs::remove_dir_all(&dir);
        return;
    }
    let ran = Command::new(dir.join("scaling")).output().expect("run the C program");
    let _ = std::fs::remove_dir_all(&dir);
    let out = String::from_utf8_lossy(&ran.stdout).to_string();
    let lines: Vec<Vec<f64>> =
        out.lines().map(|l| l.split_whitespace().filter_map(|x| x.parse().ok()).collect()).collect();
    let at = |c: i64, l: &rangefit_engine::scaling::Linear| (c as f64 - l.c0) * l.k;
    let mut want = vec![vec![at(sc.sensor.code_at_min, &sc.sensor), at(sc.sensor.code_at_max, &sc.sensor)]];
    if let Some(m) = &sc.measurand {
        want.push(vec![at(m.code_at_min, m), at(m.code_at_max, m)]);
    }
    want.push(vec![sc.bits as f64, sc.lsb]);
    let close = |a: &[f64], b: &[f64]| {
        a.len() == b.len() && a.iter().zip(b).all(|(x, y)| (x - y).abs() <= 1e-12 * y.abs().max(1e-300))
    };
    f.expect(
        "C program output",
        &format!("{what}: C prints the Rust values"),
        ran.status.success() && lines.len() == want.len() && lines.iter().zip(&want).all(|(a, b)| close(a, b)),
        (&out, &want),
    );
}

#[test]
fn c_header_compiles_and_agrees() {
    let mut f = Fails::default();
    for id in ["hive", "sauna", "vineyard", "ferry", "boiler-pressure", "workshop-shunt"] {
        check_c_header(&mut f, id, designed(id));
    }
    f.finish();
}

#[test]
fn hostile_names_stay_inside_the_c_comment() {
    let mut f = Fails::default();
    // A design name or measurand text that tries to end the comment, start a new line, or
    // nest a comment; the header must still compile cleanly and give the same numbers.
    let cases: [(&str, &str, &str, &str); 5] = [
        ("close comment", "*/ #include <stdio.h>", "hive weight", "kg"),
        ("new line", "Hive scale\n#define RANGEFIT_SENSOR_K 0", "hive weight", "kg"),
        ("measurand closes", "Hive scale", "weight */ #error broken", "kg*/"),
        ("nested opener", "Hive /* north */ stand", "hive weight", "kg"),
        ("trigraph splice", "Hive scale??/", "hive weight", "kg"),
    ];
    for (what, name, mname, unit) in cases {
        let v = dc(
            name,
            0.25,
            2.75,
            "100",
            "2 Hz",
            (0.0, 3.3),
            12,
            "50 Hz",
            json!([3.3]),
            json!({"source": {"measurand": {"name": mname, "unit": unit, "at_min": 0, "at_max": 150}}}),
        );
        let d = design(&request(&v));
        check_c_header(&mut f, what, &d);
    }
    f.finish();
}

// ---------------------------------------------------------------------------------------
// 8. Snapshots of every demo's part list and netlist.

fn snapshot_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("snapshots")
}

const UPDATE_HINT: &str = "if the change is intended, run `UPDATE_SNAPSHOTS=1 cargo test -p rangefit-tests --test \
    outputs` and review the diff";

/// Compares `text` with the snapshot file `name`; with `UPDATE_SNAPSHOTS=1` rewrites it.
fn check_snapshot(f: &mut Fails, name: &str, text: &str) {
    let path = snapshot_dir().join(name);
    if std::env::var("UPDATE_SNAPSHOTS").as_deref() == Ok("1") {
        std::fs::create_dir_all(snapshot_dir()).expect("snapshot directory");
        std::fs::write(&path, text).unwrap_or_else(|e| panic!("cannot write {}: {e}", path.display()));
        return;
    }
    match std::fs::read_to_string(&path) {
        Ok(old) if old == text => {}
        Ok(old) => {
            let first = old
                .split_inclusive('\n')
                .zip(text.split_inclusive('\n'))
                .position(|(a, b)| a != b)
                .unwrap_or_else(|| old.lines().count().min(text.lines().count()));
            let line = |t: &str| {
                t.split_inclusive('\n')
                    .nth(first)
                    .map(|l| format!("{l:?}"))
                    .unwrap_or_else(|| "(end of text)".to_string())
            };
            f.expect(
                "snapshot",
                &format!(
                    "tests/snapshots/{name} differs from the output at line {}: snapshot {} vs now {}; {UPDATE_HINT}",
                    first + 1,
                    line(&old),
                    line(text)
                ),
                false,
                name,
            );
        }
        Err(e) => {
            f.expect("snapshot", &format!("tests/snapshots/{name} cannot be read ({e}); {UPDATE_HINT}"), false, name)
        }
    }
}

#[test]
fn demo_part_lists_and_netlists_match_their_snapshots() {
    let mut f = Fails::default();
    let files: BTreeMap<String, &str> = demos::ALL.iter().map(|d| (format!("{}.json", d.id), d.json)).collect();
    let read = |p: &str| files.get(p).map(|s| s.to_string()).ok_or_else(|| "No such file or directory".to_string());
    for demo in demos::ALL {
        let file = format!("{}.json", demo.id);
        for (cmd, ext) in [("bom", "bom.csv"), ("netlist", "cir")] {
            let out = cli::run(&[cmd.to_string(), file.clone()], &read);
            f.expect(
                "rangefit CLI",
                &format!("{}: `rangefit {cmd}` succeeds", demo.id),
                out.status == 0 && !out.stdout.is_empty(),
                &out.stderr,
            );
            check_snapshot(&mut f, &format!("{}.{ext}", demo.id), &out.stdout);
        }
    }
    f.finish();
}

// ---------------------------------------------------------------------------------------
// Supply decoupling (common practice, no source: a local ceramic capacitor at each
// amplifier's supply pin on each rail, one bulk capacitor per rail).

/// The demos, and each demo again on supplies drawn from a seeded generator (rand_chacha
/// ChaCha8Rng, seed 14): one rail or split rails, for every sensor kind the demos hold.
fn decoupling_requests() -> Vec<(String, Request)> {
    use rand::{Rng, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(14);
    let supplies = [json!([3.3]), json!([5]), json!([5, -5]), json!([12, -12]), json!([15, -15])];
    let mut out = Vec::new();
    for demo in demos::ALL {
        out.push((demo.id.to_string(), request(&serde_json::from_str(demo.json).expect("demo JSON"))));
        let mut v: Value = serde_json::from_str(demo.json).expect("demo JSON");
        let k = rng.random_range(0..supplies.len());
        v["supplies"] = supplies[k].clone();
        out.push((format!("{} on {}", demo.id, supplies[k]), request(&v)));
    }
    out
}

#[test]
fn every_amplifier_supply_pin_and_rail_is_decoupled_by_role() {
    use rangefit_engine::circuit::{PartRole, RailSide, StageKind, GND};
    let src = "common practice";
    let mut rows = Vec::new();
    for (id, req) in decoupling_requests() {
        let d = design(&req);
        let Some(c) = d.circuit.as_ref() else {
            rows.push(fact(format!("{id}: designs"), false, "own scenario"));
            continue;
        };
        let rails: Vec<(&str, RailSide)> = c
            .parts
            .iter()
            .filter(|p| p.bench && p.role == Some(PartRole::Rail))
            .map(|p| (p.nodes[0].as_str(), if p.value > 0.0 { RailSide::Positive } else { RailSide::Negative }))
            .collect();
        let on = |p: &Part, node: &str| p.nodes.len() == 2 && p.nodes[0] == node && p.nodes[1] == GND;
        let mut locals = 0;
        for u in c.build_parts().into_iter().filter(|p| p.kind == PartKind::OpAmp) {
            let n: u32 = u.reference.trim_start_matches('U').parse().expect("amplifier designator");
            for (pin, side) in [(2, RailSide::Positive), (3, RailSide::Negative)] {
                let Some((node, _)) = rails.iter().find(|r| r.1 == side && r.0 == u.nodes[pin]) else { continue };
                let role = PartRole::LocalDecoupling { amplifier: n, rail: side };
                let caps: Vec<&Part> = c.parts.iter().filter(|p| p.role == Some(role)).collect();
                let what = format!("{id}: {} has one local capacitor on its {side:?} pin ({node})", u.reference);
                let ok = caps.len() == 1 && on(caps[0], node) && (caps[0].value - 100e-9).abs() < 1e-15;
                rows.push(fact(what, ok, src));
                locals += 1;
            }
        }
        for (node, side) in &rails {
            let bulk: Vec<&Part> = c.parts.iter().filter(|p| p.role == Some(PartRole::BulkDecoupling(*side))).collect();
            let ok = bulk.len() == 1 && on(bulk[0], node) && (bulk[0].value - 10e-6).abs() < 1e-12;
            rows.push(fact(format!("{id}: rail {node} has one bulk capacitor"), ok, src));
        }
        let all: Vec<&Part> = c.parts.iter().filter(|p| is_decoupling(p)).collect();
        rows.push(fact(format!("{id}: no other decoupling part"), all.len() == locals + rails.len(), src));
        let stage = c.stages.iter().filter(|s| s.kind == StageKind::SupplyDecoupling).collect::<Vec<_>>();
        let listed = stage.len() == 1 && all.iter().all(|p| stage[0].parts.contains(&p.reference) && !p.bench);
        rows.push(fact(format!("{id}: one decoupling stage lists them"), listed, src));
        // Designators continue after the signal parts: every decoupling C after every other C.
        let num = |p: &Part| p.reference[1..].parse::<u32>().unwrap_or(0);
        let signal = c.build_parts().into_iter().filter(|p| p.kind == PartKind::Capacitor && !is_decoupling(p));
        let last = signal.map(num).max().unwrap_or(0);
        rows.push(fact(format!("{id}: decoupling numbered after C{last}"), all.iter().all(|p| num(p) > last), src));
    }
    check(&rows);
}

#[test]
fn decoupling_moves_no_predicted_or_analysed_figure() {
    use rangefit_engine::analysis::{analyse, AnalysisConfig, Nominal};
    // The rails are ideal sources in the solver: a capacitor from a rail to ground carries
    // no signal, so the circuit without the decoupling predicts and analyses the same.
    let src = "engine solver: a rail is a known node";
    let mut rows = Vec::new();
    for demo in demos::ALL {
        let d = designed(demo.id);
        let (c, a) = (circuit(demo.id, d), d.analysis.as_ref().expect("analysis"));
        let mut bare = c.clone();
        bare.parts.retain(|p| !is_decoupling(p));
        rows.push(fact(format!("{}: the design has decoupling", demo.id), bare.parts.len() < c.parts.len(), src));
        let p = rangefit_engine::design::predict(&d.request, &bare).expect("prediction");
        let same = json!(p) == json!(d.predicted);
        rows.push(fact(format!("{}: predicted mapping unchanged", demo.id), same, src));
        let nominal = Nominal { gain: p.gain, f_low_3db: p.band_low, f_high_3db: p.band_high };
        let (b, _) = analyse(&d.request, &bare, nominal, &AnalysisConfig::from_request(&d.request));
        for (what, x, y) in [
            ("AC response", json!(a.ac), json!(b.ac)),
            ("noise", json!(a.noise), json!(b.noise)),
            ("worst case and Monte Carlo", json!(a.tolerance), json!(b.tolerance)),
        ] {
            rows.push(fact(format!("{}: {what} unchanged", demo.id), x == y, src));
        }
    }
    check(&rows);
}
