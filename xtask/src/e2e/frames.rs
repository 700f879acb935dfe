//! Speed at scale, measured: for each kind of interaction (a slider step on the focused depth,
//! a step of the object threshold's slider, a node's own threshold set in the node table's
//! editor), the time from the input event to the last panel drawn and to the end of that frame,
//! on the demo and (by hand, `HEDGEROW_E2E_FRAMES=1`) on a 1M-row, depth-6 batch.
//!
//! The page stamps `window.hedgerowFrame[name] = performance.now()` when the board finished
//! an action (`apply-start`, `apply-end`), after each chart's and the taxonomy view's draw
//! (`chart-tradeoff`, `chart-stops`, `icicle`) and after each render of the node table, the row
//! inspector and the page (`node-table`, `inspector`, `app`); the test clears the stamps, waits for a frame, dispatches the
//! event, then waits for the next animation frame and a `MessageChannel` message after it (the
//! end of the frame the browser rendered) and one more frame for late panels. Figures are
//! `figure:` lines, never asserted on; the test checks only that every panel drew.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use anyhow::{ensure, Context};
use serde_json::{json, Value};

use super::big::{batch, Files};
use super::page::{fresh_demo, headline, reading, wait_focused_row};
use super::{Browser, Ctx, Test};
use crate::batch::{Dtype, Spec};

pub fn tests() -> Vec<Test> {
    vec![
        Test::new(
            "http: frames on the demo: input to the last panel drawn, per interaction",
            |b, c| Box::pin(demo(b, c)),
        ),
        Test::new(
            "http: frames at 1M rows, depth 6 (only with HEDGEROW_E2E_FRAMES=1)",
            |b, c| Box::pin(million(b, c)),
        ),
    ]
}

/// The panels that must have drawn after an interaction (the stamps' names).
const PANELS: [&str; 6] = [
    "chart-tradeoff",
    "chart-stops",
    "icicle",
    "node-table",
    "inspector",
    "app",
];

/// One interaction, timed in the page.
#[derive(Debug, Clone)]
struct Timing {
    /// Input event to the board's `apply` finished.
    applied: f64,
    /// Input event to the last panel's stamp.
    drawn: f64,
    /// Input event to the end of the frame the last panel was drawn in.
    frame: f64,
    /// Each panel's stamp, from the input event (`None`: it did not draw).
    panels: Vec<Option<f64>>,
    /// Every stamp: from the input event, or a duration for the names ending `-ms`.
    all: Vec<(String, f64)>,
}

const TIME_ONE: &str = r#"
    const [sel, value, events, panels] = arguments;
    const el = document.querySelector(sel);
    if (!el) return "no element " + sel;
    const desc = Object.getOwnPropertyDescriptor(Object.getPrototypeOf(el), "value");
    // The end of the next frame: its animation frame callback, then a task after it.
    const frameEnd = () => new Promise(resolve => requestAnimationFrame(() => {
        const ch = new MessageChannel();
        ch.port1.onmessage = () => resolve(performance.now());
        ch.port2.postMessage(0);
    }));
    await frameEnd();
    window.hedgerowFrame = {};
    const t0 = performance.now();
    desc.set.call(el, value);
    for (const kind of events) {
        el.dispatchEvent(kind === "input"
            ? new InputEvent("input", { bubbles: true })
            : new Event(kind, { bubbles: true }));
    }
    const ends = [await frameEnd()];
    ends.push(await frameEnd());
    const s = window.hedgerowFrame || {};
    const stamps = panels.map(p => s[p] === undefined ? null : s[p] - t0);
    const last = Math.max(...panels.map(p => s[p] === undefined ? -Infinity : s[p]));
    // The end of the frame in which the last panel drew.
    const frame = ends.find(e => e >= last) ?? ends[ends.length - 1];
    const all = {};
    for (const [k, v] of Object.entries(s)) all[k] = k.endsWith("-ms") ? v : v - t0;
    return {
        all,
        applied: s["apply-end"] === undefined ? null : s["apply-end"] - t0,
        drawn: last - t0,
        frame: frame - t0,
        panels: stamps,
    };
"#;

async fn time_one(b: &Browser, id: &str, value: &str, events: &[&str]) -> anyhow::Result<Timing> {
    let v = b
        .eval(
            TIME_ONE,
            vec![
                json!(Browser::testid(id)),
                json!(value),
                json!(events),
                json!(PANELS),
            ],
        )
        .await?;
    ensure!(v.is_object(), "timing {id}: {v}");
    let num = |k: &str| v[k].as_f64();
    Ok(Timing {
        applied: num("applied").unwrap_or(f64::NAN),
        drawn: num("drawn").context("no drawn time")?,
        frame: num("frame").context("no frame time")?,
        panels: v["panels"]
            .as_array()
            .map(|a| a.iter().map(Value::as_f64).collect())
            .unwrap_or_default(),
        all: v["all"]
            .as_object()
            .map(|o| {
                o.iter()
                    .filter_map(|(k, v)| Some((k.clone(), v.as_f64()?)))
                    .collect()
            })
            .unwrap_or_default(),
    })
}

/// Median and max.
fn spread(mut v: Vec<f64>) -> (f64, f64) {
    v.retain(|x| x.is_finite());
    if v.is_empty() {
        return (f64::NAN, f64::NAN);
    }
    v.sort_by(f64::total_cmp);
    (v[v.len() / 2], v[v.len() - 1])
}

/// Time `values` in turn on the element `id`; report median and max as figures.
async fn series(
    b: &Browser,
    c: &Ctx,
    what: &str,
    id: &str,
    values: &[String],
    events: &[&str],
) -> anyhow::Result<()> {
    let mut all = Vec::new();
    for v in values {
        all.push(time_one(b, id, v, events).await?);
    }
    let (frame, frame_max) = spread(all.iter().map(|t| t.frame).collect());
    let (drawn, drawn_max) = spread(all.iter().map(|t| t.drawn).collect());
    let (applied, _) = spread(all.iter().map(|t| t.applied).collect());
    let panels: Vec<String> = PANELS
        .iter()
        .enumerate()
        .map(|(i, p)| {
            let (m, _) = spread(
                all.iter()
                    .filter_map(|t| t.panels.get(i).copied().flatten())
                    .collect(),
            );
            let drew = all
                .iter()
                .filter(|t| t.panels.get(i).copied().flatten().is_some())
                .count();
            format!("{p} {m:.1} ({drew}/{})", all.len())
        })
        .collect();
    let mut names: Vec<&str> = all
        .iter()
        .flat_map(|t| t.all.iter().map(|(k, _)| k.as_str()))
        .collect();
    names.sort_unstable();
    names.dedup();
    let breakdown: Vec<String> = names
        .iter()
        .map(|n| {
            let (m, _) = spread(
                all.iter()
                    .flat_map(|t| t.all.iter().filter(|(k, _)| k == n).map(|(_, v)| *v))
                    .collect(),
            );
            format!("{n} {m:.1}")
        })
        .collect();
    eprintln!(
        "        {what}: every stamp's median, ms: {}",
        breakdown.join(", ")
    );
    c.figure(format!(
        "{what}: input to the end of the frame with the last panel drawn: median {frame:.1} ms \
         (max {frame_max:.1}); to the last panel's draw {drawn:.1} ms (max {drawn_max:.1}); the \
         board's apply done at {applied:.1} ms; {} interactions; each panel's median stamp, ms \
         (drew in): {}",
        all.len(),
        panels.join(", ")
    ));
    // The charts and the page draw on every change (the table and the view only when their
    // numbers changed, which they do for these steps on the batches here).
    for (i, p) in PANELS.iter().enumerate() {
        if ["chart-tradeoff", "app"].contains(p) {
            let drew = all
                .iter()
                .filter(|t| t.panels.get(i).copied().flatten().is_some())
                .count();
            ensure!(
                drew == all.len(),
                "{what}: {p} drew after {drew} of {} interactions",
                all.len()
            );
        }
    }
    Ok(())
}

/// Steps of 0.01 going up from `from`, `n` of them.
fn steps(from: f64, n: usize) -> Vec<String> {
    (0..n)
        .map(|i| format!("{:.2}", from + 0.01 * i as f64))
        .collect()
}

/// Every interaction kind on what the page has loaded now.
async fn interactions(b: &Browser, c: &Ctx, what: &str, depth: usize) -> anyhow::Result<()> {
    let n = 30;
    // A slider drag on a focused depth: focus its field first (it becomes chart 1's sweep).
    let field = format!("threshold-depth-{depth}");
    b.find(&field).await?.click().await?;
    wait_focused_row(b, &field).await?;
    series(
        b,
        c,
        &format!("{what}, slider steps on depth {depth} (focused)"),
        &format!("{field}-slider"),
        &steps(0.35, n),
        &["input"],
    )
    .await?;
    series(
        b,
        c,
        &format!("{what}, object threshold slider steps"),
        "threshold-object-slider",
        &steps(0.35, n),
        &["input"],
    )
    .await?;
    // A node's own threshold from the table's editor: select the table's first listed node.
    b.eval(
        "document.querySelector('[data-testid=node-table] tbody tr:nth-child(2) button').click();",
        vec![],
    )
    .await?;
    b.find("node-threshold").await?;
    series(
        b,
        c,
        &format!("{what}, a node's threshold set in the table's editor"),
        "node-threshold",
        &steps(0.55, n),
        &["input", "change"],
    )
    .await?;
    Ok(())
}

async fn demo(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    interactions(b, c, "demo (20k rows × 173 nodes, depth 5)", 3).await
}

const MILLION: Spec = Spec {
    rows: 1_000_000,
    nodes: 500,
    depth: 6,
    seed: 1,
    dtype: Dtype::F16,
    objectness: true,
};

async fn million(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    if std::env::var("HEDGEROW_E2E_FRAMES").as_deref() != Ok("1") {
        return Err(super::Skipped(
            "set HEDGEROW_E2E_FRAMES=1 to run it (generates ~1 GB under target/e2e/, minutes)"
                .into(),
        )
        .into());
    }
    let f: Files = batch(c, "batch-1m", &MILLION)?;
    let demo = fresh_demo(b, c, &c.http_url).await?;
    let names = ["taxonomy.csv", "logits.npy", "labels.csv", "objectness.npy"];
    let paths: Vec<PathBuf> = names.iter().map(|n| f.path(n)).collect();
    let refs: Vec<&Path> = paths.iter().map(PathBuf::as_path).collect();
    let t = Instant::now();
    b.upload_files("file-input", &refs).await?;
    let deadline = t + Duration::from_secs(600);
    loop {
        // The demo's numbers gone and no read in progress: the 1M-row batch is in use.
        if !reading(b).await? && headline(b).await.is_ok_and(|h| h != demo) {
            break;
        }
        ensure!(
            Instant::now() < deadline,
            "the 1M-row batch was not in use after 600 s"
        );
        tokio::time::sleep(Duration::from_millis(250)).await;
    }
    c.figure(format!(
        "1M × 500 float16: upload to the batch in use (as polled): {:.1} s",
        t.elapsed().as_secs_f64()
    ));
    interactions(b, c, "1M rows × 500 nodes, depth 6", 3).await
}
