//! `cargo xtask bench-wasm`: the engine's benchmark compiled to wasm32 and run in headless
//! Chromium, printing the same figures as `hedgerow bench` (ingestion, evaluate median over
//! threshold changes, exact curve) for a batch made by `gen-batch`.
//!
//! Steps: build `crates/bench-wasm` for wasm32 with the page's profile (`wasm-release`, so the
//! figures are the page's; `--opt-level X` overrides its opt-level for comparison), run the
//! bindgen step of `web.rs` (no-modules glue), put the glue, the wasm and
//! `crates/bench-wasm/www/` into `target/bench-wasm/site/`, serve `target/` with `web.rs`'s
//! static server on 127.0.0.1, open the page through the e2e harness (chromedriver + headless
//! Chromium) and start `window.hedgerowBench(config)`, then poll `window.__bench` for the result.
//!
//! The logits are served by the local server and read with `fetch` in pieces of `--chunk`
//! bytes (default 1 MiB, as the page's `Blob.slice` reads). In `buffered` mode (the default)
//! the whole file is fetched first, untimed, and the timed ingestion is feeding the pieces into
//! the engine (JS→wasm copies included); in `streamed` mode pieces are fed as they arrive and
//! the time includes the local transfer.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

use anyhow::{bail, Context};
use serde_json::{json, Value};

use crate::e2e::{Browser, Config};

const PACKAGE: &str = "hedgerow-bench-wasm";
const ARTIFACT: &str = "hedgerow_bench_wasm.wasm";
const TARGET: &str = "wasm32-unknown-unknown";
const PROFILE: &str = "wasm-release";

const USAGE: &str = "usage: cargo xtask bench-wasm [--data DIR] [--mode buffered|streamed] \
[--chunk BYTES] [--repeat N] [--thresholds T] [--object-threshold X] [--opt-level X] [--no-build]

  --data DIR     a batch made by gen-batch (default: target/bench-data/rows1000000-nodes500-depth6,
                 generated if missing); must be under target/
  --mode M       buffered (default: fetch all, then time feeding) or streamed (feed as fetched)
  --chunk BYTES  piece size fed to the engine (default 1048576)
  --repeat N     threshold changes to time (default 50; the median is reported)
  --opt-level X  build with opt-level X (0-3, s, z) instead of the page profile's setting
  --no-build     use target/bench-wasm/site as it is

env: HEDGEROW_CHROMIUM, HEDGEROW_CHROMEDRIVER (default /usr/bin/chromium, /usr/bin/chromedriver)";

/// One wasm run on one batch.
#[derive(Debug, Clone)]
pub struct Job {
    pub data: PathBuf,
    pub mode: String,
    pub chunk: usize,
    pub repeat: usize,
    /// Rounds of `repeat` changes (the lowest median is kept).
    pub rounds: usize,
    pub thresholds: String,
    pub object_threshold: f64,
    pub curve: bool,
    /// Curve runs (the median is reported).
    pub curve_repeat: usize,
    /// Time the page's suggestion for precision 0.9 (the fastest of `suggest_repeat`).
    pub suggest: bool,
    pub suggest_repeat: usize,
}

impl Job {
    pub fn new(data: PathBuf) -> Self {
        Job {
            data,
            mode: "buffered".into(),
            chunk: 1 << 20,
            repeat: 50,
            rounds: 3,
            thresholds: "0.5".into(),
            object_threshold: 0.5,
            curve: true,
            curve_repeat: 3,
            suggest: true,
            suggest_repeat: 2,
        }
    }
}

/// Whether the browser and its driver are installed.
pub fn browser_available() -> bool {
    let cfg = Config::from_env();
    cfg.chromium.is_file() && cfg.chromedriver.is_file()
}

pub fn run(args: &[String]) -> anyhow::Result<()> {
    let root = crate::root();
    let mut job = Job::new(
        root.join("target/bench-data")
            .join(super::default_large().dir_name()),
    );
    let mut data_given = false;
    let (mut opt_level, mut build) = (None, true);
    let mut it = args.iter();
    while let Some(arg) = it.next() {
        let mut value = || {
            it.next()
                .cloned()
                .with_context(|| format!("{arg} needs a value"))
        };
        match arg.as_str() {
            "--data" => {
                job.data = PathBuf::from(value()?);
                data_given = true;
            }
            "--mode" => job.mode = value()?,
            "--chunk" => job.chunk = value()?.parse().context("--chunk")?,
            "--repeat" => job.repeat = value()?.parse().context("--repeat")?,
            "--thresholds" => job.thresholds = value()?,
            "--object-threshold" => {
                job.object_threshold = value()?.parse().context("--object-threshold")?
            }
            "--opt-level" => opt_level = Some(value()?),
            "--no-build" => build = false,
            "-h" | "--help" => {
                println!("{USAGE}");
                return Ok(());
            }
            other => bail!("bench-wasm: unknown argument {other:?}\n{USAGE}"),
        }
    }
    if !matches!(job.mode.as_str(), "buffered" | "streamed") {
        bail!(
            "--mode: expected buffered or streamed, found {:?}",
            job.mode
        );
    }
    if !data_given {
        super::ensure_batch(&super::default_large(), &job.data)?;
    }
    let site = if build {
        build_site(opt_level.as_deref())?
    } else {
        site_dir()
    };
    let results = measure(&site, &[job])?;
    for r in &results {
        println!("{}", serde_json::to_string_pretty(r)?);
    }
    Ok(())
}

fn site_dir() -> PathBuf {
    crate::root().join("target/bench-wasm/site")
}

/// Build the crate for wasm32, run bindgen and lay out the page; returns the site folder.
pub fn build_site(opt_level: Option<&str>) -> anyhow::Result<PathBuf> {
    let root = crate::root();
    crate::test::ensure_wasm_target()?;
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let mut cmd = Command::new(cargo);
    cmd.current_dir(&root).args([
        "build",
        "--package",
        PACKAGE,
        "--target",
        TARGET,
        "--profile",
        PROFILE,
    ]);
    if let Some(level) = opt_level {
        let value = match level {
            "s" | "z" => format!("\"{level}\""),
            n => n.to_string(),
        };
        cmd.args(["--config", &format!("profile.{PROFILE}.opt-level={value}")]);
    }
    let status = cmd.status().context("running cargo build for bench-wasm")?;
    if !status.success() {
        bail!("cargo build of {PACKAGE} for {TARGET} failed ({status})");
    }
    let target_dir = std::env::var_os("CARGO_TARGET_DIR")
        .map(PathBuf::from)
        .map(|p| if p.is_relative() { root.join(p) } else { p })
        .unwrap_or_else(|| root.join("target"));
    let wasm = target_dir.join(TARGET).join(PROFILE).join(ARTIFACT);
    let (glue, bytes) = crate::web::bindgen(&wasm, false)?;
    let site = site_dir();
    std::fs::create_dir_all(&site)?;
    std::fs::write(site.join("bench_wasm.js"), glue)?;
    std::fs::write(site.join("bench_wasm_bg.wasm"), &bytes)?;
    for name in ["index.html", "bench.js"] {
        std::fs::copy(
            root.join("crates/bench-wasm/www").join(name),
            site.join(name),
        )
        .with_context(|| format!("copying crates/bench-wasm/www/{name}"))?;
    }
    eprintln!(
        "bench-wasm: built {} ({} bytes, opt-level {})",
        site.display(),
        bytes.len(),
        opt_level.map_or_else(
            || format!("{} (page profile)", page_opt_level()),
            str::to_string
        )
    );
    Ok(site)
}

/// The `opt-level` of the page's `wasm-release` profile in the root Cargo.toml.
pub fn page_opt_level() -> String {
    let text = std::fs::read_to_string(crate::root().join("Cargo.toml")).unwrap_or_default();
    let mut in_profile = false;
    for line in text.lines() {
        let line = line.trim();
        if line.starts_with('[') {
            in_profile = line == format!("[profile.{PROFILE}]");
        } else if in_profile {
            if let Some(v) = line.strip_prefix("opt-level") {
                return v
                    .trim_start_matches([' ', '='])
                    .trim()
                    .trim_matches('"')
                    .to_string();
            }
        }
    }
    "?".into()
}

/// URL path of a file under `target/`.
fn url_path(target: &Path, file: &Path) -> anyhow::Result<String> {
    let rel = file
        .strip_prefix(target)
        .with_context(|| format!("{} is not under {}", file.display(), target.display()))?;
    Ok(rel
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect::<Vec<_>>()
        .join("/"))
}

/// Run every job in headless Chromium (one browser, a fresh page per job); one JSON result each.
pub fn measure(site: &Path, jobs: &[Job]) -> anyhow::Result<Vec<Value>> {
    let target = std::fs::canonicalize(crate::root().join("target"))?;
    let site = std::fs::canonicalize(site)?;
    let site = site.as_path();
    let server = crate::web::StaticServer::bind(0, target.clone())?;
    let (base, _log) = server.spawn();
    let page = format!("{base}{}", url_path(&target, &site.join("index.html"))?);
    let rt = tokio::runtime::Builder::new_current_thread()
        .enable_all()
        .build()?;
    rt.block_on(async {
        let mut cfg = Config::from_env();
        cfg.timeout = Duration::from_secs(60);
        let browser = Browser::launch(&cfg).await?;
        let mut out = Vec::new();
        for job in jobs {
            let r = one(&browser, &base, &page, &target, job).await;
            match r {
                Ok(v) => out.push(v),
                Err(e) => {
                    let _ = browser.close().await;
                    return Err(e);
                }
            }
        }
        browser.close().await?;
        Ok(out)
    })
}

async fn one(
    browser: &Browser,
    base: &str,
    page: &str,
    target: &Path,
    job: &Job,
) -> anyhow::Result<Value> {
    let data =
        std::fs::canonicalize(&job.data).with_context(|| format!("{}", job.data.display()))?;
    let file = |name: &str| -> anyhow::Result<Option<String>> {
        let p = data.join(name);
        if !p.is_file() {
            return Ok(None);
        }
        Ok(Some(format!("{base}{}", url_path(target, &p)?)))
    };
    let cfg = json!({
        "wasm": format!(
            "{base}{}",
            url_path(target, &std::fs::canonicalize(site_dir())?.join("bench_wasm_bg.wasm"))?
        ),
        "taxonomy": file("taxonomy.csv")?.context("no taxonomy.csv")?,
        "logits": file("logits.npy")?.context("no logits.npy")?,
        "labels": file("labels.csv")?.context("no labels.csv")?,
        "objectness": file("objectness.npy")?,
        "mode": job.mode,
        "chunk": job.chunk,
        "thresholds": job.thresholds,
        "objectThreshold": job.object_threshold,
        "repeat": job.repeat,
        "rounds": job.rounds,
        "curve": job.curve,
        "curveRepeat": job.curve_repeat,
        "suggest": job.suggest,
        "suggestRepeat": job.suggest_repeat,
    });
    eprintln!(
        "bench-wasm: {} ({} mode) in headless Chromium",
        job.data.display(),
        job.mode
    );
    browser
        .client()
        .goto(page)
        .await
        .with_context(|| format!("opening {page}"))?;
    browser
        .eval("return window.hedgerowBench(arguments[0]);", vec![cfg])
        .await?;
    let started = Instant::now();
    loop {
        tokio::time::sleep(Duration::from_millis(500)).await;
        let v = browser.eval("return window.__bench;", vec![]).await?;
        if !v.is_null() {
            if v["ok"] == true {
                let mut r = v["result"].clone();
                r["data"] = json!(job.data.display().to_string());
                return Ok(r);
            }
            bail!("the wasm benchmark failed in the page: {}", v["error"]);
        }
        if started.elapsed() > Duration::from_secs(900) {
            bail!("the wasm benchmark did not finish in 15 minutes");
        }
    }
}
