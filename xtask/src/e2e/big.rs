//! Big batches in the page: a generated batch of a few hundred MB read through the file input
//! must give the command line's numbers, with the page responsive while it streams; and, by
//! hand only (`HEDGEROW_E2E_HUGE=1`), the same with logits above 2 GiB plus a Cancel mid-way.
//!
//! The batches come from `gen-batch`'s generator (`crate::batch::generate`, deterministic) into
//! `target/e2e/batch-*`, and are reused while their `batch.json` matches. Responsiveness is
//! measured in the page: a `requestAnimationFrame` loop logs every frame's time, the loader
//! marks the start and end of the logits read (`hedgerow:logits-read-start`/`-end`), and the
//! longest gap between frames is reported with the read time, MB/s and memory (the wasm
//! memory from `hedgerowWasmMemoryBytes()`, the JS heap from `performance.memory`). Figures
//! are reported as `figure:` lines, never asserted on.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use anyhow::{ensure, Context};
use serde_json::Value;

use super::page::{
    evaluate_files, expect_headline_within, fresh_demo, headline, reading, screenshot, timed_set,
    Headline,
};
use super::{Browser, Ctx, Test};
use crate::batch::{self, Dtype, Spec};

pub fn tests() -> Vec<Test> {
    vec![
        Test::new(
            "http: a 300 MB batch read through the file input equals the CLI, the page responsive",
            |b, c| Box::pin(big(b, c)),
        ),
        Test::new(
            "http: logits above 2 GiB read, cancel and equal the CLI (only with HEDGEROW_E2E_HUGE=1)",
            |b, c| Box::pin(huge(b, c)),
        ),
    ]
}

/// A generated batch on disk.
pub(super) struct Files {
    dir: PathBuf,
    logits_bytes: u64,
}

impl Files {
    pub(super) fn path(&self, name: &str) -> PathBuf {
        self.dir.join(name)
    }

    /// The CLI's input flags for these files.
    fn flags(&self) -> Vec<(&'static str, PathBuf)> {
        vec![
            ("--taxonomy", self.path("taxonomy.csv")),
            ("--logits", self.path("logits.npy")),
            ("--labels", self.path("labels.csv")),
            ("--objectness", self.path("objectness.npy")),
        ]
    }
}

/// Generate the batch into `target/e2e/<name>` unless it is there already.
pub(super) fn batch(c: &Ctx, name: &str, spec: &Spec) -> anyhow::Result<Files> {
    let dir = c.out_dir.join(name);
    if batch::is_current(spec, &dir) {
        c.figure(format!("{name}: reused {}", dir.display()));
    } else {
        let t = Instant::now();
        let s = batch::generate(spec, &dir)?;
        c.figure(format!(
            "{name}: generated {} rows × {} nodes ({} logits bytes) in {:.1} s",
            spec.rows,
            spec.nodes,
            s.logits_bytes,
            t.elapsed().as_secs_f64()
        ));
    }
    let logits_bytes = std::fs::metadata(dir.join("logits.npy"))?.len();
    Ok(Files { dir, logits_bytes })
}

/// The CLI's headline for several settings at once (one process each, in parallel).
fn expected_all(c: &Ctx, f: &Files, settings: &[&[&str]]) -> anyhow::Result<Vec<Headline>> {
    let t = Instant::now();
    let flags = f.flags();
    let files: Vec<(&str, &Path)> = flags.iter().map(|(k, p)| (*k, p.as_path())).collect();
    let out = std::thread::scope(|s| {
        let handles: Vec<_> = settings
            .iter()
            .map(|args| s.spawn(|| evaluate_files(c, &files, args)))
            .collect();
        handles
            .into_iter()
            .map(|h| {
                h.join()
                    .unwrap_or_else(|_| Err(anyhow::anyhow!("the CLI thread panicked")))
            })
            .collect::<anyhow::Result<Vec<_>>>()
    })?;
    c.figure(format!(
        "the CLI (debug build) evaluated {} settings on {} in {:.1} s wall, in parallel",
        settings.len(),
        f.dir.display(),
        t.elapsed().as_secs_f64()
    ));
    Ok(out)
}

/// Log every animation frame's time and sample memory every 250 ms; forget earlier reads'
/// marks. Returns the wasm memory size now.
async fn instrument(b: &Browser) -> anyhow::Result<f64> {
    let v = b
        .eval(
            r#"
            performance.clearMarks("hedgerow:logits-read-start");
            performance.clearMarks("hedgerow:logits-read-end");
            if (window.__hrTimer) clearInterval(window.__hrTimer);
            window.__hrFrames = [];
            window.__hrMemory = [];
            if (!window.__hrLoop) {
                window.__hrLoop = true;
                // The time the callback runs (the argument is the frame's scheduled time).
                const frame = () => { window.__hrFrames.push(performance.now()); requestAnimationFrame(frame); };
                requestAnimationFrame(frame);
            }
            const sample = () => window.__hrMemory.push([
                performance.now(),
                window.hedgerowWasmMemoryBytes ? hedgerowWasmMemoryBytes() : null,
                performance.memory ? performance.memory.usedJSHeapSize : null,
            ]);
            sample();
            window.__hrTimer = setInterval(sample, 250);
            return window.hedgerowWasmMemoryBytes ? hedgerowWasmMemoryBytes() : null;
            "#,
            vec![],
        )
        .await?;
    v.as_f64()
        .context("no hedgerowWasmMemoryBytes() in the page")
}

/// What the frame log and the marks say about the last read.
#[derive(Debug)]
struct ReadFigures {
    read_ms: f64,
    frames: u64,
    /// Longest gap between two frames inside the read.
    longest_gap_ms: f64,
    /// Median gap inside the read.
    median_gap_ms: f64,
    /// The gap spanning the read's end: the batch assembled (Batch, curve, sweep) and shown.
    end_gap_ms: f64,
    /// Longest gap from the upload until now (reading the small files, the read, assembly).
    overall_gap_ms: f64,
    wasm_peak: f64,
    wasm_now: f64,
    heap_peak: f64,
    heap_now: f64,
}

async fn read_figures(b: &Browser) -> anyhow::Result<ReadFigures> {
    let v = b
        .eval(
            r#"
            const last = n => { const e = performance.getEntriesByName(n); return e.length ? e[e.length - 1].startTime : null; };
            const s = last("hedgerow:logits-read-start"), e = last("hedgerow:logits-read-end");
            if (s === null || e === null) return null;
            const f = window.__hrFrames;
            const gaps = [];
            let endGap = null, overall = 0;
            for (let i = 1; i < f.length; i++) {
                const g = f[i] - f[i - 1];
                if (f[i - 1] >= s && f[i] <= e) gaps.push(g);
                if (f[i - 1] <= e && f[i] > e && endGap === null) endGap = g;
                overall = Math.max(overall, g);
            }
            gaps.sort((a, b) => a - b);
            const m = window.__hrMemory;
            m.push([performance.now(), hedgerowWasmMemoryBytes(),
                performance.memory ? performance.memory.usedJSHeapSize : null]);
            return {
                read_ms: e - s,
                frames: gaps.length,
                longest: gaps.length ? gaps[gaps.length - 1] : null,
                median: gaps.length ? gaps[Math.floor(gaps.length / 2)] : null,
                end_gap: endGap,
                overall: overall,
                longest_five: f.map((t, i) => i ? [Math.round(f[i - 1] - s), Math.round(t - f[i - 1])] : null)
                    .filter(x => x).sort((a, b) => b[1] - a[1]).slice(0, 5),
                wasm_peak: Math.max(...m.map(x => x[1] || 0)),
                wasm_now: m[m.length - 1][1],
                heap_peak: Math.max(...m.map(x => x[2] || 0)),
                heap_now: m[m.length - 1][2] || 0,
            };
            "#,
            vec![],
        )
        .await?;
    ensure!(!v.is_null(), "no logits read marks in the page");
    eprintln!(
        "        the five longest frame gaps [start (ms from the read's start), length (ms)]: {}",
        v["longest_five"]
    );
    let n = |k: &str| v[k].as_f64().unwrap_or(f64::NAN);
    Ok(ReadFigures {
        read_ms: n("read_ms"),
        frames: v["frames"].as_u64().unwrap_or(0),
        longest_gap_ms: n("longest"),
        median_gap_ms: n("median"),
        end_gap_ms: n("end_gap"),
        overall_gap_ms: n("overall"),
        wasm_peak: n("wasm_peak"),
        wasm_now: n("wasm_now"),
        heap_peak: n("heap_peak"),
        heap_now: n("heap_now"),
    })
}

fn mb(bytes: f64) -> String {
    format!("{:.0} MB", bytes / 1e6)
}

fn report(c: &Ctx, what: &str, logits_bytes: u64, wasm_before: f64, r: &ReadFigures) {
    c.figure(format!(
        "{what}: logits read in {:.2} s ({:.0} MB/s, {} bytes, 2 MiB chunks)",
        r.read_ms / 1000.0,
        logits_bytes as f64 / 1e6 / (r.read_ms / 1000.0),
        logits_bytes
    ));
    c.figure(format!(
        "{what}: frames while reading: {} (longest gap {:.0} ms, median {:.1} ms); gap spanning \
         the read's end (batch assembled, curve and sweep computed, numbers shown): {:.0} ms; \
         longest from the upload to the numbers shown: {:.0} ms",
        r.frames, r.longest_gap_ms, r.median_gap_ms, r.end_gap_ms, r.overall_gap_ms
    ));
    c.figure(format!(
        "{what}: wasm memory {} before, {} after (peak sampled {}); JS heap used {} after \
         (peak sampled {})",
        mb(wasm_before),
        mb(r.wasm_now),
        mb(r.wasm_peak),
        mb(r.heap_now),
        mb(r.heap_peak)
    ));
}

/// Thresholds for depth `depth` at 0.8, the others at the default 0.5.
fn one_depth(depths: usize, depth: usize) -> String {
    (1..=depths)
        .map(|d| if d == depth { "0.8" } else { "0.5" })
        .collect::<Vec<_>>()
        .join(",")
}

const BIG: Spec = Spec {
    rows: 300_000,
    nodes: 500,
    depth: 6,
    seed: 1,
    dtype: Dtype::F16,
    objectness: true,
};

async fn big(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let f = batch(c, "batch-300k", &BIG)?;
    let changed = one_depth(BIG.depth, 3);
    let want = expected_all(c, &f, &[&[], &["--thresholds", &changed]])?;
    fresh_demo(b, c, &c.http_url).await?;
    let wasm_before = instrument(b).await?;
    let names = ["taxonomy.csv", "logits.npy", "labels.csv", "objectness.npy"];
    let paths: Vec<PathBuf> = names.iter().map(|n| f.path(n)).collect();
    let refs: Vec<&Path> = paths.iter().map(PathBuf::as_path).collect();
    let t = Instant::now();
    b.upload_files("file-input", &refs).await?;
    expect_headline_within(
        b,
        &want[0],
        "300 MB batch at the defaults",
        Duration::from_secs(120),
    )
    .await?;
    let shown = t.elapsed();
    let r = read_figures(b).await?;
    report(c, "300k × 500 float16", f.logits_bytes, wasm_before, &r);
    c.figure(format!(
        "300k × 500 float16: upload to numbers shown (as polled by the test): {:.2} s",
        shown.as_secs_f64()
    ));
    let in_use = b.text("in-use").await?;
    ensure!(
        in_use.contains("taxonomy.csv") && in_use.contains("objectness.npy"),
        "batch in use: {in_use:?}"
    );
    let (engine, total) = timed_set(b, "threshold-depth-3", "0.8").await?;
    expect_headline_within(
        b,
        &want[1],
        "300 MB batch, depth 3 at 0.8",
        Duration::from_secs(60),
    )
    .await?;
    c.figure(format!(
        "300k × 500 float16: one threshold change (depth 3, recomputes its sweep): {total:.0} ms \
         to the numbers and charts redrawn, of which the reducer {engine:.0} ms"
    ));
    screenshot(b, c, "big-batch.png").await
}

/// Wait until the page shows `want` with no read in progress, failing at once with the
/// console's errors if the page dies (e.g. its wasm memory cannot grow) rather than at the
/// deadline.
async fn wait_or_die(
    b: &Browser,
    want: &Headline,
    what: &str,
    timeout: Duration,
) -> anyhow::Result<()> {
    let deadline = Instant::now() + timeout;
    let mut errors: Vec<String> = Vec::new();
    loop {
        if headline(b).await? == *want && !reading(b).await? {
            return Ok(());
        }
        errors.extend(
            b.console()
                .await?
                .into_iter()
                .filter(|e| e.level == "SEVERE")
                .map(|e| e.message),
        );
        if !errors.is_empty() || Instant::now() > deadline {
            let memory = b
                .eval("return hedgerowWasmMemoryBytes();", vec![])
                .await
                .map(|v| v.to_string())
                .unwrap_or_else(|e| format!("unknown ({e:#})"));
            let shown = headline(b)
                .await
                .map(|h| format!("{h:?}"))
                .unwrap_or_default();
            let mut area = b.text("error").await.unwrap_or_default();
            if !b.find_all("fatal").await.unwrap_or_default().is_empty() {
                area = b.text("fatal").await.unwrap_or_default();
            }
            anyhow::bail!(
                "{what}: the page shows {shown}, the CLI says {want:?}; console errors: \
                 {errors:?}; error area or banner: {area:?}; wasm memory now: {memory} bytes"
            );
        }
        tokio::time::sleep(Duration::from_millis(250)).await;
    }
}

/// Default rows of the hand-run test: 2.2 GB of float16 logits, past 2 GiB.
const HUGE_ROWS: u64 = 2_200_000;

async fn huge(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    if std::env::var("HEDGEROW_E2E_HUGE").as_deref() != Ok("1") {
        return Err(super::Skipped(
            "set HEDGEROW_E2E_HUGE=1 to run it (generates ~2.2 GB under target/e2e/)".into(),
        )
        .into());
    }
    let var = |name: &str, default: u64| match std::env::var(name) {
        Ok(v) => v.parse().with_context(|| format!("{name}={v:?}")),
        Err(_) => Ok(default),
    };
    let rows = var("HEDGEROW_E2E_HUGE_ROWS", HUGE_ROWS)?;
    let nodes = var("HEDGEROW_E2E_HUGE_NODES", BIG.nodes as u64)? as usize;
    let spec = Spec { rows, nodes, ..BIG };
    let f = batch(c, &format!("batch-huge-{rows}x{nodes}"), &spec)?;
    let changed = one_depth(spec.depth, 3);
    let want = expected_all(c, &f, &[&[], &["--thresholds", &changed]])?;
    let demo = fresh_demo(b, c, &c.http_url).await?;
    let long = Duration::from_secs(900);
    let what = format!(
        "{rows} × {nodes} float16 ({:.2} GB)",
        f.logits_bytes as f64 / 1e9
    );

    // 1. The whole batch as one selection; Cancel mid-way.
    instrument(b).await?;
    let names = ["taxonomy.csv", "logits.npy", "labels.csv", "objectness.npy"];
    let paths: Vec<PathBuf> = names.iter().map(|n| f.path(n)).collect();
    let refs: Vec<&Path> = paths.iter().map(PathBuf::as_path).collect();
    b.upload_files("file-input", &refs).await?;
    b.find("cancel-read").await?;
    let progress = || async {
        let v = b
            .eval(
                "const p = document.getElementById('read-progress-bar'); return p ? [p.value, p.max] : null;",
                vec![],
            )
            .await?;
        anyhow::Ok(match v {
            Value::Array(a) => Some((a[0].as_f64().unwrap_or(0.0), a[1].as_f64().unwrap_or(0.0))),
            _ => None,
        })
    };
    let first = progress().await?.context("no progress bar")?;
    tokio::time::sleep(Duration::from_millis(1500)).await;
    let second = progress().await?.context("no progress bar")?;
    ensure!(
        second.0 > first.0,
        "the progress bar does not move: {first:?} then {second:?}"
    );
    c.figure(format!(
        "{what}: progress bar moved from {:.1} % to {:.1} % in 1.5 s",
        100.0 * first.0 / first.1,
        100.0 * second.0 / second.1
    ));
    screenshot(b, c, "huge-reading.png").await?;
    // Wait for about a third, then Cancel.
    let deadline = Instant::now() + long;
    loop {
        let (done, total) = progress().await?.context("the read ended before Cancel")?;
        if done >= total / 3.0 {
            break;
        }
        ensure!(
            Instant::now() < deadline,
            "the read is stuck at {done} of {total}"
        );
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
    let at = progress().await?.map_or(0.0, |(d, t)| d / t);
    b.click("cancel-read").await?;
    let t = Instant::now();
    while reading(b).await? {
        ensure!(
            t.elapsed() < Duration::from_secs(5),
            "the progress bar stays after Cancel"
        );
        tokio::time::sleep(Duration::from_millis(20)).await;
    }
    c.figure(format!(
        "{what}: Cancel at {:.0} % took {:.0} ms to the progress bar gone (as polled)",
        100.0 * at,
        t.elapsed().as_secs_f64() * 1000.0
    ));
    tokio::time::sleep(Duration::from_millis(1500)).await;
    ensure!(!reading(b).await?, "a read started again after Cancel");
    ensure!(headline(b).await? == demo, "numbers changed after Cancel");
    let note = b.text("file-logits").await?;
    ensure!(note.contains("cancelled"), "the logits slot says {note:?}");
    let errors = b.text("error").await?;
    ensure!(errors.is_empty(), "errors after Cancel: {errors:?}");

    // 2. The logits again (the taxonomy, labels and objectness are staged): read to the end.
    let wasm_before = instrument(b).await?;
    let t = Instant::now();
    b.upload_file("file-input", &f.path("logits.npy")).await?;
    wait_or_die(b, &want[0], &format!("{what} at the defaults"), long).await?;
    let shown = t.elapsed();
    let r = read_figures(b).await?;
    report(c, &what, f.logits_bytes, wasm_before, &r);
    c.figure(format!(
        "{what}: upload to numbers shown (as polled by the test): {:.1} s",
        shown.as_secs_f64()
    ));
    let (engine, total) = timed_set(b, "threshold-depth-3", "0.8").await?;
    expect_headline_within(b, &want[1], &format!("{what}, depth 3 at 0.8"), long).await?;
    c.figure(format!(
        "{what}: one threshold change (depth 3, recomputes its sweep): {total:.0} ms to the \
         numbers and charts redrawn, of which the reducer {engine:.0} ms"
    ));
    screenshot(b, c, "huge-batch.png").await
}
