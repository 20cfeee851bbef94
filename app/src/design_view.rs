//! The design step: the panel with its note when the form has moved on from the design on
//! show, the read-only report (see [`crate::report_view`]), the toolbar (downloads, print,
//! the share link) as a Leptos view, and the analysis plots filled in once they are drawn.
//! Everything shown comes from the engine.

use std::sync::Arc;

use leptos::prelude::*;

use crate::browser;
use crate::dom::{el, el_c};
use crate::fields::Step;
use crate::outputs::{self, Export, Shown};
use crate::report_view::{body_node, head_node};
use crate::state::{go, step_of, Ctx, NoticeKind};

/// The design step's panel.
#[component]
pub fn DesignStep() -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    let stale = move || {
        ctx.validation.with(|v| {
            if v.is_complete() {
                return None;
            }
            let (step, what) = if let Some((path, _)) = v.errors.iter().next() {
                (step_of(path), "has a value with a problem")
            } else {
                (v.missing.first().map(|p| step_of(p)).unwrap_or(Step::Sensor), "is missing a value")
            };
            Some(view! {
                <p class="stale-note" data-testid="stale-note">
                    {format!("Step {} ({}) {what}; this is the last good design. ", step.number(), step.title())}
                    <button type="button" class="link" on:click=move |_| go(ctx, step, true)>"Go there"</button>
                </p>
            })
        })
    };
    let head = NodeRef::<leptos::html::Div>::new();
    let body = NodeRef::<leptos::html::Div>::new();
    Effect::new(move |_| {
        let shown = ctx.shown.get();
        if let (Some(h), Some(b)) = (head.get(), body.get()) {
            match &shown {
                Some(s) => {
                    head_node(s).replace_contents_of(&h);
                    body_node(s).replace_contents_of(&b);
                    fill_plots(ctx);
                }
                None => {
                    el_c("p", "empty")
                        .text("No design yet: complete the request in the first three steps.")
                        .replace_contents_of(&h);
                    b.set_text_content(None);
                }
            }
        }
    });
    Effect::new(move |_| {
        ctx.plots.track();
        fill_plots(ctx);
    });
    view! {
        <section class="panel design-panel" role="tabpanel" id="panel-design" aria-labelledby="tab-design"
            hidden=move || ctx.step.get() != Step::Design>
            {stale}
            <div class="design-body" data-testid="design">
                <div node_ref=head></div>
                {move || ctx.shown.get().map(|s| view! { <Toolbar shown=s/> })}
                <div node_ref=body></div>
            </div>
        </section>
    }
}

/// Fills the plots area with the plots of the design on show, once they are drawn.
fn fill_plots(ctx: Ctx) {
    let serial = ctx.shown.with_untracked(|s| s.as_ref().map(|s| s.serial));
    let Some(host) = document().get_element_by_id("plots") else { return };
    let Some(plots) =
        ctx.plots.with_untracked(|p| p.as_ref().filter(|(n, _)| Some(*n) == serial).map(|(_, p)| p.clone()))
    else {
        return;
    };
    el("div")
        .attr("class", "plots-inner")
        .children(plots.iter().map(|p| {
            match &p.svg {
                Some(svg) => el_c("figure", "plot")
                    .attr("data-testid", &format!("plot-{}", p.id))
                    .child(el_c("div", "plot-svg").attr("role", "img").attr("aria-label", p.title).svg(svg))
                    .child(el("figcaption").text(p.title)),
                None => el_c("p", "empty")
                    .attr("data-testid", &format!("plot-{}", p.id))
                    .text(&format!("{}: not available, the design has no circuit to analyse.", p.title)),
            }
        }))
        .replace_contents_of(&host);
    static MARKED: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);
    if !MARKED.swap(true, std::sync::atomic::Ordering::Relaxed) {
        browser::mark("rangefit:plots-shown");
    }
}

/// Downloads, print and the share link of the design on show.
#[component]
fn Toolbar(shown: Arc<Shown>) -> impl IntoView {
    let ctx = expect_context::<Ctx>();
    // The one-file app links to the hosted app when it knows its address, and to itself.
    let here = format!("{}#{}", browser::page_address(), shown.fragment);
    let (link, file_link) = match browser::home().filter(|_| browser::from_file()) {
        Some(home) => (format!("{home}#{}", shown.fragment), Some(here)),
        None => (here, None),
    };
    let copied: RwSignal<Option<bool>> = RwSignal::new(None);
    let has_circuit = shown.design.circuit.is_some();
    let stored = StoredValue::new(shown);
    let buttons = Export::ALL
        .into_iter()
        .map(|export| {
            view! {
                <button type="button" class="btn" data-testid=format!("download-{}", export.id())
                    disabled=!has_circuit && export != Export::Report
                    on:click=move |_| {
                        let file = stored.with_value(|s| outputs::download(s, export));
                        let result = match file {
                            Some(f) => browser::download(&f.file_name, f.mime, &f.content),
                            None => Err("the design has no circuit".into()),
                        };
                        if let Err(why) = result {
                            ctx.notify(
                                NoticeKind::Error,
                                "notice-download-error",
                                format!("The file could not be made: {why}."),
                            );
                        }
                    }>
                    {export.label()}
                </button>
            }
        })
        .collect_view();
    let link_for_copy = link.clone();
    let no_file_link = file_link.is_none();
    view! {
        <div class="toolbar">
            <div class="downloads" role="group" aria-label="Downloads">
                <span class="toolbar-label">"Download"</span>
                {buttons}
                <button type="button" class="btn ghost" on:click=|_| browser::print()>"Print"</button>
            </div>
            <div class="share">
                <label class="toolbar-label" for="share-link">"Share link"</label>
                <input id="share-link" type="text" readonly data-testid="share-link" prop:value=link.clone()
                    on:focus=|ev| { event_target::<web_sys::HtmlInputElement>(&ev).select(); } />
                <button type="button" class="btn" data-testid="copy-link" on:click=move |_| {
                    browser::copy_text(&link_for_copy, move |ok| copied.set(Some(ok)));
                }>"Copy link"</button>
                <span class="share-file" hidden=no_file_link>
                    <label class="toolbar-label" for="file-link">"In this file"</label>
                    <input id="file-link" type="text" readonly data-testid="file-link"
                        prop:value=file_link.unwrap_or_default() />
                </span>
                <span class="copy-state" role="status">
                    {move || match copied.get() {
                        Some(true) => "Copied.",
                        Some(false) => "Copying is blocked here: select the link and press Ctrl+C.",
                        None => "",
                    }}
                </span>
            </div>
        </div>
    }
}
