//! The Python side of `cargo xtask test`: a virtual environment at
//! `<root>/.venv` with `tests/python/requirements.txt` installed, the external
//! checks (`check_cli.py`, `scipy_intervals.py`, `check_hiclass.py`, `peer.py`) run with it, and the
//! `hedgerow` package (crates/python) built into it and its pytest suite run.

use std::fs;
use std::io::ErrorKind;
use std::path::{Path, PathBuf};
use std::process::Command;

use anyhow::{bail, Context};

/// Where the requirements live, relative to the workspace root.
const REQUIREMENTS: &str = "tests/python/requirements.txt";
/// A copy of the requirements last installed into the venv.
const STAMP: &str = "hedgerow-requirements.txt";
/// The check scripts, run in this order.
const CHECKS: [&str; 4] = [
    "tests/python/check_cli.py",
    "tests/python/scipy_intervals.py",
    "tests/python/check_hiclass.py",
    "tests/python/peer.py",
];

fn venv_python(venv: &Path) -> PathBuf {
    if cfg!(windows) {
        venv.join("Scripts").join("python.exe")
    } else {
        venv.join("bin").join("python")
    }
}

/// Whether `python` starts at all (a venv whose base interpreter moved does not).
fn runs(python: &Path) -> bool {
    Command::new(python)
        .args(["-c", "import sys"])
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false)
}

/// `python3 -m venv [--clear] <venv>`, falling back to `python` where there is no `python3`.
fn create_venv(venv: &Path, clear: bool) -> anyhow::Result<()> {
    let mut args = vec!["-m", "venv"];
    if clear {
        args.push("--clear");
    }
    for base in ["python3", "python"] {
        let status = match Command::new(base).args(&args).arg(venv).status() {
            Ok(status) => status,
            Err(e) if e.kind() == ErrorKind::NotFound => continue,
            Err(e) => return Err(e).with_context(|| format!("running {base} -m venv")),
        };
        if !status.success() {
            bail!("`{base} -m venv {}` failed ({status})", venv.display());
        }
        return Ok(());
    }
    bail!("neither python3 nor python is on PATH: Python 3.11 is needed for the reference checks")
}

/// Makes sure `<root>/.venv` exists and has the current requirements installed;
/// returns the venv's python.
///
/// The requirements are (re)installed whenever `tests/python/requirements.txt`
/// differs from the copy kept in the venv after the last successful install.
pub fn ensure_venv(root: &Path) -> anyhow::Result<PathBuf> {
    let venv = root.join(".venv");
    let python = venv_python(&venv);
    let requirements = root.join(REQUIREMENTS);
    let wanted =
        fs::read(&requirements).with_context(|| format!("reading {}", requirements.display()))?;
    let stamp = venv.join(STAMP);

    if !python.exists() {
        eprintln!("pyenv: creating {}", venv.display());
        create_venv(&venv, false)?;
    } else if !runs(&python) {
        eprintln!(
            "pyenv: {} does not start; recreating {}",
            python.display(),
            venv.display()
        );
        create_venv(&venv, true)?;
    }
    if !runs(&python) {
        bail!(
            "{} does not start after creating the venv",
            python.display()
        );
    }

    let installed = fs::read(&stamp).ok();
    if installed.as_deref() != Some(wanted.as_slice()) {
        eprintln!("pyenv: installing {} into {}", REQUIREMENTS, venv.display());
        // Drop the stamp first: an interrupted install must not look finished.
        if let Err(e) = fs::remove_file(&stamp) {
            if e.kind() != ErrorKind::NotFound {
                return Err(e).with_context(|| format!("removing {}", stamp.display()));
            }
        }
        let status = Command::new(&python)
            .args([
                "-m",
                "pip",
                "install",
                "--disable-pip-version-check",
                "--quiet",
                "-r",
            ])
            .arg(&requirements)
            .status()
            .with_context(|| format!("running {} -m pip", python.display()))?;
        if !status.success() {
            bail!(
                "pip install -r {} failed ({status})",
                requirements.display()
            );
        }
        fs::write(&stamp, &wanted).with_context(|| format!("writing {}", stamp.display()))?;
    }
    Ok(python)
}

/// Runs the Python reference checks against `hedgerow_bin` on `<root>/demo-data`.
///
/// Both scripts run even if the first fails; the error names every failing one
/// (exit 1: the CLI disagrees with the reference or hiclass; exit 2: usage or
/// environment problem, e.g. no binary or no demo data).
pub fn run_checks(root: &Path, hedgerow_bin: &Path) -> anyhow::Result<()> {
    let python = ensure_venv(root)?;
    let data = root.join("demo-data");
    let mut failed = Vec::new();
    for script in CHECKS {
        eprintln!("pyenv: running {script}");
        let status = Command::new(&python)
            .arg(root.join(script))
            .arg("--hedgerow")
            .arg(hedgerow_bin)
            .arg("--data")
            .arg(&data)
            .current_dir(root)
            // No __pycache__ in the source tree.
            .env("PYTHONDONTWRITEBYTECODE", "1")
            .status()
            .with_context(|| format!("running {} {script}", python.display()))?;
        if !status.success() {
            let why = match status.code() {
                Some(1) => "mismatch with the reference".to_string(),
                Some(2) => "usage or environment problem".to_string(),
                _ => status.to_string(),
            };
            failed.push(format!("{script} ({why})"));
        }
    }
    if !failed.is_empty() {
        bail!("Python checks failed: {}", failed.join(", "));
    }
    Ok(())
}

/// The package's sources and tests, relative to the workspace root.
const PACKAGE: &str = "crates/python";
const PACKAGE_TESTS: &str = "crates/python/tests";

/// The venv's scripts first on PATH: maturin's PEP 517 hook runs `maturin` by name.
fn venv_path(python: &Path) -> anyhow::Result<std::ffi::OsString> {
    let bin = python.parent().context("the venv's python has no folder")?;
    let mut dirs = vec![bin.to_path_buf()];
    if let Some(path) = std::env::var_os("PATH") {
        dirs.extend(std::env::split_paths(&path));
    }
    std::env::join_paths(dirs).context("joining PATH")
}

/// Build the `hedgerow` package (maturin, the `python` profile: an abi3 wheel) and install it
/// into the venv, then run its pytest suite against `hedgerow_bin`. The build uses the venv's
/// pinned maturin without build isolation, so it downloads nothing beyond the crates cargo
/// fetches.
pub fn run_package(root: &Path, hedgerow_bin: &Path) -> anyhow::Result<()> {
    let python = ensure_venv(root)?;
    let path = venv_path(&python)?;
    eprintln!("pyenv: building and installing {PACKAGE} into the venv");
    let status = Command::new(&python)
        .args([
            "-m",
            "pip",
            "install",
            "--disable-pip-version-check",
            "--quiet",
            "--no-build-isolation",
            "--no-deps",
            "--force-reinstall",
        ])
        .arg(root.join(PACKAGE))
        .current_dir(root)
        .env("PATH", &path)
        .status()
        .with_context(|| format!("running {} -m pip install {PACKAGE}", python.display()))?;
    if !status.success() {
        bail!("pip install {PACKAGE} failed ({status})");
    }
    eprintln!("pyenv: running pytest {PACKAGE_TESTS}");
    let status = Command::new(&python)
        .args(["-m", "pytest", "-q", "-p", "no:cacheprovider"])
        .arg(root.join(PACKAGE_TESTS))
        .current_dir(root)
        .env("PATH", &path)
        .env("HEDGEROW_BIN", hedgerow_bin)
        .env("PYTHONDONTWRITEBYTECODE", "1")
        .status()
        .with_context(|| format!("running {} -m pytest", python.display()))?;
    if !status.success() {
        bail!("pytest {PACKAGE_TESTS} failed ({status})");
    }
    Ok(())
}
