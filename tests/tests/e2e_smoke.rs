//! Browser smoke test: the release bundle in `dist/` loads in headless Chromium and shows
//! the first demo's design; a bad request shows its error while the last design stays;
//! picking a demo and typing a request both redesign. What the page shows is compared
//! with the engine's own result for the same request, computed here on the host.
//!
//! Needs `dist/` (built by scripts/test.sh), python3, chromedriver and Chromium; any of
//! them missing fails the test.

use std::time::Duration;

use fantoccini::elements::Element;
use fantoccini::{Client, Locator};
use rangefit_engine::{demos, design, Request};
use rangefit_tests::{poll, texts, with_app_page};

const LOAD_LIMIT: Duration = Duration::from_secs(30);
const UPDATE_LIMIT: Duration = Duration::from_secs(15);

const PART_REFS: &str = "[data-testid='parts'] tbody tr > :first-child";
const DESIGN_NAME: &str = "[data-testid='design-name']";
const REQUEST_ERROR: &str = "[data-testid='request-error']";
const EDITOR: &str = "[data-testid='request-editor']";

/// What the page should show for a request: the design's name and its designators in order.
fn expected(json: &str) -> (String, Vec<String>) {
    let request = Request::from_json(json).unwrap_or_else(|e| panic!("demo request is valid: {e}"));
    let design = design(&request);
    let refs = design.parts.iter().map(|p| p.reference.clone()).collect();
    (design.name, refs)
}

/// Waits until the page shows the design `name` with part designators `refs`.
async fn wait_for_design(client: &Client, name: &str, refs: &[String]) {
    let what = format!("design '{name}' with parts {refs:?}");
    poll(client, &what, LOAD_LIMIT, || async {
        let shown_name = texts(client, DESIGN_NAME).await;
        let shown_refs = texts(client, PART_REFS).await;
        (shown_name == [name] && shown_refs == refs).then_some(())
    })
    .await;
}

async fn editor(client: &Client) -> Element {
    client.find(Locator::Css(EDITOR)).await.expect("request editor exists")
}

async fn editor_value(client: &Client) -> String {
    editor(client)
        .await
        .prop("value")
        .await
        .expect("read editor value")
        .expect("editor has a value")
}

fn same_json(a: &str, b: &str) -> bool {
    let a: serde_json::Value = serde_json::from_str(a).expect("editor text is JSON");
    let b: serde_json::Value = serde_json::from_str(b).expect("demo text is JSON");
    a == b
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn first_demo_loads_and_bad_request_keeps_design() {
    assert!(!demos::ALL.is_empty(), "the engine ships at least one demo");

    with_app_page(|client| async move {
        // The page opens on the first demo and shows the engine's design for it.
        let first = &demos::ALL[0];
        let (first_name, first_refs) = expected(first.json);
        assert!(
            first_refs.iter().any(|r| r.starts_with('R') || r.starts_with('U')),
            "the first demo's design has a resistor or amplifier: {first_refs:?}"
        );
        wait_for_design(&client, &first_name, &first_refs).await;

        let heading = client.find(Locator::Css("h1")).await.expect("page heading");
        assert_eq!(heading.text().await.expect("heading text"), "Rangefit");

        let checks = client
            .find(Locator::Css("[data-testid='checks']"))
            .await
            .expect("checks list is shown");
        assert!(checks.is_displayed().await.expect("checks visibility"));
        let check_items = texts(&client, "[data-testid='checks'] li").await;
        assert!(!check_items.is_empty(), "the first demo's checks are listed");

        let safety = texts(&client, "footer.safety").await.concat();
        assert!(safety.contains("isolation"), "safety note is shown, got {safety:?}");

        // One picker button per demo, labelled with its title.
        let buttons = texts(&client, "[data-testid='demo-picker'] button").await;
        let titles: Vec<&str> = demos::ALL.iter().map(|d| d.title).collect();
        assert_eq!(buttons, titles, "demo picker buttons");

        assert!(
            same_json(&editor_value(&client).await, first.json),
            "the editor should hold the first demo's request"
        );
        assert!(texts(&client, REQUEST_ERROR).await.is_empty(), "no request error at first");

        // A broken request shows an error and keeps the last design on show.
        let field = editor(&client).await;
        field.clear().await.expect("clear editor");
        field.send_keys("{\"source\": ").await.expect("type into editor");
        let error = poll(&client, "a request error message", UPDATE_LIMIT, || async {
            texts(&client, REQUEST_ERROR).await.into_iter().find(|t| !t.trim().is_empty())
        })
        .await;
        assert!(!error.trim().is_empty());
        assert_eq!(texts(&client, PART_REFS).await, first_refs, "the last part list stays");
        assert_eq!(texts(&client, DESIGN_NAME).await, [first_name.as_str()], "the last design stays");

        // Picking a demo loads its request, clears the error and shows its design.
        let last = demos::ALL.last().expect("at least one demo");
        let mut button = None;
        for candidate in client
            .find_all(Locator::Css("[data-testid='demo-picker'] button"))
            .await
            .expect("demo buttons")
        {
            if candidate.text().await.expect("button text") == last.title {
                button = Some(candidate);
            }
        }
        let button = button.unwrap_or_else(|| panic!("no demo button titled '{}'", last.title));
        button.click().await.expect("click demo button");

        let (last_name, last_refs) = expected(last.json);
        wait_for_design(&client, &last_name, &last_refs).await;
        assert!(texts(&client, REQUEST_ERROR).await.is_empty(), "picking a demo clears the error");
        assert!(
            same_json(&editor_value(&client).await, last.json),
            "picking '{}' should load its request into the editor",
            last.title
        );

        // Typing a whole valid request redesigns without any button.
        let mut renamed: serde_json::Value = serde_json::from_str(first.json).expect("demo is JSON");
        renamed["name"] = serde_json::Value::from("Typed in the smoke test");
        let typed = serde_json::to_string(&renamed).expect("serialise request");
        let (typed_name, typed_refs) = expected(&typed);
        assert_eq!(typed_name, "Typed in the smoke test");
        let field = editor(&client).await;
        field.clear().await.expect("clear editor");
        field.send_keys(&typed).await.expect("type a request");
        wait_for_design(&client, &typed_name, &typed_refs).await;
        assert!(texts(&client, REQUEST_ERROR).await.is_empty(), "a valid typed request shows no error");
    })
    .await;
}
