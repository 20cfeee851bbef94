//! Browser tests of the designs kept in the browser (local storage): save, reload and find
//! the design; rename, duplicate, delete, open; unsaved changes are never dropped without
//! asking; a hand-made format-0 entry is migrated, not dropped; a damaged entry loses only
//! itself and is reported; a full storage quota is reported.
//!
//! Needs `dist/`, python3, chromedriver and Chromium; any of them missing fails the test.

use std::time::Duration;

use fantoccini::{Client, Locator};
use rangefit_engine::{demos, Request};
use rangefit_tests::*;
use serde_json::{json, Value};

mod common;
use common::expected_rows;

const LIMIT: Duration = Duration::from_secs(30);

fn demo_json(i: usize) -> Value {
    serde_json::from_str(demos::ALL[i].json).expect("demo is JSON")
}

async fn saved_names(client: &Client) -> Vec<String> {
    texts(client, "[data-testid='designs'] [data-action='open']").await
}

async fn wait_for_saved(client: &Client, names: &[&str]) {
    let want: Vec<String> = names.iter().map(|s| s.to_string()).collect();
    poll(client, &format!("saved designs {want:?}"), LIMIT, || async {
        (saved_names(client).await == want).then_some(())
    })
    .await;
}

/// Clicks the action button `action` of the saved design named `name`.
async fn entry_action(client: &Client, name: &str, action: &str) {
    for entry in client.find_all(Locator::Css("[data-testid='design-entry']")).await.expect("entries") {
        let open = entry.find(Locator::Css("[data-action='open']")).await;
        if let Ok(open) = open {
            if open.text().await.unwrap_or_default() == name {
                entry
                    .find(Locator::Css(&format!("[data-action='{action}']")))
                    .await
                    .expect("action button")
                    .click()
                    .await
                    .expect("click action");
                return;
            }
        }
    }
    panic!("no saved design named {name:?}");
}

async fn stored(client: &Client, key: &str) -> Value {
    let text = eval(client, "return localStorage.getItem(arguments[0]);", vec![json!(key)]).await;
    match text.as_str() {
        Some(t) => serde_json::from_str(t).unwrap_or(Value::String(t.to_string())),
        None => Value::Null,
    }
}

async fn reload(client: &Client) {
    client.refresh().await.expect("reload");
    poll(client, "the app after reload", LIMIT, || async {
        client.find(Locator::Css("[data-testid='step-sensor']")).await.ok().map(|_| ())
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn save_reload_rename_duplicate_delete_open() {
    with_app(|env| async move {
        let client = env.open("").await;
        let first: Request = Request::from_value(&demo_json(0)).expect("valid");
        wait_for_parts(&client, "the first demo", &expected_rows(&first)).await;
        assert!(saved_names(&client).await.is_empty());
        assert_eq!(texts(&client, "[data-testid='save-status']").await, ["Not saved yet"]);

        click(&client, "save-design").await;
        wait_for_saved(&client, &[first.name.as_str()]).await;
        assert_eq!(texts(&client, "[data-testid='save-status']").await, ["Saved"]);

        // Edit, then save again: the same entry is updated, not a second one made.
        click(&client, "step-sensor").await;
        type_into(&client, "name", "Pier 7 hydrophone").await;
        poll(&client, "the unsaved mark", LIMIT, || async {
            (texts(&client, "[data-testid='save-status']").await == ["Unsaved changes"]).then_some(())
        })
        .await;
        click(&client, "save-design").await;
        wait_for_saved(&client, &["Pier 7 hydrophone"]).await;

        // A reload brings back the list and the design being edited.
        type_into(&client, "source.max", "1.26 V").await;
        let mut edited = demo_json(0);
        edited["name"] = json!("Pier 7 hydrophone");
        edited["source"]["max"] = json!("1.26 V");
        let edited_rows = expected_rows(&Request::from_value(&edited).expect("valid"));
        wait_for_parts(&client, "the edited design", &edited_rows).await;
        reload(&client).await;
        wait_for_saved(&client, &["Pier 7 hydrophone"]).await;
        wait_for_parts(&client, "the edited design after reload", &edited_rows).await;
        assert_eq!(texts(&client, "[data-testid='current-name']").await, ["Pier 7 hydrophone"]);
        assert_eq!(
            texts(&client, "[data-testid='save-status']").await,
            ["Unsaved changes"],
            "the unsaved edit is still marked as such"
        );
        screenshot(&client, "saved-after-reload").await;

        // Opening another design with unsaved changes asks first.
        click(&client, "new-design").await;
        by_testid(&client, "confirm-discard").await;
        screenshot(&client, "confirm-unsaved").await;
        click(&client, "confirm-discard-yes").await;
        poll(&client, "the new design", LIMIT, || async {
            (texts(&client, "[data-testid='current-name']").await == ["New design"]).then_some(())
        })
        .await;

        // Open the saved design from the list: its saved state, without the discarded edit.
        entry_action(&client, "Pier 7 hydrophone", "open").await;
        let mut saved = demo_json(0);
        saved["name"] = json!("Pier 7 hydrophone");
        wait_for_parts(&client, "the saved design", &expected_rows(&Request::from_value(&saved).expect("valid"))).await;
        assert_eq!(texts(&client, "[data-testid='save-status']").await, ["Saved"]);

        // Duplicate, rename the copy, delete it.
        entry_action(&client, "Pier 7 hydrophone", "duplicate").await;
        wait_for_saved(&client, &["Pier 7 hydrophone (copy)", "Pier 7 hydrophone"]).await;
        entry_action(&client, "Pier 7 hydrophone (copy)", "rename").await;
        let input = by_testid(&client, "rename-input").await;
        input.send_keys("\u{e009}a\u{e000}\u{e003}Spare for the lab\u{e007}").await.expect("type the new name");
        wait_for_saved(&client, &["Spare for the lab", "Pier 7 hydrophone"]).await;
        screenshot(&client, "saved-list").await;
        entry_action(&client, "Spare for the lab", "delete").await;
        client
            .find(Locator::Css("[data-action='confirm-delete']"))
            .await
            .expect("confirm")
            .click()
            .await
            .expect("click");
        wait_for_saved(&client, &["Pier 7 hydrophone"]).await;

        // Renaming the open design renames what is on show, without marking it unsaved.
        entry_action(&client, "Pier 7 hydrophone", "rename").await;
        by_testid(&client, "rename-input")
            .await
            .send_keys("\u{e009}a\u{e000}\u{e003}Pier 8 hydrophone\u{e007}")
            .await
            .expect("type");
        wait_for_saved(&client, &["Pier 8 hydrophone"]).await;
        poll(&client, "the new name on show", LIMIT, || async {
            (texts(&client, "[data-testid='current-name']").await == ["Pier 8 hydrophone"]).then_some(())
        })
        .await;
        assert_eq!(texts(&client, "[data-testid='save-status']").await, ["Saved"]);
        reload(&client).await;
        wait_for_saved(&client, &["Pier 8 hydrophone"]).await;
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_version_0_entry_is_migrated_and_a_damaged_one_reported() {
    with_app(|env| async move {
        let client = env.open("").await;
        wait_for_parts(
            &client,
            "the first demo",
            &expected_rows(&Request::from_json(demos::ALL[0].json).expect("valid")),
        )
        .await;

        // Hand-made entries: one in format 0 (a title and the request as text, no format
        // number), one damaged, one from a future format.
        let v0 = json!({"title": "Legacy boiler tap", "text": demos::ALL[1].json}).to_string();
        eval(
            &client,
            "localStorage.setItem('rangefit:design:legacy', arguments[0]); \
            localStorage.setItem('rangefit:design:broken', '{\"format\": 1, \"request\": {'); \
            localStorage.setItem('rangefit:design:future', JSON.stringify({format: 9, request: {}}));",
            vec![json!(v0)],
        )
        .await;
        reload(&client).await;

        wait_for_saved(&client, &["Legacy boiler tap"]).await;
        let migrated = texts(&client, "[data-testid='notice-migrated'] p").await.concat();
        assert!(migrated.contains("1 saved design"), "the migration is reported: {migrated:?}");
        let entry = stored(&client, "rangefit:design:legacy").await;
        assert_eq!(entry["format"], json!(1), "written back in the current format");
        let mut want = demo_json(1);
        want["name"] = json!("Legacy boiler tap");
        assert_eq!(entry["request"], want);

        let problems = texts(&client, "[data-testid='storage-problems'] li").await;
        assert_eq!(problems.len(), 2, "{problems:?}");
        assert!(
            problems[0].contains("rangefit:design:broken") && problems[0].contains("not valid JSON"),
            "{problems:?}"
        );
        assert!(
            problems[1].contains("rangefit:design:future") && problems[1].contains("newer version"),
            "{problems:?}"
        );
        assert!(
            stored(&client, "rangefit:design:broken").await.is_string(),
            "a damaged entry is not deleted behind \
            the user's back"
        );
        screenshot(&client, "storage-problems").await;

        // The migrated design opens and designs like the original request.
        entry_action(&client, "Legacy boiler tap", "open").await;
        wait_for_parts(&client, "the migrated design", &expected_rows(&Request::from_value(&want).expect("valid")))
            .await;

        // The user removes the damaged entry; the others stay.
        let remove =
            client.find(Locator::Css("[data-testid='storage-problems'] li button")).await.expect("remove button");
        remove.click().await.expect("click");
        poll(&client, "one problem left", LIMIT, || async {
            (texts(&client, "[data-testid='storage-problems'] li").await.len() == 1).then_some(())
        })
        .await;
        assert!(stored(&client, "rangefit:design:broken").await.is_null());
        assert!(!stored(&client, "rangefit:design:future").await.is_null());
        wait_for_saved(&client, &["Legacy boiler tap"]).await;

        // A damaged working copy: reported, and the first demo opens instead.
        eval(&client, "localStorage.setItem('rangefit:current', 'not JSON at all');", vec![]).await;
        reload(&client).await;
        let notice = poll(&client, "the restore notice", LIMIT, || async {
            let t = texts(&client, "[data-testid='notice-restore-error'] p").await.concat();
            (!t.is_empty()).then_some(t)
        })
        .await;
        assert!(notice.contains("could not be restored"), "{notice}");
        wait_for_parts(
            &client,
            "the first demo instead",
            &expected_rows(&Request::from_json(demos::ALL[0].json).expect("valid")),
        )
        .await;
        wait_for_saved(&client, &["Legacy boiler tap"]).await;
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_full_storage_quota_is_reported() {
    with_app(|env| async move {
        let client = env.open("").await;
        wait_for_parts(
            &client,
            "the first demo",
            &expected_rows(&Request::from_json(demos::ALL[0].json).expect("valid")),
        )
        .await;

        // Fill the origin's storage with filler until the browser refuses more.
        let filled = eval(
            &client,
            "let n = 0; for (let size = 1 << 20; size >= 16; size >>= 1) { const chunk = 'x'.repeat(size); while \
                (true) { try { localStorage.setItem('filler' + n, chunk); n++; } catch (e) { if (e.name !== \
                'QuotaExceededError') { return 'unexpected ' + e.name; } break; } } } return n;",
            vec![],
        )
        .await;
        assert!(filled.as_u64().is_some_and(|n| n > 0), "storage filled: {filled}");

        click(&client, "save-design").await;
        let message = poll(&client, "the save error", LIMIT, || async {
            let t = texts(&client, "[data-testid='notice-save-error'] p").await.concat();
            (!t.is_empty()).then_some(t)
        })
        .await;
        assert!(message.contains("was not saved") && message.contains("full"), "{message}");
        assert!(saved_names(&client).await.is_empty(), "nothing claims to be saved");
        assert_eq!(texts(&client, "[data-testid='save-status']").await, ["Not saved yet"]);

        // Editing cannot be kept for the next visit either, and the page says so.
        click(&client, "step-sensor").await;
        // A long note, as if pasted: the working copy outgrows what is left.
        eval(
            &client,
            "const e = document.querySelector(\"[data-testid='field-notes']\"); e.value = 'A long note \
            pasted in. '.repeat(200); e.dispatchEvent(new Event('input', {bubbles: true}));",
            vec![],
        )
        .await;
        let autosave = poll(&client, "the autosave notice", LIMIT, || async {
            let t = texts(&client, "[data-testid='notice-autosave']").await.concat();
            (!t.is_empty()).then_some(t)
        })
        .await;
        assert!(autosave.contains("full"), "{autosave}");
        screenshot(&client, "storage-full").await;

        // Room again: saving works and the notices clear.
        eval(
            &client,
            "Object.keys(localStorage).filter(k => k.startsWith('filler')).forEach(k => \
            localStorage.removeItem(k));",
            vec![],
        )
        .await;
        click(&client, "save-design").await;
        wait_for_saved(&client, &[Request::from_json(demos::ALL[0].json).expect("valid").name.as_str()]).await;
        type_into(&client, "notes", "Room again.").await;
        poll(&client, "the autosave notice to clear", LIMIT, || async {
            texts(&client, "[data-testid='notice-autosave']").await.is_empty().then_some(())
        })
        .await;
    })
    .await;
}
