//! Browser tests of the app as one HTML file, opened from disk (`file://`) in headless
//! Chromium with nothing beside it: the hosted app's "download" action makes it with the
//! hosted address inside; it designs without fetching anything, keeps designs in the
//! file's own storage across a reload, makes links that open in the hosted app and in the
//! file (and opens the hosted app's links), and moves designs to the hosted app through an
//! exported JSON file. Without storage access it still designs and says it cannot save.
//!
//! Needs `dist/` (with `rangefit-offline.html`), python3, chromedriver and Chromium; any of
//! them missing fails the test.

use std::path::Path;
use std::time::Duration;

use fantoccini::{Client, Locator};
use rangefit_engine::{demos, Request};
use rangefit_tests::*;
use serde_json::{json, Value};

mod common;
use common::expected_rows;

const LIMIT: Duration = Duration::from_secs(30);

fn demo(i: usize) -> Request {
    Request::from_json(demos::ALL[i].json).expect("demo is valid")
}

/// Catches the files the page hands to the browser as downloads.
async fn catch_downloads(client: &Client) {
    eval(
        client,
        "window.__files = []; const make = URL.createObjectURL; URL.createObjectURL = function (b) { \
        window.__files.push(b); return make.call(URL, b); };",
        vec![],
    )
    .await;
}

/// The text of the `i`-th file the page handed over, once it is there.
async fn downloaded(client: &Client, i: usize) -> String {
    poll(client, &format!("download {i}"), LIMIT, || async {
        let got = client
            .execute_async(
                "const done = arguments[arguments.length - 1]; const f = (window.__files || \
                [])[arguments[0]]; if (!f) { done(null); } else { f.text().then(done); }",
                vec![json!(i)],
            )
            .await
            .expect("read the file");
        got.as_str().map(str::to_string)
    })
    .await
}

async fn saved_names(client: &Client) -> Vec<String> {
    texts(client, "[data-testid='designs'] [data-action='open']").await
}

async fn value_of(client: &Client, testid: &str) -> String {
    by_testid(client, testid).await.prop("value").await.expect("read value").unwrap_or_default()
}

/// Fills in a new design of our own scenario (a beehive scale's bridge amplifier output,
/// already a single-ended voltage) step by step and returns its request.
async fn new_design(client: &Client) -> Request {
    click(client, "new-design").await;
    type_into(client, "name", "Beehive scale, orchard row 3").await;
    type_into(client, "source.min", "0.4 V").await;
    type_into(client, "source.max", "2.1 V").await;
    type_into(client, "source.band_high", "2 Hz").await;
    click(client, "next-sensor").await;
    type_into(client, "destination.min", "0").await;
    type_into(client, "destination.max", "3.3 V").await;
    type_into(client, "destination.sample_rate", "50").await;
    click(client, "next-converter").await;
    type_into(client, "supplies", "3.3").await;
    click(client, "next-parts").await;
    let typed = json!({"name": "Beehive scale, orchard row 3",
        "source": {"min": "0.4 V", "max": "2.1 V", "band_high": "2 Hz"},
        "destination": {"min": 0, "max": "3.3 V", "sample_rate": 50},
        "supplies": [3.3]});
    Request::from_value(&typed).expect("valid request")
}

fn file_url(path: &Path) -> String {
    format!("file://{}", path.display())
}

/// What the page fetched besides inline data: nothing, for the one-file app.
async fn fetched(client: &Client) -> Value {
    eval(
        client,
        "return performance.getEntriesByType('resource').map(e => e.name).filter(n => !/^(data|blob):/.test(n));",
        vec![],
    )
    .await
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_one_file_app_from_disk_designs_keeps_links_and_moves_designs() {
    with_app(|env| async move {
        // The hosted app's action makes the file, with the hosted address inside.
        let hosted = env.open("").await;
        wait_for_parts(&hosted, "the first demo, hosted", &expected_rows(&demo(0))).await;
        catch_downloads(&hosted).await;
        click(&hosted, "download-app").await;
        let html = downloaded(&hosted, 0).await;
        assert!(
            html.contains(&format!(r#"<meta name="rangefit-home" content="{}">"#, env.url())),
            "the hosted address is inside"
        );
        let dir = temp_dir("one-file");
        let path = dir.join("rangefit.html");
        std::fs::write(&path, &html).expect("write the file");
        assert_eq!(std::fs::read_dir(&dir).expect("list").count(), 1, "nothing else beside it");

        // From disk: the first demo, then a new design, with nothing fetched.
        let local = env.session().await;
        goto_app(&local, &file_url(&path)).await;
        wait_for_parts(&local, "the first demo from the file", &expected_rows(&demo(0))).await;
        let req = new_design(&local).await;
        wait_for_parts(&local, "the new design from the file", &expected_rows(&req)).await;
        assert_eq!(fetched(&local).await, json!([]), "the file fetches nothing");
        screenshot(&local, "one-file-design").await;

        // Saved in the file's storage, there after a reload.
        click(&local, "save-design").await;
        poll(&local, "the saved design", LIMIT, || async {
            (saved_names(&local).await == [req.name.clone()]).then_some(())
        })
        .await;
        local.refresh().await.expect("reload");
        goto_app(&local, local.current_url().await.expect("address").as_ref()).await;
        assert_eq!(saved_names(&local).await, std::slice::from_ref(&req.name));
        wait_for_parts(&local, "the design after a reload", &expected_rows(&req)).await;

        // Its links: one into the hosted app, one into the file.
        let to_hosted = value_of(&local, "share-link").await;
        let to_file = value_of(&local, "file-link").await;
        assert!(to_hosted.starts_with(&format!("{}#", env.url())), "{to_hosted}");
        assert!(to_file.starts_with(&format!("{}#", file_url(&path))), "{to_file}");
        let other = env.open(&to_hosted[env.url().len()..]).await;
        wait_for_parts(&other, "the file's link in the hosted app", &expected_rows(&req)).await;
        let again = env.session().await;
        goto_app(&again, &to_file).await;
        wait_for_parts(&again, "the file's link in the file", &expected_rows(&req)).await;
        // And a link of the hosted app opens in the file.
        let boiler = demos::ALL[1].id;
        hosted
            .find(Locator::Css(&format!("[data-demo='{boiler}']")))
            .await
            .expect("demo button")
            .click()
            .await
            .expect("click");
        wait_for_parts(&hosted, "the second demo, hosted", &expected_rows(&demo(1))).await;
        let hosted_link = value_of(&hosted, "share-link").await;
        let fragment = hosted_link.split_once('#').expect("a fragment").1;
        goto_app(&again, &format!("{}#{fragment}", file_url(&path))).await;
        wait_for_parts(&again, "the hosted link in the file", &expected_rows(&demo(1))).await;

        // Export from the file, import into the hosted app.
        catch_downloads(&local).await;
        click(&local, "export-designs").await;
        let exported = downloaded(&local, 0).await;
        let file = dir.join("designs.json");
        std::fs::write(&file, &exported).expect("write the export");
        by_testid(&hosted, "import-designs")
            .await
            .send_keys(&file.display().to_string())
            .await
            .expect("choose the file");
        poll(&hosted, "the imported design in the hosted list", LIMIT, || async {
            (saved_names(&hosted).await == [req.name.clone()]).then_some(())
        })
        .await;
        assert_eq!(texts(&hosted, "[data-testid='notice-import'] p").await, ["Imported 1 design."]);
        hosted
            .find(Locator::Css("[data-testid='designs'] [data-action='open']"))
            .await
            .expect("entry")
            .click()
            .await
            .expect("open");
        wait_for_parts(&hosted, "the imported design, opened", &expected_rows(&req)).await;
        // The same file again adds nothing.
        by_testid(&hosted, "import-designs")
            .await
            .send_keys(&file.display().to_string())
            .await
            .expect("choose the file");
        poll(&hosted, "the second import's notice", LIMIT, || async {
            let t = texts(&hosted, "[data-testid='notice-import'] p").await.concat();
            (t == "Imported 0 designs (1 design already here).").then_some(())
        })
        .await;
        let _ = std::fs::remove_dir_all(&dir);
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_one_file_app_without_storage_still_designs_and_says_it_cannot_save() {
    with_app(|env| async move {
        // The file the build writes (no hosted address inside), alone in a directory.
        let dir = temp_dir("one-file-no-storage");
        let path = dir.join("rangefit.html");
        std::fs::copy(dist_dir().join("rangefit-offline.html"), &path).expect("copy the one-file app");
        // Chromium told to block site data, as a locked-down machine may be set up.
        let mut caps = chromium_capabilities();
        caps["goog:chromeOptions"]["prefs"] = json!({"profile.default_content_setting_values.cookies": 2});
        let client = env.session_with(caps).await;
        goto_app(&client, &file_url(&path)).await;
        let denied =
            eval(&client, "try { localStorage.length; return false; } catch (e) { return true; }", vec![]).await;
        assert_eq!(denied, json!(true), "storage is denied to the page");

        wait_for_parts(&client, "the first demo without storage", &expected_rows(&demo(0))).await;
        let warning = texts(&client, "[data-testid='notice-no-storage']").await.concat();
        assert!(warning.contains("cannot be saved"), "{warning}");
        let req = new_design(&client).await;
        wait_for_parts(&client, "a new design without storage", &expected_rows(&req)).await;
        click(&client, "save-design").await;
        let error = poll(&client, "the save error", LIMIT, || async {
            let t = texts(&client, "[data-testid='notice-save-error']").await.concat();
            (!t.is_empty()).then_some(t)
        })
        .await;
        assert!(error.contains("was not saved"), "{error}");
        // Its link is the file's own (it knows no hosted address).
        let link = value_of(&client, "share-link").await;
        assert!(link.starts_with(&format!("{}#", file_url(&path))), "{link}");
        let shown = by_testid(&client, "file-link").await.is_displayed().await.expect("displayed?");
        assert!(!shown, "no second link: the file knows no hosted address");
        screenshot(&client, "one-file-no-storage").await;
        let _ = std::fs::remove_dir_all(&dir);
    })
    .await;
}
