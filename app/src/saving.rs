//! Saving: the design on show into this browser's saved designs, the list of saved designs
//! read back (migrating entries from an earlier version), and the working copy kept on
//! every change so that a reload brings the design being edited back.

use leptos::prelude::*;

use crate::browser::{self, LocalBackend};
use crate::form_load;
use crate::state::{Ctx, Meta, NoticeKind};
use crate::store::{self, Working};

/// Saves the design on show: over its own saved entry, or as a new one.
pub fn save(ctx: &Ctx) -> bool {
    let mut b = LocalBackend::open();
    let json = ctx.validation.with_untracked(|v| v.json.clone());
    let meta = ctx.meta.get_untracked();
    let id =
        meta.saved_id.filter(|id| store::read(&b, id).is_ok()).unwrap_or_else(|| store::new_id(&b, browser::now()));
    let name = form_load::name_of(&json);
    match store::write(&mut b, &id, &json, browser::now()) {
        Ok(_) => {
            let meta = Meta { saved_id: Some(id), baseline: json.clone(), from_link: false };
            let working = Working { saved_id: meta.saved_id.clone(), baseline: json.clone(), request: json };
            let _ = store::write_working(&mut b, &working);
            ctx.meta.set(meta);
            ctx.dismiss("notice-link");
            ctx.dismiss("notice-save-error");
            browser::clear_fragment();
            refresh_list(ctx);
            ctx.notify(NoticeKind::Info, "notice-saved", format!("Saved “{name}” in this browser."));
            let ctx = *ctx;
            set_timeout(move || ctx.dismiss("notice-saved"), std::time::Duration::from_secs(5));
            true
        }
        Err(e) => {
            ctx.notify(NoticeKind::Error, "notice-save-error", format!("“{name}” was not saved: {}", e.message()));
            false
        }
    }
}

/// Reads the saved designs and the entries that cannot be opened into the page's state,
/// bringing entries from an earlier version up to date.
pub fn refresh_list(ctx: &Ctx) {
    let mut b = LocalBackend::open();
    let listing = store::list(&mut b);
    if !listing.migrated.is_empty() {
        let n = listing.migrated.len();
        ctx.notify(
            NoticeKind::Info,
            "notice-migrated",
            format!(
                "{n} saved design{} from an earlier version of Rangefit {} brought up to date.",
                if n == 1 { "" } else { "s" },
                if n == 1 { "was" } else { "were" }
            ),
        );
    }
    ctx.saved.set(listing.designs);
    ctx.problems.set(listing.problems);
}

/// Keeps the design being edited on every change, so a reload brings it back.
pub fn keep_working_copy(ctx: Ctx) {
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
            Err(e) => ctx
                .autosave_error
                .set(Some(format!("Your latest changes are not kept for the next visit: {}", e.message()))),
        }
    });
}
