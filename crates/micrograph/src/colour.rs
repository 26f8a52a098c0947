//! Colour classification of stained sections: nearest centroid in CIELAB from user-picked
//! samples, or k-means seeded from them.
//!
//! **Caution.** Staining feldspars usually follows etching with hydrofluoric acid, which is
//! acutely toxic and causes deep, delayed burns. Follow your laboratory's rules and safety data
//! sheets (fume hood, HF-rated gloves and face shield, calcium gluconate at hand); this software
//! gives no procedure.

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::bootstrap::fraction_ci95;
use crate::control::Control;
use crate::error::{MicrographError, Result};
use crate::histogram::Histogram;
use crate::load::{GrayPlane, Micrograph};
use crate::roi::Mask;
use crate::segment::{
    NOT_MEASURED, PhaseResult, SegmentSettings, Segmentation, Sensitivity, remove_small_features,
    tile_stats,
};

/// A colour in CIELAB (D65 white).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Lab {
    /// Lightness L*, 0..100.
    pub l: f64,
    /// a* (green-red).
    pub a: f64,
    /// b* (blue-yellow).
    pub b: f64,
}

impl Lab {
    /// Squared CIE76 colour difference.
    pub fn dist2(&self, o: &Lab) -> f64 {
        (self.l - o.l).powi(2) + (self.a - o.a).powi(2) + (self.b - o.b).powi(2)
    }
}

fn srgb_to_linear(c: f64) -> f64 {
    if c <= 0.04045 {
        c / 12.92
    } else {
        ((c + 0.055) / 1.055).powf(2.4)
    }
}

/// 8-bit sRGB to CIELAB. Sources: IEC 61966-2-1:1999 (sRGB transfer function and the
/// RGB-to-XYZ matrix for D65); CIE 15:2004 Colorimetry (CIELAB, with D65 white
/// Xn = 0.95047, Yn = 1, Zn = 1.08883).
pub fn srgb8_to_lab(p: [u8; 3]) -> Lab {
    let [r, g, b] = p.map(|c| srgb_to_linear(f64::from(c) / 255.0));
    let x = 0.4124 * r + 0.3576 * g + 0.1805 * b;
    let y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
    let z = 0.0193 * r + 0.1192 * g + 0.9505 * b;
    let f = |t: f64| {
        if t > (6.0f64 / 29.0).powi(3) {
            t.cbrt()
        } else {
            t / (3.0 * (6.0f64 / 29.0).powi(2)) + 4.0 / 29.0
        }
    };
    let (fx, fy, fz) = (f(x / 0.95047), f(y), f(z / 1.08883));
    Lab {
        l: 116.0 * fy - 16.0,
        a: 500.0 * (fx - fy),
        b: 200.0 * (fy - fz),
    }
}

/// Mean CIELAB colour of sample pixels (the user's picks for one phase).
pub fn centroid(samples: &[[u8; 3]]) -> Option<Lab> {
    if samples.is_empty() {
        return None;
    }
    let n = samples.len() as f64;
    let (l, a, b) = samples
        .iter()
        .map(|&p| srgb8_to_lab(p))
        .fold((0.0, 0.0, 0.0), |s, c| (s.0 + c.l, s.1 + c.a, s.2 + c.b));
    Some(Lab {
        l: l / n,
        a: a / n,
        b: b / n,
    })
}

/// Lookup table sRGB -> Lab for one channel triple is too big; cache per-channel linear values.
fn nearest(lab: &Lab, centroids: &[Lab]) -> u8 {
    let mut best = (f64::INFINITY, 0u8);
    for (i, c) in centroids.iter().enumerate() {
        let d = lab.dist2(c);
        if d < best.0 {
            best = (d, i as u8);
        }
    }
    best.1
}

/// Nearest-centroid class of every pixel in the region (`NOT_MEASURED` outside).
pub fn classify_nearest(rgb: &[[u8; 3]], region: &Mask, centroids: &[Lab]) -> Result<Vec<u8>> {
    if centroids.is_empty() || centroids.len() > 16 {
        return Err(MicrographError::InvalidParameter {
            name: "colour centroids",
            value: centroids.len().to_string(),
            expected: "1 to 16 sampled colours".to_string(),
        });
    }
    if rgb.len() != region.bits.len() {
        return Err(MicrographError::Mismatch(format!(
            "image has {} pixels, region {}",
            rgb.len(),
            region.bits.len()
        )));
    }
    Ok(rgb
        .par_iter()
        .zip(region.bits.par_iter())
        .map(|(&p, &r)| {
            if r {
                nearest(&srgb8_to_lab(p), centroids)
            } else {
                NOT_MEASURED
            }
        })
        .collect())
}

/// k-means in CIELAB seeded from the user's centroids (Lloyd's algorithm: Lloyd 1982, "Least
/// squares quantization in PCM", IEEE Trans. Information Theory 28(2):129-137), on every
/// `stride`-th pixel of the region, until no centroid moves more than 0.01 ΔE or `max_iter`.
/// Centroids are updated from confidently assigned pixels only (distance to the nearest
/// centroid under half the distance to the next), a trimming that keeps blurred boundary
/// pixels from biasing the centroids (in the spirit of trimmed k-means, Cuesta-Albertos,
/// Gordaliza & Matrán 1997, Annals of Statistics 25(2):553-576).
pub fn kmeans_seeded(
    rgb: &[[u8; 3]],
    region: &Mask,
    seeds: &[Lab],
    max_iter: usize,
    control: &Control,
) -> Result<Vec<Lab>> {
    let stride = (rgb.len() / 200_000).max(1);
    let sample: Vec<Lab> = rgb
        .iter()
        .zip(&region.bits)
        .step_by(stride)
        .filter(|(_, r)| **r)
        .map(|(&p, _)| srgb8_to_lab(p))
        .collect();
    if sample.is_empty() {
        return Err(MicrographError::EmptyRegion {
            reason: "no pixel in the region for k-means".to_string(),
        });
    }
    let mut cents = seeds.to_vec();
    for _ in 0..max_iter {
        control.check()?;
        let k = cents.len();
        let mut sums = vec![(0.0, 0.0, 0.0, 0usize); k];
        for s in &sample {
            let c = usize::from(nearest(s, &cents));
            // Trimmed update: skip pixels nearly as close to another centroid (mixed pixels
            // on blurred boundaries), which would pull the centroids together.
            let d1 = s.dist2(&cents[c]);
            let d2 = cents
                .iter()
                .enumerate()
                .filter(|&(i, _)| i != c)
                .map(|(_, o)| s.dist2(o))
                .fold(f64::INFINITY, f64::min);
            if d1 > 0.25 * d2 {
                continue;
            }
            sums[c].0 += s.l;
            sums[c].1 += s.a;
            sums[c].2 += s.b;
            sums[c].3 += 1;
        }
        let mut moved = 0.0f64;
        for (c, s) in cents.iter_mut().zip(&sums) {
            if s.3 > 0 {
                let n = s.3 as f64;
                let new = Lab {
                    l: s.0 / n,
                    a: s.1 / n,
                    b: s.2 / n,
                };
                moved = moved.max(new.dist2(c).sqrt());
                *c = new;
            }
        }
        if moved < 0.01 {
            break;
        }
    }
    Ok(cents)
}

/// Segmentation of a stained (colour) section by nearest centroid in CIELAB.
///
/// `centroids` are the phases' colours (from [`centroid`] of user samples, optionally refined
/// by [`kmeans_seeded`]); `void_centroids` are colours of voids (epoxy, holes), excluded with a
/// rim of `settings.rim_px`. Phases are reported in the order given; `mean_gray` is the mean
/// luma. Clean-up, tiles and bootstrap as in [`segment`](crate::segment::segment).
pub fn segment_colour(
    image: &Micrograph,
    region: &Mask,
    centroids: &[Lab],
    void_centroids: &[Lab],
    settings: &SegmentSettings,
    control: &Control,
) -> Result<Segmentation> {
    let (w, h) = (image.width(), image.height());
    let classes = centroids.len();
    let mut all = centroids.to_vec();
    all.extend_from_slice(void_centroids);
    let rgb = image.rgb8();
    let mut class_map = classify_nearest(&rgb, region, &all)?;
    drop(rgb);
    control.step(0.3)?;
    let region_pixels = region.count();
    if !void_centroids.is_empty() {
        let voids: Vec<u8> = class_map
            .iter()
            .map(|&c| {
                if c != NOT_MEASURED && usize::from(c) >= classes {
                    255
                } else {
                    0
                }
            })
            .collect();
        let img = image::GrayImage::from_raw(w, h, voids)
            .ok_or_else(|| MicrographError::Mismatch("void mask size".to_string()))?;
        let grown = imageproc::morphology::dilate(
            &img,
            imageproc::distance_transform::Norm::L2,
            settings.rim_px,
        );
        for (c, &g) in class_map.iter_mut().zip(grown.as_raw()) {
            if g != 0 {
                *c = NOT_MEASURED;
            }
        }
    }
    if settings.min_feature_px > 1 {
        remove_small_features(&mut class_map, w, h, settings.min_feature_px, classes)?;
    }
    control.step(0.7)?;
    let plane: GrayPlane = image.gray_plane();
    let measured: Vec<bool> = class_map.iter().map(|&c| c != NOT_MEASURED).collect();
    let hist = Histogram::of_region(&plane, Some(&measured), 0)?;
    let measured_pixels = hist.total();
    if measured_pixels == 0 {
        return Err(MicrographError::EmptyRegion {
            reason: "every pixel of the region is a void or a void rim".to_string(),
        });
    }
    let tile_px = settings
        .tile_px
        .unwrap_or_else(|| (w.min(h) / 8).clamp(32, 512))
        .max(1);
    let tiles = tile_stats(&plane, &class_map, classes, tile_px);
    let ci = fraction_ci95(&tiles, classes, settings.bootstrap_resamples, settings.seed);
    let mut px = vec![0u64; classes];
    let mut gray = vec![0f64; classes];
    for (&c, &g) in class_map.iter().zip(&plane.data) {
        if c != NOT_MEASURED {
            px[usize::from(c)] += 1;
            gray[usize::from(c)] += f64::from(g);
        }
    }
    let phases = (0..classes)
        .map(|c| PhaseResult {
            label: format!("phase {}", c + 1),
            pixels: px[c],
            area_fraction: px[c] as f64 / measured_pixels as f64,
            mean_gray: if px[c] > 0 {
                gray[c] / px[c] as f64
            } else {
                0.0
            },
            area_fraction_ci95: ci.as_ref().map(|v| v[c]),
            area_um2: settings.pixel_size.map(|p| p.area_um2(px[c] as f64)),
        })
        .collect();
    control.step(1.0)?;
    Ok(Segmentation {
        width: w,
        height: h,
        region_pixels,
        measured_pixels,
        excluded_fraction: 1.0 - measured_pixels as f64 / region_pixels.max(1) as f64,
        void_level: None,
        rim_px: settings.rim_px,
        levels: Vec::new(),
        otsu_levels: None,
        phases,
        sensitivity: Sensitivity {
            step: 0,
            minus: Vec::new(),
            plus: Vec::new(),
            max_abs_change: Vec::new(),
        },
        unmixing: None,
        tile_px,
        tiles,
        pixel_size_um: settings.pixel_size.map(|p| p.pixel_size_um()),
        warnings: Vec::new(),
        histogram: hist,
        class_map,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lab_of_reference_colours() {
        // Source: CIE 15:2004 with IEC 61966-2-1 sRGB; white (255,255,255) is L* = 100,
        // a* = b* = 0; sRGB red (255,0,0) is L* 53.24, a* 80.09, b* 67.20 (tabulated widely,
        // from memory); tolerance 0.05 for the 4-digit matrix.
        let w = srgb8_to_lab([255, 255, 255]);
        assert!(
            (w.l - 100.0).abs() < 0.05 && w.a.abs() < 0.05 && w.b.abs() < 0.05,
            "{w:?}"
        );
        let r = srgb8_to_lab([255, 0, 0]);
        assert!((r.l - 53.24).abs() < 0.05, "{r:?}");
        assert!(
            (r.a - 80.09).abs() < 0.1 && (r.b - 67.20).abs() < 0.1,
            "{r:?}"
        );
    }
}
