"""Decoding with the `hedgerow` package beside the numpy peer's vectorised decode of the same
rows (tests/python/peer.py: grouped softmax, argmax descent, cut), timed in one run.

    python crates/python/bench/decode_vs_numpy.py [--rows 120000] [--nodes 526] [--repeat 3] [--json]

The batch is synthetic: a taxonomy of `--nodes` nodes four levels deep and float32 logits drawn
from a seeded normal. Both sides start from the same in-memory (N, M) float32 array and end
with the predicted node of every row; the numpy side's time includes its transposition to
node-major order (`prepare`), which is what makes its per-group operations contiguous. The
decisions are compared (they must agree: the peer runs in float64 here, the engine's contract).
Times are the best of `--repeat` runs.
"""

import argparse
import json
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

import hedgerow

ROOT = Path(__file__).resolve().parents[3]
sys.path.insert(0, str(ROOT / "tests" / "python"))
import peer  # noqa: E402
import reference as ref  # noqa: E402


def taxonomy_csv(nodes: int) -> str:
    """Branching 6, 5, 4, 3 (516 nodes), then more leaves under the first depth-3 nodes."""
    rows, level, next_id = [], [None], 0
    for fan in (6, 5, 4, 3):
        nxt = []
        for parent in level:
            for _ in range(fan):
                rows.append((f"n{next_id}", parent))
                nxt.append(f"n{next_id}")
                next_id += 1
        level = nxt
    depth3 = [name for name, _ in rows[6 + 30 : 6 + 30 + 120]]
    i = 0
    while len(rows) < nodes:
        rows.append((f"n{next_id}", depth3[i % len(depth3)]))
        next_id += 1
        i += 1
    rows = rows[:nodes]
    return "id,parent,name\n" + "".join(f"{c},{p or ''},{c}\n" for c, p in rows)


def best(f, repeat):
    times, out = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        out = f()
        times.append(time.perf_counter() - t)
    return min(times), out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=120_000)
    ap.add_argument("--nodes", type=int, default=526)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--json", action="store_true")
    a = ap.parse_args(argv)

    text = taxonomy_csv(a.nodes)
    rng = np.random.default_rng(11)
    logits = (rng.standard_normal((a.rows, a.nodes), dtype=np.float32) * 2.0).astype(np.float32)
    objectness = rng.random(a.rows).astype(np.float32)
    thresholds, object_threshold, rule = [0.6, 0.45, 0.35, 0.3], 0.4, "cumulative"

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "taxonomy.csv"
        path.write_text(text)
        tax = ref.load_taxonomy(path)
    groups = peer.Groups(tax)
    temps = ref.expand(None, tax.max_depth, default=1.0)
    p_root = objectness.astype(np.float64)

    def numpy_decode(dtype):
        zt = peer.prepare(logits, groups, dtype)
        p = peer.grouped_softmax(zt, groups, temps)
        path, cond = peer.descend(p, groups, a.rows, tax.max_depth)
        _, pred, predicts = peer.stop(tax, path, cond, rule, thresholds, p_root, object_threshold)
        return np.where(predicts, pred, -2)

    dec = hedgerow.Decoder(text, rule=rule, thresholds=thresholds, object_threshold=object_threshold)
    threads = os.cpu_count() or 1

    def ours(n):
        out = dec.decode(logits, objectness, threads=n)["column"]
        return np.where(out == hedgerow.ROOT, tax.m, out)

    t_ours, got = best(lambda: ours(1), a.repeat)
    t_ours_mt, got_mt = best(lambda: ours(threads), a.repeat)
    t_np32, np32 = best(lambda: numpy_decode(np.float32), a.repeat)
    t_np64, np64 = best(lambda: numpy_decode(np.float64), a.repeat)
    agree64 = float(np.mean(got == np64))
    agree32 = float(np.mean(got == np32))
    assert np.array_equal(got, got_mt)
    figures = {
        "rows": a.rows,
        "nodes": a.nodes,
        "depth": tax.max_depth,
        "hedgerow_seconds": t_ours,
        f"hedgerow_{threads}_threads_seconds": t_ours_mt,
        "numpy_float32_seconds": t_np32,
        "numpy_float64_seconds": t_np64,
        "speedup_vs_numpy_float32": t_np32 / t_ours,
        "speedup_vs_numpy_float64": t_np64 / t_ours,
        "threads": threads,
        "agreement_with_numpy_float64": agree64,
        "agreement_with_numpy_float32": agree32,
        "numpy": np.__version__,
        "python": sys.version.split()[0],
    }
    if a.json:
        print(json.dumps(figures, indent=2))
    else:
        for k, v in figures.items():
            print(f"{k:34} {v:.4f}" if isinstance(v, float) else f"{k:34} {v}")
    return 0 if agree64 == 1.0 else 1


if __name__ == "__main__":
    sys.exit(main())
