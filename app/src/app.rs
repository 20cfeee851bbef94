//! The page: its state made and shared, start-up, the engine run, the working copy kept,
//! and the layout around the steps: the top bar, the notices and the question about unsaved
//! changes.

use leptos::prelude::*;

use crate::design_view::DesignStep;
use crate::designs_list::Sidebar;
use crate::engine_run;
use crate::fields::Step;
use crate::form_load;
use crate::form_step::FormStep;
use crate::opening;
use crate::preview::Preview;
use crate::saving;
use crate::state::{Ctx, NoticeKind, Open};
use crate::stepper::Stepper;

/// The whole page.
#[component]
pub fn App() -> impl IntoView {
    let ctx = Ctx::new();
    provide_context(ctx);
    opening::start(&ctx);
    engine_run::run_on_change(ctx);
    saving::keep_working_copy(ctx);
    // Build the steps not on show once the first screen is painted.
    request_animation_frame(move || set_timeout(move || ctx.ready.set(true), std::time::Duration::ZERO));
    opening::follow_address_bar(ctx);
    // Sent by the page's service-worker script (index.html) when a new version is installed.
    let _ = window_event_listener_untyped("rangefit-update", move |_| {
        ctx.notify(
            NoticeKind::Info,
            "notice-update",
            "A new version of Rangefit has been downloaded. It opens on your next visit, once every Rangefit tab \
            is closed.",
        )
    });

    view! {
        <TopBar/>
        <div class="shell">
            <Sidebar/>
            <main class="main" id="main">
                <Notices/>
                <ConfirmBar/>
                <Stepper/>
                <div class="work">
                    <FormStep step=Step::Sensor/>
                    <FormStep step=Step::Converter/>
                    <FormStep step=Step::Parts/>
                    <Preview/>
                    <DesignStep/>
                </div>
            </main>
        </div>
        <footer class="safety">
            <p>
                <strong>"Safety. "</strong>
                "Sensors tied to mains or other high voltages need isolation before anything designed here \
                connects to them. "
                "Never exceed the converter's absolute maximum input. A design for safety- or medically-relevant \
                use must be checked by a qualified person; follow local codes and licensed practice."
            </p>
        </footer>
    }
}

/// The bar at the top: the name and save state of the design on show, and the page's actions.
#[component]
fn TopBar() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    let name = Memo::new(move |_| ctx.validation.with(|v| form_load::name_of(&v.json)));
    let status = Memo::new(move |_| {
        let saved = ctx.meta.with(|m| m.saved_id.is_some());
        match (saved, ctx.dirty.get()) {
            (true, false) => "Saved",
            (true, true) => "Unsaved changes",
            (false, _) => "Not saved yet",
        }
    });
    view! {
        <header class="topbar">
            <div class="brand">
                <span class="logo" aria-hidden="true"></span>
                <h1 class="brand-name">"Rangefit"</h1>
                <span class="brand-line">"sensor to ADC, worked out"</span>
            </div>
            <div class="current-design">
                <span class="current-name" data-testid="current-name">{move || name.get()}</span>
                <span class="current-status" class:unsaved=move || status.get() != "Saved" data-testid="save-status">
                    {move || status.get()}
                </span>
            </div>
            <div class="top-actions">
                <button type="button" class="btn ghost designs-toggle"
                    aria-expanded=move || if ctx.sidebar_open.get() { "true" } else { "false" } aria-controls="sidebar"
                    on:click=move |_| ctx.sidebar_open.update(|o| *o = !*o)>
                    "My designs"
                </button>
                <button type="button" class="btn ghost" data-testid="new-design"
                    on:click=move |_| opening::request_open(&ctx, Open::New)>"New design"</button>
                <button type="button" class="btn primary" data-testid="save-design"
                    on:click=move |_| { saving::save(&ctx); }>"Save"</button>
            </div>
        </header>
    }
}

/// The messages at the top of the page.
#[component]
fn Notices() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    view! {
        <div class="notices" role="status" aria-live="polite">
            {move || ctx.autosave_error.get().map(|text| view! {
                <div class="notice notice-error" data-testid="notice-autosave"><p>{text}</p></div>
            })}
            <For each=move || ctx.notices.get() key=|n| n.id let:n>
                {
                    let testid = n.testid;
                    let class = match n.kind {
                        NoticeKind::Info => "notice notice-info",
                        NoticeKind::Warning => "notice notice-warning",
                        NoticeKind::Error => "notice notice-error",
                    };
                    let save = n.offer_save.then(|| view! {
                        <button type="button" class="btn primary small" data-testid="save-shared"
                            on:click=move |_| { saving::save(&ctx); }>"Save to my designs"</button>
                    });
                    view! {
                        <div class=class data-testid=testid>
                            <p>{n.text}</p>
                            {save}
                            <button type="button" class="btn ghost small" aria-label="Dismiss this message"
                                on:click=move |_| ctx.dismiss(testid)>"Dismiss"</button>
                        </div>
                    }
                }
            </For>
        </div>
    }
}

/// The question asked before unsaved changes would be lost.
#[component]
fn ConfirmBar() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    move || {
        ctx.pending.get().map(|what| {
            let name = ctx.validation.with_untracked(|v| form_load::name_of(&v.json));
            let go = what.clone();
            let after_save = what.clone();
            view! {
                <div class="confirm" role="alertdialog" aria-labelledby="confirm-text" data-testid="confirm-discard">
                    <p id="confirm-text">"“" {name} "” has changes that are not saved. What should happen to them?"</p>
                    <div class="confirm-actions">
                        <button type="button" class="btn primary"
                            on:click=move |_| { if saving::save(&ctx) { opening::open(&ctx, after_save.clone()); } }>
                            "Save them, then continue"
                        </button>
                        <button type="button" class="btn danger" data-testid="confirm-discard-yes"
                            on:click=move |_| opening::open(&ctx, go.clone())>"Discard them"</button>
                        <button type="button" class="btn ghost"
                            on:click=move |_| ctx.pending.set(None)>"Keep editing"</button>
                    </div>
                </div>
            }
        })
    }
}
