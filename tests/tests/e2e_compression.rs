//! The serve command's static server (`.ci/static-server.py`) against the built bundle:
//! a browser that accepts brotli gets the `.br` sibling with `Content-Encoding: br`, one
//! that accepts only gzip gets the `.gz` sibling, one that accepts neither (or refuses
//! brotli with q=0) the file itself, always with the file's own type. The siblings are
//! checked with Debian's `brotli` and `gzip` tools (independent decoders of RFC 7932 and
//! RFC 1952): each decodes to the file it sits beside.
//!
//! Needs `dist/` built with its siblings and python3; either missing fails the test.

use std::io::Write;
use std::path::Path;
use std::process::{Command, Stdio};

use bytes::Bytes;
use http_body_util::{BodyExt, Empty};
use hyper_util::client::legacy::Client;
use hyper_util::rt::TokioExecutor;
use rangefit_bundle::{compress, first_load};
use rangefit_tests::*;

/// Decodes `data` with `tool -d -c` (reading standard input).
fn decode(tool: &str, data: &[u8]) -> Vec<u8> {
    let mut child = Command::new(tool)
        .args(["-d", "-c"])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .unwrap_or_else(|e| panic!("cannot run {tool} (Debian package {tool}; .ci/install.sh installs it): {e}"));
    let mut stdin = child.stdin.take().expect("stdin");
    let input = data.to_vec();
    let writer = std::thread::spawn(move || stdin.write_all(&input));
    let out = child.wait_with_output().expect("decoder output");
    writer.join().expect("writer").expect("write to the decoder");
    assert!(out.status.success(), "{tool} -d failed");
    out.stdout
}

fn name(p: &Path) -> String {
    p.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default()
}

#[test]
fn every_first_load_file_has_siblings_that_decode_to_it() {
    let files = first_load(&dist_dir()).expect("list dist");
    assert!(files.len() >= 6, "page, glue, module, stylesheet, worker, manifest, icon: {files:?}");
    for f in files {
        let raw = std::fs::read(&f).expect("read");
        let br = std::fs::read(compress::sibling(&f, ".br")).unwrap_or_else(|e| panic!("{}.br: {e}", f.display()));
        let gz = std::fs::read(compress::sibling(&f, ".gz")).unwrap_or_else(|e| panic!("{}.gz: {e}", f.display()));
        assert_eq!(decode("brotli", &br), raw, "{}.br decodes to the file", name(&f));
        assert_eq!(decode("gzip", &gz), raw, "{}.gz decodes to the file", name(&f));
        assert!(br.len() < raw.len().max(64) && gz.len() < raw.len().max(64), "{}: the siblings are smaller", name(&f));
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_server_sends_the_sibling_the_browser_accepts() {
    let dist = dist_dir();
    let server = StaticServer::start(&dist);
    let client: Client<_, Empty<Bytes>> = Client::builder(TokioExecutor::new()).build_http();
    let module = first_load(&dist).expect("list").into_iter().find(|p| name(p).ends_with(".wasm")).expect("a module");
    let cases = [
        // (path, Accept-Encoding, expected coding, expected body, expected type)
        ("", "gzip, deflate, br, zstd", Some("br"), compress::sibling(&dist.join("index.html"), ".br"), "text/html"),
        (&name(&module), "br", Some("br"), compress::sibling(&module, ".br"), "application/wasm"),
        (&name(&module), "gzip, deflate", Some("gzip"), compress::sibling(&module, ".gz"), "application/wasm"),
        (&name(&module), "br;q=0, gzip", Some("gzip"), compress::sibling(&module, ".gz"), "application/wasm"),
        (&name(&module), "identity", None, module.clone(), "application/wasm"),
        ("sw.js", "", None, dist.join("sw.js"), "text/javascript"),
    ];
    for (path, accept, coding, body_file, mime) in cases {
        let url = format!("{}{path}", server.url());
        let request = http::Request::get(&url).header("accept-encoding", accept).body(Empty::new()).expect("request");
        let response = client.request(request).await.unwrap_or_else(|e| panic!("GET {url}: {e}"));
        assert_eq!(response.status(), 200, "GET {url}");
        let header = |h: &str| response.headers().get(h).and_then(|v| v.to_str().ok()).map(str::to_string);
        assert_eq!(header("content-encoding").as_deref(), coding, "GET {url} with Accept-Encoding: {accept}");
        assert!(
            header("content-type").unwrap_or_default().starts_with(mime),
            "GET {url}: type {:?}",
            header("content-type")
        );
        assert_eq!(header("vary").as_deref(), Some("Accept-Encoding"), "GET {url}");
        let body = response.into_body().collect().await.expect("body").to_bytes();
        assert_eq!(
            body.as_ref(),
            std::fs::read(&body_file).expect("read").as_slice(),
            "GET {url}: the body is {}",
            body_file.display()
        );
    }
}
