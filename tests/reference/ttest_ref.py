"""Reference t-tests from scipy.stats.ttest_1samp and scipy.stats.ttest_rel.

Usage: ttest_ref.py IN.json OUT.json
IN:  {"cases": [{"kind": "1samp" | "rel", "x": [float, ...], "y": [float, ...] (rel only),
                 "alternative": "greater" | "two-sided", "alpha": float}, ...]}
OUT: {"results": [{"t": float, "p": float, "df": float,
                   "ci_low": float, "ci_high": float}, ...]}
The interval is always the two-sided (1 - alpha) t interval for the mean (of x - y for
"rel"); non-finite numbers are written as null.
"""

import json
import math
import sys

import numpy as np
from scipy import stats


def finite(x: float):
    x = float(x)
    return x if math.isfinite(x) else None


def run(case: dict):
    x = np.asarray(case["x"], dtype=float)
    alt = case["alternative"]
    if case["kind"] == "1samp":
        res = stats.ttest_1samp(x, 0.0, alternative=alt)
        two = stats.ttest_1samp(x, 0.0, alternative="two-sided")
    else:
        y = np.asarray(case["y"], dtype=float)
        res = stats.ttest_rel(x, y, alternative=alt)
        two = stats.ttest_rel(x, y, alternative="two-sided")
    ci = two.confidence_interval(confidence_level=1.0 - case["alpha"])
    return {
        "t": finite(res.statistic),
        "p": finite(res.pvalue),
        "df": finite(res.df),
        "ci_low": finite(ci.low),
        "ci_high": finite(ci.high),
    }


def main() -> None:
    with open(sys.argv[1], encoding="utf-8") as f:
        cases = json.load(f)["cases"]
    with open(sys.argv[2], "w", encoding="utf-8") as f:
        json.dump({"results": [run(c) for c in cases]}, f)


if __name__ == "__main__":
    main()
