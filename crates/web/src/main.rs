//! The hedgerow page: a yew app rendered on the client, built for
//! `wasm32-unknown-unknown` by `cargo xtask build-web` into `dist/index.html`.
//!
//! The page runs with no server: `dist/index.html` carries the wasm-bindgen
//! glue and this program (base64) inline, and the boot script in it hands the
//! wasm bytes to the glue. `main` below is called by the glue as the wasm
//! start function once the module is instantiated.
//!
//! Everything the page computes goes through `hedgerow-board`'s `Board` (and so
//! `hedgerow-core`, the engine the command line uses); this crate only reads
//! files, stores settings, and renders what the board holds.

mod browser;
mod canvas;
mod components;
mod demo_data;
mod hooks;
mod store;

use components::app::App;

fn main() {
    browser::show_fatal_errors();
    browser::expose_memory_probe();
    // Mount into `<main id="app">` of www/index.html; fall back to <body>.
    let root = web_sys::window()
        .and_then(|w| w.document())
        .and_then(|d| d.get_element_by_id("app"));
    match root {
        Some(root) => yew::Renderer::<App>::with_root(root).render(),
        None => yew::Renderer::<App>::new().render(),
    };
}
