//! The `rangefit` command's contract: what `design`, `netlist` and `demo` print, the exit
//! statuses, and the messages for malformed and infeasible requests.
//!
//! Most cases call `rangefit_engine::cli::run` directly with an in-memory file system (fast,
//! no processes); a few run the real binary, built with `cargo build -p rangefit-engine`,
//! to check that it passes files, standard input, both streams and the status through.
//! Expected values come from the request format itself (the demo files and the inline
//! requests below, all scenarios of our own) and from SI prefixes (SI Brochure, 9th ed.,
//! Table 7: k = 1e3, M = 1e6).

use std::collections::HashMap;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::OnceLock;

use rangefit_engine::cli::{run, Outcome, EXIT_USAGE};
use rangefit_engine::{demos, Request};
use serde_json::Value;

// ---------------------------------------------------------------------------------------
// Running the command

/// Files the command can read in these tests: every demo as `<id>.json`, plus `extra`.
fn files(extra: &[(&str, &str)]) -> HashMap<String, String> {
    let mut m: HashMap<String, String> =
        demos::ALL.iter().map(|d| (format!("{}.json", d.id), d.json.to_string())).collect();
    for (name, text) in extra {
        m.insert(name.to_string(), text.to_string());
    }
    m
}

/// Runs `rangefit ARGS` through `cli::run` with `extra` files besides the demos.
fn call(args: &[&str], extra: &[(&str, &str)]) -> Outcome {
    let fs = files(extra);
    let read = |path: &str| fs.get(path).cloned().ok_or_else(|| "No such file or directory".to_string());
    let args: Vec<String> = args.iter().map(|s| s.to_string()).collect();
    run(&args, &read)
}

fn json_of(out: &Outcome, what: &str) -> Value {
    serde_json::from_str(&out.stdout).unwrap_or_else(|e| panic!("{what}: stdout is not JSON ({e}):\n{}", out.stdout))
}

/// A request with one change applied at a JSON pointer (`None` removes the field).
fn variant(base: &str, pointer: &str, value: Option<Value>) -> String {
    let mut v: Value = serde_json::from_str(base).expect("base request is JSON");
    let (parent, key) = pointer.rsplit_once('/').expect("pointer has a parent");
    let obj = v.pointer_mut(parent).and_then(Value::as_object_mut).unwrap_or_else(|| panic!("no object at {parent}"));
    match value {
        Some(x) => {
            obj.insert(key.to_string(), x);
        }
        None => {
            obj.remove(key);
        }
    }
    v.to_string()
}

/// A well-formed, designable request of our own: a greenhouse light logger on a 3.3 V board.
const BASE: &str = r#"{
  "version": 1,
  "name": "Greenhouse light logger",
  "source": {"kind": "single_ended", "min": 0, "max": "0.8 V", "coupling": "dc", "impedance": "1k",
  "band_high": "5 Hz"},
  "destination": {"min": 0, "max": "3.3 V", "bits": 12, "sample_rate": "100 Hz", "impedance": "100k"},
  "supplies": [3.3],
  "parts": {"resistor_series": "E24"}
}"#;

/// An AC-coupled request with polarity free, for the read-back case.
const AC_FREE: &str = r#"{
  "name": "Cattle-shed ventilation fan vibration",
  "source": {"min": "1.9 V", "max": "2.6 V", "coupling": "ac", "impedance": "220", "band_low": "5 Hz",
  "band_high": "1 kHz"},
  "destination": {"min": -2.5, "max": 2.5, "bits": 16, "sample_rate": "8 kHz", "impedance": "47k", "headroom": "3 %"},
  "supplies": [12, -12],
  "keep_polarity": false,
  "parts": {"resistor_series": "E96", "capacitor_series": "E12", "resistor_tolerance": "0.1 %"}
}"#;

// ---------------------------------------------------------------------------------------
// design

const PREDICTED_FIELDS: &[&str] = &["gain", "offset", "output_at_min", "output_at_max", "band_low", "band_high"];
const PART_KINDS: &[&str] = &["resistor", "capacitor", "amplifier", "diode"];
const STAGE_NAMES: &[&str] = &[
    "sensor",
    "shunt",
    "buffer",
    "transimpedance",
    "input_stage",
    "supply",
    "coupling",
    "reference",
    "gain",
    "converter",
    "filter",
    "drive",
    "decoupling",
];

/// `design FILE` prints the whole result with the documented shape.
fn check_design_shape(file: &str, extra: &[(&str, &str)]) {
    let out = call(&["design", file], extra);
    assert_eq!(out.status, 0, "design {file}: status {} stderr {}", out.status, out.stderr);
    assert!(out.stderr.is_empty(), "design {file}: stderr {:?}", out.stderr);
    let v = json_of(&out, file);
    for key in ["request", "stages", "parts", "predicted", "checks"] {
        assert!(v.get(key).is_some(), "design {file}: no `{key}` in the output");
    }
    assert!(v["request"].is_object(), "design {file}: request is not an object");

    let stages = v["stages"].as_array().unwrap_or_else(|| panic!("design {file}: stages is not a list"));
    assert!(!stages.is_empty(), "design {file}: no stages");
    let parts = v["parts"].as_array().unwrap_or_else(|| panic!("design {file}: parts is not a list"));
    assert!(!parts.is_empty(), "design {file}: no parts");
    for p in parts {
        let r = p["ref"].as_str().unwrap_or_else(|| panic!("design {file}: part without ref: {p}"));
        assert!(PART_KINDS.contains(&p["kind"].as_str().unwrap_or("")), "design {file}: {r} has kind {}", p["kind"]);
        let value = p["value"].as_f64().unwrap_or_else(|| panic!("design {file}: {r} value {}", p["value"]));
        assert!(value > 0.0 && value.is_finite(), "design {file}: {r} value {value}");
        assert!(
            p["tolerance"].is_null() || p["tolerance"].as_f64().is_some_and(|t| (0.0..=0.5).contains(&t)),
            "design {file}: {r} tolerance {}",
            p["tolerance"]
        );
        let nodes = p["nodes"].as_array().unwrap_or_else(|| panic!("design {file}: {r} nodes {}", p["nodes"]));
        assert!(
            nodes.len() >= 2 && nodes.iter().all(|n| n.as_str().is_some_and(|s| !s.is_empty())),
            "design {file}: {r} nodes {nodes:?}"
        );
        assert!(STAGE_NAMES.contains(&p["stage"].as_str().unwrap_or("")), "design {file}: {r} stage {}", p["stage"]);
        // Every part belongs to the stage list under the stage it names.
        let listed = stages.iter().any(|s| s["parts"].as_array().is_some_and(|l| l.iter().any(|x| x == r)));
        assert!(listed, "design {file}: {r} is in no stage's part list");
    }

    let pred = &v["predicted"];
    for f in PREDICTED_FIELDS {
        let x = &pred[*f];
        let ok = x.as_f64().is_some_and(f64::is_finite) || (f.starts_with("band_") && x.is_null());
        assert!(ok, "design {file}: predicted.{f} = {x}");
    }
    let checks = v["checks"].as_array().unwrap_or_else(|| panic!("design {file}: checks is not a list"));
    assert!(!checks.is_empty(), "design {file}: no checks");
    for c in checks {
        assert!(c["id"].as_str().is_some_and(|s| !s.is_empty()), "design {file}: check without id: {c}");
        assert!(
            ["ok", "warning", "error"].contains(&c["severity"].as_str().unwrap_or("")),
            "design {file}: severity {c}"
        );
        assert!(c["message"].as_str().is_some_and(|s| !s.is_empty()), "design {file}: check without message: {c}");
    }
    assert!(!checks.iter().any(|c| c["severity"] == "error"), "design {file}: error checks: {checks:?}");
}

#[test]
fn design_prints_the_documented_result() {
    for d in demos::ALL {
        check_design_shape(&format!("{}.json", d.id), &[]);
    }
    check_design_shape("base.json", &[("base.json", BASE)]);
    check_design_shape("ac.json", &[("ac.json", AC_FREE)]);
}

/// `design` prints the request normalised: values in SI base units and defaults filled in.
/// Rows: (file, JSON pointer into the output, expected value).
fn check_normalised(file: &str, pointer: &str, expected: Value) {
    let out = call(&["design", file], &[("base.json", BASE), ("ac.json", AC_FREE)]);
    assert_eq!(out.status, 0, "design {file}: {}", out.stderr);
    let v = json_of(&out, file);
    let got = v.pointer(pointer).unwrap_or_else(|| panic!("design {file}: nothing at {pointer}"));
    let same = match (got.as_f64(), expected.as_f64()) {
        (Some(a), Some(b)) => (a - b).abs() <= 1e-12 * b.abs().max(1e-300),
        _ => *got == expected,
    };
    assert!(same, "design {file}: {pointer} = {got}, expected {expected}");
}

#[test]
fn design_normalises_the_request() {
    use serde_json::json;
    let rows: &[(&str, &str, Value)] = &[
        // harbour-hydrophone.json: "1k", "20 Hz", "20 kHz", "192 kHz", "10k".
        ("harbour-hydrophone.json", "/request/source/impedance", json!(1000.0)),
        ("harbour-hydrophone.json", "/request/source/band_low", json!(20.0)),
        ("harbour-hydrophone.json", "/request/source/band_high", json!(20000.0)),
        ("harbour-hydrophone.json", "/request/destination/sample_rate", json!(192000.0)),
        ("harbour-hydrophone.json", "/request/destination/impedance", json!(10000.0)),
        ("harbour-hydrophone.json", "/request/source/coupling", json!("ac")),
        // Defaults the file leaves out (the engine's stated defaults).
        ("harbour-hydrophone.json", "/request/destination/headroom", json!(rangefit_engine::request::DEFAULT_HEADROOM)),
        ("harbour-hydrophone.json", "/request/keep_polarity", json!(true)),
        // boiler-pressure.json: "0.5 V", "4.5 V", "100", "50 Hz", "1 kHz", "50k", "1 %", "10 %".
        ("boiler-pressure.json", "/request/source/min", json!(0.5)),
        ("boiler-pressure.json", "/request/source/max", json!(4.5)),
        ("boiler-pressure.json", "/request/source/impedance", json!(100.0)),
        ("boiler-pressure.json", "/request/source/band_high", json!(50.0)),
        ("boiler-pressure.json", "/request/source/band_low", json!(0.0)),
        ("boiler-pressure.json", "/request/destination/max", json!(3.3)),
        ("boiler-pressure.json", "/request/destination/sample_rate", json!(1000.0)),
        ("boiler-pressure.json", "/request/destination/impedance", json!(50000.0)),
        ("boiler-pressure.json", "/request/parts/resistor_tolerance", json!(0.01)),
        ("boiler-pressure.json", "/request/parts/capacitor_tolerance", json!(0.1)),
        ("boiler-pressure.json", "/request/supplies", json!([5.0, 3.3])),
        // mast-tilt.json: "-2 V", "470", "1M", "100 Hz".
        ("mast-tilt.json", "/request/source/min", json!(-2.0)),
        ("mast-tilt.json", "/request/source/impedance", json!(470.0)),
        ("mast-tilt.json", "/request/destination/impedance", json!(1e6)),
        ("mast-tilt.json", "/request/destination/sample_rate", json!(100.0)),
        ("mast-tilt.json", "/request/parts/resistor_series", json!("E96")),
        // workshop-shunt.json: "1 kHz", "20 kHz"; capacitor series and window by default.
        ("workshop-shunt.json", "/request/source/band_high", json!(1000.0)),
        ("workshop-shunt.json", "/request/destination/sample_rate", json!(20000.0)),
        ("workshop-shunt.json", "/request/destination/headroom", json!(0.02)),
        ("workshop-shunt.json", "/request/parts/capacitor_series", json!("E6")),
        ("workshop-shunt.json", "/request/parts/resistor_min", json!(1000.0)),
        ("workshop-shunt.json", "/request/parts/resistor_max", json!(1e6)),
        // Our own requests: "0.8 V", "1k", "5 Hz", "100k"; "1.9 V", "220", "8 kHz", "47k", "3 %", "0.1 %".
        ("base.json", "/request/source/max", json!(0.8)),
        ("base.json", "/request/source/impedance", json!(1000.0)),
        ("base.json", "/request/source/band_high", json!(5.0)),
        ("base.json", "/request/destination/impedance", json!(100000.0)),
        ("ac.json", "/request/source/min", json!(1.9)),
        ("ac.json", "/request/source/impedance", json!(220.0)),
        ("ac.json", "/request/destination/sample_rate", json!(8000.0)),
        ("ac.json", "/request/destination/impedance", json!(47000.0)),
        ("ac.json", "/request/destination/headroom", json!(0.03)),
        ("ac.json", "/request/parts/resistor_tolerance", json!(0.001)),
        ("ac.json", "/request/keep_polarity", json!(false)),
        ("ac.json", "/request/version", json!(1)),
    ];
    for (file, pointer, expected) in rows {
        check_normalised(file, pointer, expected.clone());
    }
}

/// The normalised request printed under `request` reads back to the same request and the
/// same design: same parts with the same values, same prediction.
fn check_read_back(file: &str, original: &str) {
    let first = call(&["design", file], &[(file, original)]);
    assert_eq!(first.status, 0, "design {file}: {}", first.stderr);
    let v = json_of(&first, file);
    let normalised = serde_json::to_string_pretty(&v["request"]).unwrap();

    let a = Request::from_json(original).unwrap_or_else(|e| panic!("{file}: {e}"));
    let b = Request::from_json(&normalised)
        .unwrap_or_else(|e| panic!("{file}: normalised request does not read back: {e}\n{normalised}"));
    assert_eq!(a, b, "{file}: the normalised request reads back to a different request");

    let second = call(&["design", "normalised.json"], &[("normalised.json", &normalised)]);
    assert_eq!(second.status, 0, "design of the normalised {file}: {}", second.stderr);
    let w = json_of(&second, file);
    for key in ["parts", "predicted", "stages", "checks"] {
        assert_eq!(v[key], w[key], "{file}: `{key}` differs after reading the normalised request back");
    }
}

#[test]
fn normalised_request_reads_back_to_the_same_design() {
    for d in demos::ALL {
        check_read_back(&format!("{}.json", d.id), d.json);
    }
    check_read_back("base.json", BASE);
    check_read_back("ac.json", AC_FREE);
}

// ---------------------------------------------------------------------------------------
// Malformed requests

/// A malformed request: status 2, nothing on stdout, and stderr names the field and the
/// problem as `rangefit: FIELD: PROBLEM`.
fn check_refused(what: &str, text: &str, field: &str, problem: &[&str]) {
    for cmd in ["design", "netlist"] {
        let out = call(&[cmd, "bad.json"], &[("bad.json", text)]);
        assert_eq!(out.status, EXIT_USAGE, "{cmd} ({what}): status {}, stderr {:?}", out.status, out.stderr);
        assert_eq!(out.status, 2, "the usage status is 2");
        assert!(out.stdout.is_empty(), "{cmd} ({what}): stdout not empty: {:?}", out.stdout);
        assert!(out.stderr.starts_with("rangefit: "), "{cmd} ({what}): stderr {:?}", out.stderr);
        if !field.is_empty() {
            assert!(
                out.stderr.contains(&format!("{field}: ")),
                "{cmd} ({what}): stderr {:?} does not name {field}",
                out.stderr
            );
        }
        for word in problem {
            assert!(out.stderr.contains(word), "{cmd} ({what}): stderr {:?} lacks {word:?}", out.stderr);
        }
    }
}

#[test]
fn malformed_requests_are_refused_with_the_field_named() {
    use serde_json::json;
    let rows: Vec<(&str, String, &str, &[&str])> = vec![
        ("not JSON", "source: 0 … 1 V".to_string(), "", &["not valid JSON"]),
        ("missing destination", variant(BASE, "/destination", None), "destination", &["required"]),
        (
            "source.min not a number",
            variant(BASE, "/source/min", Some(json!("abc"))),
            "source.min",
            &["abc", "not a number"],
        ),
        (
            "source.min a frequency",
            variant(BASE, "/source/min", Some(json!("48 kHz"))),
            "source.min",
            &["frequency", "voltage"],
        ),
        ("zero bits", variant(BASE, "/destination/bits", Some(json!(0))), "destination.bits", &["1 to 32"]),
        ("unknown field", variant(BASE, "/source/colour", Some(json!("green"))), "source.colour", &["unknown field"]),
        (
            "unknown series",
            variant(BASE, "/parts/resistor_series", Some(json!("E25"))),
            "parts.resistor_series",
            &["E25", "E24"],
        ),
        ("no supplies", variant(BASE, "/supplies", Some(json!([]))), "supplies", &["at least one rail"]),
        ("future version", variant(BASE, "/version", Some(json!(99))), "version", &["99"]),
        (
            "AC without band_low",
            variant(BASE, "/source/coupling", Some(json!("ac"))),
            "source.band_low",
            &["required", "AC"],
        ),
        ("max below min", variant(BASE, "/source/max", Some(json!("-0.5 V"))), "source.max", &["below", "source.min"]),
    ];
    for (what, text, field, problem) in &rows {
        check_refused(what, text, field, problem);
    }
}

// ---------------------------------------------------------------------------------------
// Infeasible requests

/// Well formed but impossible: `design` succeeds (status 0) with an error check whose
/// message says what would make it possible; `netlist` has no circuit (status 1).
fn check_infeasible(what: &str, text: &str, id: &str, remedy: &[&str]) {
    let out = call(&["design", "r.json"], &[("r.json", text)]);
    assert_eq!(out.status, 0, "design ({what}): status {}, stderr {:?}", out.status, out.stderr);
    let v = json_of(&out, what);
    let checks = v["checks"].as_array().unwrap_or_else(|| panic!("{what}: no checks"));
    let check = checks
        .iter()
        .find(|c| c["id"] == id)
        .unwrap_or_else(|| panic!("design ({what}): no check `{id}` among {checks:?}"));
    assert_eq!(check["severity"], "error", "design ({what}): {check}");
    let message = check["message"].as_str().unwrap_or("");
    for word in remedy {
        assert!(message.contains(word), "design ({what}): message {message:?} does not say {word:?}");
    }
    assert!(
        v["parts"].as_array().is_some_and(|p| p.is_empty()),
        "design ({what}): parts listed for an impossible request: {}",
        v["parts"]
    );

    let net = call(&["netlist", "r.json"], &[("r.json", text)]);
    assert_eq!(net.status, 1, "netlist ({what}): status {}, stderr {:?}", net.status, net.stderr);
    assert!(net.stdout.is_empty(), "netlist ({what}): stdout {:?}", net.stdout);
    assert!(net.stderr.starts_with("rangefit: "), "netlist ({what}): stderr {:?}", net.stderr);
    assert!(
        net.stderr.contains(message),
        "netlist ({what}): stderr {:?} does not carry the reason {message:?}",
        net.stderr
    );
}

#[test]
fn infeasible_requests_say_what_would_make_them_possible() {
    use serde_json::json;
    let rows: Vec<(&str, String, &str, &[&str])> = vec![
        ("zero span", variant(BASE, "/source/max", Some(json!(0))), "zero_span", &["lowest and highest"]),
        (
            "band above Nyquist",
            variant(
                &variant(BASE, "/source/band_high", Some(json!("30 kHz"))),
                "/destination/sample_rate",
                Some(json!("48 kHz")),
            ),
            "band_above_nyquist",
            &["Raise the sample rate", "75 kHz", "lower band_high"],
        ),
        (
            "converter range far beyond the rails",
            variant(BASE, "/destination/max", Some(json!("10 V"))),
            "range_beyond_rails",
            &["add a rail"],
        ),
    ];
    for (what, text, id, remedy) in &rows {
        check_infeasible(what, text, id, remedy);
    }
}

// ---------------------------------------------------------------------------------------
// netlist

/// Element letters and dot-lines the netlist may use (SPICE3: R resistor, C capacitor,
/// V voltage source, E VCVS, G VCCS, D diode, X subcircuit instance).
// SPICE3 element letters the netlist may use (I: the loop current of a current-loop sensor).
const ELEMENTS: &[char] = &['R', 'C', 'V', 'I', 'E', 'G', 'D', 'X'];
const DOT_LINES: &[&str] = &[".subckt", ".ends", ".model", ".end"];
/// Lines only the test bench adds.
const BENCH_LINES: &[&str] = &[".save", ".op", ".dc", ".ac", ".print"];

/// `netlist [--testbench] FILE`: plain SPICE3 with the fixed bench names.
fn check_netlist(file: &str, testbench: bool, dual: bool) {
    let mut args = vec!["netlist"];
    if testbench {
        args.push("--testbench");
    }
    args.push(file);
    let out = call(&args, &[]);
    assert_eq!(out.status, 0, "{args:?}: status {}, stderr {:?}", out.status, out.stderr);
    assert!(out.stderr.is_empty(), "{args:?}: stderr {:?}", out.stderr);
    let lines: Vec<&str> = out.stdout.lines().collect();
    assert_eq!(lines.last(), Some(&".end"), "{args:?}: the last line is not .end");
    for line in &lines {
        let first = line.split_whitespace().next().unwrap_or("");
        let ok = line.is_empty()
            || line.starts_with('*')
            || ELEMENTS.contains(&first.chars().next().unwrap_or(' '))
            || DOT_LINES.contains(&first)
            || (testbench && BENCH_LINES.contains(&first));
        assert!(ok, "{args:?}: line {line:?} is not an allowed element or control line");
    }
    let element = |name: &str| lines.iter().find(|l| l.split_whitespace().next() == Some(name)).copied();
    // The netlist contract: the measured quantity is one independent source, VSENSE
    // (behind RSENSE) for voltage kinds, ISENSE into `sense` for current kinds.
    // A differential pair or bridge has VCM and a resistor per leg.
    let sensor = if element("ISENSE").is_some() {
        vec!["ISENSE"]
    } else if element("VCM").is_some() {
        vec!["VSENSE", "VCM", "RSENSEP", "RSENSEN"]
    } else {
        vec!["VSENSE", "RSENSE"]
    };
    for name in sensor.into_iter().chain(["VPOS", "RADC"]) {
        assert!(element(name).is_some(), "{args:?}: no {name} element");
    }
    assert_eq!(
        element("VNEG").is_some(),
        dual,
        "{args:?}: VNEG present = {}, dual rails = {dual}",
        element("VNEG").is_some()
    );
    let radc = element("RADC").unwrap();
    assert_eq!(radc.split_whitespace().nth(1), Some("adc"), "{args:?}: RADC does not load node adc: {radc}");
    // An amplifier drives adc, directly or through the drive resistor (R between an
    // amplifier's output and adc).
    let amp_outputs: Vec<&str> =
        lines.iter().filter(|l| l.starts_with('X')).filter_map(|l| l.split_whitespace().nth(5)).collect();
    let through_resistor = lines.iter().any(|l| {
        let t: Vec<&str> = l.split_whitespace().collect();
        l.starts_with('R')
            && t.len() >= 3
            && ((t[1] == "adc" && amp_outputs.contains(&t[2])) || (t[2] == "adc" && amp_outputs.contains(&t[1])))
    });
    assert!(amp_outputs.contains(&"adc") || through_resistor, "{args:?}: no amplifier drives node adc");
    let has = |prefix: &str| lines.iter().any(|l| l.starts_with(prefix));
    if testbench {
        assert!(has(".dc VSENSE ") || has(".dc ISENSE "), "{args:?}: no .dc sweep of the sensor source");
        assert!(has(".ac "), "{args:?}: no .ac analysis");
    } else {
        for cmd in BENCH_LINES.iter().chain(&[".tran", ".control", ".noise"]) {
            assert!(!has(cmd), "{args:?}: analysis command {cmd} without --testbench");
        }
    }
}

#[test]
fn netlist_is_plain_spice3_with_the_bench_names() {
    for d in demos::ALL {
        let req = Request::from_json(d.json).unwrap();
        let dual = req.supplies.iter().any(|&v| v < 0.0);
        for testbench in [false, true] {
            check_netlist(&format!("{}.json", d.id), testbench, dual);
        }
    }
}

// ---------------------------------------------------------------------------------------
// Usage

/// Bad usage: status 2, nothing on stdout, and stderr says what is wrong.
fn check_usage(args: &[&str], words: &[&str]) {
    let out = call(args, &[]);
    assert_eq!(out.status, EXIT_USAGE, "{args:?}: status {}, stderr {:?}", out.status, out.stderr);
    assert!(out.stdout.is_empty(), "{args:?}: stdout {:?}", out.stdout);
    for w in words {
        assert!(out.stderr.contains(w), "{args:?}: stderr {:?} lacks {w:?}", out.stderr);
    }
}

#[test]
fn bad_usage_exits_with_status_2() {
    let rows: &[(&[&str], &[&str])] = &[
        (&["netlist", "--bogus", "mast-tilt.json"], &["unknown option --bogus", "usage:"]),
        (&["design", "--testbench", "mast-tilt.json"], &["unknown option --testbench"]),
        (&[], &["no command", "usage:"]),
        (&["simulate", "mast-tilt.json"], &["unknown command simulate"]),
        (&["design"], &["exactly one request file"]),
        (&["design", "mast-tilt.json", "boiler-pressure.json"], &["exactly one request file"]),
        (&["design", "missing.json"], &["cannot read missing.json"]),
        (&["demo", "no-such-demo"], &["no demo named no-such-demo"]),
        (&["demo", "mast-tilt", "boiler-pressure"], &["at most one"]),
    ];
    for (args, words) in rows {
        check_usage(args, words);
    }
}

// ---------------------------------------------------------------------------------------
// demo

#[test]
fn demo_lists_and_prints_the_demos() {
    let out = call(&["demo"], &[]);
    assert_eq!(out.status, 0, "demo: {}", out.stderr);
    let listed: Vec<(&str, &str)> = out.stdout.lines().map(|l| l.split_once('\t').unwrap_or((l, ""))).collect();
    let want: Vec<(&str, &str)> = demos::ALL.iter().map(|d| (d.id, d.title)).collect();
    assert_eq!(listed, want, "demo lists other demos than demos::ALL");
    for id in ["harbour-hydrophone", "boiler-pressure", "mast-tilt", "workshop-shunt"] {
        assert!(listed.iter().any(|(i, _)| *i == id), "demo does not list {id}");
    }

    // `demo ID` prints the demo file as shipped, which parses and reads as a request.
    let demo_dir = repo_root().join("engine/demos");
    for d in demos::ALL {
        let out = call(&["demo", d.id], &[]);
        assert_eq!(out.status, 0, "demo {}: {}", d.id, out.stderr);
        let printed = json_of(&out, d.id);
        let on_disk = std::fs::read_to_string(demo_dir.join(format!("{}.json", d.id)))
            .unwrap_or_else(|e| panic!("engine/demos/{}.json: {e}", d.id));
        let on_disk: Value = serde_json::from_str(&on_disk).unwrap();
        assert_eq!(printed, on_disk, "demo {} differs from engine/demos/{}.json", d.id, d.id);
        Request::from_json(&out.stdout).unwrap_or_else(|e| panic!("demo {} does not read as a request: {e}", d.id));
    }
    let harbour = json_of(&call(&["demo", "harbour-hydrophone"], &[]), "harbour-hydrophone");
    assert_eq!(harbour["source"]["coupling"], "ac");
}

// ---------------------------------------------------------------------------------------
// The real binary

fn repo_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).parent().expect("tests/ has a parent").to_path_buf()
}

/// Builds the `rangefit` binary with the cargo running these tests and returns its path
/// (as cargo reports it, so a custom target directory works too).
fn binary() -> &'static Path {
    static BIN: OnceLock<PathBuf> = OnceLock::new();
    BIN.get_or_init(|| {
        let out = Command::new(env!("CARGO"))
            .args(["build", "-p", "rangefit-engine", "--bin", "rangefit", "--message-format=json-render-diagnostics"])
            .current_dir(repo_root())
            .output()
            .expect("cannot run cargo to build the rangefit binary");
        assert!(
            out.status.success(),
            "cargo build -p rangefit-engine --bin rangefit failed:\n{}",
            String::from_utf8_lossy(&out.stderr)
        );
        String::from_utf8_lossy(&out.stdout)
            .lines()
            .filter_map(|l| serde_json::from_str::<Value>(l).ok())
            .filter(|m| m["reason"] == "compiler-artifact" && m["target"]["name"] == "rangefit")
            .find_map(|m| m["executable"].as_str().map(PathBuf::from))
            .expect("cargo reported no rangefit executable")
    })
}

/// Runs the binary with `args` (paths relative to the repository root) and `stdin`.
fn exec(args: &[&str], stdin: &str) -> Outcome {
    let mut child = Command::new(binary())
        .args(args)
        .current_dir(repo_root())
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("cannot start the rangefit binary");
    // A run that never reads its input may close the pipe first; its output still counts.
    let _ = child.stdin.take().expect("stdin is piped").write_all(stdin.as_bytes());
    let out = child.wait_with_output().unwrap();
    Outcome {
        status: out.status.code().expect("rangefit ended by a signal"),
        stdout: String::from_utf8(out.stdout).expect("stdout is UTF-8"),
        stderr: String::from_utf8(out.stderr).expect("stderr is UTF-8"),
    }
}

#[test]
fn binary_passes_files_stdin_streams_and_status_through() {
    let bad = variant(BASE, "/destination/bits", Some(serde_json::json!(0)));
    // (binary args, standard input, the same call through `cli::run`): the binary must
    // print exactly what `cli::run` returns for the same request and exit with its status.
    let rows: &[(&[&str], &str, &[&str])] = &[
        // A demo file read from disk.
        (&["design", "engine/demos/boiler-pressure.json"], "", &["design", "boiler-pressure.json"]),
        // A request on standard input.
        (&["netlist", "--testbench", "-"], BASE, &["netlist", "--testbench", "base.json"]),
        // A malformed request on standard input: status 2, message on stderr.
        (&["design", "-"], &bad, &["design", "bad.json"]),
    ];
    for (args, stdin, lib_args) in rows {
        let real = exec(args, stdin);
        let lib = call(lib_args, &[("base.json", BASE), ("bad.json", &bad)]);
        assert_eq!(real, lib, "rangefit {args:?} differs from cli::run {lib_args:?}");
    }
    // `open -`: the fragment on standard input gives what `open FRAGMENT` gives.
    let fragment = call(&["link", "base.json"], &[("base.json", BASE)]).stdout;
    let piped = exec(&["open", "-"], &fragment);
    let argued = call(&["open", fragment.trim()], &[]);
    assert_eq!(piped, argued, "open - differs from open FRAGMENT");
    assert_eq!(piped.status, 0, "{piped:?}");
    // A fragment that inflates past the engine's limit (a decompression bomb) is too large,
    // not damaged.
    let mut bomb: Value = serde_json::from_str(BASE).expect("JSON");
    bomb["notes"] = Value::String("0".repeat(4 * rangefit_engine::share::MAX_INFLATED));
    let req = rangefit_engine::Request::from_value(&bomb).expect("the bomb reads as a request");
    let told = call(&["open", &rangefit_engine::share::encode(&req)], &[]);
    assert!(told.status != 0 && told.stderr.contains("unpacks to more than a design can be"), "{told:?}");
    let bad_run = exec(&["design", "-"], &bad);
    assert_eq!(bad_run.status, 2);
    assert!(bad_run.stdout.is_empty() && bad_run.stderr.contains("destination.bits: "), "{bad_run:?}");
    let ok_run = exec(&["design", "engine/demos/boiler-pressure.json"], "");
    assert_eq!(ok_run.status, 0);
    json_of(&ok_run, "binary design");
}

/// Extreme but accepted requests print only finite numbers: a measurand beyond ±1e15 is
/// refused with its field named; with the Monte Carlo switched off the report says so
/// instead of printing NaN, and neither the report nor the C header carries NaN or inf.
#[test]
fn extreme_requests_print_no_nan_or_inf() {
    let huge = variant(
        BASE,
        "/source/measurand",
        Some(serde_json::json!({"name": "p", "unit": "Pa",
        "at_min": -1e308, "at_max": 1e308})),
    );
    let out = call(&["design", "huge.json"], &[("huge.json", &huge)]);
    assert_eq!(out.status, 2, "{out:?}");
    assert!(out.stderr.contains("source.measurand.at_min: must lie within ±1e15"), "{out:?}");
    let off = variant(BASE, "/analysis", Some(serde_json::json!({"monte_carlo_runs": 0})));
    for cmd in [&["report", "off.json"][..], &["scaling", "--c", "off.json"][..]] {
        let out = call(cmd, &[("off.json", &off)]);
        assert_eq!(out.status, 0, "{cmd:?}: {out:?}");
        let bad =
            ["NaN", "inf", "Inf"].iter().any(|w| out.stdout.split(|c: char| !c.is_alphanumeric()).any(|t| t == *w));
        assert!(!bad, "{cmd:?} prints a non-finite number");
    }
    let report = call(&["report", "off.json"], &[("off.json", &off)]).stdout;
    assert!(report.contains("not run (analysis.monte_carlo_runs = 0)"), "the report says the Monte Carlo did not run");
}
