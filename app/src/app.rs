//! The page: state, start-up (link, last edited design or first demo), the engine run on
//! every change, saving, and the layout around the steps.

use std::sync::Arc;

use leptos::prelude::*;
use rangefit_engine::{demos, share, Request};
use serde_json::Value;

use crate::browser::{self, LocalBackend};
use crate::design_view::DesignStep;
use crate::fields::{self, Step, Validation, Values, FIELDS};
use crate::outputs::{self, Shown, ShownPlot};
use crate::steps::{FormStep, Preview, Stepper};
use crate::store::{self, Problem, Saved, Working};

/// Where the design being edited came from and what it was when opened or saved.
#[derive(Debug, Clone, PartialEq)]
pub struct Meta {
    /// The saved design it belongs to, if any.
    pub saved_id: Option<String>,
    /// The request JSON as last opened or saved.
    pub baseline: Value,
    /// Opened from a share link and not edited since: the stored working copy is left alone.
    pub from_link: bool,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoticeKind {
    Info,
    Warning,
    Error,
}

/// A message at the top of the page.
#[derive(Debug, Clone, PartialEq)]
pub struct Notice {
    pub id: u64,
    pub kind: NoticeKind,
    pub text: String,
    /// `data-testid` of the notice, so tests can find a particular one.
    pub testid: &'static str,
    /// Offer to save the design on show (a design opened from a link).
    pub offer_save: bool,
}

/// Something the user asked to open.
#[derive(Debug, Clone, PartialEq)]
pub enum Open {
    New,
    Demo(usize),
    Saved(String),
    Link(Box<Request>),
}

/// The page's state; every member is a signal, so the whole is `Copy`.
#[derive(Clone, Copy)]
pub struct Ctx {
    /// One text per field of [`FIELDS`], same order.
    pub values: &'static [RwSignal<String>],
    pub step: RwSignal<Step>,
    pub validation: Memo<Validation>,
    /// The last design the engine produced from a complete request.
    pub shown: RwSignal<Option<Arc<Shown>>>,
    /// The plots of the design with that serial number, drawn after the first paint.
    pub plots: RwSignal<Option<(u64, Arc<Vec<ShownPlot>>)>>,
    pub meta: RwSignal<Meta>,
    pub dirty: Memo<bool>,
    pub saved: RwSignal<Vec<Saved>>,
    pub problems: RwSignal<Vec<Problem>>,
    pub notices: RwSignal<Vec<Notice>>,
    /// An open waiting for the user to decide about unsaved changes.
    pub pending: RwSignal<Option<Open>>,
    pub autosave_error: RwSignal<Option<String>>,
    pub sidebar_open: RwSignal<bool>,
    /// False until the first screen is painted: the steps not on show are built after it,
    /// so the first design appears sooner.
    pub ready: RwSignal<bool>,
    next_notice: RwSignal<u64>,
}

impl Ctx {
    fn new() -> Ctx {
        let initial = fields::new_design();
        let values: &'static [RwSignal<String>] =
            Box::leak(FIELDS.iter().map(|f| RwSignal::new(initial.get(f.path).cloned().unwrap_or_default())).collect::<Vec<_>>().into_boxed_slice());
        let validation = Memo::new(move |_| {
            // Inserted one by one: collecting into a BTreeMap sorts the pairs first, with a
            // copy of the standard sort of its own in the bundle (engine::order has the shared one).
            let mut texts = Values::new();
            for (f, s) in FIELDS.iter().zip(values.iter()) {
                texts.insert(f.path, s.get());
            }
            fields::validate(&texts)
        });
        let meta = RwSignal::new(Meta { saved_id: None, baseline: Value::Null, from_link: false });
        let dirty = Memo::new(move |_| validation.with(|v| meta.with(|m| v.json != m.baseline)));
        Ctx {
            values,
            step: RwSignal::new(Step::Sensor),
            validation,
            shown: RwSignal::new(None),
            plots: RwSignal::new(None),
            meta,
            dirty,
            saved: RwSignal::new(Vec::new()),
            problems: RwSignal::new(Vec::new()),
            notices: RwSignal::new(Vec::new()),
            pending: RwSignal::new(None),
            autosave_error: RwSignal::new(None),
            sidebar_open: RwSignal::new(false),
            ready: RwSignal::new(false),
            next_notice: RwSignal::new(1),
        }
    }

    /// The text signal of the field at `path`.
    pub fn value(&self, path: &str) -> Option<RwSignal<String>> {
        fields::index(path).and_then(|i| self.values.get(i).copied())
    }

    pub fn notify(&self, kind: NoticeKind, testid: &'static str, text: impl Into<String>) {
        let id = self.next_notice.get_untracked();
        self.next_notice.set(id + 1);
        let text = text.into();
        self.notices.update(|n| {
            n.retain(|x| x.testid != testid);
            n.push(Notice { id, kind, text, testid, offer_save: false });
        });
    }

    pub fn dismiss(&self, testid: &str) {
        self.notices.update(|n| n.retain(|x| x.testid != testid));
    }

    /// Puts `values` in the form and starts a new working copy.
    fn load(&self, values: &Values, saved_id: Option<String>, from_link: bool) {
        let baseline = fields::validate(values).json;
        for (f, s) in FIELDS.iter().zip(self.values.iter()) {
            let text = values.get(f.path).cloned().unwrap_or_default();
            if s.get_untracked() != text {
                s.set(text);
            }
        }
        self.meta.set(Meta { saved_id, baseline, from_link });
        self.shown.set(None);
        self.pending.set(None);
        if !from_link {
            self.dismiss("notice-link");
            browser::clear_fragment();
        }
    }

    /// Opens `what`, or asks first when the design on show has unsaved changes.
    pub fn request_open(&self, what: Open) {
        if self.dirty.get_untracked() {
            self.pending.set(Some(what));
        } else {
            self.open(what);
        }
    }

    /// Opens `what` without asking.
    pub fn open(&self, what: Open) {
        self.sidebar_open.set(false);
        match what {
            Open::New => {
                self.load(&fields::new_design(), None, false);
                self.step.set(Step::Sensor);
                let id = fields::field("source.min").map(|f| f.input_id()).unwrap_or_default();
                request_animation_frame(move || browser::focus(&id));
            }
            Open::Demo(i) => {
                let Some(demo) = demos::ALL.get(i) else { return };
                let json: Value = serde_json::from_str(demo.json).unwrap_or(Value::Null);
                self.load(&fields::from_json(&json), None, false);
                self.show_first_step();
            }
            Open::Saved(id) => {
                let b = LocalBackend::open();
                match store::read(&b, &id) {
                    Ok(saved) => {
                        self.load(&fields::from_json(&saved.request), Some(id), false);
                        self.show_first_step();
                    }
                    Err(why) => {
                        self.notify(NoticeKind::Error, "notice-open", format!("That saved design cannot be opened: {why}."));
                        self.refresh_list();
                    }
                }
            }
            Open::Link(req) => self.open_link(&req),
        }
    }

    /// The design step for a complete request, else the first step.
    fn show_first_step(&self) {
        let complete = self.validation.with_untracked(Validation::is_complete);
        self.step.set(if complete { Step::Design } else { Step::Sensor });
    }

    fn open_link(&self, req: &Request) {
        self.load(&fields::from_request(req), None, true);
        self.step.set(Step::Design);
        let id = self.next_notice.get_untracked();
        self.next_notice.set(id + 1);
        let text = format!(
            "You opened a shared design, “{}”. It is not in your designs yet; nothing you saved has been changed.",
            req.name
        );
        self.notices.update(|n| {
            n.retain(|x| x.testid != "notice-link" && x.testid != "notice-link-error");
            n.push(Notice { id, kind: NoticeKind::Info, text, testid: "notice-link", offer_save: true });
        });
    }

    /// Reads a link fragment; opens its design or says why it cannot.
    fn open_fragment(&self, fragment: &str, ask_first: bool) -> bool {
        match share::decode(fragment) {
            Ok(req) => {
                if ask_first {
                    self.request_open(Open::Link(Box::new(req)));
                } else {
                    self.open_link(&req);
                }
                true
            }
            Err(e) => {
                let end = if e.message.ends_with(['.', '?', '!']) { "" } else { "." };
                self.notify(
                    NoticeKind::Error,
                    "notice-link-error",
                    format!("The link in the address bar could not be opened: {}{end} Nothing was changed; you can go on working.", e.message),
                );
                false
            }
        }
    }

    pub fn refresh_list(&self) {
        let mut b = LocalBackend::open();
        let listing = store::list(&mut b);
        if !listing.migrated.is_empty() {
            let n = listing.migrated.len();
            self.notify(
                NoticeKind::Info,
                "notice-migrated",
                format!("{n} saved design{} from an earlier version of Rangefit {} brought up to date.", if n == 1 { "" } else { "s" }, if n == 1 { "was" } else { "were" }),
            );
        }
        self.saved.set(listing.designs);
        self.problems.set(listing.problems);
    }

    /// Saves the design on show: over its own saved entry, or as a new one.
    pub fn save(&self) -> bool {
        let mut b = LocalBackend::open();
        let json = self.validation.with_untracked(|v| v.json.clone());
        let meta = self.meta.get_untracked();
        let id = meta.saved_id.filter(|id| store::read(&b, id).is_ok()).unwrap_or_else(|| store::new_id(&b, browser::now()));
        let name = fields::name_of(&json);
        match store::write(&mut b, &id, &json, browser::now()) {
            Ok(_) => {
                let meta = Meta { saved_id: Some(id), baseline: json.clone(), from_link: false };
                let _ = store::write_working(&mut b, &Working { saved_id: meta.saved_id.clone(), baseline: json.clone(), request: json });
                self.meta.set(meta);
                self.dismiss("notice-link");
                self.dismiss("notice-save-error");
                browser::clear_fragment();
                self.refresh_list();
                self.notify(NoticeKind::Info, "notice-saved", format!("Saved “{name}” in this browser."));
                let ctx = *self;
                set_timeout(move || ctx.dismiss("notice-saved"), std::time::Duration::from_secs(5));
                true
            }
            Err(e) => {
                self.notify(NoticeKind::Error, "notice-save-error", format!("“{name}” was not saved: {}", e.message()));
                false
            }
        }
    }
}

/// Which step a request-error path belongs to.
pub fn step_of(path: &str) -> Step {
    fields::field(path).map(|f| f.step).unwrap_or(Step::Sensor)
}

#[component]
pub fn App() -> impl IntoView {
    let ctx = Ctx::new();
    provide_context(ctx);

    // Start-up: saved designs (migrating old ones), then a link, the last edited design
    // or the first demo.
    ctx.refresh_list();
    let fragment = browser::fragment();
    let opened_link = !fragment.is_empty() && ctx.open_fragment(&fragment, false);
    if !opened_link {
        let mut b = LocalBackend::open();
        match store::read_working(&mut b) {
            Ok(Some(w)) => {
                let exists = w.saved_id.as_ref().is_some_and(|id| store::read(&b, id).is_ok());
                let values = fields::from_json(&w.request);
                ctx.load(&values, if exists { w.saved_id.clone() } else { None }, false);
                let baseline = fields::validate(&fields::from_json(&w.baseline)).json;
                ctx.meta.update(|m| m.baseline = baseline);
                ctx.show_first_step();
            }
            Ok(None) => ctx.open(Open::Demo(0)),
            Err(why) => {
                ctx.notify(NoticeKind::Error, "notice-restore-error", format!("The design you were editing last time could not be restored: {why}. An example is shown instead."));
                ctx.open(Open::Demo(0));
            }
        }
        if !b.is_available() {
            ctx.notify(NoticeKind::Warning, "notice-no-storage", "This browser does not let the page store anything, so designs cannot be saved here. Share links still work.");
        }
    }

    // The engine runs whenever the form reads as a new complete request.
    Effect::new(move |_| {
        let Some(req) = ctx.validation.with(|v| v.request.clone()) else { return };
        if ctx.shown.with_untracked(|s| s.as_ref().is_some_and(|s| s.design.request == req)) {
            return;
        }
        let serial = ctx.shown.with_untracked(|s| s.as_ref().map_or(0, |s| s.serial)) + 1;
        // The first design of a page load is shown without its Monte Carlo spread, which
        // follows with the plots (see `outputs::run_design_quick`).
        let quick = serial == 1 && req.analysis.monte_carlo_runs > 0;
        let design = browser::timed("rangefit:design", || if quick { outputs::run_design_quick(&req) } else { outputs::run_design(&req) });
        let shown = Arc::new(browser::timed("rangefit:outputs", || outputs::derive(design, serial, quick)));
        ctx.shown.set(Some(shown.clone()));
        // The plots follow once the browser has painted the rest, unless a newer design
        // has replaced this one by then.
        set_timeout(
            move || {
                if ctx.shown.with_untracked(|s| s.as_ref().map(|s| s.serial)) != Some(serial) {
                    return;
                }
                let shown = if quick {
                    let design = browser::timed("rangefit:design", || outputs::run_design(&shown.design.request));
                    let full = Arc::new(browser::timed("rangefit:outputs", || outputs::derive(design, serial, false)));
                    ctx.shown.set(Some(full.clone()));
                    full
                } else {
                    shown
                };
                let plots = browser::timed("rangefit:plots", || outputs::plots(&shown.design));
                ctx.plots.set(Some((serial, Arc::new(plots))));
            },
            std::time::Duration::ZERO,
        );
    });

    // The first time a design is on screen, leave a mark for the load-time measurement.
    let marked = StoredValue::new(false);
    Effect::new(move |_| {
        if ctx.shown.with(Option::is_none) || marked.get_value() {
            return;
        }
        marked.set_value(true);
        fn when_drawn(tries: u32) {
            request_animation_frame(move || {
                let drawn = document().query_selector("[data-testid='schematic'] svg").ok().flatten().is_some();
                if drawn || tries > 120 {
                    browser::mark("rangefit:design-shown");
                } else {
                    when_drawn(tries + 1);
                }
            });
        }
        when_drawn(0);
    });

    // Keep the design being edited, so a reload brings it back.
    Effect::new(move |_| {
        let json = ctx.validation.with(|v| v.json.clone());
        let meta = ctx.meta.get_untracked();
        if meta.from_link {
            if json == meta.baseline {
                return;
            }
            // Edited after opening a link: from now on it is the working copy.
            ctx.meta.update(|m| m.from_link = false);
            browser::clear_fragment();
        }
        let mut b = LocalBackend::open();
        if !b.is_available() {
            return;
        }
        let w = Working { saved_id: meta.saved_id, baseline: meta.baseline, request: json };
        match store::write_working(&mut b, &w) {
            Ok(()) => {
                if ctx.autosave_error.get_untracked().is_some() {
                    ctx.autosave_error.set(None);
                }
            }
            Err(e) => ctx.autosave_error.set(Some(format!("Your latest changes are not kept for the next visit: {}", e.message()))),
        }
    });

    // Build the steps not on show once the first screen is painted.
    request_animation_frame(move || set_timeout(move || ctx.ready.set(true), std::time::Duration::ZERO));

    // A link pasted into the address bar of an open page.
    let _ = window_event_listener(leptos::ev::hashchange, move |_| {
        let f = browser::fragment();
        if !f.is_empty() {
            ctx.open_fragment(&f, true);
        }
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
                "Sensors tied to mains or other high voltages need isolation before anything designed here connects to them. "
                "Never exceed the converter's absolute maximum input. A design for safety- or medically-relevant use must be checked by a qualified person; follow local codes and licensed practice."
            </p>
        </footer>
    }
}

#[component]
fn TopBar() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    let name = Memo::new(move |_| ctx.validation.with(|v| fields::name_of(&v.json)));
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
                <span class="current-status" class:unsaved=move || status.get() != "Saved" data-testid="save-status">{move || status.get()}</span>
            </div>
            <div class="top-actions">
                <button type="button" class="btn ghost designs-toggle" aria-expanded=move || if ctx.sidebar_open.get() { "true" } else { "false" } aria-controls="sidebar" on:click=move |_| ctx.sidebar_open.update(|o| *o = !*o)>
                    "My designs"
                </button>
                <button type="button" class="btn ghost" data-testid="new-design" on:click=move |_| ctx.request_open(Open::New)>"New design"</button>
                <button type="button" class="btn primary" data-testid="save-design" on:click=move |_| { ctx.save(); }>"Save"</button>
            </div>
        </header>
    }
}

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
                        <button type="button" class="btn primary small" data-testid="save-shared" on:click=move |_| { ctx.save(); }>"Save to my designs"</button>
                    });
                    view! {
                        <div class=class data-testid=testid>
                            <p>{n.text}</p>
                            {save}
                            <button type="button" class="btn ghost small" aria-label="Dismiss this message" on:click=move |_| ctx.dismiss(testid)>"Dismiss"</button>
                        </div>
                    }
                }
            </For>
        </div>
    }
}

#[component]
fn ConfirmBar() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    move || {
        ctx.pending.get().map(|what| {
            let name = ctx.validation.with_untracked(|v| fields::name_of(&v.json));
            let go = what.clone();
            let after_save = what.clone();
            view! {
                <div class="confirm" role="alertdialog" aria-labelledby="confirm-text" data-testid="confirm-discard">
                    <p id="confirm-text">"“" {name} "” has changes that are not saved. What should happen to them?"</p>
                    <div class="confirm-actions">
                        <button type="button" class="btn primary" on:click=move |_| { if ctx.save() { ctx.open(after_save.clone()); } }>"Save them, then continue"</button>
                        <button type="button" class="btn danger" data-testid="confirm-discard-yes" on:click=move |_| ctx.open(go.clone())>"Discard them"</button>
                        <button type="button" class="btn ghost" on:click=move |_| ctx.pending.set(None)>"Keep editing"</button>
                    </div>
                </div>
            }
        })
    }
}

#[component]
fn Sidebar() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    let renaming: RwSignal<Option<(String, String)>> = RwSignal::new(None);
    let deleting: RwSignal<Option<String>> = RwSignal::new(None);

    let rename_done = move |id: String| {
        let Some((_, text)) = renaming.get_untracked() else { return };
        renaming.set(None);
        let mut b = LocalBackend::open();
        match store::rename(&mut b, &id, &text, browser::now()) {
            Ok(saved) => {
                // The open design follows its saved entry's new name.
                if ctx.meta.with_untracked(|m| m.saved_id.as_deref() == Some(id.as_str())) {
                    let was_clean = !ctx.dirty.get_untracked();
                    if let Some(s) = ctx.value("name") {
                        s.set(saved.name());
                    }
                    if was_clean {
                        let json = ctx.validation.with_untracked(|v| v.json.clone());
                        ctx.meta.update(|m| m.baseline = json);
                    }
                }
            }
            Err(why) => ctx.notify(NoticeKind::Error, "notice-rename-error", format!("The design was not renamed: {why}")),
        }
        ctx.refresh_list();
    };

    let entries = move || {
        let current = ctx.meta.with(|m| m.saved_id.clone());
        ctx.saved
            .get()
            .into_iter()
            .map(|s| {
                let is_current = current.as_deref() == Some(s.id.as_str());
                view! { <SavedEntry saved=s is_current=is_current renaming=renaming deleting=deleting rename_done=rename_done/> }
            })
            .collect_view()
    };

    let problems = move || {
        let list = ctx.problems.get();
        (!list.is_empty()).then(|| {
            let items = list
                .into_iter()
                .map(|p| {
                    let key = p.key.clone();
                    view! {
                        <li>
                            <span>"A stored entry (" <code>{p.key.clone()}</code> ") could not be opened: " {p.message.clone()} "."</span>
                            <button type="button" class="link danger" on:click=move |_| {
                                let mut b = LocalBackend::open();
                                store::remove_key(&mut b, &key);
                                ctx.refresh_list();
                            }>"Remove it"</button>
                        </li>
                    }
                })
                .collect_view();
            view! { <ul class="storage-problems" data-testid="storage-problems">{items}</ul> }
        })
    };

    let examples = demos::ALL
        .iter()
        .enumerate()
        .map(|(i, demo)| {
            view! {
                <li>
                    <button type="button" class="example" data-testid="demo" data-demo=demo.id on:click=move |_| ctx.request_open(Open::Demo(i))>
                        {demo.title}
                    </button>
                </li>
            }
        })
        .collect_view();

    view! {
        <aside class="sidebar" id="sidebar" class:open=move || ctx.sidebar_open.get() aria-label="Designs">
            <section>
                <h2>"My designs"</h2>
                <p class="muted small">"Kept in this browser only."</p>
                <Show when=move || ctx.saved.with(Vec::is_empty)>
                    <p class="muted small" data-testid="designs-empty">"Nothing saved yet. “Save” keeps the design on show."</p>
                </Show>
                <ul class="saved-list" data-testid="designs">{entries}</ul>
                {problems}
            </section>
            <section>
                <h2>"Examples"</h2>
                <ul class="examples">{examples}</ul>
            </section>
        </aside>
    }
}

#[component]
fn SavedEntry<F>(saved: Saved, is_current: bool, renaming: RwSignal<Option<(String, String)>>, deleting: RwSignal<Option<String>>, rename_done: F) -> impl IntoView
where
    F: Fn(String) + Copy + Send + Sync + 'static,
{
    let ctx = expect_context::<Ctx>();
    let id = StoredValue::new(saved.id.clone());
    let name = saved.name();
    let editing = move || renaming.with(|r| r.as_ref().is_some_and(|(x, _)| id.with_value(|id| x == id)));
    let confirming = move || deleting.with(|d| id.with_value(|id| d.as_deref() == Some(id.as_str())));
    let title = StoredValue::new(name.clone());

    let name_or_rename = move || {
        if editing() {
            view! {
                <form class="rename" on:submit=move |ev| { ev.prevent_default(); rename_done(id.get_value()); }>
                    <label class="sr-only" for="rename-input">"New name"</label>
                    <input id="rename-input" type="text" data-testid="rename-input"
                        prop:value=move || renaming.with(|r| r.as_ref().map(|(_, t)| t.clone()).unwrap_or_default())
                        on:input=move |ev| { let t = event_target_value(&ev); renaming.update(|r| if let Some((_, x)) = r { *x = t; }); }
                        on:keydown=move |ev| if ev.key() == "Escape" { renaming.set(None); }
                    />
                    <button type="submit" class="btn small primary" data-action="rename-ok">"Rename"</button>
                    <button type="button" class="btn small ghost" on:click=move |_| renaming.set(None)>"Cancel"</button>
                </form>
            }
            .into_any()
        } else {
            view! {
                <button type="button" class="saved-name" aria-current=if is_current { Some("true") } else { None } data-action="open"
                    on:click=move |_| ctx.request_open(Open::Saved(id.get_value()))>
                    {title.get_value()}
                </button>
            }
            .into_any()
        }
    };

    let actions = move || {
        if confirming() {
            view! {
                <div class="saved-actions confirm-delete" role="group" aria-label="Confirm delete">
                    <span>"Delete it?"</span>
                    <button type="button" class="link danger" data-action="confirm-delete" on:click=move |_| {
                        let mut b = LocalBackend::open();
                        let id = id.get_value();
                        store::delete(&mut b, &id);
                        if ctx.meta.with_untracked(|m| m.saved_id.as_deref() == Some(id.as_str())) {
                            ctx.meta.update(|m| m.saved_id = None);
                        }
                        deleting.set(None);
                        ctx.refresh_list();
                    }>"Delete"</button>
                    <button type="button" class="link" on:click=move |_| deleting.set(None)>"Keep"</button>
                </div>
            }
            .into_any()
        } else {
            view! {
                <div class="saved-actions">
                    <button type="button" class="link" data-action="rename" on:click=move |_| {
                        renaming.set(Some((id.get_value(), title.get_value())));
                        request_animation_frame(|| browser::focus("rename-input"));
                    }>"Rename"</button>
                    <button type="button" class="link" data-action="duplicate" on:click=move |_| {
                        let mut b = LocalBackend::open();
                        if let Err(why) = store::duplicate(&mut b, &id.get_value(), browser::now()) {
                            ctx.notify(NoticeKind::Error, "notice-duplicate-error", format!("The copy was not made: {why}"));
                        }
                        ctx.refresh_list();
                    }>"Duplicate"</button>
                    <button type="button" class="link danger" data-action="delete" on:click=move |_| deleting.set(Some(id.get_value()))>"Delete"</button>
                </div>
            }
            .into_any()
        }
    };

    view! {
        <li class="saved" class:current=is_current data-testid="design-entry" data-id=saved.id>
            {name_or_rename}
            {actions}
        </li>
    }
}
