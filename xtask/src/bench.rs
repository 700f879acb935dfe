//! `cargo xtask bench`: the engine against the numpy peer, natively and in wasm, in one run on
//! the same files; prints a table of figures and ratios and writes it to BENCHMARKS.md.
//!
//! Steps: build the release CLI; make sure `.venv` is current (`pyenv::ensure_venv`); generate
//! the large batches under `target/bench-data/` unless they are already there (`gen-batch`,
//! reused when their `batch.json` matches); check on the demo data that the numpy peer
//! (`tests/python/peer.py`) equals `hedgerow evaluate --json` (float64 and float32); then per
//! batch: `hedgerow bench` (JSON), `hedgerow evaluate --json` (to check the peer's and wasm's
//! metrics on the same batch) and `peer.py --json`; then the wasm figures in headless Chromium
//! (`bench-wasm`) when Chromium is installed.
//!
//! The machine may be shared: native figures are the best of three runs of `hedgerow bench`,
//! the wasm ones the best of three rounds in one page, numpy's per-change figure is given as
//! median and fastest of its changes (the ratio against the target uses numpy's fastest), and
//! the load average at the start and end of the run is recorded.
//!
//! The peer runs with OPENBLAS_CORETYPE and OPENBLAS_L2_SIZE removed from its environment (both
//! together; they may be set on a machine to pin a slower kernel); the kernel in use is reported
//! from threadpoolctl. Nothing else changes them. This is not part of `cargo xtask test`.

pub mod wasm;

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

use anyhow::{bail, Context};
use serde_json::Value;

use crate::batch::{self, Dtype, Spec};

const USAGE: &str = "usage: cargo xtask bench [--rows N] [--quick] [--no-wasm] [--no-deep] \
[--peer-repeat N] [--no-write]

  --rows N         rows of the large batches (default 1000000)
  --quick          100000 rows, fewer repeats (a smoke run; BENCHMARKS.md is not written)
  --no-wasm        skip the headless-Chromium figures
  --no-deep        skip the depth-12 batch
  --peer-repeat N  threshold changes the numpy peer times (default 5; median and best reported)
  --no-write       print the table only";

/// The settings every timed run uses: 0.5 at every depth, written out for twelve depths so
/// that `hedgerow bench` (which moves the listed values only) changes every depth in turn, as
/// the wasm benchmark and the peer do.
const THRESHOLDS: &str = "0.5,0.5,0.5,0.5,0.5,0.5,0.5,0.5,0.5,0.5,0.5,0.5";
const OBJECT_THRESHOLD: &str = "0.5";

/// The main large batch: 1M rows, 500 nodes, depth 6, float16 (≈ 1 GB).
pub fn default_large() -> Spec {
    Spec {
        rows: 1_000_000,
        nodes: 500,
        depth: 6,
        seed: 1,
        dtype: Dtype::F16,
        objectness: true,
    }
}

/// The deep batch: depth 12, 1000 nodes, float16 (≈ 2 GB at 1M rows).
fn deep_large(rows: u64) -> Spec {
    Spec {
        rows,
        nodes: 1000,
        depth: 12,
        seed: 2,
        dtype: Dtype::F16,
        objectness: true,
    }
}

impl Spec {
    /// Folder name under `target/bench-data/`.
    pub fn dir_name(&self) -> String {
        format!(
            "rows{}-nodes{}-depth{}-{}-seed{}",
            self.rows,
            self.nodes,
            self.depth,
            self.dtype.name(),
            self.seed
        )
    }
}

/// Generate `spec` into `dir` unless a matching batch is already there. An unoptimised xtask
/// (the `cargo xtask` alias builds debug) hands the work to a release build of itself, which
/// is ten times faster on a gigabyte.
pub fn ensure_batch(spec: &Spec, dir: &Path) -> anyhow::Result<()> {
    if batch::is_current(spec, dir) {
        eprintln!("bench: reusing {}", dir.display());
        return Ok(());
    }
    eprintln!("bench: generating {}", dir.display());
    if cfg!(debug_assertions) {
        let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
        let mut args: Vec<String> = [
            "run",
            "--quiet",
            "--release",
            "--package",
            "xtask",
            "--",
            "gen-batch",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        args.extend([
            "--rows".into(),
            spec.rows.to_string(),
            "--nodes".into(),
            spec.nodes.to_string(),
            "--depth".into(),
            spec.depth.to_string(),
            "--seed".into(),
            spec.seed.to_string(),
            "--dtype".into(),
            spec.dtype.name().into(),
            "--out".into(),
            dir.display().to_string(),
        ]);
        if spec.objectness {
            args.push("--objectness".into());
        }
        let status = Command::new(cargo)
            .current_dir(crate::root())
            .args(&args)
            .status()
            .context("running the release gen-batch")?;
        if status.success() && batch::is_current(spec, dir) {
            return Ok(());
        }
        eprintln!("bench: the release gen-batch failed ({status}); generating in this process");
    }
    let s = batch::generate(spec, dir)?;
    eprintln!("bench: wrote {} bytes in {:.1} s", s.total_bytes, s.seconds);
    Ok(())
}

struct Options {
    rows: u64,
    quick: bool,
    wasm: bool,
    deep: bool,
    peer_repeat: usize,
    write: bool,
}

fn parse(args: &[String]) -> anyhow::Result<Option<Options>> {
    let mut o = Options {
        rows: 1_000_000,
        quick: false,
        wasm: true,
        deep: true,
        peer_repeat: 5,
        write: true,
    };
    let mut rows_given = false;
    let mut it = args.iter();
    while let Some(arg) = it.next() {
        let mut value = || {
            it.next()
                .cloned()
                .with_context(|| format!("{arg} needs a value"))
        };
        match arg.as_str() {
            "--rows" => {
                o.rows = value()?.replace('_', "").parse().context("--rows")?;
                rows_given = true;
            }
            "--quick" => o.quick = true,
            "--no-wasm" => o.wasm = false,
            "--no-deep" => o.deep = false,
            "--peer-repeat" => o.peer_repeat = value()?.parse().context("--peer-repeat")?,
            "--no-write" => o.write = false,
            "-h" | "--help" => {
                println!("{USAGE}");
                return Ok(None);
            }
            other => bail!("bench: unknown argument {other:?}\n{USAGE}"),
        }
    }
    if o.quick {
        if !rows_given {
            o.rows = 100_000;
        }
        o.write = false;
    }
    Ok(Some(o))
}

/// One batch and everything measured on it.
struct Case {
    name: String,
    dir: PathBuf,
    native: Value,
    cli_metrics: Value,
    peer: Value,
    /// Peer metrics (float32) equal to the CLI's (counts exact, ratios within 1e-9)?
    peer_equal: Result<(), String>,
    /// The same for a float64 peer run (the contract's precision), where memory allows.
    peer64_equal: Option<Result<(), String>>,
    /// wasm figures (the page's build profile).
    wasm: Option<Value>,
    wasm_equal: Option<Result<(), String>>,
}

fn cargo(root: &Path, args: &[&str]) -> anyhow::Result<()> {
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let status = Command::new(cargo)
        .current_dir(root)
        .args(args)
        .status()
        .context("running cargo")?;
    if !status.success() {
        bail!("cargo {} failed ({status})", args.join(" "));
    }
    Ok(())
}

fn output_json(cmd: &mut Command, what: &str) -> anyhow::Result<Value> {
    let out = cmd.output().with_context(|| format!("running {what}"))?;
    if !out.status.success() {
        bail!(
            "{what} failed ({}):\n{}",
            out.status,
            String::from_utf8_lossy(&out.stderr)
        );
    }
    serde_json::from_slice(&out.stdout).with_context(|| format!("{what}: output is not JSON"))
}

fn input_args(dir: &Path) -> Vec<String> {
    let mut a = vec![
        "--taxonomy".to_string(),
        dir.join("taxonomy.csv").display().to_string(),
        "--logits".into(),
        dir.join("logits.npy").display().to_string(),
        "--labels".into(),
        dir.join("labels.csv").display().to_string(),
    ];
    if dir.join("objectness.npy").is_file() {
        a.push("--objectness".into());
        a.push(dir.join("objectness.npy").display().to_string());
    }
    a
}

fn settings_args() -> Vec<String> {
    vec![
        "--thresholds".into(),
        THRESHOLDS.into(),
        "--object-threshold".into(),
        OBJECT_THRESHOLD.into(),
    ]
}

/// A Python command with OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE removed (both together).
fn python_cmd(python: &Path) -> Command {
    let mut c = Command::new(python);
    c.env_remove("OPENBLAS_CORETYPE")
        .env_remove("OPENBLAS_L2_SIZE")
        .env("PYTHONDONTWRITEBYTECODE", "1");
    c
}

/// Read a file once so every timed reader finds it in the page cache.
fn warm(path: &Path) -> anyhow::Result<()> {
    use std::io::Read;
    let mut f = std::fs::File::open(path).with_context(|| format!("{}", path.display()))?;
    let mut buf = vec![0u8; 8 << 20];
    while f.read(&mut buf)? > 0 {}
    Ok(())
}

/// Counts exact, ratios within 1e-9, `null` only against `null`; over the keys of `ours`.
fn compare(ours: &Value, theirs: &Value, path: &str, diffs: &mut Vec<String>) {
    match ours {
        Value::Object(map) => {
            for (k, v) in map {
                compare(v, &theirs[k.as_str()], &format!("{path}.{k}"), diffs);
            }
        }
        Value::Array(a) => match theirs.as_array() {
            Some(b) if a.len() == b.len() => {
                for (i, (x, y)) in a.iter().zip(b).enumerate() {
                    compare(x, y, &format!("{path}[{i}]"), diffs);
                }
            }
            _ => diffs.push(format!("{path}: {ours} vs {theirs}")),
        },
        Value::Number(n) if (n.is_u64() || n.is_i64()) && (theirs.is_u64() || theirs.is_i64()) => {
            if ours != theirs {
                diffs.push(format!("{path}: {ours} vs {theirs}"));
            }
        }
        Value::Number(n) => {
            let (a, b) = (n.as_f64().unwrap_or(f64::NAN), theirs.as_f64());
            if !b.is_some_and(|b| (a - b).abs() <= 1e-9) {
                diffs.push(format!("{path}: {ours} vs {theirs}"));
            }
        }
        other => {
            if other != theirs {
                diffs.push(format!("{path}: {ours} vs {theirs}"));
            }
        }
    }
}

fn equal(ours: &Value, theirs: &Value) -> Result<(), String> {
    let mut diffs = Vec::new();
    compare(ours, theirs, "", &mut diffs);
    if diffs.is_empty() {
        return Ok(());
    }
    // How many rows decode differently: moves between (stop depth, outcome) cells and into or
    // out of abstention, each counted once.
    let count = |v: &Value| v.as_i64().unwrap_or(0);
    let mut moved = (count(&ours["abstained"]) - count(&theirs["abstained"])).abs();
    if let (Some(a), Some(b)) = (
        ours["stop_count"].as_array(),
        theirs["stop_count"].as_array(),
    ) {
        for (x, y) in a.iter().zip(b) {
            for k in ["correct", "unverifiable", "wrong"] {
                moved += (count(&x[k]) - count(&y[k])).abs();
            }
        }
    }
    let n = diffs.len();
    if moved > 0 {
        return Err(format!(
            "{} of {} rows decode differently ({n} keys differ)",
            (moved + 1) / 2,
            ours["rows"]
        ));
    }
    diffs.truncate(3);
    Err(format!("{n} keys differ: {}", diffs.join("; ")))
}

/// The peer's metric keys of a CLI/wasm metrics object (drops `rule`, `unverifiable_policy`).
fn comparable(m: &Value) -> Value {
    let mut m = m.clone();
    if let Some(o) = m.as_object_mut() {
        o.remove("rule");
        o.remove("unverifiable_policy");
    }
    m
}

pub fn run(args: &[String]) -> anyhow::Result<()> {
    let Some(opts) = parse(args)? else {
        return Ok(());
    };
    let started = Instant::now();
    let load_at_start = loadavg();
    let root = crate::root();
    let command = std::iter::once("cargo xtask bench".to_string())
        .chain(args.iter().cloned())
        .collect::<Vec<_>>()
        .join(" ");

    eprintln!("\n==> release CLI");
    cargo(&root, &["build", "--release", "--package", "hedgerow-cli"])?;
    let hedgerow = root.join("target/release/hedgerow");
    eprintln!("\n==> Python venv");
    let python = crate::pyenv::ensure_venv(&root)?;
    let peer_py = root.join("tests/python/peer.py");

    eprintln!("\n==> numpy peer equals the CLI on the demo data");
    let status = python_cmd(&python)
        .arg(&peer_py)
        .arg("--hedgerow")
        .arg(&hedgerow)
        .arg("--data")
        .arg(root.join("demo-data"))
        .status()
        .context("running peer.py --hedgerow")?;
    if !status.success() {
        bail!("the numpy peer does not equal the CLI on the demo data ({status})");
    }

    let data_root = root.join("target/bench-data");
    let mut cases: Vec<(String, PathBuf, Option<Spec>)> =
        vec![("demo data".into(), root.join("demo-data"), None)];
    let main = Spec {
        rows: opts.rows,
        ..default_large()
    };
    cases.push((
        format!("{} rows, depth {}", fmt_rows(main.rows), main.depth),
        data_root.join(main.dir_name()),
        Some(main),
    ));
    if opts.deep {
        let deep = deep_large(opts.rows);
        cases.push((
            format!("{} rows, depth {}", fmt_rows(deep.rows), deep.depth),
            data_root.join(deep.dir_name()),
            Some(deep),
        ));
    }
    for (_, dir, spec) in &cases {
        if let Some(spec) = spec {
            ensure_batch(spec, dir)?;
        }
    }
    // Write freshly generated gigabytes back now, not while something is being timed.
    let _ = Command::new("sync").status();

    let repeat_native = if opts.quick { "20" } else { "200" };
    let native_runs = if opts.quick { 1 } else { 3 };
    let mut results = Vec::new();
    for (name, dir, spec) in &cases {
        eprintln!("\n==> {name}: {}", dir.display());
        warm(&dir.join("logits.npy"))?;
        // Best of a few runs of `hedgerow bench` (each figure its own minimum): the machine
        // may be shared, and a busy moment only ever makes a run slower.
        let mut native = Value::Null;
        for _ in 0..native_runs {
            let mut cmd = Command::new(&hedgerow);
            cmd.arg("bench")
                .args(input_args(dir))
                .args(settings_args())
                .args(["--repeat", repeat_native]);
            let run = output_json(&mut cmd, "hedgerow bench")?;
            if native.is_null() {
                native = run;
                continue;
            }
            for k in [
                "load_seconds",
                "evaluate_seconds_median",
                "evaluate_seconds_min",
                "curve_seconds",
                "drag_move_seconds_median",
                "drag_build_seconds",
                "curve_drawn_sweep_seconds",
                "curve_index_seconds",
            ] {
                if f(&run[k]) < f(&native[k]) {
                    native[k] = run[k].clone();
                }
            }
        }
        native["runs"] = native_runs.into();
        eprintln!(
            "  native: load {:.2} s, evaluate {:.2} ms, curve {:.2} s",
            native["load_seconds"].as_f64().unwrap_or(f64::NAN),
            native["evaluate_seconds_median"]
                .as_f64()
                .unwrap_or(f64::NAN)
                * 1e3,
            native["curve_seconds"].as_f64().unwrap_or(f64::NAN)
        );
        let mut cmd = Command::new(&hedgerow);
        cmd.arg("evaluate")
            .arg("--json")
            .args(input_args(dir))
            .args(settings_args());
        let cli_metrics = output_json(&mut cmd, "hedgerow evaluate --json")?;
        let mut cmd = python_cmd(&python);
        cmd.arg(&peer_py)
            .arg("--data")
            .arg(dir)
            .args([
                "--thresholds",
                THRESHOLDS,
                "--object-threshold",
                OBJECT_THRESHOLD,
            ])
            .args(["--repeat", &opts.peer_repeat.to_string(), "--json"]);
        let peer = output_json(&mut cmd, "peer.py")?;
        eprintln!(
            "  numpy: ingest {:.2} s, per change {:.0} ms",
            peer["ingest_seconds"].as_f64().unwrap_or(f64::NAN),
            peer["change_seconds_median"].as_f64().unwrap_or(f64::NAN) * 1e3
        );
        let peer_equal = equal(&peer["metrics"], &comparable(&cli_metrics));
        if let Err(e) = &peer_equal {
            eprintln!("  numpy peer (float32) vs CLI: {e}");
        }
        // The contract's precision once more, where its two float64 matrices fit (8 bytes per
        // logit each): the demo data are checked in nine settings above.
        let elements = f(&native["rows"]) * f(&native["nodes"]);
        let peer64_equal = if spec.is_some() && elements * 16.0 < 10e9 {
            let mut cmd = python_cmd(&python);
            cmd.arg(&peer_py)
                .arg("--data")
                .arg(dir)
                .args([
                    "--thresholds",
                    THRESHOLDS,
                    "--object-threshold",
                    OBJECT_THRESHOLD,
                ])
                .args(["--repeat", "1", "--precision", "float64", "--json"]);
            let peer64 = output_json(&mut cmd, "peer.py --precision float64")?;
            let r = equal(&peer64["metrics"], &comparable(&cli_metrics));
            eprintln!(
                "  numpy peer (float64) vs CLI: {}",
                r.as_ref().err().map_or("equal", |e| e.as_str())
            );
            Some(r)
        } else {
            None
        };

        results.push(Case {
            name: name.clone(),
            dir: dir.clone(),
            native,
            cli_metrics,
            peer,
            peer_equal,
            peer64_equal,
            wasm: None,
            wasm_equal: None,
        });
    }

    let mut wasm_note = String::new();
    if opts.wasm && wasm::browser_available() {
        let mut jobs = Vec::new();
        let mut which = Vec::new();
        for (i, c) in results.iter().enumerate().skip(1) {
            let mut job = wasm::Job::new(c.dir.clone());
            job.repeat = repeat_native.parse().unwrap_or(50);
            // Hold at most ~1.2 GB of logits in the page; stream bigger files.
            let bytes = std::fs::metadata(c.dir.join("logits.npy"))?.len();
            if bytes > 1_200_000_000 {
                job.mode = "streamed".into();
            }
            jobs.push(job);
            which.push(i);
        }
        eprintln!("\n==> wasm in headless Chromium");
        let site = wasm::build_site(None)?;
        let figures = wasm::measure(&site, &jobs)?;
        for (&i, v) in which.iter().zip(figures) {
            let c = &mut results[i];
            c.wasm_equal = Some(equal(
                &comparable(&v["evaluate"]["metrics"]),
                &comparable(&c.cli_metrics),
            ));
            c.wasm = Some(v);
        }
    } else if opts.wasm {
        wasm_note = "Chromium or chromedriver not found: no wasm figures.".into();
        eprintln!("bench: {wasm_note}");
    }

    let machine = machine(&results);
    let table = render(&results, &opts);
    let targets = targets(&results);
    let elapsed = started.elapsed().as_secs_f64();
    let report = format!(
        "{table}\n{targets}\n{wasm_note}\nCommand: `{command}` ({elapsed:.0} s in all).\n\n{machine}\
         Load average (1 min) at the start and the end of the run: {load_at_start}, {}; other \
         work on the machine during a run shows up as noise in the figures.\n",
        loadavg()
    );
    println!("\n{report}");
    if opts.write {
        let path = root.join("BENCHMARKS.md");
        // Sections measured by hand (`## …` after the generated part) are kept as they are.
        let kept = std::fs::read_to_string(&path)
            .ok()
            .and_then(|old| old.find("\n## ").map(|at| old[at..].to_string()))
            .unwrap_or_default();
        let text = benchmarks_md(&report) + &kept;
        std::fs::write(&path, text).with_context(|| format!("writing {}", path.display()))?;
        eprintln!("bench: wrote {}", path.display());
    }
    Ok(())
}

fn fmt_rows(n: u64) -> String {
    if n >= 1_000_000 && n / 1_000_000 * 1_000_000 == n {
        format!("{}M", n / 1_000_000)
    } else if n >= 1000 && n / 1000 * 1000 == n {
        format!("{}k", n / 1000)
    } else {
        n.to_string()
    }
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap_or(f64::NAN)
}

fn cell(x: f64, digits: usize) -> String {
    if x.is_finite() {
        format!("{x:.digits$}")
    } else {
        "–".into()
    }
}

fn mb(c: &Case) -> f64 {
    f(&c.native["logits_bytes"]) / 1e6
}
fn native_rate(c: &Case) -> f64 {
    mb(c) / f(&c.native["load_seconds"])
}
fn numpy_rate(c: &Case) -> f64 {
    mb(c) / f(&c.peer["ingest_seconds"])
}
fn ours_ms(c: &Case) -> f64 {
    f(&c.native["evaluate_seconds_median"]) * 1e3
}
fn numpy_ms(c: &Case) -> f64 {
    f(&c.peer["change_seconds_median"]) * 1e3
}
/// numpy's fastest threshold change.
fn numpy_best_ms(c: &Case) -> f64 {
    c.peer["change_seconds"]
        .as_array()
        .map(|a| a.iter().map(f).fold(f64::INFINITY, f64::min))
        .unwrap_or(f64::NAN)
        * 1e3
}
/// A wasm figure; `keys` is the path into its JSON.
fn wasm_f(c: &Case, keys: &[&str]) -> f64 {
    c.wasm
        .as_ref()
        .map(|w| f(keys.iter().fold(w, |v, k| &v[*k])))
        .unwrap_or(f64::NAN)
}
fn wasm_ingest_s(c: &Case) -> f64 {
    wasm_f(c, &["ingest_ms"]) / 1e3
}
fn wasm_eval_ms(c: &Case) -> f64 {
    wasm_f(c, &["evaluate", "evaluate_ms_median"])
}
fn wasm_eval_min_ms(c: &Case) -> f64 {
    wasm_f(c, &["evaluate", "evaluate_ms_min"])
}
fn ours_min_ms(c: &Case) -> f64 {
    f(&c.native["evaluate_seconds_min"]) * 1e3
}
fn wasm_curve_s(c: &Case) -> f64 {
    wasm_f(c, &["curve", "curve_ms"]) / 1e3
}
fn wasm_suggest_s(c: &Case) -> f64 {
    wasm_f(c, &["suggest", "suggest_ms"]) / 1e3
}
fn rows_of(c: &Case) -> u64 {
    c.native["rows"].as_u64().unwrap_or(0)
}

fn check_cell(r: &Option<Result<(), String>>) -> String {
    match r {
        Some(Ok(())) => "equal".into(),
        Some(Err(e)) => e.clone(),
        None => "–".into(),
    }
}

/// The table of figures and ratios, as Markdown.
fn render(cases: &[Case], opts: &Options) -> String {
    let mut rows: Vec<(String, Vec<String>)> = Vec::new();
    let mut add = |label: &str, values: Vec<String>| rows.push((label.to_string(), values));
    let per = |g: &dyn Fn(&Case) -> String| cases.iter().map(g).collect::<Vec<_>>();

    add(
        "rows × nodes, depth",
        per(&|c| {
            format!(
                "{} × {}, {}",
                fmt_rows(rows_of(c)),
                c.native["nodes"],
                c.native["depth"]
            )
        }),
    );
    add("logits file (MB)", per(&|c| cell(mb(c), 1)));
    add(
        "**ingest**: ours native, s (MB/s)",
        per(&|c| {
            format!(
                "{} ({})",
                cell(f(&c.native["load_seconds"]), 2),
                cell(native_rate(c), 0)
            )
        }),
    );
    add(
        "ingest: numpy, s (MB/s) = np.load + prepare + softmax & descent",
        per(&|c| {
            format!(
                "{} ({}) = {} + {} + {}",
                cell(f(&c.peer["ingest_seconds"]), 2),
                cell(numpy_rate(c), 0),
                cell(f(&c.peer["np_load_seconds"]), 2),
                cell(f(&c.peer["prepare_seconds"]), 2),
                cell(f(&c.peer["softmax_descent_seconds"]), 2)
            )
        }),
    );
    add(
        "ingest rate: ours native ÷ numpy (target ≥ 1)",
        per(&|c| cell(native_rate(c) / numpy_rate(c), 1)),
    );
    add(
        "ingest: wasm, s (MB/s)",
        per(&|c| {
            format!(
                "{} ({})",
                cell(wasm_ingest_s(c), 2),
                cell(mb(c) / wasm_ingest_s(c), 0)
            )
        }),
    );
    add(
        "ingest rate: wasm ÷ numpy native (target ≥ 0.5)",
        per(&|c| cell(mb(c) / wasm_ingest_s(c) / numpy_rate(c), 1)),
    );
    add(
        "**per threshold change**: ours native, ms (median)",
        per(&|c| cell(ours_ms(c), 2)),
    );
    add(
        "per threshold change: ours native, fastest change, ms",
        per(&|c| cell(ours_min_ms(c), 2)),
    );
    add(
        "per threshold change: numpy from the logits, ms (median)",
        per(&|c| cell(numpy_ms(c), 0)),
    );
    add(
        "per threshold change: numpy fastest of its changes, ms",
        per(&|c| cell(numpy_best_ms(c), 0)),
    );
    add(
        "numpy ÷ ours, median ÷ median",
        per(&|c| cell(numpy_ms(c) / ours_ms(c), 0)),
    );
    add(
        "**numpy ÷ ours, numpy's fastest ÷ our median (target ≥ 100)**",
        per(&|c| cell(numpy_best_ms(c) / ours_ms(c), 0)),
    );
    add(
        "per threshold change, dragging one depth (what the page does): ours native, ms (median)",
        per(&|c| cell(f(&c.native["drag_move_seconds_median"]) * 1e3, 3)),
    );
    add(
        "numpy ÷ ours when dragging, numpy's fastest ÷ our median",
        per(&|c| {
            cell(
                numpy_best_ms(c) / (f(&c.native["drag_move_seconds_median"]) * 1e3),
                0,
            )
        }),
    );
    add(
        "drag index for one depth, built on focus: ours native, ms",
        per(&|c| cell(f(&c.native["drag_build_seconds"]) * 1e3, 1)),
    );
    add(
        "numpy from cached paths, stop + metrics only, ms (for scale)",
        per(&|c| cell(f(&c.peer["cached_evaluate_seconds_median"]) * 1e3, 0)),
    );
    add(
        "evaluate wasm, ms (median; target ≤ 20 at 1M)",
        per(&|c| cell(wasm_eval_ms(c), 2)),
    );
    add(
        "evaluate wasm, fastest change, ms",
        per(&|c| cell(wasm_eval_min_ms(c), 2)),
    );
    add(
        "evaluate wasm ÷ native",
        per(&|c| cell(wasm_eval_ms(c) / ours_ms(c), 1)),
    );
    add(
        "**exact curve**: native, s",
        per(&|c| cell(f(&c.native["curve_seconds"]), 3)),
    );
    add(
        "exact curve: wasm, s (target ≤ 1.5 at 1M)",
        per(&|c| cell(wasm_curve_s(c), 3)),
    );
    add(
        "suggestion for precision 0.9 (the page's panel): wasm, s (target ≤ 2 at 1M)",
        per(&|c| cell(wasm_suggest_s(c), 3)),
    );
    add(
        "curve points",
        per(&|c| c.native["curve_points"].to_string()),
    );
    add(
        "curve as the page draws it (to 1/2000): native, s (sort + sweep) and points",
        per(&|c| {
            format!(
                "{} ({})",
                cell(
                    f(&c.native["curve_index_seconds"]) + f(&c.native["curve_drawn_sweep_seconds"]),
                    3
                ),
                c.native["curve_drawn_points"]
            )
        }),
    );
    add(
        "bytes held per row (paths)",
        per(&|c| c.native["path_bytes_per_row"].to_string()),
    );
    add(
        "peak RSS, MB: ours native / numpy",
        per(&|c| {
            format!(
                "{} / {}",
                cell(f(&c.native["peak_rss_bytes"]) / 1e6, 0),
                cell(f(&c.peer["peak_rss_bytes"]) / 1e6, 0)
            )
        }),
    );
    add(
        "numpy peer float32 metrics = CLI",
        per(&|c| check_cell(&Some(c.peer_equal.clone()))),
    );
    add(
        "numpy peer float64 metrics = CLI",
        per(&|c| {
            if c.peer64_equal.is_none() && c.name == "demo data" {
                "equal (nine settings, above)".into()
            } else {
                check_cell(&c.peer64_equal)
            }
        }),
    );
    add("wasm metrics = CLI", per(&|c| check_cell(&c.wasm_equal)));

    let mut s = String::new();
    let _ = writeln!(
        s,
        "| | {} |",
        cases
            .iter()
            .map(|c| c.name.as_str())
            .collect::<Vec<_>>()
            .join(" | ")
    );
    let _ = writeln!(s, "|---|{}", "---|".repeat(cases.len()));
    for (label, values) in rows {
        let _ = writeln!(s, "| {label} | {} |", values.join(" | "));
    }
    let wasm_modes: Vec<String> = cases
        .iter()
        .filter_map(|c| {
            c.wasm.as_ref().map(|w| {
                let fetch = f(&w["fetch_ms"]) / 1e3;
                format!(
                    "{}: {}{}, engine-only feed {} s",
                    c.name,
                    w["config"]["mode"].as_str().unwrap_or("?"),
                    if fetch.is_finite() {
                        format!(" (untimed fetch {} s)", cell(fetch, 1))
                    } else {
                        " (the time includes the local transfer)".into()
                    },
                    cell(f(&w["ingest"]["feed_ms"]) / 1e3, 2),
                )
            })
        })
        .collect();
    let _ = writeln!(
        s,
        "\nSettings: cumulative rule, threshold 0.5 at every depth, object threshold \
         {OBJECT_THRESHOLD}, credit policy; each timed change moves one depth's threshold (the \
         same sequence natively, in wasm and in numpy). Native: the best of {} run(s) of \
         `hedgerow bench` (load, evaluate median and curve each the lowest of the runs), \
         evaluate the median of {} changes per run; wasm: the same, three rounds of the same \
         changes in one page (lowest median) and the curve the lowest of three; numpy: median and fastest of {} changes, each recomputing softmax, \
         descent, stop and all metrics from the logits held in memory (float32: numpy's \
         fastest; the float64 peer is about 1.6× slower).",
        if opts.quick { 1 } else { 3 },
        if opts.quick { 20 } else { 200 },
        opts.peer_repeat
    );
    let _ = writeln!(
        s,
        "\nIngest = the logits file (in the page cache) to greedy paths. Ours native: \
         `hedgerow bench`'s load (taxonomy, labels, objectness, logits in 1 MiB reads, batch). \
         numpy: `np.load`, one blocked transpose to node-major float32 (what makes its \
         per-change decode fast), grouped softmax and argmax descent (label parsing not \
         counted). wasm: the logits served by a local server, read with `fetch`, cut into \
         1 MiB pieces and fed to `LogitsReader` in headless Chromium, then the batch built; the \
         time includes the JS→wasm copies. Built with the page's `wasm-release` profile \
         (opt-level {}). Modes: {}.",
        wasm::page_opt_level(),
        if wasm_modes.is_empty() {
            "none".to_string()
        } else {
            wasm_modes.join("; ")
        }
    );
    s
}

/// The targets against the figures of the 1M-row batches.
fn targets(cases: &[Case]) -> String {
    let large: Vec<&Case> = cases.iter().filter(|c| rows_of(c) >= 1_000_000).collect();
    if large.is_empty() {
        return "Targets: not assessed (they are stated for 1,000,000 rows).\n".into();
    }
    let mut s = String::from("Targets at 1,000,000 rows:\n\n");
    let mut line =
        |what: &str, target: f64, at_most: bool, unit: &str, get: &dyn Fn(&Case) -> f64| {
            let parts: Vec<String> = large
                .iter()
                .map(|c| {
                    let v = get(c);
                    let verdict = if !v.is_finite() {
                        "not measured".to_string()
                    } else if (at_most && v <= target) || (!at_most && v >= target) {
                        "met".to_string()
                    } else if at_most {
                        format!("missed by {:.0} %", (v / target - 1.0) * 100.0)
                    } else {
                        format!("missed: {:.0} % of it", v / target * 100.0)
                    };
                    format!(
                        "depth {} {}{unit} ({verdict})",
                        c.native["depth"],
                        cell(v, if unit == "×" && v >= 10.0 { 0 } else { 2 })
                    )
                })
                .collect();
            let _ = writeln!(
                s,
                "- {what} {} {target}{unit}: {}",
                if at_most { "≤" } else { "≥" },
                parts.join(", ")
            );
        };
    line("evaluate natively (median)", 10.0, true, " ms", &ours_ms);
    line(
        "evaluate natively (fastest change)",
        10.0,
        true,
        " ms",
        &ours_min_ms,
    );
    line(
        "evaluate in wasm (median)",
        20.0,
        true,
        " ms",
        &wasm_eval_ms,
    );
    line(
        "evaluate in wasm (fastest change)",
        20.0,
        true,
        " ms",
        &wasm_eval_min_ms,
    );
    line(
        "per threshold change, numpy's fastest change ÷ our median",
        100.0,
        false,
        "×",
        &|c| numpy_best_ms(c) / ours_ms(c),
    );
    line(
        "ingest rate natively, ours ÷ numpy",
        1.0,
        false,
        "×",
        &|c| native_rate(c) / numpy_rate(c),
    );
    line(
        "ingest rate in wasm ÷ numpy native",
        0.5,
        false,
        "×",
        &|c| mb(c) / wasm_ingest_s(c) / numpy_rate(c),
    );
    line("exact curve in wasm", 1.5, true, " s", &wasm_curve_s);
    line("suggestion in wasm", 2.0, true, " s", &wasm_suggest_s);
    s
}

/// The 1-minute load average.
fn loadavg() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|s| s.split_whitespace().next().map(str::to_string))
        .unwrap_or_else(|| "?".into())
}

fn sh(cmd: &str, args: &[&str]) -> String {
    Command::new(cmd)
        .args(args)
        .output()
        .ok()
        .filter(|o| o.status.success())
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_string())
        .unwrap_or_else(|| "?".into())
}

/// The machine and tool versions.
fn machine(cases: &[Case]) -> String {
    let lscpu = sh("lscpu", &[]);
    let model = lscpu
        .lines()
        .find(|l| l.starts_with("Model name:"))
        .map(|l| l["Model name:".len()..].trim().to_string())
        .unwrap_or_else(|| "?".into());
    let cores = sh("nproc", &[]);
    let mem = std::fs::read_to_string("/proc/meminfo")
        .ok()
        .and_then(|m| {
            m.lines()
                .find(|l| l.starts_with("MemTotal:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|kb| kb.parse::<f64>().ok())
        })
        .map(|kb| format!("{:.1} GiB", kb / 1024.0 / 1024.0))
        .unwrap_or_else(|| "?".into());
    let rustc = sh("rustc", &["--version"]);
    let peer = cases.first().map(|c| &c.peer);
    let numpy = peer.map(|p| p["numpy"].to_string()).unwrap_or_default();
    let python = peer.map(|p| p["python"].to_string()).unwrap_or_default();
    let blas = peer
        .and_then(|p| p["blas"].as_array())
        .map(|a| {
            a.iter()
                .map(|b| {
                    format!(
                        "{} {} kernel {} ({} threads)",
                        b["internal_api"].as_str().unwrap_or("?"),
                        b["version"].as_str().unwrap_or("?"),
                        b["architecture"].as_str().unwrap_or("?"),
                        b["num_threads"]
                    )
                })
                .collect::<Vec<_>>()
                .join(", ")
        })
        .unwrap_or_default();
    let chromium = sh(
        &crate::e2e::Config::from_env()
            .chromium
            .display()
            .to_string(),
        &["--version"],
    );
    let date = sh("date", &["-u", "+%Y-%m-%d %H:%M UTC"]);
    format!(
        "Machine: {model}, {cores} cores, {mem} RAM; {rustc}; Python {python}, numpy {numpy} \
         ({blas}; OPENBLAS_CORETYPE and OPENBLAS_L2_SIZE unset for the peer; numpy's \
         element-wise loops used here do not call BLAS); {chromium}. Date: {date}.\n\
         The engine is single-threaded; numpy's element-wise operations are too.\n"
    )
    .replace('"', "")
}

fn benchmarks_md(report: &str) -> String {
    format!(
        "# Benchmarks\n\n\
         hedgerow against a vectorised numpy peer (`tests/python/peer.py`) on the same files in \
         one run, natively and compiled to wasm in headless Chromium. Absolute times vary by \
         machine; the ratios are the point. Regenerate with `cargo xtask bench` (a few \
         minutes; the batches, 3 GB, are generated under `target/bench-data/` by `cargo xtask \
         gen-batch` on the first run and reused). Criterion benchmarks of the engine alone: `cargo bench -p \
         hedgerow-core`. The wasm figures alone: `cargo xtask bench-wasm`.\n\n\
         The numpy peer is checked to compute the same metrics as `hedgerow evaluate --json` \
         on the demo data (nine settings, float32 and float64, counts exact, ratios within \
         1e-9) before anything is timed, and its float32 metrics are compared with the CLI's \
         on every batch below.\n\n{report}"
    )
}
