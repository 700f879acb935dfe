//! The window's inner width, updated on resize (charts redraw at their new size).

use gloo_events::EventListener;
use yew::prelude::*;

fn inner_width() -> i32 {
    web_sys::window()
        .and_then(|w| w.inner_width().ok())
        .and_then(|v| v.as_f64())
        .map_or(0, |v| v as i32)
}

#[hook]
pub fn use_window_width() -> i32 {
    let width = use_state_eq(inner_width);
    {
        let width = width.clone();
        use_effect_with((), move |()| {
            let listener = web_sys::window()
                .map(|w| EventListener::new(&w, "resize", move |_| width.set(inner_width())));
            move || drop(listener)
        });
    }
    *width
}
