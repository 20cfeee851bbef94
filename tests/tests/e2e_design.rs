//! Browser tests of the design flow, against the release bundle in `dist/` in headless
//! Chromium: the first visit shows a demo; a new design filled in step by step shows the
//! schematic and the part list the engine computes for the same request (computed here on
//! the host); changing a field changes the design; a bad value shows its message under the
//! field while the page keeps the last good design; the steps work from the keyboard;
//! downloads equal the command's output; the page keeps working offline; tablet layout;
//! print styles; load and refresh times.
//!
//! Screenshots land in `target/e2e/`, measured times in `target/e2e/figures.txt`.
//! Needs `dist/`, python3, chromedriver and Chromium; any of them missing fails the test.

use std::time::Duration;

use fantoccini::{Client, Locator};
use rangefit_engine::bom::{bom, to_csv};
use rangefit_engine::draw::schematic::{of_design, SchematicConfig};
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::request::AMPLIFIER_FIGURES;
use rangefit_engine::units::{self, Quantity};
use rangefit_engine::{demos, design, Request};
use rangefit_tests::*;
use serde_json::{json, Value};

mod common;
use common::expected_rows;

const LIMIT: Duration = Duration::from_secs(30);

fn request(json: &Value) -> Request {
    Request::from_value(json).unwrap_or_else(|e| panic!("test request is valid: {e}"))
}

fn demo(i: usize) -> Request {
    Request::from_json(demos::ALL[i].json).expect("demo is valid")
}

async fn selected_step(client: &Client) -> String {
    texts(client, "[role='tab'][aria-selected='true'] .step-title").await.concat()
}

async fn go_to(client: &Client, step: &str) {
    click(client, &format!("step-{step}")).await;
    let want = format!("step-{step}");
    poll(client, &format!("step {step} to open"), LIMIT, || async {
        let v = eval(
            client,
            "const t = document.querySelector(\"[role='tab'][aria-selected='true']\"); return t ? \
            t.dataset.testid : null;",
            vec![],
        )
        .await;
        (v.as_str() == Some(want.as_str())).then_some(())
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn first_visit_then_a_new_design_step_by_step() {
    with_app(|env| async move {
        let client = env.open("").await;

        // First visit: the first demo, designed, with everything the design view holds.
        let first = demo(0);
        wait_for_parts(&client, "the first demo's part list", &expected_rows(&first)).await;
        assert_eq!(texts(&client, "[data-testid='design-name']").await, std::slice::from_ref(&first.name));
        assert_eq!(texts(&client, "h1").await, ["Rangefit"]);
        assert_eq!(selected_step(&client).await, "The design");
        let shown = poll(&client, "the design-shown mark", LIMIT, || async {
            timings(&client, "rangefit:design-shown").await.first().copied()
        })
        .await;
        let plotted = poll(&client, "the plots-shown mark", LIMIT, || async {
            timings(&client, "rangefit:plots-shown").await.first().copied()
        })
        .await;
        let started = timings(&client, "rangefit:start").await.first().copied().unwrap_or((f64::NAN, 0.0));
        let run = timings(&client, "rangefit:design").await.first().copied().unwrap_or((f64::NAN, f64::NAN));
        let drawn = timings(&client, "rangefit:outputs").await.first().copied().unwrap_or((f64::NAN, f64::NAN));
        record_figure(&format!(
            "first load: app started {:.0} ms, engine run {:.0} ms from {:.0} ms, drawing {:.0} ms, design shown \
                {:.0} ms, plots shown {:.0} ms after navigation",
            started.0, run.1, run.0, drawn.1, shown.0, plotted.0
        ));
        // Budget 300 ms on loopback; asserted generously so a loaded machine does not fail it.
        assert!(shown.0 < 3000.0, "first design shown after {:.0} ms", shown.0);

        let checks = texts(&client, "[data-testid='checks'] li").await;
        assert_eq!(checks.len(), design(&first).checks.len(), "one line per check");
        assert!(texts(&client, "[data-testid='cautions'] li").await.len() >= 3, "safety cautions are listed");
        for plot in ["response", "transfer", "tolerance", "noise"] {
            let css = format!("[data-testid='plot-{plot}'] svg");
            poll(&client, &format!("plot {plot}"), LIMIT, || async {
                client.find(Locator::Css(&css)).await.ok().map(|_| ())
            })
            .await;
        }
        let mc = texts(&client, "[data-testid='monte-carlo']").await.concat();
        assert_eq!(mc, format!("{} builds, seed {}", first.analysis.monte_carlo_runs, first.analysis.seed));
        assert_eq!(texts(&client, "[data-testid='amp-class']").await, [design(&first).amplifier.class]);
        screenshot(&client, "design-1280x800").await;

        // A new design: every step reachable but the design, which waits for a complete request.
        click(&client, "new-design").await;
        poll(&client, "an empty part list", LIMIT, || async { part_rows(&client).await.is_empty().then_some(()) })
            .await;
        assert_eq!(selected_step(&client).await, "The sensor");
        let disabled = by_testid(&client, "step-design").await.attr("aria-disabled").await.expect("attr");
        assert_eq!(disabled.as_deref(), Some("true"), "the design step waits for a complete request");
        assert_eq!(field_value(&client, "destination.bits").await, "12", "defaults are visible");
        assert_eq!(field_value(&client, "destination.headroom").await, "5 %");
        assert_eq!(field_value(&client, "parts.resistor_series").await, "E24");
        screenshot(&client, "step-sensor-new").await;

        type_into(&client, "name", "Greenhouse humidity probe").await;
        type_into(&client, "source.min", "0.2 V").await;
        type_into(&client, "source.max", "2.8V").await;
        type_into(&client, "source.band_high", "5 Hz").await;
        screenshot(&client, "step-sensor-filled").await;
        click(&client, "next-sensor").await;
        assert_eq!(selected_step(&client).await, "The converter input");
        type_into(&client, "destination.min", "0").await;
        type_into(&client, "destination.max", "3.3 V").await;
        type_into(&client, "destination.sample_rate", "200").await;
        screenshot(&client, "step-converter").await;
        click(&client, "next-converter").await;
        assert_eq!(selected_step(&client).await, "Power and parts");
        type_into(&client, "supplies", "3.3").await;
        screenshot(&client, "step-parts").await;

        let typed = json!({"name": "Greenhouse humidity probe",
            "source": {"min": "0.2 V", "max": "2.8 V", "band_high": "5 Hz"},
            "destination": {"min": 0, "max": "3.3 V", "sample_rate": 200},
            "supplies": [3.3]});
        let want = expected_rows(&request(&typed));
        assert!(!want.is_empty());
        click(&client, "next-parts").await;
        assert_eq!(selected_step(&client).await, "The design");
        wait_for_parts(&client, "the new design's part list", &want).await;
        assert_eq!(texts(&client, "[data-testid='design-name']").await, ["Greenhouse humidity probe"]);
        let title = eval(
            &client,
            "const t = document.querySelector(\"[data-testid='schematic'] svg title\"); return \
            t ? t.textContent : null;",
            vec![],
        )
        .await;
        assert_eq!(title, json!("Greenhouse humidity probe"), "the schematic is drawn for the new design");
        let engine_svg = of_design(&design(&request(&typed)), &SchematicConfig::default()).expect("schematic").svg;
        let page_svg = eval(
            &client,
            "return document.querySelector(\"[data-testid='schematic'] \
            svg\").outerHTML.length;",
            vec![],
        )
        .await;
        assert!(page_svg.as_u64().unwrap_or(0) > engine_svg.len() as u64 / 2, "the whole schematic is inserted");

        // Changing a field redesigns without any button.
        go_to(&client, "converter").await;
        type_into(&client, "destination.max", "5 V").await;
        let mut changed = typed.clone();
        changed["destination"]["max"] = json!("5 V");
        let want_changed = expected_rows(&request(&changed));
        assert_ne!(want_changed, want, "the test changes something the part list shows");
        go_to(&client, "design").await;
        wait_for_parts(&client, "the part list after the change", &want_changed).await;

        // A bad value: its message under the field, the last design stays, the page works on.
        go_to(&client, "sensor").await;
        type_into(&client, "source.max", "2.8 Ω").await;
        let engine_message =
            units::parse("2.8 Ω", Quantity::Voltage).expect_err("not a voltage").message(Quantity::Voltage);
        let shown_message = poll(&client, "the field message", LIMIT, || async {
            let m = field_message(&client, "source.max").await;
            (!m.is_empty()).then_some(m)
        })
        .await;
        assert_eq!(shown_message, engine_message);
        let invalid = by_testid(&client, "field-source.max").await.attr("aria-invalid").await.expect("attr");
        assert_eq!(invalid.as_deref(), Some("true"));
        assert_eq!(texts(&client, "[data-testid='step-sensor'] .step-state").await, ["1 problem"]);
        screenshot(&client, "step-sensor-bad-value").await;
        go_to(&client, "design").await;
        assert!(
            !texts(&client, "[data-testid='stale-note']").await.concat().is_empty(),
            "the design says it is the \
            last good one"
        );
        assert_eq!(part_rows(&client).await, want_changed, "the last good design stays");
        screenshot(&client, "design-stale").await;
        // Still alive: other fields edit, the bad one is fixed, the design follows.
        go_to(&client, "converter").await;
        type_into(&client, "destination.max", "3.3 V").await;
        go_to(&client, "sensor").await;
        type_into(&client, "source.max", "2.8 V").await;
        assert_eq!(field_message(&client, "source.max").await, "");
        go_to(&client, "design").await;
        wait_for_parts(&client, "the part list after the fix", &want).await;

        // The steps from the keyboard: arrows, Home and End on the step bar.
        by_testid(&client, "step-design").await.click().await.expect("focus the tab");
        let focused = || async {
            eval(&client, "return document.activeElement ? document.activeElement.id : null;", vec![]).await
        };
        let key = |k: &'static str| {
            let client = client.clone();
            async move {
                client
                    .find(Locator::Css("[role='tab'][aria-selected='true']"))
                    .await
                    .expect("selected tab")
                    .send_keys(k)
                    .await
                    .expect("press a key")
            }
        };
        key("\u{e012}").await; // ArrowLeft
        assert_eq!(selected_step(&client).await, "Power and parts");
        assert_eq!(focused().await, json!("tab-parts"));
        key("\u{e011}").await; // Home
        assert_eq!(selected_step(&client).await, "The sensor");
        assert_eq!(focused().await, json!("tab-sensor"));
        key("\u{e014}").await; // ArrowRight
        assert_eq!(selected_step(&client).await, "The converter input");
        key("\u{e010}").await; // End
        assert_eq!(selected_step(&client).await, "The design");
        assert_eq!(focused().await, json!("tab-design"));
        let outline = eval(&client, "return getComputedStyle(document.activeElement).outlineStyle;", vec![]).await;
        assert_eq!(outline, json!("solid"), "keyboard focus is visible");
        // Every input has a label bound to it.
        let unlabelled = eval(
            &client,
            "return Array.from(document.querySelectorAll('input:not([type=radio]), select, textarea')).filter(e => \
                !(e.labels && e.labels.length)).map(e => e.id || e.dataset.testid);",
            vec![],
        )
        .await;
        assert_eq!(unlabelled, json!([]), "inputs without a label");
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn downloads_equal_the_command_and_refresh_is_timed() {
    with_app(|env| async move {
        let client = env.open("").await;
        let first = demo(0);
        wait_for_parts(&client, "the first demo", &expected_rows(&first)).await;

        // Catch the files the page hands to the browser.
        eval(
            &client,
            "window.__files = []; const make = URL.createObjectURL; URL.createObjectURL = function (b) { \
            window.__files.push(b); return make.call(URL, b); };",
            vec![],
        )
        .await;
        let d = design(&first);
        let circuit = d.circuit.as_ref().expect("the demo has a circuit");
        let cases = [
            ("download-part-list", to_csv(&bom(&d))),
            ("download-netlist", netlist(&first, circuit, NetlistConfig { testbench: true })),
            ("download-schematic", of_design(&d, &SchematicConfig::default()).expect("schematic").svg),
            ("download-report", rangefit_engine::report::report(&d)),
        ];
        for (i, (button, want)) in cases.iter().enumerate() {
            click(&client, button).await;
            let got = client
                .execute_async(
                    "const done = arguments[arguments.length - 1]; const f = window.__files[arguments[0]]; \
                    if (!f) { done(null); } else { f.text().then(done); }",
                    vec![json!(i)],
                )
                .await
                .expect("read the file");
            assert_eq!(got.as_str(), Some(want.as_str()), "{button} equals the engine's output");
        }

        // Refresh time: edit a value back and forth and read the page's own measures.
        let before = timings(&client, "rangefit:design").await.len();
        let outputs_before = timings(&client, "rangefit:outputs").await.len();
        go_to(&client, "converter").await;
        let values = ["3.2 V", "3.3 V"];
        let edits = 16;
        for i in 0..edits {
            type_into(&client, "destination.max", values[i % 2]).await;
            let want = before + i + 1;
            poll(&client, "a new design run", LIMIT, || async {
                (timings(&client, "rangefit:design").await.len() >= want).then_some(())
            })
            .await;
        }
        let mut runs: Vec<f64> = timings(&client, "rangefit:design").await[before..].iter().map(|r| r.1).collect();
        let mut outs: Vec<f64> =
            timings(&client, "rangefit:outputs").await[outputs_before..].iter().map(|r| r.1).collect();
        assert!(runs.len() >= edits, "one engine run per change, got {}", runs.len());
        runs.sort_by(f64::total_cmp);
        outs.sort_by(f64::total_cmp);
        let median = |v: &[f64]| v[v.len() / 2];
        record_figure(&format!(
            "design refresh (rangefit:design, {} runs): median {:.1} ms, min {:.1}, max {:.1}; drawing it \
                (rangefit:outputs: schematic, plots, part list, link): median {:.1} ms",
            runs.len(),
            median(&runs),
            runs[0],
            runs[runs.len() - 1],
            median(&outs)
        ));
        // Budget 16 ms; asserted generously here, the figure above is the measurement.
        assert!(median(&runs) < 1000.0, "median refresh {:.1} ms", median(&runs));
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn keeps_working_offline_and_fetches_only_its_own_files() {
    with_app(|env| async move {
        let client = env.open("").await;
        wait_for_parts(&client, "the first demo", &expected_rows(&demo(0))).await;
        let origin = env.url().trim_end_matches('/').to_string();
        let foreign = eval(
            &client,
            "return performance.getEntriesByType('resource').map(e => e.name).filter(n => \
            !n.startsWith(arguments[0] + '/'));",
            vec![json!(origin)],
        )
        .await;
        assert_eq!(foreign, json!([]), "requests to anything but the app's own files");

        env.stop_server();
        // A demo, an edit and a save all work without the network.
        let last = demos::ALL.len() - 1;
        // With nine demos the last button sits low in the list: bring it into view first.
        let button =
            client.find(Locator::Css(&format!("[data-demo='{}']", demos::ALL[last].id))).await.expect("demo button");
        eval(
            &client,
            "arguments[0].scrollIntoView({block: 'center'});",
            vec![serde_json::to_value(&button).expect("element reference")],
        )
        .await;
        button.click().await.expect("click");
        wait_for_parts(&client, "the last demo offline", &expected_rows(&demo(last))).await;
        go_to(&client, "sensor").await;
        type_into(&client, "source.max", "9 V").await;
        let mut json: Value = serde_json::from_str(demos::ALL[last].json).expect("JSON");
        json["source"]["max"] = json!("9 V");
        go_to(&client, "design").await;
        wait_for_parts(&client, "the edited design offline", &expected_rows(&request(&json))).await;
        click(&client, "save-design").await;
        let saved = poll(&client, "the saved design in the list", LIMIT, || async {
            let names = texts(&client, "[data-testid='designs'] [data-action='open']").await;
            (!names.is_empty()).then_some(names)
        })
        .await;
        assert_eq!(saved, [demo(last).name]);
    })
    .await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn layouts_contrast_and_print_styles() {
    with_app(|env| async move {
        let client = env.open("").await;
        wait_for_parts(&client, "the first demo", &expected_rows(&demo(0))).await;

        // Text contrast (WCAG 2.1 success criterion 1.4.3: 4.5:1, 3:1 for large text), on
        // the design and on a form step showing an error, a missing value and the notices.
        // First the probe itself must catch a pale grey text (#aaa on white is 2.32:1).
        eval(
            &client,
            "const p = document.createElement('p'); p.id = 'probe'; p.style.color = '#aaaaaa'; \
            p.style.background = '#ffffff'; p.textContent = 'pale'; document.body.appendChild(p);",
            vec![],
        )
        .await;
        let caught = eval(&client, CONTRAST, vec![]).await;
        assert_eq!(caught.as_array().map(Vec::len), Some(1), "the contrast probe finds the pale text: {caught}");
        eval(&client, "document.getElementById('probe').remove();", vec![]).await;
        for step in ["design", "sensor"] {
            go_to(&client, step).await;
            if step == "sensor" {
                type_into(&client, "source.max", "fast").await;
                type_into(&client, "source.min", "").await;
            }
            let low = eval(&client, CONTRAST, vec![]).await;
            assert_eq!(low, json!([]), "text below the contrast minimum on step {step}");
        }
        type_into(&client, "source.min", "1.16 V").await;
        type_into(&client, "source.max", "1.24 V").await;
        let overflow = "return document.documentElement.scrollWidth - window.innerWidth;";
        assert!(eval(&client, overflow, vec![]).await.as_i64().unwrap_or(1) <= 0, "no sideways scrolling at 1280×800");

        // A tablet held upright, then sideways.
        for (w, h, name) in [(820u32, 1180u32, "tablet-portrait"), (1180, 820, "tablet-landscape")] {
            client.set_window_size(w, h).await.expect("resize");
            for step in ["design", "sensor", "parts"] {
                go_to(&client, step).await;
                eval(&client, "window.scrollTo(0, 0);", vec![]).await;
                screenshot(&client, &format!("{name}-{step}")).await;
                let extra = eval(&client, overflow, vec![]).await.as_i64().unwrap_or(1);
                assert!(extra <= 0, "{name}, step {step}: the page is {extra} px wider than the screen");
            }
        }
        // The designs list is one tap away on a narrow screen.
        client.set_window_size(820, 1180).await.expect("resize");
        let designs_shown = "return getComputedStyle(document.getElementById('sidebar')).display !== 'none';";
        assert_eq!(eval(&client, designs_shown, vec![]).await, json!(false));
        client.find(Locator::Css(".designs-toggle")).await.expect("toggle").click().await.expect("click");
        assert_eq!(eval(&client, designs_shown, vec![]).await, json!(true));

        // Printing: the print rules hide the controls and show the design, whatever step is open.
        let rules = eval(
            &client,
            "let out = []; for (const s of document.styleSheets) { for (const r of s.cssRules) { if (r.media && \
                r.media.mediaText === 'print') { for (const x of r.cssRules) out.push(x.cssText); } } } return \
                out.join('\\n');",
            vec![],
        )
        .await;
        let rules = rules.as_str().unwrap_or("").to_string();
        for hidden in [".steps", ".step-panel", ".sidebar", ".toolbar", ".topbar"] {
            assert!(
                rules.lines().any(|l| l.contains(hidden) && l.contains("display: none")),
                "print hides \
                {hidden}:\n{rules}"
            );
        }
        assert!(
            rules.lines().any(|l| l.contains(".design-panel[hidden]") && l.contains("display: block")),
            "print \
            shows the design:\n{rules}"
        );
    })
    .await;
}

/// Lists visible texts whose contrast with their background is below the WCAG 2.1 minimum
/// (relative luminance and contrast ratio as defined there). Drawings from the engine and
/// disabled controls (exempt in WCAG) are skipped.
const CONTRAST: &str = r#"
const parse = c => { const m = c.match(/rgba?\(([^)]+)\)/); return m ? m[1].split(',').map(parseFloat) : null; };
const lin = v => { v /= 255; return v <= 0.03928 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4); };
const lum = p => 0.2126 * lin(p[0]) + 0.7152 * lin(p[1]) + 0.0722 * lin(p[2]);
const background = el => {
  for (; el; el = el.parentElement) {
    const p = parse(getComputedStyle(el).backgroundColor);
    if (p && (p.length < 4 || p[3] > 0.5)) return p;
  }
  return [255, 255, 255];
};
const low = [];
for (const el of document.querySelectorAll('body *')) {
  if (el.closest('svg') || el.closest(':disabled') || el.closest('[aria-disabled="true"]')) continue;
  if (!Array.from(el.childNodes).some(n => n.nodeType === 3 && n.textContent.trim())) continue;
  if (!el.getClientRects().length) continue;
  const cs = getComputedStyle(el);
  if (cs.visibility === 'hidden') continue;
  const a = lum(parse(cs.color)), b = lum(background(el));
  const ratio = (Math.max(a, b) + 0.05) / (Math.min(a, b) + 0.05);
  const size = parseFloat(cs.fontSize), bold = parseInt(cs.fontWeight, 10) >= 700;
  const need = (size >= 24 || (size >= 18.66 && bold)) ? 3 : 4.5;
  if (ratio < need)
    low.push(el.tagName + '.' + el.className + ' "' + el.textContent.trim().slice(0, 40) + '" ' + ratio.toFixed(2));
}
return low;
"#;

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn amplifier_figures_given_or_assumed() {
    with_app(|env| async move {
        let client = env.open("").await;
        wait_for_parts(&client, "the first demo", &expected_rows(&demo(0))).await;
        let boiler = demos::ALL[1].id;
        let button = client.find(Locator::Css(&format!("[data-demo='{boiler}']"))).await.expect("demo button");
        button.click().await.expect("click");
        wait_for_parts(&client, "the second demo", &expected_rows(&demo(1))).await;
        go_to(&client, "parts").await;

        // By default Rangefit assumes a class and states the requirements; the figures wait.
        let class = design(&demo(1)).amplifier.class;
        assert!(texts(&client, ".assumed-amp").await.concat().contains(&class));
        let gbw_shown = "return \
            getComputedStyle(document.querySelector(\"[data-testid='field-amplifier.gbw']\").closest('.field')) \
            .display \
            !== 'none';";
        assert_eq!(eval(&client, gbw_shown, vec![]).await, json!(false));
        click(&client, "field-amplifier-given").await;
        assert_eq!(eval(&client, gbw_shown, vec![]).await, json!(true));
        let gbw = by_testid(&client, "field-amplifier.gbw").await;
        let placeholder = gbw.attr("placeholder").await.expect("attr").unwrap_or_default();
        let assumed = units::format(design(&demo(1)).amplifier.gbw, Quantity::Frequency);
        assert_eq!(placeholder, format!("assumed: {assumed}"), "the assumed figure is shown");
        type_into(&client, "amplifier.gbw", "2 MHz").await;
        eval(
            &client,
            "document.querySelector(\"[data-testid='field-amplifier.gbw']\").scrollIntoView({block: \
            'center'});",
            vec![],
        )
        .await;
        screenshot(&client, "step-parts-amplifier").await;

        let mut json: Value = serde_json::from_str(demos::ALL[1].json).expect("JSON");
        json["amplifier"] = json!({"gbw": "2 MHz"});
        let given = request(&json);
        go_to(&client, "design").await;
        wait_for_parts(&client, "the design with a given GBW", &expected_rows(&given)).await;
        let gave = texts(&client, "[data-testid='assumptions'] h4").await;
        assert!(gave.iter().any(|h| h == "Figures you gave"), "{gave:?}");
        let figures = texts(&client, "[data-testid='assumptions'] .figures li").await;
        assert!(figures.iter().any(|f| f.contains("Gain-bandwidth (GBW)") && f.contains("2 MHz")), "{figures:?}");
        assert_eq!(figures.len(), AMPLIFIER_FIGURES.len(), "every figure is listed once, assumed or given");
        eval(&client, "document.querySelector(\"[data-testid='assumptions']\").scrollIntoView();", vec![]).await;
        screenshot(&client, "design-assumptions").await;

        // Back to "let Rangefit state the requirements": the typed figure no longer counts.
        go_to(&client, "parts").await;
        click(&client, "field-amplifier-state").await;
        go_to(&client, "design").await;
        wait_for_parts(&client, "the design with the class again", &expected_rows(&demo(1))).await;
    })
    .await;
}
