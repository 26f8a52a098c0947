#!/usr/bin/env python3
"""Side-by-side speed and peak memory: `consolute segment` versus the same job in scikit-image.

Usage (from the repository root, after `cargo build --release --bin consolute`):

    pip install scikit-image tifffile
    python3 tests/reference/micrograph_speed.py [--size 8192] [--consolute target/release/consolute]

The image is the seeded synthetic micrograph of `crates/micrograph/examples/synthetic_image.rs`
(16-bit TIFF, lamellae, blur, noise, gradient, a crack and a pore), written once and read by
both tools. Each job runs in its own child process; wall time and peak resident memory
(ru_maxrss of that child) are measured around it, and the ratios printed.

The scikit-image job, step for step what `consolute segment` does (whole region, no flattening):
read the TIFF; voids = pixels at or below the void level consolute reported (consolute finds
small voids with a dark-tail test on the histogram that scikit-image has no function for; a
3-class multi-Otsu, used when consolute reports no void level, would split a phase instead of
finding a few thousand void pixels), dilated by a disc of radius 2;
2-class Otsu on the measured pixels; classification; labelling (8-connected, per class) and
merging of features under 4 px into the neighbouring class; fractions by counting.
scikit-image's `threshold_multiotsu` uses its default 256 bins (its exhaustive search is
impractical on 65536 bins); consolute works on the full 16-bit histogram. consolute also
computes a block bootstrap, threshold sensitivity and the unmixing estimate, which the
scikit-image job leaves out: the comparison favours scikit-image.
"""
import argparse
import json
import os
import subprocess
import sys
import time

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))


def skimage_job(path, void_level):
    import numpy as np
    import tifffile
    from skimage.filters import threshold_multiotsu, threshold_otsu
    from skimage.measure import label
    from skimage.morphology import binary_dilation, disk

    t0 = time.perf_counter()
    img = tifffile.imread(path)
    region = np.ones(img.shape, dtype=bool)
    if void_level is None:
        vals = img[region]
        void_level = threshold_multiotsu(vals, classes=3)[0]
        del vals
    voids = region & (img <= void_level)
    measured = region & ~binary_dilation(voids, disk(2))
    del voids
    level = threshold_otsu(img[measured])
    cls = (img > level).astype(np.uint8)
    cls[~measured] = 255
    # Labelling, 8-connected, per class value; merge features under 4 px into the other class.
    for c in (0, 1):
        lab = label(cls == c, connectivity=2)
        sizes = np.bincount(lab.ravel())
        small = sizes < 4
        small[0] = False
        cls[small[lab]] = 1 - c
        del lab
    counts = np.bincount(cls[measured], minlength=2)[:2]
    fr = counts / counts.sum()
    t1 = time.perf_counter()
    print(json.dumps({"seconds_in_job": t1 - t0, "fractions": fr.tolist(),
                      "excluded_fraction": 1 - measured.mean(), "level": int(level)}))


def measure(cmd):
    """Runs cmd in a child of a fresh Python; returns (wall seconds, peak RSS MiB, stdout)."""
    wrapper = (
        "import resource, subprocess, sys, time\n"
        "t = time.perf_counter()\n"
        "p = subprocess.run(sys.argv[1:], capture_output=True, text=True)\n"
        "dt = time.perf_counter() - t\n"
        "sys.stderr.write(p.stderr)\n"
        "print(dt, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)\n"
        "print(p.stdout)\n"
        "sys.exit(p.returncode)\n"
    )
    out = subprocess.run([sys.executable, "-c", wrapper] + cmd, capture_output=True, text=True)
    if out.returncode != 0:
        raise SystemExit(f"failed: {' '.join(cmd)}\n{out.stderr}")
    first, rest = out.stdout.split("\n", 1)
    dt, rss_kib = first.split()
    return float(dt), int(rss_kib) / 1024.0, rest


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--size", type=int, default=8192)
    ap.add_argument("--consolute", default=os.path.join(ROOT, "target", "release", "consolute"))
    ap.add_argument("--image", default=None)
    ap.add_argument("--skimage-job", default=None, help=argparse.SUPPRESS)
    ap.add_argument("--void-level", type=int, default=None, help=argparse.SUPPRESS)
    a = ap.parse_args()
    if a.skimage_job:
        skimage_job(a.skimage_job, a.void_level)
        return
    import skimage
    image = a.image or os.path.join("/tmp", f"consolute_synthetic_{a.size}.tif")
    if not os.path.exists(image):
        subprocess.run(["cargo", "run", "--release", "-q", "-p", "micrograph", "--example",
                        "synthetic_image", "--", image, str(a.size), "16"], check=True, cwd=ROOT)
    rust_t, rust_mb, rust_out = measure([a.consolute, "segment", image, "--json"])
    rust = json.loads(rust_out)
    sk_cmd = [sys.executable, os.path.abspath(__file__), "--skimage-job", image]
    if rust.get("void_level") is not None:
        sk_cmd += ["--void-level", str(rust["void_level"])]
    sk_t, sk_mb, sk_out = measure(sk_cmd)
    sk = json.loads(sk_out)
    print(f"image: {image} ({a.size} x {a.size}, 16-bit); scikit-image {skimage.__version__}")
    print(f"consolute segment : {rust_t:8.2f} s wall, peak {rust_mb:8.0f} MiB, "
          f"fractions {[round(p['area_fraction'], 4) for p in rust['phases']]}, "
          f"excluded {rust['excluded_fraction']:.4f}")
    print(f"scikit-image job  : {sk_t:8.2f} s wall ({sk['seconds_in_job']:.2f} s after imports), "
          f"peak {sk_mb:8.0f} MiB, fractions {[round(f, 4) for f in sk['fractions']]}, "
          f"excluded {sk['excluded_fraction']:.4f}")
    print(f"speed ratio (scikit-image wall / consolute wall): {sk_t / rust_t:6.2f}")
    print(f"speed ratio (scikit-image job only / consolute wall): {sk['seconds_in_job'] / rust_t:6.2f}")
    print(f"memory ratio (consolute peak / scikit-image peak): {rust_mb / sk_mb:6.2f}")


if __name__ == "__main__":
    main()
