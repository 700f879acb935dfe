"""Hierarchical precision / recall / F1 of the CLI, checked with hiclass.

    python check_hiclass.py --hedgerow target/debug/hedgerow --data demo-data

For each setting: `hedgerow decode` gives the per-row predictions; from them
and the labels we build label paths from the taxonomy and compute micro
hierarchical P/R/F1 with `hiclass.metrics` (hiclass 5.0.8, Miranda, Köhnecke
& Renard, "HiClass: a Python library for local hierarchical classification
compatible with scikit-learn", JMLR 24 (2023); the measures themselves are
Kiritchenko, Matwin, Nock & Famili 2006).  These are compared, within 1e-9,
with the CLI's own `evaluate --json` keys hierarchical_precision / _recall /
_f1 and with reference.py.

How the rows are given to hiclass (hiclass.metrics, version 5.0.8):
  * y_true / y_pred are 2-D arrays [rows, D] of node ids from depth 1 down,
    padded with "" (hiclass's own make_leveled pads the same way).  hiclass
    turns every row into a set of its non-empty entries (it calls
    set.discard("")), so the implicit root never appears (matching "minus
    root" in the contract), and since hedgerow node ids are unique, sets of
    ids are sets of nodes.
  * Only rows with a (non-background) label are passed: the contract's
    hierarchical measures are over labelled rows only.
  * A root prediction and an abstaining row are both an all-empty path.
    hiclass discards the "" entries, so such a row adds 0 to sum|P^| and to
    sum|P^ n T^| and still adds |T^| to the recall denominator: exactly the
    contract's "P^ is empty for the root or for an abstaining row".
  * If every passed prediction is empty, sum|P^| = 0 and hiclass's precision
    raises ZeroDivisionError (it does not guard the division); we map that to
    null, as the contract does.  hiclass.metrics.f1 calls precision() too, so
    it raises as well; with zero_division=np.nan it returns nan when
    hP + hR = 0, which we also map to null (contract: null on a zero
    denominator; hiclass's default "warn" would return 0.0 instead).

Exit status: 0 all agree, 1 a mismatch, 2 a usage or environment problem.
"""

from __future__ import annotations

import argparse
import math
import sys
import tempfile
import warnings
from pathlib import Path

import numpy as np

sys.dont_write_bytecode = True  # no __pycache__ beside the sources
sys.path.insert(0, str(Path(__file__).resolve().parent))
import check_cli as cc  # noqa: E402
import reference as ref  # noqa: E402
from reference import Setting  # noqa: E402

try:
    from hiclass import metrics as hm
except ImportError as e:  # pragma: no cover - environment problem
    print(f"error: hiclass is not installed ({e}); see tests/python/requirements.txt", file=sys.stderr)
    sys.exit(2)

KEYS = ("hierarchical_precision", "hierarchical_recall", "hierarchical_f1")

# Settings compared (the unverifiable policy does not enter these measures).
HICLASS_SETTINGS = [
    Setting("cumulative", "0.5", policy="credit"),
    Setting("conditional", "0.9,0.7,0.5,0.3", 0.6, policy="credit", use_objectness=True),
    Setting("cumulative", "0", policy="penalize"),
    Setting("cumulative", "1", 0.3, policy="exclude", use_objectness=True),
    Setting("conditional", "0.5", temperatures="1,1,1.5,2", policy="credit"),
]


def padded_path(tax: ref.Taxonomy, node_id: str) -> list[str]:
    """Node ids from depth 1 down to node_id, padded with "" to depth D."""
    d = tax.max_depth
    if node_id == "":
        return [""] * d
    p = [tax.ids[v] for v in tax.path(tax.index[node_id])]
    return p + [""] * (d - len(p))


def hiclass_scores(tax: ref.Taxonomy, labels: list[str], predicted: list[str]) -> dict:
    """Micro hP/hR/hF from hiclass over the labelled rows.

    labels[i] = label id or "" (background, skipped); predicted[i] = predicted
    id or "" (root prediction or abstention).
    """
    rows = [i for i, g in enumerate(labels) if g != ""]
    if not rows:
        return {k: None for k in KEYS}
    y_true = np.array([padded_path(tax, labels[i]) for i in rows])
    y_pred = np.array([padded_path(tax, predicted[i]) for i in rows])

    def guarded(f, **kw):
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("error")  # any hiclass/sklearn warning is a surprise here
                v = float(f(y_true, y_pred, average="micro", **kw))
        except ZeroDivisionError:
            return None
        return None if math.isnan(v) else v

    return {
        "hierarchical_precision": guarded(hm.precision),
        "hierarchical_recall": guarded(hm.recall),
        "hierarchical_f1": guarded(hm.f1, zero_division=np.nan),
    }


def from_decode_rows(rows: list[dict]) -> tuple[list[str], list[str]]:
    """(labels, predicted) from decode rows; abstaining rows predict nothing."""
    labels = [r["label"].strip() for r in rows]
    pred = ["" if r["outcome"].strip() in ("abstained", "rejected") else r["predicted"].strip() for r in rows]
    return labels, pred


def self_check(tmp: Path) -> list[str]:
    """hiclass on the tiny hand-made data (reference decode) vs the hand values."""
    data = ref.load(cc.write_tiny(tmp))
    bad = []
    for case in cc.TINY_CASES:
        s = case[0]
        dec, met = ref.run(data, s)
        labels, pred = from_decode_rows([{k: str(v) for k, v in r.items()} for r in ref.decode_rows(data, dec, s.rule)])
        got = hiclass_scores(data.tax, labels, pred)
        want = {k: cc.tiny_expected(case)[k] for k in KEYS}
        errs = cc.compare(want, got) + cc.compare({k: met[k] for k in KEYS}, got)
        print(f"hiclass self-check {s.describe()}: {'ok' if not errs else 'MISMATCH'} ({fmt(got)})")
        bad += [f"hiclass self-check {s.describe()}: {e}" for e in errs]
    return bad


def fmt(m: dict) -> str:
    def f(x):
        return "null" if x is None else f"{x:.4f}"

    return f"hP {f(m['hierarchical_precision'])} hR {f(m['hierarchical_recall'])} hF {f(m['hierarchical_f1'])}"


def check(hedgerow: Path, datasets: list[ref.Dataset], settings: list[Setting], tmp: Path) -> list[str]:
    bad = []
    for ds in datasets:
        data = ref.load(ds)
        print(f"data set {ds.name}:")
        for s in settings:
            label = s.describe()
            if s.use_objectness and ds.objectness is None:
                print(f"{label}: skipped (no objectness)")
                continue
            try:
                rows = cc.cli_decode(hedgerow, ds, s, tmp)
                cli = cc.cli_evaluate(hedgerow, ds, s)
            except cc.CliFailure as e:
                print(f"{label}: MISMATCH (the CLI failed)\n    {e}")
                bad.append(f"{ds.name} {label}: {e}")
                continue
            labels, pred = from_decode_rows(rows)
            hic = hiclass_scores(data.tax, labels, pred)
            _, refm = ref.run(data, s)
            errs = [f"cli vs hiclass: {e}" for e in cc.compare(hic, {k: cli.get(k) for k in KEYS if k in cli})]
            errs += [f"reference vs hiclass: {e}" for e in cc.compare(hic, {k: refm[k] for k in KEYS})]
            print(f"{label}: {'ok' if not errs else 'MISMATCH'} ({fmt(hic)}; hiclass = cli = reference)"
                  if not errs else f"{label}: MISMATCH (hiclass {fmt(hic)})")
            for e in errs:
                print(f"    {e}")
            bad += [f"{ds.name} {label}: {e}" for e in errs]
    return bad


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description="Check the CLI's hierarchical P/R/F1 against hiclass.")
    ap.add_argument("--hedgerow", type=Path, help="path to the hedgerow binary")
    ap.add_argument("--data", type=Path, help="demo data directory")
    ap.add_argument("--self-check-only", action="store_true", help="only hiclass vs the hand values and reference.py")
    a = ap.parse_args(argv)
    if not a.self_check_only and (a.hedgerow is None or a.data is None):
        ap.error("--hedgerow and --data are required (or --self-check-only)")
    with tempfile.TemporaryDirectory(prefix="hedgerow-hiclass-") as t:
        tmp = Path(t)
        bad = self_check(tmp)
        if bad:
            print("\nhiclass self-check FAILED:")
            for b in bad:
                print(f"  {b}")
            return 1
        if a.self_check_only:
            return 0
        try:
            cc.check_binary(a.hedgerow)
            datasets = cc.find_datasets(a.data)
        except cc.EnvProblem as e:
            print(f"error: {e}", file=sys.stderr)
            return 2
        tiny_dir = tmp / "tiny"
        tiny_dir.mkdir()
        tiny = cc.write_tiny(tiny_dir)
        work = tmp / "work"
        work.mkdir()
        bad = check(a.hedgerow, [tiny], [c[0] for c in cc.TINY_CASES], work)
        bad += check(a.hedgerow, datasets, HICLASS_SETTINGS, work)
    if bad:
        print(f"\n{len(bad)} mismatch(es):")
        for b in bad:
            print(f"  {b}")
        return 1
    print("\nhiclass agrees with the CLI and the reference")
    return 0


if __name__ == "__main__":
    sys.exit(main())
