//! Shared helpers for Rangefit's browser tests.
//!
//! A test serves the release bundle in `dist/` with `python3 -m http.server`, starts
//! `chromedriver`, and drives headless Chromium through WebDriver (fantoccini). Both
//! helper processes are children of the test and are killed when their guard drops.
//! Nothing here skips: a missing bundle, Python, chromedriver or Chromium fails the test.

use std::future::Future;
use std::net::{Ipv4Addr, SocketAddrV4, TcpListener, TcpStream};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use fantoccini::{Client, ClientBuilder, Locator};
use hyper_util::client::legacy::connect::HttpConnector;
use serde_json::json;

/// Chromium binary used by the tests (Debian's `chromium` package).
pub const CHROMIUM: &str = "/usr/bin/chromium";

/// How long a helper process may take to open its port.
const STARTUP_LIMIT: Duration = Duration::from_secs(30);

/// How long a whole browser test may run before it is abandoned as hung.
const TEST_LIMIT: Duration = Duration::from_secs(180);

/// The repository root (the parent of this crate's directory).
pub fn repo_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("tests crate sits inside the repository")
        .to_path_buf()
}

/// The built bundle directory. Panics (fails the test) when the bundle is missing.
pub fn dist_dir() -> PathBuf {
    let dist = repo_root().join("dist");
    let index = dist.join("index.html");
    assert!(
        index.is_file(),
        "{} is missing: the browser tests load the release bundle. \
         Run scripts/test.sh, which builds it with `trunk build --release` and then runs all tests.",
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
    /// Serves `dir` at the site root on 127.0.0.1 with Python's built-in server.
    pub fn start(dir: &Path) -> StaticServer {
        let port = free_port();
        let mut process = ChildGuard::spawn(
            "python3 -m http.server",
            Command::new("python3")
                .args(["-m", "http.server", &port.to_string(), "--bind", "127.0.0.1", "--directory"])
                .arg(dir),
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
            "{CHROMIUM} not found: install the `chromium` and `chromium-driver` packages (scripts/install.sh does)"
        );
        let port = free_port();
        let mut process = ChildGuard::spawn(
            "chromedriver",
            Command::new("chromedriver").arg(format!("--port={port}")),
        );
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
    let mut builder = ClientBuilder::new(HttpConnector::new());
    builder.capabilities(chromium_capabilities());
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
