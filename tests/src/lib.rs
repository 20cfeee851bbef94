//! Shared helpers for Rangefit's workspace tests: the one row/check helper of the
//! data-driven tests ([`rows`]), the ngspice runner ([`run_ngspice`]) and the browser-test
//! machinery.
//!
//! A test serves the release bundle in `dist/` with the same server as `.ci/serve.sh`
//! (`.ci/static-server.py`: Python's http.server sending the precompressed siblings),
//! starts `chromedriver`, and drives headless Chromium through WebDriver (fantoccini),
//! with Chromium's DevTools protocol at hand ([`cdp`]) for network emulation and storage
//! quotas. Both helper processes are children of the test and are killed when their guard
//! drops. Nothing here skips: a missing bundle, Python, chromedriver or Chromium fails the
//! test.

use std::future::Future;
use std::net::{Ipv4Addr, SocketAddrV4, TcpListener, TcpStream};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use fantoccini::elements::Element;
use fantoccini::{Client, ClientBuilder, Locator};
use hyper_util::client::legacy::connect::HttpConnector;
use serde_json::{json, Value};

pub mod rows;
pub mod spice;

/// Chromium binary used by the tests (Debian's `chromium` package).
pub const CHROMIUM: &str = "/usr/bin/chromium";

/// How long a helper process may take to open its port.
const STARTUP_LIMIT: Duration = Duration::from_secs(30);

/// How long a whole browser test may run before it is abandoned as hung.
const TEST_LIMIT: Duration = Duration::from_secs(180);

/// The repository root (the parent of this crate's directory).
pub fn repo_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).parent().expect("tests crate sits inside the repository").to_path_buf()
}

/// The built bundle directory. Panics (fails the test) when the bundle is missing.
pub fn dist_dir() -> PathBuf {
    let dist = repo_root().join("dist");
    let index = dist.join("index.html");
    assert!(
        index.is_file(),
        "{} is missing: the browser tests load the release bundle. \
         Run .ci/test.sh, which builds it with `trunk build --release` and then runs all tests.",
        index.display()
    );
    dist
}

/// A child process that is killed and reaped when dropped.
pub struct ChildGuard {
    name: &'static str,
    child: Child,
}

impl ChildGuard {
    fn spawn(name: &'static str, command: &mut Command) -> ChildGuard {
        let child = command
            .stdin(Stdio::null())
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap_or_else(|e| panic!("cannot start {name} ({command:?}): {e}"));
        ChildGuard { name, child }
    }

    /// Waits until something listens on `port`, failing if the process exits first.
    fn wait_for_port(&mut self, port: u16) {
        let start = Instant::now();
        let addr = SocketAddrV4::new(Ipv4Addr::LOCALHOST, port).into();
        loop {
            if let Some(status) = self.child.try_wait().expect("query child status") {
                panic!("{} exited before listening on port {port}: {status}", self.name);
            }
            if TcpStream::connect_timeout(&addr, Duration::from_millis(200)).is_ok() {
                return;
            }
            assert!(
                start.elapsed() < STARTUP_LIMIT,
                "{} did not listen on port {port} within {STARTUP_LIMIT:?}",
                self.name
            );
            std::thread::sleep(Duration::from_millis(50));
        }
    }
}

impl Drop for ChildGuard {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// A currently free TCP port on the loopback interface.
pub fn free_port() -> u16 {
    let listener = TcpListener::bind((Ipv4Addr::LOCALHOST, 0)).expect("bind a free port");
    listener.local_addr().expect("local address").port()
}

/// A static file server over a directory.
pub struct StaticServer {
    _process: ChildGuard,
    port: u16,
}

impl StaticServer {
    /// Serves `dir` at the site root on 127.0.0.1 with `.ci/static-server.py`.
    pub fn start(dir: &Path) -> StaticServer {
        StaticServer::start_on(dir, free_port())
    }

    /// Serves `dir` on `port` (a port served before keeps the site's origin, and with it
    /// the browser's service worker and storage for the site).
    pub fn start_on(dir: &Path, port: u16) -> StaticServer {
        let script = repo_root().join(".ci").join("static-server.py");
        let mut process = ChildGuard::spawn(
            "python3 .ci/static-server.py",
            Command::new("python3").arg(script).arg(port.to_string()).arg(dir),
        );
        process.wait_for_port(port);
        StaticServer { _process: process, port }
    }

    /// The site root, e.g. `http://127.0.0.1:34567/`.
    pub fn url(&self) -> String {
        format!("http://127.0.0.1:{}/", self.port)
    }
}

/// A running chromedriver.
pub struct Chromedriver {
    _process: ChildGuard,
    port: u16,
}

impl Chromedriver {
    pub fn start() -> Chromedriver {
        assert!(
            Path::new(CHROMIUM).is_file(),
            "{CHROMIUM} not found: install the `chromium` and `chromium-driver` packages (.ci/install.sh does)"
        );
        let port = free_port();
        let mut process = ChildGuard::spawn("chromedriver", Command::new("chromedriver").arg(format!("--port={port}")));
        process.wait_for_port(port);
        Chromedriver { _process: process, port }
    }

    pub fn url(&self) -> String {
        format!("http://127.0.0.1:{}", self.port)
    }
}

/// WebDriver capabilities for headless Chromium on a machine without a GPU.
pub fn chromium_capabilities() -> serde_json::Map<String, serde_json::Value> {
    let caps = json!({
        "browserName": "chrome",
        "goog:chromeOptions": {
            "binary": CHROMIUM,
            "args": [
                "--headless=new",
                "--no-sandbox",
                "--disable-gpu",
                "--disable-dev-shm-usage",
                "--disable-quic",
                "--no-first-run",
                "--disable-background-networking",
                "--disable-component-update",
                "--disable-sync",
                "--window-size=1280,800"
            ]
        }
    });
    match caps {
        serde_json::Value::Object(map) => map,
        _ => unreachable!("capabilities literal is an object"),
    }
}

/// Opens a browser session through `driver`.
pub async fn connect(driver: &Chromedriver) -> Client {
    connect_with(driver, chromium_capabilities()).await
}

/// Opens a browser session through `driver` with `capabilities`.
pub async fn connect_with(driver: &Chromedriver, capabilities: serde_json::Map<String, Value>) -> Client {
    let mut builder = ClientBuilder::new(HttpConnector::new());
    builder.capabilities(capabilities);
    builder
        .connect(&driver.url())
        .await
        .unwrap_or_else(|e| panic!("cannot open a Chromium session through chromedriver: {e}"))
}

/// Serves `dist/`, opens headless Chromium at the site root and runs `body` with the
/// client. The body runs in its own task so that the browser session is always closed,
/// even when an assertion fails; the failure is then passed on to the test.
pub async fn with_app_page<F, Fut>(body: F)
where
    F: FnOnce(Client) -> Fut,
    Fut: Future<Output = ()> + Send + 'static,
{
    let dist = dist_dir();
    let server = StaticServer::start(&dist);
    let driver = Chromedriver::start();
    let client = connect(&driver).await;

    let url = server.url();
    let outcome = match client.goto(&url).await {
        Ok(()) => {
            let task = tokio::spawn(body(client.clone()));
            let abort = task.abort_handle();
            match tokio::time::timeout(TEST_LIMIT, task).await {
                Ok(joined) => joined.map_err(|e| {
                    if e.is_panic() {
                        Failure::Panic(e.into_panic())
                    } else {
                        Failure::Message(format!("browser test task failed: {e}"))
                    }
                }),
                Err(_) => {
                    abort.abort();
                    Err(Failure::Message(format!("browser test did not finish within {TEST_LIMIT:?}")))
                }
            }
        }
        Err(e) => Err(Failure::Message(format!("cannot load {url}: {e}"))),
    };

    let _ = client.close().await;
    drop(driver);
    drop(server);

    match outcome {
        Ok(()) => {}
        Err(Failure::Panic(payload)) => std::panic::resume_unwind(payload),
        Err(Failure::Message(message)) => panic!("{message}"),
    }
}

enum Failure {
    Panic(Box<dyn std::any::Any + Send>),
    Message(String),
}

/// Polls `probe` every 100 ms until it yields a value or `limit` passes. On timeout the
/// test fails with `what` and the page's visible text, to show what was there instead.
pub async fn poll<T, P, Fut>(client: &Client, what: &str, limit: Duration, mut probe: P) -> T
where
    P: FnMut() -> Fut,
    Fut: Future<Output = Option<T>>,
{
    let start = Instant::now();
    loop {
        if let Some(value) = probe().await {
            return value;
        }
        if start.elapsed() >= limit {
            let text = match client.find(Locator::Css("body")).await {
                Ok(body) => body.text().await.unwrap_or_else(|e| format!("<no text: {e}>")),
                Err(e) => format!("<no body: {e}>"),
            };
            panic!("timed out after {limit:?} waiting for {what}; the page shows:\n{text}");
        }
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
}

/// Text of every element matching `css`, in document order (empty when none match).
/// Elements replaced while being read are left out; use it inside [`poll`].
pub async fn texts(client: &Client, css: &str) -> Vec<String> {
    let mut out = Vec::new();
    let Ok(elements) = client.find_all(Locator::Css(css)).await else {
        return out;
    };
    for element in elements {
        if let Ok(text) = element.text().await {
            out.push(text);
        }
    }
    out
}

/// A running bundle server and chromedriver, from which a test opens as many browser
/// sessions as it needs. Every session starts with a fresh, empty profile (chromedriver
/// makes a new temporary profile per session), so a second session is "another browser".
pub struct Env {
    url: String,
    dir: PathBuf,
    port: u16,
    driver: Chromedriver,
    server: Mutex<Option<StaticServer>>,
    sessions: Mutex<Vec<Client>>,
}

impl Env {
    /// The site root, e.g. `http://127.0.0.1:34567/`.
    pub fn url(&self) -> &str {
        &self.url
    }

    /// The directory being served.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// Opens a new browser session (fresh profile) at the site root plus `suffix`
    /// (e.g. `#r1.…` for a share link) and waits until the app has mounted.
    pub async fn open(&self, suffix: &str) -> Client {
        let client = self.session().await;
        let target = format!("{}{}", self.url, suffix);
        goto_app(&client, &target).await;
        client
    }

    /// Opens a new browser session (fresh profile) on a blank page.
    pub async fn session(&self) -> Client {
        self.session_with(chromium_capabilities()).await
    }

    /// Opens a new browser session with `capabilities`, on a blank page.
    pub async fn session_with(&self, capabilities: serde_json::Map<String, Value>) -> Client {
        let client = connect_with(&self.driver, capabilities).await;
        self.sessions.lock().expect("session list").push(client.clone());
        client
    }

    /// Stops the static server: from now on the page has no network to its own files.
    pub fn stop_server(&self) {
        let server = self.server.lock().expect("server slot").take();
        drop(server);
    }

    /// Starts the static server again on the same port (the same origin for the browser).
    pub fn restart_server(&self) {
        let mut slot = self.server.lock().expect("server slot");
        drop(slot.take());
        *slot = Some(StaticServer::start_on(&self.dir, self.port));
    }
}

/// Loads `address` and waits until the app has mounted.
pub async fn goto_app(client: &Client, address: &str) {
    client.goto(address).await.unwrap_or_else(|e| panic!("cannot load {address}: {e}"));
    poll(client, "the app to start", Duration::from_secs(30), || async {
        client.find(Locator::Css("[data-testid='step-sensor']")).await.ok().map(|_| ())
    })
    .await;
}

/// Serves `dist/`, starts chromedriver and runs `body`, which opens its own sessions with
/// [`Env::open`]. Every session is closed afterwards, even when the body fails.
pub async fn with_app<F, Fut>(body: F)
where
    F: FnOnce(Arc<Env>) -> Fut,
    Fut: Future<Output = ()> + Send + 'static,
{
    with_site(&dist_dir(), body).await
}

/// As [`with_app`], serving `dir` (e.g. a copy of the bundle that the test changes).
pub async fn with_site<F, Fut>(dir: &Path, body: F)
where
    F: FnOnce(Arc<Env>) -> Fut,
    Fut: Future<Output = ()> + Send + 'static,
{
    let server = StaticServer::start(dir);
    let driver = Chromedriver::start();
    let env = Arc::new(Env {
        url: server.url(),
        dir: dir.to_path_buf(),
        port: server.port,
        driver,
        server: Mutex::new(Some(server)),
        sessions: Mutex::new(Vec::new()),
    });

    let task = tokio::spawn(body(env.clone()));
    let abort = task.abort_handle();
    let outcome = match tokio::time::timeout(TEST_LIMIT, task).await {
        Ok(joined) => joined.map_err(|e| {
            if e.is_panic() {
                Failure::Panic(e.into_panic())
            } else {
                Failure::Message(format!("browser test task failed: {e}"))
            }
        }),
        Err(_) => {
            abort.abort();
            Err(Failure::Message(format!("browser test did not finish within {TEST_LIMIT:?}")))
        }
    };
    let sessions: Vec<Client> = std::mem::take(&mut *env.sessions.lock().expect("session list"));
    for client in sessions {
        let _ = client.close().await;
    }
    env.stop_server();
    match outcome {
        Ok(()) => {}
        Err(Failure::Panic(payload)) => std::panic::resume_unwind(payload),
        Err(Failure::Message(message)) => panic!("{message}"),
    }
}

/// Where screenshots and measured figures of the browser tests are written.
pub fn artifacts_dir() -> PathBuf {
    let dir = repo_root().join("target").join("e2e");
    std::fs::create_dir_all(&dir).expect("create target/e2e");
    dir
}

/// Saves a screenshot of the viewport as `target/e2e/<name>.png` and returns its path.
pub async fn screenshot(client: &Client, name: &str) -> PathBuf {
    let png = client.screenshot().await.expect("take a screenshot");
    let path = artifacts_dir().join(format!("{name}.png"));
    std::fs::write(&path, png).expect("write screenshot");
    path
}

/// Appends a line to `target/e2e/figures.txt` and prints it (the measured budgets).
pub fn record_figure(line: &str) {
    use std::io::Write;
    println!("{line}");
    let path = artifacts_dir().join("figures.txt");
    if let Ok(mut f) = std::fs::OpenOptions::new().create(true).append(true).open(path) {
        let _ = writeln!(f, "{line}");
    }
}

/// Runs the DevTools-protocol command `method` with `params` in the session's page, through
/// chromedriver's `goog/cdp/execute`, and returns its result.
pub async fn cdp(client: &Client, method: &str, params: Value) -> Value {
    let command = Cdp { method: method.to_string(), params };
    client.issue_cmd(command).await.unwrap_or_else(|e| panic!("DevTools command {method} failed: {e}"))
}

#[derive(Debug)]
struct Cdp {
    method: String,
    params: Value,
}

impl fantoccini::wd::WebDriverCompatibleCommand for Cdp {
    fn endpoint(&self, base: &url::Url, session: Option<&str>) -> Result<url::Url, url::ParseError> {
        base.join(&format!("session/{}/goog/cdp/execute", session.unwrap_or_default()))
    }

    fn method_and_body(&self, _: &url::Url) -> (http::Method, Option<String>) {
        (http::Method::POST, Some(json!({"cmd": self.method, "params": self.params}).to_string()))
    }
}

/// A fresh, empty directory under the system's temporary directory for this test.
pub fn temp_dir(tag: &str) -> PathBuf {
    use std::sync::atomic::{AtomicUsize, Ordering};
    static N: AtomicUsize = AtomicUsize::new(0);
    let dir = std::env::temp_dir().join(format!(
        "rangefit-{tag}-{}-{}",
        std::process::id(),
        N.fetch_add(1, Ordering::SeqCst)
    ));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap_or_else(|e| panic!("cannot make {}: {e}", dir.display()));
    dir
}

/// Runs `script` in the page and returns its result.
pub async fn eval(client: &Client, script: &str, args: Vec<Value>) -> Value {
    client.execute(script, args).await.unwrap_or_else(|e| panic!("script failed: {e}\n{script}"))
}

/// The element with `data-testid` equal to `id`.
pub async fn by_testid(client: &Client, id: &str) -> Element {
    client
        .find(Locator::Css(&format!("[data-testid='{id}']")))
        .await
        .unwrap_or_else(|e| panic!("no element [data-testid='{id}']: {e}"))
}

/// Clicks the element with `data-testid` equal to `id`.
pub async fn click(client: &Client, id: &str) {
    by_testid(client, id).await.click().await.unwrap_or_else(|e| panic!("cannot click [data-testid='{id}']: {e}"));
}

/// Types `text` into the input of request field `path`, replacing what was there, the way
/// a user does: select all, delete, type.
pub async fn type_into(client: &Client, path: &str, text: &str) {
    let input = by_testid(client, &format!("field-{path}")).await;
    input.click().await.unwrap_or_else(|e| panic!("cannot focus field {path}: {e}"));
    // Ctrl+A, release modifiers, Backspace (WebDriver key codes).
    input.send_keys("\u{e009}a\u{e000}\u{e003}").await.expect("clear field");
    if !text.is_empty() {
        input.send_keys(text).await.unwrap_or_else(|e| panic!("cannot type into field {path}: {e}"));
    }
}

/// The value shown in the input of request field `path`.
pub async fn field_value(client: &Client, path: &str) -> String {
    let input = by_testid(client, &format!("field-{path}")).await;
    input.prop("value").await.expect("read value").unwrap_or_default()
}

/// Text of the message under request field `path` (empty when there is none).
pub async fn field_message(client: &Client, path: &str) -> String {
    texts(client, &format!("[data-testid='message-{path}']")).await.concat()
}

/// Rows of the part list as shown: the text of every cell, row by row.
pub async fn part_rows(client: &Client) -> Vec<Vec<String>> {
    let script = "return Array.from(document.querySelectorAll(\"[data-testid='parts'] tbody tr\")).map(r => \
        Array.from(r.cells).map(c => c.textContent));";
    match client.execute(script, vec![]).await {
        Ok(v) => serde_json::from_value(v).unwrap_or_default(),
        Err(_) => Vec::new(),
    }
}

/// Waits until the part list shows exactly `rows` (compared cell by cell).
pub async fn wait_for_parts(client: &Client, what: &str, rows: &[Vec<String>]) {
    poll(client, what, Duration::from_secs(30), || async { (part_rows(client).await == rows).then_some(()) }).await;
}

/// The user-timing entries named `name` as (startTime, duration) in ms.
pub async fn timings(client: &Client, name: &str) -> Vec<(f64, f64)> {
    let v = eval(
        client,
        "return performance.getEntriesByName(arguments[0]).map(e => [e.startTime, e.duration]);",
        vec![json!(name)],
    )
    .await;
    serde_json::from_value(v).unwrap_or_default()
}

/// Runs `deck` with `ngspice -b` (the independent SPICE3-compatible simulator, Debian package
/// `ngspice`) from a temporary file and returns (success, stdout, stderr). Fails the test,
/// saying how to install it, when ngspice is missing — never skips.
pub fn run_ngspice(tag: &str, deck: &str) -> (bool, String, String) {
    use std::sync::atomic::{AtomicUsize, Ordering};
    static RUN: AtomicUsize = AtomicUsize::new(0);
    let safe: String = tag.chars().map(|c| if c.is_ascii_alphanumeric() { c } else { '-' }).collect();
    let path = std::env::temp_dir().join(format!(
        "rangefit-spice-{}-{}-{safe}.cir",
        std::process::id(),
        RUN.fetch_add(1, Ordering::SeqCst)
    ));
    std::fs::write(&path, deck).unwrap_or_else(|e| panic!("cannot write {}: {e}", path.display()));
    let run = std::process::Command::new("ngspice").arg("-b").arg(&path).output();
    let _ = std::fs::remove_file(&path);
    let out = match run {
        Ok(o) => o,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => panic!(
            "ngspice is not installed, and these tests need it as the independent simulator: \
             install it (Debian: `apt-get install ngspice`; `.ci/run` installs it through .ci/install.sh)"
        ),
        Err(e) => panic!("cannot run ngspice: {e}"),
    };
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}
