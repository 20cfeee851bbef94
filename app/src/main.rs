//! Rangefit in the browser: a client-side page over `rangefit-engine`.
//! The page edits a request in four steps and shows what the engine returns; all
//! numerics live in the engine.

mod app;
mod browser;
mod design_view;
mod designs_list;
mod dom;
mod engine_run;
mod field_table;
mod fields;
mod form_load;
mod form_read;
mod form_step;
mod opening;
mod outputs;
mod preview;
mod report_view;
mod saving;
mod state;
mod stepper;
mod store;

fn main() {
    console_error_panic_hook::set_once();
    browser::mark("rangefit:start");
    leptos::mount::mount_to_body(app::App);
}
