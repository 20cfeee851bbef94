//! The three form steps (the sensor, the converter input, power and parts): their groups of
//! fields, each input with its label, help line and message, the way on, and the amplifier
//! the design assumes.

use leptos::prelude::*;

use crate::field_table::{self, FIELDS};
use crate::fields::{Field, Kind, Step, AMP_GIVEN};
use crate::state::{go, reachable, Ctx};

/// One form step: its groups of fields, the way on, and the live summary.
#[component]
pub fn FormStep(step: Step) -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    // Built the first time the step is on show or once the first screen is painted.
    let wanted =
        Memo::new(move |was: Option<&bool>| was.copied().unwrap_or(false) || ctx.ready.get() || ctx.step.get() == step);
    let build = move || wanted.get().then(|| step_fields(step));
    let intro = match step {
        Step::Sensor => INTRO_SENSOR,
        Step::Converter => INTRO_CONVERTER,
        _ => INTRO_PARTS,
    };
    let next = step.next();
    let previous = step.previous();
    view! {
        <section
            class="panel step-panel"
            role="tabpanel"
            id=format!("panel-{}", step.id())
            aria-labelledby=format!("tab-{}", step.id())
            hidden=move || ctx.step.get() != step
        >
            <div class="form-col">
                <h2 class="step-heading">{format!("{}. {}", step.number(), step.title())}</h2>
                <p class="intro">{intro}</p>
                {move || {
                    ctx.validation
                        .with(|v| v.general.clone())
                        .map(|g| view! { <p class="general-error" role="alert">{g}</p> })
                }}
                <form class="fields" on:submit=|ev| ev.prevent_default() autocomplete="off">
                    {build}
                </form>
                <div class="step-nav">
                    {previous.map(|p| view! {
                        <button type="button" class="btn ghost" on:click=move |_| go(ctx, p, true)>
                            {format!("← {}", p.title())}
                        </button>
                    })}
                    {next.map(|n| view! {
                        <button type="button" class="btn primary" data-testid=format!("next-{}", step.id())
                            disabled=move || !reachable(ctx, n)
                            on:click=move |_| go(ctx, n, true)>{format!("Next: {} →", n.title())}</button>
                    })}
                </div>
            </div>
        </section>
    }
}

/// The groups of fields of one step.
fn step_fields(step: Step) -> impl IntoView {
    let mut groups: Vec<&'static str> = Vec::new();
    for f in FIELDS.iter().filter(|f| f.step == step) {
        if !groups.contains(&f.group) {
            groups.push(f.group);
        }
    }
    let fieldsets = groups
        .into_iter()
        .map(|group| {
            let items = FIELDS
                .iter()
                .filter(|f| f.step == step && f.group == group)
                .map(|f| view! { <FieldView field=f/> })
                .collect_view();
            let amp = group == "Amplifier";
            view! {
                <fieldset class="group" class:amp=amp>
                    <legend>{group}</legend>
                    <div class="group-fields">{items}</div>
                    {amp.then(|| view! { <AssumedAmplifier/> })}
                </fieldset>
            }
        })
        .collect_view();
    fieldsets
}

/// One input with its label, help line and message.
#[component]
pub fn FieldView(field: &'static Field) -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    let Some(value) = ctx.value(field.path) else { return ().into_any() };
    let id = field.input_id();
    let msg_id = format!("{id}-msg");
    let help_id = format!("{id}-help");
    let testid = format!("field-{}", field.path);
    let path = field.path;
    let error = Memo::new(move |_| ctx.validation.with(|v| v.errors.get(path).cloned()));
    let missing = Memo::new(move |_| ctx.validation.with(|v| v.missing.contains(&path)));
    let hidden = move || !field.applies(|p| ctx.value(p).map(|s| s.get()).unwrap_or_default());
    let described = format!("{msg_id} {help_id}");
    let placeholder = move || ctx.shown.with(|s| field_table::placeholder(field, s.as_ref().map(|s| &s.design)));
    let on_input = move |ev: leptos::ev::Event| value.set(event_target_value(&ev));
    let invalid = move || if error.with(Option::is_some) { "true" } else { "false" };

    let control = match field.kind {
        Kind::Flag => view! {
            <input type="checkbox" id=id.clone() data-testid=testid.clone() aria-describedby=described.clone()
                prop:checked=move || value.get() == "true"
                on:change=move |ev| value.set(if event_target_checked(&ev) { "true".into() } else { "false".into() })/>
        }
        .into_any(),
        Kind::Choice(options) if field.path == "amplifier" || field.path == "source.coupling" => {
            let name = id.clone();
            let radios = options
                .iter()
                .map(|(v, label)| {
                    let v: &'static str = v;
                    let rid = format!("{name}-{v}");
                    view! {
                        <label class="radio" for=rid.clone()>
                            <input type="radio" id=rid.clone() name=name.clone() value=v
                                data-testid=format!("field-{path}-{v}")
                                prop:checked=move || value.get() == v
                                on:change=move |_| value.set(v.to_string())/>
                            <span>{*label}</span>
                        </label>
                    }
                })
                .collect_view();
            view! {
                <div class="radios" role="radiogroup" aria-labelledby=format!("{id}-label") data-testid=testid.clone()
                    aria-describedby=described.clone()>{radios}</div>
            }
            .into_any()
        }
        Kind::Choice(options) => {
            let opts = options
                .iter()
                .map(|(v, label)| {
                    let v: &'static str = v;
                    view! { <option value=v selected=move || value.get() == v>{*label}</option> }
                })
                .collect_view();
            view! {
                <select id=id.clone() data-testid=testid.clone() aria-describedby=described.clone()
                    prop:value=move || value.get()
                    on:change=move |ev| value.set(event_target_value(&ev))>{opts}</select>
            }
            .into_any()
        }
        Kind::LongText => view! {
            <textarea id=id.clone() data-testid=testid.clone() rows="2" aria-describedby=described.clone()
                prop:value=move || value.get() on:input=on_input></textarea>
        }
        .into_any(),
        _ => view! {
            <input type="text" id=id.clone() data-testid=testid.clone() spellcheck="false" autocomplete="off"
                class:unit-input=field.quantity().is_some()
                aria-invalid=invalid aria-describedby=described.clone()
                aria-required=if field.required { "true" } else { "false" }
                placeholder=placeholder
                prop:value=move || value.get() on:input=on_input/>
        }
        .into_any(),
    };

    let is_group =
        matches!(field.kind, Kind::Choice(_)) && (field.path == "amplifier" || field.path == "source.coupling");
    let label = if is_group {
        view! { <span class="label" id=format!("{id}-label")>{field.label}</span> }.into_any()
    } else {
        view! {
            <label class="label" for=id.clone()>
                {field.label}{field.required.then(|| view! { <span class="req">" required"</span> })}
            </label>
        }
        .into_any()
    };
    let wide = matches!(field.kind, Kind::LongText | Kind::Flag)
        || is_group
        || field.path == "name"
        || field.path == "supplies"
        || field.path == "source.kind";
    view! {
        <div class="field" class:wide=wide class:flag=matches!(field.kind, Kind::Flag)
            class:has-error=move || error.with(Option::is_some) hidden=hidden>
            {label}
            {control}
            <p class="field-msg" id=msg_id data-testid=format!("message-{path}")
                role=move || if error.with(Option::is_some) { Some("alert") } else { None }>
                {move || {
                    error.get().unwrap_or_else(|| {
                        if missing.get() { "Needed for the design.".into() } else { String::new() }
                    })
                }}
            </p>
            <p class="help" id=help_id>{field.help}</p>
        </div>
    }
    .into_any()
}

/// Under the amplifier choice: the class assumed and what the design requires of it.
#[component]
fn AssumedAmplifier() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    move || {
        ctx.shown.with(|s| {
            s.as_ref().map(|s| {
                let d = &s.design;
                let given = ctx.value("amplifier").map(|v| v.get() == AMP_GIVEN).unwrap_or(false);
                let reqs = d.requirements.as_ref().map(|r| r.summary.clone()).unwrap_or_default();
                let items = reqs.into_iter().map(|r| view! { <li>{r}</li> }).collect_view();
                view! {
                    <div class="assumed-amp">
                        <p>
                            {if given {
                                "Figures left empty come from a generic class: "
                            } else {
                                "Assumed: a generic "
                            }}
                            <strong>{d.amplifier.class.clone()}</strong>"."
                        </p>
                        <p class="muted">"Any amplifier that meets these requirements will do:"</p>
                        <ul>{items}</ul>
                    </div>
                }
            })
        })
    }
}

const INTRO_SENSOR: &str =
    "Describe what the sensor puts out. Values take units the way you write them: 1.2 V, -250 mV, 4k7, 20 Hz.";
const INTRO_CONVERTER: &str = "Describe the converter input the signal must fit.";
const INTRO_PARTS: &str =
    "Say what you can power the circuit from and which parts you keep. Everything here has a sensible default.";
