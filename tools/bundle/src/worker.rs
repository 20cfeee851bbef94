//! The service worker for one build (`sw.js`, from the template `sw.js` beside this file):
//! the build's cache name, a digest of every file it caches, and the list of those files
//! with their sizes. A new build gives a new worker script, which the browser installs
//! beside the running one and switches to on the next visit; the worker never serves a
//! file of another build (see the template's comments for the rules).

use std::fs;
use std::io;
use std::path::Path;

use sha2::{Digest, Sha256};

use crate::{first_load, name_of, WORKER_FILE};

const TEMPLATE: &str = include_str!("sw.js");

/// A cached file: its name relative to the worker's scope (`""` for the page) and size.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Cached {
    pub key: String,
    pub size: u64,
}

/// What the worker of the build in `dir` caches: the page first, then the other files
/// of the first load (the worker itself excepted), and the cache name of the build.
pub fn plan(dir: &Path) -> io::Result<(String, Vec<Cached>)> {
    let mut files = Vec::new();
    let mut digest = Sha256::new();
    for path in first_load(dir)? {
        let name = name_of(&path);
        if name == WORKER_FILE {
            continue;
        }
        let bytes = fs::read(&path)?;
        digest.update(name.as_bytes());
        digest.update([0]);
        digest.update(&bytes);
        let key = if name == "index.html" { String::new() } else { name };
        files.push(Cached { key, size: bytes.len() as u64 });
    }
    if !files.iter().any(|f| f.key.is_empty()) {
        return Err(crate::bad("index.html", "missing: is this a built bundle?"));
    }
    files.sort_by(|a, b| (!a.key.is_empty(), &a.key).cmp(&(!b.key.is_empty(), &b.key)));
    let hex: String = digest.finalize().iter().take(8).map(|b| format!("{b:02x}")).collect();
    Ok((format!("rangefit-{hex}"), files))
}

/// The worker script for the build in `dir`, without the template's comments.
pub fn script(dir: &Path) -> io::Result<String> {
    let (version, files) = plan(dir)?;
    let list: Vec<String> = files.iter().map(|f| format!("[{:?},{}]", f.key, f.size)).collect();
    let filled = TEMPLATE.replace("__VERSION__", &version).replace("__FILES__", &format!("[{}]", list.join(",")));
    let lines: Vec<&str> = filled.lines().map(str::trim).filter(|l| !l.is_empty() && !l.starts_with("//")).collect();
    Ok(lines.join("\n") + "\n")
}

/// Writes `sw.js` into `dir`.
pub fn write(dir: &Path) -> io::Result<()> {
    fs::write(dir.join(WORKER_FILE), script(dir)?)
}
