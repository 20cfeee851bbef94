//! The `rangefit` command: a thin layer over the library for scripts.
//!
//! ```text
//! rangefit design REQUEST.json              JSON: normalised request, stages, parts, predicted, checks
//! rangefit netlist [--testbench] REQUEST.json   SPICE3 netlist of the same circuit
//! rangefit schematic REQUEST.json           annotated schematic (SVG)
//! rangefit plot {response|transfer|tolerance|noise} REQUEST.json   one plot (SVG)
//! rangefit report REQUEST.json              printable report (self-contained HTML)
//! rangefit bom REQUEST.json                 part list as CSV (RFC 4180)
//! rangefit scaling [--c] REQUEST.json       converter code → sensor quantity (JSON, or a C header)
//! rangefit link REQUEST.json               the share-link fragment (everything after #)
//! rangefit open FRAGMENT                    the request a link carries, as JSON
//! rangefit demo [ID]                        print a demo request (list them without ID)
//! ```
//! `REQUEST.json` may be `-` for standard input. A malformed request prints
//! `rangefit: FIELD: PROBLEM` on standard error and exits with status 2. [`run`] holds all
//! the logic and returns the exit status and both streams, so tests call it directly.

use crate::design::design;
use crate::netlist::{netlist, NetlistConfig};
use crate::request::Request;

/// Exit status for a malformed request or bad usage.
pub const EXIT_USAGE: i32 = 2;

/// What a run printed and its exit status.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Outcome {
    pub status: i32,
    pub stdout: String,
    pub stderr: String,
}

pub const USAGE: &str = "usage:
  rangefit design REQUEST.json               design the interface; prints JSON
  rangefit netlist [--testbench] REQUEST.json  SPICE3 netlist of the design
  rangefit schematic REQUEST.json            annotated schematic (SVG)
  rangefit plot {response|transfer|tolerance|noise} REQUEST.json   one plot (SVG)
  rangefit report REQUEST.json               printable report (self-contained HTML)
  rangefit bom REQUEST.json                  part list as CSV (RFC 4180)
  rangefit scaling [--c] REQUEST.json        converter code to sensor quantity (JSON or a C header)
  rangefit link REQUEST.json                 share-link fragment (everything after #)
  rangefit open FRAGMENT                     the request a link or fragment carries, as JSON (- reads it)
  rangefit demo [ID]                         print a demo request (lists them without ID)
REQUEST.json may be - for standard input.";

/// Runs the command with `args` (without the program name); `read` loads a path or `-`.
pub fn run(args: &[String], read: &dyn Fn(&str) -> Result<String, String>) -> Outcome {
    let fail =
        |msg: String| Outcome { status: EXIT_USAGE, stdout: String::new(), stderr: format!("rangefit: {msg}\n") };
    let ok = |text: String| Outcome { status: 0, stdout: text, stderr: String::new() };
    let Some(cmd) = args.first() else { return fail(format!("no command given\n{USAGE}")) };
    let rest: Vec<&String> = args[1..].iter().collect();
    let flags: Vec<&str> = rest.iter().filter(|a| a.starts_with("--")).map(|a| a.as_str()).collect();
    let files: Vec<&str> = rest.iter().filter(|a| !a.starts_with("--")).map(|a| a.as_str()).collect();
    match cmd.as_str() {
        "design" | "netlist" | "bom" | "scaling" | "schematic" | "report" | "plot" => {
            // `plot` takes the plot's name before the request file.
            let (which, files): (Option<&str>, Vec<&str>) = if cmd == "plot" {
                match files.split_first() {
                    Some((w, rest)) => (Some(*w), rest.to_vec()),
                    None => {
                        return fail(format!(
                        "plot needs a plot name (response, transfer, tolerance or noise) and a request file\n{USAGE}"
                    ))
                    }
                }
            } else {
                (None, files.clone())
            };
            if let Some(w) = which {
                if !["response", "transfer", "tolerance", "noise"].contains(&w) {
                    return fail(format!("unknown plot {w}; choose response, transfer, tolerance or noise"));
                }
            }
            let allowed: &[&str] = match cmd.as_str() {
                "netlist" => &["--testbench"],
                "scaling" => &["--c"],
                _ => &[],
            };
            if let Some(bad) = flags.iter().find(|f| !allowed.contains(f)) {
                return fail(format!("unknown option {bad} for {cmd}\n{USAGE}"));
            }
            let [path] = files.as_slice() else {
                return fail(format!("{cmd} needs exactly one request file\n{USAGE}"));
            };
            let text = match read(path) {
                Ok(t) => t,
                Err(e) => return fail(format!("cannot read {path}: {e}")),
            };
            let req = match Request::from_json(&text) {
                Ok(r) => r,
                Err(e) => return fail(e.to_string()),
            };
            let d = design(&req);
            if cmd == "design" {
                return ok(serde_json::to_string_pretty(&d).unwrap_or_default() + "\n");
            }
            if cmd == "scaling" {
                if let Some(sc) = &d.scaling {
                    return ok(if flags.contains(&"--c") {
                        crate::scaling::c_header(&d.request, sc)
                    } else {
                        serde_json::to_string_pretty(sc).unwrap_or_default() + "\n"
                    });
                }
            }
            if cmd == "report" {
                return ok(crate::report::report(&d));
            }
            if let Some(w) = which {
                use crate::draw::plot;
                let cfg = plot::PlotConfig::default();
                let p = match w {
                    "response" => plot::response(&d, &cfg),
                    "transfer" => plot::transfer(&d, &cfg),
                    "tolerance" => plot::tolerance(&d, &cfg),
                    _ => plot::noise(&d, &cfg),
                };
                if let Some(p) = p {
                    return ok(p.svg);
                }
            }
            if cmd == "schematic" {
                if let Some(s) =
                    crate::draw::schematic::of_design(&d, &crate::draw::schematic::SchematicConfig::default())
                {
                    return ok(s.svg);
                }
            }
            if cmd == "bom" && d.circuit.is_some() {
                return ok(crate::bom::to_csv(&crate::bom::bom(&d)));
            }
            match &d.circuit {
                Some(c) => ok(netlist(&req, c, NetlistConfig { testbench: flags.contains(&"--testbench") })),
                None => {
                    let why: Vec<String> = d
                        .checks
                        .iter()
                        .filter(|c| c.severity == crate::diag::Severity::Error)
                        .map(|c| c.message.clone())
                        .collect();
                    Outcome {
                        status: 1,
                        stdout: String::new(),
                        stderr: format!("rangefit: no circuit for this request: {}\n", why.join(" ")),
                    }
                }
            }
        }
        "link" => {
            let [path] = files.as_slice() else { return fail(format!("link needs exactly one request file\n{USAGE}")) };
            let text = match read(path) {
                Ok(t) => t,
                Err(e) => return fail(format!("cannot read {path}: {e}")),
            };
            match Request::from_json(&text) {
                Ok(r) => ok(crate::share::encode(&r) + "\n"),
                Err(e) => fail(e.to_string()),
            }
        }
        "open" => {
            let [fragment] = files.as_slice() else {
                return fail(format!("open needs exactly one link or fragment\n{USAGE}"));
            };
            // `-`: the fragment on standard input (one beyond the shell's argument limit).
            let text = if *fragment == "-" {
                match read("-") {
                    Ok(t) => t,
                    Err(e) => return fail(format!("cannot read standard input: {e}")),
                }
            } else {
                fragment.to_string()
            };
            match crate::share::decode(&text) {
                Ok(r) => ok(r.to_json() + "\n"),
                Err(e) => fail(e.to_string()),
            }
        }
        "demo" => match files.as_slice() {
            [] => ok(crate::demos::ALL.iter().map(|d| format!("{}\t{}\n", d.id, d.title)).collect()),
            [id] => match crate::demos::find(id) {
                Some(d) => ok(d.json.to_string()),
                None => fail(format!("no demo named {id}; run `rangefit demo` for the list")),
            },
            _ => fail(format!("demo takes at most one name\n{USAGE}")),
        },
        "help" | "--help" | "-h" => ok(format!("{USAGE}\n")),
        other => fail(format!("unknown command {other}\n{USAGE}")),
    }
}
