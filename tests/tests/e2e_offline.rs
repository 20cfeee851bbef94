//! Browser tests of the app offline after a first visit, against the release bundle in
//! headless Chromium: the service worker caches exactly the files of the build; with the
//! server gone, a reload opens and designs; a damaged cache falls back to the network
//! silently; a new build is installed beside the running one, announced quietly, and
//! opened on the next visit without mixing files of the two builds; a storage quota the
//! worker cannot use leaves the page on the network without a word; the web app manifest
//! passes Chromium's own installability checks.
//!
//! Needs `dist/`, python3, chromedriver and Chromium; any of them missing fails the test.

use std::collections::BTreeMap;
use std::path::Path;
use std::time::Duration;

use fantoccini::Client;
use rangefit_bundle::worker;
use rangefit_engine::{demos, Request};
use rangefit_tests::*;
use serde_json::{json, Value};

mod common;
use common::expected_rows;

const LIMIT: Duration = Duration::from_secs(30);

fn demo(i: usize) -> Request {
    Request::from_json(demos::ALL[i].json).expect("demo is valid")
}

/// Cache Storage of the page: cache name → paths of the cached requests.
async fn cached(client: &Client) -> BTreeMap<String, Vec<String>> {
    let v = client
        .execute_async(
            "const done = arguments[arguments.length - 1];
             (async () => { const out = {}; for (const k of await caches.keys()) {
               out[k] = (await (await caches.open(k)).keys()).map(r => new URL(r.url).pathname).sort(); }
               return out; })().then(done, e => done(String(e)));",
            vec![],
        )
        .await
        .expect("read Cache Storage");
    serde_json::from_value(v.clone()).unwrap_or_else(|_| panic!("Cache Storage could not be read: {v}"))
}

/// The state of the service worker controlling the site ("activated", …), if any.
async fn worker_state(client: &Client) -> Option<String> {
    let v = client
        .execute_async(
            "const done = arguments[arguments.length - 1];
             navigator.serviceWorker.getRegistration()
               .then(r => done(r && r.active ? r.active.state : null), () => done(null));",
            vec![],
        )
        .await
        .expect("ask for the registration");
    v.as_str().map(str::to_string)
}

/// Waits until the worker is active and its cache is complete; returns the cache.
async fn wait_for_worker(client: &Client, dir: &Path) -> (String, Vec<String>) {
    let (version, files) = worker::plan(dir).expect("the served build has a worker plan");
    let want: Vec<String> = {
        let mut w: Vec<String> = files.iter().map(|f| format!("/{}", f.key)).collect();
        w.sort();
        w
    };
    poll(client, "the service worker to cache the build", LIMIT, || async {
        let active = worker_state(client).await.as_deref() == Some("activated");
        let caches = cached(client).await;
        (active && caches.get(&version) == Some(&want)).then_some(())
    })
    .await;
    (version, want)
}

async fn stylesheet(client: &Client) -> String {
    let v = eval(
        client,
        "const l = document.querySelector('link[rel=stylesheet]'); return l ? new URL(l.href).pathname : null;",
        vec![],
    )
    .await;
    v.as_str().unwrap_or_default().to_string()
}

async fn styled(client: &Client) -> bool {
    // The stylesheet sets the page's background (--paper, #f5f3ee); without it the body is transparent.
    eval(client, "return getComputedStyle(document.body).backgroundColor;", vec![]).await == json!("rgb(245, 243, 238)")
}

async fn error_notices(client: &Client) -> Vec<String> {
    texts(client, ".notice-error, .notice-warning").await
}

/// A copy of the built bundle in a directory of its own, for a test that changes it.
fn copy_of_dist(tag: &str) -> std::path::PathBuf {
    let site = temp_dir(tag);
    for entry in std::fs::read_dir(dist_dir()).expect("read dist") {
        let entry = entry.expect("dist entry");
        if entry.file_type().expect("type").is_file() {
            std::fs::copy(entry.path(), site.join(entry.file_name())).expect("copy a bundle file");
        }
    }
    site
}

/// Turns the bundle in `site` into another build: the stylesheet under a new name (same
/// content, so its integrity hash still holds) and a marker in the page; then the build's
/// finishing step again, as for a debug build (a new worker; no siblings, no one-file app).
fn next_build(site: &Path, old_css: &str) -> String {
    let new_css = "/rangefit-next-build.css".to_string();
    std::fs::rename(site.join(old_css.trim_start_matches('/')), site.join(new_css.trim_start_matches('/')))
        .expect("rename the stylesheet");
    let page = std::fs::read_to_string(site.join("index.html")).expect("read the page");
    assert!(page.contains(old_css), "the page links {old_css}");
    let page =
        page.replace(old_css, &new_css).replace("<head>", r#"<head><meta name="rangefit-build" content="next">"#);
    std::fs::write(site.join("index.html"), page).expect("write the page");
    rangefit_bundle::finish(site, &rangefit_bundle::Options { home: None, release: false }).expect("finish the build");
    new_css
}

async fn build_marker(client: &Client) -> Value {
    eval(client, "const m = document.querySelector('meta[name=rangefit-build]'); return m ? m.content : null;", vec![])
        .await
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn offline_reload_damaged_cache_and_the_next_build() {
    let site = copy_of_dist("offline");
    with_site(&site.clone(), |env| async move {
        let client = env.open("").await;
        let first = demo(0);
        wait_for_parts(&client, "the first demo", &expected_rows(&first)).await;
        let (version, files) = wait_for_worker(&client, env.dir()).await;
        assert!(files.iter().any(|f| f.ends_with(".wasm")) && files.iter().any(|f| f == "/"), "{files:?}");

        // The network gone: a reload opens the app, which designs an edited request.
        env.stop_server();
        client.refresh().await.expect("reload");
        goto_wait(&client).await;
        wait_for_parts(&client, "the first demo, offline after a reload", &expected_rows(&first)).await;
        assert!(styled(&client).await, "the stylesheet came from the cache");
        let mut edited: Value = serde_json::from_str(demos::ALL[0].json).expect("JSON");
        edited["source"]["max"] = json!("1.3 V");
        click(&client, "step-sensor").await;
        type_into(&client, "source.max", "1.3 V").await;
        click(&client, "step-design").await;
        let edited = Request::from_value(&edited).expect("valid");
        wait_for_parts(&client, "the edited design, offline", &expected_rows(&edited)).await;
        screenshot(&client, "offline-after-reload").await;

        // The next build on the server: this visit stays on its build (its stylesheet, gone
        // from the server, still comes from the cache) and says quietly that one is ready.
        env.restart_server();
        let old_css = stylesheet(&client).await;
        let new_css = next_build(env.dir(), &old_css);
        client.refresh().await.expect("reload");
        goto_wait(&client).await;
        let notice = poll(&client, "the notice about the new version", LIMIT, || async {
            let t = texts(&client, "[data-testid='notice-update']").await.concat();
            (!t.is_empty()).then_some(t)
        })
        .await;
        assert!(notice.contains("new version") && notice.contains("next visit"), "{notice}");
        assert!(
            texts(&client, ".notice-info[data-testid='notice-update']").await.len() == 1,
            "an information, not a warning"
        );
        assert_eq!(build_marker(&client).await, Value::Null, "still the build this visit started with");
        assert_eq!(stylesheet(&client).await, old_css);
        assert!(styled(&client).await, "the old build's stylesheet, from its cache");
        wait_for_parts(&client, "the design, old build", &expected_rows(&edited)).await;

        // The next visit (this tab closed, a new one opened): the new build, whole. The
        // browser switches builds once no tab shows the old one; a tab opened before that
        // moment still shows it, so the visit is repeated in a fresh tab until it lands.
        let url = env.url().to_string();
        let start = std::time::Instant::now();
        loop {
            let tab = client.new_window(true).await.expect("a new tab");
            client.close_window().await.expect("close the old tab");
            client.switch_to_window(tab.handle).await.expect("switch to the new tab");
            tokio::time::sleep(Duration::from_millis(300)).await;
            goto_app(&client, &url).await;
            if build_marker(&client).await == json!("next") {
                break;
            }
            assert!(start.elapsed() < LIMIT, "the next build did not open on a next visit within {LIMIT:?}");
        }
        assert_eq!(stylesheet(&client).await, new_css);
        assert!(styled(&client).await);
        wait_for_parts(&client, "the design, next build", &expected_rows(&edited)).await;
        let (next_version, next_files) = wait_for_worker(&client, env.dir()).await;
        assert_ne!(next_version, version);
        assert!(next_files.contains(&new_css) && !next_files.contains(&old_css), "{next_files:?}");
        let all = cached(&client).await;
        assert_eq!(all.keys().collect::<Vec<_>>(), [&next_version], "the old build's cache is gone");
        // A damaged cache (the page missing, the module cut short): the worker falls back to
        // the network and nothing is said.
        let damage = "const done = arguments[arguments.length - 1]; const [v, wasm] = arguments;
            caches.open(v).then(async c => { await c.delete('./');
              await c.put(wasm, new Response('broken', {headers: {'content-type': 'application/wasm'}})); })
            .then(() => done(true), e => done(String(e)));";
        let wasm =
            next_files.iter().find(|f| f.ends_with(".wasm")).expect("a module").trim_start_matches('/').to_string();
        let damaged =
            client.execute_async(damage, vec![json!(next_version), json!(wasm)]).await.expect("damage the cache");
        assert_eq!(damaged, json!(true));
        client.refresh().await.expect("reload");
        goto_wait(&client).await;
        wait_for_parts(&client, "the edited design from the network", &expected_rows(&edited)).await;
        assert_eq!(error_notices(&client).await, Vec::<String>::new(), "a damaged cache is not the user's problem");
    })
    .await;
    let _ = std::fs::remove_dir_all(&site);
}

/// After a reload: waits until the app has mounted.
async fn goto_wait(client: &Client) {
    let url = client.current_url().await.expect("current address").to_string();
    goto_app(client, &url).await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_quota_the_worker_cannot_use_leaves_the_page_on_the_network() {
    with_app(|env| async move {
        let client = env.session().await;
        let origin = env.url().trim_end_matches('/').to_string();
        // Chromium's quota for the site cut to 1 KB: the worker's cache cannot hold the build.
        cdp(&client, "Storage.overrideQuotaForOrigin", json!({"origin": origin, "quotaSize": 1000})).await;
        // Follow the worker the page registers, from its first state to its last.
        let watch = "const reg = ServiceWorkerContainer.prototype.register;
            ServiceWorkerContainer.prototype.register = function (...a) {
              const p = reg.apply(this, a);
              p.then(r => { const w = r.installing || r.waiting || r.active; window.__sw = w ? w.state : 'none';
                if (w) w.addEventListener('statechange', () => window.__sw = w.state); },
                e => window.__sw = 'refused ' + e);
              return p; };";
        cdp(&client, "Page.addScriptToEvaluateOnNewDocument", json!({"source": watch})).await;
        goto_app(&client, env.url()).await;
        wait_for_parts(&client, "the first demo", &expected_rows(&demo(0))).await;
        let state = poll(&client, "the worker's installation to end", LIMIT, || async {
            let s = eval(&client, "return window.__sw || null;", vec![]).await;
            s.as_str().filter(|s| *s == "redundant" || *s == "activated").map(str::to_string)
        })
        .await;
        assert_eq!(state, "redundant", "the worker could not cache the build, so it was not installed");
        assert_eq!(cached(&client).await, BTreeMap::new(), "no half-filled cache is left behind");
        assert_eq!(error_notices(&client).await, Vec::<String>::new(), "nothing is said about it");
        client.refresh().await.expect("reload");
        goto_wait(&client).await;
        wait_for_parts(&client, "the first demo again, from the network", &expected_rows(&demo(0))).await;
        assert_eq!(error_notices(&client).await, Vec::<String>::new());
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_manifest_makes_it_installable() {
    with_app(|env| async move {
        let client = env.open("").await;
        wait_for_parts(&client, "the first demo", &expected_rows(&demo(0))).await;
        wait_for_worker(&client, &dist_dir()).await;
        // Chromium's own reading of the manifest and its installability rules.
        let manifest = cdp(&client, "Page.getAppManifest", json!({})).await;
        assert_eq!(manifest["errors"], json!([]), "{manifest}");
        let data: Value = serde_json::from_str(manifest["data"].as_str().unwrap_or("{}")).expect("manifest JSON");
        assert_eq!(data["short_name"], "Rangefit");
        let errors = poll(&client, "Chromium's installability verdict", LIMIT, || async {
            let v = cdp(&client, "Page.getInstallabilityErrors", json!({})).await;
            let errors = v["installabilityErrors"].clone();
            (errors == json!([])).then_some(errors)
        })
        .await;
        assert_eq!(errors, json!([]));
    })
    .await;
}
