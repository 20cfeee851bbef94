//! Reading JSON into a request: the `Obj` helper (an object being read, with the path used in
//! error messages), physical values with units, levels in decibels and the error constructor.

use serde_json::{Map, Value};

use super::RequestError;
use crate::units::{self, Quantity};

pub(super) fn is_decibels(s: &str) -> bool {
    let t = s.trim().to_ascii_lowercase();
    t.ends_with("db") || t.ends_with("dbfs")
}

/// A level in decibels: a plain number, or a string ending in `dB` (or `dBFS`).
pub(super) fn decibels(path: &str, v: &Value) -> Result<f64, RequestError> {
    let x = match v {
        Value::Number(n) => n.as_f64(),
        Value::String(s) => {
            let t = s.trim();
            let lower = t.to_ascii_lowercase();
            let body = lower.strip_suffix("dbfs").or_else(|| lower.strip_suffix("db")).unwrap_or(&lower);
            body.trim().replace('−', "-").parse::<f64>().ok()
        }
        other => {
            return Err(field_err(
                path,
                &format!("expected a level in dB as a number or a string such as \"0.1 dB\", got {}", json_kind(other)),
            ))
        }
    };
    match x {
        Some(x) if x.is_finite() => Ok(x),
        _ => Err(field_err(path, "is not a level in dB (e.g. 0.1 or \"0.1 dB\")")),
    }
}

pub(super) fn field_err(field: &str, message: &str) -> RequestError {
    RequestError { field: field.to_string(), message: message.to_string() }
}

/// Reads one physical value: a JSON number in SI base units or a string with a unit.
pub(super) fn quantity(path: &str, v: &Value, q: Quantity) -> Result<f64, RequestError> {
    let r = match v {
        Value::Number(n) => match n.as_f64() {
            Some(x) => units::parse_number(x, q),
            None => return Err(field_err(path, "number out of range")),
        },
        Value::String(s) => units::parse(s, q),
        other => {
            return Err(field_err(
                path,
                &format!("expected a {} as a number or a string with a unit, got {}", q.name(), json_kind(other)),
            ))
        }
    };
    r.map_err(|e| field_err(path, &e.to_string()))
}

pub(super) fn json_kind(v: &Value) -> &'static str {
    match v {
        Value::Null => "null",
        Value::Bool(_) => "true/false",
        Value::Number(_) => "a number",
        Value::String(_) => "text",
        Value::Array(_) => "a list",
        Value::Object(_) => "an object",
    }
}

/// A JSON object being read, with the path used in error messages.
pub(super) struct Obj<'a> {
    path: String,
    map: &'a Map<String, Value>,
}

impl<'a> Obj<'a> {
    pub(super) fn new(path: &str, v: &'a Value) -> Result<Obj<'a>, RequestError> {
        match v {
            Value::Object(map) => Ok(Obj { path: path.to_string(), map }),
            other => Err(field_err(
                if path.is_empty() { "" } else { path },
                &format!("expected an object {{…}}, got {}", json_kind(other)),
            )),
        }
    }
    pub(super) fn path_of(&self, key: &str) -> String {
        if self.path.is_empty() {
            key.to_string()
        } else {
            format!("{}.{}", self.path, key)
        }
    }
    pub(super) fn err(&self, key: &str, message: &str) -> RequestError {
        field_err(&self.path_of(key), message)
    }
    pub(super) fn get(&self, key: &str) -> Option<&'a Value> {
        self.map.get(key).filter(|v| !v.is_null())
    }
    pub(super) fn required(&self, key: &str) -> Result<&'a Value, RequestError> {
        self.get(key).ok_or_else(|| self.err(key, "is required"))
    }
    pub(super) fn q(&self, key: &str, q: Quantity) -> Result<Option<f64>, RequestError> {
        match self.get(key) {
            None => Ok(None),
            Some(Value::String(s)) if s.trim().is_empty() => Ok(None),
            Some(v) => quantity(&self.path_of(key), v, q).map(Some),
        }
    }
    pub(super) fn required_q(&self, key: &str, q: Quantity) -> Result<f64, RequestError> {
        self.q(key, q)?.ok_or_else(|| self.err(key, &format!("is required (a {})", q.name())))
    }
    pub(super) fn string(&self, key: &str) -> Result<Option<String>, RequestError> {
        match self.get(key) {
            None => Ok(None),
            Some(Value::String(s)) => Ok(Some(s.trim().to_string())),
            Some(other) => Err(self.err(key, &format!("expected text, got {}", json_kind(other)))),
        }
    }
    pub(super) fn bool(&self, key: &str) -> Result<Option<bool>, RequestError> {
        match self.get(key) {
            None => Ok(None),
            Some(Value::Bool(b)) => Ok(Some(*b)),
            Some(other) => Err(self.err(key, &format!("expected true or false, got {}", json_kind(other)))),
        }
    }
    /// Rejects fields this version does not know, so a typo is not silently ignored.
    pub(super) fn finish(&self, known: &[&str]) -> Result<(), RequestError> {
        for key in self.map.keys() {
            if !known.contains(&key.as_str()) {
                return Err(self.err(key, &format!("unknown field; known fields here are: {}", known.join(", "))));
            }
        }
        Ok(())
    }
}
