//! Designs kept in the browser: the stored format, its versions, and the rules for reading
//! and writing it. The browser's local storage sits behind [`Backend`] so the rules are
//! tested on the host with [`MemoryBackend`].
//!
//! Layout (format 1). Every saved design is its own key, so a damaged entry loses only
//! itself:
//!
//! * `rangefit:design:<id>` → `{"format": 1, "id": "<id>", "saved": <ms since 1970>,
//!   "request": {…request JSON, texts as typed…}}`. The design's name is the request's
//!   `name`.
//! * `rangefit:current` → `{"format": 1, "saved_id": "<id>" | null, "baseline": {…},
//!   "request": {…}}`: the design being edited, so it comes back after a reload.
//!   `baseline` is the request as last opened or saved, to tell whether it has unsaved
//!   changes.
//!
//! Format 0 (the first builds, before entries carried a format number) stored a design as
//! `{"title": "<name>", "text": "<request as JSON text>"}` under the same key. Reading
//! migrates such an entry to format 1 and writes it back; a format newer than this build
//! knows, or a request of a newer request version, is reported and left untouched.

use serde_json::{json, Map, Value};

/// The format this build writes.
pub const FORMAT: u64 = 1;
/// Prefix of every saved design's key.
pub const DESIGN_PREFIX: &str = "rangefit:design:";
/// Key of the design being edited.
pub const CURRENT_KEY: &str = "rangefit:current";

/// Why a write failed.
#[derive(Debug, Clone, PartialEq)]
pub enum StoreError {
    /// The browser's storage quota is used up.
    Full,
    /// Storage is switched off or refused the write for another reason.
    Unavailable(String),
}

impl StoreError {
    pub fn message(&self) -> String {
        match self {
            StoreError::Full => "the browser's storage for this page is full. Delete saved designs you no longer need \
                (or download their files) and try again."
                .into(),
            StoreError::Unavailable(why) => {
                format!("the browser refused to store it ({why}). Storage may be switched off for this page.")
            }
        }
    }
}

/// A key-value store of text, like the browser's local storage.
pub trait Backend {
    fn keys(&self) -> Vec<String>;
    fn get(&self, key: &str) -> Option<String>;
    fn set(&mut self, key: &str, value: &str) -> Result<(), StoreError>;
    fn remove(&mut self, key: &str);
}

/// A saved design.
#[derive(Debug, Clone, PartialEq)]
pub struct Saved {
    pub id: String,
    /// When it was last written, ms since 1970 (0 when unknown).
    pub saved: f64,
    pub request: Value,
}

impl Saved {
    pub fn name(&self) -> String {
        crate::form_load::name_of(&self.request)
    }
}

/// A stored entry that could not be used; it stays in storage until the user removes it.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    pub key: String,
    pub message: String,
}

/// Everything found under the saved-design keys.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Listing {
    /// Newest first.
    pub designs: Vec<Saved>,
    pub problems: Vec<Problem>,
    /// Entries of an older format that were migrated (and written back when possible).
    pub migrated: Vec<String>,
}

/// The design being edited.
#[derive(Debug, Clone, PartialEq)]
pub struct Working {
    pub saved_id: Option<String>,
    pub baseline: Value,
    pub request: Value,
}

/// How an entry reads.
#[derive(Debug, Clone, PartialEq)]
enum Read {
    Current(Value),
    Migrated(Value),
}

/// Reads an entry's text and brings it to the current format.
fn upgrade(text: &str) -> Result<Read, String> {
    let value: Value = serde_json::from_str(text).map_err(|e| format!("it is not valid JSON ({e})"))?;
    let Value::Object(map) = &value else { return Err("it is not a stored design (not a JSON object)".into()) };
    match map.get("format") {
        None => {
            // Format 0.
            let text = map.get("text").and_then(Value::as_str).ok_or("it has no format number and no request text")?;
            let mut request: Value =
                serde_json::from_str(text).map_err(|e| format!("its request text is not valid JSON ({e})"))?;
            let Value::Object(req) = &mut request else { return Err("its request is not a JSON object".into()) };
            if let Some(title) = map.get("title").and_then(Value::as_str).filter(|t| !t.trim().is_empty()) {
                req.insert("name".into(), Value::String(title.to_string()));
            }
            let mut upgraded = Map::new();
            upgraded.insert("format".into(), Value::from(FORMAT));
            upgraded.insert("saved".into(), Value::from(0.0));
            upgraded.insert("request".into(), request);
            for key in ["id", "saved_id", "baseline"] {
                if let Some(v) = map.get(key) {
                    upgraded.insert(key.into(), v.clone());
                }
            }
            Ok(Read::Migrated(Value::Object(upgraded)))
        }
        Some(f) => match f.as_u64() {
            Some(FORMAT) => Ok(Read::Current(value)),
            Some(n) if n > FORMAT => Err(format!(
                "it was saved by a newer version of Rangefit (storage format {n}; this page reads up to {FORMAT}); \
                it is left untouched"
            )),
            _ => Err(format!("its format number {f} is not one Rangefit ever wrote")),
        },
    }
}

/// The request of an upgraded entry, checked for what this build can show.
fn request_of(entry: &Value) -> Result<Value, String> {
    let request = entry.get("request").ok_or("it holds no request")?;
    if !request.is_object() {
        return Err("its request is not a JSON object".into());
    }
    if let Some(v) = request.get("version").and_then(Value::as_u64) {
        if v > u64::from(rangefit_engine::request::CURRENT_VERSION) {
            return Err(format!("its request is version {v}, newer than this page reads; it is left untouched"));
        }
    }
    Ok(request.clone())
}

fn saved_at(entry: &Value) -> f64 {
    entry.get("saved").and_then(Value::as_f64).filter(|t| t.is_finite()).unwrap_or(0.0)
}

/// Reads every saved design; migrates older entries and reports unusable ones.
pub fn list(b: &mut dyn Backend) -> Listing {
    let mut out = Listing::default();
    let mut keys: Vec<String> = b.keys().into_iter().filter(|k| k.starts_with(DESIGN_PREFIX)).collect();
    rangefit_engine::order::sort_by(&mut keys, String::cmp);
    for key in keys {
        let id = key[DESIGN_PREFIX.len()..].to_string();
        let Some(text) = b.get(&key) else { continue };
        let entry = match upgrade(&text) {
            Ok(Read::Current(v)) => v,
            Ok(Read::Migrated(mut v)) => {
                if let Value::Object(m) = &mut v {
                    m.insert("id".into(), Value::String(id.clone()));
                }
                if request_of(&v).is_ok() {
                    // Write the migrated entry back; if that fails it is migrated again next time.
                    let _ = b.set(&key, &v.to_string());
                    out.migrated.push(key.clone());
                }
                v
            }
            Err(why) => {
                out.problems.push(Problem { key, message: why });
                continue;
            }
        };
        match request_of(&entry) {
            Ok(request) => out.designs.push(Saved { id, saved: saved_at(&entry), request }),
            Err(why) => out.problems.push(Problem { key, message: why }),
        }
    }
    rangefit_engine::order::sort_by(&mut out.designs, |a, b| b.saved.total_cmp(&a.saved).then_with(|| a.id.cmp(&b.id)));
    out
}

/// A fresh id, not used by any stored design.
pub fn new_id(b: &dyn Backend, now: f64) -> String {
    let base = format!("{:x}", now.max(0.0) as u64);
    let taken = b.keys();
    let mut n = 0u32;
    loop {
        let id = if n == 0 { base.clone() } else { format!("{base}-{n}") };
        if !taken.contains(&format!("{DESIGN_PREFIX}{id}")) {
            return id;
        }
        n += 1;
    }
}

/// Writes a saved design (creating or replacing the entry `id`).
pub fn write(b: &mut dyn Backend, id: &str, request: &Value, now: f64) -> Result<Saved, StoreError> {
    let entry = json!({"format": FORMAT, "id": id, "saved": now, "request": request});
    b.set(&format!("{DESIGN_PREFIX}{id}"), &entry.to_string())?;
    Ok(Saved { id: id.to_string(), saved: now, request: request.clone() })
}

/// Reads one saved design.
pub fn read(b: &dyn Backend, id: &str) -> Result<Saved, String> {
    let text = b.get(&format!("{DESIGN_PREFIX}{id}")).ok_or("it is no longer stored")?;
    let entry = match upgrade(&text)? {
        Read::Current(v) | Read::Migrated(v) => v,
    };
    Ok(Saved { id: id.to_string(), saved: saved_at(&entry), request: request_of(&entry)? })
}

/// Gives a saved design a new name.
pub fn rename(b: &mut dyn Backend, id: &str, name: &str, now: f64) -> Result<Saved, String> {
    let mut saved = read(b, id)?;
    if let Value::Object(m) = &mut saved.request {
        m.insert("name".into(), Value::String(name.trim().to_string()));
    }
    write(b, id, &saved.request, now).map_err(|e| e.message())
}

/// Stores a copy of a saved design under a new id, named "<name> (copy)".
pub fn duplicate(b: &mut dyn Backend, id: &str, now: f64) -> Result<Saved, String> {
    let mut saved = read(b, id)?;
    let name = format!("{} (copy)", saved.name());
    if let Value::Object(m) = &mut saved.request {
        m.insert("name".into(), Value::String(name));
    }
    let new = new_id(b, now);
    write(b, &new, &saved.request, now).map_err(|e| e.message())
}

pub fn delete(b: &mut dyn Backend, id: &str) {
    b.remove(&format!("{DESIGN_PREFIX}{id}"));
}

/// Removes any stored key by name (used for entries that could not be read).
pub fn remove_key(b: &mut dyn Backend, key: &str) {
    if key.starts_with(DESIGN_PREFIX) || key == CURRENT_KEY {
        b.remove(key);
    }
}

/// The design being edited when the page was last open, if any.
pub fn read_working(b: &mut dyn Backend) -> Result<Option<Working>, String> {
    let Some(text) = b.get(CURRENT_KEY) else { return Ok(None) };
    let entry = match upgrade(&text)? {
        Read::Current(v) | Read::Migrated(v) => v,
    };
    let request = request_of(&entry)?;
    let baseline = entry.get("baseline").filter(|v| v.is_object()).cloned().unwrap_or_else(|| request.clone());
    let saved_id = entry.get("saved_id").and_then(Value::as_str).map(str::to_string);
    Ok(Some(Working { saved_id, baseline, request }))
}

pub fn write_working(b: &mut dyn Backend, w: &Working) -> Result<(), StoreError> {
    let entry = json!({"format": FORMAT, "saved_id": w.saved_id, "baseline": w.baseline, "request": w.request});
    b.set(CURRENT_KEY, &entry.to_string())
}

/// What [`export`] writes in its `kind` field, so an import can tell the file apart.
pub const EXPORT_KIND: &str = "rangefit-designs";

/// The saved designs as one JSON file, to move them to another browser or machine:
/// `{"format": 1, "kind": "rangefit-designs", "designs": [{"id", "saved", "request"}, …]}`,
/// each design an entry as stored.
pub fn export(designs: &[Saved]) -> String {
    let entries: Vec<Value> =
        designs.iter().map(|d| json!({"format": FORMAT, "id": d.id, "saved": d.saved, "request": d.request})).collect();
    // One line: a pretty printer of its own would cost the bundle about 2 KB.
    json!({"format": FORMAT, "kind": EXPORT_KIND, "designs": entries}).to_string()
}

/// What an import did.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Imported {
    /// The designs written, under fresh ids.
    pub added: Vec<Saved>,
    /// Designs that were already saved here with the same request.
    pub already: usize,
}

/// Reads a file made by [`export`], one stored entry, or a bare request (a `rangefit`
/// command `REQUEST.json`), and saves every design in it that is not saved here yet.
/// Nothing is written unless every design in the file can be read.
pub fn import(b: &mut dyn Backend, text: &str, now: f64) -> Result<Imported, String> {
    let value: Value = serde_json::from_str(text).map_err(|e| format!("the file is not valid JSON ({e})"))?;
    let Value::Object(map) = &value else { return Err("the file holds no design (not a JSON object)".into()) };
    let entries: Vec<Value> = match map.get("designs") {
        Some(Value::Array(list)) => {
            if let Some(f) = map.get("format").and_then(Value::as_u64).filter(|f| *f > FORMAT) {
                return Err(format!(
                    "it was written by a newer version of Rangefit (format {f}; this page reads up to {FORMAT})"
                ));
            }
            list.clone()
        }
        Some(_) => return Err("its “designs” is not a list".into()),
        None if map.contains_key("request") => vec![value.clone()],
        None => vec![json!({"format": FORMAT, "request": value})],
    };
    if entries.is_empty() {
        return Err("the file holds no designs".into());
    }
    let mut requests = Vec::new();
    for (i, entry) in entries.iter().enumerate() {
        let which = if entries.len() == 1 { "its design".to_string() } else { format!("design {} of the file", i + 1) };
        let text = entry.to_string();
        let read = match upgrade(&text).map_err(|why| format!("{which}: {why}"))? {
            Read::Current(v) | Read::Migrated(v) => v,
        };
        requests.push(request_of(&read).map_err(|why| format!("{which}: {why}"))?);
    }
    let mut saved = list(b).designs;
    let mut out = Imported::default();
    for request in requests {
        if saved.iter().any(|s| s.request == request) {
            out.already += 1;
            continue;
        }
        let id = new_id(b, now);
        let s = write(b, &id, &request, now).map_err(|e| {
            let done = if out.added.is_empty() { String::new() } else { format!(" ({} were saved)", out.added.len()) };
            format!("{}{done}", e.message())
        })?;
        saved.push(s.clone());
        out.added.push(s);
    }
    Ok(out)
}

/// Local storage kept in memory, with an optional quota in characters (for tests).
#[cfg(test)]
#[derive(Debug, Clone, Default)]
pub struct MemoryBackend {
    pub items: std::collections::BTreeMap<String, String>,
    pub quota: Option<usize>,
}

#[cfg(test)]
impl Backend for MemoryBackend {
    fn keys(&self) -> Vec<String> {
        self.items.keys().cloned().collect()
    }
    fn get(&self, key: &str) -> Option<String> {
        self.items.get(key).cloned()
    }
    fn set(&mut self, key: &str, value: &str) -> Result<(), StoreError> {
        if let Some(quota) = self.quota {
            let used: usize =
                self.items.iter().filter(|(k, _)| k.as_str() != key).map(|(k, v)| k.len() + v.len()).sum();
            if used + key.len() + value.len() > quota {
                return Err(StoreError::Full);
            }
        }
        self.items.insert(key.to_string(), value.to_string());
        Ok(())
    }
    fn remove(&mut self, key: &str) {
        self.items.remove(key);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rangefit_engine::demos;

    fn demo() -> Value {
        serde_json::from_str(demos::ALL[0].json).expect("demo is JSON")
    }

    #[test]
    fn save_list_rename_duplicate_delete() {
        let mut b = MemoryBackend::default();
        let id = new_id(&b, 1000.0);
        write(&mut b, &id, &demo(), 1000.0).expect("saved");
        let other = new_id(&b, 1000.0);
        assert_ne!(id, other, "ids are unique even at the same instant");
        let l = list(&mut b);
        assert_eq!(l.designs.len(), 1);
        assert_eq!(l.designs[0].name(), "Harbour hydrophone tap");
        assert!(l.problems.is_empty());

        rename(&mut b, &id, "  Pier 4 tap ", 2000.0).expect("renamed");
        let copy = duplicate(&mut b, &id, 3000.0).expect("duplicated");
        assert_eq!(copy.name(), "Pier 4 tap (copy)");
        let names: Vec<String> = list(&mut b).designs.iter().map(Saved::name).collect();
        assert_eq!(names, ["Pier 4 tap (copy)", "Pier 4 tap"], "newest first");

        delete(&mut b, &id);
        let names: Vec<String> = list(&mut b).designs.iter().map(Saved::name).collect();
        assert_eq!(names, ["Pier 4 tap (copy)"]);
    }

    #[test]
    fn a_version_0_entry_is_migrated_not_dropped() {
        // Hand-made format-0 entry: a title and the request as text, no format number.
        let mut b = MemoryBackend::default();
        let v0 = json!({"title": "Old pier tap", "text": demos::ALL[0].json}).to_string();
        b.items.insert(format!("{DESIGN_PREFIX}old1"), v0);
        let l = list(&mut b);
        assert!(l.problems.is_empty(), "{:?}", l.problems);
        assert_eq!(l.migrated, [format!("{DESIGN_PREFIX}old1")]);
        assert_eq!(l.designs.len(), 1);
        assert_eq!(l.designs[0].id, "old1");
        assert_eq!(l.designs[0].name(), "Old pier tap");
        let mut expected = demo();
        expected["name"] = Value::from("Old pier tap");
        assert_eq!(l.designs[0].request, expected);
        // Written back in the current format.
        let stored: Value = serde_json::from_str(&b.items[&format!("{DESIGN_PREFIX}old1")]).expect("JSON");
        assert_eq!(stored["format"], FORMAT);
        assert_eq!(stored["request"], expected);
        assert_eq!(list(&mut b).migrated.len(), 0, "migrated once");
    }

    #[test]
    fn a_version_0_working_copy_is_migrated() {
        let mut b = MemoryBackend::default();
        b.items.insert(CURRENT_KEY.into(), json!({"title": "Draft", "text": demos::ALL[1].json}).to_string());
        let w = read_working(&mut b).expect("readable").expect("present");
        assert_eq!(crate::form_load::name_of(&w.request), "Draft");
        assert_eq!(w.saved_id, None);
        assert_eq!(w.baseline, w.request);
    }

    #[test]
    fn a_corrupt_entry_loses_only_itself_and_is_reported() {
        let mut b = MemoryBackend::default();
        write(&mut b, "good", &demo(), 5.0).expect("saved");
        b.items.insert(format!("{DESIGN_PREFIX}broken"), "{\"format\": 1, \"request\": {".into());
        b.items.insert(format!("{DESIGN_PREFIX}future"), json!({"format": 7, "request": {}}).to_string());
        b.items.insert(format!("{DESIGN_PREFIX}newreq"), json!({"format": 1, "request": {"version": 99}}).to_string());
        b.items.insert(format!("{DESIGN_PREFIX}notobj"), "[1,2]".into());
        b.items.insert("someone-else".into(), "not ours".into());
        let l = list(&mut b);
        assert_eq!(l.designs.iter().map(|d| d.id.as_str()).collect::<Vec<_>>(), ["good"]);
        let reported: Vec<&str> = l.problems.iter().map(|p| p.key.as_str()).collect();
        assert_eq!(
            reported,
            ["rangefit:design:broken", "rangefit:design:future", "rangefit:design:newreq", "rangefit:design:notobj"]
        );
        assert!(l.problems[0].message.contains("not valid JSON"));
        assert!(l.problems[1].message.contains("newer version"));
        // Nothing is deleted behind the user's back.
        assert_eq!(b.items.len(), 6);
        remove_key(&mut b, "rangefit:design:broken");
        remove_key(&mut b, "someone-else");
        assert_eq!(b.items.len(), 5, "only our own keys can be removed");
    }

    #[test]
    fn a_full_quota_is_an_error_and_keeps_what_was_there() {
        let mut b = MemoryBackend::default();
        write(&mut b, "a", &demo(), 1.0).expect("first fits");
        let used: usize = b.items.iter().map(|(k, v)| k.len() + v.len()).sum();
        b.quota = Some(used + 100);
        let before = b.items.clone();
        let err = write(&mut b, "b", &demo(), 2.0).expect_err("second does not fit");
        assert_eq!(err, StoreError::Full);
        assert!(err.message().contains("full"));
        assert_eq!(b.items, before);
        let w = Working { saved_id: None, baseline: demo(), request: demo() };
        assert_eq!(write_working(&mut b, &w), Err(StoreError::Full));
    }

    #[test]
    fn export_then_import_moves_every_design_once() {
        let mut here = MemoryBackend::default();
        write(&mut here, "a", &demo(), 1.0).expect("saved");
        let second: Value = serde_json::from_str(demos::ALL[1].json).expect("demo is JSON");
        write(&mut here, "b", &second, 2.0).expect("saved");
        let file = export(&list(&mut here).designs);

        let mut there = MemoryBackend::default();
        write(&mut there, "x", &second, 3.0).expect("saved");
        let got = import(&mut there, &file, 10.0).expect("imported");
        assert_eq!(got.already, 1, "the design saved there already is not copied again");
        assert_eq!(got.added.len(), 1);
        assert_eq!(got.added[0].request, demo());
        let names: Vec<String> = list(&mut there).designs.iter().map(Saved::name).collect();
        assert_eq!(names.len(), 2);
        let again = import(&mut there, &file, 11.0).expect("imported again");
        assert_eq!((again.added.len(), again.already), (0, 2), "importing twice adds nothing");
    }

    #[test]
    fn import_takes_a_bare_request_and_rejects_what_it_cannot_read() {
        let mut b = MemoryBackend::default();
        let got = import(&mut b, demos::ALL[2].json, 1.0).expect("a request file imports");
        assert_eq!(got.added.len(), 1);
        let cases = [
            ("not json", "not valid JSON"),
            ("[1]", "not a JSON object"),
            (r#"{"designs": 3}"#, "not a list"),
            (r#"{"designs": []}"#, "no designs"),
            (r#"{"format": 9, "designs": [{}]}"#, "newer version"),
            (r#"{"designs": [{"format": 1, "request": {}}, {"format": 1, "request": 7}]}"#, "design 2 of the file"),
            (r#"{"format": 1, "request": {"version": 99}}"#, "its design: its request is version 99"),
        ];
        for (text, want) in cases {
            let before = b.items.clone();
            let err = import(&mut b, text, 2.0).expect_err(text);
            assert!(err.contains(want), "{text}: {err}");
            assert_eq!(b.items, before, "{text}: nothing written");
        }
        b.quota = Some(b.items.iter().map(|(k, v)| k.len() + v.len()).sum::<usize>() + 10);
        let err = import(&mut b, demos::ALL[3].json, 3.0).expect_err("no room");
        assert!(err.contains("full"), "{err}");
    }

    #[test]
    fn the_working_copy_round_trips() {
        let mut b = MemoryBackend::default();
        assert_eq!(read_working(&mut b), Ok(None));
        let mut edited = demo();
        edited["name"] = Value::from("Edited");
        let w = Working { saved_id: Some("abc".into()), baseline: demo(), request: edited };
        write_working(&mut b, &w).expect("written");
        assert_eq!(read_working(&mut b), Ok(Some(w)));
        b.items.insert(CURRENT_KEY.into(), "garbage".into());
        assert!(read_working(&mut b).is_err());
    }
}
