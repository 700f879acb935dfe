//! `cargo xtask fuzz [TARGET…] [--seconds N]`: the coverage-guided fuzz targets in `fuzz/`,
//! built with libFuzzer's instrumentation and run on a working copy of the committed corpus.
//!
//! The build passes the flags `cargo fuzz build -s none` passes (sanitizer coverage, `--cfg
//! fuzzing`, debug assertions): all of them are stable, so neither nightly nor cargo-fuzz is
//! needed, and `cargo xtask test` runs every target for a few seconds ("fuzz smoke"). The
//! working corpus is `fuzz/corpus/<target>/` (kept between runs, not committed); a crash
//! leaves its input in `fuzz/artifacts/` and fails the task.

use std::path::{Path, PathBuf};
use std::process::Command;

use anyhow::{bail, Context};

use crate::root;

/// Every target (a binary of the fuzz crate and a folder of `tests/fuzz-corpus/`).
pub const TARGETS: [&str; 6] = [
    "npy_logits",
    "npz",
    "taxonomy",
    "labels",
    "objectness",
    "profile",
];

/// Seconds per target in `cargo xtask test`.
pub const SMOKE_SECONDS: u64 = 5;

/// What cargo-fuzz 0.13 passes to rustc for `-s none` on Linux (read off `cargo fuzz build
/// -v`), minus `-Ccodegen-units=1`, which only slows the build.
const RUSTFLAGS: &str = "-Cpasses=sancov-module \
    -Cllvm-args=-sanitizer-coverage-level=4 \
    -Cllvm-args=-sanitizer-coverage-inline-8bit-counters \
    -Cllvm-args=-sanitizer-coverage-pc-table \
    -Cllvm-args=-sanitizer-coverage-trace-compares \
    --cfg fuzzing \
    -Cllvm-args=-simplifycfg-branch-fold-threshold=0 \
    -Cllvm-args=-sanitizer-coverage-stack-depth \
    -Cdebug-assertions";

pub fn run(args: &[String]) -> anyhow::Result<()> {
    let mut seconds = 60;
    let mut targets = Vec::new();
    let mut it = args.iter();
    while let Some(a) = it.next() {
        match a.as_str() {
            "--seconds" => {
                seconds = it
                    .next()
                    .and_then(|v| v.parse().ok())
                    .context("--seconds: expected a whole number")?
            }
            t if TARGETS.contains(&t) => targets.push(t.to_string()),
            other => bail!(
                "unknown target or flag `{other}` (targets: {})",
                TARGETS.join(", ")
            ),
        }
    }
    if targets.is_empty() {
        targets = TARGETS.iter().map(|t| t.to_string()).collect();
    }
    let root = root();
    let bin = build(&root)?;
    for t in &targets {
        run_target(&root, &bin, t, seconds)?;
    }
    Ok(())
}

/// Build every target and run each for [`SMOKE_SECONDS`].
pub fn smoke(root: &Path) -> anyhow::Result<()> {
    let bin = build(root)?;
    for t in TARGETS {
        run_target(root, &bin, t, SMOKE_SECONDS)?;
    }
    Ok(())
}

fn host_triple() -> anyhow::Result<String> {
    let out = Command::new("rustc")
        .arg("-vV")
        .output()
        .context("cannot run rustc")?;
    String::from_utf8_lossy(&out.stdout)
        .lines()
        .find_map(|l| l.strip_prefix("host: ").map(str::to_string))
        .context("rustc -vV names no host")
}

/// Build the fuzz crate; returns the folder holding the target binaries. The target triple is
/// given so that RUSTFLAGS reach only the target code, not build scripts or proc macros.
fn build(root: &Path) -> anyhow::Result<PathBuf> {
    let triple = host_triple()?;
    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".into());
    let target_dir = root.join("fuzz/target");
    let status = Command::new(cargo)
        .current_dir(root.join("fuzz"))
        .args([
            "build",
            "--release",
            "--bins",
            "--locked",
            "--target",
            &triple,
        ])
        .env("RUSTFLAGS", RUSTFLAGS)
        .env("CARGO_TARGET_DIR", &target_dir)
        .status()
        .context("cannot run cargo")?;
    if !status.success() {
        bail!("building the fuzz targets failed ({status})");
    }
    Ok(target_dir.join(triple).join("release"))
}

/// Run one target for `seconds` on `fuzz/corpus/<target>` (seeded from the committed corpus).
fn run_target(root: &Path, bin: &Path, target: &str, seconds: u64) -> anyhow::Result<()> {
    let work = root.join("fuzz/corpus").join(target);
    std::fs::create_dir_all(&work)?;
    let seeds = root.join("tests/fuzz-corpus").join(target);
    for entry in std::fs::read_dir(&seeds).with_context(|| seeds.display().to_string())? {
        let path = entry?.path();
        if let Some(name) = path.file_name() {
            std::fs::copy(&path, work.join(name))?;
        }
    }
    let artifacts = root.join("fuzz/artifacts");
    std::fs::create_dir_all(&artifacts)?;
    let out = Command::new(bin.join(target))
        .arg(&work)
        .arg(format!("-max_total_time={seconds}"))
        .arg("-rss_limit_mb=1024")
        .arg("-timeout=10")
        .arg("-print_final_stats=1")
        .arg(format!(
            "-artifact_prefix={}/{target}-",
            artifacts.display()
        ))
        .output()
        .with_context(|| format!("cannot run the {target} fuzz target"))?;
    let log = String::from_utf8_lossy(&out.stderr);
    let runs = log
        .lines()
        .find_map(|l| l.strip_prefix("stat::number_of_executed_units:"))
        .map(|v| v.trim().to_string())
        .unwrap_or_else(|| "?".into());
    if !out.status.success() {
        let tail: Vec<&str> = log.lines().rev().take(40).collect();
        for line in tail.iter().rev() {
            eprintln!("{line}");
        }
        bail!(
            "fuzz target {target} failed after {runs} runs (input in {})",
            artifacts.display()
        );
    }
    eprintln!("fuzz {target}: {runs} runs in {seconds} s, no crash");
    Ok(())
}
