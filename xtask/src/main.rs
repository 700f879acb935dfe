//! Project tasks (build, test, generate, serve), run as `cargo xtask <task>`.

mod args;
mod batch;
mod bench;
mod demo;
mod e2e;
mod fuzz;
mod npy_write;
mod npz_write;
mod pyenv;
mod rng;
mod test;
mod web;
mod wordnet;

use std::path::PathBuf;

const USAGE: &str = "usage: cargo xtask <task> [args]

tasks:
  test        run every test: cargo tests, the Python reference checks (creates .venv), end-to-end
  gen-demo    regenerate demo-data/ from the fixed seed
  build-web   build the page into dist/
  serve       build the page and serve it on 127.0.0.1
  e2e         build the page and run its end-to-end tests in headless Chromium
  gen-batch   write a large synthetic batch (--rows N --nodes M --depth D --out DIR [--seed S])
  gen-wordnet write a test batch over WordNet's noun taxonomy (--out DIR [--root SYNSET] [--rows N]
              [--seed S] [--objectness] [--bundle]; needs Debian's wordnet-base)
  bench       benchmark the CLI against the numpy peer (and wasm in Chromium); writes BENCHMARKS.md
  bench-wasm  run the engine's benchmark compiled to wasm in headless Chromium
  fuzz        build the fuzz targets (libFuzzer, stable toolchain) and run them ([TARGET…] [--seconds N])";

fn main() -> anyhow::Result<()> {
    let mut args = std::env::args().skip(1);
    let task = args.next().unwrap_or_default();
    let rest: Vec<String> = args.collect();
    match task.as_str() {
        "test" => test::run(&rest),
        "gen-demo" => demo::run(&rest),
        "build-web" => web::build(&rest).map(|_| ()),
        "serve" => web::serve(&rest),
        "e2e" => e2e::run(&rest),
        "gen-batch" => batch::run(&rest),
        "gen-wordnet" => wordnet::run(&rest),
        "bench" => bench::run(&rest),
        "bench-wasm" => bench::wasm::run(&rest),
        "fuzz" => fuzz::run(&rest),
        _ => {
            eprintln!("{USAGE}");
            std::process::exit(2);
        }
    }
}

/// The workspace root, found from this crate's manifest directory.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from("."))
}
