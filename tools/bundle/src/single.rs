//! The app as one self-contained HTML file, made from the page trunk wrote: the stylesheet
//! goes into a `<style>` element, the icon becomes a `data:` address, the preload hints
//! and the manifest link go, and trunk's loader is replaced by the JavaScript glue itself
//! followed by the WebAssembly module, gzip-compressed and base64-encoded, which the page
//! decompresses (`DecompressionStream`) and instantiates from bytes. Nothing is fetched,
//! so the file works from `file://` with nothing beside it.
//!
//! The file carries `<meta name="rangefit-home" content="…">`: the hosted app's address
//! (empty when unknown), so that the links it makes can open in the hosted app as well.
//! The hosted app's "download" action fills it in with its own address.

use std::fs;
use std::io;
use std::path::Path;

use base64::Engine;

use crate::{bad, compress};

/// The `<meta>` element that holds the hosted app's address; the app looks for this text.
pub const HOME_META: &str = r#"<meta name="rangefit-home" content="">"#;

/// The one-file app made from the bundle in `dir`.
pub fn assemble(dir: &Path, home: Option<&str>) -> io::Result<String> {
    let page = fs::read_to_string(dir.join("index.html"))?;
    let read = |href: &str| -> io::Result<Vec<u8>> {
        let name = href.trim_start_matches('/');
        if name.is_empty() || name.contains("..") || name.contains('/') {
            return Err(bad("index.html", &format!("unexpected file reference {href:?}")));
        }
        fs::read(dir.join(name))
    };
    let mut out = String::with_capacity(page.len());
    let mut rest = page.as_str();
    let mut script_done = false;
    while let Some(start) = next_tag(rest) {
        out.push_str(&rest[..start]);
        rest = &rest[start..];
        let end = rest.find('>').ok_or_else(|| bad("index.html", "a tag is not closed"))? + 1;
        let tag = &rest[..end];
        if tag.starts_with("<link") {
            let rel = attr(tag, "rel").unwrap_or_default();
            let href = attr(tag, "href").unwrap_or_default();
            match rel.as_str() {
                "stylesheet" => {
                    let css = String::from_utf8(read(&href)?).map_err(|_| bad(&href, "not UTF-8"))?;
                    out.push_str(&format!("<style>{}</style>", inline_safe(&css, "</style", &href)?));
                }
                "icon" if !href.starts_with("data:") => {
                    let data = base64::engine::general_purpose::STANDARD.encode(read(&href)?);
                    out.push_str(&format!(r#"<link rel="icon" href="data:image/svg+xml;base64,{data}">"#));
                }
                "modulepreload" | "preload" | "manifest" => {}
                _ => out.push_str(tag),
            }
            rest = &rest[end..];
        } else {
            let close = rest.find("</script>").ok_or_else(|| bad("index.html", "a script is not closed"))?;
            let body = &rest[end..close];
            if tag.contains(r#"type="module""#) && body.contains("import init") {
                out.push_str(&loader(body, dir, &read)?);
                script_done = true;
            } else {
                out.push_str(&rest[..close]);
                out.push_str("</script>");
            }
            rest = &rest[close + "</script>".len()..];
        }
    }
    out.push_str(rest);
    if !script_done {
        return Err(bad("index.html", "trunk's loader script was not found"));
    }
    let meta = match home.filter(|h| !h.is_empty()) {
        Some(h) => HOME_META.replace(r#"content="""#, &format!(r#"content="{}""#, escape_attr(h))),
        None => HOME_META.to_string(),
    };
    let head = out.find("</head>").ok_or_else(|| bad("index.html", "no </head>"))?;
    out.insert_str(head, &meta);
    Ok(out)
}

/// Where the next `<link` or `<script` tag starts.
fn next_tag(s: &str) -> Option<usize> {
    match (s.find("<link"), s.find("<script")) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    }
}

/// The value of attribute `name` in a start tag (double-quoted, as trunk writes them).
fn attr(tag: &str, name: &str) -> Option<String> {
    let key = format!(" {name}=\"");
    let at = tag.find(&key)? + key.len();
    let len = tag[at..].find('"')?;
    Some(tag[at..at + len].to_string())
}

/// The module script that replaces trunk's loader: the glue, then the module from bytes.
fn loader(body: &str, dir: &Path, read: &dyn Fn(&str) -> io::Result<Vec<u8>>) -> io::Result<String> {
    let js = quoted_after(body, " from ").ok_or_else(|| bad("index.html", "the loader imports no glue"))?;
    let wasm = quoted_after(body, "module_or_path:").ok_or_else(|| bad("index.html", "the loader names no module"))?;
    let glue = String::from_utf8(read(&js)?).map_err(|_| bad(&js, "not UTF-8"))?;
    let init = default_export(&glue).ok_or_else(|| bad(&js, "no default export (the init function)"))?;
    read(&wasm)?; // the name checked like every other
    let module = gzipped(dir, &wasm)?;
    let data = base64::engine::general_purpose::STANDARD.encode(module);
    // In a block of its own, so its names cannot clash with the glue's.
    Ok(format!(
        "<script type=\"module\">\n{}\n{{\nconst z = Uint8Array.from(atob(\"{data}\"), c => c.charCodeAt(0));\n\
         const bytes = await new Response(new Blob([z]).stream().pipeThrough(new DecompressionStream(\"gzip\")))\
         .arrayBuffer();\nconst wasm = await {init}({{ module_or_path: bytes }});\n\
         dispatchEvent(new CustomEvent(\"TrunkApplicationStarted\", {{detail: {{wasm}}}}));\n}}\n</script>",
        inline_safe(&glue, "</script", &js)?
    ))
}

/// The module `name` in `dir`, gzip-compressed: its `.gz` sibling when one at least as new
/// is there (`finish` writes the siblings first), else compressed here.
fn gzipped(dir: &Path, name: &str) -> io::Result<Vec<u8>> {
    let file = dir.join(name.trim_start_matches('/'));
    let sibling = compress::sibling(&file, ".gz");
    let modified = |p: &Path| fs::metadata(p).and_then(|m| m.modified()).ok();
    match (modified(&sibling), modified(&file)) {
        (Some(gz), Some(raw)) if gz >= raw => fs::read(&sibling),
        _ => compress::gzip(&fs::read(&file)?),
    }
}

/// The name the glue exports as default (its init function): `export default NAME;` or
/// `export { …, NAME as default };`.
fn default_export(glue: &str) -> Option<String> {
    glue.lines().find_map(|line| {
        let l = line.trim();
        if let Some(name) = l.strip_prefix("export default ") {
            return name.strip_suffix(';').map(str::to_string);
        }
        let list = l.strip_prefix("export {")?.trim_end_matches(';').trim_end().strip_suffix('}')?;
        list.split(',').find_map(|item| item.trim().strip_suffix(" as default").map(|n| n.trim().to_string()))
    })
}

/// The first single-quoted text after `marker`.
fn quoted_after(s: &str, marker: &str) -> Option<String> {
    let at = s.find(marker)? + marker.len();
    let open = s[at..].find('\'')? + at + 1;
    let len = s[open..].find('\'')?;
    Some(s[open..open + len].to_string())
}

/// `text` for inlining inside an element that `closing` would end early.
fn inline_safe<'a>(text: &'a str, closing: &str, file: &str) -> io::Result<&'a str> {
    if text.to_ascii_lowercase().contains(closing) {
        return Err(bad(file, &format!("contains {closing}, which would end the inlined element")));
    }
    Ok(text)
}

/// Text for a double-quoted attribute value.
pub fn escape_attr(s: &str) -> String {
    s.replace('&', "&amp;").replace('"', "&quot;").replace('<', "&lt;").replace('>', "&gt;")
}
