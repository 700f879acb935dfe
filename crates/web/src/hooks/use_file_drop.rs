//! Files dropped anywhere on the page. Listens on the window so that a drop that misses the
//! drop zone does not navigate away to the file (the browser's default) and lose the session.

use gloo_events::{EventListener, EventListenerOptions};
use wasm_bindgen::JsCast;
use web_sys::{DragEvent, File};
use yew::prelude::*;

fn files_of(event: &DragEvent) -> Vec<File> {
    let Some(list) = event.data_transfer().and_then(|t| t.files()) else {
        return Vec::new();
    };
    (0..list.length()).filter_map(|i| list.item(i)).collect()
}

fn carries_files(event: &DragEvent) -> bool {
    event.data_transfer().is_some_and(|t| {
        t.types()
            .iter()
            .any(|ty| ty.as_string().as_deref() == Some("Files"))
    })
}

/// Calls `on_files` with the files of every drop; returns whether files are being dragged over
/// the page (for a visible drop hint).
#[hook]
pub fn use_file_drop(on_files: Callback<Vec<File>>) -> bool {
    let dragging = use_state_eq(|| false);
    {
        let dragging = dragging.clone();
        use_effect_with(on_files, move |on_files| {
            let mut listeners = Vec::new();
            if let Some(window) = web_sys::window() {
                let opts = EventListenerOptions::enable_prevent_default();
                let d = dragging.clone();
                listeners.push(EventListener::new_with_options(
                    &window,
                    "dragover",
                    opts,
                    move |e| {
                        if let Some(e) = e.dyn_ref::<DragEvent>() {
                            if carries_files(e) {
                                e.prevent_default();
                                d.set(true);
                            }
                        }
                    },
                ));
                let d = dragging.clone();
                listeners.push(EventListener::new(&window, "dragleave", move |e| {
                    // Leaving the window (no element to go to), not moving between elements.
                    if let Some(e) = e.dyn_ref::<DragEvent>() {
                        if e.related_target().is_none() {
                            d.set(false);
                        }
                    }
                }));
                let d = dragging.clone();
                let on_files = on_files.clone();
                listeners.push(EventListener::new_with_options(
                    &window,
                    "drop",
                    opts,
                    move |e| {
                        if let Some(e) = e.dyn_ref::<DragEvent>() {
                            e.prevent_default();
                            d.set(false);
                            let files = files_of(e);
                            if !files.is_empty() {
                                on_files.emit(files);
                            }
                        }
                    },
                ));
            }
            move || drop(listeners)
        });
    }
    *dragging
}
