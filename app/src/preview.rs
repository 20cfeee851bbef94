//! The live summary beside the form: what is still needed, or the design so far (its
//! mapping, gain, checks and parts), with the way to the design step.

use leptos::prelude::*;
use rangefit_engine::units::{format, Quantity};

use crate::browser;
use crate::field_table;
use crate::fields::Step;
use crate::state::{go, plural, tally, Ctx};

/// The live summary beside the form.
#[component]
pub fn Preview() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    let missing = move || {
        ctx.validation.with(|v| {
            v.missing
                .iter()
                .filter_map(|p| field_table::field(p))
                .map(|f| {
                    let step = f.step;
                    let id = f.input_id();
                    view! {
                        <li><button type="button" class="link"
                            on:click=move |_| { go(ctx, step, false); browser::focus(&id); }>
                            {f.label}<span class="muted">{format!(" — step {}", step.number())}</span>
                        </button></li>
                    }
                })
                .collect_view()
        })
    };
    let body = move || {
        let complete = ctx.validation.with(|v| v.is_complete());
        let errors = ctx.validation.with(|v| v.errors.len());
        ctx.shown.with(|s| match s {
            None => view! {
                <p class="preview-empty">"The design appears as soon as the request is complete."</p>
                <p class="muted small">"Still needed:"</p>
                <ul class="missing-list">{missing}</ul>
            }
            .into_any(),
            Some(s) => {
                let d = &s.design;
                let stale = !complete;
                let (e, w) = tally(&d.checks);
                let mapping = d.predicted.map(|p| {
                    let src = &d.request.source;
                    view! {
                        <dl class="mini-map">
                            <dt>"Sensor"</dt>
                            <dd>
                                {format!(
                                    "{} … {}",
                                    format(src.min, Quantity::Voltage),
                                    format(src.max, Quantity::Voltage)
                                )}
                            </dd>
                            <dt>"Converter sees"</dt>
                            <dd>
                                {format!(
                                    "{} … {}",
                                    format(p.output_at_min, Quantity::Voltage),
                                    format(p.output_at_max, Quantity::Voltage)
                                )}
                            </dd>
                            <dt>"Gain"</dt><dd>{format!("{} V/V", format(p.gain, Quantity::Ratio))}</dd>
                        </dl>
                    }
                });
                view! {
                    {stale.then(|| view! {
                        <p class="stale-note">
                            {if errors > 0 {
                                "A value in the form has a problem; this is the last good design."
                            } else {
                                "The request is incomplete; this is the last good design."
                            }}
                        </p>
                    })}
                    <p class="preview-name">{d.name.clone()}</p>
                    <p class="muted small">
                        {if d.topology.is_empty() { "no circuit".to_string() } else { d.topology.clone() }}
                    </p>
                    {mapping}
                    <p class="preview-tally">
                        {(e > 0).then(|| view! { <span class="badge sev-error">{plural(e, "error")}</span> })}
                        {(w > 0).then(|| view! { <span class="badge sev-warning">{plural(w, "warning")}</span> })}
                        {(e + w == 0).then(|| view! { <span class="badge sev-ok">"checks pass"</span> })}
                        <span class="muted small">{plural(d.parts.len(), "part")}</span>
                    </p>
                    <button type="button" class="btn primary" on:click=move |_| go(ctx, Step::Design, true)>
                        "See the design →"
                    </button>
                }
                .into_any()
            }
        })
    };
    view! {
        <aside class="preview" aria-label="The design so far" hidden=move || ctx.step.get() == Step::Design>
            <h3>"The design so far"</h3>
            {body}
        </aside>
    }
}
