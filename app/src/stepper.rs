//! The step bar: a tab per step with its state (complete, to fill in, problems; the design's
//! checks), moving between steps with the arrow keys, Home and End.

use leptos::prelude::*;

use crate::fields::Step;
use crate::state::{go, plural, reachable, tally, Ctx};

/// The step bar: a tab list, with arrow keys, Home and End moving between steps.
#[component]
pub fn Stepper() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    let on_key = move |ev: leptos::ev::KeyboardEvent| {
        let now = ctx.step.get_untracked();
        let order: Vec<Step> = Step::ALL.into_iter().filter(|s| reachable(ctx, *s)).collect();
        let at = order.iter().position(|s| *s == now).unwrap_or(0);
        let n = order.len().max(1);
        let target = match ev.key().as_str() {
            "ArrowRight" | "ArrowDown" => order.get((at + 1) % n),
            "ArrowLeft" | "ArrowUp" => order.get((at + n - 1) % n),
            "Home" => order.first(),
            "End" => order.last(),
            _ => None,
        };
        if let Some(step) = target {
            ev.prevent_default();
            go(ctx, *step, true);
        }
    };
    let tabs = Step::ALL
        .into_iter()
        .map(|step| {
            let selected = move || ctx.step.get() == step;
            let state = move || {
                if step == Step::Design {
                    return if ctx.shown.with(Option::is_none) {
                        ("pending", "available once the request is complete".to_string())
                    } else {
                        let (e, w) = ctx.shown.with(|s| s.as_ref().map(|s| tally(&s.design.checks)).unwrap_or((0, 0)));
                        match (e, w) {
                            (0, 0) => ("done", "all checks pass".to_string()),
                            (0, w) => ("warn", plural(w, "warning")),
                            (e, _) => ("bad", plural(e, "error")),
                        }
                    };
                }
                let (bad, missing) = ctx.validation.with(|v| v.problems_in(step));
                match (bad, missing) {
                    (0, 0) => ("done", "complete".to_string()),
                    (0, m) => ("pending", format!("{m} to fill in")),
                    (b, _) => ("bad", plural(b, "problem")),
                }
            };
            view! {
                <button
                    type="button"
                    role="tab"
                    class="step-tab"
                    id=format!("tab-{}", step.id())
                    data-testid=format!("step-{}", step.id())
                    aria-controls=format!("panel-{}", step.id())
                    aria-selected=move || if selected() { "true" } else { "false" }
                    aria-disabled=move || if reachable(ctx, step) { "false" } else { "true" }
                    tabindex=move || if selected() { "0" } else { "-1" }
                    on:click=move |_| go(ctx, step, false)
                >
                    <span class="step-num" aria-hidden="true">{step.number()}</span>
                    <span class="step-text">
                        <span class="step-title">{step.title()}</span>
                        <span class=move || format!("step-state state-{}", state().0)>{move || state().1}</span>
                    </span>
                </button>
            }
        })
        .collect_view();
    view! {
        <div class="steps" role="tablist" aria-label="Steps of the design" on:keydown=on_key>
            {tabs}
        </div>
    }
}
