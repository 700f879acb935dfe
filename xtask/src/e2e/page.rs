//! The page against the command line: every number the page shows for some settings must be
//! the number `hedgerow evaluate --json` prints for the same settings on `demo-data/`.
//!
//! Each test starts from a fresh page (stored settings cleared) unless it is about what a
//! reload keeps. Screenshots of the main states go to `target/e2e/` at 1280×800.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

use anyhow::{bail, ensure, Context};
use serde_json::{json, Value};

use super::{Browser, Ctx, Test};

pub fn tests() -> Vec<Test> {
    vec![
        Test::new(
            "http: the demo loads at startup and equals the CLI at the defaults",
            |b, c| Box::pin(demo_defaults(b, c, c.http_url.as_str(), "http")),
        ),
        Test::new("http: per-depth thresholds equal the CLI", |b, c| {
            Box::pin(per_depth(b, c))
        }),
        Test::new("http: the conditional rule equals the CLI", |b, c| {
            Box::pin(conditional(b, c))
        }),
        Test::new(
            "http: object threshold, all depths and policy equal the CLI",
            |b, c| Box::pin(other_controls(b, c)),
        ),
        Test::new(
            "http: a typed threshold outside [0, 1] or not a number says why and changes nothing",
            |b, c| Box::pin(refused_entries(b, c)),
        ),
        Test::new(
            "http: the figures and labels say what they are (stop here, depths differ, information gain)",
            |b, c| Box::pin(wording(b, c)),
        ),
        Test::new(
            "http: node overrides from a profile are listed, survive a reload and go with Reset",
            |b, c| Box::pin(node_overrides(b, c)),
        ),
        Test::new(
            "http: a saved profile gives the page's numbers in the CLI",
            |b, c| Box::pin(save_profile(b, c)),
        ),
        Test::new("http: thresholds and rule survive a reload", |b, c| {
            Box::pin(reload(b, c))
        }),
        Test::new(
            "http: a profile made by the CLI loads through the file input",
            |b, c| Box::pin(load_cli_profile(b, c)),
        ),
        Test::new(
            "http: a broken labels file shows the located error and keeps the batch",
            |b, c| Box::pin(broken_labels(b, c)),
        ),
        Test::new("http: dropped files load like chosen ones", |b, c| {
            Box::pin(dropped(b, c))
        }),
        Test::new(
            "http: a temperature change re-reads the logits and equals the CLI",
            |b, c| Box::pin(temperature(b, c)),
        ),
        Test::new(
            "http: Cancel stops a logits read and keeps the batch",
            |b, c| Box::pin(cancel(b, c)),
        ),
        Test::new(
            "http: an np.savez_compressed bundle loads with its taxonomy and equals the CLI",
            |b, c| Box::pin(bundle(b, c)),
        ),
        Test::new(
            "http: a bundle without logits or a cut one shows the error beside the logits and keeps the batch",
            |b, c| Box::pin(bundle_errors(b, c)),
        ),
        Test::new(
            "http: a wasm trap (out of memory) shows why the page stopped",
            |b, c| Box::pin(trap(b, c)),
        ),
        Test::new(
            "file: the demo loads and equals the CLI at the defaults",
            |b, c| Box::pin(demo_defaults(b, c, c.file_url.as_str(), "file")),
        ),
    ]
}

/// The four headline numbers as the page shows them (text content).
#[derive(Debug, Clone, PartialEq)]
pub(super) struct Headline {
    predictions: String,
    precision: String,
    specificity: String,
    reward: String,
}

impl Headline {
    /// The same numbers from `hedgerow evaluate --json`, formatted as the page formats them.
    pub(super) fn from_json(m: &Value) -> anyhow::Result<Self> {
        let ratio = |k: &str| match &m[k] {
            Value::Null => Ok("n/a".to_string()),
            v => v
                .as_f64()
                .map(|v| format!("{v:.4}"))
                .with_context(|| format!("{k} is not a number in {m}")),
        };
        Ok(Self {
            predictions: m["predictions"]
                .as_u64()
                .with_context(|| format!("no predictions in {m}"))?
                .to_string(),
            precision: ratio("precision")?,
            specificity: ratio("specificity")?,
            reward: ratio("reward")?,
        })
    }
}

/// `hedgerow <args> --taxonomy … --objectness …` on the demo data.
fn cli(c: &Ctx, command: &str, args: &[&str]) -> anyhow::Result<String> {
    let d = &c.demo_dir;
    let out = Command::new(&c.cli)
        .arg(command)
        .arg("--taxonomy")
        .arg(d.join("taxonomy.csv"))
        .arg("--logits")
        .arg(d.join("logits.npy"))
        .arg("--labels")
        .arg(d.join("labels.csv"))
        .arg("--objectness")
        .arg(d.join("objectness.npy"))
        .args(args)
        .output()
        .with_context(|| format!("running {}", c.cli.display()))?;
    ensure!(
        out.status.success(),
        "hedgerow {command} {args:?} failed ({}): {}",
        out.status,
        String::from_utf8_lossy(&out.stderr)
    );
    Ok(String::from_utf8(out.stdout)?)
}

/// `hedgerow evaluate --json` on these files (flag and path: `--taxonomy`, `--logits`, …) with
/// these settings flags: its headline, as the page formats it.
pub(super) fn evaluate_files(
    c: &Ctx,
    files: &[(&str, &Path)],
    args: &[&str],
) -> anyhow::Result<Headline> {
    let mut cmd = Command::new(&c.cli);
    cmd.arg("evaluate");
    for (flag, path) in files {
        cmd.arg(flag).arg(path);
    }
    let out = cmd
        .args(args)
        .arg("--json")
        .output()
        .with_context(|| format!("running {}", c.cli.display()))?;
    ensure!(
        out.status.success(),
        "hedgerow evaluate {files:?} {args:?} failed ({}): {}",
        out.status,
        String::from_utf8_lossy(&out.stderr)
    );
    let m: Value = serde_json::from_slice(&out.stdout).context("the CLI's JSON")?;
    Headline::from_json(&m)
}

/// A generated WordNet batch's files as the command line's flags (`--taxonomy` …,
/// `--objectness`), the order the page is given them in.
pub(super) fn wordnet_files(
    g: &crate::wordnet::Generated,
) -> anyhow::Result<Vec<(&'static str, &Path)>> {
    Ok(vec![
        ("--taxonomy", g.taxonomy.as_path()),
        ("--logits", g.logits.as_path()),
        ("--labels", g.labels.as_path()),
        (
            "--objectness",
            g.objectness
                .as_deref()
                .context("the batch has objectness")?,
        ),
    ])
}

/// `hedgerow COMMAND` on these files (flag and path) with these arguments: its stdout, or an
/// error with its stderr when it fails.
pub(super) fn run_cli(
    c: &Ctx,
    command: &str,
    files: &[(&str, &Path)],
    args: &[&str],
) -> anyhow::Result<Vec<u8>> {
    let mut cmd = Command::new(&c.cli);
    cmd.arg(command);
    for (flag, path) in files {
        cmd.arg(flag).arg(path);
    }
    let out = cmd
        .args(args)
        .output()
        .with_context(|| format!("running {}", c.cli.display()))?;
    ensure!(
        out.status.success(),
        "hedgerow {command} {args:?} failed ({}): {}",
        out.status,
        String::from_utf8_lossy(&out.stderr)
    );
    Ok(out.stdout)
}

/// Open the page fresh on the demo, then give it these files through the file input and wait
/// until it shows the command line's numbers for them.
pub(super) async fn load_after_demo(
    b: &Browser,
    c: &Ctx,
    files: &[(&str, &Path)],
) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    let want = evaluate_files(c, files, &[])?;
    let paths: Vec<&Path> = files.iter().map(|(_, p)| *p).collect();
    b.upload_files("file-input", &paths).await?;
    expect_headline(b, &want, "the batch after the demo").await
}

/// The CLI's headline for these settings flags.
fn expected(c: &Ctx, args: &[&str]) -> anyhow::Result<Headline> {
    let mut all = args.to_vec();
    all.push("--json");
    let text = cli(c, "evaluate", &all)?;
    let m: Value = serde_json::from_str(&text).context("the CLI's JSON")?;
    Headline::from_json(&m)
}

pub(super) async fn headline(b: &Browser) -> anyhow::Result<Headline> {
    let v = b
        .eval(
            r#"
            const t = id => { const e = document.querySelector(`[data-testid="${id}"]`); return e ? e.textContent : ""; };
            return ["predictions", "precision", "specificity", "reward"].map(k => t("metric-" + k));
            "#,
            vec![],
        )
        .await?;
    let s = |i: usize| v[i].as_str().unwrap_or("").to_string();
    Ok(Headline {
        predictions: s(0),
        precision: s(1),
        specificity: s(2),
        reward: s(3),
    })
}

/// Whether a logits read is in progress.
pub(super) async fn reading(b: &Browser) -> anyhow::Result<bool> {
    Ok(!b.find_all("read-progress").await?.is_empty())
}

/// Wait until the page shows `want` with no read in progress.
pub(super) async fn expect_headline(
    b: &Browser,
    want: &Headline,
    what: &str,
) -> anyhow::Result<()> {
    expect_headline_within(b, want, what, b.timeout).await
}

/// The same, waiting up to `timeout` (big files).
pub(super) async fn expect_headline_within(
    b: &Browser,
    want: &Headline,
    what: &str,
    timeout: Duration,
) -> anyhow::Result<()> {
    let deadline = Instant::now() + timeout;
    loop {
        let got = headline(b).await?;
        if got == *want && !reading(b).await? {
            return Ok(());
        }
        if Instant::now() > deadline {
            let errors = b.text("error").await.unwrap_or_default();
            bail!("{what}: the page shows {got:?}, the CLI says {want:?} (error area: {errors:?})");
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
}

/// The `value` of an input or select.
pub(super) async fn value(b: &Browser, id: &str) -> anyhow::Result<String> {
    b.find(id).await?;
    let v = b
        .eval(
            "return document.querySelector(arguments[0]).value;",
            vec![json!(Browser::testid(id))],
        )
        .await?;
    Ok(v.as_str().unwrap_or("").to_string())
}

/// Open the page with no stored settings (so it starts at the defaults).
pub(super) async fn open_fresh(b: &Browser, url: &str) -> anyhow::Result<()> {
    b.open(url).await?;
    b.eval(
        "try { localStorage.clear(); return true; } catch (e) { return String(e); }",
        vec![],
    )
    .await?;
    b.open(url).await
}

/// Open fresh and wait for the demo at the defaults.
pub(super) async fn fresh_demo(b: &Browser, c: &Ctx, url: &str) -> anyhow::Result<Headline> {
    open_fresh(b, url).await?;
    let want = expected(c, &[])?;
    expect_headline(b, &want, "the demo at the defaults").await?;
    Ok(want)
}

pub(super) async fn screenshot(b: &Browser, c: &Ctx, name: &str) -> anyhow::Result<()> {
    // Let the charts' effects run before the shot.
    tokio::time::sleep(Duration::from_millis(250)).await;
    b.screenshot(&c.out_dir.join(name)).await
}

// 1 and 7.
async fn demo_defaults(b: &Browser, c: &Ctx, url: &str, scheme: &str) -> anyhow::Result<()> {
    let want = fresh_demo(b, c, url).await?;
    let error = b.text("error").await?;
    ensure!(error.is_empty(), "error area: {error:?}");
    for d in 1..=5 {
        let v = value(b, &format!("threshold-depth-{d}")).await?;
        ensure!(v == "0.5", "threshold-depth-{d} is {v:?}, expected 0.5");
    }
    ensure!(
        value(b, "threshold-object").await? == "0.5",
        "object threshold"
    );
    ensure!(value(b, "rule").await? == "cumulative", "rule");
    let shown = b
        .eval(
            "const m = performance.getEntriesByName('hedgerow:numbers-shown'); return m.length ? m[0].startTime : null;",
            vec![],
        )
        .await?;
    let ms = shown.as_f64().context("no hedgerow:numbers-shown mark")?;
    c.figure(format!(
        "{scheme}: page open to demo numbers shown: {ms:.0} ms (navigation start to first metrics render; precision {})",
        want.precision
    ));
    // Both charts were drawn at devicePixelRatio scale.
    let sizes = b
        .eval(
            r#"return ["chart-tradeoff", "chart-stops"].map(id => {
                const c = document.querySelector(`[data-testid="${id}"]`);
                return [c.width, c.height, c.clientWidth, c.clientHeight, window.devicePixelRatio];
            });"#,
            vec![],
        )
        .await?;
    for s in sizes.as_array().into_iter().flatten() {
        let f = |i: usize| s[i].as_f64().unwrap_or(0.0);
        ensure!(
            f(2) > 200.0 && (f(0) - (f(2) * f(4)).round()).abs() < 1.0,
            "canvas backing store not sized by devicePixelRatio: {s}"
        );
    }
    let logits = b.text("file-logits").await?;
    c.figure(format!(
        "{scheme}: demo logits (6.9 MB float16) streamed and decoded: {logits}"
    ));
    if scheme == "http" {
        screenshot(b, c, "initial.png").await?;
    }
    Ok(())
}

/// Set a field and measure, in the page, the time until the change is rendered: the
/// dispatch and the engine's re-evaluation run inside the event (yew's reducer is
/// synchronous), then the render and the charts' redraw, all before a `setTimeout(0)` fires
/// (yew renders on the microtask queue). Returns (engine ms, total ms).
pub(super) async fn timed_set(b: &Browser, id: &str, v: &str) -> anyhow::Result<(f64, f64)> {
    b.find(id).await?;
    let js = r#"
        const [sel, value] = arguments;
        const el = document.querySelector(sel);
        const desc = Object.getOwnPropertyDescriptor(Object.getPrototypeOf(el), "value");
        const t0 = performance.now();
        desc.set.call(el, value);
        el.dispatchEvent(new InputEvent("input", { bubbles: true }));
        el.dispatchEvent(new Event("change", { bubbles: true }));
        const t1 = performance.now();
        return new Promise(resolve => setTimeout(() => resolve([t1 - t0, performance.now() - t0]), 0));
    "#;
    let ms = b
        .eval(js, vec![json!(Browser::testid(id)), json!(v)])
        .await?;
    Ok((
        ms[0].as_f64().context("no time")?,
        ms[1].as_f64().context("no time")?,
    ))
}

// 2.
async fn per_depth(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    let ms2 = timed_set(b, "threshold-depth-2", "0.8").await?;
    let want = expected(c, &["--thresholds", "0.5,0.8,0.5,0.5,0.5"])?;
    expect_headline(b, &want, "depth 2 at 0.8").await?;
    let ms4 = timed_set(b, "threshold-depth-4", "0.35").await?;
    let want = expected(c, &["--thresholds", "0.5,0.8,0.5,0.35,0.5"])?;
    expect_headline(b, &want, "depth 2 at 0.8, depth 4 at 0.35").await?;
    // Repeat a few changes for a steadier figure.
    let mut times = vec![ms2, ms4];
    for v in ["0.6", "0.7", "0.5", "0.35"] {
        times.push(timed_set(b, "threshold-depth-4", v).await?);
    }
    expect_headline(b, &want, "back at depth 4 = 0.35").await?;
    let median = |mut v: Vec<f64>| {
        v.sort_by(f64::total_cmp);
        (v[v.len() / 2], v[v.len() - 1])
    };
    let (engine, engine_max) = median(times.iter().map(|t| t.0).collect());
    let (total, total_max) = median(times.iter().map(|t| t.1).collect());
    c.figure(format!(
        "one threshold change: median {total:.1} ms (max {total_max:.1}) from the input event to \
         the numbers and both charts redrawn, of which the reducer (engine) {engine:.1} ms \
         (max {engine_max:.1}); {} changes, the first of each depth recomputes its sweep",
        times.len()
    ));
    // The same on depth 5, whose sweep has far fewer points (fewer rows reach depth 5).
    let mut d5 = Vec::new();
    for v in ["0.6", "0.7", "0.4", "0.5"] {
        d5.push(timed_set(b, "threshold-depth-5", v).await?.1);
    }
    let (d5_total, _) = median(d5);
    c.figure(format!(
        "one threshold change with depth 5 in chart 1 (a shorter sweep): median {d5_total:.1} ms"
    ));
    expect_headline(b, &want, "back at depth 5 = 0.5").await?;
    // The slider moves the same threshold.
    b.set_value("threshold-depth-4-slider", "0.5").await?;
    expect_headline(
        b,
        &expected(c, &["--thresholds", "0.5,0.8,0.5,0.5,0.5"])?,
        "slider",
    )
    .await?;
    b.set_value("threshold-depth-4", "0.35").await?;
    expect_headline(b, &want, "depth 4 back to 0.35").await?;
    // Keyboard: focusing a depth's field makes it chart 1's sweep; arrow keys move a slider.
    b.find("threshold-depth-3").await?.click().await?;
    wait_focused_row(b, "threshold-depth-3").await?;
    let slider = b.find("threshold-depth-5-slider").await?;
    b.eval(
        "document.querySelector(arguments[0]).focus();",
        vec![json!(Browser::testid("threshold-depth-5-slider"))],
    )
    .await?;
    wait_focused_row(b, "threshold-depth-5").await?;
    slider
        .send_keys(&char::from(fantoccini::key::Key::Right).to_string())
        .await?;
    let want = expected(c, &["--thresholds", "0.5,0.8,0.5,0.35,0.51"])?;
    expect_headline(b, &want, "depth 5 one step up by keyboard").await?;
    ensure!(
        value(b, "threshold-depth-5").await? == "0.51",
        "the number field follows the slider"
    );
    screenshot(b, c, "tuned.png").await
}

/// Wait until the highlighted threshold row (chart 1's sweep) is the one of field `id`.
pub(super) async fn wait_focused_row(b: &Browser, id: &str) -> anyhow::Result<()> {
    let deadline = Instant::now() + b.timeout;
    loop {
        let v = b
            .eval(
                "const i = document.querySelector('.threshold.focused input.number'); return i ? i.dataset.testid : null;",
                vec![],
            )
            .await?;
        if v.as_str() == Some(id) {
            return Ok(());
        }
        if Instant::now() > deadline {
            bail!("the highlighted threshold is {v}, expected {id}");
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
}

// 3.
async fn conditional(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    b.set_value("rule", "conditional").await?;
    let want = expected(c, &["--rule", "conditional"])?;
    expect_headline(b, &want, "conditional rule").await?;
    b.set_value("threshold-depth-2", "0.8").await?;
    b.set_value("threshold-depth-4", "0.35").await?;
    let want = expected(
        c,
        &[
            "--rule",
            "conditional",
            "--thresholds",
            "0.5,0.8,0.5,0.35,0.5",
        ],
    )?;
    expect_headline(
        b,
        &want,
        "conditional rule, depth 2 at 0.8, depth 4 at 0.35",
    )
    .await
}

async fn other_controls(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    b.set_value("threshold-object", "0.7").await?;
    expect_headline(
        b,
        &expected(c, &["--object-threshold", "0.7"])?,
        "object threshold 0.7",
    )
    .await?;
    b.set_value("threshold-all", "0.65").await?;
    for d in 1..=5 {
        let v = value(b, &format!("threshold-depth-{d}")).await?;
        ensure!(
            v == "0.65",
            "threshold-depth-{d} is {v:?} after all depths = 0.65"
        );
    }
    let want = expected(c, &["--object-threshold", "0.7", "--thresholds", "0.65"])?;
    expect_headline(b, &want, "all depths 0.65").await?;
    b.set_value("policy", "exclude").await?;
    let want = expected(
        c,
        &[
            "--object-threshold",
            "0.7",
            "--thresholds",
            "0.65",
            "--unverifiable",
            "exclude",
        ],
    )?;
    expect_headline(b, &want, "unverifiable exclude").await?;
    // Out of range is not applied (see `refused_entries`): the field goes back to 0.65.
    b.set_value("threshold-depth-1", "7").await?;
    b.wait_text("threshold-depth-1-error", "why 7 was not applied", |t| {
        t == "7 is outside [0, 1]: not applied"
    })
    .await?;
    let v = value(b, "threshold-depth-1").await?;
    ensure!(
        v == "0.65",
        "threshold-depth-1 shows {v:?} after 7 was entered"
    );
    expect_headline(b, &want, "depth 1 kept at 0.65").await?;
    // Reset goes back to the defaults, and the message goes with the value it was about.
    b.click("reset-settings").await?;
    expect_headline(b, &expected(c, &[])?, "after Reset").await?;
    ensure!(
        b.find_all("threshold-depth-1-error").await?.is_empty(),
        "the message stays after Reset"
    );
    Ok(())
}

/// `hedgerow evaluate --json` with these settings flags, whole.
fn evaluate_json(c: &Ctx, args: &[&str]) -> anyhow::Result<Value> {
    let mut all = args.to_vec();
    all.push("--json");
    let text = cli(c, "evaluate", &all)?;
    serde_json::from_str(&text).context("the CLI's JSON")
}

/// The text of an element (`textContent`, so CSS capitals do not show), or `None` when there
/// is none.
async fn content(b: &Browser, id: &str) -> anyhow::Result<Option<String>> {
    let v = b
        .eval(
            "const e = document.querySelector(arguments[0]); return e ? e.textContent : null;",
            vec![json!(Browser::testid(id))],
        )
        .await?;
    Ok(v.as_str().map(str::to_string))
}

/// Wait until the element with this `data-testid` is gone.
async fn wait_gone(b: &Browser, id: &str, what: &str) -> anyhow::Result<()> {
    let deadline = Instant::now() + b.timeout;
    while !b.find_all(id).await?.is_empty() {
        if Instant::now() > deadline {
            let text = b.text(id).await.unwrap_or_default();
            bail!("{what}: [data-testid={id}] is still there: {text:?}");
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
    Ok(())
}

/// Type `raw` into field `id`: the message beside it must be `message`, the field must go back
/// to `kept`, and the numbers must stay `want` (no logits read either).
pub(super) async fn refused(
    b: &Browser,
    id: &str,
    raw: &str,
    message: &str,
    kept: &str,
    want: &Headline,
) -> anyhow::Result<()> {
    b.set_value(id, raw).await?;
    let error = format!("{id}-error");
    b.wait_text(&error, message, |t| t == message).await?;
    let v = value(b, id).await?;
    ensure!(
        v == kept,
        "{id} shows {v:?} after {raw:?}, expected {kept:?}"
    );
    let invalid = b
        .eval(
            "return document.querySelector(arguments[0]).getAttribute('aria-invalid');",
            vec![json!(Browser::testid(id))],
        )
        .await?;
    ensure!(invalid == "true", "{id} is not marked invalid: {invalid}");
    // Give a (wrong) change the time to show before checking that none did.
    tokio::time::sleep(Duration::from_millis(150)).await;
    ensure!(!reading(b).await?, "{raw:?} in {id} started a read");
    let got = headline(b).await?;
    ensure!(
        got == *want,
        "{raw:?} in {id} changed the numbers: {got:?}, expected {want:?}"
    );
    Ok(())
}

async fn refused_entries(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let want = fresh_demo(b, c, &c.http_url).await?;
    let outside = "1.7 is outside [0, 1]: not applied";
    refused(b, "threshold-depth-2", "1.7", outside, "0.5", &want).await?;
    let nan = "`abc` is not a number: not applied";
    refused(b, "threshold-depth-2", "abc", nan, "0.5", &want).await?;
    b.find("threshold-depth-2").await?.click().await?;
    screenshot(b, c, "refused.png").await?;
    // The next valid entry is applied and the message goes.
    b.set_value("threshold-depth-2", "0.8").await?;
    let tuned = expected(c, &["--thresholds", "0.5,0.8,0.5,0.5,0.5"])?;
    expect_headline(b, &tuned, "depth 2 at 0.8 after the refused entries").await?;
    wait_gone(b, "threshold-depth-2-error", "a valid entry").await?;
    ensure!(
        b.eval(
            "return document.querySelector(arguments[0]).getAttribute('aria-invalid');",
            vec![json!(Browser::testid("threshold-depth-2"))],
        )
        .await?
        .is_null(),
        "threshold-depth-2 still marked invalid"
    );
    // Typed key by key, `1.7` passes through `1`, which is applied while typing; the refused
    // whole puts back the value from before the edit.
    b.eval(
        "const e = document.querySelector(arguments[0]); e.focus(); e.select();",
        vec![json!(Browser::testid("threshold-depth-2"))],
    )
    .await?;
    let enter = char::from(fantoccini::key::Key::Enter);
    b.find("threshold-depth-2")
        .await?
        .send_keys(&format!("1.7{enter}"))
        .await?;
    b.wait_text("threshold-depth-2-error", outside, |t| t == outside)
        .await?;
    expect_headline(b, &tuned, "1.7 typed key by key into depth 2").await?;
    let v = value(b, "threshold-depth-2").await?;
    ensure!(
        v == "0.8",
        "threshold-depth-2 shows {v:?} after 1.7 was typed"
    );
    // The same for the object threshold, all depths and the temperatures.
    refused(
        b,
        "threshold-object",
        "-0.2",
        "-0.2 is outside [0, 1]: not applied",
        "0.5",
        &tuned,
    )
    .await?;
    refused(
        b,
        "threshold-all",
        "2",
        "2 is outside [0, 1]: not applied",
        "",
        &tuned,
    )
    .await?;
    for d in 1..=5 {
        let v = value(b, &format!("threshold-depth-{d}")).await?;
        let kept = if d == 2 { "0.8" } else { "0.5" };
        ensure!(
            v == kept,
            "threshold-depth-{d} is {v:?} after all depths = 2"
        );
    }
    b.eval(
        "document.querySelector('[data-testid=advanced]').open = true;",
        vec![],
    )
    .await?;
    refused(
        b,
        "temperature-depth-2",
        "0",
        "0 is not a positive number: not applied",
        "1",
        &tuned,
    )
    .await?;
    refused(
        b,
        "temperature-depth-3",
        "warm",
        "`warm` is not a number: not applied",
        "1",
        &tuned,
    )
    .await?;
    b.eval(
        "document.querySelector('[data-testid=temperature-depth-3]').scrollIntoView({block: 'center'});",
        vec![],
    )
    .await?;
    screenshot(b, c, "refused-advanced.png").await?;
    b.set_value("temperature-depth-2", "2").await?;
    let warm = expected(
        c,
        &[
            "--thresholds",
            "0.5,0.8,0.5,0.5,0.5",
            "--temperatures",
            "1,2,1,1,1",
        ],
    )?;
    expect_headline(b, &warm, "temperature 2 at depth 2 after a refused one").await?;
    wait_gone(b, "temperature-depth-2-error", "a valid temperature").await?;
    Ok(())
}

async fn wording(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    b.set_value("threshold-depth-2", "0.8").await?;
    let args = ["--thresholds", "0.5,0.8,0.5,0.5,0.5"];
    expect_headline(b, &expected(c, &args)?, "depth 2 at 0.8").await?;
    // Beside each depth: the share of predictions stopping there, as the CLI counts it.
    let m = evaluate_json(c, &args)?;
    for d in 0..=5 {
        let id = if d == 0 {
            "threshold-object-share".to_string()
        } else {
            format!("threshold-depth-{d}-share")
        };
        let share = m["stop_share"][d]
            .as_f64()
            .with_context(|| format!("no stop_share[{d}] in {m}"))?;
        let tail = if d == 0 { "stop at root" } else { "stop here" };
        let want = format!("{:.1} % {tail}", share * 100.0);
        let got = b.text(&id).await?;
        ensure!(got == want, "{id} says {got:?}, expected {want:?}");
        let title = b.find(&id).await?.attr("title").await?.unwrap_or_default();
        ensure!(
            title.starts_with("Share of predictions"),
            "{id}'s title is {title:?}"
        );
    }
    // All depths, when they differ: an empty field and a line saying what a value there does.
    let line = "depths differ (0.5 … 0.8): setting a value here sets every depth to it";
    b.wait_text("threshold-all-note", line, |t| t == line)
        .await?;
    ensure!(
        value(b, "threshold-all").await?.is_empty(),
        "the all-depths field shows a value while the depths differ"
    );
    // Specificity is named for what it is, in the headline and on chart 1.
    let label = content(b, "metric-specificity-label").await?;
    ensure!(
        label.as_deref() == Some("specificity (information gain)"),
        "the headline calls it {label:?}"
    );
    let chart = b
        .find("chart-tradeoff")
        .await?
        .attr("aria-label")
        .await?
        .unwrap_or_default();
    ensure!(
        chart.contains("specificity (information gain)"),
        "chart 1 is called {chart:?}"
    );
    screenshot(b, c, "wording.png").await?;
    // One value for all depths: the line goes.
    b.set_value("threshold-all", "0.6").await?;
    expect_headline(b, &expected(c, &["--thresholds", "0.6"])?, "all depths 0.6").await?;
    wait_gone(b, "threshold-all-note", "every depth at 0.6").await?;
    ensure!(
        value(b, "threshold-all").await? == "0.6",
        "the all-depths field"
    );
    Ok(())
}

/// A profile made by the CLI with `node_thresholds` added (the CLI has no flag for them).
fn profile_with_nodes(c: &Ctx, nodes: Value) -> anyhow::Result<PathBuf> {
    let plain = c.out_dir.join("profile-plain.json");
    let out = plain.to_string_lossy().into_owned();
    cli(
        c,
        "profile",
        &["--thresholds", "0.5,0.7", "--out", out.as_str()],
    )?;
    let mut profile: Value = serde_json::from_str(&std::fs::read_to_string(&plain)?)?;
    profile["node_thresholds"] = nodes;
    let path = c.out_dir.join("profile-nodes.json");
    std::fs::write(&path, serde_json::to_string_pretty(&profile)?)?;
    Ok(path)
}

async fn node_overrides(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let path = profile_with_nodes(c, json!({ "pet-bottle": 0.8, "glass": 0.95 }))?;
    let with = expected(c, &["--profile", &path.to_string_lossy()])?;
    let defaults = fresh_demo(b, c, &c.http_url).await?;
    ensure!(
        with != defaults,
        "the overrides change nothing on the demo: a useless check"
    );
    ensure!(
        b.find_all("node-overrides").await?.is_empty(),
        "overrides listed before any profile"
    );
    b.upload_file("file-input", &path).await?;
    expect_headline(b, &with, "the profile with node overrides").await?;
    let check = |when: &'static str| async move {
        let list = content(b, "node-overrides").await?.unwrap_or_default();
        for part in [
            "Node overrides (2)",
            "glass",
            "≥ 0.95",
            "pet-bottle",
            "PET bottles",
            "≥ 0.8",
        ] {
            ensure!(
                list.contains(part),
                "{when}: the list says {list:?}, expected {part:?}"
            );
        }
        let item = b.text("node-override-pet-bottle").await?;
        ensure!(
            item.contains("pet-bottle") && item.contains("PET bottles") && item.ends_with("≥ 0.8"),
            "{when}: pet-bottle's line is {item:?}"
        );
        anyhow::Ok(())
    };
    check("loaded").await?;
    b.eval(
        "document.querySelector('[data-testid=node-overrides]').scrollIntoView({block: 'center'});",
        vec![],
    )
    .await?;
    screenshot(b, c, "node-overrides.png").await?;
    // A reload keeps them (stored by node id), and so the numbers.
    b.open(&c.http_url).await?;
    expect_headline(b, &with, "after the reload").await?;
    check("after the reload").await?;
    // Reset clears them with the rest; the batch stays.
    b.click("reset-settings").await?;
    expect_headline(b, &defaults, "after Reset").await?;
    wait_gone(b, "node-overrides", "Reset").await?;
    let in_use = b.text("in-use").await?;
    ensure!(
        in_use.contains("labels.csv"),
        "batch in use after Reset: {in_use:?}"
    );
    Ok(())
}

/// Wait for a download whose name satisfies `named` (`what` it should be) to finish in `dir`
/// and return its path.
pub(super) async fn wait_download(
    dir: &Path,
    named: impl Fn(&str) -> bool,
    what: &str,
    timeout: Duration,
) -> anyhow::Result<PathBuf> {
    let deadline = Instant::now() + timeout;
    loop {
        let names: Vec<String> = std::fs::read_dir(dir)?
            .filter_map(Result::ok)
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .collect();
        let partial = names.iter().any(|n| n.ends_with(".crdownload"));
        let found = names.iter().find(|n| named(n));
        if let (Some(name), false) = (found, partial) {
            return Ok(dir.join(name));
        }
        if Instant::now() > deadline {
            bail!(
                "no download {what} in {} (the folder has {names:?})",
                dir.display()
            );
        }
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
}

pub(super) fn clear_dir(dir: &Path) -> anyhow::Result<()> {
    for e in std::fs::read_dir(dir)? {
        let p = e?.path();
        if p.is_file() {
            std::fs::remove_file(&p)?;
        }
    }
    Ok(())
}

/// Whether `name` is a profile of the demo's `taxonomy.csv` as the page names it:
/// `taxonomy-profile-YYYY-MM-DDTHHMM.json` (local time; only its shape is checked).
fn is_demo_profile_name(name: &str) -> bool {
    let Some(time) = name
        .strip_prefix("taxonomy-profile-")
        .and_then(|r| r.strip_suffix(".json"))
    else {
        return false;
    };
    let shape = "dddd-dd-ddTdddd";
    time.len() == shape.len()
        && time
            .chars()
            .zip(shape.chars())
            .all(|(c, s)| if s == 'd' { c.is_ascii_digit() } else { c == s })
}

/// Save the page's profile (of the demo's taxonomy) and return its path.
pub(super) async fn save_and_fetch(b: &Browser) -> anyhow::Result<PathBuf> {
    clear_dir(&b.download_dir)?;
    b.click("save-profile").await?;
    wait_download(
        &b.download_dir,
        is_demo_profile_name,
        "taxonomy-profile-YYYY-MM-DDTHHMM.json",
        b.timeout,
    )
    .await
}

// 4.
async fn save_profile(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    b.set_value("rule", "conditional").await?;
    b.set_value("threshold-depth-2", "0.8").await?;
    b.set_value("threshold-depth-4", "0.35").await?;
    b.set_value("threshold-object", "0.6").await?;
    let want = expected(
        c,
        &[
            "--rule",
            "conditional",
            "--thresholds",
            "0.5,0.8,0.5,0.35,0.5",
            "--object-threshold",
            "0.6",
        ],
    )?;
    expect_headline(b, &want, "settings to save").await?;
    let shown = headline(b).await?;
    let path = save_and_fetch(b).await?;
    let saved = std::fs::read_to_string(&path)?;
    let profile: Value = serde_json::from_str(&saved).context("the saved profile")?;
    ensure!(
        profile["kind"] == "hedgerow threshold profile",
        "kind: {}",
        profile["kind"]
    );
    ensure!(
        profile["rule"] == "conditional",
        "rule: {}",
        profile["rule"]
    );
    ensure!(
        profile["thresholds"] == json!([0.5, 0.8, 0.5, 0.35, 0.5]),
        "thresholds: {}",
        profile["thresholds"]
    );
    let keep = c.out_dir.join("saved-profile.json");
    std::fs::copy(&path, &keep)?;
    let text = cli(
        c,
        "evaluate",
        &["--profile", &keep.to_string_lossy(), "--json"],
    )?;
    let from_cli = Headline::from_json(&serde_json::from_str(&text)?)?;
    ensure!(
        from_cli == shown,
        "the CLI with the saved profile gives {from_cli:?}, the page showed {shown:?}"
    );
    // The profile records the metrics it scored: the same again.
    let scored = Headline::from_json(&profile["scored"]["metrics"])?;
    ensure!(
        scored == shown,
        "the profile's scored metrics {scored:?} differ from the page {shown:?}"
    );
    Ok(())
}

// 5.
async fn reload(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    b.set_value("rule", "conditional").await?;
    b.set_value("threshold-depth-2", "0.8").await?;
    b.set_value("threshold-depth-4", "0.35").await?;
    let want = expected(
        c,
        &[
            "--rule",
            "conditional",
            "--thresholds",
            "0.5,0.8,0.5,0.35,0.5",
        ],
    )?;
    expect_headline(b, &want, "before the reload").await?;
    // Open the page again: a new document, with only what it stored.
    b.open(&c.http_url).await?;
    expect_headline(b, &want, "after the reload").await?;
    for (id, v) in [
        ("rule", "conditional"),
        ("threshold-depth-1", "0.5"),
        ("threshold-depth-2", "0.8"),
        ("threshold-depth-3", "0.5"),
        ("threshold-depth-4", "0.35"),
        ("threshold-depth-5", "0.5"),
    ] {
        let got = value(b, id).await?;
        ensure!(got == v, "{id} is {got:?} after the reload, expected {v:?}");
    }
    Ok(())
}

async fn load_cli_profile(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let path = c.out_dir.join("cli-profile.json");
    let args = [
        "--rule",
        "conditional",
        "--thresholds",
        "0.9,0.8,0.6,0.5",
        "--unverifiable",
        "penalize",
    ];
    let mut with_out = args.to_vec();
    let out = path.to_string_lossy().into_owned();
    with_out.extend(["--out", out.as_str()]);
    cli(c, "profile", &with_out)?;
    fresh_demo(b, c, &c.http_url).await?;
    b.upload_file("file-input", &path).await?;
    expect_headline(b, &expected(c, &args)?, "the CLI's profile loaded").await?;
    for (id, v) in [
        ("rule", "conditional"),
        ("policy", "penalize"),
        ("threshold-depth-1", "0.9"),
        ("threshold-depth-3", "0.6"),
        ("threshold-depth-5", "0.5"),
    ] {
        let got = value(b, id).await?;
        ensure!(
            got == v,
            "{id} is {got:?} after loading the profile, expected {v:?}"
        );
    }
    let note = b.text("file-profile").await?;
    ensure!(
        note.contains("cli-profile.json"),
        "the files panel says {note:?}"
    );
    Ok(())
}

const BAD_LABELS: &str = "label\nglass\nnot-a-node\n";
const BAD_LABELS_ERROR: &str =
    "labels-bad.csv, line 3, column label: label `not-a-node` is not an id of the taxonomy";

/// Tune, then break: the error shows, the numbers and thresholds stay.
async fn tuned_then(b: &Browser, c: &Ctx) -> anyhow::Result<Headline> {
    fresh_demo(b, c, &c.http_url).await?;
    b.set_value("threshold-depth-2", "0.77").await?;
    let want = expected(c, &["--thresholds", "0.5,0.77,0.5,0.5,0.5"])?;
    expect_headline(b, &want, "tuned").await?;
    Ok(want)
}

async fn error_kept(b: &Browser, want: &Headline) -> anyhow::Result<()> {
    b.wait_text("error", "the engine's located message", |t| {
        t.contains(BAD_LABELS_ERROR)
    })
    .await?;
    let beside = b.text("file-labels-errors").await?;
    ensure!(
        beside.contains(BAD_LABELS_ERROR),
        "the labels slot shows {beside:?}"
    );
    ensure!(
        headline(b).await? == *want,
        "the numbers changed after a broken file"
    );
    let t2 = value(b, "threshold-depth-2").await?;
    ensure!(
        t2 == "0.77",
        "threshold-depth-2 is {t2:?} after a broken file"
    );
    let in_use = b.text("in-use").await?;
    ensure!(in_use.contains("labels.csv"), "batch in use: {in_use:?}");
    Ok(())
}

// 6.
async fn broken_labels(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let want = tuned_then(b, c).await?;
    let bad = c.out_dir.join("labels-bad.csv");
    std::fs::write(&bad, BAD_LABELS)?;
    b.upload_file("file-input", &bad).await?;
    error_kept(b, &want).await?;
    screenshot(b, c, "error.png").await?;
    // Dismissing empties the error area; the numbers stay.
    b.click("dismiss-errors").await?;
    b.wait_text("error", "no error", str::is_empty).await?;
    ensure!(headline(b).await? == want, "numbers changed on dismiss");
    // A file that is nothing the page knows.
    let junk = c.out_dir.join("notes.txt");
    std::fs::write(&junk, "hello\n")?;
    b.upload_file("file-input", &junk).await?;
    b.wait_text("error", "not recognised", |t| {
        t.contains("notes.txt: not recognised")
    })
    .await?;
    ensure!(
        headline(b).await? == want,
        "numbers changed after an unknown file"
    );
    Ok(())
}

async fn dropped(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let want = tuned_then(b, c).await?;
    b.eval(
        r#"
        const [text, name] = arguments;
        const dt = new DataTransfer();
        dt.items.add(new File([text], name, { type: "text/csv" }));
        document.querySelector("main").dispatchEvent(
            new DragEvent("drop", { bubbles: true, cancelable: true, dataTransfer: dt }));
        "#,
        vec![json!(BAD_LABELS), json!("labels-bad.csv")],
    )
    .await?;
    error_kept(b, &want).await
}

async fn temperature(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    b.set_value("threshold-depth-3", "0.6").await?;
    b.set_value("temperature-depth-2", "2").await?;
    let want = expected(
        c,
        &[
            "--thresholds",
            "0.5,0.5,0.6,0.5",
            "--temperatures",
            "1,2,1,1,1",
        ],
    )?;
    expect_headline(b, &want, "temperature 2 at depth 2").await?;
    let t3 = value(b, "threshold-depth-3").await?;
    ensure!(t3 == "0.6", "threshold-depth-3 is {t3:?} after the re-read");
    b.eval(
        "document.querySelector('[data-testid=advanced]').open = true; window.scrollTo(0, 0);",
        vec![],
    )
    .await?;
    screenshot(b, c, "advanced.png").await?;
    b.eval("window.scrollTo(0, document.body.scrollHeight);", vec![])
        .await?;
    screenshot(b, c, "files.png").await
}

/// A logits file `copies` times the demo's rows (float16), to have a read slow enough to
/// cancel.
fn big_logits(demo: &Path, copies: usize, out: &Path) -> anyhow::Result<()> {
    use std::io::Write;
    let bytes = std::fs::read(demo)?;
    let header = hedgerow_core::npy::parse_header(&bytes)
        .ok()
        .flatten()
        .context("demo logits have no .npy header")?;
    ensure!(
        header.shape.len() == 2,
        "unexpected demo shape {:?}",
        header.shape
    );
    let data = &bytes[header.data_offset..];
    let rows = header.shape[0] * copies as u64;
    let mut w = std::io::BufWriter::new(std::fs::File::create(out)?);
    w.write_all(&hedgerow_core::npy::header_bytes(
        "<f2",
        &[rows, header.shape[1]],
        false,
    ))?;
    for _ in 0..copies {
        w.write_all(data)?;
    }
    w.flush()?;
    Ok(())
}

async fn cancel(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let big = c.out_dir.join("big-logits.npy");
    // Large enough (about 330 MB) that the read is still going when Cancel is clicked.
    big_logits(&c.demo_dir.join("logits.npy"), 48, &big)?;
    let want = fresh_demo(b, c, &c.http_url).await?;
    b.upload_file("file-input", &big).await?;
    b.find("cancel-read").await?;
    let status = b.text("read-progress").await?;
    ensure!(
        status.contains("big-logits.npy"),
        "progress says {status:?}"
    );
    screenshot(b, c, "reading.png").await?;
    b.click("cancel-read").await?;
    let deadline = Instant::now() + Duration::from_secs(5);
    while reading(b).await? {
        ensure!(
            Instant::now() < deadline,
            "the progress bar stays after Cancel"
        );
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
    // Nothing starts reading again, and the batch in use is the demo's.
    tokio::time::sleep(Duration::from_millis(1500)).await;
    ensure!(!reading(b).await?, "a read started again after Cancel");
    ensure!(headline(b).await? == want, "numbers changed after Cancel");
    let note = b.text("file-logits").await?;
    ensure!(note.contains("cancelled"), "the logits slot says {note:?}");
    let in_use = b.text("in-use").await?;
    ensure!(
        in_use.contains("logits.npy") && !in_use.contains("big-logits"),
        "batch in use: {in_use:?}"
    );
    // The page still works.
    b.set_value("threshold-depth-2", "0.8").await?;
    expect_headline(
        b,
        &expected(c, &["--thresholds", "0.5,0.8,0.5,0.5,0.5"])?,
        "tuning after Cancel",
    )
    .await?;
    let _ = std::fs::remove_file(&big);
    Ok(())
}

/// The 7-node tree of `tests/engine/harness.rs`, which the numpy fixtures were written for.
const TREE: &str = "id,parent,name\nb,a,B\na,,A\nc,a,C\nd,,D\ne,d,E\nf,b,F\ng,b,G\n";

fn fixture(name: &str) -> PathBuf {
    crate::root()
        .join("tests")
        .join("fixtures")
        .join("numpy")
        .join(name)
}

fn tree_file(c: &Ctx) -> anyhow::Result<PathBuf> {
    let path = c.out_dir.join("tree.csv");
    std::fs::write(&path, TREE)?;
    Ok(path)
}

async fn bundle(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let tree = tree_file(c)?;
    let npz = fixture("bundle-compressed.npz");
    // The command line takes labels and objectness from the bundle when not given.
    let files = [("--taxonomy", tree.as_path()), ("--logits", npz.as_path())];
    let want = evaluate_files(c, &files, &[])?;
    fresh_demo(b, c, &c.http_url).await?;
    // The taxonomy and the bundle as one selection, over the demo batch.
    b.upload_files("file-input", &[&tree, &npz]).await?;
    expect_headline(b, &want, "bundle-compressed.npz at the defaults").await?;
    let error = b.text("error").await?;
    ensure!(error.is_empty(), "error area: {error:?}");
    let in_use = b.text("in-use").await?;
    for part in [
        "tree.csv",
        "bundle-compressed.npz:labels",
        "bundle-compressed.npz:objectness",
    ] {
        ensure!(
            in_use.contains(part),
            "batch in use: {in_use:?}, expected {part}"
        );
    }
    let note = b.text("file-logits").await?;
    ensure!(
        note.contains(
            "bundle-compressed.npz: 12 rows × 7 nodes, float64 (a bundle of `logits`, `labels`, `objectness`)"
        ),
        "the logits slot says {note:?}"
    );
    ensure!(
        b.find_all("threshold-depth-4").await?.is_empty()
            && !b.find_all("threshold-depth-3").await?.is_empty(),
        "the tree is 3 deep: a control for depths 1 to 3 only"
    );
    b.set_value("threshold-depth-2", "0.8").await?;
    b.set_value("threshold-object", "0.3").await?;
    let want = evaluate_files(
        c,
        &files,
        &["--thresholds", "0.5,0.8,0.5", "--object-threshold", "0.3"],
    )?;
    expect_headline(b, &want, "the bundle, depth 2 at 0.8, object at 0.3").await?;
    screenshot(b, c, "bundle.png").await?;
    b.eval("window.scrollTo(0, document.body.scrollHeight);", vec![])
        .await?;
    screenshot(b, c, "bundle-files.png").await
}

/// The bundle with one member renamed (same length, so every offset stays right).
fn renamed(bytes: &[u8], from: &[u8], to: &[u8]) -> Vec<u8> {
    let mut out = bytes.to_vec();
    let mut i = 0;
    while i + from.len() <= out.len() {
        if &out[i..i + from.len()] == from {
            out[i..i + to.len()].copy_from_slice(to);
            i += from.len();
        } else {
            i += 1;
        }
    }
    out
}

async fn bundle_errors(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let want = tuned_then(b, c).await?;
    let bytes = std::fs::read(fixture("bundle.npz"))?;
    let cases = [
        (
            "scores.npz",
            renamed(&bytes, b"logits.npy", b"scores.npy"),
            "scores.npz: expected a `logits` array in the bundle, found `scores`, `labels`, `objectness`",
        ),
        (
            "cut.npz",
            bytes[..bytes.len() - 30].to_vec(),
            "cut.npz: zip bundle: expected an archive as np.savez writes it, found `no end-of-directory record (not a zip file, or truncated)`",
        ),
    ];
    for (name, data, message) in cases {
        let path = c.out_dir.join(name);
        std::fs::write(&path, data)?;
        b.upload_file("file-input", &path).await?;
        b.wait_text("file-logits-errors", message, |t| t.contains(message))
            .await?;
        let all = b.text("error").await?;
        ensure!(all.contains(message), "error area: {all:?}");
        ensure!(
            headline(b).await? == want,
            "the numbers changed after {name}"
        );
        ensure!(
            value(b, "threshold-depth-2").await? == "0.77",
            "tuning lost after {name}"
        );
        let in_use = b.text("in-use").await?;
        ensure!(
            in_use.contains("logits.npy") && !in_use.contains(".npz"),
            "batch in use: {in_use:?}"
        );
        if name == "scores.npz" {
            screenshot(b, c, "bundle-error.png").await?;
        }
        b.click("dismiss-errors").await?;
        b.wait_text("error", "no error", str::is_empty).await?;
    }
    Ok(())
}

/// What the page does when its program traps (as when its memory cannot grow past 4 GiB: see
/// the hand-run test in `big.rs`), shown with a synthetic trap event.
async fn trap(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    ensure!(
        b.find_all("fatal").await?.is_empty(),
        "a banner before any trap"
    );
    // Not a trap: an ordinary script error does not stop the page.
    b.eval(
        r#"window.dispatchEvent(new ErrorEvent("error", { error: new TypeError("x"), message: "x" }));"#,
        vec![],
    )
    .await?;
    ensure!(
        b.find_all("fatal").await?.is_empty(),
        "a banner for a script error"
    );
    b.eval(
        r#"window.dispatchEvent(new ErrorEvent("error", {
            error: new WebAssembly.RuntimeError("unreachable"),
            message: "Uncaught RuntimeError: unreachable",
        }));"#,
        vec![],
    )
    .await?;
    let text = b.text("fatal").await?;
    ensure!(
        text.starts_with("The page stopped: Uncaught RuntimeError: unreachable.")
            && text.ends_with("Reload the page to go on."),
        "the banner says {text:?}"
    );
    screenshot(b, c, "trap.png").await?;
    // The console error the synthetic event logged is this test's own.
    b.clear_logs().await
}
