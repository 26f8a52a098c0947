#!/usr/bin/env python3
"""Reference values of the Wilson score interval (95 %) of a binomial proportion, from SciPy.

The point-count estimate of crates/project (src/hand.rs) gives each phase's fraction of the
counted points with Wilson's score interval (Wilson 1927, J. Am. Stat. Assoc. 22:209). This
script asks SciPy's binomtest(k, n).proportion_ci(method="wilson") for the interval at counts
typical of a point count (small and large n, counts at 0 and n) and writes
tests/reference/wilson_scipy_reference.json with the SciPy version. The Rust test
wilson_interval_matches_newcombe_and_scipy reads it. CI does not run this script; the JSON is
committed.

    python3 tests/reference/wilson_scipy_reference.py
"""

import json
import pathlib

import scipy
from scipy.stats import binomtest

CASES = [
    (81, 263),
    (15, 148),
    (0, 20),
    (1, 29),
    (20, 20),
    (37, 120),
    (150, 400),
    (3, 10),
    (512, 1000),
    (1, 1),
]


def main():
    cases = []
    for k, n in CASES:
        ci = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
        cases.append({"successes": k, "trials": n, "low": float(ci.low), "high": float(ci.high)})
    out = {
        "source": "scipy.stats.binomtest(k, n).proportion_ci(confidence_level=0.95, method='wilson')",
        "scipy_version": scipy.__version__,
        "cases": cases,
    }
    path = pathlib.Path(__file__).with_name("wilson_scipy_reference.json")
    path.write_text(json.dumps(out, indent=2) + "\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
