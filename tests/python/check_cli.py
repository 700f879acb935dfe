"""Compare `hedgerow evaluate --json` / `hedgerow decode` with reference.py.

    python check_cli.py --hedgerow target/debug/hedgerow --data demo-data

1. Self-check of reference.py on a tiny hand-made data set (written to a temp
   dir), against values derived by hand in the comments of `tiny_expected`.
2. The same tiny data set through the CLI, against the same hand values.
3. The demo data at several settings (both rules, thresholds 0.5 /
   0.9,0.7,0.5,0.3 / 0 / 1, with and without objectness at object thresholds
   0.3 and 0.6, all three unverifiable policies, temperatures 1,1,1.5,2):
   counts exactly, ratios within 1e-9 absolute, stop_share / stop_outcome
   elementwise, and the per-row output of `hedgerow decode`; and with
   per-node thresholds (`--node-threshold`).
4. `hedgerow nodes --json` (the per-node report) against reference.py's
   node_report on the tiny data (with hand values) and the demo data at
   several settings, per-node overrides included; its sums against the
   evaluation (stops over nodes and root = predictions, per outcome).

Exit status: 0 all agree, 1 a mismatch, 2 a usage or environment problem.
"""

from __future__ import annotations

import argparse
import csv
import json
import math
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

sys.dont_write_bytecode = True  # no __pycache__ beside the sources
sys.path.insert(0, str(Path(__file__).resolve().parent))
import reference as ref  # noqa: E402
from reference import Dataset, Setting  # noqa: E402

TOL = 1e-9
COUNT_KEYS = ("rows", "predictions", "abstained", "correct", "unverifiable", "wrong")


class EnvProblem(Exception):
    """Usage or environment problem: exit 2."""


# --------------------------------------------------------------------------
# Comparison


def compare(expected, actual, path: str = "") -> list[str]:
    """Mismatches between expected (reference) and actual (CLI) values.

    Integers must be equal, floats within TOL absolute, None only matches
    None, lists elementwise, dicts on the expected keys (unknown actual keys
    are ignored).  A list of per-outcome shares with no predictions may be a
    single null instead of an object of nulls.
    """
    where = path or "value"
    if isinstance(expected, dict):
        if actual is None and all(v is None for v in expected.values()):
            return []
        if not isinstance(actual, dict):
            return [f"{where}: expected an object {expected}, got {actual!r}"]
        out = []
        for k, v in expected.items():
            if k not in actual:
                out.append(f"{path}.{k}: missing (expected {v!r})" if path else f"{k}: missing (expected {v!r})")
            else:
                out += compare(v, actual[k], f"{path}.{k}" if path else k)
        return out
    if isinstance(expected, list):
        if not isinstance(actual, list) or len(actual) != len(expected):
            return [f"{where}: expected {expected!r}, got {actual!r}"]
        out = []
        for i, (e, a) in enumerate(zip(expected, actual)):
            out += compare(e, a, f"{where}[{i}]")
        return out
    if expected is None:
        return [] if actual is None else [f"{where}: expected null, got {actual!r}"]
    if isinstance(expected, (str, bool)):
        return [] if actual == expected and type(actual) is type(expected) else [
            f"{where}: expected {expected!r}, got {actual!r}"]
    if isinstance(actual, bool) or not isinstance(actual, (int, float)):
        return [f"{where}: expected {expected!r}, got {actual!r}"]
    if isinstance(expected, (int, np.integer)) and not isinstance(expected, bool):
        return [] if actual == expected else [f"{where}: expected {expected}, got {actual!r}"]
    if math.isfinite(actual) and abs(float(actual) - float(expected)) <= TOL:
        return []
    return [f"{where}: expected {float(expected)!r}, got {actual!r} (diff {abs(float(actual) - float(expected)):.3g})"]


# --------------------------------------------------------------------------
# Running the CLI


def check_binary(hedgerow: Path) -> None:
    if not hedgerow.is_file():
        raise EnvProblem(f"no hedgerow binary at {hedgerow}")
    r = subprocess.run([str(hedgerow), "evaluate", "--help"], capture_output=True, text=True, timeout=60)
    if r.returncode != 0:
        raise EnvProblem(f"`{hedgerow} evaluate --help` failed ({r.returncode}): {r.stderr.strip()[:500]}")


class CliFailure(Exception):
    """The CLI exited non-zero or printed something unparsable on valid input."""


def _run(cmd: list[str]) -> str:
    r = subprocess.run(cmd, capture_output=True, text=True, timeout=600)
    if r.returncode != 0:
        raise CliFailure(f"`{' '.join(cmd)}` exited {r.returncode}: {r.stderr.strip()[:2000]}")
    return r.stdout


def cli_evaluate(hedgerow: Path, ds: Dataset, s: Setting) -> dict:
    cmd = [str(hedgerow), "evaluate", *ds.cli_args(s.use_objectness), *s.cli_args(), "--json"]
    out = _run(cmd)
    try:
        return json.loads(out)
    except json.JSONDecodeError as e:
        raise CliFailure(f"`{' '.join(cmd)}` printed no JSON ({e}): {out[:500]!r}") from None


def cli_nodes(hedgerow: Path, ds: Dataset, s: Setting) -> dict:
    cmd = [str(hedgerow), "nodes", *ds.cli_args(s.use_objectness), *s.cli_args(), "--json"]
    out = _run(cmd)
    try:
        return json.loads(out)
    except json.JSONDecodeError as e:
        raise CliFailure(f"`{' '.join(cmd)}` printed no JSON ({e}): {out[:500]!r}") from None


def node_sums(report: dict, met: dict) -> list[str]:
    """The report's counts over every node and the root against the evaluation."""
    bad = []
    records = [report["root"], *report["nodes"]]
    for key, total in (("stops", "predictions"), ("correct", "correct"),
                       ("unverifiable", "unverifiable"), ("wrong", "wrong")):
        got = sum(r[key] for r in records)
        if got != met[total]:
            bad.append(f"nodes: sum of {key} {got} != {total} {met[total]}")
    labelled = met.get("labelled_rows")
    if labelled is not None and report["root"]["labelled"] != labelled:
        bad.append(f"nodes: root labelled {report['root']['labelled']} != labelled_rows {labelled}")
    return bad


def cli_decode(hedgerow: Path, ds: Dataset, s: Setting, tmp: Path) -> list[dict]:
    out = tmp / "preds.csv"
    if out.exists():
        out.unlink()
    cmd = [str(hedgerow), "decode", *ds.cli_args(s.use_objectness), *s.cli_args(), "--out", str(out)]
    _run(cmd)
    with open(out, newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    need = {"row", "label", "predicted", "depth", "probability", "outcome"}
    if rows and not need <= set(rows[0].keys()):
        raise CliFailure(f"decode output lacks columns {sorted(need - set(rows[0].keys()))}")
    return rows


def _num(text: str) -> float | None:
    text = text.strip()
    return None if text == "" else float(text)


def compare_decode(
    data: ref.Loaded, dec: ref.Decoded, rule: str, got: list[dict], max_report: int = 8
) -> tuple[list[str], list[str]]:
    """(mismatches, notes) between reference rows and `hedgerow decode` rows.

    Compared: row, label, predicted, outcome, depth (predicting rows), and,
    where the CLI writes them, node_d / conditional_d / cumulative_d (the
    greedy path, f32 conditionals and P_d: contract quantities) within TOL.
    `probability` is not defined by the contract: a difference is only a note.
    """
    want = ref.decode_rows(data, dec, rule)
    if len(got) != len(want):
        return [f"decode wrote {len(got)} rows, expected {len(want)}"], []
    bad, notes = [], []
    base = 1 if got and got[0]["row"].strip() == "1" else 0
    if base == 1:
        notes.append("decode numbers rows from 1")
    path_cols = [k for k in want[0] if k.startswith(("node_", "conditional_", "cumulative_"))] if want else []
    present = [k for k in path_cols if k in got[0]] if got else []
    if got and len(present) < len(path_cols):
        notes.append(f"decode has no {sorted(set(path_cols) - set(present))[:3]}... columns (not compared)")
    prob_diff, prob_row = 0.0, None
    more = 0
    for i, (w, g) in enumerate(zip(want, got)):
        diffs = []
        if g["row"].strip() != str(i + base):
            diffs.append(f"row={g['row']!r}")
        for k in ("label", "predicted", "outcome"):
            if g[k].strip() != w[k]:
                diffs.append(f"{k}: cli {g[k]!r} ref {w[k]!r}")
        if w["outcome"] not in ("abstained", "rejected") and g["depth"].strip() != str(w["depth"]):
            diffs.append(f"depth: cli {g['depth']!r} ref {w['depth']}")
        for k in present:
            if k.startswith("node_"):
                if g[k].strip() != w[k]:
                    diffs.append(f"{k}: cli {g[k]!r} ref {w[k]!r}")
                continue
            try:
                v = _num(g[k])
            except ValueError:
                diffs.append(f"{k}: cli {g[k]!r} is not a number")
                continue
            if (v is None) != (w[k] is None) or (v is not None and abs(v - w[k]) > TOL):
                diffs.append(f"{k}: cli {g[k]!r} ref {w[k]!r}")
        try:
            pd = abs(float(g["probability"]) - w["probability"])
            if pd > prob_diff:
                prob_diff, prob_row = pd, i
        except ValueError:
            pass
        if diffs:
            if len(bad) < max_report:
                bad.append(f"decode row {i}: " + "; ".join(diffs) + "\n      " + explain_row(data, dec, i))
            else:
                more += 1
    if more:
        bad.append(f"decode: {more} more differing row(s) not shown")
    if prob_diff > TOL:
        notes.append(
            f"probability column differs from the reference's score at the stop by up to {prob_diff:.3g} "
            f"(row {prob_row}; not defined by the contract, so not failed)"
        )
    return bad, notes


def compare_metrics(want: dict, got: dict) -> tuple[list[str], list[str]]:
    """compare() on the contract keys (with no predictions every share, stop_outcome
    included, is null: 0/0)."""
    return compare(want, got), []


def compare_extra(data: ref.Loaded, dec: ref.Decoded, got: dict) -> list[str]:
    """Extra keys (labelled_rows, false_alarms, stop_count, ...) when the CLI prints them."""
    extra = ref.extra_metrics(data.tax, dec, data.labels)
    return compare({k: v for k, v in extra.items() if k in got}, got)


def explain_row(data: ref.Loaded, dec: ref.Decoded, i: int) -> str:
    """The reference's working for one row, for mismatch reports."""
    tax = data.tax
    L = int(dec.length[i])
    path = [tax.ids[int(v)] for v in dec.path[i, :L]]
    c = [float(x) for x in dec.c[i, :L]]
    cum = [float(x) for x in dec.cum[i, : L + 1]]
    return f"ref: P_root={float(dec.p_root[i])!r} path={path} c(f32)={c} P={cum} steps={int(dec.steps[i])}"


def summary(met: dict) -> str:
    p = met.get("precision")
    return f"precision {p:.4f}" if isinstance(p, (int, float)) else "precision null"


# --------------------------------------------------------------------------
# Demo data discovery


def find_datasets(data_dir: Path) -> list[Dataset]:
    """Every folder under data_dir holding a taxonomy, logits and labels.

    Files are matched by name: *taxonomy*.csv, *logits*.npy, *label*.csv
    (not the taxonomy), and optionally *objectness*.npy.  A folder with
    several logits files yields one data set per logits file.
    """
    if not data_dir.is_dir():
        raise EnvProblem(f"no data directory at {data_dir}")
    found = []
    for d in [data_dir, *sorted(p for p in data_dir.rglob("*") if p.is_dir())]:
        tax = sorted(d.glob("*taxonomy*.csv"))
        logits = sorted(d.glob("*logits*.npy"))
        labels = sorted(p for p in d.glob("*label*.csv") if "taxonomy" not in p.name)
        obj = sorted(d.glob("*objectness*.npy"))
        if not (tax and logits and labels):
            continue
        if len(tax) > 1 or len(labels) > 1 or len(obj) > 1:
            raise EnvProblem(f"{d}: ambiguous data files {[p.name for p in tax + labels + obj]}")
        for lg in logits:
            name = str(lg.relative_to(data_dir))
            found.append(Dataset(tax[0], lg, labels[0], obj[0] if obj else None, name))
    if not found:
        files = sorted(str(p.relative_to(data_dir)) for p in data_dir.rglob("*") if p.is_file())
        raise EnvProblem(f"no taxonomy/logits/labels found under {data_dir}; files: {files[:30]}")
    return found


# The settings compared on the demo data.
DEMO_SETTINGS = [
    Setting("cumulative", "0.5", policy="credit"),
    Setting("cumulative", "0.9,0.7,0.5,0.3", 0.3, policy="credit", use_objectness=True),
    Setting("conditional", "0.9,0.7,0.5,0.3", 0.6, policy="penalize", use_objectness=True),
    Setting("cumulative", "0", policy="exclude"),
    Setting("conditional", "1", 0.3, policy="exclude", use_objectness=True),
    Setting("cumulative", "1", 0.6, policy="penalize", use_objectness=True),
    Setting("conditional", "0.5", temperatures="1,1,1.5,2", policy="credit"),
    Setting("cumulative", "0.9,0.7,0.5,0.3", 0.6, "1,1,1.5,2", "exclude", use_objectness=True),
    Setting("conditional", "0", policy="penalize"),
]

# Settings with per-node thresholds on the demo taxonomy: evaluate, decode and
# nodes are compared at each.  Overrides above and below their depth's value,
# at 0 and 1, at every depth, under both rules.
DEMO_NODE_SETTINGS = [
    Setting("cumulative", "0.5", policy="credit", node_thresholds="pet=0.2,glass=0.9,hdpe-milk=0.05"),
    Setting("conditional", "0.9,0.7,0.5,0.3", 0.6, policy="penalize", use_objectness=True,
            node_thresholds="plastic=0.99,paper=0.3,pet-bottle-clear=0,metal=1"),
    Setting("cumulative", "0.9,0.8,0.6,0.5", 0.4, policy="exclude", use_objectness=True,
            node_thresholds="pet-bottle=0.1,glass-clear=0.7,film=0.95"),
]
# Settings for the node report alone (no overrides).
DEMO_REPORT_SETTINGS = [DEMO_SETTINGS[1], DEMO_SETTINGS[2], DEMO_SETTINGS[3], DEMO_SETTINGS[6]]


# --------------------------------------------------------------------------
# The tiny hand-made data set

# Taxonomy (rows deliberately out of order: a child before its parent).
# Column: 0 glass_clear  1 plastic  2 glass  3 pet  4 hdpe  5 pet_bottle
#
#   root ─ plastic (d1) ─ pet (d2) ─ pet_bottle (d3)
#        │              └ hdpe (d2)
#        └ glass (d1) ─ glass_clear (d2)
#
# D = 3.  Sibling groups: root: [plastic(1), glass(2)]; plastic: [pet(3),
# hdpe(4)]; glass: [glass_clear(0)] and pet: [pet_bottle(5)] are single
# children (probability exactly 1 whatever their logits).
# Leaves: glass_clear, hdpe, pet_bottle -> |leaves(root)| = 3.
# IG: leaves and glass, pet (one leaf each) = 1; plastic = 1 - ln2/ln3
# (= 0.36907...); root = 0.   Below r = ln2/ln3.
TINY_TAXONOMY = """id,parent,name
glass_clear,glass,Clear glass
plastic,,Plastic
glass,,Glass
pet,plastic,PET
hdpe,plastic,HDPE
pet_bottle,pet,PET bottle
"""
L3, L4, L9 = math.log(3), math.log(4), math.log(9)
#               glass_clear plastic glass pet hdpe pet_bottle
TINY_LOGITS = [
    [-5.0, L3, 0.0, L4, 0.0, 7.0],  # row 0: p(plastic)=3/4, p(pet)=4/5 (T=1) or 2/3 (T=2)
    [0.0, 0.0, L9, 0.0, 0.0, 0.0],  # row 1: p(glass)=9/10 -> f32 0.8999999761581421
    [0.0, 0.0, 0.0, 0.0, L3, 0.0],  # row 2: plastic/glass tie 1/2 -> plastic (lower column); p(hdpe)=3/4
    [0.0, 0.0, L9, 0.0, 0.0, 0.0],  # row 3: background, like row 1
    [0.0, 0.0, 20.0, 0.0, 0.0, 0.0],  # row 4: p(glass)=1-2.06e-9 in f64, exactly 1.0 after f32 rounding
]
TINY_LABELS = ["pet", "glass_clear", "glass", "", "glass_clear"]
# Stored as float64 on purpose: the engine reads it as f32, so
# P_root = 0.8999999761581421, 0.4000000059604645, 0.699999988079071, 0.5, 0.949999988079071.
TINY_OBJECTNESS = [0.9, 0.4, 0.7, 0.5, 0.95]


def write_tiny(d: Path) -> Dataset:
    (d / "taxonomy.csv").write_text(TINY_TAXONOMY, encoding="utf-8")
    np.save(d / "logits.npy", np.array(TINY_LOGITS, dtype=np.float64))
    np.save(d / "objectness.npy", np.array(TINY_OBJECTNESS, dtype=np.float64))
    with open(d / "labels.csv", "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        w.writerow(["image", "label"])  # an extra column, to be ignored
        for i, g in enumerate(TINY_LABELS):
            w.writerow([f"img{i}.png", g])
    return Dataset(d / "taxonomy.csv", d / "logits.npy", d / "labels.csv", d / "objectness.npy", "tiny")


def _so(*triples):
    return [{"correct": c, "unverifiable": u, "wrong": w} for c, u, w in triples]


R = math.log(2) / math.log(3)
Z = (0.0, 0.0, 0.0)
N4 = [None] * 4

# (setting, predicted ids per row ("" = root, None = abstains), outcomes,
#  metrics, precision for (credit, penalize, exclude))
TINY_CASES = [
    # A. cumulative t=0.5, no objectness (P_root = 1).
    # row0: P1=.75, P2=.75*f32(.8)=.6000000089, P3=same -> pet_bottle; label pet is a strict ancestor -> unverifiable
    # row1: P1=P2=f32(.9) -> glass_clear = label -> correct
    # row2: tie -> plastic, P1=.5 >= .5, P2=.375 < .5 -> plastic; label glass -> wrong (distance 1+1-0 = 2)
    # row3: background, -> glass_clear -> wrong (false alarm)
    # row4: P1=f32(1-2e-9)=1, P2=1 -> glass_clear -> correct
    # hier (labelled rows 0,1,2,4): |P^|=3,2,1,2 = 8; |T^|=2,2,1,2 = 7; |P^nT^|=2,2,0,2 = 6
    (
        Setting("cumulative", "0.5", policy="credit"),
        ["pet_bottle", "glass_clear", "plastic", "glass_clear", "glass_clear"],
        ["unverifiable", "correct", "wrong", "wrong", "correct"],
        dict(rows=5, predictions=5, abstained=0, correct=2, unverifiable=1, wrong=2,
             specificity=(1 + 1 + (1 - R) + 1 + 1) / 5, reward=(1 + 1) / 5,
             stop_share=[0.0, 0.2, 0.6, 0.2],
             stop_outcome=_so(Z, (0, 0, 0.2), (0.4, 0, 0.2), (0, 0.2, 0)),
             hierarchical_precision=6 / 8, hierarchical_recall=6 / 7, hierarchical_f1=0.8,
             mistake_severity=2.0),
        (3 / 5, 2 / 5, 2 / 4),
    ),
    # B. conditional t=0.7,0.8,0.9 (t3=0.9), objectness with t0=0.6.
    # row0: P_root .9 ok; c1=.75>=.7; c2=f32(.8)=0.800000011920929>=.8 (passes only
    #       because of the f32 rounding); c3=1>=.9 -> pet_bottle -> unverifiable
    # row1: P_root .4 < .6 -> abstained.   row3: background, .5 < .6 -> rejected
    # row2: c1=.5 < .7 -> root -> correct.  row4: c1=1.0, c2=1 -> glass_clear -> correct
    # hier: |P^|=3,0,0,2 = 5; |T^|=2,2,1,2 = 7; inter 2,0,0,2 = 4 -> hP .8, hR 4/7, hF 2/3
    (
        Setting("conditional", "0.7,0.8,0.9", 0.6, policy="penalize", use_objectness=True),
        ["pet_bottle", None, "", None, "glass_clear"],
        ["unverifiable", "abstained", "correct", "rejected", "correct"],
        dict(rows=5, predictions=3, abstained=2, correct=2, unverifiable=1, wrong=0,
             specificity=(1 + 0 + 1) / 3, reward=(0 + 1) / 3,
             stop_share=[1 / 3, 0.0, 1 / 3, 1 / 3],
             stop_outcome=_so((1 / 3, 0, 0), Z, (1 / 3, 0, 0), (0, 1 / 3, 0)),
             hierarchical_precision=0.8, hierarchical_recall=4 / 7, hierarchical_f1=2 / 3,
             mistake_severity=None),
        (1.0, 2 / 3, 1.0),
    ),
    # C. cumulative t=0.6,0.5, t0=0.3 (everyone predicts), temperatures 1,2.
    # row0: P1=f32(.9)*.75=.6749999821 >= .6; at T2=2 p(pet)=2/3 -> f32 0.6666666865,
    #       P2=.45 < .5 -> plastic (it would pass at T=1: .54) -> correct
    # row1: P1=f32(.4)*f32(.9)=.36 < .6 -> root -> correct
    # row2: P1=f32(.7)*.5=.35 -> root -> correct.  row3 (background): P1=.45 -> root -> wrong
    # row4: P1=f32(.95)*1 >= .6, P2 same >= .5 -> glass_clear -> correct
    # hier: |P^|=1,0,0,2 = 3; |T^| = 7; inter 1,0,0,2 = 3 -> hP 1, hR 3/7, hF .6
    (
        Setting("cumulative", "0.6,0.5", 0.3, "1,2", "exclude", use_objectness=True),
        ["plastic", "", "", "", "glass_clear"],
        ["correct", "correct", "correct", "wrong", "correct"],
        dict(rows=5, predictions=5, abstained=0, correct=4, unverifiable=0, wrong=1,
             specificity=((1 - R) + 1) / 5, reward=((1 - R) + 1) / 5,
             stop_share=[0.6, 0.2, 0.2, 0.0],
             stop_outcome=_so((0.4, 0, 0.2), (0.2, 0, 0), (0.2, 0, 0), Z),
             hierarchical_precision=1.0, hierarchical_recall=3 / 7, hierarchical_f1=0.6,
             mistake_severity=None),
        (0.8, 0.8, 0.8),
    ),
    # D. conditional t=1, no objectness: only conditionals that round to 1.0f pass.
    # rows 0-3 stop at the root (c1 = .75, f32(.9), .5, f32(.9)); row3 is background -> wrong.
    # row4: c1 = f32(0.9999999979) = 1.0 >= 1, c2 = 1 -> glass_clear -> correct
    # hier: |P^|=0,0,0,2; |T^|=7; inter 2 -> hP 1, hR 2/7, hF 4/9
    (
        Setting("conditional", "1", policy="credit"),
        ["", "", "", "", "glass_clear"],
        ["correct", "correct", "correct", "wrong", "correct"],
        dict(rows=5, predictions=5, abstained=0, correct=4, unverifiable=0, wrong=1,
             specificity=1 / 5, reward=1 / 5,
             stop_share=[0.8, 0.0, 0.2, 0.0],
             stop_outcome=_so((0.6, 0, 0.2), Z, (0.2, 0, 0), Z),
             hierarchical_precision=1.0, hierarchical_recall=2 / 7, hierarchical_f1=4 / 9,
             mistake_severity=None),
        (0.8, 0.8, 0.8),
    ),
    # E. cumulative t=0, t0=0.6: rows 1 and 3 abstain (.4, .5), the rest go to a leaf.
    # row0 -> pet_bottle (unverifiable); row2 -> plastic (tie) -> hdpe, label glass -> wrong,
    # distance 2+1-0 = 3; row4 -> glass_clear (correct)
    # hier: |P^|=3,0,2,2 = 7; |T^| = 7; inter 2,0,0,2 = 4 -> 4/7 each
    (
        Setting("cumulative", "0", 0.6, policy="credit", use_objectness=True),
        ["pet_bottle", None, "hdpe", None, "glass_clear"],
        ["unverifiable", "abstained", "wrong", "rejected", "correct"],
        dict(rows=5, predictions=3, abstained=2, correct=1, unverifiable=1, wrong=1,
             specificity=1.0, reward=1 / 3,
             stop_share=[0.0, 0.0, 2 / 3, 1 / 3],
             stop_outcome=_so(Z, Z, (1 / 3, 0, 1 / 3), (0, 1 / 3, 0)),
             hierarchical_precision=4 / 7, hierarchical_recall=4 / 7, hierarchical_f1=4 / 7,
             mistake_severity=3.0),
        (2 / 3, 1 / 3, 1 / 2),
    ),
    # G. cumulative t=0.5, t0=0.7: the objectness is an f32 value compared with the
    # float64 threshold, so row2's f32(0.7) = 0.699999988079071 < 0.7 abstains.
    # row0: .9 ok, P1=.675, P2=.675*f32(.8)=.54, P3=.54 -> pet_bottle -> unverifiable
    # row1 (.4) abstains; row3 (.5, background) rejected; row4 -> glass_clear -> correct
    # hier: |P^|=3,0,0,2 = 5; |T^| = 7; inter 2,0,0,2 = 4 -> hP .8, hR 4/7, hF 2/3
    (
        Setting("cumulative", "0.5", 0.7, policy="credit", use_objectness=True),
        ["pet_bottle", None, None, None, "glass_clear"],
        ["unverifiable", "abstained", "abstained", "rejected", "correct"],
        dict(rows=5, predictions=2, abstained=3, correct=1, unverifiable=1, wrong=0,
             specificity=1.0, reward=1 / 2,
             stop_share=[0.0, 0.0, 0.5, 0.5],
             stop_outcome=_so(Z, Z, (0.5, 0, 0), (0, 0.5, 0)),
             hierarchical_precision=0.8, hierarchical_recall=4 / 7, hierarchical_f1=2 / 3,
             mistake_severity=None),
        (1.0, 0.5, 1.0),
    ),
    # H. cumulative t=0.5, no objectness, plastic's own threshold 0.8 (A's setting otherwise).
    # row0: P1=.75 < .8 -> root -> correct (A: pet_bottle)
    # row1: glass P1=f32(.9) >= .5 (its depth's threshold), P2 same -> glass_clear -> correct
    # row2: tie -> plastic, P1=.5 < .8 -> root -> correct (A: plastic, wrong)
    # row3: background -> glass_clear -> wrong.  row4 -> glass_clear -> correct
    # hier: |P^|=0,2,0,2 = 4; |T^| = 7; inter 0,2,0,2 = 4 -> hP 1, hR 4/7, hF 8/11
    (
        Setting("cumulative", "0.5", policy="credit", node_thresholds="plastic=0.8"),
        ["", "glass_clear", "", "glass_clear", "glass_clear"],
        ["correct", "correct", "correct", "wrong", "correct"],
        dict(rows=5, predictions=5, abstained=0, correct=4, unverifiable=0, wrong=1,
             specificity=3 / 5, reward=2 / 5,
             stop_share=[0.4, 0.0, 0.6, 0.0],
             stop_outcome=_so((0.4, 0, 0), Z, (0.4, 0, 0.2), Z),
             hierarchical_precision=1.0, hierarchical_recall=4 / 7, hierarchical_f1=8 / 11,
             mistake_severity=None),
        (0.8, 0.8, 0.8),
    ),
    # F. t0=0.99: every row abstains -> every ratio null except hR = 0/7 = 0.
    (
        Setting("conditional", "0.5", 0.99, policy="credit", use_objectness=True),
        [None, None, None, None, None],
        ["abstained", "abstained", "abstained", "rejected", "abstained"],
        dict(rows=5, predictions=0, abstained=5, correct=0, unverifiable=0, wrong=0,
             specificity=None, reward=None, stop_share=N4,
             stop_outcome=[{"correct": None, "unverifiable": None, "wrong": None}] * 4,
             hierarchical_precision=None, hierarchical_recall=0.0, hierarchical_f1=None,
             mistake_severity=None),
        (None, None, None),
    ),
]


# Case H's per-node report, by hand from the rows above (labels: row0 pet,
# row1 glass_clear, row2 glass, row4 glass_clear; row3 background):
#   root: rows 0 and 2 stop there, both correct; every labelled row (4) is under it.
#   plastic / pet: row0 is labelled under them and predicts the root (stopped above).
#   glass: rows 1, 2, 4 labelled under it; row2 predicts the root (stopped above).
#   glass_clear: rows 1, 3, 4 stop there (3 is a false alarm); rows 1 and 4 labelled.
# No labelled row is wrong, so every top_wrong is empty.
TINY_H_NODES = {
    "": dict(stops=2, correct=2, unverifiable=0, wrong=0, labelled=4, stopped_above=0, precision=1.0),
    "plastic": dict(stops=0, labelled=1, stopped_above=1, precision=None, overridden=True, threshold=0.8),
    "pet": dict(stops=0, labelled=1, stopped_above=1),
    "glass": dict(stops=0, labelled=3, stopped_above=1, overridden=False, threshold=0.5),
    "glass_clear": dict(stops=3, correct=2, wrong=1, labelled=2, stopped_above=0, precision=2 / 3),
    "hdpe": dict(stops=0, labelled=0, stopped_above=0),
}


def report_by_id(report: dict) -> dict:
    return {r["id"]: r for r in [report["root"], *report["nodes"]]}


def tiny_expected(case) -> dict:
    s, _, _, met, prec = case
    return dict(met, precision=prec[ref.POLICIES.index(s.policy)])


def self_check(tmp: Path) -> list[str]:
    """reference.py against the hand values (no CLI involved)."""
    ds = write_tiny(tmp)
    data = ref.load(ds)
    bad = []
    # Structure of the taxonomy itself.
    tax = data.tax
    if tax.max_depth != 3 or list(tax.depth[:6]) != [2, 1, 1, 2, 2, 3] or int(tax.n_leaves[tax.root]) != 3:
        bad.append(f"tiny taxonomy parsed wrongly: depth {list(tax.depth)} leaves {list(tax.n_leaves)}")
    if abs(ref.information_gain(tax)[1] - (1 - R)) > 1e-15:
        bad.append("IG(plastic) != 1 - ln2/ln3")
    # float16 logits load as float64 of the f16 values.
    np.save(tmp / "f16.npy", np.array([[0.1, 1.0]], dtype=np.float16))
    if ref.load_logits(tmp / "f16.npy")[0, 0] != float(np.float16(0.1)):
        bad.append("float16 logits not converted exactly")
    for case in TINY_CASES:
        s, preds, outs, _, precs = case
        dec, met = ref.run(data, s)
        label = f"self-check {s.describe()}"
        errs = compare(tiny_expected(case), met)
        for pol, want in zip(ref.POLICIES, precs):
            got = ref.metrics(tax, dec, data.labels, pol)["precision"]
            errs += compare(want, got, f"precision[{pol}]")
        rows = ref.decode_rows(data, dec, s.rule)
        got_pred = [r["predicted"] if r["outcome"] not in ("abstained", "rejected") else None for r in rows]
        if got_pred != preds:
            errs.append(f"predictions: expected {preds}, got {got_pred}")
        if [r["outcome"] for r in rows] != outs:
            errs.append(f"outcomes: expected {outs}, got {[r['outcome'] for r in rows]}")
        if s.node_thresholds == "plastic=0.8":
            got = report_by_id(ref.run_nodes(data, s))
            for node, want in TINY_H_NODES.items():
                errs += compare(want, got[node], f"nodes[{node or 'root'}]")
            if any(r["top_wrong"] for r in got.values()):
                errs.append("nodes: a top_wrong list is not empty")
        print(f"{label}: {'ok' if not errs else 'MISMATCH'} ({summary(met)})")
        bad += [f"{label}: {e}" for e in errs]
    # The Wilson interval against scipy's (scipy.stats.binomtest(k, n).proportion_ci(
    # confidence_level=0.95, method="wilson")), and Newcombe (1998) Table I, method 3:
    # 81/263 -> 0.2553-0.3662, 0/20 -> 0-0.1611.
    from scipy.stats import binomtest
    for k, n in ((81, 263), (0, 20), (20, 20), (7, 9), (1, 1), (999, 1000)):
        ci = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
        lo, hi = ref.wilson(k, n)
        if abs(lo - ci.low) > 1e-12 or abs(hi - ci.high) > 1e-12:
            bad.append(f"wilson({k}, {n}) = {(lo, hi)}, scipy gives {(ci.low, ci.high)}")
    for (k, n), want in (((81, 263), (0.2553, 0.3662)), ((0, 20), (0.0, 0.1611))):
        if tuple(round(x, 4) for x in ref.wilson(k, n)) != want:
            bad.append(f"wilson({k}, {n}) = {ref.wilson(k, n)}, Newcombe (1998) gives {want}")
    return bad


# --------------------------------------------------------------------------
# A second, deliberately naive implementation (one row at a time, explicit
# ancestor sets) to cross-check the vectorised reference on random data.


def random_dataset(d: Path, seed: int = 7, n: int = 400, m: int = 40, depth: int = 4) -> Dataset:
    """A random taxonomy of exactly `depth` levels (rows shuffled) with f16 logits."""
    rng = np.random.default_rng(seed)
    nodes = [("n0", "", 1)]
    while len(nodes) < m:
        pid, _, pd = nodes[rng.integers(len(nodes))]
        if pd < depth and rng.random() < 0.8:
            nodes.append((f"n{len(nodes)}", pid, pd + 1))
        elif rng.random() < 0.15:
            nodes.append((f"n{len(nodes)}", "", 1))
    # make sure D = depth
    chain_parent = ""
    for k in range(1, depth + 1):
        nodes.append((f"deep{k}", chain_parent, k))
        chain_parent = f"deep{k}"
    nodes.append(("deep_sib", "deep3", 4))
    order = rng.permutation(len(nodes))
    with open(d / "taxonomy.csv", "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        w.writerow(["id", "parent", "name"])
        for i in order:
            w.writerow([nodes[i][0], nodes[i][1], f"Node {nodes[i][0]}"])
    mm = len(nodes)
    logits = (rng.normal(size=(n, mm)) * 2.5).astype(np.float16)
    logits[: n // 10, :] = 0  # rows of exact ties
    np.save(d / "logits.npy", logits)
    np.save(d / "objectness.npy", rng.random(n).astype(np.float32))
    ids = [nodes[i][0] for i in order]
    with open(d / "labels.csv", "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        w.writerow(["label"])
        for _ in range(n):
            w.writerow(["" if rng.random() < 0.15 else ids[rng.integers(mm)]])
    return Dataset(d / "taxonomy.csv", d / "logits.npy", d / "labels.csv", d / "objectness.npy", "random")


def naive_metrics(data: ref.Loaded, s: Setting, nodes: bool = False) -> dict:
    tax = data.tax
    big_d = tax.max_depth
    root = tax.root
    temps = ref.expand(ref.parse_list(s.temperatures), big_d, 1.0)
    t = ref.expand(ref.parse_list(s.thresholds), big_d)
    own = {tax.index[node]: value for node, value in s.node_pairs()}

    def ancestors(v):  # v and its ancestors, without the root
        out = set()
        while v != root:
            out.add(v)
            v = int(tax.parent[v])
        return out

    leaves_total = sum(1 for v in range(tax.m) if tax.is_leaf(v))

    def ig(v):
        if v == root:
            return 0.0
        nl = sum(1 for u in range(tax.m) if tax.is_leaf(u) and v in ancestors(u))
        return 1.0 - math.log(nl) / math.log(leaves_total)

    res = []  # (predicts, pred, label)
    for i in range(data.logits.shape[0]):
        row = data.logits[i]
        node, path = root, []
        while not tax.is_leaf(node):
            cols = [int(c) for c in tax.children[node]]
            if len(cols) == 1:
                probs = [1.0]
            else:
                z = [row[c] / temps[tax.depth[c] - 1] for c in cols]
                mx = max(z)
                e = [math.exp(x - mx) for x in z]
                tot = 0.0
                for x in e:
                    tot += x
                probs = [x / tot for x in e]
            k = probs.index(max(probs))
            path.append((cols[k], float(np.float32(probs[k]))))
            node = cols[k]
        p = float(np.float32(data.objectness[i])) if s.use_objectness else 1.0
        predicts = not s.use_objectness or p >= s.object_threshold
        pred = root
        for d, (v, c) in enumerate(path, 1):
            p = p * c
            if (p if s.rule == "cumulative" else c) < own.get(v, t[d - 1]):
                break
            pred = v
        res.append((predicts, pred, int(data.labels[i])))

    def outcome(pred, g):
        if g == ref.BACKGROUND:
            return "wrong"
        if pred == root or pred in ancestors(g):
            return "correct"
        if g in ancestors(pred):
            return "unverifiable"
        return "wrong"

    preds = [(pred, g, outcome(pred, g)) for ok, pred, g in res if ok]
    npred = len(preds)
    cnt = {o: sum(1 for _, _, x in preds if x == o) for o in ref.OUTCOMES}
    den = {"credit": npred, "penalize": npred, "exclude": cnt["correct"] + cnt["wrong"]}[s.policy]
    num = {"credit": cnt["correct"] + cnt["unverifiable"], "penalize": cnt["correct"], "exclude": cnt["correct"]}[s.policy]

    def ratio(a, b):
        return None if b == 0 else a / b

    inter = sp = st = 0
    for ok, pred, g in res:
        if g == ref.BACKGROUND:
            continue
        ps = ancestors(pred) if ok else set()
        ts = ancestors(g)
        inter, sp, st = inter + len(ps & ts), sp + len(ps), st + len(ts)
    hp, hr = ratio(inter, sp), ratio(inter, st)
    hf = None if hp is None or hr is None or hp + hr == 0 else 2 * hp * hr / (hp + hr)
    dists = []
    for pred, g, o in preds:
        if o == "wrong" and g != ref.BACKGROUND:
            common = ancestors(pred) & ancestors(g)
            dists.append(len(ancestors(pred)) + len(ancestors(g)) - 2 * len(common))
    if nodes:
        return naive_nodes(tax, s, preds, [g for _, _, g in res], ancestors)
    return {
        "rows": len(res),
        "predictions": npred,
        "abstained": len(res) - npred,
        **cnt,
        "precision": ratio(num, den),
        "specificity": ratio(sum(ig(p) for p, _, _ in preds), npred),
        "reward": ratio(sum(ig(p) for p, _, o in preds if o == "correct"), npred),
        "stop_share": [ratio(sum(1 for p, _, _ in preds if tax.depth[p] == d), npred) for d in range(big_d + 1)],
        "stop_outcome": [
            {o: ratio(sum(1 for p, _, x in preds if tax.depth[p] == d and x == o), npred) for o in ref.OUTCOMES}
            for d in range(big_d + 1)
        ],
        "hierarchical_precision": hp,
        "hierarchical_recall": hr,
        "hierarchical_f1": hf,
        "mistake_severity": ratio(sum(dists), len(dists)),
    }


def naive_nodes(tax, s: Setting, preds, labels, ancestors) -> dict:
    """The per-node report from explicit ancestor sets, one node and one row at a time.
    `preds`: (prediction, label, outcome) of the predicting rows; `labels`: every row's."""
    root = tax.root

    def under(g, v):  # label g is v or below it
        return g != ref.BACKGROUND and (v == root or v in ancestors(g))

    def strictly_above(p, v):  # p is a strict ancestor of v (the root included)
        return p != v and (p == root or p in ancestors(v))

    records = []
    for v in [root, *range(tax.m)]:
        here = [o for p, _, o in preds if p == v]
        c, u, w = (here.count(o) for o in ref.OUTCOMES)
        wrong = {}
        for p, g, o in preds:
            if o == "wrong" and under(g, v):
                wrong[p] = wrong.get(p, 0) + 1
        top = sorted(wrong.items(), key=lambda pk: (-pk[1], pk[0]))[: ref.TOP_WRONG]
        num, den = {"credit": (c + u, c + u + w), "penalize": (c, c + u + w), "exclude": (c, c + w)}[s.policy]
        records.append({
            "id": "" if v == root else tax.ids[v],
            "stops": len(here), "correct": c, "unverifiable": u, "wrong": w,
            "labelled": sum(1 for g in labels if under(g, v)),
            "stopped_above": sum(1 for p, g, _ in preds if under(g, v) and strictly_above(p, v)),
            "precision": None if den == 0 else num / den,
            "top_wrong": [{"node": tax.ids[p], "count": k} for p, k in top],
        })
    return {"root": records[0], "nodes": records[1:]}


# Per-node thresholds on the random taxonomy (its ids n0…, deep1…deep4).
RANDOM_NODE_SETTINGS = [
    Setting("cumulative", "0.5", policy="credit", node_thresholds="n0=0.9,deep2=0.1"),
    Setting("conditional", "0.7,0.5,0.3", 0.3, policy="exclude", use_objectness=True,
            node_thresholds="deep1=0,deep3=0.95,n0=0.2"),
]


def cross_check(tmp: Path) -> list[str]:
    """Vectorised reference vs the naive one on random data, at the demo settings."""
    d = tmp / "random"
    d.mkdir(exist_ok=True)
    data = ref.load(random_dataset(d))
    bad = []
    random_ok = [c[0] for c in TINY_CASES if all(n in data.tax.index for n, _ in c[0].node_pairs())]
    for s in DEMO_SETTINGS + random_ok + RANDOM_NODE_SETTINGS:
        _, met = ref.run(data, s)
        errs = compare(naive_metrics(data, s), met)
        print(f"cross-check (random, D={data.tax.max_depth}) {s.describe()}: {'ok' if not errs else 'MISMATCH'} ({summary(met)})")
        bad += [f"cross-check {s.describe()}: {e}" for e in errs]
    for s in DEMO_SETTINGS[:3] + RANDOM_NODE_SETTINGS:
        errs = compare(naive_metrics(data, s, nodes=True), ref.run_nodes(data, s))
        print(f"cross-check nodes (random) {s.describe()}: {'ok' if not errs else 'MISMATCH'}")
        bad += [f"cross-check nodes {s.describe()}: {e}" for e in errs[:10]]
    return bad


def check_tiny_cli(hedgerow: Path, tmp: Path) -> list[str]:
    """The CLI on the tiny data set against the same hand values."""
    ds = write_tiny(tmp)
    data = ref.load(ds)
    bad = []
    for case in TINY_CASES:
        s = case[0]
        label = f"tiny cli {s.describe()}"
        try:
            got = cli_evaluate(hedgerow, ds, s)
            errs, notes = compare_metrics(tiny_expected(case), got)
            dec, _ = ref.run(data, s)
            errs += compare_extra(data, dec, got)
            derrs, dnotes = compare_decode(data, dec, s.rule, cli_decode(hedgerow, ds, s, tmp))
            errs, notes = errs + derrs, notes + dnotes
            report = cli_nodes(hedgerow, ds, s)
            errs += compare(ref.run_nodes(data, s), report, "nodes")
            errs += node_sums(report, got)
        except CliFailure as e:
            errs, notes, got = [str(e)], [], {}
        print(f"{label}: ok ({summary(got)})" if not errs else f"{label}: MISMATCH ({len(errs)} problem(s))")
        for n in notes:
            print(f"    note: {n}")
        for e in errs:
            print(f"    {e}")
        bad += [f"{label}: {e}" for e in errs]
    return bad


def check_demo(hedgerow: Path, datasets: list[Dataset], tmp: Path) -> list[str]:
    bad = []
    for ds in datasets:
        data = ref.load(ds)
        print(f"data set {ds.name}: {data.logits.shape[0]} rows, {data.tax.m} nodes, D={data.tax.max_depth}, "
              f"{int((data.labels == ref.BACKGROUND).sum())} background, objectness {'yes' if ds.objectness else 'no'}")
        for s in DEMO_SETTINGS + DEMO_NODE_SETTINGS:
            label = f"{s.describe()}"
            if s.use_objectness and ds.objectness is None:
                print(f"{label}: skipped (no objectness in this data set)")
                continue
            dec, want = ref.run(data, s)
            try:
                got = cli_evaluate(hedgerow, ds, s)
                errs, notes = compare_metrics(want, got)
                errs += compare_extra(data, dec, got)
                derrs, dnotes = compare_decode(data, dec, s.rule, cli_decode(hedgerow, ds, s, tmp))
                errs, notes = errs + derrs, notes + dnotes
            except CliFailure as e:
                errs, notes = [str(e)], []
            print(f"{label}: {'ok' if not errs else 'MISMATCH'} ({summary(want)})")
            for n in notes:
                print(f"    note: {n}")
            for e in errs:
                print(f"    {e}")
            bad += [f"{ds.name} {label}: {e}" for e in errs]
        for s in DEMO_REPORT_SETTINGS + DEMO_NODE_SETTINGS:
            label = f"nodes {s.describe()}"
            if s.use_objectness and ds.objectness is None:
                print(f"{label}: skipped (no objectness in this data set)")
                continue
            try:
                got = cli_nodes(hedgerow, ds, s)
                errs = compare(ref.run_nodes(data, s), got)
                errs += node_sums(got, cli_evaluate(hedgerow, ds, s))
            except CliFailure as e:
                errs = [str(e)]
            print(f"{label}: {'ok' if not errs else 'MISMATCH'} ({len(got.get('nodes', []))} nodes)")
            for e in errs[:20]:
                print(f"    {e}")
            bad += [f"{ds.name} {label}: {e}" for e in errs]
    return bad


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description="Compare the hedgerow CLI with the numpy reference.")
    ap.add_argument("--hedgerow", type=Path, help="path to the hedgerow binary")
    ap.add_argument("--data", type=Path, help="demo data directory")
    ap.add_argument("--self-check-only", action="store_true", help="only test reference.py on the hand-made data")
    a = ap.parse_args(argv)
    if not a.self_check_only and (a.hedgerow is None or a.data is None):
        ap.error("--hedgerow and --data are required (or --self-check-only)")
    with tempfile.TemporaryDirectory(prefix="hedgerow-check-") as t:
        tmp = Path(t)
        bad = self_check(tmp) + cross_check(tmp)
        if bad:
            print("\nreference self-check FAILED:")
            for b in bad:
                print(f"  {b}")
            return 1
        if a.self_check_only:
            return 0
        try:
            check_binary(a.hedgerow)
            datasets = find_datasets(a.data)
        except EnvProblem as e:
            print(f"error: {e}", file=sys.stderr)
            return 2
        bad = check_tiny_cli(a.hedgerow, tmp) + check_demo(a.hedgerow, datasets, tmp)
    if bad:
        print(f"\n{len(bad)} mismatch(es):")
        for b in bad:
            print(f"  {b}")
        return 1
    print("\nall CLI checks agree with the reference")
    return 0


if __name__ == "__main__":
    sys.exit(main())
