//! `rangefit-bundle`: finishes a built bundle, makes the one-file app, and measures what
//! a first visit transfers.
//!
//! ```text
//! rangefit-bundle finish DIR [--home URL] [--debug]   service worker, .br/.gz siblings, one-file app
//! rangefit-bundle single DIR OUT.html [--home URL]          the one-file app only
//! rangefit-bundle sizes DIR                                 the first load: bytes, brotli and gzip siblings
//! ```
//!
//! Trunk runs `finish` on its staging directory after each build (`Trunk.toml`); without
//! `--home`, the address comes from `RANGEFIT_HOME` when set. Debug builds (`--debug`, or
//! `TRUNK_PROFILE=debug` from trunk) get the service worker only: their module is ten times
//! larger and compressing it would take minutes.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use rangefit_bundle::{compress, finish, first_load, single, Options};

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("rangefit-bundle: {e}");
            ExitCode::from(2)
        }
    }
}

fn run(args: &[String]) -> Result<(), String> {
    let mut positional = Vec::new();
    let mut home = std::env::var("RANGEFIT_HOME").ok().filter(|h| !h.is_empty());
    let mut release = std::env::var("TRUNK_PROFILE").map(|p| p != "debug").unwrap_or(true);
    let mut it = args.iter();
    while let Some(a) = it.next() {
        match a.as_str() {
            "--home" => home = Some(it.next().ok_or("--home needs an address")?.clone()),
            "--debug" => release = false,
            _ if a.starts_with("--") => return Err(format!("unknown option {a}")),
            _ => positional.push(a.as_str()),
        }
    }
    let io = |what: &str, e: std::io::Error| format!("{what}: {e}");
    match positional.as_slice() {
        ["finish", dir] => finish(Path::new(dir), &Options { home, release }).map_err(|e| io(dir, e)),
        ["single", dir, out] => {
            let html = single::assemble(Path::new(dir), home.as_deref()).map_err(|e| io(dir, e))?;
            std::fs::write(out, html).map_err(|e| io(out, e))
        }
        ["sizes", dir] => sizes(Path::new(dir)),
        _ => Err("usage: rangefit-bundle finish DIR [--home URL] [--debug] | single DIR OUT.html [--home URL] \
            | sizes DIR"
            .into()),
    }
}

/// Prints the first load file by file (bytes, brotli and gzip siblings) and the totals as
/// `total RAW BROTLI GZIP`; fails when a sibling is missing or older than its file.
fn sizes(dir: &Path) -> Result<(), String> {
    let files = first_load(dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let size = |p: &PathBuf| std::fs::metadata(p).map(|m| m.len());
    let (mut raw, mut br, mut gz) = (0, 0, 0);
    println!("{:<48} {:>10} {:>10} {:>10}", "file", "bytes", "brotli", "gzip");
    for f in &files {
        let [b, g] = compress::SUFFIXES.map(|s| compress::sibling(f, s));
        let modified = |p: &PathBuf| std::fs::metadata(p).and_then(|m| m.modified()).ok();
        for s in [&b, &g] {
            if modified(s) < modified(f) {
                return Err(format!("{} is missing or older than its file: build the bundle again", s.display()));
            }
        }
        let sizes = [size(f), size(&b), size(&g)].map(|s| s.unwrap_or(0));
        println!("{:<48} {:>10} {:>10} {:>10}", rangefit_bundle_name(f), sizes[0], sizes[1], sizes[2]);
        raw += sizes[0];
        br += sizes[1];
        gz += sizes[2];
    }
    println!("total {raw} {br} {gz}");
    Ok(())
}

fn rangefit_bundle_name(p: &Path) -> String {
    p.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default()
}
