//! Optional corrections before classification: flattening of slow illumination gradients and
//! denoising (median or Gaussian).

use image::{ImageBuffer, Luma};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::control::Control;
use crate::error::{MicrographError, Result};
use crate::histogram::Histogram;
use crate::load::GrayPlane;
use crate::roi::Mask;
use crate::threshold::multi_otsu_levels;

/// The fitted illumination (gain) surface, shown to the user.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Flattening {
    /// Polynomial degree (1 = plane, 2 = quadratic).
    pub degree: u8,
    /// Coefficients of `1, u, v[, u^2, u v, v^2]` with `u = 2x/width - 1`, `v = 2y/height - 1`
    /// (pixel centres), normalised so that the gain averages 1 over the region.
    pub coefficients: Vec<f64>,
    /// Smallest gain over the region's sample.
    pub min_gain: f64,
    /// Largest gain over the region's sample.
    pub max_gain: f64,
}

impl Flattening {
    /// Gain at pixel `(x, y)`.
    pub fn gain(&self, x: u32, y: u32, width: u32, height: u32) -> f64 {
        let u = 2.0 * (f64::from(x) + 0.5) / f64::from(width) - 1.0;
        let v = 2.0 * (f64::from(y) + 0.5) / f64::from(height) - 1.0;
        surface_at(&self.coefficients, self.degree, u, v)
    }

    /// The surface of `coefficients`, with its smallest and largest gain over the points
    /// `(u, v)` of the fit's sample; refused when the gain gets near zero (dividing by it would
    /// blow the image up).
    pub(crate) fn over_sample(
        degree: u8,
        coefficients: Vec<f64>,
        sample: impl Iterator<Item = (f64, f64)>,
    ) -> Result<Self> {
        let (mut min_gain, mut max_gain) = (f64::INFINITY, f64::NEG_INFINITY);
        for (u, v) in sample {
            let g = surface_at(&coefficients, degree, u, v);
            min_gain = min_gain.min(g);
            max_gain = max_gain.max(g);
        }
        if min_gain <= 0.05 {
            return Err(MicrographError::EmptyRegion {
                reason:
                    "the fitted illumination surface goes to zero; flattening is not meaningful here"
                        .to_string(),
            });
        }
        Ok(Flattening {
            degree,
            coefficients,
            min_gain,
            max_gain,
        })
    }
}

/// Value at `(u, v)` of the polynomial surface with `coefficients` of [`terms`].
pub(crate) fn surface_at(coefficients: &[f64], degree: u8, u: f64, v: f64) -> f64 {
    terms(u, v, degree)
        .iter()
        .zip(coefficients)
        .map(|(t, c)| t * c)
        .sum()
}

/// The starting surface of a flattening fit (gain 1 everywhere), once the region has given
/// enough sample pixels (50) to fit one.
pub(crate) fn flat_surface(samples: usize, degree: u8) -> Result<Vec<f64>> {
    if samples < 50 {
        return Err(MicrographError::EmptyRegion {
            reason: format!("only {samples} sample pixels for the flattening fit"),
        });
    }
    let mut coef = vec![0.0; terms(0.0, 0.0, degree).len()];
    coef[0] = 1.0;
    Ok(coef)
}

/// Least-squares fit of a polynomial surface of `degree` to ratios `(u, v, r)` (normal
/// equations), scaled so that the surface averages 1 over the points `(u, v)` of `normalise_over`.
pub(crate) fn fit_gain_surface(
    ratios: impl Iterator<Item = (f64, f64, f64)>,
    degree: u8,
    normalise_over: impl ExactSizeIterator<Item = (f64, f64)>,
) -> Result<Vec<f64>> {
    let nt = terms(0.0, 0.0, degree).len();
    let mut ata = vec![vec![0.0; nt]; nt];
    let mut atb = vec![0.0; nt];
    for (u, v, r) in ratios {
        let t = terms(u, v, degree);
        for a in 0..nt {
            atb[a] += t[a] * r;
            for b in 0..nt {
                ata[a][b] += t[a] * t[b];
            }
        }
    }
    let mut coef = solve(ata, atb).ok_or_else(|| MicrographError::EmptyRegion {
        reason: "the region is too small or too thin to fit an illumination surface".to_string(),
    })?;
    let n = normalise_over.len().max(1) as f64;
    let mean_gain = normalise_over
        .map(|(u, v)| surface_at(&coef, degree, u, v))
        .sum::<f64>()
        / n;
    coef.iter_mut().for_each(|c| *c /= mean_gain);
    Ok(coef)
}

pub(crate) fn terms(u: f64, v: f64, degree: u8) -> Vec<f64> {
    if degree >= 2 {
        vec![1.0, u, v, u * u, u * v, v * v]
    } else {
        vec![1.0, u, v]
    }
}

/// Solves the square system `a x = b` by Gaussian elimination with partial pivoting.
pub(crate) fn solve(mut a: Vec<Vec<f64>>, mut b: Vec<f64>) -> Option<Vec<f64>> {
    let n = b.len();
    for col in 0..n {
        let piv = (col..n).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))?;
        if a[piv][col].abs() < 1e-12 {
            return None;
        }
        a.swap(col, piv);
        b.swap(col, piv);
        let pivot_row = a[col].clone();
        for r in col + 1..n {
            let f = a[r][col] / pivot_row[col];
            for (x, p) in a[r][col..].iter_mut().zip(&pivot_row[col..]) {
                *x -= f * p;
            }
            b[r] -= f * b[col];
        }
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        let s: f64 = (r + 1..n).map(|c| a[r][c] * x[c]).sum();
        x[r] = (b[r] - s) / a[r][r];
    }
    Some(x)
}

/// Fits a multiplicative illumination surface on the region and divides it out.
///
/// Method: a class-aware polynomial fit. Pixels are classified by multi-level Otsu into
/// `classes` phases; each pixel's ratio to its class mean is fitted by least squares with a
/// polynomial of `degree` 1 or 2 in the image coordinates; the image is divided by the fit,
/// and the classify-fit cycle is repeated three times. Fitting the ratio to the class mean
/// rather than the raw grey keeps the phase layout out of the fit. Background-surface fitting
/// by low-order polynomials: Russ, *The Image Processing Handbook* (6th ed., 2011), §4.2
/// (correcting nonuniform illumination by fitting a polynomial background).
/// Pixels at or below `exclude_at_or_below` (voids) are left out of the fit.
pub fn flatten(
    plane: &GrayPlane,
    region: &Mask,
    classes: usize,
    degree: u8,
    exclude_at_or_below: Option<u16>,
    control: &Control,
) -> Result<(GrayPlane, Flattening)> {
    if !(1..=2).contains(&degree) {
        return Err(MicrographError::InvalidParameter {
            name: "degree",
            value: degree.to_string(),
            expected: "1 (plane) or 2 (quadratic)".to_string(),
        });
    }
    let (w, h) = (plane.width, plane.height);
    let n = plane.len();
    let step = ((n as f64 / 200_000.0).sqrt().floor() as u32).max(1);
    // Sample (u, v, grey).
    let mut samples: Vec<(f64, f64, f64)> = Vec::new();
    for y in (0..h).step_by(step as usize) {
        for x in (0..w).step_by(step as usize) {
            let i = (y * w + x) as usize;
            let g = plane.data[i];
            if region.bits[i] && exclude_at_or_below.is_none_or(|t| g > t) {
                let u = 2.0 * (f64::from(x) + 0.5) / f64::from(w) - 1.0;
                let v = 2.0 * (f64::from(y) + 0.5) / f64::from(h) - 1.0;
                samples.push((u, v, f64::from(g)));
            }
        }
    }
    let mut coef = flat_surface(samples.len(), degree)?;
    for _ in 0..3 {
        control.check()?;
        let gain = |u: f64, v: f64| surface_at(&coef, degree, u, v);
        // Classify the corrected samples.
        let corrected: Vec<u16> = samples
            .iter()
            .map(|&(u, v, g)| {
                (g / gain(u, v))
                    .round()
                    .clamp(0.0, f64::from(plane.max_value)) as u16
            })
            .collect();
        let sp = GrayPlane::new(corrected.len() as u32, 1, corrected, plane.max_value)?;
        let hist = Histogram::of_region(&sp, None, if plane.max_value > 255 { 4 } else { 0 })?;
        let levels = multi_otsu_levels(&hist, classes)?;
        let stats = hist.class_stats(&levels);
        let class_of = |g: u16| levels.iter().filter(|&&l| g > l).count();
        // Least squares of raw grey / class mean against the polynomial.
        let ratios = samples
            .iter()
            .zip(&sp.data)
            .filter_map(|(&(u, v, g), &cg)| {
                let m = stats[class_of(cg)].mean_gray.filter(|&m| m > 0.0)?;
                Some((u, v, g / m))
            });
        coef = fit_gain_surface(ratios, degree, samples.iter().map(|&(u, v, _)| (u, v)))?;
    }
    let fl = Flattening::over_sample(degree, coef, samples.iter().map(|&(u, v, _)| (u, v)))?;
    let max = f64::from(plane.max_value);
    let data: Vec<u16> = plane
        .data
        .par_chunks(w as usize)
        .enumerate()
        .flat_map_iter(|(y, row)| {
            let fl = &fl;
            row.iter().enumerate().map(move |(x, &g)| {
                (f64::from(g) / fl.gain(x as u32, y as u32, w, h))
                    .round()
                    .clamp(0.0, max) as u16
            })
        })
        .collect();
    Ok((GrayPlane::new(w, h, data, plane.max_value)?, fl))
}

/// Denoising filter before classification.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[non_exhaustive]
pub enum Denoise {
    /// Median over a `(2r+1) x (2r+1)` square (edge pixels use the clipped window).
    /// Source: Tukey (1977), *Exploratory Data Analysis* (running medians); Huang, Yang & Tang
    /// (1979), IEEE Trans. ASSP 27(1):13-18 for 2-D median filtering. Own implementation, because
    /// imageproc's `median_filter` takes 8-bit pixels only.
    Median {
        /// Radius r in pixels (1..=5).
        radius: u8,
    },
    /// Gaussian blur (imageproc `gaussian_blur_f32`, works at 16 bits).
    Gaussian {
        /// Standard deviation in pixels.
        sigma_px: f32,
    },
}

/// Applies a denoising filter, keeping the depth.
pub fn denoise(plane: &GrayPlane, filter: Denoise) -> Result<GrayPlane> {
    let (w, h) = (plane.width as usize, plane.height as usize);
    let data = match filter {
        Denoise::Median { radius } => {
            if !(1..=5).contains(&radius) {
                return Err(MicrographError::InvalidParameter {
                    name: "median radius",
                    value: radius.to_string(),
                    expected: "1 to 5 pixels".to_string(),
                });
            }
            let r = usize::from(radius);
            let src = &plane.data;
            let mut out = vec![0u16; w * h];
            out.par_chunks_mut(w).enumerate().for_each(|(y, row)| {
                let mut win = Vec::with_capacity((2 * r + 1) * (2 * r + 1));
                for (x, o) in row.iter_mut().enumerate() {
                    win.clear();
                    for yy in y.saturating_sub(r)..(y + r + 1).min(h) {
                        let base = yy * w;
                        win.extend_from_slice(
                            &src[base + x.saturating_sub(r)..base + (x + r + 1).min(w)],
                        );
                    }
                    let mid = win.len() / 2;
                    *o = *win.select_nth_unstable(mid).1;
                }
            });
            out
        }
        Denoise::Gaussian { sigma_px } => {
            if !(sigma_px.is_finite() && sigma_px > 0.0) {
                return Err(MicrographError::InvalidParameter {
                    name: "gaussian sigma_px",
                    value: sigma_px.to_string(),
                    expected: "a positive number of pixels".to_string(),
                });
            }
            let img: ImageBuffer<Luma<u16>, Vec<u16>> =
                ImageBuffer::from_raw(plane.width, plane.height, plane.data.clone())
                    .ok_or_else(|| MicrographError::Mismatch("plane size".to_string()))?;
            imageproc::filter::gaussian_blur_f32(&img, sigma_px).into_raw()
        }
    };
    GrayPlane::new(plane.width, plane.height, data, plane.max_value)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn median_removes_isolated_spike() {
        // Source: definition of the median; a single outlier in a flat 3x3 window is replaced.
        let mut data = vec![100u16; 25];
        data[12] = 60000;
        let p = GrayPlane::new(5, 5, data, u16::MAX).unwrap();
        let d = denoise(&p, Denoise::Median { radius: 1 }).unwrap();
        assert_eq!(d.data[12], 100);
    }

    #[test]
    fn flatten_recovers_a_linear_gain() {
        // Source: construction; two phases (1000, 2000) under a gain 1 + 0.2 u. The fitted
        // gain ratio between the right and left edge must be (1.2 / 0.8) within 2% (blur-free,
        // noise-free, limited only by rounding and the class means).
        let (w, h) = (128u32, 64u32);
        let data: Vec<u16> = (0..w * h)
            .map(|i| {
                let (x, y) = (i % w, i / w);
                let base = if (x / 8 + y / 8) % 2 == 0 {
                    1000.0
                } else {
                    2000.0
                };
                let u = 2.0 * (f64::from(x) + 0.5) / f64::from(w) - 1.0;
                (base * (1.0 + 0.2 * u)) as u16
            })
            .collect();
        let p = GrayPlane::new(w, h, data, u16::MAX).unwrap();
        let (flat, fl) = flatten(&p, &Mask::full(w, h), 2, 1, None, &Control::none()).unwrap();
        let ratio = fl.gain(w - 1, 0, w, h) / fl.gain(0, 0, w, h);
        let expected = (1.0 + 0.2 * (1.0 - 1.0 / 128.0)) / (1.0 - 0.2 * (1.0 - 1.0 / 128.0));
        assert!(
            (ratio / expected - 1.0).abs() < 0.02,
            "ratio {ratio}, expected {expected}"
        );
        let spread = flat
            .data
            .iter()
            .filter(|&&g| g > 1500)
            .map(|&g| f64::from(g))
            .fold((f64::MAX, 0.0f64), |a, g| (a.0.min(g), a.1.max(g)));
        assert!(
            spread.1 - spread.0 < 60.0,
            "bright phase flat within 3%: {spread:?}"
        );
    }
}
