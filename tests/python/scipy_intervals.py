"""Write tests/fixtures/intervals/scipy.csv: scipy's binomial confidence intervals over a grid
of (k, n), which tests/engine/intervals.rs compares with hedgerow_core::stats.

Run from the workspace root with the project's venv (scipy is pinned in requirements.txt):
    .venv/bin/python tests/python/scipy_intervals.py           # check the committed file
    .venv/bin/python tests/python/scipy_intervals.py --write   # write it
`cargo xtask test` runs the check, so the committed values stay scipy's own.
Columns: Wilson 95 % and Clopper-Pearson ("exact") 95 % two-sided intervals from
scipy.stats.binomtest(k, n).proportion_ci(confidence_level=0.95, method=...), and the one-sided
Clopper-Pearson lower bound at 0.9 from binomtest(k, n, alternative="greater")
.proportion_ci(confidence_level=0.9, method="exact").low.
"""

import csv
import io
import pathlib
import sys

import scipy
from scipy.stats import binomtest


def grid():
    for n in (1, 2, 3, 5, 10, 20, 37, 50, 100, 263, 1000, 4321, 10_000, 100_000, 1_000_000):
        ks = {0, 1, 2, n // 10, n // 4, n // 2, (9 * n) // 10, n - 2, n - 1, n}
        if n == 263:
            ks.add(81)
        for k in sorted(k for k in ks if 0 <= k <= n):
            yield k, n


def table():
    f = io.StringIO()
    w = csv.writer(f, lineterminator="\n")
    w.writerow([f"# scipy {scipy.__version__}: tests/python/scipy_intervals.py"])
    w.writerow(["k", "n", "wilson_low", "wilson_high", "cp_low", "cp_high", "cp_lower_90"])
    for k, n in grid():
        t = binomtest(k, n)
        wi = t.proportion_ci(confidence_level=0.95, method="wilson")
        cp = t.proportion_ci(confidence_level=0.95, method="exact")
        lo = binomtest(k, n, alternative="greater").proportion_ci(
            confidence_level=0.9, method="exact"
        )
        w.writerow([k, n] + [repr(float(v)) for v in (wi.low, wi.high, cp.low, cp.high, lo.low)])
    return f.getvalue()


def main():
    out = pathlib.Path(__file__).resolve().parents[1] / "fixtures" / "intervals" / "scipy.csv"
    text = table()
    if "--write" in sys.argv[1:]:
        out.parent.mkdir(parents=True, exist_ok=True)
        out.write_text(text)
        return
    committed = out.read_text()
    if committed != text:
        for i, (a, b) in enumerate(zip(committed.splitlines(), text.splitlines())):
            if a != b:
                sys.exit(f"{out}: line {i + 1} is {a!r}, scipy gives {b!r}")
        sys.exit(f"{out}: {len(committed.splitlines())} lines, scipy gives {len(text.splitlines())}")
    print(f"scipy intervals: {len(text.splitlines()) - 2} (k, n) rows equal scipy {scipy.__version__}'s")


if __name__ == "__main__":
    main()
