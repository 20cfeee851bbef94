//! Finishes the release bundle that trunk builds in `dist/`: the service worker that keeps
//! the app working offline ([`worker`]), the app as one self-contained HTML file
//! ([`single`]), and a `.br` and a `.gz` sibling of every file a browser loads, for static
//! hosts that serve precompressed files ([`compress`]). [`first_load`] is the one rule for
//! which files a first visit transfers; the service worker caches them and the size
//! budget counts them.
//!
//! Trunk runs [`finish`] on its staging directory after every build (a `post_build` hook in
//! `Trunk.toml`); the `rangefit-bundle` command runs the same steps on any built directory.

use std::fs;
use std::io;
use std::path::{Path, PathBuf};

pub mod compress;
pub mod single;
pub mod worker;

/// File name of the one-file app written beside the bundle.
pub const SINGLE_FILE: &str = "rangefit-offline.html";
/// File name of the service worker.
pub const WORKER_FILE: &str = "sw.js";

/// What [`finish`] does besides the service worker.
#[derive(Debug, Clone, Default)]
pub struct Options {
    /// The hosted app's address, written into the one-file app so its links can open there.
    pub home: Option<String>,
    /// Writes the `.br` and `.gz` siblings and the one-file app (slow: brotli at quality 11
    /// and zopfli; skipped for debug builds, whose module is ten times larger).
    pub release: bool,
}

/// Writes the service worker and, for a release build, the precompressed siblings and the
/// one-file app into the built bundle `dir`.
pub fn finish(dir: &Path, options: &Options) -> io::Result<()> {
    remove_siblings(dir)?;
    let _ = fs::remove_file(dir.join(SINGLE_FILE));
    worker::write(dir)?;
    if options.release {
        for file in first_load(dir)? {
            compress::write_siblings(&file)?;
        }
        let html = single::assemble(dir, options.home.as_deref())?;
        fs::write(dir.join(SINGLE_FILE), html)?;
    }
    Ok(())
}

/// Every file a first visit loads, sorted by name: all files in `dir` except the
/// precompressed siblings and the one-file app (downloaded on request only). The service
/// worker is among them; it caches the others.
pub fn first_load(dir: &Path) -> io::Result<Vec<PathBuf>> {
    let mut files = Vec::new();
    for entry in fs::read_dir(dir)? {
        let entry = entry?;
        let path = entry.path();
        let name = entry.file_name().to_string_lossy().into_owned();
        if entry.file_type()?.is_file() && !compress::is_sibling(&name) && name != SINGLE_FILE {
            files.push(path);
        }
    }
    files.sort();
    Ok(files)
}

/// Removes the siblings an earlier run left, so none outlives the file it was made from.
fn remove_siblings(dir: &Path) -> io::Result<()> {
    for entry in fs::read_dir(dir)? {
        let entry = entry?;
        if compress::is_sibling(&entry.file_name().to_string_lossy()) {
            fs::remove_file(entry.path())?;
        }
    }
    Ok(())
}

/// The file name of `path` as text.
pub(crate) fn name_of(path: &Path) -> String {
    path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default()
}

/// An error about the bundle's contents, naming the file.
pub(crate) fn bad(file: &str, why: &str) -> io::Error {
    io::Error::new(io::ErrorKind::InvalidData, format!("{file}: {why}"))
}
