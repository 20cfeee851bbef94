//! The designs list in the side bar: the designs saved in this browser with their actions
//! (open, rename, duplicate, delete with a confirmation), export and import of them as a
//! JSON file, stored entries that cannot be opened, the examples, and the app as one file
//! for a computer without a network.

use leptos::prelude::*;
use rangefit_engine::demos;

use crate::browser::{self, LocalBackend};
use crate::opening;
use crate::saving;
use crate::state::{plural, Ctx, NoticeKind, Open};
use crate::store::{self, Saved};

/// The side bar: the designs saved in this browser (open, rename, duplicate, delete), the
/// stored entries that cannot be opened, and the examples.
#[component]
pub fn Sidebar() -> impl IntoView {
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
            Err(why) => {
                ctx.notify(NoticeKind::Error, "notice-rename-error", format!("The design was not renamed: {why}"))
            }
        }
        saving::refresh_list(&ctx);
    };

    let entries = move || {
        let current = ctx.meta.with(|m| m.saved_id.clone());
        ctx.saved
            .get()
            .into_iter()
            .map(|s| {
                let is_current = current.as_deref() == Some(s.id.as_str());
                view! {
                    <SavedEntry saved=s is_current=is_current renaming=renaming deleting=deleting
                        rename_done=rename_done/>
                }
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
                            <span>
                                "A stored entry (" <code>{p.key.clone()}</code> ") could not be opened: "
                                {p.message.clone()} "."
                            </span>
                            <button type="button" class="link danger" on:click=move |_| {
                                let mut b = LocalBackend::open();
                                store::remove_key(&mut b, &key);
                                saving::refresh_list(&ctx);
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
                    <button type="button" class="example" data-testid="demo" data-demo=demo.id
                        on:click=move |_| opening::request_open(&ctx, Open::Demo(i))>
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
                    <p class="muted small" data-testid="designs-empty">
                        "Nothing saved yet. “Save” keeps the design on show."
                    </p>
                </Show>
                <ul class="saved-list" data-testid="designs">{entries}</ul>
                {problems}
                <Transfer/>
            </section>
            <section>
                <h2>"Examples"</h2>
                <ul class="examples">{examples}</ul>
            </section>
            <OneFile/>
        </aside>
    }
}

/// Export of the saved designs as one JSON file and import of such a file (or of a request
/// file of the `rangefit` command).
#[component]
fn Transfer() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    let export = move |_| {
        let file = store::export(&ctx.saved.get_untracked());
        if let Err(why) = browser::download("rangefit-designs.json", "application/json", &file) {
            ctx.notify(NoticeKind::Error, "notice-export", format!("The designs were not exported: {why}."));
        }
    };
    let import = move |ev: leptos::ev::Event| {
        let input = event_target::<web_sys::HtmlInputElement>(&ev);
        leptos::task::spawn_local(async move {
            let read = browser::chosen_text(&input).await;
            input.set_value("");
            let result = read.and_then(|text| store::import(&mut LocalBackend::open(), &text, browser::now()));
            match result {
                Ok(got) => {
                    let n = got.added.len();
                    let already = match got.already {
                        0 => String::new(),
                        k => format!(" ({} already here)", plural(k, "design")),
                    };
                    ctx.notify(
                        NoticeKind::Info,
                        "notice-import",
                        format!("Imported {}{already}.", plural(n, "design")),
                    );
                }
                Err(why) => ctx.notify(NoticeKind::Error, "notice-import", format!("Nothing was imported: {why}.")),
            }
            saving::refresh_list(&ctx);
        });
    };
    view! {
        <div class="transfer">
            <button type="button" class="link" data-testid="export-designs" on:click=export
                disabled=move || ctx.saved.with(Vec::is_empty)>"Export (JSON)"</button>
            <input type="file" id="import-designs" class="sr-only" data-testid="import-designs"
                accept=".json,application/json" on:change=import/>
            <label class="link" for="import-designs">"Import (JSON)"</label>
        </div>
    }
}

/// The app as one HTML file for a computer without a network, with this page's address in
/// it so that its links open here too; on the file itself, what it is.
#[component]
fn OneFile() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    // One view for both cases (a second view type would cost the bundle more than the text).
    let on_file = browser::from_file();
    let (title, text) = if on_file {
        ("This file", "Rangefit in one file: it needs no network. Export designs to move them.")
    } else {
        (
            "Without a network",
            "This page works offline after a first visit. For a computer with no network: the whole app in one \
            HTML file.",
        )
    };
    let download = move |_| {
        leptos::task::spawn_local(async move {
            let made = browser::fetch_text(ONE_FILE).await.and_then(|html| {
                let home =
                    format!(r#"<meta name="rangefit-home" content="{}">"#, escape_attr(&browser::page_address()));
                browser::download("rangefit.html", "text/html", &html.replacen(HOME_META, &home, 1))
            });
            if let Err(why) = made {
                ctx.notify(NoticeKind::Error, "notice-one-file", format!("The one-file app was not made: {why}."));
            }
        });
    };
    view! {
        <section data-testid="one-file">
            <h2>{title}</h2>
            <p class="muted small">{text}</p>
            <button type="button" class="btn small" data-testid="download-app" hidden=on_file on:click=download>
                "Download the app (one file)"
            </button>
        </section>
    }
}

/// The one-file app beside the bundle (written by tools/bundle) and the empty `<meta>` in it
/// that receives the hosted app's address (`single::HOME_META` there).
const ONE_FILE: &str = "rangefit-offline.html";
const HOME_META: &str = r#"<meta name="rangefit-home" content="">"#;

/// Text for a double-quoted HTML attribute.
fn escape_attr(s: &str) -> String {
    s.replace('&', "&amp;").replace('"', "&quot;").replace('<', "&lt;").replace('>', "&gt;")
}

/// One saved design in the list, with its actions.
#[component]
fn SavedEntry<F>(
    saved: Saved, is_current: bool, renaming: RwSignal<Option<(String, String)>>, deleting: RwSignal<Option<String>>,
    rename_done: F,
) -> impl IntoView
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
                        on:input=move |ev| {
                            let t = event_target_value(&ev);
                            renaming.update(|r| if let Some((_, x)) = r { *x = t; });
                        }
                        on:keydown=move |ev| if ev.key() == "Escape" { renaming.set(None); }
                    />
                    <button type="submit" class="btn small primary" data-action="rename-ok">"Rename"</button>
                    <button type="button" class="btn small ghost" on:click=move |_| renaming.set(None)>"Cancel"</button>
                </form>
            }
            .into_any()
        } else {
            view! {
                <button type="button" class="saved-name" aria-current=if is_current { Some("true") } else { None }
                    data-action="open"
                    on:click=move |_| opening::request_open(&ctx, Open::Saved(id.get_value()))>
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
                        saving::refresh_list(&ctx);
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
                            ctx.notify(
                                NoticeKind::Error,
                                "notice-duplicate-error",
                                format!("The copy was not made: {why}"),
                            );
                        }
                        saving::refresh_list(&ctx);
                    }>"Duplicate"</button>
                    <button type="button" class="link danger" data-action="delete"
                        on:click=move |_| deleting.set(Some(id.get_value()))>"Delete"</button>
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
