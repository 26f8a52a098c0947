//! Row-band kernels of the segmentation pipeline.
//!
//! A large image is never copied whole: each pass walks bands of rows in parallel (rayon), works
//! in a few rows of scratch per band, and writes at most the one-byte-per-pixel class map that is
//! the pipeline's output. Classes are computed on the fly from the grey values (a lookup table
//! over the bins), so the first classification (only needed for the core pixels of the pure
//! levels) is never stored. The inner loops are written over whole rows of slices so the
//! compiler can vectorise them (byte compares and adds, 16 or 32 pixels per instruction).

use rayon::prelude::*;

use crate::bootstrap::TileStats;
use crate::histogram::Histogram;
use crate::segment::NOT_MEASURED as NM;

/// Rows per band: about 2^19 pixels, so a band and its scratch rows stay in the L2 cache.
pub(crate) fn band_rows(w: usize, h: usize) -> usize {
    ((1usize << 19) / w.max(1)).clamp(8, h.max(1))
}

/// Where the class of each pixel comes from.
pub(crate) trait ClassSource: Sync {
    /// Writes the classes of rows `y0..y1` (row-major) into `out` (`(y1 - y0) * width` bytes).
    fn fill_rows(&self, y0: usize, y1: usize, out: &mut [u8]);
}

/// Classes read from a stored class map.
pub(crate) struct MapSource<'a> {
    pub map: &'a [u8],
    pub width: usize,
}

impl ClassSource for MapSource<'_> {
    fn fill_rows(&self, y0: usize, y1: usize, out: &mut [u8]) {
        out.copy_from_slice(&self.map[y0 * self.width..y1 * self.width]);
    }
}

/// Classes computed on the fly: `NOT_MEASURED` outside the region, at or below the void level
/// and on the (sorted) rim pixels; otherwise the class of the grey value, counted as the number
/// of class tops below it (vectorised compares; no table lookups).
pub(crate) struct Classifier<'a> {
    pub data: &'a [u16],
    /// None = the whole image.
    pub region: Option<&'a [bool]>,
    pub width: usize,
    /// Smallest measured grey value (void level + 1; 0 without voids).
    pub min_measured: u32,
    /// Largest grey value of each class but the last, non-decreasing (see [`class_tops`]).
    pub tops: &'a [u16],
    /// Rim pixels (indices), sorted ascending.
    pub rim: &'a [usize],
}

impl ClassSource for Classifier<'_> {
    fn fill_rows(&self, y0: usize, y1: usize, out: &mut [u8]) {
        let (a, b) = (y0 * self.width, y1 * self.width);
        let vals = &self.data[a..b];
        match self.tops.split_first() {
            None => out.fill(0),
            Some((&t0, rest)) => {
                for (o, &v) in out.iter_mut().zip(vals) {
                    *o = u8::from(v > t0);
                }
                for &t in rest {
                    for (o, &v) in out.iter_mut().zip(vals) {
                        *o += u8::from(v > t);
                    }
                }
            }
        }
        let min = self.min_measured;
        match self.region {
            Some(region) => {
                for ((o, &v), &r) in out.iter_mut().zip(vals).zip(&region[a..b]) {
                    *o = if r & (u32::from(v) >= min) { *o } else { NM };
                }
            }
            None if min > 0 => {
                for (o, &v) in out.iter_mut().zip(vals) {
                    *o = if u32::from(v) >= min { *o } else { NM };
                }
            }
            None => {}
        }
        let lo = self.rim.partition_point(|&i| i < a);
        let hi = self.rim.partition_point(|&i| i < b);
        for &i in &self.rim[lo..hi] {
            out[i - a] = NM;
        }
    }
}

/// The largest grey value of each class but the last for `levels` on `hist` (a level puts its
/// whole bin in the lower class, see [`Histogram::class_bins`]), made non-decreasing as
/// `class_bins` does; a value's class is the number of tops below it.
pub(crate) fn class_tops(hist: &Histogram, levels: &[u16]) -> Vec<u16> {
    let shift = hist.bin_shift();
    let mut top = 0u16;
    levels
        .iter()
        .map(|&l| {
            let t = ((usize::from(l) >> shift) << shift) + (1usize << shift) - 1;
            top = top.max(t.min(usize::from(u16::MAX)) as u16);
            top
        })
        .collect()
}

/// Lookup table `value >> shift -> class` covering every u16 value (values above the
/// histogram's range take the brightest class): the reference for [`class_tops`].
#[cfg(test)]
pub(crate) fn full_lut(hist: &Histogram, levels: &[u16]) -> Vec<u8> {
    let shift = hist.bin_shift();
    let mut lut = vec![levels.len() as u8; (usize::from(u16::MAX) >> shift) + 1];
    for (c, (lo, hi)) in hist.class_bins(levels).into_iter().enumerate() {
        lut[lo..hi].iter_mut().for_each(|x| *x = c as u8);
    }
    lut
}

/// `out[x] = row[x]` when every pixel of the horizontal window `x - r ..= x + r` (clipped at
/// the row ends) has the same class as `x`, else `NOT_MEASURED`.
fn window_row(row: &[u8], r: usize, out: &mut [u8]) {
    out.copy_from_slice(row);
    let w = row.len();
    for k in 1..=r.min(w.saturating_sub(1)) {
        // Left neighbour at distance k (exists for x >= k).
        for ((o, &c), &l) in out[k..].iter_mut().zip(&row[k..]).zip(&row[..w - k]) {
            *o = if l == c { *o } else { NM };
        }
        // Right neighbour at distance k (exists for x < w - k).
        for ((o, &c), &rr) in out[..w - k].iter_mut().zip(&row[..w - k]).zip(&row[k..]) {
            *o = if rr == c { *o } else { NM };
        }
    }
}

/// Core-pixel counts per class and grey bin: pixels whose `(2d-1) x (2d-1)` window (clipped at
/// the image border) is all of their class (see [`crate::segment::core_histograms`]). Returns
/// `classes * nbins` counts, class-major; `nbins = (max_value >> shift) + 1`.
#[allow(clippy::too_many_arguments)]
pub(crate) fn core_counts(
    src: &dyn ClassSource,
    data: &[u16],
    w: usize,
    h: usize,
    classes: usize,
    d: u8,
    max_value: u16,
    shift: u32,
) -> Vec<u64> {
    let band = band_rows(w, h);
    core_counts_in_bands(src, data, (w, h), classes, d, max_value, shift, band)
}

/// [`core_counts`] with a given band height (tests use small bands to check the seams).
#[allow(clippy::too_many_arguments)]
pub(crate) fn core_counts_in_bands(
    src: &dyn ClassSource,
    data: &[u16],
    (w, h): (usize, usize),
    classes: usize,
    d: u8,
    max_value: u16,
    shift: u32,
    band: usize,
) -> Vec<u64> {
    let nbins = (usize::from(max_value) >> shift) + 1;
    let cap = nbins - 1;
    // Eight dump cells taken in turn, so runs of non-core pixels do not queue on one counter.
    let dump = classes * nbins;
    let table = dump + 8;
    // Counts in u32 (half the cache footprint of u64), moved into the u64 totals before
    // they could overflow; everything not a core of a class lands in one dump cell.
    let flush = |acc: &mut (Vec<u64>, Vec<u32>, u64)| {
        for (t, p) in acc.0.iter_mut().zip(acc.1.iter_mut()) {
            *t += u64::from(*p);
            *p = 0;
        }
        acc.2 = 0;
    };
    let mut acc = fold_core_rows(
        src,
        (w, h),
        d,
        band,
        || (vec![0u64; table], vec![0u32; table], 0u64),
        |acc, y, row| {
            if acc.2 + w as u64 > u64::from(u32::MAX) {
                flush(acc);
            }
            acc.2 += w as u64;
            let vals = &data[y * w..(y + 1) * w];
            let part = &mut acc.1;
            for (x, (&c, &v)) in row.iter().zip(vals).enumerate() {
                let bin = (usize::from(v) >> shift).min(cap);
                let k = if usize::from(c) < classes {
                    usize::from(c) * nbins + bin
                } else {
                    dump + (x & 7)
                };
                part[k] += 1;
            }
        },
        |mut a, mut b| {
            flush(&mut a);
            flush(&mut b);
            a.0.iter_mut().zip(b.0).for_each(|(x, y)| *x += y);
            a
        },
    );
    // The last partial counts (a single band is never merged).
    flush(&mut acc);
    let mut counts = acc.0;
    counts.truncate(classes * nbins);
    counts
}

/// Calls `visit(acc, y, core)` for every row `y`, where `core[x]` is the class of pixel
/// `(x, y)` when its `(2d-1) x (2d-1)` window (clipped at the image border) is all of that
/// class, else `NOT_MEASURED`; bands of `band` rows in parallel, each with its own accumulator
/// from `init`, merged by `merge`.
#[allow(clippy::too_many_arguments)]
pub(crate) fn fold_core_rows<A: Send>(
    src: &dyn ClassSource,
    (w, h): (usize, usize),
    d: u8,
    band: usize,
    init: impl Fn() -> A + Sync + Send,
    visit: impl Fn(&mut A, usize, &[u8]) + Sync + Send,
    merge: impl Fn(A, A) -> A + Sync + Send,
) -> A {
    let band = band.max(1);
    let r = usize::from(d.max(1) - 1);
    (0..h.div_ceil(band))
        .into_par_iter()
        .fold(
            || (init(), Vec::new(), Vec::new(), vec![0u8; w]),
            |(mut acc, mut cls, mut hok, mut row), b| {
                let (y0, y1) = (b * band, ((b + 1) * band).min(h));
                let (ya, yb) = (y0.saturating_sub(r), (y1 + r).min(h));
                cls.resize((yb - ya) * w, 0);
                hok.resize((yb - ya) * w, 0);
                src.fill_rows(ya, yb, &mut cls);
                for (c, o) in cls.chunks(w).zip(hok.chunks_mut(w)) {
                    window_row(c, r, o);
                }
                for y in y0..y1 {
                    let at = |yy: usize| &hok[(yy - ya) * w..(yy - ya + 1) * w];
                    row.copy_from_slice(at(y));
                    for yy in y.saturating_sub(r)..=(y + r).min(h - 1) {
                        if yy != y {
                            for (o, &p) in row.iter_mut().zip(at(yy)) {
                                *o = if p == *o { *o } else { NM };
                            }
                        }
                    }
                    visit(&mut acc, y, &row);
                }
                (acc, cls, hok, row)
            },
        )
        .map(|t| t.0)
        .reduce(&init, merge)
}

/// Per-class pixel counts and grey sums of one row segment, added into `counts` and `sums`
/// (one entry per class; other values count as not measured).
fn segment_stats(cls: &[u8], vals: &[u16], counts: &mut [u64], sums: &mut [u64]) {
    match counts.len() {
        2 => segment_stats_n::<2>(cls, vals, counts, sums),
        3 => segment_stats_n::<3>(cls, vals, counts, sums),
        4 => segment_stats_n::<4>(cls, vals, counts, sums),
        _ => {
            // u32 lanes: 4096 values of at most 65535 cannot overflow.
            for (cc, vv) in cls.chunks(4096).zip(vals.chunks(4096)) {
                for (k, (n_out, s_out)) in counts.iter_mut().zip(sums.iter_mut()).enumerate() {
                    let k = k as u8;
                    let (mut n, mut s) = (0u32, 0u32);
                    for (&c, &v) in cc.iter().zip(vv) {
                        let m = c == k;
                        n += u32::from(m);
                        s += if m { u32::from(v) } else { 0 };
                    }
                    *n_out += u64::from(n);
                    *s_out += u64::from(s);
                }
            }
        }
    }
}

/// [`segment_stats`] for `N` classes in one pass over the segment.
fn segment_stats_n<const N: usize>(cls: &[u8], vals: &[u16], counts: &mut [u64], sums: &mut [u64]) {
    for (cc, vv) in cls.chunks(4096).zip(vals.chunks(4096)) {
        let (mut n, mut s) = ([0u32; N], [0u32; N]);
        for (&c, &v) in cc.iter().zip(vv) {
            for k in 0..N {
                let m = c == k as u8;
                n[k] += u32::from(m);
                s[k] += if m { u32::from(v) } else { 0 };
            }
        }
        for k in 0..N {
            counts[k] += u64::from(n[k]);
            sums[k] += u64::from(s[k]);
        }
    }
}

/// The class map a tile pass reads, or writes first from a class source.
pub(crate) enum TileMap<'a> {
    /// Read the map as it is.
    Read(&'a [u8]),
    /// Write each tile row's classes from the source, then read them.
    Fill(&'a mut [u8], &'a dyn ClassSource),
}

/// Per-tile sums (measured pixels, pixels per class, grey sum) and the grey sum of each class
/// over the image, one tile row per task. With [`TileMap::Fill`] the classification and the
/// statistics are one pass. Classes at or above `classes` count as not measured.
pub(crate) fn tiles_pass(
    map: TileMap<'_>,
    data: &[u16],
    w: usize,
    classes: usize,
    tile_px: usize,
) -> (Vec<TileStats>, Vec<f64>) {
    let t = tile_px.max(1);
    let tx = w.div_ceil(t);
    let stats = |by: usize, chunk: &[u8]| {
        let y0 = by * t;
        let y1 = y0 + chunk.len() / w;
        let mut counts = vec![0u64; tx * classes];
        let mut sums = vec![0u64; tx * classes];
        for (row, vals) in chunk.chunks(w).zip(data[y0 * w..y1 * w].chunks(w)) {
            for (bx, (cs, vs)) in row.chunks(t).zip(vals.chunks(t)).enumerate() {
                let r = bx * classes..(bx + 1) * classes;
                segment_stats(cs, vs, &mut counts[r.clone()], &mut sums[r]);
            }
        }
        (counts, sums)
    };
    let per_tile_row: Vec<(Vec<u64>, Vec<u64>)> = match map {
        TileMap::Read(m) => m
            .par_chunks(t * w)
            .enumerate()
            .map(|(by, chunk)| stats(by, chunk))
            .collect(),
        TileMap::Fill(m, src) => m
            .par_chunks_mut(t * w)
            .enumerate()
            .map(|(by, chunk)| {
                let y0 = by * t;
                src.fill_rows(y0, y0 + chunk.len() / w, chunk);
                stats(by, chunk)
            })
            .collect(),
    };
    let mut class_gray = vec![0f64; classes];
    let mut tiles = Vec::with_capacity(tx * per_tile_row.len());
    for (counts, sums) in per_tile_row {
        for bx in 0..tx {
            let c = &counts[bx * classes..(bx + 1) * classes];
            let s = &sums[bx * classes..(bx + 1) * classes];
            for (g, &v) in class_gray.iter_mut().zip(s) {
                *g += v as f64;
            }
            tiles.push(TileStats {
                measured: c.iter().sum::<u64>() as f64,
                class_area: c.iter().map(|&k| k as f64).collect(),
                gray_sum: s.iter().sum::<u64>() as f64,
            });
        }
    }
    (tiles, class_gray)
}

/// Indices of the rim: region pixels that are not voids (`value <= void_level`) and lie within
/// `rim_px` (Euclidean, pixel centres) of a void pixel (a region pixel at or below the level).
/// Sorted by index. Only rows holding a value at or below the level are scanned pixel by pixel
/// (a row minimum decides).
pub(crate) fn void_rim_indices(
    data: &[u16],
    region: Option<&[bool]>,
    w: usize,
    h: usize,
    void_level: u16,
    rim_px: u8,
) -> Vec<usize> {
    let inside = |i: usize| region.is_none_or(|r| r[i]);
    rim_indices(
        (w, h),
        rim_px,
        |y| {
            data[y * w..(y + 1) * w]
                .iter()
                .fold(u16::MAX, |m, &v| m.min(v))
                <= void_level
        },
        |i| data[i] <= void_level && inside(i),
        |j| inside(j) && data[j] > void_level,
    )
}

/// Indices (sorted) of the pixels within `rim_px` (Euclidean, pixel centres) of a void pixel
/// that `may_be_rim` accepts (in the region and not a void themselves). `row_has_void(y)` may
/// answer true for a row without voids (it only lets rows be skipped).
///
/// Discs are stamped around void pixels with a non-void 4-neighbour (or on the image border),
/// which reaches every pixel within `rim_px` of any void pixel: the same set as a Euclidean
/// dilation of the voids (checked against imageproc's `dilate(.., Norm::L2, ..)` in the tests).
pub(crate) fn rim_indices(
    (w, h): (usize, usize),
    rim_px: u8,
    row_has_void: impl Fn(usize) -> bool + Sync,
    is_void: impl Fn(usize) -> bool + Sync,
    may_be_rim: impl Fn(usize) -> bool + Sync,
) -> Vec<usize> {
    let r = i64::from(rim_px);
    let disc: Vec<(i64, i64)> = (-r..=r)
        .flat_map(|dy| (-r..=r).map(move |dx| (dx, dy)))
        .filter(|&(dx, dy)| (dx, dy) != (0, 0) && dx * dx + dy * dy <= r * r)
        .collect();
    let mut rim: Vec<usize> = (0..h)
        .into_par_iter()
        .with_min_len(16)
        .flat_map_iter(|y| {
            let mut out = Vec::new();
            if !row_has_void(y) {
                return out;
            }
            for x in 0..w {
                let i = y * w + x;
                if !is_void(i) {
                    continue;
                }
                let boundary = x == 0
                    || y == 0
                    || x + 1 == w
                    || y + 1 == h
                    || !is_void(i - 1)
                    || !is_void(i + 1)
                    || !is_void(i - w)
                    || !is_void(i + w);
                if !boundary {
                    continue;
                }
                for &(dx, dy) in &disc {
                    let (xx, yy) = (x as i64 + dx, y as i64 + dy);
                    if xx >= 0 && yy >= 0 && (xx as usize) < w && (yy as usize) < h {
                        let j = yy as usize * w + xx as usize;
                        if may_be_rim(j) {
                            out.push(j);
                        }
                    }
                }
            }
            out
        })
        .collect();
    rim.par_sort_unstable();
    rim.dedup();
    rim
}

const NEIGHBOURS8: [(i64, i64); 8] = [
    (-1, -1),
    (0, -1),
    (1, -1),
    (-1, 0),
    (1, 0),
    (-1, 1),
    (0, 1),
    (1, 1),
];

/// The new class of pixel `i` when its 8-connected feature has fewer than `min_px` pixels
/// (the class most common along the feature's 4-neighbour border, last on ties), else None.
/// `comp` is scratch.
fn small_feature_class(
    src: &[u8],
    w: usize,
    h: usize,
    i: usize,
    min_px: usize,
    classes: usize,
    comp: &mut Vec<usize>,
) -> Option<u8> {
    let c = src[i];
    let neighbours8 = |p: usize| {
        let (x, y) = ((p % w) as i64, (p / w) as i64);
        NEIGHBOURS8.into_iter().filter_map(move |(dx, dy)| {
            let (xx, yy) = (x + dx, y + dy);
            (xx >= 0 && yy >= 0 && (xx as usize) < w && (yy as usize) < h)
                .then(|| yy as usize * w + xx as usize)
        })
    };
    comp.clear();
    comp.push(i);
    let mut k = 0;
    while k < comp.len() && comp.len() < min_px {
        let p = comp[k];
        for j in neighbours8(p) {
            if src[j] == c && !comp.contains(&j) {
                comp.push(j);
                if comp.len() >= min_px {
                    break;
                }
            }
        }
        k += 1;
    }
    if comp.len() >= min_px {
        return None;
    }
    let mut votes = [0u32; 16];
    for &p in comp.iter() {
        let (x, y) = (p % w, p / w);
        let mut vote = |j: usize| {
            if src[j] != c && src[j] != NM {
                votes[usize::from(src[j]).min(15)] += 1;
            }
        };
        if x > 0 {
            vote(p - 1);
        }
        if x + 1 < w {
            vote(p + 1);
        }
        if y > 0 {
            vote(p - w);
        }
        if y + 1 < h {
            vote(p + w);
        }
    }
    let (best, n) = votes[..classes.min(16)].iter().enumerate().fold(
        (0usize, 0u32),
        // Last maximum on ties, as `Iterator::max_by_key` in the labelled path.
        |acc, (k, &n)| if n > 0 && n >= acc.1 { (k, n) } else { acc },
    );
    (n > 0).then_some(best as u8)
}

/// Changes `(index, new class)` that merge 8-connected features smaller than `min_px`
/// (`2..=9`) into their surroundings, by a bounded search (see
/// [`crate::segment::remove_small_features`]).
///
/// A pixel with at least `min_px - 1` same-class 8-neighbours is in a large feature; those
/// counts are taken for a whole row at once (eight shifted byte compares, vectorised), and only
/// the few pixels that fail the test are searched.
pub(crate) fn small_feature_changes_bounded(
    src: &[u8],
    w: usize,
    h: usize,
    min_px: usize,
    classes: usize,
) -> Vec<(usize, u8)> {
    let need = min_px.saturating_sub(1) as u8;
    let interior = w >= 3 && h >= 3;
    (0..h)
        .into_par_iter()
        .with_min_len(32)
        .fold(
            || (Vec::new(), vec![0u8; w], Vec::with_capacity(min_px)),
            |(mut out, mut n, mut comp), y| {
                let mut check = |x: usize, out: &mut Vec<(usize, u8)>| {
                    let i = y * w + x;
                    if src[i] == NM {
                        return;
                    }
                    if let Some(c) = small_feature_class(src, w, h, i, min_px, classes, &mut comp) {
                        out.push((i, c));
                    }
                };
                if !interior || y == 0 || y + 1 == h {
                    for x in 0..w {
                        check(x, &mut out);
                    }
                    return (out, n, comp);
                }
                let up = &src[(y - 1) * w..y * w];
                let mid = &src[y * w..(y + 1) * w];
                let dn = &src[(y + 1) * w..(y + 2) * w];
                // All eight neighbours in one pass (slices of one length, so the loop has no
                // bounds checks and vectorises).
                let m = w - 2;
                let (c0, counts) = (&mid[1..w - 1], &mut n[1..w - 1]);
                let (u0, u1, u2) = (&up[..m], &up[1..m + 1], &up[2..m + 2]);
                let (m0, m2) = (&mid[..m], &mid[2..m + 2]);
                let (d0, d1, d2) = (&dn[..m], &dn[1..m + 1], &dn[2..m + 2]);
                for i in 0..m {
                    let c = c0[i];
                    counts[i] = u8::from(u0[i] == c)
                        + u8::from(u1[i] == c)
                        + u8::from(u2[i] == c)
                        + u8::from(m0[i] == c)
                        + u8::from(m2[i] == c)
                        + u8::from(d0[i] == c)
                        + u8::from(d1[i] == c)
                        + u8::from(d2[i] == c);
                }
                check(0, &mut out);
                for (ci, chunk) in counts.chunks(64).enumerate() {
                    if chunk.iter().fold(u8::MAX, |m, &v| m.min(v)) >= need {
                        continue;
                    }
                    for (k, &cnt) in chunk.iter().enumerate() {
                        if cnt < need {
                            check(1 + ci * 64 + k, &mut out);
                        }
                    }
                }
                check(w - 1, &mut out);
                (out, n, comp)
            },
        )
        .map(|t| t.0)
        .reduce(Vec::new, |mut a, mut b| {
            a.append(&mut b);
            a
        })
}

/// Disjoint-set forest with path halving (Tarjan 1975, "Efficiency of a good but not linear
/// set union algorithm", J. ACM 22(2):215-225).
struct DisjointSets(Vec<u32>);

impl DisjointSets {
    fn find(&mut self, mut a: u32) -> u32 {
        while self.0[a as usize] != a {
            let p = self.0[self.0[a as usize] as usize];
            self.0[a as usize] = p;
            a = p;
        }
        a
    }

    fn union(&mut self, a: u32, b: u32) {
        let (ra, rb) = (self.find(a), self.find(b));
        if ra != rb {
            // Smaller root index wins, so roots are stable in scan order.
            let (lo, hi) = if ra < rb { (ra, rb) } else { (rb, ra) };
            self.0[hi as usize] = lo;
        }
    }
}

/// One run of equal classes in a row: `[start, end)` in the row.
#[derive(Clone, Copy)]
struct Run {
    start: u32,
    end: u32,
    class: u8,
}

/// Changes `(index, new class)` that merge 8-connected features smaller than `min_px` into the
/// class most common along their 4-neighbour border (last on ties), for any `min_px`.
///
/// Labelling by runs: each row is cut into runs of equal class; runs of one class in adjacent
/// rows whose spans overlap or touch diagonally are joined in a disjoint-set forest (the
/// run-based two-pass labelling of Rosenfeld & Pfaltz 1966, with union-find as in He, Chao &
/// Suzuki 2008, "A run-based two-scan labeling algorithm", IEEE Trans. Image Processing
/// 17(5):749-756). Memory is per run, not per pixel.
pub(crate) fn small_feature_changes_runs(
    src: &[u8],
    w: usize,
    h: usize,
    min_px: u32,
    classes: usize,
) -> Vec<(usize, u8)> {
    // Runs of every row (rows in parallel), then row starts.
    let row_runs: Vec<Vec<Run>> = src
        .par_chunks(w)
        .map(|row| {
            let mut runs = Vec::new();
            let mut a = 0;
            while a < w {
                let c = row[a];
                let mut b = a + 1;
                while b < w && row[b] == c {
                    b += 1;
                }
                if c != NM {
                    runs.push(Run {
                        start: a as u32,
                        end: b as u32,
                        class: c,
                    });
                }
                a = b;
            }
            runs
        })
        .collect();
    let mut first = Vec::with_capacity(h + 1);
    first.push(0usize);
    for r in &row_runs {
        first.push(first.last().copied().unwrap_or(0) + r.len());
    }
    let runs: Vec<Run> = row_runs.into_iter().flatten().collect();
    let mut sets = DisjointSets((0..runs.len() as u32).collect());
    for y in 1..h {
        let (prev, cur) = (first[y - 1]..first[y], first[y]..first[y + 1]);
        let mut p = prev.start;
        for k in cur {
            let r = runs[k];
            // Runs above that touch [start - 1, end] (8-connectivity).
            while p < prev.end && runs[p].end < r.start {
                p += 1;
            }
            let mut q = p;
            while q < prev.end && runs[q].start <= r.end {
                if runs[q].class == r.class {
                    sets.union(k as u32, q as u32);
                }
                q += 1;
            }
        }
    }
    let mut size = vec![0u64; runs.len()];
    for (k, r) in runs.iter().enumerate() {
        let root = sets.find(k as u32) as usize;
        size[root] += u64::from(r.end - r.start);
    }
    // Votes of small features: 4-neighbours of another measured class.
    let mut small_index = vec![u32::MAX; runs.len()];
    let mut votes: Vec<[u32; 16]> = Vec::new();
    let mut owners = Vec::new();
    for (y, span) in first.windows(2).enumerate() {
        for (k, &r) in runs.iter().enumerate().take(span[1]).skip(span[0]) {
            let root = sets.find(k as u32) as usize;
            if size[root] >= u64::from(min_px) {
                continue;
            }
            if small_index[root] == u32::MAX {
                small_index[root] = votes.len() as u32;
                votes.push([0; 16]);
            }
            let si = small_index[root] as usize;
            owners.push((y, k, si));
            let v = &mut votes[si];
            let mut vote = |j: usize| {
                let c = src[j];
                if c != r.class && c != NM {
                    v[usize::from(c).min(15)] += 1;
                }
            };
            let (a, b) = (r.start as usize, r.end as usize);
            if a > 0 {
                vote(y * w + a - 1);
            }
            if b < w {
                vote(y * w + b);
            }
            for x in a..b {
                if y > 0 {
                    vote((y - 1) * w + x);
                }
                if y + 1 < h {
                    vote((y + 1) * w + x);
                }
            }
        }
    }
    let new_class: Vec<Option<u8>> = votes
        .iter()
        .map(|v| {
            let (best, n) =
                v[..classes.min(16)]
                    .iter()
                    .enumerate()
                    .fold((0usize, 0u32), |acc, (c, &n)| {
                        if n > 0 && n >= acc.1 { (c, n) } else { acc }
                    });
            (n > 0).then_some(best as u8)
        })
        .collect();
    let mut out = Vec::new();
    for (y, k, si) in owners {
        if let Some(c) = new_class[si] {
            let r = runs[k];
            out.extend((r.start as usize..r.end as usize).map(|x| (y * w + x, c)));
        }
    }
    out
}
