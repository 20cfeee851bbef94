//! Browser tests of share links: a link copied from the page opens the same design in a
//! fresh browser profile, and so does a link made by the engine's `share::encode` (what
//! `rangefit link` prints); opening a link offers to save it and never overwrites a saved
//! design; malformed, truncated, future-version and hostile links show a clear message
//! while the page keeps working; a design named like markup is shown as text everywhere.
//!
//! Needs `dist/`, python3, chromedriver and Chromium; any of them missing fails the test.

use std::time::Duration;

use fantoccini::{Client, Locator};
use rangefit_engine::{cli, demos, share, Request};
use rangefit_tests::*;
use serde_json::{json, Value};

mod common;
use common::expected_rows;

const LIMIT: Duration = Duration::from_secs(30);

fn demo(i: usize) -> Request {
    Request::from_json(demos::ALL[i].json).expect("demo is valid")
}

/// What `rangefit open FRAGMENT` prints for a fragment, read back as a request.
fn cli_open(fragment: &str) -> Request {
    let out = cli::run(&["open".to_string(), fragment.to_string()], &|_| Err("no files".into()));
    assert_eq!(out.status, 0, "rangefit open: {}", out.stderr);
    Request::from_json(&out.stdout).expect("rangefit open prints a request")
}

async fn saved_names(client: &Client) -> Vec<String> {
    texts(client, "[data-testid='designs'] [data-action='open']").await
}

async fn notice(client: &Client, testid: &str) -> String {
    poll(client, testid, LIMIT, || async {
        let t = texts(client, &format!("[data-testid='{testid}'] p")).await.concat();
        (!t.is_empty()).then_some(t)
    })
    .await
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_link_opens_the_same_design_in_a_fresh_browser() {
    with_app(|env| async move {
        // Browser A edits a demo and copies its link.
        let a = env.open("").await;
        wait_for_parts(&a, "the first demo", &expected_rows(&demo(0))).await;
        click(&a, "step-sensor").await;
        type_into(&a, "name", "Pier 3 hydrophone, shared").await;
        type_into(&a, "source.max", "1.247 V").await;
        click(&a, "step-design").await;
        let link = poll(&a, "the share link of the edited design", LIMIT, || async {
            let v = by_testid(&a, "share-link").await.prop("value").await.ok().flatten().unwrap_or_default();
            let req = share::decode(&v).ok()?;
            (req.name == "Pier 3 hydrophone, shared" && req.source.max == 1.247).then_some(v)
        })
        .await;
        assert!(link.starts_with(env.url()), "the link points at this page: {link}");
        let fragment = link.split_once('#').map(|(_, f)| f.to_string()).expect("the link has a fragment");
        let req = cli_open(&fragment);
        assert_eq!(share::decode(&fragment).expect("decodes"), req, "the page's link is the command's format");
        let want = expected_rows(&req);
        wait_for_parts(&a, "browser A's part list", &want).await;
        click(&a, "copy-link").await;
        poll(&a, "the copy result", LIMIT, || async {
            (!texts(&a, ".copy-state").await.concat().is_empty()).then_some(())
        })
        .await;

        // Browser B, a fresh profile, opens it: same part list, offered to save, nothing stored yet.
        let b = env.open(&format!("#{fragment}")).await;
        wait_for_parts(&b, "the shared design in browser B", &want).await;
        assert_eq!(texts(&b, "[data-testid='design-name']").await, ["Pier 3 hydrophone, shared"]);
        let offer = notice(&b, "notice-link").await;
        assert!(offer.contains("not in your designs yet"), "{offer}");
        screenshot(&b, "link-opened").await;
        assert!(saved_names(&b).await.is_empty());
        assert_eq!(
            eval(&b, "return localStorage.getItem('rangefit:current');", vec![]).await,
            Value::Null,
            "an unedited link is not stored"
        );
        click(&b, "save-shared").await;
        poll(&b, "the shared design saved", LIMIT, || async {
            (saved_names(&b).await == ["Pier 3 hydrophone, shared"]).then_some(())
        })
        .await;
        assert!(texts(&b, "[data-testid='notice-link']").await.is_empty(), "the offer goes once saved");

        // A link made by the engine (as `rangefit link` prints it) opens in a fresh profile too.
        let third = demo(2);
        let c = env.open(&format!("#{}", share::encode(&third))).await;
        wait_for_parts(&c, "the engine-made link", &expected_rows(&third)).await;

        // A link opened where a design is saved never overwrites it: browser B opens another
        // link in the same tab, saves it, and the first saved design is unchanged.
        let before = eval(
            &b,
            "return localStorage.getItem(Object.keys(localStorage).find(k => \
            k.startsWith('rangefit:design:')));",
            vec![],
        )
        .await;
        let fourth = demo(3);
        eval(&b, "location.hash = arguments[0];", vec![json!(share::encode(&fourth))]).await;
        wait_for_parts(&b, "the second link in browser B", &expected_rows(&fourth)).await;
        click(&b, "save-design").await;
        poll(&b, "two saved designs", LIMIT, || async { (saved_names(&b).await.len() == 2).then_some(()) }).await;
        let mut names = saved_names(&b).await;
        names.sort();
        let mut want_names = vec!["Pier 3 hydrophone, shared".to_string(), fourth.name.clone()];
        want_names.sort();
        assert_eq!(names, want_names);
        let keys = eval(
            &b,
            "return Object.keys(localStorage).filter(k => k.startsWith('rangefit:design:')).map(k => \
            localStorage.getItem(k));",
            vec![],
        )
        .await;
        assert!(keys.as_array().is_some_and(|k| k.contains(&before)), "the first saved design is untouched");
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn bad_links_show_a_message_and_the_page_works() {
    let good = share::encode(&demo(1));
    // A request whose notes inflate past the engine's limit (a decompression bomb).
    let mut bomb = demo(1);
    bomb.notes = "0".repeat(share::MAX_INFLATED * 4);
    let cases: Vec<(&str, String)> = vec![
        ("not a link", "hello-there".to_string()),
        ("truncated", good[..good.len() / 2].to_string()),
        ("future version", format!("r9.{}", &good[3..])),
        ("damaged", "r1.!!!!".to_string()),
        ("too long", format!("r1.{}", "A".repeat(share::MAX_FRAGMENT + 10))),
        ("inflates too far", share::encode(&bomb)),
    ];
    with_app(move |env| async move {
        for (what, fragment) in cases {
            let engine_says = share::decode(&fragment).expect_err("the engine rejects it").message;
            let client = env.open(&format!("#{fragment}")).await;
            let shown = notice(&client, "notice-link-error").await;
            assert!(shown.contains(&engine_says), "{what}: the page says {shown:?}, the engine {engine_says:?}");
            assert!(shown.contains("Nothing was changed"), "{what}: {shown}");
            // The page works: the first demo is on show and a change redesigns it.
            wait_for_parts(&client, &format!("{what}: the first demo"), &expected_rows(&demo(0))).await;
            if what == "future version" {
                screenshot(&client, "link-error").await;
            }
            click(&client, "step-converter").await;
            type_into(&client, "destination.max", "3 V").await;
            let mut json: Value = serde_json::from_str(demos::ALL[0].json).expect("JSON");
            json["destination"]["max"] = json!("3 V");
            click(&client, "step-design").await;
            wait_for_parts(
                &client,
                &format!("{what}: the page still designs"),
                &expected_rows(&Request::from_value(&json).expect("valid")),
            )
            .await;
        }
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_design_named_like_markup_stays_text() {
    const NAME: &str = "<img src=x onerror=alert(1)>";
    const NOTES: &str = "<script>window.__pwned = 1</script><b>bold?</b>";
    const RENAMED: &str = "\"><svg onload=alert(2)>";
    let mut req = demo(0);
    req.name = NAME.to_string();
    req.notes = NOTES.to_string();
    let fragment = share::encode(&req);

    /// Nothing from the name or notes became markup, and no script ran.
    async fn clean(client: &Client) {
        let report = eval(
            client,
            "return {img: document.querySelectorAll('img').length, b: document.querySelectorAll('b').length, \
                handlers: document.querySelectorAll('[onerror],[onload]').length, pwned: typeof window.__pwned, svgs: \
                Array.from(document.querySelectorAll('svg')).filter(s => !s.closest(\"[data-testid='schematic'], \
                .plot-svg\")).length};",
            vec![],
        )
        .await;
        assert_eq!(
            report,
            json!({"img": 0, "b": 0, "handlers": 0, "pwned": "undefined", "svgs": 0}),
            "injected markup found"
        );
        assert!(client.get_alert_text().await.is_err(), "an alert is open");
    }

    with_app(move |env| async move {
        let client = env.open(&format!("#{fragment}")).await;
        wait_for_parts(&client, "the hostile design", &expected_rows(&req)).await;
        assert_eq!(texts(&client, "[data-testid='design-name']").await, [NAME]);
        assert_eq!(texts(&client, "[data-testid='current-name']").await, [NAME]);
        assert_eq!(texts(&client, ".design-notes").await, [NOTES]);
        let title = eval(
            &client,
            "return document.querySelector(\"[data-testid='schematic'] svg title\").textContent;",
            vec![],
        )
        .await;
        assert_eq!(title, json!(NAME), "the schematic's title is the name as text");
        assert!(texts(&client, "[data-testid='notice-link'] p").await.concat().contains(NAME));
        clean(&client).await;
        screenshot(&client, "hostile-name").await;

        click(&client, "save-design").await;
        poll(&client, "the hostile design saved", LIMIT, || async {
            (saved_names(&client).await == [NAME]).then_some(())
        })
        .await;
        client.refresh().await.expect("reload");
        poll(&client, "the saved list after reload", LIMIT, || async {
            (saved_names(&client).await == [NAME]).then_some(())
        })
        .await;
        wait_for_parts(&client, "the hostile design after reload", &expected_rows(&req)).await;
        assert_eq!(field_value(&client, "name").await, NAME);
        clean(&client).await;

        // Renamed through the page to another hostile string: still text.
        let entry =
            client.find(Locator::Css("[data-testid='design-entry'] [data-action='rename']")).await.expect("rename");
        entry.click().await.expect("click");
        by_testid(&client, "rename-input")
            .await
            .send_keys(&format!("\u{e009}a\u{e000}\u{e003}{RENAMED}\u{e007}"))
            .await
            .expect("type");
        poll(&client, "the renamed design", LIMIT, || async {
            (saved_names(&client).await == [RENAMED]).then_some(())
        })
        .await;
        poll(&client, "the name on show", LIMIT, || async {
            (texts(&client, "[data-testid='design-name']").await == [RENAMED]).then_some(())
        })
        .await;
        clean(&client).await;
    })
    .await;
}
