//! The engine run: a new design whenever the form reads as a new complete request (the
//! first of a page load without its Monte Carlo spread, which follows with the plots), the
//! plots drawn after the first paint, and the user-timing marks of the design on screen.

use std::sync::Arc;

use leptos::prelude::*;

use crate::browser;
use crate::outputs;
use crate::state::Ctx;

/// Runs the engine on every new complete request and marks the first design on screen.
pub fn run_on_change(ctx: Ctx) {
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
        let design = browser::timed("rangefit:design", || {
            if quick {
                outputs::run_design_quick(&req)
            } else {
                outputs::run_design(&req)
            }
        });
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
}
