"""The Dask example runs: ≥ 8 shards over a LocalCluster of two worker processes, their
decisions and added tallies equal to one process's (the example asserts it)."""

import os
import subprocess
import sys
from pathlib import Path

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "dask_shards.py"


def test_shards_over_two_worker_processes_equal_one_process(tmp_path, profiles):
    out = subprocess.run(
        [sys.executable, str(EXAMPLE), "--profile", str(profiles["objectness"]),
         "--shards", "9", "--workdir", str(tmp_path / "shards")],
        capture_output=True, text=True, timeout=300,
        env={**os.environ, "PYTHONDONTWRITEBYTECODE": "1"},
    )
    assert out.returncode == 0, out.stderr
    assert "9 shards on 2 workers: 20000 rows decoded as in one process" in out.stdout, out.stdout
