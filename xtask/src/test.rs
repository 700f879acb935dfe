//! `cargo xtask test`: every test the project has, provisioning what they need first
//! (the wasm target, a Python virtual environment, the browser when the page tests run).
//!
//! Steps: cargo tests of the host crates (which also replay the fuzz corpus); the engine built
//! for wasm32; a short coverage-guided run of every fuzz target ("fuzz smoke", a few seconds
//! each); the Python reference checks against the CLI on the demo data; the `hedgerow` Python
//! package built into the venv and its pytest suite (against the CLI, and on Dask); the page's
//! end-to-end tests in headless Chromium. `--no-fuzz`, `--no-python` and `--no-browser` skip those steps
//! for a quick local run.

use std::path::Path;
use std::process::Command;
use std::time::Instant;

use anyhow::{bail, Context};

use crate::{e2e, fuzz, pyenv, root};

pub fn run(args: &[String]) -> anyhow::Result<()> {
    let root = root();
    let skip = |flag: &str| args.iter().any(|a| a == flag);
    let started = Instant::now();
    let mut steps: Vec<(String, f64)> = Vec::new();
    let mut step = |name: &str, f: &mut dyn FnMut() -> anyhow::Result<()>| -> anyhow::Result<()> {
        eprintln!("\n==> {name}");
        let t = Instant::now();
        f().with_context(|| format!("step failed: {name}"))?;
        steps.push((name.to_string(), t.elapsed().as_secs_f64()));
        Ok(())
    };

    step("wasm32 target", &mut || ensure_wasm_target())?;
    step("cargo test (core, cli, board, xtask)", &mut || {
        cargo(&root, &["test"])
    })?;
    step("core builds for wasm32-unknown-unknown", &mut || {
        cargo(
            &root,
            &[
                "build",
                "-p",
                "hedgerow-core",
                "--target",
                "wasm32-unknown-unknown",
            ],
        )
    })?;
    if !skip("--no-fuzz") {
        step(
            "fuzz smoke: every libFuzzer target for a few seconds",
            &mut || fuzz::smoke(&root),
        )?;
    }
    if !skip("--no-python") {
        step("CLI build for the external checks", &mut || {
            cargo(&root, &["build", "-p", "hedgerow-cli"])
        })?;
        let bin = root.join("target/debug/hedgerow");
        step(
            "external checks: numpy reference and hiclass (Python venv)",
            &mut || pyenv::run_checks(&root, &bin),
        )?;
        step(
            "Python package: build crates/python into the venv, pytest (CLI equality, Dask)",
            &mut || pyenv::run_package(&root, &bin),
        )?;
    }
    if !skip("--no-browser") {
        step("page end-to-end tests in headless Chromium", &mut || {
            e2e::run(&[])
        })?;
    }
    eprintln!(
        "\nall test steps passed in {:.0} s:",
        started.elapsed().as_secs_f64()
    );
    for (name, secs) in &steps {
        eprintln!("  {secs:>6.1} s  {name}");
    }
    Ok(())
}

fn cargo(root: &Path, args: &[&str]) -> anyhow::Result<()> {
    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".into());
    let status = Command::new(cargo)
        .current_dir(root)
        .args(args)
        .status()
        .context("cannot run cargo")?;
    if !status.success() {
        bail!("cargo {} failed ({status})", args.join(" "));
    }
    Ok(())
}

/// Install the wasm target through rustup when it is missing.
pub fn ensure_wasm_target() -> anyhow::Result<()> {
    let out = Command::new("rustup")
        .args(["target", "list", "--installed"])
        .output()
        .context("cannot run rustup")?;
    if String::from_utf8_lossy(&out.stdout)
        .lines()
        .any(|l| l.trim() == "wasm32-unknown-unknown")
    {
        return Ok(());
    }
    let status = Command::new("rustup")
        .args(["target", "add", "wasm32-unknown-unknown"])
        .status()
        .context("cannot run rustup")?;
    if !status.success() {
        bail!("rustup target add wasm32-unknown-unknown failed");
    }
    Ok(())
}
