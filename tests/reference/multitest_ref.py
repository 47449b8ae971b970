"""Reference adjusted p-values from statsmodels.stats.multitest.multipletests.

Usage: multitest_ref.py IN.json OUT.json
IN:  {"cases": [{"method": "holm" | "bh" | "by" | "bonferroni", "p": [float, ...]}, ...]}
OUT: {"results": [{"p_adj": [float, ...]}, ...]}   (same order as the cases)
"""

import json
import sys

import numpy as np
from statsmodels.stats.multitest import multipletests

METHODS = {"holm": "holm", "bh": "fdr_bh", "by": "fdr_by", "bonferroni": "bonferroni"}


def main() -> None:
    with open(sys.argv[1], encoding="utf-8") as f:
        cases = json.load(f)["cases"]
    results = []
    for case in cases:
        p = np.asarray(case["p"], dtype=float)
        _, p_adj, _, _ = multipletests(p, alpha=0.05, method=METHODS[case["method"]])
        results.append({"p_adj": [float(x) for x in p_adj]})
    with open(sys.argv[2], "w", encoding="utf-8") as f:
        json.dump({"results": results}, f)


if __name__ == "__main__":
    main()
