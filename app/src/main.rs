//! Rangefit in the browser: a client-side page over `rangefit-engine`.
//! The page edits a request in four steps and shows what the engine returns; all
//! numerics live in the engine.

mod app;
mod browser;
mod design_view;
mod dom;
mod fields;
mod outputs;
mod steps;
mod store;

fn main() {
    console_error_panic_hook::set_once();
    browser::mark("rangefit:start");
    leptos::mount::mount_to_body(app::App);
}
