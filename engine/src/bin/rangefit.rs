//! The `rangefit` command-line tool; all logic lives in `rangefit_engine::cli`.

use std::io::{Read, Write};

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let read = |path: &str| -> Result<String, String> {
        if path == "-" {
            let mut s = String::new();
            std::io::stdin().read_to_string(&mut s).map_err(|e| e.to_string())?;
            Ok(s)
        } else {
            std::fs::read_to_string(path).map_err(|e| e.to_string())
        }
    };
    let out = rangefit_engine::cli::run(&args, &read);
    let _ = std::io::stdout().write_all(out.stdout.as_bytes());
    let _ = std::io::stderr().write_all(out.stderr.as_bytes());
    std::process::exit(out.status);
}
