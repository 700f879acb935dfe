//! Demo data embedded into the wasm, for the one-click demo that needs no
//! server and no file picker (the page makes no network request at all, so
//! the demo cannot be fetched).
//!
//! When `demo-data/` is generated, list its files here, e.g.
//!
//! ```ignore
//! pub const FILES: &[DemoFile] = &[
//!     DemoFile { name: "taxonomy.json", bytes: include_bytes!("../../../demo-data/taxonomy.json") },
//! ];
//! ```
//!
//! `include_bytes!` is tracked by cargo, so editing a data file rebuilds the
//! page. The bytes end up inside the base64 wasm in `dist/index.html`
//! (about 4/3 of their size); compress them first if they are large.

/// One embedded file: its name under `demo-data/` and its contents.
pub struct DemoFile {
    pub name: &'static str,
    pub bytes: &'static [u8],
}

/// The embedded demo files (none yet: the data is still being generated).
pub const FILES: &[DemoFile] = &[];
