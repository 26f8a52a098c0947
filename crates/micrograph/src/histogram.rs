//! Grey-level histograms of a region, with prefix sums so that class counts and means for any
//! set of levels come out in O(number of classes), with no pass over the pixels.

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::error::{MicrographError, Result};
use crate::load::GrayPlane;

/// Histogram of grey values at full depth (`bin_shift = 0`) or binned: bin `b` holds the values
/// `v` with `v >> bin_shift == b`. Levels elsewhere in this crate are grey values, never bins.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Histogram {
    counts: Vec<u64>,
    bin_shift: u32,
    max_value: u16,
    #[serde(skip)]
    cum_count: Vec<u64>,
    #[serde(skip)]
    cum_sum: Vec<f64>,
}

impl Histogram {
    /// Builds a histogram from counts per bin.
    pub fn from_counts(counts: Vec<u64>, bin_shift: u32, max_value: u16) -> Result<Self> {
        let expected = (usize::from(max_value) >> bin_shift) + 1;
        if bin_shift > 15 || counts.len() != expected {
            return Err(MicrographError::Mismatch(format!(
                "histogram of values 0..={max_value} with bin shift {bin_shift} needs {expected} bins, got {}",
                counts.len()
            )));
        }
        let mut h = Self {
            counts,
            bin_shift,
            max_value,
            cum_count: Vec::new(),
            cum_sum: Vec::new(),
        };
        h.rebuild_prefix();
        Ok(h)
    }

    fn rebuild_prefix(&mut self) {
        let n = self.counts.len();
        self.cum_count = Vec::with_capacity(n + 1);
        self.cum_sum = Vec::with_capacity(n + 1);
        let (mut c, mut s) = (0u64, 0f64);
        self.cum_count.push(0);
        self.cum_sum.push(0.0);
        for (b, &k) in self.counts.iter().enumerate() {
            c += k;
            s += k as f64 * self.bin_value(b);
            self.cum_count.push(c);
            self.cum_sum.push(s);
        }
    }

    /// Histogram of the pixels of `plane` where `mask` is true (all pixels when `mask` is None).
    /// Parallel over rows.
    pub fn of_region(plane: &GrayPlane, mask: Option<&[bool]>, bin_shift: u32) -> Result<Self> {
        if bin_shift > 15 {
            return Err(MicrographError::InvalidParameter {
                name: "bin_shift",
                value: bin_shift.to_string(),
                expected: "0..=15".to_string(),
            });
        }
        if let Some(m) = mask
            && m.len() != plane.data.len()
        {
            {
                return Err(MicrographError::Mismatch(format!(
                    "mask has {} pixels, image {}",
                    m.len(),
                    plane.data.len()
                )));
            }
        }
        let nbins = (usize::from(plane.max_value) >> bin_shift) + 1;
        let cap = nbins - 1;
        // Chunks of 2^20 pixels counted in u32 (half the cache footprint of u64), then added
        // into the u64 totals of their thread.
        let chunk = 1 << 20;
        let counts = plane
            .data
            .par_chunks(chunk)
            .enumerate()
            .fold(
                || (vec![0u64; nbins], vec![0u32; nbins]),
                |(mut acc, mut part), (ci, vals)| {
                    match mask {
                        Some(m) => {
                            let ms = &m[ci * chunk..ci * chunk + vals.len()];
                            for (&v, &keep) in vals.iter().zip(ms) {
                                part[(usize::from(v) >> bin_shift).min(cap)] += u32::from(keep);
                            }
                        }
                        None => {
                            for &v in vals {
                                part[(usize::from(v) >> bin_shift).min(cap)] += 1;
                            }
                        }
                    }
                    for (a, p) in acc.iter_mut().zip(part.iter_mut()) {
                        *a += u64::from(*p);
                        *p = 0;
                    }
                    (acc, part)
                },
            )
            .map(|t| t.0)
            .reduce(
                || vec![0u64; nbins],
                |mut a, b| {
                    for (x, y) in a.iter_mut().zip(b) {
                        *x += y;
                    }
                    a
                },
            );
        Self::from_counts(counts, bin_shift, plane.max_value)
    }

    /// Histogram of the pixels whose class-map entry is not `NOT_MEASURED` (no extra mask).
    pub fn of_class_map(plane: &GrayPlane, class_map: &[u8], bin_shift: u32) -> Result<Self> {
        if class_map.len() != plane.data.len() || bin_shift > 15 {
            return Err(MicrographError::Mismatch(format!(
                "class map has {} pixels, image {} (bin shift {bin_shift})",
                class_map.len(),
                plane.data.len()
            )));
        }
        let nbins = (usize::from(plane.max_value) >> bin_shift) + 1;
        let chunk = 1 << 16;
        let counts = plane
            .data
            .par_chunks(chunk)
            .zip(class_map.par_chunks(chunk))
            .fold(
                || vec![0u64; nbins],
                |mut acc, (vals, cls)| {
                    for (&v, &c) in vals.iter().zip(cls) {
                        if c != crate::segment::NOT_MEASURED {
                            acc[usize::from(v.min(plane.max_value)) >> bin_shift] += 1;
                        }
                    }
                    acc
                },
            )
            .reduce(
                || vec![0u64; nbins],
                |mut a, b| {
                    for (x, y) in a.iter_mut().zip(b) {
                        *x += y;
                    }
                    a
                },
            );
        Self::from_counts(counts, bin_shift, plane.max_value)
    }

    /// Counts per bin.
    pub fn counts(&self) -> &[u64] {
        &self.counts
    }

    /// Number of bins.
    pub fn len(&self) -> usize {
        self.counts.len()
    }

    /// True when there are no bins (never for a valid histogram).
    pub fn is_empty(&self) -> bool {
        self.counts.is_empty()
    }

    /// Bin shift (0 = full depth).
    pub fn bin_shift(&self) -> u32 {
        self.bin_shift
    }

    /// Largest grey value of the image type (255 or 65535).
    pub fn max_value(&self) -> u16 {
        self.max_value
    }

    /// Total number of pixels counted.
    pub fn total(&self) -> u64 {
        self.cum_count.last().copied().unwrap_or(0)
    }

    /// The grey value a bin stands for: its centre (the value itself at full depth).
    pub fn bin_value(&self, bin: usize) -> f64 {
        let lo = (bin << self.bin_shift) as f64;
        let width = (1u64 << self.bin_shift) as f64;
        lo + (width - 1.0) / 2.0
    }

    /// The bin holding grey value `value`.
    pub fn bin_of(&self, value: u16) -> usize {
        usize::from(value) >> self.bin_shift
    }

    /// The level (grey value) that puts bins `0..=bin` in the lower class: the bin's top value.
    pub fn level_of_bin(&self, bin: usize) -> u16 {
        let top = ((bin + 1) << self.bin_shift) - 1;
        top.min(usize::from(self.max_value)) as u16
    }

    /// Pixel count and sum of bin values over bins `lo..hi` (half-open).
    pub fn range_count_sum(&self, lo: usize, hi: usize) -> (u64, f64) {
        (
            self.cum_count[hi] - self.cum_count[lo],
            self.cum_sum[hi] - self.cum_sum[lo],
        )
    }

    /// Bin ranges `[lo, hi)` of the classes cut by `levels` (grey values, increasing): class `k`
    /// holds values `levels[k-1] < v <= levels[k]`.
    pub fn class_bins(&self, levels: &[u16]) -> Vec<(usize, usize)> {
        let mut out = Vec::with_capacity(levels.len() + 1);
        let mut lo = 0;
        for &l in levels {
            let hi = (self.bin_of(l) + 1).max(lo);
            out.push((lo, hi));
            lo = hi;
        }
        out.push((lo, self.counts.len()));
        out
    }

    /// Pixel count and mean grey per class for `levels`, in O(classes).
    pub fn class_stats(&self, levels: &[u16]) -> Vec<ClassStats> {
        self.class_bins(levels)
            .into_iter()
            .map(|(lo, hi)| {
                let (n, s) = self.range_count_sum(lo, hi);
                ClassStats {
                    pixels: n,
                    mean_gray: if n > 0 { Some(s / n as f64) } else { None },
                }
            })
            .collect()
    }

    /// Mean grey of all counted pixels (None when empty).
    pub fn mean(&self) -> Option<f64> {
        let n = self.total();
        (n > 0).then(|| self.cum_sum[self.counts.len()] / n as f64)
    }

    /// The value below which `q` (0..1) of the pixels lie, at bin resolution.
    pub fn quantile(&self, q: f64) -> Option<f64> {
        let n = self.total();
        if n == 0 {
            return None;
        }
        let target = (q.clamp(0.0, 1.0) * n as f64).ceil().max(1.0) as u64;
        let bin = self.cum_count[1..].partition_point(|&c| c < target);
        Some(self.bin_value(bin.min(self.counts.len() - 1)))
    }
}

/// Count and mean of one class.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ClassStats {
    /// Pixels in the class.
    pub pixels: u64,
    /// Mean grey value (None for an empty class).
    pub mean_gray: Option<f64>,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn class_stats_match_direct_count() {
        // Source: definition (counts and means by direct summation over the pixels).
        let data: Vec<u16> = (0..1000u32).map(|i| ((i * 37) % 256) as u16).collect();
        let plane = GrayPlane::new(100, 10, data.clone(), 255).unwrap();
        let h = Histogram::of_region(&plane, None, 0).unwrap();
        let stats = h.class_stats(&[100, 180]);
        let direct: Vec<u64> = [(0, 100), (101, 180), (181, 255)]
            .iter()
            .map(|&(a, b)| data.iter().filter(|&&v| v >= a && v <= b).count() as u64)
            .collect();
        assert_eq!(
            stats.iter().map(|s| s.pixels).collect::<Vec<_>>(),
            direct,
            "exact integer counts"
        );
        let mean0 = data
            .iter()
            .filter(|&&v| v <= 100)
            .map(|&v| f64::from(v))
            .sum::<f64>()
            / direct[0] as f64;
        assert!(
            (stats[0].mean_gray.unwrap() - mean0).abs() < 1e-9,
            "exact up to rounding"
        );
    }
}
