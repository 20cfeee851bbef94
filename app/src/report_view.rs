//! The read-only report of the design step: the head (name, topology, notes, the checks'
//! tally) and the body (schematic, checks, predicted mapping with the front end's figures,
//! part list, anti-alias filter and converter pin, a place for the plots, what each part
//! does, assumptions, safety cautions). Built with [`crate::dom`] (text nodes only; the
//! engine's SVG, which the engine escapes, is inserted as markup); every value is formatted
//! by the engine's `units::format`.

use rangefit_engine::diag::Severity;
use rangefit_engine::request::{Coupling, ResponseKind, AMPLIFIER_FIGURES};
use rangefit_engine::units::{format, Quantity};

use crate::dom::{el, el_c, row, table, Node};
use crate::field_table;
use crate::outputs::Shown;
use crate::state::{plural, tally};

/// The head of the report: name, topology, notes and the checks' tally.
pub fn head_node(s: &Shown) -> Node {
    let d = &s.design;
    let (e, w) = tally(&d.checks);
    let mut tally_node = el_c("a", "tally").attr("href", "#checks");
    if e > 0 {
        tally_node = tally_node.child(badge("sev-error", &plural(e, "error")));
    }
    if w > 0 {
        tally_node = tally_node.child(badge("sev-warning", &plural(w, "warning")));
    }
    if e + w == 0 {
        tally_node = tally_node.child(badge("sev-ok", "checks pass"));
    }
    let mut left = el("div").child(el("h2").attr("data-testid", "design-name").text(&d.name)).child(
        el_c("p", "topology").text(if d.topology.is_empty() { "No circuit could be built" } else { &d.topology }),
    );
    if !d.request.notes.trim().is_empty() {
        left = left.child(el_c("p", "design-notes").text(&d.request.notes));
    }
    el_c("header", "design-head").child(left).child(tally_node)
}

/// The body of the report, the plots area left to be filled in once they are drawn.
pub fn body_node(s: &Shown) -> Node {
    let d = &s.design;
    let schematic = match &s.schematic {
        Some(svg) => el_c("div", "schematic")
            .attr("data-testid", "schematic")
            .attr("role", "img")
            .attr("aria-label", &format!("Schematic of {}", d.name))
            .svg(svg),
        None => el_c("p", "empty")
            .attr("data-testid", "schematic")
            .text("No schematic: the design has no circuit; the checks say why."),
    };
    let plots = el_c("div", "plots").attr("id", "plots").child(el_c("p", "empty").text("Drawing the plots…"));
    let cautions = el_c("section", "block cautions")
        .attr("data-testid", "cautions")
        .attr("aria-labelledby", "h-cautions")
        .child(el("h3").attr("id", "h-cautions").text("Safety"))
        .child(el("ul").children(d.cautions.iter().map(|c| el("li").text(c))));
    el("div")
        .child(block("schematic", "Schematic").child(schematic))
        .child(
            el_c("div", "two-col")
                .child(block("checks", "Checks").attr("id", "checks").child(checks_node(s)))
                .child(block("mapping", "Predicted mapping").child(mapping_node(s))),
        )
        .child(block("parts", "Part list").child(parts_node(s)))
        .child(block("filter", "Anti-alias filter and converter pin").child(filter_node(s)))
        .child(block("plots", "Analyses").child(plots))
        .child(block("roles", "What each part does").child(roles_node(s)))
        .child(block("assumptions", "Assumptions").child(assumptions_node(s)))
        .child(cautions)
}

fn badge(class: &str, text: &str) -> Node {
    el_c("span", &format!("badge {class}")).text(text)
}

fn block(id: &str, title: &str) -> Node {
    el_c("section", "block")
        .attr("aria-labelledby", &format!("h-{id}"))
        .child(el("h3").attr("id", &format!("h-{id}")).text(title))
}

fn checks_node(s: &Shown) -> Node {
    el_c("ul", "checks").attr("data-testid", "checks").children(s.design.checks.iter().map(|c| {
        let label = match c.severity {
            Severity::Error => "Error",
            Severity::Warning => "Warning",
            Severity::Ok => "OK",
        };
        // While the spread is computed, the engine's "switched off" sentence would mislead.
        if s.spread_pending && c.id == "yield" {
            let runs = s.design.request.analysis.monte_carlo_runs;
            return el_c("li", "check sev-ok pending")
                .attr("data-check", &c.id)
                .child(el_c("span", "badge").text("…"))
                .child(
                    el_c("span", "check-text").text(&format!("Simulating {runs} builds within the part tolerances…")),
                );
        }
        el_c("li", &format!("check sev-{}", c.severity))
            .attr("data-check", &c.id)
            .child(el_c("span", "badge").text(label))
            .child(el_c("span", "check-text").text(&c.message))
    }))
}

fn volts(x: f64) -> String {
    format(x, Quantity::Voltage)
}

fn mapping_node(s: &Shown) -> Node {
    let Some(p) = s.design.predicted else {
        return el_c("p", "empty")
            .attr("data-testid", "mapping")
            .text("No mapping: the design could not be completed; the checks say why.");
    };
    let r = &s.design.request;
    let hz = |f: f64| format(f, Quantity::Frequency);
    let band = match (p.band_low, p.band_high) {
        (Some(low), Some(high)) => format!("{} … {}", hz(low), hz(high)),
        (None, Some(high)) => format!("DC … {}", hz(high)),
        (Some(low), None) => format!("from {}", hz(low)),
        (None, None) => "not limited".to_owned(),
    };
    let sq = r.source.kind.quantity();
    let rows = [
        ("Sensor at its lowest", format(r.source.min, sq), volts(p.output_at_min)),
        ("Sensor at its highest", format(r.source.max, sq), volts(p.output_at_max)),
    ]
    .into_iter()
    .map(|(what, from, to)| {
        el("tr")
            .child(el("th").attr("scope", "row").text(what))
            .child(el_c("td", "num").text(&from))
            .child(el_c("td", "num").text(&to))
    });
    let offset_label = if r.source.coupling == Coupling::Ac { "Output DC level" } else { "Offset" };
    let facts = [
        (
            "Gain",
            if sq == Quantity::Current {
                format!("{} V/A", format(p.gain, Quantity::Ratio))
            } else {
                format!("{} V/V", format(p.gain, Quantity::Ratio))
            },
        ),
        (offset_label, volts(p.offset)),
        ("Converter range", format!("{} … {}", volts(r.destination.min), volts(r.destination.max))),
        ("Passband (−3 dB)", band),
    ];
    let mut out = el_c("div", "mapping-col")
        .attr("data-testid", "mapping")
        .child(table("map-table", "", &["", "Sensor", "Converter input"], rows))
        .child(
            el_c("dl", "mapping")
                .children(facts.iter().map(|(k, v)| el("div").child(el("dt").text(k)).child(el("dd").text(v)))),
        );
    for b in &s.design.figures.front {
        out = out.child(block_node(b));
    }
    out
}

fn filter_node(s: &Shown) -> Node {
    let d = &s.design;
    let mut out = el("div").attr("data-testid", "filter");
    if d.filter.is_none() {
        let why = if d.request.filter.response == ResponseKind::None {
            "No anti-alias filter was asked for (response: none); the checks say what rejection that gives up."
        } else {
            "No filter was designed; the checks say why."
        };
        out = out.child(el_c("p", "empty").text(why));
    }
    for b in &d.figures.chain {
        out = out.child(block_node(b));
    }
    out
}

fn parts_node(s: &Shown) -> Node {
    if s.bom.is_empty() {
        return el_c("p", "empty").attr("data-testid", "parts").text("No parts: the design has no circuit.");
    }
    let rows = s.bom.iter().map(|r| {
        let refs = r.designators.join(" ");
        let qty = r.quantity.to_string();
        row(&[
            ("ref", &refs),
            ("num", &qty),
            ("", &r.kind),
            ("value", &r.value),
            ("num", &r.tolerance),
            ("", &r.rating),
            ("", &r.construction),
            ("notes", &r.notes),
        ])
    });
    table(
        "parts",
        "parts",
        &["Designators", "Qty", "Part", "Value", "Tolerance", "Rating", "Construction", "Notes"],
        rows,
    )
}

fn roles_node(s: &Shown) -> Node {
    let rows = s.design.parts.iter().map(|p| {
        let nodes = p.nodes.join(" · ");
        row(&[("ref", &p.reference), ("value", &p.display), ("", &p.purpose), ("nodes", &nodes)])
    });
    table("roles", "", &["Part", "Value", "Purpose", "Connects"], rows)
}

fn assumptions_node(s: &Shown) -> Node {
    let d = &s.design;
    let amp = serde_json::to_value(&d.amplifier).unwrap_or_default();
    let figure = |name: &str| {
        let f = field_table::field(&format!("amplifier.{name}"));
        let label = f.map(|f| f.label).unwrap_or("");
        let q = f.and_then(|f| f.quantity()).unwrap_or(Quantity::Ratio);
        let value = amp.get(name).and_then(|v| v.as_f64()).map(|x| format(x, q)).unwrap_or_default();
        el("li").child(el("span").text(label)).text(" ").child(el_c("strong", "num").text(&value))
    };
    let assumed = &d.amplifier.assumed;
    let given: Vec<&str> = AMPLIFIER_FIGURES.iter().copied().filter(|n| !assumed.contains(n)).collect();
    let (runs, seed) = d
        .analysis
        .as_ref()
        .filter(|_| !s.spread_pending)
        .map(|a| (a.tolerance.monte_carlo.runs, a.tolerance.monte_carlo.seed))
        .unwrap_or((d.request.analysis.monte_carlo_runs, d.request.analysis.seed));
    let rails = if d.rails.is_dual() {
        format!("{} and {}", volts(d.rails.pos), volts(d.rails.neg))
    } else {
        format!("{} and ground", volts(d.rails.pos))
    };
    let facts = [
        ("Amplifier class", d.amplifier.class.clone(), "amp-class"),
        ("Amplifier rails", rails, ""),
        ("Temperature", format(d.request.analysis.temperature, Quantity::Temperature), "temperature"),
        (
            "Monte Carlo",
            format!("{runs} builds, seed {seed}{}", if s.spread_pending { " (computing)" } else { "" }),
            "monte-carlo",
        ),
    ];
    let facts = el_c("dl", "facts").children(facts.iter().map(|(k, v, id)| {
        let dd = el("dd").text(v);
        el("div").child(el("dt").text(k)).child(if id.is_empty() { dd } else { dd.attr("data-testid", id) })
    }));
    let column = |title: &str, items: Node| el("div").child(el("h4").text(title)).child(items);
    let mut cols = el_c("div", "amp-cols").child(column(
        if assumed.is_empty() { "No figure was assumed" } else { "Figures assumed from the class" },
        el_c("ul", "figures").children(assumed.iter().map(|n| figure(n))),
    ));
    if !given.is_empty() {
        cols = cols.child(column("Figures you gave", el_c("ul", "figures").children(given.iter().map(|n| figure(n)))));
    }
    let reqs = d.requirements.as_ref().map(|r| r.summary.clone()).unwrap_or_default();
    cols = cols.child(column(
        "What the amplifier must provide",
        el_c("ul", "requirements").children(reqs.iter().map(|r| el("li").text(r))),
    ));
    el_c("div", "assumptions").attr("data-testid", "assumptions").child(facts).child(cols)
}

/// One block of the design's figures (produced by the engine, shown as they are): its
/// title, its rows as a description list and its table.
pub fn block_node(b: &rangefit_engine::figures::Block) -> Node {
    let mut out = el("div").child(el("h4").text(&b.title));
    if !b.rows.is_empty() {
        out =
            out.child(el_c("dl", "mapping").attr("data-testid", &b.id).children(
                b.rows.iter().map(|r| el("div").child(el("dt").text(&r.label)).child(el("dd").text(&r.text))),
            ));
    }
    if let Some(t) = &b.table {
        let heads: Vec<&str> = t.header.iter().map(String::as_str).collect();
        let rows = t.rows.iter().map(|r| {
            let cells: Vec<(&str, &str)> = r
                .iter()
                .enumerate()
                .map(|(k, c)| (if t.numeric.get(k).copied().unwrap_or(false) { "num" } else { "" }, c.as_str()))
                .collect();
            row(&cells)
        });
        let id = format!("{}-table", b.id);
        out = out.child(table(&id, &id, &heads, rows));
    }
    out
}
