//! The few browser services the page uses, each failing soft: reading byte ranges of a file,
//! yielding to the event loop, settings in `localStorage`, a download, the local time, timing
//! marks. Nothing here panics; errors come back as text for the page's error area.

use hedgerow_board::state::Stored;
use hedgerow_board::wording::LocalTime;
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

/// Start reading the bytes `start..end` of a blob: the browser reads them while the page goes
/// on; [`finish_read`] waits for them.
pub fn start_read(blob: &Blob, start: u64, end: u64) -> Result<JsFuture, String> {
    let part = blob
        .slice_with_f64_and_f64(start as f64, end as f64)
        .map_err(|e| js_error(&e))?;
    Ok(JsFuture::from(part.array_buffer()))
}

/// The bytes of a read [`start_read`] began.
pub async fn finish_read(read: JsFuture) -> Result<Vec<u8>, String> {
    let buffer = read.await.map_err(|e| js_error(&e))?;
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
    click_download(&document, &body, &url, file_name)?;
    // Revoke the URL once the browser has taken the download.
    let revoke = Closure::once_into_js(move || {
        let _ = Url::revoke_object_url(&url);
    });
    let _ = window
        .set_timeout_with_callback_and_timeout_and_arguments_0(revoke.unchecked_ref(), 10_000);
    Ok(())
}

/// A canvas's pixels as a PNG download (`toDataURL("image/png")`: the backing store, at the
/// device's pixel ratio).
pub fn download_png(canvas: &web_sys::HtmlCanvasElement, file_name: &str) -> Result<(), String> {
    let document = web_sys::window()
        .and_then(|w| w.document())
        .ok_or("no document")?;
    let body = document.body().ok_or("no document body")?;
    let url = canvas
        .to_data_url_with_type("image/png")
        .map_err(|e| js_error(&e))?;
    click_download(&document, &body, &url, file_name)
}

/// Follows `href` as a download named `file_name` through a hidden anchor.
fn click_download(
    document: &web_sys::Document,
    body: &web_sys::HtmlElement,
    href: &str,
    file_name: &str,
) -> Result<(), String> {
    let anchor: HtmlAnchorElement = document
        .create_element("a")
        .map_err(|e| js_error(&e))?
        .dyn_into()
        .map_err(|_| "not an anchor element")?;
    anchor.set_href(href);
    anchor.set_download(file_name);
    anchor.set_hidden(true);
    body.append_child(&anchor).map_err(|e| js_error(&e))?;
    anchor.click();
    anchor.remove();
    Ok(())
}

/// The local date and time now, from JavaScript's `Date` (the user's time zone).
pub fn local_time() -> LocalTime {
    let now = js_sys::Date::new_0();
    LocalTime {
        year: now.get_full_year() as i32,
        month: now.get_month() + 1,
        day: now.get_date(),
        hour: now.get_hours(),
        minute: now.get_minutes(),
    }
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

/// Record when a panel finished drawing (or the board finished applying an action) as
/// `window.hedgerowFrame[name] = performance.now()`, for the end-to-end tests' frame timing.
/// One number per name, overwritten: bounded, unlike `performance.mark`'s timeline.
pub fn stamp(name: &str) {
    stamp_value(name, now());
}

fn stamp_value(name: &str, now: f64) {
    let Some(w) = web_sys::window() else {
        return;
    };
    let key = wasm_bindgen::JsValue::from_str("hedgerowFrame");
    let table = match js_sys::Reflect::get(&w, &key) {
        Ok(t) if t.is_object() => t,
        _ => {
            let t: wasm_bindgen::JsValue = js_sys::Object::new().into();
            let _ = js_sys::Reflect::set(&w, &key, &t);
            t
        }
    };
    let _ = js_sys::Reflect::set(&table, &name.into(), &now.into());
}

/// Record a duration under `name` in `window.hedgerowFrame` (see [`stamp`]).
pub fn stamp_since(name: &str, start: f64) {
    stamp_value(name, now() - start);
}

/// `devicePixelRatio`, at least 1.
pub fn pixel_ratio() -> f64 {
    web_sys::window()
        .map_or(1.0, |w| w.device_pixel_ratio())
        .max(1.0)
}

/// Put `hedgerowWasmMemoryBytes()` on the global object: the size of this program's wasm
/// memory in bytes (which `performance.memory` does not count), for measuring the page from
/// outside (the end-to-end tests). It only reads a size.
pub fn expose_memory_probe() {
    let probe = Closure::<dyn Fn() -> f64>::new(wasm_memory_bytes);
    let _ = js_sys::Reflect::set(
        &js_sys::global(),
        &JsValue::from_str("hedgerowWasmMemoryBytes"),
        &probe.into_js_value(),
    );
}

/// The size of this program's wasm memory in bytes (it only grows).
fn wasm_memory_bytes() -> f64 {
    let memory = wasm_bindgen::memory();
    js_sys::Reflect::get(&memory, &JsValue::from_str("buffer"))
        .and_then(|b| js_sys::Reflect::get(&b, &JsValue::from_str("byteLength")))
        .ok()
        .and_then(|v| v.as_f64())
        .unwrap_or(0.0)
}

/// When the program traps (above all when its memory cannot grow: wasm32 memory ends at
/// 4 GiB, which a batch of some ten million rows needs more than), the page cannot go on; say
/// so in a banner (`data-testid="fatal"`) instead of freezing silently. Installed at startup.
pub fn show_fatal_errors() {
    let Some(window) = web_sys::window() else {
        return;
    };
    let on_error = Closure::<dyn Fn(web_sys::ErrorEvent)>::new(|e: web_sys::ErrorEvent| {
        if e.error()
            .is_instance_of::<js_sys::WebAssembly::RuntimeError>()
        {
            fatal(&e.message());
        }
    });
    let on_rejection = Closure::<dyn Fn(web_sys::PromiseRejectionEvent)>::new(
        |e: web_sys::PromiseRejectionEvent| {
            let reason = e.reason();
            if reason.is_instance_of::<js_sys::WebAssembly::RuntimeError>() {
                fatal(&js_error(&reason));
            }
        },
    );
    let _ = window.add_event_listener_with_callback("error", on_error.as_ref().unchecked_ref());
    let _ = window.add_event_listener_with_callback(
        "unhandledrejection",
        on_rejection.as_ref().unchecked_ref(),
    );
    // They live as long as the page.
    on_error.forget();
    on_rejection.forget();
}

fn fatal(message: &str) {
    let Some(document) = web_sys::window().and_then(|w| w.document()) else {
        return;
    };
    let Some(body) = document.body() else {
        return;
    };
    let gib = wasm_memory_bytes() / f64::from(1u32 << 30);
    let limit = if gib > 3.0 {
        format!(
            " Its memory had reached {gib:.2} GiB of the 4 GiB WebAssembly allows: this batch has \
             too many rows for the page (the command line has no such limit)."
        )
    } else {
        String::new()
    };
    let text = format!("The page stopped: {message}.{limit} Reload the page to go on.");
    let banner = match document.get_element_by_id("fatal") {
        Some(b) => b,
        None => {
            let Ok(b) = document.create_element("div") else {
                return;
            };
            b.set_id("fatal");
            let _ = b.set_attribute("class", "error-area error");
            let _ = b.set_attribute("role", "alert");
            let _ = b.set_attribute("data-testid", "fatal");
            let _ = b.set_attribute(
                "style",
                "position: fixed; top: 0.75rem; left: 50%; transform: translateX(-50%); \
                 z-index: 1000; max-width: 48rem; box-shadow: 0 4px 16px rgba(0, 0, 0, 0.2);",
            );
            let _ = body.append_child(&b);
            b
        }
    };
    banner.set_text_content(Some(&text));
}
