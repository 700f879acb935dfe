//! Accessibility in the real page: axe-core (from npm, pinned in `xtask/e2e-assets/`) run on
//! every page state with no serious or critical violation; every control reached with Tab, the
//! sliders moved with the arrow keys, buttons and disclosures worked with Enter and Space; each
//! chart described by a table of its numbers. And three cases of the bad-input catalogue
//! (`tests/bad-input/`) given to the page, their message beside the file.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;
use std::time::{Duration, Instant};

use anyhow::{bail, ensure, Context};
use fantoccini::actions::{InputSource, KeyAction, KeyActions};
use fantoccini::key::Key;
use serde_json::{json, Value};

use super::page::{fresh_demo, screenshot};
use super::{Browser, Ctx, Test};

pub fn tests() -> Vec<Test> {
    vec![
        Test::new(
            "a11y: axe finds no serious or critical violation in any page state",
            |b, c| Box::pin(axe_every_state(b, c)),
        ),
        Test::new(
            "a11y: Tab reaches every control, arrows move a slider, Enter and Space work buttons",
            |b, c| Box::pin(keyboard(b, c)),
        ),
        Test::new(
            "a11y: each chart is described by a table of its numbers",
            |b, c| Box::pin(chart_tables(b, c)),
        ),
        Test::new(
            "bad input: catalogue cases are shown beside their file and the batch is kept",
            |b, c| Box::pin(catalogue_cases(b, c)),
        ),
    ]
}

fn assets() -> PathBuf {
    crate::root().join("xtask").join("e2e-assets")
}

/// `axe.min.js`, installed with `npm ci` from the committed lock file when missing.
fn axe_source() -> anyhow::Result<&'static str> {
    static AXE: OnceLock<String> = OnceLock::new();
    if let Some(s) = AXE.get() {
        return Ok(s);
    }
    let dir = assets();
    let file = dir.join("node_modules/axe-core/axe.min.js");
    if !file.is_file() {
        eprintln!("e2e: installing axe-core with npm ci in {}", dir.display());
        let status = Command::new("npm")
            .current_dir(&dir)
            .args(["ci", "--no-audit", "--no-fund"])
            .status()
            .context("running npm ci (Debian's npm) for axe-core")?;
        ensure!(
            status.success(),
            "npm ci in {} failed ({status})",
            dir.display()
        );
    }
    let text = std::fs::read_to_string(&file).with_context(|| format!("{}", file.display()))?;
    Ok(AXE.get_or_init(|| text))
}

/// Run axe on the page as it is; an error lists every serious or critical violation, else a
/// line saying what passed and what lesser violations there were.
pub(super) async fn axe(b: &Browser, state: &str) -> anyhow::Result<String> {
    let loaded = b
        .eval("return typeof window.axe !== 'undefined';", vec![])
        .await?;
    if loaded != json!(true) {
        // WebDriver's script runs outside the page's content security policy.
        b.eval(axe_source()?, vec![]).await?;
    }
    let result = b
        .client()
        .execute_async(
            r#"
            const done = arguments[arguments.length - 1];
            axe.run(document, { resultTypes: ["violations"] })
              .then(r => done({
                  passes: r.passes.length,
                  violations: r.violations.map(v => ({
                      id: v.id, impact: v.impact, help: v.help,
                      nodes: v.nodes.map(n => n.target.join(" ") + " — " + (n.failureSummary || "")) })) }))
              .catch(e => done({ error: String(e) }));
            "#,
            vec![],
        )
        .await
        .context("running axe")?;
    if let Some(e) = result.get("error") {
        bail!("{state}: axe failed: {e}");
    }
    let passes = result["passes"].as_u64().unwrap_or(0);
    ensure!(
        passes > 10,
        "{state}: axe passed only {passes} rules: {result}"
    );
    let violations = result["violations"].as_array().cloned().unwrap_or_default();
    let bad: Vec<String> = violations
        .iter()
        .filter(|v| matches!(v["impact"].as_str(), Some("serious" | "critical")))
        .map(|v| {
            format!(
                "{} ({}): {}\n      {}",
                v["id"].as_str().unwrap_or("?"),
                v["impact"].as_str().unwrap_or("?"),
                v["help"].as_str().unwrap_or(""),
                v["nodes"]
                    .as_array()
                    .map(|n| n
                        .iter()
                        .take(5)
                        .filter_map(Value::as_str)
                        .collect::<Vec<_>>()
                        .join("\n      "))
                    .unwrap_or_default()
            )
        })
        .collect();
    ensure!(
        bad.is_empty(),
        "{state}: {} serious or critical axe violation(s):\n    {}",
        bad.len(),
        bad.join("\n    ")
    );
    let minor: Vec<&str> = violations.iter().filter_map(|v| v["id"].as_str()).collect();
    Ok(format!(
        "{state}: {passes} rules passed, minor or moderate: {}",
        if minor.is_empty() {
            "none".to_string()
        } else {
            minor.join(", ")
        }
    ))
}

/// The catalogue's base batch (`tests/bad-input/base/`): a 3-node tree and 4 rows.
fn base_batch() -> Vec<PathBuf> {
    let base = crate::root().join("tests").join("bad-input").join("base");
    ["t.csv", "l.npy", "y.csv"]
        .iter()
        .map(|n| base.join(n))
        .collect()
}

async fn give(b: &Browser, paths: &[PathBuf]) -> anyhow::Result<()> {
    let refs: Vec<&Path> = paths.iter().map(PathBuf::as_path).collect();
    b.upload_files("file-input", &refs).await
}

/// Give the base batch and wait until it is in use.
async fn user_batch(b: &Browser) -> anyhow::Result<()> {
    give(b, &base_batch()).await?;
    b.wait_text("in-use", "the base batch in use", |t| {
        t.contains("your files") && t.contains("t.csv")
    })
    .await?;
    Ok(())
}

async fn open_advanced(b: &Browser, open: bool) -> anyhow::Result<()> {
    b.eval(
        "document.querySelector(arguments[0]).open = arguments[1];",
        vec![json!(Browser::testid("advanced")), json!(open)],
    )
    .await?;
    Ok(())
}

async fn axe_every_state(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let mut seen = Vec::new();
    fresh_demo(b, c, &c.http_url).await?;
    seen.push(axe(b, "the demo loaded").await?);
    // The check itself can fail: a button without a name is a critical violation.
    b.eval(
        "document.body.insertAdjacentHTML('beforeend', '<button id=\"axe-probe\"></button>');",
        vec![],
    )
    .await?;
    let probe = axe(b, "a nameless button added").await;
    b.eval("document.getElementById('axe-probe').remove();", vec![])
        .await?;
    ensure!(
        probe
            .as_ref()
            .is_err_and(|e| e.to_string().contains("button-name")),
        "axe did not report a nameless button: {probe:?}"
    );
    open_advanced(b, true).await?;
    seen.push(axe(b, "the advanced panel open").await?);
    open_advanced(b, false).await?;
    b.eval(
        "document.querySelectorAll('details.chart-data').forEach(d => d.open = true);",
        vec![],
    )
    .await?;
    seen.push(axe(b, "the charts' tables open").await?);
    // A typed threshold that is refused: its message beside the field.
    b.set_value("threshold-depth-2", "2").await?;
    b.wait_text("threshold-depth-2-error", "a refused threshold", |t| {
        !t.is_empty()
    })
    .await?;
    seen.push(axe(b, "a typed threshold refused").await?);
    user_batch(b).await?;
    seen.push(axe(b, "a user batch in use, the demo's files set aside").await?);
    let cycle = crate::root().join("tests/bad-input/taxonomy-cycle/t.csv");
    give(b, &[cycle]).await?;
    b.wait_text("file-taxonomy-errors", "the refused taxonomy", |t| {
        t.contains("cycle")
    })
    .await?;
    seen.push(axe(b, "a file refused beside its slot").await?);
    screenshot(b, c, "a11y-refused.png").await?;
    // The file:// page as well (the same page, opened from disk).
    fresh_demo(b, c, &c.file_url).await?;
    seen.push(axe(b, "file://: the demo loaded").await?);
    for line in seen {
        c.figure(format!("axe: {line}"));
    }
    Ok(())
}

/// What identifies a focusable element in the messages: its test id, else its tag and text.
const KEY_OF: &str = r#"
    const keyOf = e => e.getAttribute("data-testid")
        || e.id
        || (e.tagName.toLowerCase() + ":" + (e.getAttribute("aria-label") || e.textContent || "").trim().slice(0, 40));
"#;

async fn focused(b: &Browser) -> anyhow::Result<String> {
    let js = format!("{KEY_OF} const e = document.activeElement; return e ? keyOf(e) : '';");
    let v = b.eval(&js, vec![]).await?;
    Ok(v.as_str().unwrap_or("").to_string())
}

/// Press and release a key, delivered to whatever has the focus (as a user's keyboard is).
async fn press(b: &Browser, key: char) -> anyhow::Result<()> {
    let keys = KeyActions::new("keyboard".into())
        .then(KeyAction::Down { value: key })
        .then(KeyAction::Up { value: key });
    b.client()
        .perform_actions(keys)
        .await
        .context("pressing a key")?;
    Ok(())
}

/// Focus an element by its test id (or a CSS selector) from the page's script.
async fn focus(b: &Browser, selector: &str) -> anyhow::Result<()> {
    b.eval(
        "const e = document.querySelector(arguments[0]); if (!e) throw new Error('no ' + arguments[0]); e.focus();",
        vec![json!(selector)],
    )
    .await?;
    Ok(())
}

async fn keyboard(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    open_advanced(b, true).await?;
    tokio::time::sleep(Duration::from_millis(200)).await;
    // Every control a pointer can use, shown and enabled.
    let js = format!(
        r#"{KEY_OF}
        const all = [...document.querySelectorAll(
            'button, input, select, textarea, summary, a[href], [tabindex]:not([tabindex="-1"])')];
        return all.filter(e => !e.disabled && e.getClientRects().length > 0).map(keyOf);"#
    );
    let controls: Vec<String> = b
        .eval(&js, vec![])
        .await?
        .as_array()
        .map(|a| {
            a.iter()
                .filter_map(|v| v.as_str().map(String::from))
                .collect()
        })
        .unwrap_or_default();
    ensure!(
        controls.len() > 10,
        "only {} controls found",
        controls.len()
    );
    b.eval(
        "document.activeElement && document.activeElement.blur(); window.scrollTo(0, 0);",
        vec![],
    )
    .await?;
    let mut reached = Vec::new();
    for _ in 0..controls.len() + 10 {
        press(b, Key::Tab.into()).await?;
        reached.push(focused(b).await?);
    }
    let missed: Vec<&String> = controls.iter().filter(|k| !reached.contains(k)).collect();
    ensure!(
        missed.is_empty(),
        "Tab never reached {missed:?}; the order was {reached:?}"
    );
    c.figure(format!(
        "a11y: {} controls, all reached with Tab",
        controls.len()
    ));

    // A slider moves with the arrow keys, and the field beside it follows.
    focus(b, &Browser::testid("threshold-depth-2-slider")).await?;
    press(b, Key::Right.into()).await?;
    press(b, Key::Right.into()).await?;
    wait_value(b, "threshold-depth-2", |v| v == "0.52").await?;
    press(b, Key::Left.into()).await?;
    wait_value(b, "threshold-depth-2", |v| v == "0.51").await?;

    // The advanced disclosure opens with Enter and closes with Space.
    open_advanced(b, false).await?;
    let summary = format!("{} > summary", Browser::testid("advanced"));
    focus(b, &summary).await?;
    press(b, Key::Enter.into()).await?;
    wait_open(b, true, "Enter on the advanced summary").await?;
    press(b, ' ').await?;
    wait_open(b, false, "Space on the advanced summary").await?;

    // A button: Reset with Enter puts a moved threshold back; Space does the same.
    for key in [char::from(Key::Enter), ' '] {
        b.set_value("threshold-depth-3", "0.7").await?;
        wait_value(b, "threshold-depth-3", |v| v == "0.7").await?;
        focus(b, &Browser::testid("reset-settings")).await?;
        press(b, key).await?;
        wait_value(b, "threshold-depth-3", |v| v == "0.5")
            .await
            .with_context(|| format!("{key:?} on Reset"))?;
    }
    Ok(())
}

async fn wait_value(b: &Browser, id: &str, ok: impl Fn(&str) -> bool) -> anyhow::Result<String> {
    let deadline = Instant::now() + b.timeout;
    loop {
        let v = super::page::value(b, id).await?;
        if ok(&v) {
            return Ok(v);
        }
        if Instant::now() > deadline {
            bail!("{id} stayed at {v:?}");
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
}

async fn wait_open(b: &Browser, open: bool, what: &str) -> anyhow::Result<()> {
    let deadline = Instant::now() + b.timeout;
    loop {
        let v = b
            .eval(
                "return document.querySelector(arguments[0]).open;",
                vec![json!(Browser::testid("advanced"))],
            )
            .await?;
        if v == json!(open) {
            return Ok(());
        }
        if Instant::now() > deadline {
            bail!("{what}: the panel's open is {v}, expected {open}");
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
}

async fn chart_tables(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    let v = b
        .eval(
            r#"
            return [...document.querySelectorAll("canvas")].map(canvas => {
                const ids = (canvas.getAttribute("aria-describedby") || "").split(" ").filter(Boolean);
                const tables = ids.flatMap(id => {
                    const e = document.getElementById(id);
                    return e ? [...e.querySelectorAll("table")] : [];
                });
                return {
                    chart: canvas.getAttribute("data-testid"),
                    tables: tables.map(t => ({
                        caption: t.caption ? t.caption.textContent : "",
                        head: [...t.querySelectorAll("thead th")].map(th => th.textContent),
                        rows: t.querySelectorAll("tbody tr").length,
                        first: [...(t.querySelector("tbody tr") || document.createElement("tr")).children].map(td => td.textContent),
                    })),
                };
            });
            "#,
            vec![],
        )
        .await?;
    let charts = v.as_array().cloned().unwrap_or_default();
    ensure!(charts.len() >= 2, "charts: {v}");
    for chart in &charts {
        let tables = chart["tables"].as_array().cloned().unwrap_or_default();
        ensure!(
            !tables.is_empty(),
            "{}: no table reached through aria-describedby",
            chart["chart"]
        );
        for t in &tables {
            ensure!(
                t["rows"].as_u64().unwrap_or(0) > 0
                    && !t["caption"].as_str().unwrap_or("").is_empty(),
                "{}: an empty or uncaptioned table: {t}",
                chart["chart"]
            );
        }
    }
    // The stops chart's table holds the shares the metrics show: one row per depth 0..=5.
    let stops = charts
        .iter()
        .find(|c| c["chart"].as_str().is_some_and(|s| s.contains("stops")))
        .context("no stops chart")?;
    ensure!(
        stops["tables"][0]["rows"] == json!(6),
        "the stops table: {}",
        stops["tables"][0]
    );
    Ok(())
}

/// Three cases of the catalogue, as files the user gives after a batch of their own: the
/// fragments the catalogue expects stand beside the slot, and the batch in use is kept.
async fn catalogue_cases(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    fresh_demo(b, c, &c.http_url).await?;
    user_batch(b).await?;
    let in_use = b.text("in-use").await?;
    for (case, slot) in [
        ("taxonomy-cycle", "taxonomy"),
        ("npy-nan-and-inf", "logits"),
        ("profile-threshold-out-of-range", "profile"),
    ] {
        let dir = crate::root().join("tests").join("bad-input").join(case);
        let spec: Value = serde_json::from_str(
            &std::fs::read_to_string(dir.join("case.json")).context("case.json")?,
        )?;
        let file = spec["files"][slot].as_str().context("the case's file")?;
        let expect: Vec<String> = spec["expect"]
            .as_array()
            .map(|a| {
                a.iter()
                    .filter_map(|v| v.as_str().map(String::from))
                    .collect()
            })
            .unwrap_or_default();
        ensure!(!expect.is_empty(), "{case}: nothing expected");
        give(b, &[dir.join(file)]).await?;
        let id = format!("file-{slot}-errors");
        b.wait_text(&id, case, |t| expect.iter().all(|e| t.contains(e.as_str())))
            .await?;
        let now = b.text("in-use").await?;
        ensure!(
            now == in_use,
            "{case}: the batch in use became {now:?} from {in_use:?}"
        );
        if case == "npy-nan-and-inf" {
            b.eval(
                "document.querySelector(arguments[0]).scrollIntoView({ block: 'center' });",
                vec![json!(Browser::testid("file-logits"))],
            )
            .await?;
            screenshot(b, c, "bad-input-nan.png").await?;
        }
    }
    Ok(())
}
