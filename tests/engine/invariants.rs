//! Architecture invariants (see ARCHITECTURE.md): the engine stays pure so the page and the
//! command line share it unchanged.

/// hedgerow-core depends on no UI, browser, async or I/O-bound crate.
#[test]
fn core_depends_on_nothing_browser_or_io() {
    let manifest = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/Cargo.toml"))
        .expect("core manifest");
    let deps = manifest
        .split("[dependencies]")
        .nth(1)
        .unwrap_or("")
        .split("\n[")
        .next()
        .unwrap_or("");
    for forbidden in [
        "yew",
        "web-sys",
        "wasm-bindgen",
        "js-sys",
        "plotters",
        "tokio",
        "reqwest",
        "rayon",
        "gloo",
    ] {
        assert!(
            !deps.lines().any(|l| l.trim_start().starts_with(forbidden)),
            "hedgerow-core must not depend on {forbidden}"
        );
    }
}

/// The engine's sources never touch the file system, the network or threads.
#[test]
fn core_sources_do_no_io() {
    // Every source file, in `src/` and its module folders.
    let mut dirs = vec![std::path::PathBuf::from(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/src"
    ))];
    let mut files = Vec::new();
    while let Some(dir) = dirs.pop() {
        for entry in std::fs::read_dir(&dir).expect("src") {
            let path = entry.expect("entry").path();
            if path.is_dir() {
                dirs.push(path);
            } else {
                files.push(path);
            }
        }
    }
    assert!(
        files.iter().any(|p| p.ends_with("intake/bundle.rs")),
        "module folders are read"
    );
    for path in files {
        let text = std::fs::read_to_string(&path).expect("source");
        for forbidden in [
            "std::fs",
            "std::net",
            "std::thread",
            "std::process",
            "File::open",
        ] {
            assert!(
                !text.contains(forbidden),
                "{} uses {forbidden}",
                path.display()
            );
        }
    }
}
