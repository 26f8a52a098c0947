#!/usr/bin/env python3
"""Small image files for the loading tests of crates/micrograph, with the pixel values that
independent readers (Pillow for PNG, tifffile for TIFF) decode from them.

Writes crates/micrograph/tests/data/load/*.{png,tif} and crates/micrograph/tests/data/load/
expected.json (library versions, then per file its size, kind and every pixel value as the
reference reader returns it). The Rust test `tests/load_fixtures.rs` reads them (CI needs no
Python).

Regenerate:  pip install pillow tifffile numpy  &&  python3 tests/reference/micrograph_load_fixtures.py

The pixel data are seeded patterns of our own (a gradient plus noise), small enough (29 x 19 px)
that edge tiles are padded (tiles are 16 x 16) and that every value can be stored.
"""
import json
import os
import platform

import numpy as np
import PIL
import tifffile
from PIL import Image

OUT = os.path.join(os.path.dirname(__file__), "..", "..", "crates", "micrograph", "tests", "data",
                   "load")
W, H = 29, 19


def grey(rng, maxval):
    y, x = np.mgrid[0:H, 0:W]
    base = (x * 0.6 + y * 0.3) / (W * 0.6 + H * 0.3)
    v = base * maxval * 0.9 + rng.normal(0, maxval * 0.02, (H, W))
    return np.clip(np.rint(v), 0, maxval)


def palette_indices(rng, n):
    y, x = np.mgrid[0:H, 0:W]
    return ((x // 3 + y // 4 + rng.integers(0, 2, (H, W))) % n).astype(np.uint8)


def main():
    os.makedirs(OUT, exist_ok=True)
    rng = np.random.default_rng(20261202)
    files = []

    def add(name, kind, values, note):
        files.append({"file": name, "width": W, "height": H, "kind": kind, "note": note,
                      "values": np.asarray(values).reshape(-1).tolist()})

    # Palette PNG, 8-bit indices, 40 colours; expected RGB as Pillow converts it.
    pal = rng.integers(0, 256, (40, 3)).astype(np.uint8)
    idx = palette_indices(rng, 40)
    im = Image.fromarray(idx, mode="P")
    im.putpalette(pal.reshape(-1).tolist())
    im.save(os.path.join(OUT, "palette8.png"))
    back = np.asarray(Image.open(os.path.join(OUT, "palette8.png")).convert("RGB"))
    add("palette8.png", "rgb8", back, "PNG palette (colour type 3), 8-bit indices; Pillow RGB")

    # Palette PNG, 4-bit indices (11 colours).
    pal4 = rng.integers(0, 256, (11, 3)).astype(np.uint8)
    idx4 = palette_indices(rng, 11)
    im = Image.fromarray(idx4, mode="P")
    im.putpalette(pal4.reshape(-1).tolist())
    im.save(os.path.join(OUT, "palette4.png"), bits=4)
    back = np.asarray(Image.open(os.path.join(OUT, "palette4.png")).convert("RGB"))
    add("palette4.png", "rgb8", back, "PNG palette, 4-bit indices (bits=4); Pillow RGB")

    # 16-bit greyscale TIFF in 16 x 16 tiles, uncompressed.
    g16 = grey(rng, 65535).astype(np.uint16)
    tifffile.imwrite(os.path.join(OUT, "grey16_tiled.tif"), g16, tile=(16, 16),
                     photometric="minisblack")
    add("grey16_tiled.tif", "gray16", tifffile.imread(os.path.join(OUT, "grey16_tiled.tif")),
        "16-bit greyscale, 16 x 16 tiles (edge tiles padded), uncompressed; tifffile")

    # 16-bit greyscale TIFF in tiles, Deflate (zlib) compressed.
    g16z = grey(rng, 65535).astype(np.uint16)
    tifffile.imwrite(os.path.join(OUT, "grey16_tiled_deflate.tif"), g16z, tile=(16, 16),
                     photometric="minisblack", compression="zlib")
    add("grey16_tiled_deflate.tif", "gray16",
        tifffile.imread(os.path.join(OUT, "grey16_tiled_deflate.tif")),
        "16-bit greyscale, 16 x 16 tiles, Deflate; tifffile")

    # 8-bit greyscale TIFF in tiles.
    g8 = grey(rng, 255).astype(np.uint8)
    tifffile.imwrite(os.path.join(OUT, "grey8_tiled.tif"), g8, tile=(16, 16),
                     photometric="minisblack")
    add("grey8_tiled.tif", "gray8", tifffile.imread(os.path.join(OUT, "grey8_tiled.tif")),
        "8-bit greyscale, 16 x 16 tiles; tifffile")

    # 16-bit greyscale TIFF in strips of 4 rows (last strip short), big-endian.
    g16s = grey(rng, 65535).astype(np.uint16)
    tifffile.imwrite(os.path.join(OUT, "grey16_strips_be.tif"), g16s, rowsperstrip=4,
                     photometric="minisblack", byteorder=">")
    add("grey16_strips_be.tif", "gray16",
        tifffile.imread(os.path.join(OUT, "grey16_strips_be.tif")),
        "16-bit greyscale, big-endian, strips of 4 rows; tifffile")

    # Not supported: palette TIFF (8-bit indices, 16-bit colour map). The TIFF decoder the
    # loader uses (Rust tiff crate 0.11) cannot read colour-mapped TIFFs; the loader must say so.
    cmap = rng.integers(0, 65536, (3, 256)).astype(np.uint16)
    pidx = palette_indices(rng, 256)
    tifffile.imwrite(os.path.join(OUT, "palette8.tif"), pidx, photometric="palette",
                     colormap=cmap, rowsperstrip=5)
    files.append({"file": "palette8.tif", "width": W, "height": H, "kind": "refused",
                  "note": "palette TIFF: refused with a message (convert to RGB/grey TIFF or PNG)"})

    # Not supported: signed 16-bit samples (SampleFormat 2); the loader must refuse it clearly.
    s16 = (grey(rng, 20000) - 10000).astype(np.int16)
    tifffile.imwrite(os.path.join(OUT, "signed16.tif"), s16, photometric="minisblack")
    files.append({"file": "signed16.tif", "width": W, "height": H, "kind": "refused",
                  "note": "signed 16-bit greyscale (SampleFormat 2): not a micrograph format we read"})

    out = {
        "generator": "tests/reference/micrograph_load_fixtures.py",
        "python_version": platform.python_version(),
        "pillow_version": PIL.__version__,
        "tifffile_version": tifffile.__version__,
        "numpy_version": np.__version__,
        "values": "row-major; rgb kinds as r, g, b per pixel",
        "files": files,
    }
    with open(os.path.join(OUT, "expected.json"), "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(f"wrote {len(files)} files to {os.path.normpath(OUT)}")


if __name__ == "__main__":
    main()
