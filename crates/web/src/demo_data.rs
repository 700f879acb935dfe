//! The demo batch (`demo-data/`, a recycling line's materials taxonomy and 20,000 simulated
//! detections), embedded into the wasm: the page makes no network request at all, so the demo
//! cannot be fetched. `include_bytes!` is tracked by cargo, so regenerating the data rebuilds
//! the page. The bytes end up inside the base64 wasm in `dist/index.html` (about 4/3 of their
//! size; the float16 logits are mostly noise and do not compress usefully).

/// One embedded file: its name under `demo-data/` and its contents.
pub struct DemoFile {
    pub name: &'static str,
    pub bytes: &'static [u8],
}

pub const TAXONOMY: DemoFile = DemoFile {
    name: "taxonomy.csv",
    bytes: include_bytes!("../../../demo-data/taxonomy.csv"),
};

/// Streamed like a chosen logits file (in chunks, yielding to the browser between them).
pub const LOGITS: DemoFile = DemoFile {
    name: "logits.npy",
    bytes: include_bytes!("../../../demo-data/logits.npy"),
};

pub const LABELS: DemoFile = DemoFile {
    name: "labels.csv",
    bytes: include_bytes!("../../../demo-data/labels.csv"),
};

pub const OBJECTNESS: DemoFile = DemoFile {
    name: "objectness.npy",
    bytes: include_bytes!("../../../demo-data/objectness.npy"),
};
