//! Grey levels from a histogram: Otsu's method (two classes), multi-level Otsu (N classes) at
//! full 16-bit depth, and the refinement of levels to the midpoints between class modes.
//!
//! A level `t` (a grey value) splits classes as `v <= t` | `v > t`, as in scikit-image's
//! `threshold_otsu` (pixels above the threshold are foreground).

use crate::error::{MicrographError, Result};
use crate::histogram::Histogram;

/// Between-class term `S^2 / W` of the bins `lo..hi` (0 for an empty range).
fn class_term(h: &Histogram, lo: usize, hi: usize) -> f64 {
    let (n, s) = h.range_count_sum(lo, hi);
    if n == 0 { 0.0 } else { s * s / n as f64 }
}

fn require_pixels(h: &Histogram, classes: usize) -> Result<()> {
    let distinct = h.counts().iter().filter(|&&c| c > 0).count();
    if distinct < classes {
        return Err(MicrographError::EmptyRegion {
            reason: format!(
                "the region has {distinct} distinct grey value(s) at this binning; {classes} classes need at least {classes}"
            ),
        });
    }
    Ok(())
}

/// Otsu's level for two classes: the bin that maximises the between-class variance
/// `w0 w1 (mu0 - mu1)^2`, first maximum on ties (as `numpy.argmax`), returned as a grey level.
///
/// Source: Otsu, N. (1979), "A threshold selection method from gray-level histograms",
/// IEEE Trans. Systems, Man, and Cybernetics 9(1):62-66.
pub fn otsu_level(h: &Histogram) -> Result<u16> {
    require_pixels(h, 2)?;
    let n = h.len();
    let (total_n, total_s) = h.range_count_sum(0, n);
    let (total_n, total_s) = (total_n as f64, total_s);
    let mut best = (f64::NEG_INFINITY, 0usize);
    for t in 0..n - 1 {
        let (w0, s0) = h.range_count_sum(0, t + 1);
        let w0 = w0 as f64;
        let w1 = total_n - w0;
        if w0 == 0.0 || w1 == 0.0 {
            continue;
        }
        let mu0 = s0 / w0;
        let mu1 = (total_s - s0) / w1;
        let var = w0 * w1 * (mu0 - mu1) * (mu0 - mu1);
        if var > best.0 {
            best = (var, t);
        }
    }
    Ok(h.level_of_bin(best.1))
}

/// Multi-level Otsu: `classes - 1` levels that maximise the between-class variance, which is
/// equivalent to maximising `sum_k S_k^2 / W_k` over contiguous classes of bins.
///
/// Method: exact dynamic programming over bins, `F_k(j) = max_i F_{k-1}(i) + S(i..j)^2 / W(i..j)`
/// (Liao, Chen & Chung 2001, "A fast algorithm for multilevel thresholding", J. Inf. Sci. Eng.
/// 17(5):713-727, for the criterion and its prefix-sum form; Luessi, Eichmann, Schuster &
/// Katsaggelos 2009, "Framework for efficient optimal multilevel image thresholding",
/// J. Electronic Imaging 18(1):013004, for the dynamic programme). Each layer is solved by
/// divide and conquer over the monotone optimal split, valid because the within-class sum of
/// squares of contiguous 1-D classes satisfies the quadrangle inequality (Grønlund et al. 2017,
/// "Fast exact k-means, k-medians and Bregman divergence clustering in 1D", arXiv:1701.07204).
/// Cost `O(classes * bins * log(bins))`: a full 65536-bin 16-bit histogram takes milliseconds.
pub fn multi_otsu_levels(h: &Histogram, classes: usize) -> Result<Vec<u16>> {
    if !(2..=16).contains(&classes) {
        return Err(MicrographError::InvalidParameter {
            name: "classes",
            value: classes.to_string(),
            expected: "2 to 16".to_string(),
        });
    }
    require_pixels(h, classes)?;
    if classes == 2 {
        return Ok(vec![otsu_level(h)?]);
    }
    Ok(multi_otsu_bins(h, classes)
        .into_iter()
        .map(|b| h.level_of_bin(b))
        .collect())
}

/// The last bin of each of the lower `classes - 1` classes (see [`multi_otsu_levels`]).
fn multi_otsu_bins(h: &Histogram, classes: usize) -> Vec<usize> {
    // Work only between the first and last occupied bins; outside them classes are empty.
    let counts = h.counts();
    let first = counts.iter().position(|&c| c > 0).unwrap_or(0);
    let last = counts.iter().rposition(|&c| c > 0).unwrap_or(0);
    let l = last - first + 1;
    let term = |i: usize, j: usize| class_term(h, first + i, first + j);
    // prev[j]: best value for covering bins 0..j (relative) with k classes.
    let mut prev: Vec<f64> = (0..=l).map(|j| term(0, j)).collect();
    let mut args: Vec<Vec<u32>> = Vec::with_capacity(classes - 1);
    for k in 2..=classes {
        let mut cur = vec![f64::NEG_INFINITY; l + 1];
        let mut arg = vec![0u32; l + 1];
        // j ranges over k..=l (each class at least one bin); split i over k-1..j.
        solve_layer(&prev, &term, (k, l), (k - 1, l - 1), &mut cur, &mut arg);
        args.push(arg);
        prev = cur;
    }
    // Backtrack from (classes, l).
    let mut cuts = Vec::with_capacity(classes - 1);
    let mut j = l;
    for arg in args.iter().rev() {
        let i = arg[j] as usize;
        cuts.push(i);
        j = i;
    }
    cuts.reverse();
    // A cut at i (relative) means the lower class ends at bin first + i - 1.
    cuts.into_iter().map(|i| first + i - 1).collect()
}

/// Divide and conquer over `j` in `js.0..=js.1` with candidate splits in `opt.0..=opt.1`.
fn solve_layer(
    prev: &[f64],
    term: &dyn Fn(usize, usize) -> f64,
    js: (usize, usize),
    opt: (usize, usize),
    cur: &mut [f64],
    arg: &mut [u32],
) {
    if js.0 > js.1 {
        return;
    }
    let mid = (js.0 + js.1) / 2;
    let hi = opt.1.min(mid - 1);
    let mut best = (f64::NEG_INFINITY, opt.0);
    for (i, &p) in prev.iter().enumerate().take(hi.max(opt.0) + 1).skip(opt.0) {
        if i >= mid {
            break;
        }
        let v = p + term(i, mid);
        if v > best.0 {
            best = (v, i);
        }
    }
    cur[mid] = best.0;
    arg[mid] = best.1 as u32;
    if mid > js.0 {
        solve_layer(prev, term, (js.0, mid - 1), (opt.0, best.1), cur, arg);
    }
    if mid < js.1 {
        solve_layer(prev, term, (mid + 1, js.1), (best.1, opt.1), cur, arg);
    }
}

/// Between-class objective `sum_k S_k^2 / W_k` for given last bins of the lower classes.
pub fn between_class_objective(h: &Histogram, last_bins: &[usize]) -> f64 {
    let mut lo = 0;
    let mut total = 0.0;
    for &b in last_bins {
        total += class_term(h, lo, b + 1);
        lo = b + 1;
    }
    total + class_term(h, lo, h.len())
}

/// Moves each level to the midpoint between the modes of the two classes it separates.
///
/// With symmetric edge blur, a level half-way between the pure phase grey values puts the
/// classified boundary where the true one is, so area fractions are not biased by blur (a
/// straight edge convolved with a symmetric kernel crosses the mid-grey at the edge position;
/// Gonzalez & Woods, *Digital Image Processing*, 3rd ed. 2008, §10.2 edge models). Otsu's level
/// instead leans toward the smaller class. Each class mode is the peak of the histogram smoothed
/// by a moving average of `smooth_bins` bins on either side, searched inside the class.
pub fn refine_levels_to_mode_midpoints(
    h: &Histogram,
    levels: &[u16],
    smooth_bins: usize,
) -> Vec<u16> {
    let counts = h.counts();
    let n = counts.len();
    // Moving sum via prefix counts, kept inside the class: a window reaching across the level
    // would let the other class's peak decide this class's mode.
    let smoothed = |b: usize, class_lo: usize, class_hi: usize| -> u64 {
        let lo = b.saturating_sub(smooth_bins).max(class_lo);
        let hi = (b + smooth_bins + 1).min(n).min(class_hi);
        h.range_count_sum(lo, hi).0
    };
    // The peak of the smoothed counts; among equal sums (a narrow peak inside every window of
    // a plateau), the bin with the most counts itself, then the lowest.
    let modes: Vec<Option<usize>> = h
        .class_bins(levels)
        .into_iter()
        .map(|(lo, hi)| {
            (lo < hi)
                .then(|| {
                    (lo..hi).max_by_key(|&b| (smoothed(b, lo, hi), counts[b], std::cmp::Reverse(b)))
                })
                .flatten()
        })
        .collect();
    levels
        .iter()
        .enumerate()
        .map(|(k, &l)| match (modes[k], modes[k + 1]) {
            (Some(a), Some(b)) if b > a => {
                let mid = (h.bin_value(a) + h.bin_value(b)) / 2.0;
                // Level = largest grey value at or below the midpoint.
                (mid.floor().clamp(0.0, f64::from(h.max_value()))) as u16
            }
            _ => l,
        })
        .collect()
}

/// The true (unblurred) grey level of the thinner phase of a two-phase image, from the
/// measured histogram and the pure level of the wider phase (`reference`, e.g. the median of
/// its core pixels). Returns `None` when the equations below have no root on the thin side.
///
/// Why: in lamellae only a few blur widths wide, no pixel is far enough from an edge to show
/// the pure grey: the centre of a box of width `W` blurred by a Gaussian of standard deviation
/// `sigma` reaches only `erf(W / (2 sqrt(2) sigma))` of the contrast (0.94 for 4.5 px at
/// 1.2 px), so "core" levels and histogram modes of the thin phase are pulled toward the other
/// phase, and both the mid-level classification and the unmixing over-count it.
///
/// Derivation (two facts about a blurred two-phase image, each cited where used in this
/// module): (1) a normalised blur kernel preserves the mean grey, so with pure levels `g_r`
/// (reference) and `g_t` (thin), the thin fraction is `f = (g_r - mean) / (g_r - g_t)`
/// (linear mixing; Adams, Smith & Johnson 1986); (2) a straight edge blurred by a symmetric
/// kernel crosses the half-way grey `(g_r + g_t) / 2` at the true edge position (Gonzalez &
/// Woods 2008, §10.2), so the fraction of pixels beyond that level, `C((g_r + g_t) / 2)`, is
/// also `f` (exactly for a step; for a box of width `W` the half-way crossing moves inward by
/// `erfc(W / (sqrt(2) sigma)) sqrt(2 pi) sigma / 2`, under `0.01 sigma` once `W > 2.8 sigma`).
/// Both hold only at the true `g_t`, so it solves
/// `F(g_t) = C((g_r + g_t) / 2) - (g_r - mean) / (g_r - g_t) = 0`.
///
/// With contrast `D = |g_r - g_t|`, period `P` and a Gaussian blur, `dC/dD = -sigma sqrt(2 pi)
/// / (P D)` (edge pixels per grey level at the half-way level) and `d(m/D)/dD = -W / (P D)`, so
/// `dF/dD = (W - sqrt(2 pi) sigma) / (P D)`: `F` rises through zero at the true level when the
/// thin phase is wider than `2.5 sigma`, and an error `e` in `C` becomes an error of
/// `e W / (W - 2.5 sigma)` in `f`. `F` is negative near `g_r` (the mean term diverges) and
/// again far beyond the thin phase (`C` falls to 0), so the root is the first crossing from
/// below when `g_t` moves from `g_r` outward; it is found bin by bin and interpolated linearly.
pub fn thin_phase_level(h: &Histogram, reference: f64, thin_is_dark: bool) -> Option<f64> {
    let total = h.total();
    let mean = h.mean()?;
    let m = if thin_is_dark {
        reference - mean
    } else {
        mean - reference
    };
    if m <= 0.0 {
        return None;
    }
    let total = total as f64;
    let max = f64::from(h.max_value());
    // Fraction of the pixels on the thin side of the level for thin level `g`, with the
    // classification rule (`v <= level` is dark, level = floor of the midpoint).
    let f_of = |g: f64| -> f64 {
        let level = ((reference + g) / 2.0).floor().clamp(0.0, max) as u16;
        let (dark, _) = h.range_count_sum(0, h.bin_of(level) + 1);
        let c = if thin_is_dark {
            dark as f64
        } else {
            total - dark as f64
        } / total;
        c - m / (reference - g).abs()
    };
    let rb = h.bin_of(reference.clamp(0.0, max) as u16);
    let bins: Box<dyn Iterator<Item = usize>> = if thin_is_dark {
        Box::new((0..rb).rev())
    } else {
        Box::new(rb + 1..h.len())
    };
    let mut prev: Option<(f64, f64)> = None;
    for b in bins {
        let g = h.bin_value(b);
        let f = f_of(g);
        if f >= 0.0 {
            return match prev {
                Some((gp, fp)) if fp < 0.0 => Some(gp + (g - gp) * (-fp) / (f - fp)),
                _ => None,
            };
        }
        prev = Some((g, f));
    }
    None
}

#[cfg(test)]
pub(crate) fn exhaustive_multi_otsu_bins(h: &Histogram, classes: usize) -> (Vec<usize>, f64) {
    fn rec(
        h: &Histogram,
        start: usize,
        left: usize,
        cur: &mut Vec<usize>,
        best: &mut (Vec<usize>, f64),
    ) {
        if left == 0 {
            let v = between_class_objective(h, cur);
            if v > best.1 {
                *best = (cur.clone(), v);
            }
            return;
        }
        for b in start..h.len() - left {
            cur.push(b);
            rec(h, b + 1, left - 1, cur, best);
            cur.pop();
        }
    }
    let mut best = (Vec::new(), f64::NEG_INFINITY);
    rec(h, 0, classes - 1, &mut Vec::new(), &mut best);
    best
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn hist(counts: Vec<u64>) -> Histogram {
        let max = (counts.len() - 1) as u16;
        Histogram::from_counts(counts, 0, max).unwrap()
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(200))]
        /// Source: the definition of the multi-level Otsu criterion, evaluated by exhaustive
        /// search over every set of levels (the search scikit-image performs); the dynamic
        /// programme must reach the same optimum (relative tolerance 1e-12 for rounding).
        #[test]
        fn dp_reaches_exhaustive_optimum(
            counts in proptest::collection::vec(0u64..50, 6..28),
            classes in 3usize..5,
        ) {
            let h = hist(counts);
            prop_assume!(h.counts().iter().filter(|&&c| c > 0).count() >= classes);
            let dp = multi_otsu_bins(&h, classes);
            let (_, best) = exhaustive_multi_otsu_bins(&h, classes);
            let got = between_class_objective(&h, &dp);
            prop_assert!((got - best).abs() <= 1e-12 * best.abs().max(1.0), "{got} vs {best}");
        }
    }

    #[test]
    fn otsu_matches_imageproc_on_whole_image() {
        // Source: imageproc 0.27 `contrast::otsu_level` (an independent implementation of
        // Otsu 1979) on the same 8-bit image; levels must agree exactly (same criterion, same
        // convention v <= level is background) or within one grey level on ties.
        let data: Vec<u8> = (0..64 * 64u32)
            .map(|i| {
                let x = i % 64;
                let noise = (i.wrapping_mul(2654435761) >> 27) as u8;
                if (x / 8) % 3 == 0 {
                    170 + noise
                } else {
                    80 + noise
                }
            })
            .collect();
        let img = image::GrayImage::from_raw(64, 64, data.clone()).unwrap();
        let theirs = imageproc::contrast::otsu_level(&img);
        let plane =
            crate::load::GrayPlane::new(64, 64, data.iter().map(|&v| u16::from(v)).collect(), 255)
                .unwrap();
        let h = Histogram::of_region(&plane, None, 0).unwrap();
        let ours = otsu_level(&h).unwrap();
        assert!(
            (i32::from(ours) - i32::from(theirs)).abs() <= 1,
            "ours {ours}, imageproc {theirs}"
        );
    }

    #[test]
    fn too_few_values_is_an_error() {
        let h = hist(vec![0, 5, 0, 0]);
        assert!(otsu_level(&h).is_err());
        assert!(multi_otsu_levels(&hist(vec![3, 5, 0, 0]), 3).is_err());
    }
}
