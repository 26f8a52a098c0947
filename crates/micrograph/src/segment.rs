//! The segmentation pipeline: voids with rims, grey levels, classification, small-feature
//! clean-up, modal fractions with a block-bootstrap interval, threshold sensitivity, and the
//! blur-insensitive second estimate by linear unmixing.

use image::GrayImage;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::bootstrap::{TileStats, fraction_ci95, statistic_ci95};
use crate::calibration::PixelSize;
use crate::control::Control;
use crate::error::{MicrographError, Result};
use crate::histogram::Histogram;
use crate::load::GrayPlane;
use crate::passes;
use crate::roi::Mask;
use crate::threshold::{multi_otsu_levels, refine_levels_to_mode_midpoints, thin_phase_level};

/// Class value in a class map for pixels that are not measured (outside the region, voids,
/// rims).
pub const NOT_MEASURED: u8 = u8::MAX;

/// How the grey levels between the phases are chosen.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[non_exhaustive]
pub enum LevelChoice {
    /// The user's levels (grey values, increasing; `classes - 1` of them).
    Manual(Vec<u16>),
    /// Otsu (2 classes) or multi-level Otsu on the measured histogram.
    Otsu,
    /// Otsu, then each level moved to the midpoint between the modes of its two classes
    /// (unbiased by symmetric edge blur; see [`refine_levels_to_mode_midpoints`]). With two
    /// phases the level then moves to the half-way point between the pure levels of
    /// [`Unmixing::pure_levels`] (wider phase from its cores, thinner phase solved by
    /// [`thin_phase_level`]), since in thin lamellae blur pulls the thin phase's mode toward
    /// the other phase and a mode midpoint over-counts it.
    OtsuMidpoint,
}

/// How voids (cracks, pores, epoxy) are found.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[non_exhaustive]
pub enum VoidDetection {
    /// No void detection.
    Off,
    /// Multi-level Otsu with one class more than the phases; the darkest class is taken as
    /// voids when the histogram has a real valley at its level (density under a tenth of the
    /// darkest phase's peak, common practice) and it covers less than half of the region.
    Auto,
    /// Pixels at or below this grey value are voids.
    AtOrBelow(u16),
}

/// Settings of [`segment`]. `Default` gives 2 phases, Otsu levels refined to mode midpoints,
/// automatic voids with a 2-pixel rim, features under 4 px removed. Missing fields of a stored
/// settings object take their defaults, so project files written before a field existed still
/// load.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SegmentSettings {
    /// Number of mineral phases N (2..=16).
    pub classes: usize,
    /// Level choice.
    pub levels: LevelChoice,
    /// Histogram binning: bins of `2^bin_shift` grey values (0 = full depth).
    pub bin_shift: u32,
    /// Void detection.
    pub voids: VoidDetection,
    /// Rim excluded around voids, in pixels: as wide as the edge blur.
    pub rim_px: u8,
    /// Connected features (8-connected, per phase) smaller than this are merged into the
    /// surrounding phase. 0 or 1 = off.
    pub min_feature_px: u32,
    /// Tile side for the block bootstrap (None = automatic: image side / 8, 32..=512 px).
    pub tile_px: Option<u32>,
    /// Bootstrap resamples.
    pub bootstrap_resamples: u32,
    /// Seed of the bootstrap.
    pub seed: u64,
    /// Threshold sensitivity step in grey levels (None = 1% of full scale).
    pub sensitivity_step: Option<u16>,
    /// Pixels at least this far (chessboard distance) from any other class are cores for the
    /// pure level of the wider phase (see [`Unmixing::pure_levels`]).
    pub core_distance_px: u8,
    /// Optional opening then closing of the brighter phase of a two-phase map, radius in px
    /// (square structuring element; 0 = off). Opening removes bright specks and thin
    /// protrusions, closing fills thin dark gaps.
    pub open_close_px: u8,
    /// Pixel size for results in µm.
    pub pixel_size: Option<PixelSize>,
}

impl Default for SegmentSettings {
    fn default() -> Self {
        Self {
            classes: 2,
            levels: LevelChoice::OtsuMidpoint,
            bin_shift: 0,
            voids: VoidDetection::Auto,
            rim_px: 2,
            min_feature_px: 4,
            tile_px: None,
            bootstrap_resamples: 1000,
            seed: 0x5EED,
            sensitivity_step: None,
            core_distance_px: 3,
            open_close_px: 0,
            pixel_size: None,
        }
    }
}

/// One mineral phase of the result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PhaseResult {
    /// Label (`phase 1` darkest ...).
    pub label: String,
    /// Pixels classified as this phase (after clean-up).
    pub pixels: u64,
    /// Fraction of the measured area.
    pub area_fraction: f64,
    /// Mean grey of its pixels.
    pub mean_gray: f64,
    /// 95% block-bootstrap interval (None with fewer than 2 tiles).
    pub area_fraction_ci95: Option<[f64; 2]>,
    /// Area in µm² (with a pixel size).
    pub area_um2: Option<f64>,
}

/// Fractions with one level moved down and up by the step.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Sensitivity {
    /// Step in grey levels.
    pub step: u16,
    /// Per level: fractions of every phase with that level at `level - step`.
    pub minus: Vec<Vec<f64>>,
    /// Per level: fractions with that level at `level + step`.
    pub plus: Vec<Vec<f64>>,
    /// Per phase: the largest absolute change of its fraction over all those moves.
    pub max_abs_change: Vec<f64>,
}

/// Second estimate of two-phase fractions by linear unmixing of the mean grey.
///
/// Edge blur redistributes grey but preserves the region's mean, so with pure levels `g_d`
/// (dark) and `g_b` (bright), `f_dark = (g_b - mean) / (g_b - g_d)`. Source: the linear mixing
/// model of area fractions, e.g. Adams, Smith & Johnson (1986), J. Geophys. Res. 91(B8):8098
/// (spectral mixture analysis); for blur, mean preservation by a normalised kernel.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Unmixing {
    /// Pure levels, dark then bright: for the wider phase (the larger share of its pixels in
    /// cores) the median grey of its core pixels; for the thinner phase the level solved by
    /// [`thin_phase_level`] from the histogram (blur leaves no unblurred core in lamellae a few
    /// px wide), or its core median when that has no root (with a warning). The thin level
    /// solves "mean-preserving unmixing = classification at the half-way level", so with the
    /// default level choice the two estimates agree up to the small-feature clean-up and the
    /// bootstrap intervals; their disagreement flags flattening, clean-up or non-Gaussian blur.
    pub pure_levels: [f64; 2],
    /// Core pixels used for each level.
    pub core_pixels: [u64; 2],
    /// Mean grey of the measured pixels.
    pub mean_gray: f64,
    /// Fractions dark, bright.
    pub area_fraction: [f64; 2],
    /// 95% block-bootstrap intervals (pure levels held fixed).
    pub area_fraction_ci95: Option<[[f64; 2]; 2]>,
    /// True when the intervals of the two estimates (classification, unmixing) do not overlap.
    pub disagrees: bool,
}

/// The result of [`segment`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Segmentation {
    /// Image width.
    pub width: u32,
    /// Image height.
    pub height: u32,
    /// Pixels in the region of interest.
    pub region_pixels: u64,
    /// Pixels measured (region minus voids and rims).
    pub measured_pixels: u64,
    /// Voids plus rims as a fraction of the region.
    pub excluded_fraction: f64,
    /// Void level used (None = no voids).
    pub void_level: Option<u16>,
    /// Rim width.
    pub rim_px: u8,
    /// Levels between phases (grey values) actually used.
    pub levels: Vec<u16>,
    /// Otsu levels on the measured histogram, for reference.
    pub otsu_levels: Option<Vec<u16>>,
    /// Phases dark to bright.
    pub phases: Vec<PhaseResult>,
    /// Threshold sensitivity.
    pub sensitivity: Sensitivity,
    /// Linear-unmixing estimate of a greyscale image (two phases only).
    pub unmixing: Option<Unmixing>,
    /// Why there is no unmixing estimate when none could be defined (e.g. three or more phases
    /// in a greyscale image).
    #[serde(default)]
    pub unmixing_note: Option<String>,
    /// Linear-unmixing estimate of a colour image (2 to 4 phases).
    #[serde(default)]
    pub colour_unmixing: Option<crate::colour::ColourUnmixing>,
    /// Bootstrap tile side.
    pub tile_px: u32,
    /// Per-tile sums (for combining micrographs).
    pub tiles: Vec<TileStats>,
    /// Pixel size used.
    pub pixel_size_um: Option<f64>,
    /// Warnings for the user.
    pub warnings: Vec<String>,
    /// Histogram of the measured pixels (drives instant level changes).
    pub histogram: Histogram,
    /// Class per pixel (`NOT_MEASURED` outside), row-major.
    #[serde(skip)]
    pub class_map: Vec<u8>,
}

impl Segmentation {
    /// Fractions of the measured area for other levels, from the histogram alone: O(classes),
    /// no pass over the pixels. Equal to the pixel counts of a new classification before
    /// small-feature clean-up.
    pub fn fractions_at(&self, levels: &[u16]) -> Vec<f64> {
        fractions_from_histogram(&self.histogram, levels)
    }
}

/// Phase fractions for `levels` from a histogram, in O(classes).
pub fn fractions_from_histogram(h: &Histogram, levels: &[u16]) -> Vec<f64> {
    let total = h.total().max(1) as f64;
    h.class_stats(levels)
        .iter()
        .map(|s| s.pixels as f64 / total)
        .collect()
}

/// Fractions with each level moved by `-step` and `+step` (one at a time).
pub fn sensitivity(h: &Histogram, levels: &[u16], step: u16) -> Sensitivity {
    let base = fractions_from_histogram(h, levels);
    let mut minus = Vec::new();
    let mut plus = Vec::new();
    let mut max_abs_change = vec![0.0f64; levels.len() + 1];
    for k in 0..levels.len() {
        for (sign, out) in [(-1i32, &mut minus), (1, &mut plus)] {
            let mut l = levels.to_vec();
            l[k] = (i32::from(l[k]) + sign * i32::from(step)).clamp(0, i32::from(h.max_value()))
                as u16;
            let f = fractions_from_histogram(h, &l);
            for (m, (a, b)) in max_abs_change.iter_mut().zip(f.iter().zip(&base)) {
                *m = m.max((a - b).abs());
            }
            out.push(f);
        }
    }
    Sensitivity {
        step,
        minus,
        plus,
        max_abs_change,
    }
}

/// Automatic void level (see [`VoidDetection::Auto`]).
pub fn auto_void_level(h: &Histogram, classes: usize) -> Option<u16> {
    let levels = multi_otsu_levels(h, classes + 1).ok()?;
    let bins = h.class_bins(&levels);
    let (n0, _) = h.range_count_sum(bins[0].0, bins[0].1);
    if n0 == 0 || (n0 as f64) >= 0.5 * h.total() as f64 {
        return dark_tail_void_level(h, classes);
    }
    // Valley test on the histogram smoothed over +/- 1% of the bins: the density at the void
    // level must be under a tenth of the darkest phase's peak density (a true gap, not a split
    // of one phase's noise peak, where the density at the level is near the peak).
    let half = (h.len() / 100).max(1);
    let smoothed = |b: usize| {
        let lo = b.saturating_sub(half);
        let hi = (b + half + 1).min(h.len());
        h.range_count_sum(lo, hi).0
    };
    let at_level = smoothed(h.bin_of(levels[0]));
    let peak = (bins[1].0..bins[1].1).map(smoothed).max().unwrap_or(0);
    if peak > 0 && (at_level as f64) < 0.1 * peak as f64 {
        return Some(levels[0]);
    }
    dark_tail_void_level(h, classes)
}

/// Second test for small voids (too few pixels to win a class of their own in multi-level
/// Otsu): the darkest phase's peak and its half width at half maximum on the dark side give a
/// Gaussian-equivalent sigma = HWHM / 1.1774; pixels more than 6 sigma below the peak are voids
/// (a Gaussian tail beyond 6 sigma holds 1e-9 of the pixels) when there are at least 20 of them
/// (common practice).
fn dark_tail_void_level(h: &Histogram, classes: usize) -> Option<u16> {
    let levels = multi_otsu_levels(h, classes).ok()?;
    let (lo, hi) = h.class_bins(&levels)[0];
    let half = (h.len() / 256).max(1);
    let smoothed = |b: usize| {
        let a = b.saturating_sub(half);
        let z = (b + half + 1).min(h.len());
        h.range_count_sum(a, z).0
    };
    let mode = (lo..hi).max_by_key(|&b| smoothed(b))?;
    let peak = smoothed(mode);
    let mut b = mode;
    while b > 0 && smoothed(b) * 2 > peak {
        b -= 1;
    }
    let sigma = (h.bin_value(mode) - h.bin_value(b)).max(h.bin_value(1) - h.bin_value(0)) / 1.1774;
    let level = h.bin_value(mode) - 6.0 * sigma;
    if level < 0.0 {
        return None;
    }
    let level = level.floor() as u16;
    let (n, _) = h.range_count_sum(0, h.bin_of(level) + 1);
    (n >= 20).then_some(level)
}

fn mask_image(width: u32, height: u32, data: Vec<u8>) -> Result<GrayImage> {
    GrayImage::from_raw(width, height, data)
        .ok_or_else(|| MicrographError::Mismatch("mask buffer size".to_string()))
}

/// Runs the pipeline on a greyscale plane within a region (see the crate docs for the steps).
///
/// The pixels are visited in a few fused, parallel passes over bands of rows: (1) the region's
/// histogram; (2) the rows holding voids, for the rim pixels (a sparse list); (3) for two
/// phases, the core pixels of a first classification, computed on the fly and never stored;
/// (4) the final classification written into the class map together with the per-tile sums;
/// (5) the small-feature clean-up, whose few changes then correct the tile sums.
pub fn segment(
    plane: &GrayPlane,
    region: &Mask,
    settings: &SegmentSettings,
    control: &Control,
) -> Result<Segmentation> {
    segment_region(plane, Some(region), settings, control)
}

/// [`segment`] with the region optional: `None` measures the whole image without a mask (a
/// region of interest costs one byte per pixel; at 8192 x 8192 a full mask is 64 MiB that the
/// whole-image case does not need).
pub fn segment_region(
    plane: &GrayPlane,
    region: Option<&Mask>,
    settings: &SegmentSettings,
    control: &Control,
) -> Result<Segmentation> {
    let s = settings;
    if let Some(region) = region
        && (region.width != plane.width || region.height != plane.height)
    {
        return Err(MicrographError::Mismatch(format!(
            "region is {} x {}, image {} x {}",
            region.width, region.height, plane.width, plane.height
        )));
    }
    let bits = region.map(|r| r.bits.as_slice());
    if !(2..=16).contains(&s.classes) {
        return Err(MicrographError::InvalidParameter {
            name: "classes",
            value: s.classes.to_string(),
            expected: "2 to 16 phases".to_string(),
        });
    }
    let (w, h) = (plane.width, plane.height);
    let (wu, hu) = (w as usize, h as usize);
    control.step(0.0)?;
    let region_hist = Histogram::of_region(plane, bits, s.bin_shift)?;
    let region_pixels = region_hist.total();
    if region_pixels == 0 {
        return Err(MicrographError::EmptyRegion {
            reason: "the region of interest covers no pixel centre".to_string(),
        });
    }
    control.step(0.1)?;

    // Voids (every region pixel at or below the void level) and their rims (a sorted list).
    let void_level = match s.voids {
        VoidDetection::Off => None,
        VoidDetection::Auto => auto_void_level(&region_hist, s.classes),
        VoidDetection::AtOrBelow(g) => Some(g),
    };
    let rim = match void_level {
        Some(vl) => passes::void_rim_indices(&plane.data, bits, wu, hu, vl, s.rim_px),
        None => Vec::new(),
    };
    let min_measured = void_level.map_or(0, |vl| u32::from(vl) + 1);
    control.step(0.2)?;
    // Measured histogram = region histogram - voids (all bins at or below the void level)
    // - rim pixels; a pass over the pixels only when the void level splits a bin.
    let splits_bin =
        void_level.is_some_and(|vl| (usize::from(vl) + 1) % (1usize << s.bin_shift) != 0);
    let hist = if splits_bin {
        let measured = passes::Classifier {
            data: &plane.data,
            region: bits,
            width: wu,
            min_measured,
            tops: &[],
            rim: &rim,
        };
        let counts = passes::core_counts(
            &measured,
            &plane.data,
            wu,
            hu,
            1,
            1,
            plane.max_value,
            s.bin_shift,
        );
        Histogram::from_counts(counts, s.bin_shift, plane.max_value)?
    } else {
        let mut counts = region_hist.counts().to_vec();
        if let Some(vl) = void_level {
            counts[..=region_hist.bin_of(vl)]
                .iter_mut()
                .for_each(|c| *c = 0);
        }
        for &i in &rim {
            let b = region_hist.bin_of(plane.data[i]);
            counts[b] = counts[b].saturating_sub(1);
        }
        Histogram::from_counts(counts, s.bin_shift, plane.max_value)?
    };
    let measured_pixels = hist.total();
    if measured_pixels == 0 {
        return Err(MicrographError::EmptyRegion {
            reason: "every pixel of the region is a void or a void rim".to_string(),
        });
    }

    // Levels.
    let (mut levels, otsu_levels) = match &s.levels {
        LevelChoice::Manual(l) => {
            if l.len() != s.classes - 1 || l.windows(2).any(|p| p[0] >= p[1]) {
                return Err(MicrographError::InvalidParameter {
                    name: "level",
                    value: format!("{l:?}"),
                    expected: format!("{} strictly increasing grey levels", s.classes - 1),
                });
            }
            (l.clone(), None)
        }
        LevelChoice::Otsu => {
            let o = multi_otsu_levels(&hist, s.classes)?;
            (o.clone(), Some(o))
        }
        LevelChoice::OtsuMidpoint => {
            let o = multi_otsu_levels(&hist, s.classes)?;
            let smooth = (hist.len() / 256).max(1);
            (refine_levels_to_mode_midpoints(&hist, &o, smooth), Some(o))
        }
    };
    control.step(0.3)?;
    let base = passes::Classifier {
        data: &plane.data,
        region: bits,
        width: wu,
        min_measured,
        tops: &[],
        rim: &rim,
    };
    let mut warnings = Vec::new();
    // Pure levels (two phases): cores of the first classification (before clean-up, computed
    // on the fly) and the blur-consistent level of the thinner phase; the default level choice
    // then moves to the half-way point between them.
    let pure = if s.classes == 2 {
        let tops = passes::class_tops(&hist, &levels);
        // 16-bit levels binned by 16 (0.02% of full scale) keep the tables in cache.
        let shift = if plane.max_value > 255 { 4 } else { 0 };
        let counts = passes::core_counts(
            &passes::Classifier {
                tops: &tops,
                ..base
            },
            &plane.data,
            wu,
            hu,
            2,
            s.core_distance_px,
            plane.max_value,
            shift,
        );
        let core_hists = core_counts_to_histograms(counts, 2, shift, plane.max_value)?;
        let p = pure_levels(&core_hists, &hist, &levels);
        if let Some(p) = &p {
            if !p.thin_level_solved {
                warnings.push(
                    "the thinner phase's pure grey level could not be resolved from the histogram (lamellae under about 2.5 blur widths?): its core median is used, which edge blur biases"
                        .to_string(),
                );
            }
            if matches!(s.levels, LevelChoice::OtsuMidpoint) {
                let mid = ((p.levels[0] + p.levels[1]) / 2.0)
                    .floor()
                    .clamp(0.0, f64::from(plane.max_value)) as u16;
                levels = vec![mid];
            }
        }
        p
    } else {
        None
    };
    control.step(0.5)?;

    // Final classification into the class map, with the tile sums in the same pass.
    let tile_px = s
        .tile_px
        .unwrap_or_else(|| (w.min(h) / 8).clamp(32, 512))
        .max(1);
    let tops = passes::class_tops(&hist, &levels);
    let mut class_map = vec![0u8; plane.len()];
    let (mut tiles, mut class_gray) = passes::tiles_pass(
        passes::TileMap::Fill(
            &mut class_map,
            &passes::Classifier {
                tops: &tops,
                ..base
            },
        ),
        &plane.data,
        wu,
        s.classes,
        tile_px as usize,
    );
    control.step(0.6)?;
    if s.min_feature_px > 1 {
        let changes = small_feature_changes(&class_map, w, h, s.min_feature_px, s.classes);
        // The changes are few: apply them and move their pixels between classes in the sums.
        let (t, tx) = (tile_px as usize, wu.div_ceil(tile_px as usize));
        for (i, new) in changes {
            let old = class_map[i];
            class_map[i] = new;
            let (x, y) = (i % wu, i / wu);
            let tile = &mut tiles[(y / t) * tx + x / t];
            let v = f64::from(plane.data[i]);
            tile.class_area[usize::from(old)] -= 1.0;
            tile.class_area[usize::from(new)] += 1.0;
            class_gray[usize::from(old)] -= v;
            class_gray[usize::from(new)] += v;
        }
    }
    if s.open_close_px > 0 {
        if s.classes != 2 {
            return Err(MicrographError::InvalidParameter {
                name: "open_close_px",
                value: s.open_close_px.to_string(),
                expected: "0 unless there are exactly 2 phases".to_string(),
            });
        }
        open_close_bright(&mut class_map, w, h, s.open_close_px)?;
        (tiles, class_gray) = tile_and_class_stats(plane, &class_map, s.classes, tile_px);
    }
    control.step(0.8)?;

    let mut class_px = vec![0f64; s.classes];
    for t in &tiles {
        for (a, b) in class_px.iter_mut().zip(&t.class_area) {
            *a += b;
        }
    }
    let ci = fraction_ci95(&tiles, s.classes, s.bootstrap_resamples, s.seed);
    let total = measured_pixels as f64;
    let phases: Vec<PhaseResult> = (0..s.classes)
        .map(|c| PhaseResult {
            label: format!("phase {}", c + 1),
            pixels: class_px[c] as u64,
            area_fraction: class_px[c] / total,
            mean_gray: if class_px[c] > 0.0 {
                class_gray[c] / class_px[c]
            } else {
                0.0
            },
            area_fraction_ci95: ci.as_ref().map(|v| v[c]),
            area_um2: s.pixel_size.map(|p| p.area_um2(class_px[c])),
        })
        .collect();
    let step = s
        .sensitivity_step
        .unwrap_or_else(|| (plane.max_value / 100).max(1));
    let sens = sensitivity(&hist, &levels, step);

    if phases.iter().any(|p| p.pixels == 0) {
        warnings.push("a phase has no pixels: fewer phases than classes requested?".to_string());
    }
    if ci.is_none() {
        warnings.push(
            "too few tiles for a bootstrap interval: use a larger region or smaller tiles"
                .to_string(),
        );
    }
    let unmixing_note = (s.classes > 2).then(|| {
        format!(
            "linear unmixing is not defined for {} phases in a greyscale image: the mean grey and \
             the sum of the fractions give two equations, enough for two phases only (a stained \
             colour image gives four, enough for up to four phases)",
            s.classes
        )
    });
    if let Some(note) = &unmixing_note {
        warnings.push(note.clone());
    }
    let unmixing = if s.classes == 2 {
        let u = pure.and_then(|p| unmix(&p, &hist, &tiles, s));
        if let Some(u) = &u {
            let disagrees = crate::bootstrap::intervals_disagree(
                phases[1].area_fraction_ci95,
                u.area_fraction_ci95.map(|c| c[1]),
            );
            if disagrees {
                warnings.push(format!(
                    "classification ({:.4}) and linear unmixing ({:.4}) disagree beyond their intervals: check levels, blur and flattening",
                    phases[1].area_fraction, u.area_fraction[1]
                ));
            }
            Some(Unmixing {
                disagrees,
                ..u.clone()
            })
        } else {
            warnings
                .push("no core pixels far enough from edges for the unmixing estimate".to_string());
            None
        }
    } else {
        None
    };
    control.step(1.0)?;
    Ok(Segmentation {
        width: w,
        height: h,
        region_pixels,
        measured_pixels,
        excluded_fraction: 1.0 - measured_pixels as f64 / region_pixels as f64,
        void_level,
        rim_px: if void_level.is_some() { s.rim_px } else { 0 },
        levels,
        otsu_levels,
        phases,
        sensitivity: sens,
        unmixing,
        unmixing_note,
        colour_unmixing: None,
        tile_px,
        tiles,
        pixel_size_um: s.pixel_size.map(|p| p.pixel_size_um()),
        warnings,
        histogram: hist,
        class_map,
    })
}

/// Per-tile measured pixels, pixels per class and grey sums.
pub fn tile_stats(
    plane: &GrayPlane,
    class_map: &[u8],
    classes: usize,
    tile_px: u32,
) -> Vec<TileStats> {
    tile_and_class_stats(plane, class_map, classes, tile_px).0
}

/// Per-tile sums and, in the same pass, the grey sum of each class over the whole image.
/// Classes at or above `classes` count as not measured.
pub fn tile_and_class_stats(
    plane: &GrayPlane,
    class_map: &[u8],
    classes: usize,
    tile_px: u32,
) -> (Vec<TileStats>, Vec<f64>) {
    passes::tiles_pass(
        passes::TileMap::Read(class_map),
        &plane.data,
        plane.width as usize,
        classes,
        tile_px as usize,
    )
}

/// Opening then closing (imageproc `morphology::open` and `close`, chessboard norm, i.e. a
/// `(2k+1)`-square element; Serra 1982, *Image Analysis and Mathematical Morphology*) of the
/// brighter class of a two-phase class map; pixels not measured stay so.
pub fn open_close_bright(class_map: &mut [u8], width: u32, height: u32, k: u8) -> Result<()> {
    let bright: Vec<u8> = class_map
        .iter()
        .map(|&c| if c == 1 { 255 } else { 0 })
        .collect();
    let img = mask_image(width, height, bright)?;
    let opened = imageproc::morphology::open(&img, imageproc::distance_transform::Norm::LInf, k);
    let done = imageproc::morphology::close(&opened, imageproc::distance_transform::Norm::LInf, k);
    for (c, &v) in class_map.iter_mut().zip(done.as_raw()) {
        if *c != NOT_MEASURED {
            *c = u8::from(v != 0);
        }
    }
    Ok(())
}

/// Merges 8-connected features of one class smaller than `min_px` into the class most common
/// along their border (4-neighbours of another measured class; the last such class on ties).
///
/// For `min_px <= 9` (the usual noise clean-up) a bounded search: a pixel with at least
/// `min_px - 1` same-class 8-neighbours is in a large feature (counted a row at a time); from
/// any other pixel a flood fill stops as soon as it has found `min_px` pixels. Larger sizes
/// label features by runs (run-based two-pass labelling with union-find: Rosenfeld & Pfaltz
/// 1966, "Sequential operations in digital picture processing", J. ACM 13(4):471-494; He, Chao
/// & Suzuki 2008, IEEE Trans. Image Processing 17(5):749-756). Both give the same result as
/// imageproc's `connected_components` (checked in the tests) with no per-pixel label image
/// (4 bytes a pixel, 256 MiB at 8192 x 8192).
pub fn remove_small_features(
    class_map: &mut [u8],
    width: u32,
    height: u32,
    min_px: u32,
    classes: usize,
) -> Result<()> {
    if class_map.len() != width as usize * height as usize {
        return Err(MicrographError::Mismatch(format!(
            "class map has {} pixels, {width} x {height} expected",
            class_map.len()
        )));
    }
    for (i, c) in small_feature_changes(class_map, width, height, min_px, classes) {
        class_map[i] = c;
    }
    Ok(())
}

/// The changes of [`remove_small_features`] as `(index, new class)`, without applying them.
fn small_feature_changes(
    class_map: &[u8],
    width: u32,
    height: u32,
    min_px: u32,
    classes: usize,
) -> Vec<(usize, u8)> {
    let (w, h) = (width as usize, height as usize);
    if min_px <= 1 {
        Vec::new()
    } else if min_px <= 9 {
        passes::small_feature_changes_bounded(class_map, w, h, min_px as usize, classes)
    } else {
        passes::small_feature_changes_runs(class_map, w, h, min_px, classes)
    }
}

/// Histograms of the core pixels of classes `0..classes`: pixels of class `c` whose chessboard
/// (L-infinity) distance to any pixel of another class (or not measured) is at least `d`, i.e.
/// whose `(2d-1) x (2d-1)` neighbourhood (clipped at the image border) is all of class `c`.
/// Chessboard distance never exceeds the Euclidean one, so cores are at least `d` px from any
/// edge in the Euclidean sense too.
///
/// Own separable window test (a row pass, then a column test over the rows of a band, both as
/// shifted byte compares) instead of imageproc's `distance_transform(.., Norm::LInf)` per
/// class: the same set (the chessboard distance transform of Rosenfeld & Pfaltz 1966
/// thresholded at `d`, checked in the tests) with a few rows of scratch per band instead of an
/// image per class.
pub fn core_histograms(
    plane: &GrayPlane,
    class_map: &[u8],
    classes: usize,
    d: u8,
    bin_shift: u32,
) -> Result<Vec<Histogram>> {
    if class_map.len() != plane.len() {
        return Err(MicrographError::Mismatch(format!(
            "class map has {} pixels, image {}",
            class_map.len(),
            plane.len()
        )));
    }
    let (w, h) = (plane.width as usize, plane.height as usize);
    let bin_shift = bin_shift.min(15);
    let src = passes::MapSource {
        map: class_map,
        width: w,
    };
    let counts = passes::core_counts(
        &src,
        &plane.data,
        w,
        h,
        classes,
        d,
        plane.max_value,
        bin_shift,
    );
    core_counts_to_histograms(counts, classes, bin_shift, plane.max_value)
}

fn core_counts_to_histograms(
    counts: Vec<u64>,
    classes: usize,
    bin_shift: u32,
    max_value: u16,
) -> Result<Vec<Histogram>> {
    let nbins = counts.len() / classes.max(1);
    counts
        .chunks(nbins.max(1))
        .map(|c| Histogram::from_counts(c.to_vec(), bin_shift, max_value))
        .collect()
}

/// Marks voids (region pixels at or below `void_level`) and every pixel within `rim_px`
/// (Euclidean, pixel centres) of a void as `NOT_MEASURED`. Returns the grey values of the
/// rim pixels it excluded (not the voids themselves, which are the region's pixels at or below
/// the level), so the measured histogram follows from the region's without another pass.
///
/// Own implementation rather than imageproc's `dilate(.., Norm::L2, ..)`: that computes an
/// `f64` Euclidean distance transform of the whole image (8 bytes a pixel, 512 MiB at
/// 8192 x 8192), while stamping a disc around the void boundary pixels needs no extra image.
/// The result is the same set (all pixels at distance <= rim_px from a void pixel).
pub fn exclude_voids_with_rim(
    plane: &GrayPlane,
    region: &Mask,
    void_level: u16,
    rim_px: u8,
    class_map: &mut [u8],
) -> Vec<u16> {
    let (w, h) = (plane.width as usize, plane.height as usize);
    class_map
        .par_chunks_mut(1 << 16)
        .zip(plane.data.par_chunks(1 << 16))
        .zip(region.bits.par_chunks(1 << 16))
        .for_each(|((cs, vs), rs)| {
            for ((c, &v), &r) in cs.iter_mut().zip(vs).zip(rs) {
                if r && v <= void_level {
                    *c = NOT_MEASURED;
                }
            }
        });
    let rim = passes::void_rim_indices(&plane.data, Some(&region.bits), w, h, void_level, rim_px);
    let mut values = Vec::with_capacity(rim.len());
    for i in rim {
        if class_map[i] != NOT_MEASURED {
            class_map[i] = NOT_MEASURED;
            values.push(plane.data[i]);
        }
    }
    values
}

/// Pure grey levels of the two phases (dark, bright).
#[derive(Debug, Clone, Copy, PartialEq)]
struct PureLevels {
    levels: [f64; 2],
    core_pixels: [u64; 2],
    /// False when the thinner phase's level is its (blur-biased) core median.
    thin_level_solved: bool,
}

/// Pure levels of a two-phase image from the core histograms of its two classes (cores: pixels
/// at least `core_distance_px` from any other class, see [`core_histograms`]): the phase with
/// the larger share of core pixels is the wider one, and the median of its cores is its pure
/// level (its cores are beyond the reach of the blur); the thinner phase's level is solved from
/// the histogram with [`thin_phase_level`], falling back to its core median when that has no
/// root.
fn pure_levels(core_hists: &[Histogram], hist: &Histogram, levels: &[u16]) -> Option<PureLevels> {
    let core_pixels = [core_hists[0].total(), core_hists[1].total()];
    let medians = [core_hists[0].quantile(0.5), core_hists[1].quantile(0.5)];
    let class_px: Vec<u64> = hist.class_stats(levels).iter().map(|c| c.pixels).collect();
    let share = |c: usize| core_pixels[c] as f64 / class_px[c].max(1) as f64;
    let reference = if share(0) >= share(1) { 0 } else { 1 };
    let thin = 1 - reference;
    let g_ref = medians[reference]?;
    let solved = thin_phase_level(hist, g_ref, thin == 0);
    let g_thin = match (solved, medians[thin]) {
        (Some(g), _) => g,
        (None, Some(g)) => g,
        (None, None) => return None,
    };
    let mut l = [0.0; 2];
    l[reference] = g_ref;
    l[thin] = g_thin;
    Some(PureLevels {
        levels: l,
        core_pixels,
        thin_level_solved: solved.is_some(),
    })
}

fn unmix(
    pure: &PureLevels,
    hist: &Histogram,
    tiles: &[TileStats],
    s: &SegmentSettings,
) -> Option<Unmixing> {
    let measured: f64 = tiles.iter().map(|t| t.measured).sum();
    if measured <= 0.0 || hist.total() == 0 {
        return None;
    }
    let mean = tiles.iter().map(|t| t.gray_sum).sum::<f64>() / measured;
    let [gd, gb] = pure.levels;
    if gb - gd <= 0.0 {
        return None;
    }
    let f_dark = ((gb - mean) / (gb - gd)).clamp(0.0, 1.0);
    let ci = statistic_ci95(tiles, s.bootstrap_resamples, s.seed ^ 0xA5A5, 2, |t| {
        let m = t.gray_sum / t.measured;
        let fd = ((gb - m) / (gb - gd)).clamp(0.0, 1.0);
        vec![fd, 1.0 - fd]
    })
    .map(|v| [v[0], v[1]]);
    Some(Unmixing {
        pure_levels: pure.levels,
        core_pixels: pure.core_pixels,
        mean_gray: mean,
        area_fraction: [f_dark, 1.0 - f_dark],
        area_fraction_ci95: ci,
        disagrees: false,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::synthetic::SyntheticSpec;
    use imageproc::distance_transform::Norm;
    use std::sync::atomic::AtomicBool;

    /// The default synthetic micrograph (lamellae, blur, noise, a crack and a pore) at a size,
    /// as a 16-bit or an 8-bit plane.
    fn synthetic_plane(width: u32, height: u32, sixteen_bit: bool) -> GrayPlane {
        SyntheticSpec {
            width,
            height,
            ..SyntheticSpec::default()
        }
        .generate()
        .plane(width, height, sixteen_bit)
        .unwrap()
    }

    #[test]
    fn rim_matches_imageproc_l2_dilation() {
        // Source: imageproc 0.27 `morphology::dilate(.., Norm::L2, k)` on the same void mask;
        // the two sets must be identical (same definition: distance <= k).
        let plane = synthetic_plane(96, 80, false);
        let region = Mask::full(96, 80);
        let vl = 60u16;
        for rim in [1u8, 2, 3] {
            let mut ours = vec![0u8; plane.len()];
            let _ = exclude_voids_with_rim(&plane, &region, vl, rim, &mut ours);
            let voids: Vec<u8> = plane
                .data
                .iter()
                .map(|&v| if v <= vl { 255 } else { 0 })
                .collect();
            let theirs =
                imageproc::morphology::dilate(&mask_image(96, 80, voids).unwrap(), Norm::L2, rim);
            for (a, b) in ours.iter().zip(theirs.as_raw()) {
                assert_eq!(*a == NOT_MEASURED, *b != 0, "rim {rim}");
            }
        }
    }

    #[test]
    fn histogram_fractions_equal_pixel_counts_without_clean_up() {
        // Source: definition; with clean-up off, counting pixels and summing the histogram
        // between levels must give identical integers.
        let plane = synthetic_plane(64, 64, true);
        let settings = SegmentSettings {
            min_feature_px: 0,
            ..SegmentSettings::default()
        };
        let seg = segment(&plane, &Mask::full(64, 64), &settings, &Control::none()).unwrap();
        let f = seg.fractions_at(&seg.levels);
        for (p, fh) in seg.phases.iter().zip(&f) {
            assert!(
                (p.area_fraction - fh).abs() < 1e-15,
                "{} vs {fh}",
                p.area_fraction
            );
        }
    }

    /// The clean-up by imageproc's labelling (the reference for both of our paths): label
    /// 8-connected features, count their pixels, and give each small one the class most common
    /// among the 4-neighbours of its pixels that belong to another feature and are measured.
    fn remove_small_features_imageproc(
        class_map: &mut [u8],
        width: u32,
        height: u32,
        min_px: u32,
        classes: usize,
    ) {
        use imageproc::region_labelling::{Connectivity, connected_components};
        let img = mask_image(width, height, class_map.to_vec()).unwrap();
        let labels =
            connected_components(&img, Connectivity::Eight, image::Luma([NOT_MEASURED])).into_raw();
        let max_label = labels.iter().copied().max().unwrap_or(0) as usize;
        let mut sizes = vec![0u32; max_label + 1];
        for &l in &labels {
            sizes[l as usize] += 1;
        }
        let mut votes = vec![vec![0u32; classes]; max_label + 1];
        let (w, h) = (width as usize, height as usize);
        for y in 0..h {
            for x in 0..w {
                let i = y * w + x;
                let l = labels[i] as usize;
                if l == 0 || sizes[l] >= min_px {
                    continue;
                }
                let mut vote = |j: usize| {
                    if labels[j] != labels[i] && class_map[j] != NOT_MEASURED {
                        votes[l][usize::from(class_map[j])] += 1;
                    }
                };
                if x > 0 {
                    vote(i - 1);
                }
                if x + 1 < w {
                    vote(i + 1);
                }
                if y > 0 {
                    vote(i - w);
                }
                if y + 1 < h {
                    vote(i + w);
                }
            }
        }
        for (c, &l) in class_map.iter_mut().zip(&labels) {
            let l = l as usize;
            if l == 0 || sizes[l] >= min_px {
                continue;
            }
            if let Some((best, &n)) = votes[l].iter().enumerate().max_by_key(|&(_, n)| *n)
                && n > 0
            {
                *c = best as u8;
            }
        }
    }

    fn noisy_class_map(w: u32, h: u32, noise: f64) -> Vec<u8> {
        let spec = SyntheticSpec {
            width: w,
            height: h,
            noise_sigma: noise,
            ..SyntheticSpec::default()
        };
        let plane = spec.generate().plane(w, h, false).unwrap();
        plane
            .data
            .iter()
            .enumerate()
            .map(|(i, &v)| {
                if i % 97 == 0 {
                    NOT_MEASURED
                } else if v > 150 {
                    2
                } else if v > 120 {
                    1
                } else {
                    0
                }
            })
            .collect()
    }

    #[test]
    fn clean_up_equals_imageproc_labelled_clean_up() {
        // Source: imageproc 0.27 `connected_components` (8-connected) on the same noisy class
        // map; the bounded search (min_px <= 9) and the run-based labelling (larger sizes) must
        // change exactly the same pixels the same way.
        let base = noisy_class_map(120, 90, 0.09);
        for min_px in (2..=12u32).chain([17, 40, 300]) {
            let mut ours = base.clone();
            let mut theirs = base.clone();
            remove_small_features(&mut ours, 120, 90, min_px, 3).unwrap();
            remove_small_features_imageproc(&mut theirs, 120, 90, min_px, 3);
            assert!(
                theirs.iter().zip(&base).any(|(x, y)| x != y),
                "nothing to clean at min_px {min_px}"
            );
            let differ = ours.iter().zip(&theirs).filter(|(x, y)| x != y).count();
            assert_eq!(differ, 0, "min_px {min_px}: {differ} pixels differ");
        }
        // The run-based path on the small sizes too (it is exact for any size).
        for min_px in 2..=9u32 {
            let mut theirs = base.clone();
            remove_small_features_imageproc(&mut theirs, 120, 90, min_px, 3);
            let mut ours = base.clone();
            for (i, c) in passes::small_feature_changes_runs(&base, 120, 90, min_px, 3) {
                ours[i] = c;
            }
            assert_eq!(ours, theirs, "runs, min_px {min_px}");
        }
    }

    #[test]
    fn fused_tile_sums_equal_a_recount_of_the_final_map() {
        // Source: definition; the tile sums built during classification and corrected by the
        // clean-up's changes must equal a direct recount over the returned class map.
        let spec = SyntheticSpec {
            width: 150,
            height: 110,
            noise_sigma: 0.06,
            ..SyntheticSpec::default()
        };
        let plane = spec.generate().plane(150, 110, true).unwrap();
        for (classes, min_px) in [(2usize, 4u32), (3, 6), (2, 25)] {
            let settings = SegmentSettings {
                classes,
                min_feature_px: min_px,
                tile_px: Some(32),
                ..SegmentSettings::default()
            };
            let seg = segment(&plane, &Mask::full(150, 110), &settings, &Control::none()).unwrap();
            let (tiles, gray) = tile_and_class_stats(&plane, &seg.class_map, classes, 32);
            assert_eq!(seg.tiles, tiles, "{classes} classes, min_px {min_px}");
            for (p, g) in seg.phases.iter().zip(&gray) {
                let mean = g / p.pixels as f64;
                assert!(
                    (p.mean_gray - mean).abs() < 1e-9,
                    "{} vs {mean}",
                    p.mean_gray
                );
            }
        }
    }

    #[test]
    fn core_histograms_match_imageproc_chessboard_distance() {
        // Source: imageproc 0.27 `distance_transform(.., Norm::LInf)` thresholded at d on the
        // same class map; the core pixel counts per grey value must be identical.
        let plane = synthetic_plane(90, 70, false);
        let cm: Vec<u8> = plane
            .data
            .iter()
            .enumerate()
            .map(|(i, &v)| {
                if i % 131 == 0 {
                    NOT_MEASURED
                } else {
                    u8::from(v > 140)
                }
            })
            .collect();
        for d in [1u8, 2, 3, 4] {
            let ours = core_histograms(&plane, &cm, 2, d, 0).unwrap();
            for c in 0..2u8 {
                let fg: Vec<u8> = cm.iter().map(|&k| u8::from(k != c)).collect();
                let dist = imageproc::distance_transform::distance_transform(
                    &mask_image(90, 70, fg).unwrap(),
                    Norm::LInf,
                );
                let mut counts = vec![0u64; 256];
                for (&dv, &g) in dist.as_raw().iter().zip(&plane.data) {
                    if dv >= d {
                        counts[usize::from(g)] += 1;
                    }
                }
                assert_eq!(
                    ours[usize::from(c)].counts(),
                    &counts[..],
                    "class {c}, d {d}"
                );
            }
        }
    }

    #[test]
    fn cores_of_the_on_the_fly_classification_equal_those_of_a_stored_map() {
        // Source: definition; classifying on the fly (voids, rims, region and levels applied
        // per band) must give the same core histograms as classifying into a map first and
        // running the (imageproc-checked) core test on it.
        let plane = synthetic_plane(97, 83, true);
        let roi = crate::roi::Roi {
            include: vec![crate::roi::Polygon(vec![
                [3.0, 5.0],
                [90.0, 2.0],
                [94.0, 80.0],
                [6.0, 70.0],
            ])],
            exclude: vec![],
        };
        let region = roi.rasterise(97, 83).unwrap();
        let (vl, level) = (8000u16, 38000u16);
        let hist = Histogram::of_region(&plane, Some(&region.bits), 0).unwrap();
        let tops = passes::class_tops(&hist, &[level]);
        let mut map: Vec<u8> = plane
            .data
            .iter()
            .zip(&region.bits)
            .map(|(&v, &r)| if r { u8::from(v > level) } else { NOT_MEASURED })
            .collect();
        let _ = exclude_voids_with_rim(&plane, &region, vl, 2, &mut map);
        let rim = passes::void_rim_indices(&plane.data, Some(&region.bits), 97, 83, vl, 2);
        let fly = passes::Classifier {
            data: &plane.data,
            region: Some(&region.bits),
            width: 97,
            min_measured: u32::from(vl) + 1,
            tops: &tops,
            rim: &rim,
        };
        let mut filled = vec![0u8; map.len()];
        passes::ClassSource::fill_rows(&fly, 0, 83, &mut filled);
        assert_eq!(filled, map, "same classes");
        for d in [1u8, 3, 4] {
            let stored = core_histograms(&plane, &map, 2, d, 4).unwrap();
            // Bands of 1, 2, 5 and 7 rows check the seams between bands (halo rows).
            for band in [1usize, 2, 5, 7, 83] {
                let counts = passes::core_counts_in_bands(
                    &fly,
                    &plane.data,
                    (97, 83),
                    2,
                    d,
                    u16::MAX,
                    4,
                    band,
                );
                let ours = core_counts_to_histograms(counts, 2, 4, u16::MAX).unwrap();
                assert_eq!(ours, stored, "d {d}, band {band}");
            }
        }
    }

    #[test]
    fn opening_removes_specks_and_closing_fills_gaps() {
        // Source: definitions of opening and closing (Serra 1982): with a 3 x 3 element a
        // single bright pixel disappears and a one-pixel dark gap in a bright band is filled.
        let (w, h) = (20u32, 12u32);
        let mut cm = vec![0u8; (w * h) as usize];
        cm[(2 * w + 3) as usize] = 1; // speck
        for y in 5..10 {
            for x in 2..18 {
                cm[(y * w + x) as usize] = u8::from(x != 9); // band with a 1-px gap
            }
        }
        open_close_bright(&mut cm, w, h, 1).unwrap();
        assert_eq!(cm[(2 * w + 3) as usize], 0, "speck removed");
        assert_eq!(cm[(7 * w + 9) as usize], 1, "gap filled");
        assert_eq!(cm[(7 * w + 12) as usize], 1, "band kept");
    }

    #[test]
    fn measured_histogram_equals_direct_count() {
        // Source: definition; the histogram derived by subtraction must equal a direct count
        // over the measured pixels of the final class map (clean-up off, so none change).
        let plane = synthetic_plane(100, 90, true);
        let settings = SegmentSettings {
            min_feature_px: 0,
            voids: VoidDetection::AtOrBelow(15000),
            ..SegmentSettings::default()
        };
        let seg = segment(&plane, &Mask::full(100, 90), &settings, &Control::none()).unwrap();
        assert!(seg.excluded_fraction > 0.0);
        let direct = Histogram::of_class_map(&plane, &seg.class_map, 0).unwrap();
        assert_eq!(seg.histogram.counts(), direct.counts());
    }

    #[test]
    fn class_tops_classify_every_value_as_the_bin_table() {
        // Source: definition of classes on a histogram (`Histogram::class_bins`): counting the
        // tops below a value must give the class of its bin for every u16 value, any binning,
        // including levels in one bin and levels out of order.
        for shift in [0u32, 3, 4, 8] {
            let max = u16::MAX;
            let h = Histogram::from_counts(vec![1; (usize::from(max) >> shift) + 1], shift, max)
                .unwrap();
            for levels in [
                vec![1000u16],
                vec![17, 40000, 40001],
                vec![300, 200],
                vec![0, 65535],
            ] {
                let lut = passes::full_lut(&h, &levels);
                let tops = passes::class_tops(&h, &levels);
                for v in 0..=u16::MAX {
                    let by_tops = tops.iter().filter(|&&t| v > t).count() as u8;
                    assert_eq!(
                        by_tops,
                        lut[usize::from(v) >> shift],
                        "{levels:?} {shift} {v}"
                    );
                }
            }
        }
    }

    #[test]
    fn whole_image_without_a_mask_equals_a_full_mask() {
        // Source: definition; no region and a region covering every pixel are the same job.
        let plane = synthetic_plane(90, 70, true);
        let s = SegmentSettings::default();
        let with = segment(&plane, &Mask::full(90, 70), &s, &Control::none()).unwrap();
        let without = segment_region(&plane, None, &s, &Control::none()).unwrap();
        assert!(with.void_level.is_some(), "voids exercised");
        assert_eq!(with, without);
    }

    #[test]
    fn cancel_flag_stops_the_job() {
        let plane = synthetic_plane(32, 32, false);
        let flag = AtomicBool::new(true);
        let ctl = Control {
            cancel: Some(&flag),
            progress: None,
        };
        let err = segment(
            &plane,
            &Mask::full(32, 32),
            &SegmentSettings::default(),
            &ctl,
        )
        .unwrap_err();
        assert!(matches!(err, MicrographError::Cancelled));
    }

    #[test]
    fn bad_manual_levels_are_refused() {
        let plane = synthetic_plane(32, 32, false);
        let settings = SegmentSettings {
            classes: 3,
            levels: LevelChoice::Manual(vec![150, 100]),
            ..SegmentSettings::default()
        };
        let err = segment(&plane, &Mask::full(32, 32), &settings, &Control::none()).unwrap_err();
        assert!(err.to_string().contains("strictly increasing"), "{err}");
    }

    #[test]
    fn two_grey_levels_without_noise_or_blur_are_split_as_constructed() {
        // Source: the construction. Diagonal lamellae 15 of every 50 px along x + y on a 500 px
        // wide image: exactly 30 % of every row, two grey levels and nothing between them.
        // Both ways round (thin phase bright, thin phase dark). Before, the smoothing window of
        // the mode search reached across the level into the other class's spike, so both
        // modes landed beside the larger spike and every pixel went to one phase.
        let (w, h) = (500u32, 400u32);
        for (thin, wide) in [(42000u16, 21000u16), (21000, 42000)] {
            let data: Vec<u16> = (0..h)
                .flat_map(|y| (0..w).map(move |x| if (x + y) % 50 < 15 { thin } else { wide }))
                .collect();
            let plane = GrayPlane::new(w, h, data, u16::MAX).unwrap();
            let seg = segment(
                &plane,
                &Mask::full(w, h),
                &SegmentSettings::default(),
                &Control::none(),
            )
            .unwrap();
            let bright = seg.phases[1].area_fraction;
            let expected = if thin > wide { 0.3 } else { 0.7 };
            assert!((bright - expected).abs() < 1e-12, "{thin}: {bright}");
            // The level lies between the two grey values, and nothing is flagged: the
            // unmixing estimate equals the classification to rounding.
            assert!(
                21000 <= seg.levels[0] && seg.levels[0] < 42000,
                "{:?}",
                seg.levels
            );
            assert!(
                seg.warnings
                    .iter()
                    .all(|w| !w.contains("no pixels") && !w.contains("disagree")),
                "{:?}",
                seg.warnings
            );
        }
    }
}
