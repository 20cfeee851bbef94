//! The printable report: one self-contained HTML document (inline SVG and CSS, no script,
//! no external request) holding everything an engineer hands to a technician.
//!
//! Every section is derived from the [`Design`] — the same circuit model, analyses and
//! exports the command line and the app use: request summary, verdicts, schematic, checks,
//! predicted mapping and analysis figures, plots, part list, the design equations with their
//! numbers, scaling for the firmware, assumptions, and the safety cautions. All text from the
//! request (name, notes) is escaped. Print CSS lays it out on A4 or Letter pages.

use crate::bom::{bom, BomRow};
use crate::design::Design;
use crate::diag::Severity;
use crate::draw::schematic::{self, SchematicConfig};
use crate::draw::svg::escape;
use crate::figures::Block;
use crate::request::Coupling;
use crate::units::{format, format_percent, Quantity};

/// Options of the report.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportConfig {
    /// Include the four analysis plots.
    pub plots: bool,
}

impl Default for ReportConfig {
    fn default() -> Self {
        ReportConfig { plots: true }
    }
}

/// The report for `d` as an HTML document.
pub fn report(d: &Design) -> String {
    report_with(d, &ReportConfig::default())
}

/// The report with explicit options.
pub fn report_with(d: &Design, cfg: &ReportConfig) -> String {
    let mut h = String::with_capacity(64 * 1024);
    let title = escape(&d.name);
    h.push_str(&format!(
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" \
            content=\"width=device-width, initial-scale=1\"><title>{title} — Rangefit design \
            report</title><style>{CSS}</style></head><body>\n"
    ));
    h.push_str(&format!(
        "<header><h1>{title}</h1><p class=\"sub\">Interface design report · rangefit-engine {} · \
        request version {}</p>",
        env!("CARGO_PKG_VERSION"),
        d.request.version
    ));
    if !d.request.notes.is_empty() {
        h.push_str(&format!("<p class=\"notes\">{}</p>", escape(&d.request.notes)));
    }
    h.push_str("</header>\n");
    summary(&mut h, d);
    verdicts(&mut h, d);
    if let Some(s) = schematic::of_design(d, &SchematicConfig { title: false, ..SchematicConfig::default() }) {
        section(&mut h, "Schematic", &format!("<figure class=\"schematic\">{}</figure>", s.svg));
    }
    checks(&mut h, d);
    mapping(&mut h, d);
    figures(&mut h, d);
    if cfg.plots {
        plots(&mut h, d);
    }
    parts(&mut h, &bom(d));
    equations(&mut h, d);
    scaling(&mut h, d);
    assumptions(&mut h, d);
    let cautions: String = d.cautions.iter().map(|c| format!("<li>{}</li>", escape(c))).collect();
    section(&mut h, "Safety", &format!("<ul class=\"cautions\">{cautions}</ul>"));
    h.push_str("</body></html>\n");
    h
}

const CSS: &str = "
body{font:14px/1.45 system-ui,-apple-system,'Segoe UI',sans-serif;color:#1b1f24;\
max-width:1100px;margin:24px auto;padding:0 16px}
h1{font-size:24px;margin:0}h3{font-size:14px;margin:14px 0 4px}\
h2{font-size:17px;border-bottom:2px solid #1f6f5c;padding-bottom:3px;margin:26px 0 10px}
.sub{color:#555;margin:2px 0}.notes{font-style:italic}
table{border-collapse:collapse;width:100%;font-size:13px}\
th,td{border-bottom:1px solid #ddd;padding:4px 6px;text-align:left;vertical-align:top}
th{background:#f2f4f3}td.num{text-align:right;font-variant-numeric:tabular-nums}
.sev{font-weight:600;text-transform:uppercase;font-size:11px;padding:1px 5px;border-radius:3px}
.sev-error{background:#b3261e;color:#fff}.sev-warning{background:#f3c969;color:#3b2a00}\
.sev-ok{background:#d6eee2;color:#0d4a36}
figure{margin:8px 0}figure svg{max-width:100%;height:auto}
.grid{display:grid;grid-template-columns:1fr 1fr;gap:8px}
.kv td:first-child{width:38%;color:#444}
code{font-family:ui-monospace,monospace}
@media print{body{margin:0;max-width:none;font-size:11px}h2{break-after:avoid}\
figure,table,tr{break-inside:avoid}.grid{grid-template-columns:1fr 1fr}@page{size:A4;margin:14mm}}
@media (max-width:800px){.grid{grid-template-columns:1fr}}
";

fn section(h: &mut String, title: &str, body: &str) {
    h.push_str(&format!("<section><h2>{}</h2>{body}</section>\n", escape(title)));
}

fn v(x: f64) -> String {
    format(x, Quantity::Voltage)
}

fn hz(x: f64) -> String {
    format(x, Quantity::Frequency)
}

fn kv(rows: &[(&str, String)]) -> String {
    let body: String =
        rows.iter().map(|(k, val)| format!("<tr><td>{}</td><td>{}</td></tr>", escape(k), escape(val))).collect();
    format!("<table class=\"kv\">{body}</table>")
}

fn summary(h: &mut String, d: &Design) {
    let r = &d.request;
    let s = &r.source;
    let t = &r.destination;
    let coupling = match s.coupling {
        Coupling::Dc => "DC",
        Coupling::Ac => "AC",
    };
    let q = s.kind.quantity();
    let mut rows = vec![("Sensor output", format!("{} … {}", format(s.min, q), format(s.max, q)))];
    match &s.current_loop {
        Some(l) => {
            rows.push(("Loop burden allowed", v(l.burden_max)));
            rows.push((
                "Fault bands (NAMUR NE 43)",
                format!(
                    "below {}, above {}",
                    format(l.fault_low, Quantity::Current),
                    format(l.fault_high, Quantity::Current)
                ),
            ));
        }
        None => {
            rows.push(("Coupling", coupling.to_string()));
            rows.push(("Sensor impedance", format(s.impedance, Quantity::Resistance)));
            if let Some(c) = s.capacitance {
                rows.push(("Sensor capacitance", format(c, Quantity::Capacitance)));
            }
            if let Some(i) = s.dark_current {
                rows.push(("Dark current", format(i, Quantity::Current)));
            }
            if let (Some(a), Some(b)) = (s.common_mode_min, s.common_mode_max) {
                rows.push(("Common-mode range", format!("{} … {}", v(a), v(b))));
            }
        }
    }
    rows.push(("Band", format!("{} … {}", hz(s.band_low), hz(s.band_high))));
    let sensor = kv(&rows);
    let conv = kv(&[
        ("Converter input", format!("{} … {}, {} bits", v(t.min), v(t.max), t.bits)),
        ("Sample rate", hz(t.sample_rate)),
        ("Input impedance", format(t.impedance, Quantity::Resistance)),
        ("Headroom", format!("{:.1} % of the span at each end", t.headroom * 100.0)),
        ("Supplies", r.supplies.iter().map(|x| v(*x)).collect::<Vec<_>>().join(", ")),
        (
            "Parts",
            format!(
                "resistors {} ±{}, capacitors {} ±{}",
                r.parts.resistor_series.name(),
                format_percent(r.parts.resistor_tolerance),
                r.parts.capacitor_series.name(),
                format_percent(r.parts.capacitor_tolerance)
            ),
        ),
    ]);
    section(h, "Request", &format!("<div class=\"grid\"><div>{sensor}</div><div>{conv}</div></div>"));
}

fn verdicts(h: &mut String, d: &Design) {
    let count = |s: Severity| d.checks.iter().filter(|c| c.severity == s).count();
    let (e, w) = (count(Severity::Error), count(Severity::Warning));
    let text = if e > 0 {
        format!("{e} error(s) and {w} warning(s): do not build before resolving the errors below.")
    } else if w > 0 {
        format!("No errors; {w} warning(s) to review below.")
    } else {
        "Every check passed.".to_string()
    };
    let topology =
        if d.topology.is_empty() { String::new() } else { format!("<p>Topology: {}.</p>", escape(&d.topology)) };
    section(h, "Verdict", &format!("<p><strong>{}</strong></p>{topology}", escape(&text)));
}

fn checks(h: &mut String, d: &Design) {
    let rows: String = d
        .checks
        .iter()
        .map(|c| {
            format!(
                "<tr><td><span class=\"sev sev-{s}\">{s}</span></td><td><code>{}</code></td><td>{}</td></tr>",
                escape(&c.id),
                escape(&c.message),
                s = c.severity
            )
        })
        .collect();
    section(
        h,
        "Checks",
        &format!("<table><tr><th>Verdict</th><th>Check</th><th>Finding and what to change</th></tr>{rows}</table>"),
    );
}

/// The figures of the sensor's front end, and of the filter and the converter drive, as
/// the design holds them ([`crate::figures`]): one table of rows per block, and its table.
fn figures(h: &mut String, d: &Design) {
    let f = &d.figures;
    if !f.front.is_empty() {
        section(h, &f.front_section, &blocks(&f.front));
    }
    if !f.chain.is_empty() {
        section(h, "Anti-alias filter and converter drive", &blocks(&f.chain));
    }
}

fn blocks(list: &[Block]) -> String {
    let mut body = String::new();
    for b in list {
        body.push_str(&format!("<h3>{}</h3>", escape(&b.title)));
        let rows: Vec<(&str, String)> = b.rows.iter().map(|r| (r.label.as_str(), r.text.clone())).collect();
        if !rows.is_empty() {
            body.push_str(&kv(&rows));
        }
        if let Some(t) = &b.table {
            let head: String = t.header.iter().map(|c| format!("<th>{}</th>", escape(c))).collect();
            let cell = |k: usize, c: &String| {
                let class = if t.numeric.get(k).copied().unwrap_or(false) { " class=\"num\"" } else { "" };
                format!("<td{class}>{}</td>", escape(c))
            };
            let rows: String = t
                .rows
                .iter()
                .map(|r| format!("<tr>{}</tr>", r.iter().enumerate().map(|(k, c)| cell(k, c)).collect::<String>()))
                .collect();
            body.push_str(&format!("<table><tr>{head}</tr>{rows}</table>"));
        }
    }
    body
}

fn mapping(h: &mut String, d: &Design) {
    let Some(p) = d.predicted else { return };
    let mut rows = vec![
        ("Output at sensor minimum", v(p.output_at_min)),
        ("Output at sensor maximum", v(p.output_at_max)),
        ("Gain", format!("{:.5} V/V", p.gain)),
        (if d.request.source.coupling == Coupling::Ac { "Output DC level" } else { "Offset (intercept)" }, v(p.offset)),
        (
            "−3 dB points",
            format!(
                "{} … {}",
                p.band_low.map(hz).unwrap_or_else(|| "DC".to_string()),
                p.band_high.map(hz).unwrap_or_else(|| "—".to_string())
            ),
        ),
    ];
    if let Some(a) = &d.analysis {
        let n = &a.noise;
        let mc = &a.tolerance.monte_carlo;
        let wc = &a.tolerance.worst_case;
        rows.push((
            "Added noise",
            format!(
                "{} rms over {} … {} ({}) = {:.2} LSB; SNR {:.1} dB, {:.2} effective bits",
                v(n.output_rms),
                hz(n.band[0]),
                hz(n.band[1]),
                crate::analysis::noise::band_note(&d.request),
                n.lsb_ratio,
                n.snr_db,
                n.enob
            ),
        ));
        rows.push((
            "Worst case, output at sensor min",
            format!("{} … {}", v(wc.output_at_min[0]), v(wc.output_at_min[1])),
        ));
        rows.push((
            "Worst case, output at sensor max",
            format!("{} … {}", v(wc.output_at_max[0]), v(wc.output_at_max[1])),
        ));
        rows.push((
            "Monte Carlo yield",
            if mc.runs == 0 {
                "not run (analysis.monte_carlo_runs = 0)".to_string()
            } else {
                format!(
                    "{:.2} % of {} builds inside the converter range ({:.2} % keep the full headroom)",
                    mc.yield_ * 100.0,
                    mc.runs,
                    mc.yield_headroom * 100.0
                )
            },
        ));
        rows.push(("Impedance seen by the sensor", format(a.loading.input_impedance, Quantity::Resistance)));
        rows.push(("In-band ripple", format!("{:.3} dB", a.ac.ripple_db)));
    }
    section(h, "Predicted behaviour", &kv(&rows));
}

fn plots(h: &mut String, d: &Design) {
    let cfg = crate::draw::plot::PlotConfig::default();
    let figures: Vec<String> = [
        crate::draw::plot::response,
        crate::draw::plot::transfer,
        crate::draw::plot::tolerance,
        crate::draw::plot::noise,
    ]
    .iter()
    .filter_map(|f| f(d, &cfg).map(|p| p.svg))
    .collect();
    if figures.is_empty() {
        return;
    }
    let body: String = figures.iter().map(|svg| format!("<figure>{svg}</figure>")).collect();
    section(h, "Plots", &body);
}

fn parts(h: &mut String, rows: &[BomRow]) {
    if rows.is_empty() {
        return;
    }
    let body: String = rows
        .iter()
        .map(|r| {
            format!(
                "<tr><td>{}</td><td class=\"num\">{}</td><td>{}</td><td>{}</td><td>{} \
                    {}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
                escape(&r.designators.join(", ")),
                r.quantity,
                escape(&r.kind),
                escape(&r.value),
                escape(&r.tolerance),
                escape(&r.tolerance_code),
                escape(&r.rating),
                escape(&r.construction),
                escape(&r.notes)
            )
        })
        .collect();
    section(
        h,
        "Part list",
        &format!(
            "<table><tr><th>Designators</th><th>Qty</th><th>Kind</th><th>Value</th><th>Tolerance</th><th>Rating</th>\
             <th>Construction</th><th>Notes</th></tr>{body}</table>"
        ),
    );
}

fn equations(h: &mut String, d: &Design) {
    if d.equations.is_empty() {
        return;
    }
    let items: String = d.equations.iter().map(|e| format!("<li>{}</li>", escape(e))).collect();
    section(h, "Design equations", &format!("<ul>{items}</ul>"));
}

fn scaling(h: &mut String, d: &Design) {
    let Some(sc) = &d.scaling else { return };
    let mut rows = vec![
        ("Converter", format!("{} bits, LSB {}", sc.bits, v(sc.lsb))),
        ("Sensor output from code", format!("value = (code − {:.4}) × {:.6e} V", sc.sensor.c0, sc.sensor.k)),
        ("Codes at the sensor's extremes", format!("{} … {}", sc.sensor.code_at_min, sc.sensor.code_at_max)),
        ("Resolution", format!("{} per code", v(sc.sensor.resolution))),
    ];
    if let Some(m) = &sc.measurand {
        rows.push(("Measurand from code", format!("{} = (code − {:.4}) × {:.6e} {}", m.name, m.c0, m.k, m.unit)));
    }
    rows.push((
        "Before calibration",
        format!("up to {:.1} codes of gain and offset error (worst case)", sc.uncalibrated_error_codes),
    ));
    rows.push((
        "After a two-point calibration",
        format!("{:.3} codes rms of noise remain, plus drift", sc.calibrated_noise_codes),
    ));
    let notes: String = sc.notes.iter().map(|n| format!("<li>{}</li>", escape(n))).collect();
    section(h, "Scaling for the firmware", &format!("{}<ul>{notes}</ul>", kv(&rows)));
}

fn assumptions(h: &mut String, d: &Design) {
    let a = &d.amplifier;
    let mut rows = vec![
        ("Amplifier assumed", a.class.clone()),
        ("Figures taken from that class", if a.assumed.is_empty() { "none".to_string() } else { a.assumed.join(", ") }),
        (
            "Amplifier model",
            format!(
                "GBW {}, open-loop gain {:.0}, output within {} / {} of the rails, offset {}, bias {}",
                hz(a.gbw),
                a.open_loop_gain,
                v(a.swing_low),
                v(a.swing_high),
                v(a.offset),
                format(a.bias_current, Quantity::Current)
            ),
        ),
        ("Temperature for noise", format!("{} K", d.request.analysis.temperature)),
        ("Monte Carlo", format!("{} builds, seed {}", d.request.analysis.monte_carlo_runs, d.request.analysis.seed)),
    ];
    if let Some(r) = &d.requirements {
        rows.push(("Amplifier requirements", r.summary.join("; ")));
    }
    let mut body = kv(&rows);
    if let Some(an) = &d.analysis {
        let items: String =
            an.tolerance.monte_carlo.distributions.iter().map(|x| format!("<li>{}</li>", escape(x))).collect();
        body.push_str(&format!("<p>Spreads drawn:</p><ul>{items}</ul>"));
    }
    section(h, "Assumptions", &body);
}
