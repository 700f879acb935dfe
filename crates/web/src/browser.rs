//! The few browser services the page uses, each failing soft: reading byte ranges of a file,
//! yielding to the event loop, settings in `localStorage`, a download, timing marks. Nothing
//! here panics; errors come back as text for the page's error area.

use hedgerow_board::state::Stored;
use js_sys::{Array, Promise, Uint8Array};
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use wasm_bindgen_futures::JsFuture;
use web_sys::{Blob, BlobPropertyBag, HtmlAnchorElement, Url};

/// Where the settings live across reloads.
pub const SETTINGS_KEY: &str = "hedgerow.settings";

/// A JavaScript exception or rejection as one line of text.
pub fn js_error(e: &JsValue) -> String {
    if let Some(err) = e.dyn_ref::<js_sys::Error>() {
        return String::from(err.message());
    }
    e.as_string().unwrap_or_else(|| format!("{e:?}"))
}

/// The bytes `start..end` of a blob (a chosen file), read without reading the rest.
pub async fn read_range(blob: &Blob, start: u64, end: u64) -> Result<Vec<u8>, String> {
    let part = blob
        .slice_with_f64_and_f64(start as f64, end as f64)
        .map_err(|e| js_error(&e))?;
    let buffer = JsFuture::from(part.array_buffer())
        .await
        .map_err(|e| js_error(&e))?;
    Ok(Uint8Array::new(&buffer).to_vec())
}

/// Let the browser run (paint, handle input) before going on: resolves on a `setTimeout(0)`.
pub async fn next_tick() {
    let promise = Promise::new(&mut |resolve, _reject| {
        let scheduled = web_sys::window().and_then(|w| {
            w.set_timeout_with_callback_and_timeout_and_arguments_0(&resolve, 0)
                .ok()
        });
        if scheduled.is_none() {
            // No timer to wait for: go on at once rather than never.
            let _ = resolve.call0(&JsValue::NULL);
        }
    });
    let _ = JsFuture::from(promise).await;
}

fn storage() -> Option<web_sys::Storage> {
    // `local_storage()` throws where storage is disabled (some browsers from file://).
    web_sys::window()?.local_storage().ok().flatten()
}

/// The settings an earlier visit stored, if any can be read and parsed.
pub fn load_settings() -> Option<Stored> {
    let text = storage()?.get_item(SETTINGS_KEY).ok().flatten()?;
    serde_json::from_str(&text).ok()
}

/// Store the settings; silently does nothing where storage is unavailable or full.
pub fn save_settings(stored: &Stored) {
    if let (Some(storage), Ok(text)) = (storage(), serde_json::to_string(stored)) {
        let _ = storage.set_item(SETTINGS_KEY, &text);
    }
}

/// Offer `text` as a file download: a Blob, an object URL and a temporary `<a download>`
/// clicked once. Nothing leaves the page.
pub fn download(file_name: &str, mime: &str, text: &str) -> Result<(), String> {
    let window = web_sys::window().ok_or("no window")?;
    let document = window.document().ok_or("no document")?;
    let body = document.body().ok_or("no document body")?;
    let options = BlobPropertyBag::new();
    options.set_type(mime);
    let parts = Array::of1(&JsValue::from_str(text));
    let blob =
        Blob::new_with_str_sequence_and_options(&parts, &options).map_err(|e| js_error(&e))?;
    let url = Url::create_object_url_with_blob(&blob).map_err(|e| js_error(&e))?;
    let anchor: HtmlAnchorElement = document
        .create_element("a")
        .map_err(|e| js_error(&e))?
        .dyn_into()
        .map_err(|_| "not an anchor element")?;
    anchor.set_href(&url);
    anchor.set_download(file_name);
    anchor.set_hidden(true);
    body.append_child(&anchor).map_err(|e| js_error(&e))?;
    anchor.click();
    anchor.remove();
    // Revoke the URL once the browser has taken the download.
    let revoke = Closure::once_into_js(move || {
        let _ = Url::revoke_object_url(&url);
    });
    let _ = window
        .set_timeout_with_callback_and_timeout_and_arguments_0(revoke.unchecked_ref(), 10_000);
    Ok(())
}

/// `performance.now()` in milliseconds, or 0.
pub fn now() -> f64 {
    web_sys::window()
        .and_then(|w| w.performance())
        .map_or(0.0, |p| p.now())
}

/// A named `performance.mark`, for measuring the page from outside (the end-to-end tests).
pub fn mark(name: &str) {
    if let Some(p) = web_sys::window().and_then(|w| w.performance()) {
        let _ = p.mark(name);
    }
}

/// `devicePixelRatio`, at least 1.
pub fn pixel_ratio() -> f64 {
    web_sys::window()
        .map_or(1.0, |w| w.device_pixel_ratio())
        .max(1.0)
}
