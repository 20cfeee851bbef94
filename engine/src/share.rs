//! Share links: the whole request in the URL fragment, so no server is involved.
//!
//! Encoding: the normalised request as compact JSON with every field that equals its
//! default left out (so that a link stays short) → raw DEFLATE (miniz_oxide, best
//! compression) → base64url without padding (RFC 4648 §5), prefixed with the link format
//! version: `r1.<payload>`. Decoding reverses it with a hard limit on the inflated size (a
//! hostile link cannot make the page inflate gigabytes) and reads the JSON through
//! [`Request::from_value`], so every field is validated exactly as a typed request is.

use base64::engine::general_purpose::URL_SAFE_NO_PAD;
use base64::Engine;
use serde_json::{Map, Value};

use crate::request::{AnalysisOptions, Parts, Request, RequestError};

/// Link format version written by this build.
pub const LINK_VERSION: u32 = 1;
/// Largest inflated payload accepted, bytes.
pub const MAX_INFLATED: usize = 64 * 1024;
/// Longest fragment accepted, characters.
pub const MAX_FRAGMENT: usize = 16 * 1024;

/// The fragment (everything after `#`) that carries `req`.
pub fn encode(req: &Request) -> String {
    let json = serde_json::to_string(&compact(req)).unwrap_or_default();
    let packed = miniz_oxide::deflate::compress_to_vec(json.as_bytes(), 10);
    format!("r{LINK_VERSION}.{}", URL_SAFE_NO_PAD.encode(packed))
}

/// The request a fragment carries. Accepts the fragment with or without a leading `#` or a
/// whole URL containing one.
pub fn decode(fragment: &str) -> Result<Request, RequestError> {
    let bad = |m: &str| RequestError { field: "link".to_string(), message: m.to_string() };
    let text = fragment.trim();
    let text = match text.rfind('#') {
        Some(i) => &text[i + 1..],
        None => text,
    };
    if text.is_empty() {
        return Err(bad("the link carries no design (nothing after #)"));
    }
    if text.len() > MAX_FRAGMENT {
        return Err(bad("the link is too long to be a Rangefit design"));
    }
    let Some((version, payload)) = text.split_once('.') else {
        return Err(bad("this is not a Rangefit design link (no format marker)"));
    };
    match version.strip_prefix('r').and_then(|v| v.parse::<u32>().ok()) {
        Some(LINK_VERSION) => {}
        Some(v) if v > LINK_VERSION => {
            return Err(bad(&format!(
                "this link was made by a newer Rangefit (link format {v}); this page reads format {LINK_VERSION}"
            )))
        }
        _ => return Err(bad("this is not a Rangefit design link (unknown format marker)")),
    }
    let packed = URL_SAFE_NO_PAD
        .decode(payload.as_bytes())
        .map_err(|_| bad("the link is damaged (not valid base64url); was it cut off when copied?"))?;
    let json = miniz_oxide::inflate::decompress_to_vec_with_limit(&packed, MAX_INFLATED).map_err(|e| {
        if e.status == miniz_oxide::inflate::TINFLStatus::HasMoreOutput {
            bad("the link unpacks to more than a design can be (over 64 KiB); it was not made by Rangefit")
        } else {
            bad("the link is damaged or truncated (it does not inflate); was it cut off when copied?")
        }
    })?;
    let value: Value =
        serde_json::from_slice(&json).map_err(|_| bad("the link is damaged (its content is not a request)"))?;
    Request::from_value(&value)
}

/// The request as JSON without the fields that equal their defaults.
pub fn compact(req: &Request) -> Value {
    let mut v = serde_json::to_value(req).unwrap_or(Value::Null);
    let defaults = [
        ("notes", Value::String(String::new())),
        ("keep_polarity", Value::Bool(true)),
        ("amplifier", Value::Object(Map::new())),
        ("analysis", serde_json::to_value(AnalysisOptions::default()).unwrap_or(Value::Null)),
        ("parts", serde_json::to_value(Parts::default()).unwrap_or(Value::Null)),
    ];
    if let Value::Object(map) = &mut v {
        for (key, default) in defaults {
            if map.get(key) == Some(&default) {
                map.remove(key);
            }
        }
        if let Some(Value::Object(src)) = map.get_mut("source") {
            if src.get("kind") == Some(&Value::String("single_ended".to_string())) {
                src.remove("kind");
            }
        }
    }
    v
}
