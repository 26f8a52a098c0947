#!/usr/bin/env python3
"""Reference levels for crates/micrograph from scikit-image's Otsu and multi-level Otsu.

Writes crates/micrograph/tests/data/skimage_thresholds.json with the histograms, the
scikit-image and NumPy versions, and the levels scikit-image returns for them. The Rust test
`tests/skimage_levels.rs` reads the file (CI needs no Python).

Regenerate:  pip install scikit-image  &&  python3 tests/reference/micrograph_fixtures.py

Histograms are passed to scikit-image as `hist=(counts, bin_centers)` with bin centres equal to
the bin index, so the returned thresholds are bin indices: a threshold t puts bins <= t in the
lower class (scikit-image's `image > threshold` convention). Each histogram is trimmed to its
first..last occupied bin before it is given to scikit-image, as scikit-image itself does for
integer images, and the offset is added back.
"""
import json
import os

import numpy as np
import skimage
from skimage.filters import threshold_multiotsu, threshold_otsu

OUT = os.path.join(os.path.dirname(__file__), "..", "..", "crates", "micrograph", "tests", "data",
                   "skimage_thresholds.json")


def mixture(rng, n, parts, lo, hi):
    """Samples of a Gaussian mixture [(weight, mean, sd)], rounded and clipped to lo..hi."""
    out = []
    for w, m, s in parts:
        out.append(rng.normal(m, s, int(n * w)))
    v = np.rint(np.concatenate(out))
    return np.clip(v, lo, hi).astype(np.int64)


def levels_for(counts, classes_list):
    counts = np.asarray(counts, dtype=np.int64)
    nz = np.flatnonzero(counts)
    first, last = int(nz[0]), int(nz[-1])
    c = counts[first:last + 1]
    centers = np.arange(first, last + 1)
    res = {"otsu": int(threshold_otsu(hist=(c, centers)))}
    for k in classes_list:
        res[f"multiotsu_{k}"] = [int(t) for t in threshold_multiotsu(hist=(c, centers), classes=k)]
    return res


def main():
    rng = np.random.default_rng(20261201)
    cases = []
    # 8-bit, two phases of unequal size with a blurred-edge bridge and a few dark void pixels.
    v = np.concatenate([
        mixture(rng, 200_000, [(0.62, 118, 7), (0.33, 176, 8)], 0, 255),
        rng.integers(118, 176, 12_000), mixture(rng, 3_000, [(1.0, 20, 6)], 0, 255)])
    cases.append(("8bit_two_phase_with_voids", np.bincount(v, minlength=256), [3, 4]))
    # 8-bit, three phases.
    v = mixture(rng, 300_000, [(0.5, 70, 9), (0.3, 130, 10), (0.2, 200, 8)], 0, 255)
    cases.append(("8bit_three_phase", np.bincount(v, minlength=256), [3, 4, 5]))
    # 8-bit, four close phases (overlapping peaks).
    v = mixture(rng, 300_000, [(0.4, 60, 12), (0.25, 100, 12), (0.2, 150, 14), (0.15, 190, 10)], 0, 255)
    cases.append(("8bit_four_phase_overlapping", np.bincount(v, minlength=256), [3, 4, 5]))
    # 16-bit binned to 1024 bins (value >> 6).
    v = mixture(rng, 400_000, [(0.55, 24000, 900), (0.35, 36000, 1100), (0.10, 52000, 800)], 0, 65535)
    cases.append(("16bit_binned_1024", np.bincount(v >> 6, minlength=1024), [3, 4]))
    # 16-bit full depth: Otsu only (multi-level on 65536 bins is too slow for scikit-image's
    # exhaustive search).
    v = mixture(rng, 400_000, [(0.7, 30000, 1500), (0.3, 41000, 1200)], 0, 65535)
    cases.append(("16bit_full_depth", np.bincount(v, minlength=65536), []))

    out = {
        "generator": "tests/reference/micrograph_fixtures.py",
        "scikit_image_version": skimage.__version__,
        "numpy_version": np.__version__,
        "convention": "thresholds are bin indices; bins <= t form the lower class",
        "cases": [],
    }
    for name, counts, classes in cases:
        counts = np.asarray(counts, dtype=np.int64)
        nz = np.flatnonzero(counts)
        entry = {
            "name": name,
            "bins": int(len(counts)),
            "sparse_counts": [[int(i), int(counts[i])] for i in nz],
            "skimage": levels_for(counts, classes),
        }
        out["cases"].append(entry)
        print(name, entry["skimage"])
    with open(OUT, "w") as f:
        json.dump(out, f, separators=(",", ":"))
        f.write("\n")
    print("wrote", os.path.normpath(OUT))


if __name__ == "__main__":
    main()
