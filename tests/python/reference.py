"""Independent numpy reference of hedgerow's decode and metrics.

This file re-implements, from the written contract only (not from the Rust
code), what `hedgerow decode` and `hedgerow evaluate --json` compute, so that
check_cli.py and check_hiclass.py can compare the CLI against it.

Contract summary (the numbers in brackets are the steps in `decode`):

  [1] Sibling groups: every parent (the implicit root included) groups its
      children in ascending column order.  p(child | parent) is the softmax
      over the group of logit / T_d (d = depth of the children), computed in
      float64 as exp(z - max z) / sum exp(z - max z).  A single child gets
      probability exactly 1.
  [2] Greedy path: from the root, the child with the highest float64
      conditional (ties: the lowest column, i.e. the first hit of np.argmax),
      down to a leaf.
  [3] The conditionals on the path are rounded to float32 (the engine stores
      them as f32); everything after that is float64 on those values.
  [4] P(root) = float32(objectness) if given, else 1.0;  P_d = P_{d-1} * c_d,
      multiplied left to right.
  [5] Row predicts iff P(root) >= t_0 (only with objectness).  Rule
      "cumulative": step into c_d iff P_d >= t_d;  rule "conditional": iff
      c_d >= t_d.  Descent stops at the first failing depth; prediction is
      c_s, s = steps taken (s = 0 -> the root, "an object of unknown type").
      A per-node threshold (`--node-threshold ID=V`) replaces t_d for the
      step into that node, under either rule.

Per-node report (`hedgerow nodes --json`), for every node v and the root:
  stops / correct / unverifiable / wrong: predictions whose node is v, by
  outcome; labelled: labelled rows whose label is v or below it; stopped_above:
  of those, the predicting rows whose prediction is a strict ancestor of v
  (the root included); precision of v's stops under the policy with its
  Wilson score 95 % interval (checked against scipy.stats.binomtest(k, n)
  .proportion_ci(method="wilson")); top_wrong: the 3 most frequent wrong
  predictions among rows labelled at or below v (ties: lower column first).

Metric sources:
  * information gain IG(v) = 1 - ln|leaves(v)| / ln|leaves(root)|:
    Deng, Krause, Berg & Fei-Fei, "Hedging your bets: optimizing
    accuracy-specificity trade-offs in large scale visual recognition",
    CVPR 2012.
  * hierarchical precision / recall / F1 (micro, ancestor sets without the
    root): Kiritchenko, Matwin, Nock & Famili, "Learning and evaluation in
    the presence of class hierarchies: application to text categorization",
    Canadian AI 2006.
  * mistake severity = tree distance between prediction and label
    (depth(p) + depth(g) - 2 depth(lca)): Dekel, Keshet & Singer, "Large
    margin hierarchical classification", ICML 2004.

Representation used below: nodes are column indices 0..M-1; the implicit root
is the extra index M (`tax.root`); a background label is -1 (`BACKGROUND`).

Usable as a library or on the command line, mirroring the CLI's flags:

    python reference.py evaluate --taxonomy T --logits L --labels Y \
        [--objectness O --object-threshold X] --thresholds 0.9,0.7 \
        [--rule conditional] [--temperatures 1,1.5] [--unverifiable credit] \
        [--node-threshold ID=V ...]
    python reference.py decode ... --out preds.csv
    python reference.py nodes ...
"""

from __future__ import annotations

import argparse
import csv
import json
import math
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

BACKGROUND = -1
RULES = ("cumulative", "conditional")
POLICIES = ("credit", "penalize", "exclude")
OUTCOMES = ("correct", "unverifiable", "wrong")


# --------------------------------------------------------------------------
# Inputs


@dataclass
class Taxonomy:
    ids: list[str]  # node id of column k
    names: list[str]
    parent: np.ndarray  # [M] parent column, or root (= M) for top-level nodes
    depth: np.ndarray  # [M+1] depth; depth[root] = 0
    children: dict[int, np.ndarray]  # parent (root included) -> columns, ascending
    index: dict[str, int]  # node id -> column
    n_leaves: np.ndarray  # [M+1] number of leaves under each node (root last)
    anc_at: np.ndarray  # [M+1, D+1] ancestor at depth d (-2 below the node's own depth)

    @property
    def m(self) -> int:
        return len(self.ids)

    @property
    def root(self) -> int:
        return len(self.ids)

    @property
    def max_depth(self) -> int:
        return int(self.depth.max())

    def is_leaf(self, v: int) -> bool:
        return v not in self.children

    def path(self, v: int) -> list[int]:
        """Columns from depth 1 down to v (empty for the root)."""
        return [int(a) for a in self.anc_at[v, 1 : int(self.depth[v]) + 1]]

    def node_id(self, v: int) -> str:
        """Node id of v, "" for the root."""
        return "" if v == self.root else self.ids[v]


def load_taxonomy(path: str | Path) -> Taxonomy:
    """Parse `id,parent,name` rows (any order; empty parent = top-level)."""
    with open(path, newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    if not rows:
        raise ValueError(f"{path}: no taxonomy rows")
    for col in ("id", "parent"):
        if col not in rows[0]:
            raise ValueError(f"{path}: missing column {col!r}")
    ids = [r["id"].strip() for r in rows]
    names = [(r.get("name") or "").strip() for r in rows]
    index: dict[str, int] = {}
    for k, i in enumerate(ids):
        if not i:
            raise ValueError(f"{path}: empty id in data row {k}")
        if i in index:
            raise ValueError(f"{path}: duplicate id {i!r}")
        index[i] = k
    m = len(ids)
    root = m
    parent = np.empty(m, dtype=np.int64)
    for k, r in enumerate(rows):
        p = (r["parent"] or "").strip()
        if p == "":
            parent[k] = root
        elif p in index:
            parent[k] = index[p]
        else:
            raise ValueError(f"{path}: node {ids[k]!r} has unknown parent {p!r}")

    # Depths by walking up (rows may come in any order); detects cycles.
    depth = np.full(m + 1, -1, dtype=np.int64)
    depth[root] = 0
    for k in range(m):
        chain = []
        v = k
        while depth[v] < 0:
            if v in chain:
                raise ValueError(f"{path}: cycle through {ids[v]!r}")
            chain.append(v)
            v = int(parent[v])
        for u in reversed(chain):
            depth[u] = depth[parent[u]] + 1
    big_d = int(depth.max())

    children_lists: dict[int, list[int]] = {}
    for k in range(m):  # ascending column order within every group
        children_lists.setdefault(int(parent[k]), []).append(k)
    children = {p: np.array(c, dtype=np.int64) for p, c in children_lists.items()}

    # Leaf counts, deepest nodes first.
    n_leaves = np.zeros(m + 1, dtype=np.int64)
    for k in sorted(range(m), key=lambda v: -depth[v]):
        if k not in children:
            n_leaves[k] = 1
        n_leaves[parent[k]] += n_leaves[k]

    anc_at = np.full((m + 1, big_d + 1), -2, dtype=np.int64)
    anc_at[:, 0] = root
    for k in range(m):
        v = k
        while v != root:
            anc_at[k, depth[v]] = v
            v = int(parent[v])

    return Taxonomy(ids, names, parent, depth, children, index, n_leaves, anc_at)


def load_logits(path: str | Path) -> np.ndarray:
    """[N, M] float16/32/64 -> float64."""
    a = np.load(path, allow_pickle=False)
    if a.ndim != 2 or a.dtype not in (np.float16, np.float32, np.float64):
        raise ValueError(f"{path}: expected a 2-D float array, got {a.dtype} {a.shape}")
    return a.astype(np.float64)


def load_objectness(path: str | Path) -> np.ndarray:
    """[N] -> float32 (the engine's storage) -> float64."""
    a = np.load(path, allow_pickle=False)
    if a.ndim != 1:
        raise ValueError(f"{path}: expected a 1-D array, got shape {a.shape}")
    return a.astype(np.float32).astype(np.float64)


def load_labels(path: str | Path, tax: Taxonomy) -> np.ndarray:
    """`label` column: node id -> column, empty -> BACKGROUND."""
    with open(path, newline="", encoding="utf-8") as f:
        reader = csv.DictReader(f)
        if reader.fieldnames is None or "label" not in reader.fieldnames:
            raise ValueError(f"{path}: missing column 'label'")
        out = []
        for r in reader:
            g = (r["label"] or "").strip()
            if g == "":
                out.append(BACKGROUND)
            elif g in tax.index:
                out.append(tax.index[g])
            else:
                raise ValueError(f"{path}: unknown label {g!r}")
    return np.array(out, dtype=np.int64)


def expand(values, d: int, default: float | None = None) -> np.ndarray:
    """Per-depth list t_1..t_D from a shorter list (repeat the last value)."""
    if values is None or len(values) == 0:
        if default is None:
            raise ValueError("a per-depth list is required")
        values = [default]
    vals = [float(x) for x in values]
    return np.array([vals[min(i, len(vals) - 1)] for i in range(d)], dtype=np.float64)


def parse_list(text: str | None) -> list[float] | None:
    if text is None:
        return None
    return [float(x) for x in text.split(",") if x.strip() != ""]


# --------------------------------------------------------------------------
# Decode


def conditional_probabilities(tax: Taxonomy, logits: np.ndarray, temperatures) -> np.ndarray:
    """[N, M] float64 p(column | its parent), one softmax per sibling group. [1]"""
    n, m = logits.shape
    if m != tax.m:
        raise ValueError(f"logits have {m} columns, taxonomy has {tax.m} nodes")
    temps = expand(temperatures, tax.max_depth, default=1.0)
    cond = np.empty((n, m), dtype=np.float64)
    for _parent, cols in tax.children.items():
        if len(cols) == 1:
            cond[:, cols[0]] = 1.0
            continue
        t = temps[tax.depth[cols[0]] - 1]
        z = logits[:, cols] / t
        e = np.exp(z - z.max(axis=1, keepdims=True))
        # Sum left to right in column order, like a plain loop would.  (np.exp
        # and the engine's exp may still differ in the last ulp: only a value
        # within an ulp of a threshold or of a tie could decode differently.)
        s = e[:, 0].copy()
        for j in range(1, e.shape[1]):
            s = s + e[:, j]
        cond[:, cols] = e / s[:, None]
    return cond


@dataclass
class Decoded:
    path: np.ndarray  # [N, D] greedy path columns, -1 past the leaf
    length: np.ndarray  # [N] L = depth of the leaf reached
    c: np.ndarray  # [N, D] f32-rounded conditionals on the path (nan past the leaf)
    p_root: np.ndarray  # [N]
    cum: np.ndarray  # [N, D+1] P_0..P_D (nan past the leaf)
    predicts: np.ndarray  # [N] bool (False = abstained)
    steps: np.ndarray  # [N] s
    pred: np.ndarray  # [N] predicted column, tax.root for s = 0 (also set for abstaining rows)
    probability: np.ndarray  # [N] P_s, cumulative probability of the stopping node


def decode(
    tax: Taxonomy,
    logits: np.ndarray,
    *,
    rule: str = "cumulative",
    thresholds,
    objectness: np.ndarray | None = None,
    object_threshold: float | None = None,
    temperatures=None,
    node_thresholds: dict[int, float] | None = None,
) -> Decoded:
    if rule not in RULES:
        raise ValueError(f"unknown rule {rule!r}")
    n = logits.shape[0]
    big_d = tax.max_depth
    root = tax.root
    cond = conditional_probabilities(tax, logits, temperatures)

    # [2] greedy path, one argmax per (depth, parent) over the rows sitting there.
    path = np.full((n, big_d), -1, dtype=np.int64)
    cur = np.full(n, root, dtype=np.int64)
    for d in range(1, big_d + 1):
        for p in np.unique(cur):
            cols = tax.children.get(int(p))
            if cols is None:  # a leaf: this row's path has ended
                continue
            rows = np.nonzero(cur == p)[0]
            k = np.argmax(cond[np.ix_(rows, cols)], axis=1)  # first max = lowest column
            path[rows, d - 1] = cols[k]
            cur[rows] = cols[k]
    length = (path >= 0).sum(axis=1)

    # [3] conditionals on the path, rounded to float32.
    on_path = path >= 0
    c = np.full((n, big_d), np.nan)
    r_idx, d_idx = np.nonzero(on_path)
    c[r_idx, d_idx] = cond[r_idx, path[r_idx, d_idx]].astype(np.float32).astype(np.float64)

    # [4] P(root) and cumulative products, left to right.
    if objectness is not None:
        if objectness.shape != (n,):
            raise ValueError(f"objectness has shape {objectness.shape}, expected ({n},)")
        p_root = objectness.astype(np.float32).astype(np.float64)
    else:
        p_root = np.ones(n)
    cum = np.full((n, big_d + 1), np.nan)
    cum[:, 0] = p_root
    for d in range(1, big_d + 1):
        cum[:, d] = cum[:, d - 1] * c[:, d - 1]

    # [5] thresholds and the descent.
    t = expand(thresholds, big_d)
    if objectness is not None:
        if object_threshold is None:
            raise ValueError("objectness given without an object threshold")
        predicts = p_root >= float(object_threshold)
    else:
        predicts = np.ones(n, dtype=bool)
    score = cum[:, 1:] if rule == "cumulative" else c
    # Threshold of each step: the override of the node stepped into, else t_d.
    own = np.full(tax.m + 1, np.nan)
    for v, value in (node_thresholds or {}).items():
        own[v] = float(value)
    own_on_path = np.where(on_path, own[np.where(on_path, path, tax.root)], np.nan)
    step_t = np.where(np.isnan(own_on_path), t[None, :], own_on_path)
    with np.errstate(invalid="ignore"):
        passes = (score >= step_t) & on_path  # nan (past the leaf) never passes
    steps = np.cumprod(passes, axis=1).sum(axis=1)
    pred = np.where(steps > 0, path[np.arange(n), np.maximum(steps - 1, 0)], root)
    probability = cum[np.arange(n), steps]
    return Decoded(path, length, c, p_root, cum, predicts, steps, pred, probability)


# --------------------------------------------------------------------------
# Outcomes and metrics


def lca_depth(tax: Taxonomy, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Depth of the lowest common ancestor, elementwise (root allowed)."""
    a, b = tax.anc_at[u], tax.anc_at[v]
    same = (a == b) & (a != -2)  # prefix-closed in a tree; depth 0 always agrees
    return same.sum(axis=1) - 1


def outcomes(tax: Taxonomy, dec: Decoded, labels: np.ndarray) -> np.ndarray:
    """Per row: correct / unverifiable / wrong / abstained / rejected."""
    n = len(labels)
    if dec.pred.shape[0] != n:
        raise ValueError(f"{n} labels for {dec.pred.shape[0]} logit rows")
    bg = labels == BACKGROUND
    g = np.where(bg, tax.root, labels)  # placeholder for background rows
    lca = lca_depth(tax, dec.pred, g)
    dp, dg = tax.depth[dec.pred], tax.depth[g]
    out = np.full(n, "wrong", dtype=object)
    out[lca == dp] = "correct"  # prediction is g or an ancestor of g (root included)
    out[(lca == dg) & (dp > dg)] = "unverifiable"  # strictly below g
    out[bg] = "wrong"  # background row that predicts: false alarm
    out[~dec.predicts] = "abstained"
    out[~dec.predicts & bg] = "rejected"
    return out


def information_gain(tax: Taxonomy) -> np.ndarray:
    """[M+1] IG(v) = 1 - ln|leaves(v)| / ln|leaves(root)|; IG(root) = 0 (Deng et al. 2012)."""
    total = tax.n_leaves[tax.root]
    if total <= 1:  # degenerate one-leaf taxonomy: ln 1 / ln 1
        ig = np.ones(tax.m + 1)
    else:
        ig = 1.0 - np.log(tax.n_leaves.astype(np.float64)) / math.log(total)
    ig[tax.root] = 0.0
    return ig


def _ratio(num, den):
    return None if den == 0 else float(num) / float(den)


def metrics(tax: Taxonomy, dec: Decoded, labels: np.ndarray, policy: str = "credit") -> dict:
    """The keys of `hedgerow evaluate --json`."""
    if policy not in POLICIES:
        raise ValueError(f"unknown policy {policy!r}")
    out = outcomes(tax, dec, labels)
    n = len(labels)
    big_d = tax.max_depth
    pr = dec.predicts
    npred = int(pr.sum())
    counts = {o: int((out == o).sum()) for o in OUTCOMES}
    correct, unver, wrong = counts["correct"], counts["unverifiable"], counts["wrong"]
    if policy == "credit":
        precision = _ratio(correct + unver, npred)
    elif policy == "penalize":
        precision = _ratio(correct, npred)
    else:
        precision = _ratio(correct, correct + wrong)

    ig = information_gain(tax)[dec.pred]
    specificity = _ratio(ig[pr].sum(), npred)
    reward = _ratio(ig[out == "correct"].sum(), npred)

    stop_depth = tax.depth[dec.pred]
    stop_share = [_ratio(int((pr & (stop_depth == d)).sum()), npred) for d in range(big_d + 1)]
    stop_outcome = [
        {o: _ratio(int(((out == o) & (stop_depth == d)).sum()), npred) for o in OUTCOMES}
        for d in range(big_d + 1)
    ]

    # Hierarchical P/R/F1 (Kiritchenko et al. 2006): ancestor sets without the
    # root.  In a tree |P^ n T^| = depth(lca), |P^| = depth(pred), |T^| = depth(g).
    lab = labels != BACKGROUND
    g = labels[lab]
    p = np.where(pr[lab], dec.pred[lab], tax.root)  # abstaining row -> empty set
    inter = int(lca_depth(tax, p, g).sum())
    size_p = int(tax.depth[p].sum())
    size_t = int(tax.depth[g].sum())
    hp, hr = _ratio(inter, size_p), _ratio(inter, size_t)
    hf = None if hp is None or hr is None or hp + hr == 0 else 2 * hp * hr / (hp + hr)

    # Mistake severity (Dekel et al. 2004): wrong predictions with a label.
    wl = (out == "wrong") & lab
    if wl.any():
        pw, gw = dec.pred[wl], labels[wl]
        dist = tax.depth[pw] + tax.depth[gw] - 2 * lca_depth(tax, pw, gw)
        severity = float(dist.mean())
    else:
        severity = None

    return {
        "rows": n,
        "predictions": npred,
        "abstained": n - npred,
        "correct": correct,
        "unverifiable": unver,
        "wrong": wrong,
        "precision": precision,
        "specificity": specificity,
        "reward": reward,
        "stop_share": stop_share,
        "stop_outcome": stop_outcome,
        "hierarchical_precision": hp,
        "hierarchical_recall": hr,
        "hierarchical_f1": hf,
        "mistake_severity": severity,
    }


# --------------------------------------------------------------------------
# Per-node report

TOP_WRONG = 3


def wilson(k: int, n: int, z: float = 1.959963984540054):
    """Wilson score interval (Wilson 1927; Newcombe 1998, method 3) for k of n,
    z = scipy.stats.norm.ppf(0.975).  None for n = 0."""
    if n == 0:
        return None
    z2 = z * z
    centre = (k + z2 / 2) / (n + z2)
    half = z * math.sqrt(k * (n - k) / n + z2 / 4) / (n + z2)
    return max(centre - half, 0.0), min(centre + half, 1.0)


def precision_counts(policy: str, c: int, u: int, w: int) -> tuple[int, int]:
    """(successes, trials) behind precision under a policy."""
    return {"credit": (c + u, c + u + w), "penalize": (c, c + u + w), "exclude": (c, c + w)}[policy]


def node_report(tax: Taxonomy, dec: Decoded, labels: np.ndarray, policy: str = "credit",
                node_thresholds: dict[int, float] | None = None,
                thresholds=None, object_threshold: float | None = None) -> dict:
    """`hedgerow nodes --json` without the CLI's echo of the settings: per node
    (and the root) the counts described in the module docstring.  Vectorised
    over rows, one node at a time."""
    out = outcomes(tax, dec, labels)
    pr = dec.predicts
    lab = labels != BACKGROUND
    g = np.where(lab, labels, tax.root)
    t = expand(thresholds, tax.max_depth) if thresholds is not None else None
    records = []
    for v in [tax.root, *range(tax.m)]:
        dv = int(tax.depth[v])
        stop_here = pr & (dec.pred == v)
        c, u, w = (int((stop_here & (out == o)).sum()) for o in OUTCOMES)
        under = lab & (tax.anc_at[g, dv] == v)  # label is v or below it
        dp = tax.depth[dec.pred]
        pred_above = (dp < dv) & (tax.anc_at[v, np.minimum(dp, dv)] == dec.pred)
        wrong_under = under & pr & (out == "wrong")
        preds, counts = np.unique(dec.pred[wrong_under], return_counts=True)
        order = sorted(zip(preds.tolist(), counts.tolist()), key=lambda pc: (-pc[1], pc[0]))
        k, n = precision_counts(policy, c, u, w)
        interval = wilson(k, n)
        if v == tax.root:
            threshold = object_threshold
        elif node_thresholds and v in node_thresholds:
            threshold = float(node_thresholds[v])
        else:
            threshold = None if t is None else float(t[dv - 1])
        rec = {
            "id": tax.node_id(v),
            "name": "" if v == tax.root else tax.names[v],
            "depth": dv,
            "overridden": bool(node_thresholds) and v in node_thresholds,
            "stops": c + u + w,
            "correct": c,
            "unverifiable": u,
            "wrong": w,
            "labelled": int(under.sum()),
            "stopped_above": int((under & pr & pred_above).sum()),
            "precision": None if n == 0 else k / n,
            "precision_low": None if interval is None else interval[0],
            "precision_high": None if interval is None else interval[1],
            "top_wrong": [{"node": tax.ids[p], "count": int(k_)} for p, k_ in order[:TOP_WRONG]],
        }
        if threshold is not None:
            rec["threshold"] = threshold
        records.append(rec)
    return {"rows": len(labels), "predictions": int(pr.sum()), "root": records[0], "nodes": records[1:]}


# --------------------------------------------------------------------------
# Convenience: everything from file paths and CLI-style settings


@dataclass
class Setting:
    rule: str = "cumulative"
    thresholds: str = "0.5"
    object_threshold: float | None = None  # only used with objectness
    temperatures: str | None = None
    policy: str = "credit"
    use_objectness: bool = False
    node_thresholds: str | None = None  # "id=v,id=v" (ids without commas)

    def describe(self) -> str:
        s = f"{self.rule} t={self.thresholds}"
        s += f" obj={self.object_threshold}" if self.use_objectness else " no-obj"
        if self.temperatures:
            s += f" T={self.temperatures}"
        if self.node_thresholds:
            s += f" nodes={self.node_thresholds}"
        return s + f" {self.policy}"

    def node_pairs(self) -> list[tuple[str, float]]:
        if not self.node_thresholds:
            return []
        pairs = []
        for part in self.node_thresholds.split(","):
            node, value = part.rsplit("=", 1)
            pairs.append((node.strip(), float(value)))
        return pairs

    def cli_args(self) -> list[str]:
        """Setting flags for `hedgerow evaluate|decode` (input flags not included)."""
        a = ["--rule", self.rule, "--thresholds", self.thresholds, "--unverifiable", self.policy]
        if self.use_objectness:
            a += ["--object-threshold", repr(float(self.object_threshold))]
        if self.temperatures:
            a += ["--temperatures", self.temperatures]
        for node, value in self.node_pairs():
            a += ["--node-threshold", f"{node}={value!r}"]
        return a


@dataclass
class Dataset:
    taxonomy: Path
    logits: Path
    labels: Path
    objectness: Path | None = None
    name: str = ""

    def cli_args(self, with_objectness: bool) -> list[str]:
        a = ["--taxonomy", str(self.taxonomy), "--logits", str(self.logits), "--labels", str(self.labels)]
        if with_objectness:
            if self.objectness is None:
                raise ValueError("this data set has no objectness")
            a += ["--objectness", str(self.objectness)]
        return a


@dataclass
class Loaded:
    tax: Taxonomy
    logits: np.ndarray
    labels: np.ndarray
    objectness: np.ndarray | None


def load(ds: Dataset) -> Loaded:
    tax = load_taxonomy(ds.taxonomy)
    logits = load_logits(ds.logits)
    labels = load_labels(ds.labels, tax)
    obj = load_objectness(ds.objectness) if ds.objectness else None
    if logits.shape[0] != labels.shape[0]:
        raise ValueError(f"{logits.shape[0]} logit rows but {labels.shape[0]} labels")
    return Loaded(tax, logits, labels, obj)


def node_thresholds(tax: Taxonomy, s: Setting) -> dict[int, float]:
    """The setting's per-node overrides by column (a later one for the same node wins)."""
    out = {}
    for node, value in s.node_pairs():
        if node not in tax.index:
            raise ValueError(f"node threshold for unknown id {node!r}")
        out[tax.index[node]] = value
    return out


def run(data: Loaded, s: Setting) -> tuple[Decoded, dict]:
    dec = decode(
        data.tax,
        data.logits,
        rule=s.rule,
        thresholds=parse_list(s.thresholds),
        objectness=data.objectness if s.use_objectness else None,
        object_threshold=s.object_threshold if s.use_objectness else None,
        temperatures=parse_list(s.temperatures),
        node_thresholds=node_thresholds(data.tax, s),
    )
    return dec, metrics(data.tax, dec, data.labels, s.policy)


def run_nodes(data: Loaded, s: Setting) -> dict:
    """The per-node report at a setting."""
    dec, _ = run(data, s)
    return node_report(
        data.tax, dec, data.labels, s.policy, node_thresholds(data.tax, s),
        parse_list(s.thresholds), s.object_threshold if s.use_objectness else None,
    )


def decode_rows(data: Loaded, dec: Decoded, rule: str = "cumulative") -> list[dict]:
    """Rows as `hedgerow decode --out` writes them (row numbering from 0).

    `probability` (not defined by the contract) is taken as the score the
    rule compared at the stopping node: P_s (cumulative) or c_s
    (conditional), and P(root) for a root prediction or an abstaining row.
    node_d / conditional_d / cumulative_d are the greedy path, its f32
    conditionals and P_d, d = 1..D (empty past the leaf).
    """
    tax = data.tax
    out = outcomes(tax, dec, data.labels)
    rows = []
    for i in range(len(data.labels)):
        g = int(data.labels[i])
        s = int(dec.steps[i])
        if not dec.predicts[i] or s == 0:
            prob = float(dec.p_root[i])
        elif rule == "conditional":
            prob = float(dec.c[i, s - 1])
        else:
            prob = float(dec.cum[i, s])
        row = {
            "row": i,
            "label": "" if g == BACKGROUND else tax.ids[g],
            "predicted": "" if not dec.predicts[i] else tax.node_id(int(dec.pred[i])),
            "depth": int(tax.depth[dec.pred[i]]) if dec.predicts[i] else 0,
            "probability": prob,
            "outcome": out[i],
        }
        for d in range(1, tax.max_depth + 1):
            on = d <= dec.length[i]
            row[f"node_{d}"] = tax.ids[int(dec.path[i, d - 1])] if on else ""
            row[f"conditional_{d}"] = float(dec.c[i, d - 1]) if on else None
            row[f"cumulative_{d}"] = float(dec.cum[i, d]) if on else None
        rows.append(row)
    return rows


def extra_metrics(tax: Taxonomy, dec: Decoded, labels: np.ndarray) -> dict:
    """Keys the CLI prints beyond the contract's list, whose meaning is plain;
    checked only when the CLI prints them."""
    out = outcomes(tax, dec, labels)
    bg = labels == BACKGROUND
    stop_depth = tax.depth[dec.pred]
    return {
        "labelled_rows": int((~bg).sum()),
        "background_rows": int(bg.sum()),
        "false_alarms": int((bg & dec.predicts).sum()),
        "stop_count": [
            {o: int(((out == o) & (stop_depth == d)).sum()) for o in OUTCOMES} for d in range(tax.max_depth + 1)
        ],
    }


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("command", choices=["evaluate", "decode", "nodes"])
    ap.add_argument("--taxonomy", required=True)
    ap.add_argument("--logits", required=True)
    ap.add_argument("--labels", required=True)
    ap.add_argument("--objectness")
    ap.add_argument("--rule", default="cumulative", choices=RULES)
    ap.add_argument("--thresholds", required=True)
    ap.add_argument("--object-threshold", type=float)
    ap.add_argument("--temperatures")
    ap.add_argument("--unverifiable", default="credit", choices=POLICIES)
    ap.add_argument("--node-threshold", action="append", default=[], metavar="ID=V")
    ap.add_argument("--json", action="store_true", help="accepted for symmetry; output is always JSON")
    ap.add_argument("--out")
    a = ap.parse_args(argv)
    ds = Dataset(Path(a.taxonomy), Path(a.logits), Path(a.labels), Path(a.objectness) if a.objectness else None)
    s = Setting(a.rule, a.thresholds, a.object_threshold, a.temperatures, a.unverifiable, a.objectness is not None,
                ",".join(a.node_threshold) or None)
    data = load(ds)
    dec, met = run(data, s)
    if a.command == "evaluate":
        print(json.dumps(met, indent=2))
    elif a.command == "nodes":
        print(json.dumps(run_nodes(data, s), indent=2))
    else:
        rows = decode_rows(data, dec, s.rule)
        f = open(a.out, "w", newline="") if a.out else sys.stdout
        w = csv.DictWriter(f, fieldnames=list(rows[0].keys()) if rows else ["row"])
        w.writeheader()
        w.writerows(rows)
        if a.out:
            f.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
