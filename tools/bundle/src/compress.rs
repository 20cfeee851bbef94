//! Precompressed siblings: `FILE.br` (brotli, RFC 7932, quality 11) and `FILE.gz` (gzip,
//! RFC 1952, made by zopfli, which any gzip decoder reads and which comes out a few
//! percent smaller than `gzip -9`). A static host that serves precompressed files sends
//! them with `Content-Encoding`; `.ci/static-server.py` does.

use std::fs;
use std::io;
use std::num::NonZeroU64;
use std::path::{Path, PathBuf};

/// Suffixes of the siblings, in the order they are written.
pub const SUFFIXES: [&str; 2] = [".br", ".gz"];

/// Whether a file name is a precompressed sibling.
pub fn is_sibling(name: &str) -> bool {
    SUFFIXES.iter().any(|s| name.ends_with(s))
}

/// The brotli stream of `data` (quality 11, 4 MiB window).
pub fn brotli(data: &[u8]) -> io::Result<Vec<u8>> {
    let params = brotli::enc::BrotliEncoderParams { quality: 11, lgwin: 22, ..Default::default() };
    let mut out = Vec::new();
    brotli::BrotliCompress(&mut &data[..], &mut out, &params)?;
    Ok(out)
}

/// The gzip stream of `data`, made by zopfli.
pub fn gzip(data: &[u8]) -> io::Result<Vec<u8>> {
    // Fewer rounds than zopfli's default of 15: the module is over a megabyte, and more
    // rounds gain a few hundred bytes for many seconds.
    let rounds = NonZeroU64::new(5).unwrap_or(NonZeroU64::MIN);
    let options = zopfli::Options { iteration_count: rounds, ..Default::default() };
    let mut out = Vec::new();
    zopfli::compress(options, zopfli::Format::Gzip, data, &mut out)?;
    Ok(out)
}

/// Writes `FILE.br` and `FILE.gz` beside `file` and returns their paths.
pub fn write_siblings(file: &Path) -> io::Result<[PathBuf; 2]> {
    let data = fs::read(file)?;
    let br = sibling(file, SUFFIXES[0]);
    let gz = sibling(file, SUFFIXES[1]);
    fs::write(&br, brotli(&data)?)?;
    fs::write(&gz, gzip(&data)?)?;
    Ok([br, gz])
}

/// `FILE` + `suffix`.
pub fn sibling(file: &Path, suffix: &str) -> PathBuf {
    let mut name = file.as_os_str().to_owned();
    name.push(suffix);
    PathBuf::from(name)
}
