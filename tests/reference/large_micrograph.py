#!/usr/bin/env python3
"""Writes a large synthetic 16-bit greyscale micrograph as an uncompressed baseline TIFF
(TIFF 6.0, one IFD, strips), for measuring the memory of `consolute segment` by hand:

    python3 tests/reference/large_micrograph.py /tmp/big.tif 20000
    /usr/bin/time -v target/release/consolute segment /tmp/big.tif --json > /dev/null

The picture is invented: diagonal lamellae (grey 42000) in a host (grey 21000), 30 % lamellae
by area, period 50 px, with Gaussian noise (sd 1500 grey levels, seeded) along each row that
the lamellae carry with them. Standard
library only; an 800 MB file for 20000 px takes a few seconds.
"""
import random
import struct
import sys


def main(path, size):
    width = height = size
    period, lamella = 50, 15  # 15 / 50 = 30 % lamellae
    row_len = width + period
    base = bytearray()
    rng = random.Random(1)
    for x in range(row_len):
        v = 42000 if (x % period) < lamella else 21000
        v += int(round(rng.gauss(0.0, 1500.0)))  # noise, repeated along the lamellae
        base += struct.pack("<H", min(max(v, 0), 65535))
    rows_per_strip = 64
    strips = (height + rows_per_strip - 1) // rows_per_strip
    header_len = 8
    entries = 10
    ifd_len = 2 + entries * 12 + 4
    offsets_at = header_len + ifd_len
    counts_at = offsets_at + 4 * strips
    data_at = counts_at + 4 * strips
    counts = [min(rows_per_strip, height - s * rows_per_strip) * width * 2 for s in range(strips)]
    offsets = []
    pos = data_at
    for c in counts:
        offsets.append(pos)
        pos += c
    with open(path, "wb") as f:
        f.write(b"II*\x00" + struct.pack("<I", header_len))
        f.write(struct.pack("<H", entries))

        def entry(tag, typ, count, value):
            f.write(struct.pack("<HHII", tag, typ, count, value))

        entry(256, 4, 1, width)  # ImageWidth
        entry(257, 4, 1, height)  # ImageLength
        entry(258, 3, 1, 16)  # BitsPerSample
        entry(259, 3, 1, 1)  # Compression: none
        entry(262, 3, 1, 1)  # Photometric: black is zero
        entry(273, 4, strips, offsets_at)  # StripOffsets
        entry(277, 3, 1, 1)  # SamplesPerPixel
        entry(278, 4, 1, rows_per_strip)  # RowsPerStrip
        entry(279, 4, strips, counts_at)  # StripByteCounts
        entry(339, 3, 1, 1)  # SampleFormat: unsigned
        f.write(struct.pack("<I", 0))
        f.write(struct.pack("<%dI" % strips, *offsets))
        f.write(struct.pack("<%dI" % strips, *counts))
        for y in range(height):
            shift = (y // 2) % period  # lamellae at about 27 degrees
            f.write(base[2 * shift : 2 * (shift + width)])


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]) if len(sys.argv) > 2 else 20000)
