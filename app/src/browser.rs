//! The few browser services the page uses, each failing softly: local storage (through
//! gloo-storage), user-timing marks, the clipboard, file downloads, files the user picks,
//! fetching a file of the app, and the address bar (a page opened from a file included).
//! Nothing here throws into Rust or panics when a service is missing.

use gloo_storage::{LocalStorage, Storage};
use wasm_bindgen::{JsCast, JsValue};

use crate::store::{Backend, StoreError};

/// The browser's local storage.
pub struct LocalBackend {
    raw: Option<web_sys::Storage>,
}

impl LocalBackend {
    pub fn open() -> LocalBackend {
        // gloo's `raw()` throws when storage is switched off; ask the window first.
        let available = web_sys::window().and_then(|w| w.local_storage().ok().flatten()).is_some();
        LocalBackend { raw: available.then(LocalStorage::raw) }
    }

    pub fn is_available(&self) -> bool {
        self.raw.is_some()
    }
}

fn error_name(e: &JsValue) -> String {
    js_sys::Reflect::get(e, &JsValue::from_str("name")).ok().and_then(|n| n.as_string()).unwrap_or_default()
}

impl Backend for LocalBackend {
    fn keys(&self) -> Vec<String> {
        let Some(s) = &self.raw else { return Vec::new() };
        let n = s.length().unwrap_or(0);
        (0..n).filter_map(|i| s.key(i).ok().flatten()).collect()
    }

    fn get(&self, key: &str) -> Option<String> {
        self.raw.as_ref()?.get_item(key).ok().flatten()
    }

    fn set(&mut self, key: &str, value: &str) -> Result<(), StoreError> {
        let Some(s) = &self.raw else { return Err(StoreError::Unavailable("local storage is not available".into())) };
        s.set_item(key, value).map_err(|e| {
            let name = error_name(&e);
            if name == "QuotaExceededError" || name == "NS_ERROR_DOM_QUOTA_REACHED" {
                StoreError::Full
            } else {
                StoreError::Unavailable(if name.is_empty() { "unknown error".into() } else { name })
            }
        })
    }

    fn remove(&mut self, key: &str) {
        if self.raw.is_some() {
            LocalStorage::delete(key);
        }
    }
}

fn performance() -> Option<web_sys::Performance> {
    web_sys::window()?.performance()
}

/// Runs `f` and records its duration as a user-timing measure named `name`.
pub fn timed<T>(name: &str, f: impl FnOnce() -> T) -> T {
    let perf = performance();
    let start = format!("{name}:start");
    if let Some(p) = &perf {
        let _ = p.mark(&start);
    }
    let out = f();
    if let Some(p) = &perf {
        let _ = p.measure_with_start_mark(name, &start);
        p.clear_marks_with_mark_name(&start);
    }
    out
}

/// Records a user-timing mark.
pub fn mark(name: &str) {
    if let Some(p) = performance() {
        let _ = p.mark(name);
    }
}

/// Milliseconds since 1970.
pub fn now() -> f64 {
    js_sys::Date::now()
}

/// Copies `text` to the clipboard; `done` learns whether it worked.
pub fn copy_text(text: &str, done: impl FnOnce(bool) + 'static) {
    let Some(window) = web_sys::window() else { return done(false) };
    let navigator = window.navigator();
    let has_clipboard = js_sys::Reflect::get(&navigator, &JsValue::from_str("clipboard"))
        .map(|c| !c.is_undefined() && !c.is_null())
        .unwrap_or(false);
    if !has_clipboard {
        return done(false);
    }
    let promise = navigator.clipboard().write_text(text);
    leptos::task::spawn_local(async move {
        let ok = wasm_bindgen_futures::JsFuture::from(promise).await.is_ok();
        done(ok);
    });
}

/// Offers `content` as a file download named `file_name`.
pub fn download(file_name: &str, mime: &str, content: &str) -> Result<(), String> {
    let fail = |what: &str| format!("the browser could not prepare the file ({what})");
    let window = web_sys::window().ok_or_else(|| fail("no window"))?;
    let document = window.document().ok_or_else(|| fail("no document"))?;
    let parts = js_sys::Array::of1(&JsValue::from_str(content));
    let bag = web_sys::BlobPropertyBag::new();
    bag.set_type(&format!("{mime};charset=utf-8"));
    let blob = web_sys::Blob::new_with_str_sequence_and_options(&parts, &bag).map_err(|_| fail("blob"))?;
    let url = web_sys::Url::create_object_url_with_blob(&blob).map_err(|_| fail("object URL"))?;
    let anchor = document
        .create_element("a")
        .map_err(|_| fail("link"))?
        .dyn_into::<web_sys::HtmlAnchorElement>()
        .map_err(|_| fail("link"))?;
    anchor.set_href(&url);
    anchor.set_download(file_name);
    let body = document.body().ok_or_else(|| fail("no body"))?;
    let _ = body.append_child(&anchor);
    anchor.click();
    let _ = body.remove_child(&anchor);
    leptos::prelude::set_timeout(
        move || {
            let _ = web_sys::Url::revoke_object_url(&url);
        },
        std::time::Duration::from_secs(10),
    );
    Ok(())
}

/// The text of the first file chosen in `input`.
pub async fn chosen_text(input: &web_sys::HtmlInputElement) -> Result<String, String> {
    let file = input.files().and_then(|f| f.get(0)).ok_or("no file was chosen")?;
    let text = wasm_bindgen_futures::JsFuture::from(file.text()).await.map_err(|_| "the file could not be read")?;
    text.as_string().ok_or_else(|| "the file is not text".into())
}

/// Fetches `url` (relative to the page) as text.
pub async fn fetch_text(url: &str) -> Result<String, String> {
    let window = web_sys::window().ok_or("no window")?;
    let offline = "it could not be fetched; the network may be down";
    let response = wasm_bindgen_futures::JsFuture::from(window.fetch_with_str(url)).await.map_err(|_| offline)?;
    let response: web_sys::Response = response.dyn_into().map_err(|_| offline)?;
    if !response.ok() {
        return Err(format!("the server answered {}", response.status()));
    }
    let text = response.text().map_err(|_| offline)?;
    let text = wasm_bindgen_futures::JsFuture::from(text).await.map_err(|_| offline)?;
    text.as_string().ok_or_else(|| "it is not text".into())
}

/// Whether the page was opened from a file on this computer (the one-file app).
pub fn from_file() -> bool {
    web_sys::window().and_then(|w| w.location().protocol().ok()).is_some_and(|p| p == "file:")
}

/// The hosted app's address that the one-file app carries, if it knows it.
pub fn home() -> Option<String> {
    let doc = web_sys::window()?.document()?;
    let meta = doc.query_selector("meta[name='rangefit-home']").ok()??;
    meta.get_attribute("content").filter(|c| !c.is_empty())
}

/// The address-bar fragment without `#` (empty when there is none).
pub fn fragment() -> String {
    web_sys::window()
        .and_then(|w| w.location().hash().ok())
        .map(|h| h.trim_start_matches('#').to_string())
        .unwrap_or_default()
}

/// The page's address without fragment, e.g. `http://127.0.0.1:8080/` or
/// `file:///home/me/rangefit.html`.
pub fn page_address() -> String {
    let href = web_sys::window().and_then(|w| w.location().href().ok()).unwrap_or_default();
    href.split('#').next().unwrap_or_default().to_string()
}

/// Removes the fragment from the address bar without a new history entry.
pub fn clear_fragment() {
    let Some(w) = web_sys::window() else { return };
    if fragment().is_empty() {
        return;
    }
    if let Ok(history) = w.history() {
        let _ = history.replace_state_with_url(&JsValue::NULL, "", Some(&page_address()));
    }
}

/// Opens the browser's print dialogue.
pub fn print() {
    if let Some(w) = web_sys::window() {
        let _ = w.print();
    }
}

/// Moves keyboard focus to the element with `id`, if it exists.
pub fn focus(id: &str) {
    let el = web_sys::window().and_then(|w| w.document()).and_then(|d| d.get_element_by_id(id));
    if let Some(el) = el.and_then(|e| e.dyn_into::<web_sys::HtmlElement>().ok()) {
        let _ = el.focus();
    }
}
