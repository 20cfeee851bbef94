//! Rangefit in the browser: a client-side page over `rangefit-engine`.
//! The page only edits requests and shows what the engine returns; all numerics
//! live in the engine.

mod app;
mod workbench;

fn main() {
    console_error_panic_hook::set_once();
    leptos::mount::mount_to_body(app::App);
}
