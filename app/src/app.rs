//! The page: a demo picker and request editor on the left, the engine's design on the
//! right, the safety note at the bottom.

use leptos::prelude::*;
use rangefit_engine::demos;
use rangefit_engine::circuit::Stage;
use rangefit_engine::design::{Design, PartRow, Predicted};
use rangefit_engine::diag::{Check, Severity};
use rangefit_engine::units::{format, Quantity};

use crate::workbench::Workbench;

#[component]
pub fn App() -> impl IntoView {
    let start = demos::ALL.first().map(|demo| demo.json).unwrap_or("");
    let bench = RwSignal::new(Workbench::new(start));

    let text = Memo::new(move |_| bench.with(|b| b.text().to_owned()));
    let problem = Memo::new(move |_| bench.with(|b| b.problem().map(str::to_owned)));
    let revision = Memo::new(move |_| bench.with(Workbench::revision));
    let stale = Memo::new(move |_| bench.with(Workbench::is_stale));
    let edit = move |new_text: &str| bench.update(|b| b.edit(new_text));

    let picker = demos::ALL
        .iter()
        .map(|demo| {
            let json = demo.json;
            view! {
                <button
                    type="button"
                    class="demo"
                    title=format!("Load the “{}” example", demo.title)
                    aria-pressed=move || if text.with(|t| t == json) { "true" } else { "false" }
                    on:click=move |_| edit(json)
                >
                    {demo.title}
                </button>
            }
        })
        .collect_view();

    view! {
        <header class="masthead">
            <div class="masthead-inner">
                <h1>"Rangefit"</h1>
                <p class="tagline">
                    "Scale, shift and filter a sensor signal to fit an ADC input — parts, predicted mapping and checks."
                </p>
            </div>
        </header>
        <main class="layout">
            <section class="panel request-panel" aria-labelledby="request-title">
                <h2 id="request-title">"Request"</h2>
                <p class="hint">"Start from an example, then edit the request; the design follows every change."</p>
                <div class="demo-picker" data-testid="demo-picker" role="group" aria-label="Examples">
                    {picker}
                </div>
                <label class="editor-label" for="request-editor">"Request (JSON)"</label>
                <textarea
                    id="request-editor"
                    class="editor"
                    data-testid="request-editor"
                    class:invalid=move || problem.with(Option::is_some)
                    spellcheck="false"
                    autocomplete="off"
                    wrap="off"
                    prop:value=move || text.get()
                    on:input=move |ev| edit(&event_target_value(&ev))
                ></textarea>
                {move || {
                    problem
                        .get()
                        .map(|message| {
                            view! {
                                <p class="request-error" data-testid="request-error" role="alert">
                                    {message}
                                </p>
                            }
                        })
                }}
            </section>
            <section class="panel design-panel" class:stale=move || stale.get() aria-live="polite">
                {move || {
                    stale
                        .get()
                        .then(|| {
                            view! {
                                <p class="stale-note">
                                    "Showing the last valid design; correct the request to update it."
                                </p>
                            }
                        })
                }}
                {move || {
                    // Read, not just track: a memo that is never read never runs, so it
                    // would never learn that the workbench changed.
                    let _ = revision.get();
                    bench
                        .with_untracked(|b| b.design().map(design_view))
                        .unwrap_or_else(|| {
                            view! {
                                <p class="empty">"No design yet: the request above has a problem."</p>
                            }
                                .into_any()
                        })
                }}
            </section>
        </main>
        <footer class="safety">
            <p>
                <strong>"Safety: "</strong>
                "sensors tied to mains or other high voltages need proper isolation. Never exceed the converter's absolute maximum input ratings. "
                "A design for safety- or medically-relevant use must be checked by a qualified person before it is built. "
                "Follow local codes and licensed practice."
            </p>
        </footer>
    }
}

/// The whole design: heading with a severity tally, checks, mapping, parts, stages.
fn design_view(design: &Design) -> AnyView {
    let errors = count(&design.checks, Severity::Error);
    let warnings = count(&design.checks, Severity::Warning);
    view! {
        <div class="design-body" data-testid="design">
            <header class="design-head">
                <div>
                    <h2 data-testid="design-name">{design.name.clone()}</h2>
                    <p class="topology">{design.topology.clone()}</p>
                </div>
                <a class="tally" href="#checks" title="Go to the checks">
                    <span class="badge sev-error" class:hidden=errors == 0>{plural(errors, "error")}</span>
                    <span class="badge sev-warning" class:hidden=warnings == 0>{plural(warnings, "warning")}</span>
                    <span class="badge sev-ok" class:hidden=errors + warnings != 0 || design.checks.is_empty()>"all ok"</span>
                </a>
            </header>
            <section class="block">
                <h3>"Predicted mapping"</h3>
                {mapping_view(design.predicted.as_ref())}
            </section>
            <section class="block">
                <h3>"Parts"</h3>
                {parts_view(&design.parts)}
            </section>
            <section class="block" id="checks">
                <h3>"Checks"</h3>
                {checks_view(&design.checks)}
            </section>
            <section class="block">
                <h3>"Stages"</h3>
                {stages_view(&design.stages)}
            </section>
        </div>
    }
    .into_any()
}

fn count(checks: &[Check], severity: Severity) -> usize {
    checks.iter().filter(|c| c.severity == severity).count()
}

fn plural(n: usize, word: &str) -> String {
    if n == 1 { format!("1 {word}") } else { format!("{n} {word}s") }
}

fn checks_view(checks: &[Check]) -> impl IntoView {
    let items = checks
        .iter()
        .map(|check| {
            let severity = check.severity.to_string();
            view! {
                <li class=format!("check sev-{}", check.severity) data-check=check.id.clone()>
                    <span class="badge">{severity}</span>
                    <span class="check-text">{check.message.clone()}</span>
                </li>
            }
        })
        .collect_view();
    view! { <ul class="checks" data-testid="checks">{items}</ul> }
}

fn mapping_view(predicted: Option<&Predicted>) -> AnyView {
    let Some(p) = predicted else {
        return view! {
            <p class="empty" data-testid="mapping">"No mapping: the design could not be completed; the checks say why."</p>
        }
        .into_any();
    };
    let band = match (p.band_low, p.band_high) {
        (Some(low), Some(high)) => format!("{} – {}", format(low, Quantity::Frequency), format(high, Quantity::Frequency)),
        (None, Some(high)) => format!("DC – {}", format(high, Quantity::Frequency)),
        (Some(low), None) => format!("from {}", format(low, Quantity::Frequency)),
        (None, None) => "not limited".to_owned(),
    };
    let cells = [
        ("At sensor min", format(p.output_at_min, Quantity::Voltage), ""),
        ("At sensor max", format(p.output_at_max, Quantity::Voltage), ""),
        ("Gain", format!("{} V/V", format(p.gain, Quantity::Ratio)), ""),
        ("Offset", format(p.offset, Quantity::Voltage), ""),
        ("Passband (−3 dB)", band, "wide"),
    ];
    let cells = cells
        .into_iter()
        .map(|(label, value, class)| view! { <div class=class><dt>{label}</dt><dd>{value}</dd></div> })
        .collect_view();
    view! { <dl class="mapping" data-testid="mapping">{cells}</dl> }.into_any()
}

fn parts_view(parts: &[PartRow]) -> impl IntoView {
    let rows = parts
        .iter()
        .map(|part| {
            let nodes = part.nodes.iter().map(|n| view! { <span class="node">{n.clone()}</span> }).collect_view();
            view! {
                <tr>
                    <td class="ref" title=part.kind.clone()>{part.reference.clone()}</td>
                    <td class="value">{part.display.clone()}</td>
                    <td class="num">{tolerance_text(part.tolerance)}</td>
                    <td class="purpose">{part.purpose.clone()}</td>
                    <td class="nodes"><div class="node-list">{nodes}</div></td>
                    <td class="stage">{part.stage.clone()}</td>
                </tr>
            }
        })
        .collect_view();
    view! {
        <table class="parts" data-testid="parts">
            <thead>
                <tr>
                    <th scope="col">"Ref"</th>
                    <th scope="col">"Value"</th>
                    <th scope="col">"Tol."</th>
                    <th scope="col">"Purpose"</th>
                    <th scope="col">"Connects"</th>
                    <th scope="col">"Stage"</th>
                </tr>
            </thead>
            <tbody>{rows}</tbody>
        </table>
    }
}

fn tolerance_text(tolerance: Option<f64>) -> String {
    match tolerance {
        Some(t) => format!("± {} %", format(t * 100.0, Quantity::Ratio)),
        None => "—".to_owned(),
    }
}

fn stages_view(stages: &[Stage]) -> impl IntoView {
    let items = stages
        .iter()
        .map(|stage| {
            view! {
                <li>
                    <span class="stage-name">{stage.role.name()}</span>
                    " — "
                    <span class="stage-detail">{stage.description.clone()}</span>
                    <span class="stage-parts">{stage.parts.join(" ")}</span>
                </li>
            }
        })
        .collect_view();
    view! { <ol class="stages" data-testid="stages">{items}</ol> }
}
