"""The numpy peer: hedgerow's decode and metrics as a careful engineer writes them in a notebook.

What it is for: `cargo xtask bench` times it against the engine on the same files, in the same
run, and checks on the demo data that it computes exactly what `hedgerow evaluate --json` prints
(an external check of the engine, like reference.py, but written for speed).

How it works (all vectorised over rows; no Python loop over rows anywhere):

  load     `np.load` of the (N, M) float16/32/64 logits.
  prepare  one pass that transposes the matrix to node-major (M, N), in blocks of rows so the
           transposition stays in cache, converting to the compute precision and ordering the
           columns so that every sibling group is a contiguous block of rows.  This is what makes
           numpy fast here: every per-group operation then runs over long contiguous vectors
           instead of millions of short rows.
  decode   the notebook way, from the logits, every time a threshold changes:
           [1] grouped softmax: for each sibling group, m = max z, e = exp(z - m), p = e / sum e
               (the sum runs over the group's rows in column order, as the contract says);
           [2] greedy descent: at each depth, the rows sitting at each parent (found by one
               stable argsort per depth) take the argmax of that parent's group (first max =
               lowest column);
           [3] the conditionals on the path rounded to float32, P(root) = objectness or 1,
               cumulative products in float64, the per-depth thresholds and the rule, the stop;
           [4] every metric of `hedgerow evaluate --json`, from the prediction and the label
               (lowest common ancestors through the ancestor table).

Precision: `--precision float32` (the default for timing) computes [1] in float32, numpy's
fastest path and what a notebook does with float16 logits; `--precision float64` follows the
contract (reference.py's docstring) to the letter.  Both are checked against the CLI on the demo
data; a float32 softmax can differ from the contract's float64 one in the last float32 bit, which
could flip a decision only for a value within an ulp of a threshold.

Usage:
    peer.py --data DIR [--thresholds 0.5 --object-threshold 0.5 --rule cumulative
            --repeat 3 --precision float32] --json          time it, print figures and metrics
    peer.py --hedgerow BIN --data demo-data [--precision P]  check it equals the CLI
            (exit 0: equal; 1: a mismatch; 2: usage or environment problem)
"""

from __future__ import annotations

import argparse
import json
import math
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
import reference as ref  # noqa: E402  (taxonomy and label parsing, shared with the checks)

OUTCOMES = ("correct", "unverifiable", "wrong")
CORRECT, UNVERIFIABLE, WRONG, ABSTAINED, REJECTED = range(5)


# --------------------------------------------------------------------------
# Structure


class Groups:
    """Sibling groups as contiguous blocks of rows of the node-major matrix."""

    def __init__(self, tax: ref.Taxonomy):
        self.tax = tax
        m, root = tax.m, tax.root
        # Groups in breadth-first order (a parent's group before its children's).
        order, queue = [], [root]
        while queue:
            p = queue.pop(0)
            cols = tax.children.get(p)
            if cols is None:
                continue
            order.append(p)
            queue.extend(int(c) for c in cols)
        self.parent = np.array(order, dtype=np.int64)  # group -> parent node (root = M)
        sizes = [len(tax.children[p]) for p in order]
        self.start = np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(np.int64)
        self.end = self.start + np.array(sizes, dtype=np.int64)
        self.perm = np.concatenate([tax.children[p] for p in order]).astype(np.int64)
        self.identity = bool(np.array_equal(self.perm, np.arange(m)))
        self.depth = np.array([tax.depth[p] + 1 for p in order], dtype=np.int64)  # children's depth
        # node (root included) -> the group of its children, -1 for a leaf
        self.child_group = np.full(m + 1, -1, dtype=np.int64)
        self.child_group[self.parent] = np.arange(len(order))
        self.ig = ref.information_gain(tax)  # [M+1]


# --------------------------------------------------------------------------
# Load and prepare


def prepare(logits: np.ndarray, groups: Groups, dtype, block: int = 8192) -> np.ndarray:
    """(N, M) file order -> (M, N) in group order and compute precision, block by block."""
    n, m = logits.shape
    zt = np.empty((m, n), dtype=dtype)
    for r0 in range(0, n, block):
        part = logits[r0 : r0 + block]
        if not groups.identity:
            part = part[:, groups.perm]
        zt[:, r0 : r0 + block] = part.T
    return zt


# --------------------------------------------------------------------------
# Decode: softmax, descent


def grouped_softmax(zt: np.ndarray, groups: Groups, temps: np.ndarray, p: np.ndarray | None = None) -> np.ndarray:
    """[1] p(node | parent) for every node and row, node-major in group order (into `p` if given:
    reusing one buffer spares the allocation and its page faults on every threshold change)."""
    if p is None:
        p = np.empty_like(zt)
    for g in range(len(groups.start)):
        s, e = groups.start[g], groups.end[g]
        if e - s == 1:
            p[s] = 1.0
            continue
        z = zt[s:e]
        t = temps[groups.depth[g] - 1]
        if t != 1.0:
            z = z / zt.dtype.type(t)
        out = p[s:e]
        np.subtract(z, z.max(axis=0), out=out)
        np.exp(out, out=out)
        total = out[0].copy()
        for j in range(1, e - s):  # left to right in column order
            total += out[j]
        out /= total
    return p


def descend(p: np.ndarray, groups: Groups, n: int, big_d: int):
    """[2] greedy path: per row the leaf, the path's columns and its conditionals (float64)."""
    path = np.full((n, big_d), -1, dtype=np.int64)
    cond = np.full((n, big_d), np.nan)
    at = np.zeros(n, dtype=np.int64)  # group of the children of the node each row sits at
    live = np.arange(n)
    for d in range(big_d):
        if live.size == 0:
            break
        g_of = at[live]
        order = np.argsort(g_of, kind="stable")
        rows_sorted, g_sorted = live[order], g_of[order]
        cuts = np.flatnonzero(np.diff(g_sorted)) + 1
        bounds = np.concatenate([[0], cuts, [len(g_sorted)]])
        for a, b in zip(bounds[:-1], bounds[1:]):
            g = g_sorted[a]
            rows = rows_sorted[a:b]
            s, e = groups.start[g], groups.end[g]
            sub = p[s:e][:, rows]  # (k, rows)
            k = sub.argmax(axis=0)  # first max = lowest column
            node = groups.perm[s + k]
            path[rows, d] = node
            cond[rows, d] = sub[k, np.arange(len(rows))]
            at[rows] = groups.child_group[node]
        live = live[at[live] >= 0]
    # [3] the engine stores the conditionals as float32
    cond = cond.astype(np.float32).astype(np.float64)
    return path, cond


# --------------------------------------------------------------------------
# Stop and metrics


def stop(tax, path, cond, rule, thresholds, p_root, object_threshold):
    """[3] steps taken (s), prediction (root = M) and whether the row predicts."""
    n, big_d = cond.shape
    t = ref.expand(thresholds, big_d)
    if rule == "cumulative":
        # left-to-right products, like the engine: P_d = P_{d-1} * c_d
        score = np.empty_like(cond)
        acc = p_root.copy()
        for d in range(big_d):
            acc = acc * cond[:, d]
            score[:, d] = acc
    else:
        score = cond
    on_path = path >= 0
    with np.errstate(invalid="ignore"):
        passes = (score >= t[None, :]) & on_path
    steps = np.cumprod(passes, axis=1).sum(axis=1)
    pred = np.where(steps > 0, path[np.arange(n), np.maximum(steps - 1, 0)], tax.root)
    predicts = p_root >= object_threshold if object_threshold is not None else np.ones(n, bool)
    return steps, pred, predicts


def _ratio(num, den):
    return None if den == 0 else float(num) / float(den)


def metrics(groups: Groups, pred, predicts, labels, policy="credit") -> dict:
    """[4] every metric of `hedgerow evaluate --json`."""
    tax = groups.tax
    root, big_d = tax.root, tax.max_depth
    n = len(labels)
    bg = labels == ref.BACKGROUND
    g = np.where(bg, root, labels)
    a_p, a_g = tax.anc_at[pred], tax.anc_at[g]
    lca = ((a_p == a_g) & (a_p != -2)).sum(axis=1) - 1
    dp, dg = tax.depth[pred], tax.depth[g]
    out = np.full(n, WRONG, dtype=np.int64)
    out[lca == dp] = CORRECT
    out[(lca == dg) & (dp > dg)] = UNVERIFIABLE
    out[bg] = WRONG
    out[~predicts] = np.where(bg[~predicts], REJECTED, ABSTAINED)

    npred = int(predicts.sum())
    counts = np.bincount(dp[predicts] * 3 + out[predicts], minlength=(big_d + 1) * 3).reshape(-1, 3)
    correct, unver, wrong = (int(x) for x in counts.sum(axis=0))
    if policy == "credit":
        precision = _ratio(correct + unver, npred)
    elif policy == "penalize":
        precision = _ratio(correct, npred)
    else:
        precision = _ratio(correct, correct + wrong)
    ig = groups.ig[pred]
    lab = ~bg
    pl = predicts & lab
    inter = int(lca[pl].sum())
    size_p = int(dp[pl].sum())
    size_t = int(dg[lab].sum())
    hp, hr = _ratio(inter, size_p), _ratio(inter, size_t)
    hf = None if hp is None or hr is None else (2 * hp * hr / (hp + hr) if hp + hr > 0 else 0.0)
    wl = (out == WRONG) & lab
    severity = _ratio(int((dp[wl] + dg[wl] - 2 * lca[wl]).sum()), int(wl.sum()))
    return {
        "rows": n,
        "predictions": npred,
        "abstained": n - npred,
        "correct": correct,
        "unverifiable": unver,
        "wrong": wrong,
        "labelled_rows": int(lab.sum()),
        "background_rows": int(bg.sum()),
        "false_alarms": int((bg & predicts).sum()),
        "precision": precision,
        "specificity": _ratio(ig[predicts].sum(), npred),
        "reward": _ratio(ig[out == CORRECT].sum(), npred),
        "stop_share": [_ratio(int(c.sum()), npred) for c in counts],
        "stop_outcome": [{o: _ratio(int(c[i]), npred) for i, o in enumerate(OUTCOMES)} for c in counts],
        "stop_count": [{o: int(c[i]) for i, o in enumerate(OUTCOMES)} for c in counts],
        "hierarchical_precision": hp,
        "hierarchical_recall": hr,
        "hierarchical_f1": hf,
        "mistake_severity": severity,
    }


# --------------------------------------------------------------------------
# The whole thing


class Peer:
    def __init__(self, data: Path, precision: str = "float32", temperatures=None, use_objectness=True):
        self.dtype = np.float32 if precision == "float32" else np.float64
        self.timings = {}
        t = time.perf_counter()
        self.tax = ref.load_taxonomy(data / "taxonomy.csv")
        self.groups = Groups(self.tax)
        self.labels = ref.load_labels(data / "labels.csv", self.tax)
        obj = data / "objectness.npy"
        self.objectness = ref.load_objectness(obj) if use_objectness and obj.exists() else None
        self.timings["inputs_seconds"] = time.perf_counter() - t
        self.temps = ref.expand(temperatures, self.tax.max_depth, default=1.0)

        t = time.perf_counter()
        logits = np.load(data / "logits.npy", allow_pickle=False)
        self.timings["np_load_seconds"] = time.perf_counter() - t
        self.logits_bytes = (data / "logits.npy").stat().st_size
        if logits.ndim != 2 or logits.shape[1] != self.tax.m or logits.shape[0] != len(self.labels):
            raise ValueError(f"logits shape {logits.shape} does not fit the taxonomy and labels")
        self.n = logits.shape[0]
        t = time.perf_counter()
        self.zt = prepare(logits, self.groups, self.dtype)
        del logits
        self.timings["prepare_seconds"] = time.perf_counter() - t
        t = time.perf_counter()
        self.path, self.cond = self.softmax_descent()
        self.timings["softmax_descent_seconds"] = time.perf_counter() - t
        self.timings["ingest_seconds"] = (
            self.timings["np_load_seconds"] + self.timings["prepare_seconds"] + self.timings["softmax_descent_seconds"]
        )

    def softmax_descent(self):
        self.p = grouped_softmax(self.zt, self.groups, self.temps, getattr(self, "p", None))
        return descend(self.p, self.groups, self.n, self.tax.max_depth)

    def p_root(self):
        return self.objectness if self.objectness is not None else np.ones(self.n)

    def evaluate_cached(self, rule, thresholds, object_threshold, policy="credit") -> dict:
        """Stop + metrics from the paths of the last decode (no softmax)."""
        obj_t = object_threshold if self.objectness is not None else None
        _, pred, predicts = stop(self.tax, self.path, self.cond, rule, thresholds, self.p_root(), obj_t)
        return metrics(self.groups, pred, predicts, self.labels, policy)

    def evaluate(self, rule, thresholds, object_threshold, policy="credit") -> dict:
        """The notebook way: everything again from the logits."""
        self.path, self.cond = self.softmax_descent()
        return self.evaluate_cached(rule, thresholds, object_threshold, policy)


def change_sequence(base: list[float], big_d: int, repeat: int):
    """Threshold lists, each moving one depth's value as a slider drag does (the CLI's sequence)."""
    t = list(ref.expand(base, big_d))
    for i in range(repeat):
        d = i % max(big_d, 1)
        t[d] = 0.3 + 0.6 * ((i * 7919) % 101) / 100.0
        yield list(t)


def blas_info() -> list[dict]:
    try:
        from threadpoolctl import threadpool_info
    except ImportError:
        return []
    keys = ("user_api", "internal_api", "architecture", "num_threads", "version")
    return [{k: i.get(k) for k in keys} for i in threadpool_info()]


def bench(a) -> dict:
    peer = Peer(Path(a.data), a.precision, ref.parse_list(a.temperatures), use_objectness=True)
    base = ref.parse_list(a.thresholds)
    obj_t = a.object_threshold
    changes, cached = [], []
    last = None
    for t in change_sequence(base, peer.tax.max_depth, a.repeat):
        s = time.perf_counter()
        last = peer.evaluate(a.rule, t, obj_t, a.unverifiable)
        changes.append(time.perf_counter() - s)
    for t in change_sequence(base, peer.tax.max_depth, max(a.repeat, 5)):
        s = time.perf_counter()
        peer.evaluate_cached(a.rule, t, obj_t, a.unverifiable)
        cached.append(time.perf_counter() - s)
    at_base = peer.evaluate_cached(a.rule, base, obj_t, a.unverifiable)
    return {
        "rows": peer.n,
        "nodes": peer.tax.m,
        "depth": peer.tax.max_depth,
        "groups": len(peer.groups.start),
        "logits_bytes": peer.logits_bytes,
        "precision": a.precision,
        **peer.timings,
        "change_seconds_median": float(np.median(changes)),
        "change_seconds": changes,
        "cached_evaluate_seconds_median": float(np.median(cached)),
        "peak_rss_bytes": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024,
        "numpy": np.__version__,
        "python": sys.version.split()[0],
        "blas": blas_info(),
        "env": {k: os.environ.get(k) for k in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")},
        "last_change_correct": last["correct"] if last else None,
        "metrics": at_base,
    }


# --------------------------------------------------------------------------
# Equality with the CLI


SETTINGS = [
    # (flags for hedgerow, rule, thresholds, object threshold or None, policy, temperatures)
    ("cumulative", "0.9,0.8,0.6,0.5", 0.5, "credit", None),
    ("cumulative", "0.5", None, "credit", None),
    ("conditional", "0.95,0.8,0.6", 0.3, "penalize", None),
    ("conditional", "0.7", None, "exclude", None),
    ("cumulative", "0.99,0.9,0.75,0.6,0.5", 0.7, "exclude", None),
    ("cumulative", "0.3", 0.05, "credit", None),
    ("cumulative", "1", 1.0, "credit", None),
    ("conditional", "0", 0.0, "penalize", None),
    ("cumulative", "0.8,0.6", 0.5, "credit", "1.5,1,0.7"),
]


def close(a, b, path="") -> list[str]:
    """Counts exact, ratios within 1e-9, None == None."""
    if isinstance(a, dict):
        return [m for k in a for m in close(a[k], b.get(k) if isinstance(b, dict) else None, f"{path}.{k}")]
    if isinstance(a, list):
        if not isinstance(b, list) or len(a) != len(b):
            return [f"{path}: peer {a} vs cli {b}"]
        return [m for i, (x, y) in enumerate(zip(a, b)) for m in close(x, y, f"{path}[{i}]")]
    if a is None or b is None:
        return [] if a is None and b is None else [f"{path}: peer {a} vs cli {b}"]
    if isinstance(a, int) and not isinstance(a, bool):
        return [] if a == b else [f"{path}: peer {a} vs cli {b}"]
    return [] if abs(float(a) - float(b)) <= 1e-9 else [f"{path}: peer {a!r} vs cli {b!r}"]


def check(a) -> int:
    data = Path(a.data)
    hedgerow = Path(a.hedgerow)
    if not hedgerow.exists():
        print(f"peer.py: no CLI at {hedgerow}", file=sys.stderr)
        return 2
    precisions = [a.precision] if a.precision_given else ["float64", "float32"]
    has_obj = (data / "objectness.npy").exists()
    failures = 0
    checked = 0
    for precision in precisions:
        peers = {}
        for rule, th, obj_t, policy, temps in SETTINGS:
            use_obj = obj_t is not None and has_obj
            key = (temps, use_obj)
            if key not in peers:
                peers[key] = Peer(data, precision, ref.parse_list(temps), use_objectness=use_obj)
            peer = peers[key]
            mine = peer.evaluate(rule, ref.parse_list(th), obj_t, policy)
            cmd = [str(hedgerow), "evaluate", "--json", "--taxonomy", str(data / "taxonomy.csv"),
                   "--logits", str(data / "logits.npy"), "--labels", str(data / "labels.csv"),
                   "--rule", rule, "--thresholds", th, "--unverifiable", policy]
            if use_obj:
                cmd += ["--objectness", str(data / "objectness.npy"), "--object-threshold", repr(float(obj_t))]
            if temps:
                cmd += ["--temperatures", temps]
            run = subprocess.run(cmd, capture_output=True, text=True)
            if run.returncode != 0:
                print(f"peer.py: {' '.join(cmd)} failed:\n{run.stderr}", file=sys.stderr)
                return 2
            theirs = json.loads(run.stdout)
            diffs = close(mine, theirs)
            checked += 1
            label = f"{precision} {rule} t={th} obj={obj_t if use_obj else '-'} {policy} T={temps or 1}"
            if diffs:
                failures += 1
                print(f"MISMATCH {label}: " + "; ".join(diffs[:8]))
            else:
                print(f"ok       {label}: {mine['correct']} correct, {mine['wrong']} wrong, {mine['predictions']} predictions")
    print(f"peer check: {checked - failures} passed, {failures} failed")
    return 1 if failures else 0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--data", required=True, help="folder with taxonomy.csv, logits.npy, labels.csv [, objectness.npy]")
    ap.add_argument("--hedgerow", help="check against this CLI binary instead of timing")
    ap.add_argument("--thresholds", default="0.5")
    ap.add_argument("--object-threshold", type=float, default=0.5)
    ap.add_argument("--rule", default="cumulative", choices=ref.RULES)
    ap.add_argument("--unverifiable", default="credit", choices=ref.POLICIES)
    ap.add_argument("--temperatures")
    ap.add_argument("--precision", choices=("float32", "float64"))
    ap.add_argument("--repeat", type=int, default=3, help="threshold changes to time (median reported)")
    ap.add_argument("--json", action="store_true", help="print one JSON object (the default output)")
    a = ap.parse_args(argv)
    a.precision_given = a.precision is not None
    a.precision = a.precision or "float32"
    try:
        if a.hedgerow:
            return check(a)
        print(json.dumps(bench(a), indent=2))
        return 0
    except (OSError, ValueError) as e:
        print(f"peer.py: {e}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
