//! Opening designs: at start-up (a link in the address bar, else the design edited last
//! time, else the first demo), on request (a new design, a demo, a saved design, a link),
//! asking first when the design on show has unsaved changes, and when a link is pasted into
//! the address bar of an open page.

use leptos::prelude::*;
use rangefit_engine::{demos, share, Request};
use serde_json::Value;

use crate::browser::{self, LocalBackend};
use crate::field_table;
use crate::fields::Step;
use crate::form_load;
use crate::form_read;
use crate::saving;
use crate::state::{Ctx, NoticeKind, Open};
use crate::store;

/// Start-up: saved designs (migrating old ones), then a link, the last edited design or
/// the first demo.
pub fn start(ctx: &Ctx) {
    saving::refresh_list(ctx);
    let fragment = browser::fragment();
    let opened_link = !fragment.is_empty() && open_fragment(ctx, &fragment, false);
    if !opened_link {
        let mut b = LocalBackend::open();
        match store::read_working(&mut b) {
            Ok(Some(w)) => {
                let exists = w.saved_id.as_ref().is_some_and(|id| store::read(&b, id).is_ok());
                let values = form_load::from_json(&w.request);
                ctx.load(&values, if exists { w.saved_id.clone() } else { None }, false);
                let baseline = form_read::validate(&form_load::from_json(&w.baseline)).json;
                ctx.meta.update(|m| m.baseline = baseline);
                ctx.show_first_step();
            }
            Ok(None) => open(ctx, Open::Demo(0)),
            Err(why) => {
                ctx.notify(
                    NoticeKind::Error,
                    "notice-restore-error",
                    format!(
                        "The design you were editing last time could not be restored: {why}. \
                        An example is shown instead."
                    ),
                );
                open(ctx, Open::Demo(0));
            }
        }
        if !b.is_available() {
            ctx.notify(
                NoticeKind::Warning,
                "notice-no-storage",
                "This browser does not let the page store anything, so designs cannot be saved here. \
                Share links still work.",
            );
        }
    }
}

/// Opens a link pasted into the address bar of an open page.
pub fn follow_address_bar(ctx: Ctx) {
    let _ = window_event_listener(leptos::ev::hashchange, move |_| {
        let f = browser::fragment();
        if !f.is_empty() {
            open_fragment(&ctx, &f, true);
        }
    });
}

/// Opens `what`, or asks first when the design on show has unsaved changes.
pub fn request_open(ctx: &Ctx, what: Open) {
    if ctx.dirty.get_untracked() {
        ctx.pending.set(Some(what));
    } else {
        open(ctx, what);
    }
}

/// Opens `what` without asking.
pub fn open(ctx: &Ctx, what: Open) {
    ctx.sidebar_open.set(false);
    match what {
        Open::New => {
            ctx.load(&form_load::new_design(), None, false);
            ctx.step.set(Step::Sensor);
            let id = field_table::field("source.min").map(|f| f.input_id()).unwrap_or_default();
            request_animation_frame(move || browser::focus(&id));
        }
        Open::Demo(i) => {
            let Some(demo) = demos::ALL.get(i) else { return };
            let json: Value = serde_json::from_str(demo.json).unwrap_or(Value::Null);
            ctx.load(&form_load::from_json(&json), None, false);
            ctx.show_first_step();
        }
        Open::Saved(id) => {
            let b = LocalBackend::open();
            match store::read(&b, &id) {
                Ok(saved) => {
                    ctx.load(&form_load::from_json(&saved.request), Some(id), false);
                    ctx.show_first_step();
                }
                Err(why) => {
                    ctx.notify(NoticeKind::Error, "notice-open", format!("That saved design cannot be opened: {why}."));
                    saving::refresh_list(ctx);
                }
            }
        }
        Open::Link(req) => open_link(ctx, &req),
    }
}

fn open_link(ctx: &Ctx, req: &Request) {
    ctx.load(&form_load::from_request(req), None, true);
    ctx.step.set(Step::Design);
    ctx.notify_link(format!(
        "You opened a shared design, “{}”. It is not in your designs yet; nothing you saved has been changed.",
        req.name
    ));
}

/// Reads a link fragment; opens its design or says why it cannot.
fn open_fragment(ctx: &Ctx, fragment: &str, ask_first: bool) -> bool {
    match share::decode(fragment) {
        Ok(req) => {
            if ask_first {
                request_open(ctx, Open::Link(Box::new(req)));
            } else {
                open_link(ctx, &req);
            }
            true
        }
        Err(e) => {
            let end = if e.message.ends_with(['.', '?', '!']) { "" } else { "." };
            ctx.notify(
                NoticeKind::Error,
                "notice-link-error",
                format!(
                    "The link in the address bar could not be opened: {}{end} \
                    Nothing was changed; you can go on working.",
                    e.message
                ),
            );
            false
        }
    }
}
