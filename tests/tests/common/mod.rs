//! Helpers shared by the browser tests that need the engine.

use rangefit_engine::bom::bom;
use rangefit_engine::{design, Request};

/// The part list the page must show for `req`: one row per line of the engine's part list.
pub fn expected_rows(req: &Request) -> Vec<Vec<String>> {
    bom(&design(req))
        .into_iter()
        .map(|r| {
            vec![
                r.designators.join(" "),
                r.quantity.to_string(),
                r.kind,
                r.value,
                r.tolerance,
                r.rating,
                r.construction,
                r.notes,
            ]
        })
        .collect()
}
