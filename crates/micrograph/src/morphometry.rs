//! Lamella morphometry: count, area distribution, mean width (distance transform), orientation
//! (structure tensor) and spacing across the lamellae, with a warning for thin lamellae.

use image::GrayImage;
use imageproc::distance_transform::euclidean_squared_distance_transform;
use imageproc::region_labelling::{Connectivity, connected_components};
use serde::{Deserialize, Serialize};

use crate::calibration::PixelSize;
use crate::control::Control;
use crate::error::{MicrographError, Result};

/// Lamellae narrower than this (px) get the thin-lamella warning: with edge blur of 1-2 px on
/// each side, most of their area lies in blurred edges (common practice).
pub const THIN_LAMELLA_WIDTH_PX: f64 = 5.0;

/// Morphometry of one phase (the lamellae).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Morphometry {
    /// Number of 8-connected lamellae.
    pub count: usize,
    /// Lamella areas, px², sorted ascending.
    pub areas_px: Vec<u64>,
    /// Median area, px².
    pub median_area_px: f64,
    /// Mean width, px: `2 d - 1/2` averaged over ridge pixels of the Euclidean distance
    /// transform (d = distance from a ridge pixel centre to the nearest pixel centre of another
    /// phase; the edge lies half a pixel before it, and the ridge of an even-width band sits
    /// half a pixel off the centre line, hence the -1/2 on average; accurate to about 0.5 px).
    pub mean_width_px: f64,
    /// Direction along the lamellae, degrees from the x axis (0..180, y down).
    pub orientation_deg: f64,
    /// Coherence of the structure tensor, 0 (isotropic) to 1 (perfectly parallel).
    pub coherence: f64,
    /// Mean repeat distance across the lamellae, px: along transects normal to them, the
    /// distance from the first to the last entry into a lamella over the number of intervals.
    pub spacing_px: Option<f64>,
    /// The same lengths in µm (with a pixel size).
    pub mean_width_um: Option<f64>,
    /// Spacing in µm.
    pub spacing_um: Option<f64>,
    /// Median area in µm².
    pub median_area_um2: Option<f64>,
    /// Warnings (thin lamellae).
    pub warnings: Vec<String>,
}

/// Measures the pixels of class `class` in a class map (row-major, `width x height`).
///
/// Sources: distance transform by Felzenszwalb & Huttenlocher (2012), "Distance transforms of
/// sampled functions", Theory of Computing 8:415-428 (imageproc's
/// `euclidean_squared_distance_transform`); structure tensor orientation by Bigün & Granlund
/// (1987), "Optimal orientation detection of linear symmetry", Proc. 1st ICCV 433-438:
/// with J the sum of gradient outer products, the dominant gradient direction is
/// `theta = atan2(2 Jxy, Jxx - Jyy) / 2` and the lamellae run perpendicular to it; spacing by
/// counting intercepts along transects normal to the lamellae (Underwood, *Quantitative
/// Stereology*, 1970, ch. 2: mean free spacing from intercept counts).
pub fn morphometry(
    class_map: &[u8],
    width: u32,
    height: u32,
    class: u8,
    pixel_size: Option<PixelSize>,
    control: &Control,
) -> Result<Morphometry> {
    let (w, h) = (width as usize, height as usize);
    if class_map.len() != w * h {
        return Err(MicrographError::Mismatch("class map size".to_string()));
    }
    let ind: Vec<u8> = class_map.iter().map(|&c| u8::from(c == class)).collect();
    let img = GrayImage::from_raw(width, height, ind.iter().map(|&v| v * 255).collect())
        .ok_or_else(|| MicrographError::Mismatch("class map size".to_string()))?;
    let labels = connected_components(&img, Connectivity::Eight, image::Luma([0u8]));
    let max_label = labels.iter().copied().max().unwrap_or(0) as usize;
    let mut sizes = vec![0u64; max_label + 1];
    for &l in labels.iter() {
        sizes[l as usize] += 1;
    }
    let mut areas_px: Vec<u64> = sizes.into_iter().skip(1).filter(|&s| s > 0).collect();
    areas_px.sort_unstable();
    control.step(0.3)?;

    // Width from the distance transform: distance of each lamella pixel to the nearest other.
    let other = GrayImage::from_raw(width, height, ind.iter().map(|&v| 1 - v).collect())
        .ok_or_else(|| MicrographError::Mismatch("class map size".to_string()))?;
    let d2 = euclidean_squared_distance_transform(&other);
    let mut ridge_sum = 0.0;
    let mut ridge_n = 0usize;
    for y in 1..h.saturating_sub(1) {
        for x in 1..w.saturating_sub(1) {
            if ind[y * w + x] == 0 {
                continue;
            }
            let v = d2.get_pixel(x as u32, y as u32)[0];
            let mut is_ridge = true;
            'n: for dy in -1i64..=1 {
                for dx in -1i64..=1 {
                    let q = d2.get_pixel((x as i64 + dx) as u32, (y as i64 + dy) as u32)[0];
                    if q > v {
                        is_ridge = false;
                        break 'n;
                    }
                }
            }
            if is_ridge {
                ridge_sum += 2.0 * v.sqrt() - 0.5;
                ridge_n += 1;
            }
        }
    }
    let mean_width_px = if ridge_n > 0 {
        ridge_sum / ridge_n as f64
    } else {
        0.0
    };
    control.step(0.6)?;

    // Structure tensor of the indicator smoothed by a Gaussian (sigma 2 px, which removes the
    // staircase anisotropy of pixel edges), central differences.
    let smooth: image::ImageBuffer<image::Luma<f32>, Vec<f32>> =
        image::ImageBuffer::from_raw(width, height, ind.iter().map(|&v| f32::from(v)).collect())
            .ok_or_else(|| MicrographError::Mismatch("class map size".to_string()))?;
    let sm = imageproc::filter::gaussian_blur_f32(&smooth, 2.0).into_raw();
    let (mut jxx, mut jyy, mut jxy) = (0.0f64, 0.0f64, 0.0f64);
    for y in 1..h.saturating_sub(1) {
        for x in 1..w.saturating_sub(1) {
            let gx = (f64::from(sm[y * w + x + 1]) - f64::from(sm[y * w + x - 1])) / 2.0;
            let gy = (f64::from(sm[(y + 1) * w + x]) - f64::from(sm[(y - 1) * w + x])) / 2.0;
            jxx += gx * gx;
            jyy += gy * gy;
            jxy += gx * gy;
        }
    }
    let theta_grad = 0.5 * (2.0 * jxy).atan2(jxx - jyy);
    let tr = jxx + jyy;
    let coherence = if tr > 0.0 {
        ((jxx - jyy).powi(2) + 4.0 * jxy * jxy).sqrt() / tr
    } else {
        0.0
    };
    let orientation_deg = (theta_grad.to_degrees() + 90.0).rem_euclid(180.0);

    // Spacing: transects along the gradient direction, every 4 px across, sampled every 0.5 px.
    let (nx, ny) = (theta_grad.cos(), theta_grad.sin());
    let (cx, cy) = (w as f64 / 2.0, h as f64 / 2.0);
    let half_diag = (cx * cx + cy * cy).sqrt();
    let mut span = 0.0f64;
    let mut intervals = 0usize;
    let mut offset = -half_diag;
    while offset <= half_diag {
        let (ox, oy) = (cx - ny * offset, cy + nx * offset);
        let mut prev: Option<u8> = None;
        let (mut first, mut last, mut entries) = (0.0f64, 0.0f64, 0usize);
        let mut t = -half_diag;
        while t <= half_diag {
            let (px, py) = (ox + nx * t, oy + ny * t);
            let inside = px >= 0.0 && py >= 0.0 && (px as usize) < w && (py as usize) < h;
            let c = if inside {
                class_map[py as usize * w + px as usize]
            } else {
                crate::segment::NOT_MEASURED
            };
            if c == crate::segment::NOT_MEASURED {
                // A gap ends the run of entries.
                if entries >= 2 {
                    span += last - first;
                    intervals += entries - 1;
                }
                entries = 0;
                prev = None;
            } else {
                let v = u8::from(c == class);
                if prev == Some(0) && v == 1 {
                    if entries == 0 {
                        first = t;
                    }
                    last = t;
                    entries += 1;
                }
                prev = Some(v);
            }
            t += 0.5;
        }
        if entries >= 2 {
            span += last - first;
            intervals += entries - 1;
        }
        offset += 4.0;
    }
    let spacing_px = (intervals > 0).then(|| span / intervals as f64);

    let median_area_px = if areas_px.is_empty() {
        0.0
    } else {
        let n = areas_px.len();
        if n % 2 == 1 {
            areas_px[n / 2] as f64
        } else {
            (areas_px[n / 2 - 1] + areas_px[n / 2]) as f64 / 2.0
        }
    };
    let mut warnings = Vec::new();
    if ridge_n > 0 && mean_width_px < THIN_LAMELLA_WIDTH_PX {
        warnings.push(format!(
            "lamellae are only {mean_width_px:.1} px wide: edge blur makes area fractions unreliable; \
             image at higher magnification or use broad-beam analysis"
        ));
    }
    control.step(1.0)?;
    Ok(Morphometry {
        count: areas_px.len(),
        median_area_px,
        areas_px,
        mean_width_px,
        orientation_deg,
        coherence,
        spacing_px,
        mean_width_um: pixel_size.map(|p| p.length_um(mean_width_px)),
        spacing_um: spacing_px.and_then(|s| pixel_size.map(|p| p.length_um(s))),
        median_area_um2: pixel_size.map(|p| p.area_um2(median_area_px)),
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn bands(w: u32, h: u32, period: f64, width: f64, angle_deg: f64) -> Vec<u8> {
        let a = angle_deg.to_radians();
        let (nx, ny) = (-a.sin(), a.cos());
        (0..w * h)
            .map(|i| {
                let (x, y) = (f64::from(i % w) + 0.5, f64::from(i / w) + 0.5);
                u8::from((x * nx + y * ny).rem_euclid(period) < width)
            })
            .collect()
    }

    #[test]
    fn parallel_bands_geometry() {
        // Source: the construction (bands of known width, spacing and direction). Tolerances:
        // width 0.6 px (ridge estimator, see the field docs), spacing 3% (transect sampling at
        // 0.5 px), orientation 1 degree.
        for (angle, width) in [(0.0, 8.0), (30.0, 9.0), (120.0, 6.0)] {
            let map = bands(200, 160, 20.0, width, angle);
            let m = morphometry(&map, 200, 160, 1, None, &Control::none()).unwrap();
            assert!(
                (m.mean_width_px - width).abs() < 0.6,
                "angle {angle}: width {}",
                m.mean_width_px
            );
            let sp = m.spacing_px.unwrap();
            assert!(
                (sp / 20.0 - 1.0).abs() < 0.03,
                "angle {angle}: spacing {sp}"
            );
            let d = (m.orientation_deg - angle).abs() % 180.0;
            assert!(
                d.min(180.0 - d) < 1.0,
                "angle {angle}: orientation {}",
                m.orientation_deg
            );
            assert!(m.warnings.is_empty());
        }
    }

    #[test]
    fn thin_lamellae_warn() {
        // Source: construction; 3 px bands are under the 5 px limit (common practice).
        let map = bands(120, 120, 15.0, 3.0, 0.0);
        let m = morphometry(&map, 120, 120, 1, None, &Control::none()).unwrap();
        assert_eq!(m.count, 8, "120 px / 15 px period = 8 bands");
        assert!(!m.warnings.is_empty(), "width {}", m.mean_width_px);
    }
}
