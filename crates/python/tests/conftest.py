"""Shared fixtures for the `hedgerow` package's tests: the demo data, the command line (the
reference every result is compared with) and profiles it wrote."""

import json
import os
import subprocess
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "demo-data"


def cli_path() -> Path:
    """The `hedgerow` binary: $HEDGEROW_BIN (set by `cargo xtask test`), else the debug build."""
    given = os.environ.get("HEDGEROW_BIN")
    path = Path(given) if given else ROOT / "target" / "debug" / "hedgerow"
    if not path.exists():
        pytest.fail(f"no hedgerow binary at {path}: run `cargo build -p hedgerow-cli` first")
    return path


def run_cli(*args, check=True) -> subprocess.CompletedProcess:
    out = subprocess.run([str(cli_path()), *map(str, args)], capture_output=True, text=True, cwd=ROOT)
    if check and out.returncode != 0:
        raise AssertionError(f"hedgerow {' '.join(map(str, args))} failed:\n{out.stderr}")
    return out


def demo_inputs():
    """The demo batch as the command line's flags."""
    return [
        "--taxonomy", DEMO / "taxonomy.csv",
        "--logits", DEMO / "logits.npy",
        "--labels", DEMO / "labels.csv",
        "--objectness", DEMO / "objectness.npy",
    ]


@pytest.fixture(scope="session")
def demo():
    """The demo batch as arrays: logits (float16, as stored), labels (ids), objectness."""
    logits = np.load(DEMO / "logits.npy")
    objectness = np.load(DEMO / "objectness.npy")
    labels = [line.split(",", 1)[1] for line in (DEMO / "labels.csv").read_text().splitlines()[1:]]
    return {"logits": logits, "objectness": objectness, "labels": np.array(labels)}


@pytest.fixture(scope="session")
def profiles(tmp_path_factory):
    """Profiles written by `hedgerow profile` on the demo data: one scored with objectness,
    one without, one with per-node thresholds and the conditional rule."""
    out = tmp_path_factory.mktemp("profiles")
    made = {}
    specs = {
        "objectness": ["--thresholds", "0.6,0.45,0.3", "--object-threshold", "0.4"],
        "plain": ["--thresholds", "0.7,0.5"],
        "nodes": ["--rule", "conditional", "--thresholds", "0.55", "--node-threshold",
                  "pet-bottle=0.95", "--node-threshold", "glass=0.2", "--unverifiable", "exclude"],
    }
    for name, flags in specs.items():
        inputs = demo_inputs()
        if name == "plain":
            inputs = inputs[:-2]
        path = out / f"{name}.json"
        run_cli("profile", *inputs, *flags, "--out", path)
        made[name] = path
    return made


def cli_metrics(*flags):
    return json.loads(run_cli("evaluate", *flags, "--json").stdout)
