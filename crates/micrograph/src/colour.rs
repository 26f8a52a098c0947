//! Colour classification of stained sections: nearest centroid in CIELAB from user-picked
//! samples (a seeds file), or k-means seeded from them; flattening of the illumination in
//! linear light, one gain surface for all channels; linear unmixing of the mean colour for up
//! to four phases.
//!
//! **Caution.** Staining feldspars usually follows etching with hydrofluoric acid, which is
//! acutely toxic and causes deep, delayed burns. Follow your laboratory's rules and safety data
//! sheets (fume hood, HF-rated gloves and face shield, calcium gluconate at hand); this software
//! gives no procedure.

use std::path::{Path, PathBuf};

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::bootstrap::{TileStats, fraction_ci95, statistic_ci95};
use crate::control::Control;
use crate::correct::{Flattening, fit_gain_surface, flat_surface, solve, surface_at};
use crate::error::{MicrographError, Result};
use crate::histogram::Histogram;
use crate::load::{GrayPlane, Micrograph, Pixels};
use crate::passes;
use crate::roi::Mask;
use crate::segment::{
    NOT_MEASURED, PhaseResult, SegmentSettings, Segmentation, Sensitivity, remove_small_features,
    tile_and_class_stats,
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

/// sRGB decoding: encoded value (0..1) to linear light (0..1). Source: IEC 61966-2-1:1999.
pub fn srgb_to_linear(c: f64) -> f64 {
    if c <= 0.04045 {
        c / 12.92
    } else {
        ((c + 0.055) / 1.055).powf(2.4)
    }
}

/// sRGB encoding: linear light (0..1) to encoded value (0..1), clamped. Source: IEC
/// 61966-2-1:1999 (the inverse of [`srgb_to_linear`]).
pub fn linear_to_srgb(l: f64) -> f64 {
    let l = l.clamp(0.0, 1.0);
    if l <= 0.003_130_8 {
        12.92 * l
    } else {
        1.055 * l.powf(1.0 / 2.4) - 0.055
    }
}

/// Relative luminance Y of linear sRGB (the middle row of the IEC 61966-2-1 RGB-to-XYZ matrix).
pub fn luminance(rgb: [f64; 3]) -> f64 {
    0.2126 * rgb[0] + 0.7152 * rgb[1] + 0.0722 * rgb[2]
}

/// Linear sRGB (0..1) to CIELAB. Sources: IEC 61966-2-1:1999 (RGB-to-XYZ matrix for D65);
/// CIE 15:2004 Colorimetry (CIELAB, with D65 white Xn = 0.95047, Yn = 1, Zn = 1.08883).
pub fn linear_to_lab([r, g, b]: [f64; 3]) -> Lab {
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

/// CIELAB to linear sRGB: the inverse of [`linear_to_lab`] (same white, same matrix, inverted
/// numerically so the two round-trip exactly).
pub fn lab_to_linear(lab: Lab) -> [f64; 3] {
    let d = 6.0f64 / 29.0;
    let finv = |t: f64| {
        if t > d {
            t * t * t
        } else {
            3.0 * d * d * (t - 4.0 / 29.0)
        }
    };
    let fy = (lab.l + 16.0) / 116.0;
    let xyz = [
        0.95047 * finv(fy + lab.a / 500.0),
        finv(fy),
        1.08883 * finv(fy - lab.b / 200.0),
    ];
    let m = vec![
        vec![0.4124, 0.3576, 0.1805],
        vec![0.2126, 0.7152, 0.0722],
        vec![0.0193, 0.1192, 0.9505],
    ];
    let x = solve(m, xyz.to_vec()).unwrap_or_else(|| vec![0.0; 3]);
    [x[0], x[1], x[2]]
}

/// 8-bit sRGB to CIELAB (see [`linear_to_lab`]).
pub fn srgb8_to_lab(p: [u8; 3]) -> Lab {
    linear_to_lab(p.map(|c| srgb_to_linear(f64::from(c) / 255.0)))
}

/// Linear value of every 8-bit code.
fn linear_lut8() -> Vec<f64> {
    (0..256)
        .map(|c| srgb_to_linear(f64::from(c) / 255.0))
        .collect()
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

/// Classification of a stained section that edge blur does not bias: each pixel is put on the
/// nearest mixture line, in CIELAB, between two of the sampled colours (phases and voids), and
/// takes the colour of the line's end it is nearer to in linear light (the half-way point
/// splits the line).
///
/// Why: blur mixes light linearly, so a blurred boundary between two phases shows the mixtures
/// `(1 - t) e_i + t e_j` of their pure colours (linear sRGB), and a straight edge blurred by a
/// symmetric kernel crosses the half-way mixture at the true edge (Gonzalez & Woods, *Digital
/// Image Processing*, 3rd ed. 2008, §10.2): splitting mixtures at `t = 1/2` keeps the area
/// fractions unbiased, as the half-way grey level does for greyscale images. Plain nearest
/// centroid in CIELAB fails twice: CIELAB is not linear in light, so its bisector cuts a
/// mixture line elsewhere (for a yellow host and pale grey lamellae at about a third of the
/// way: every boundary moves by a fraction of the blur width, several volume % at 1 px blur),
/// and a mixture of two colours can lie nearest a third one (yellow and blue mix to a grey).
/// Distances to the lines are measured in CIELAB (perceptual); the position along a line is
/// the least-squares `t` in linear light, clamped to 0..1. Pure colours are the centroids
/// converted back to linear light ([`lab_to_linear`]).
///
/// Returns the index into `phases` followed by `voids`; `NOT_MEASURED` outside the region.
pub fn classify_half_way(
    rgb: &[[u8; 3]],
    region: &Mask,
    phases: &[Lab],
    voids: &[Lab],
) -> Result<Vec<u8>> {
    let all: Vec<Lab> = phases.iter().chain(voids).copied().collect();
    if all.len() < 2 || all.len() > 16 {
        return Err(MicrographError::InvalidParameter {
            name: "colour centroids",
            value: all.len().to_string(),
            expected: "2 to 16 sampled colours".to_string(),
        });
    }
    if rgb.len() != region.bits.len() {
        return Err(MicrographError::Mismatch(format!(
            "image has {} pixels, region {}",
            rgb.len(),
            region.bits.len()
        )));
    }
    let pure: Vec<[f64; 3]> = all.iter().map(|&c| lab_to_linear(c)).collect();
    Ok(classify_half_way_linear(rgb, region, &pure))
}

/// [`classify_half_way`] with the pure colours given in linear sRGB (2 to 16 of them; lengths
/// checked by the caller).
fn classify_half_way_linear(rgb: &[[u8; 3]], region: &Mask, pure: &[[f64; 3]]) -> Vec<u8> {
    let all: Vec<Lab> = pure.iter().map(|&c| linear_to_lab(c)).collect();
    // Every pair of colours with its direction and squared length in linear light.
    let mut lines = Vec::new();
    for i in 0..all.len() {
        for j in i + 1..all.len() {
            let d: [f64; 3] = std::array::from_fn(|k| pure[j][k] - pure[i][k]);
            let len2: f64 = d.iter().map(|v| v * v).sum();
            if len2 > 0.0 {
                lines.push((i, j, d, len2));
            }
        }
    }
    let lut = linear_lut8();
    rgb.par_iter()
        .zip(region.bits.par_iter())
        .map(|(&p, &r)| {
            if !r {
                return NOT_MEASURED;
            }
            let lin = p.map(|c| lut[usize::from(c)]);
            let lab = linear_to_lab(lin);
            // A single colour (all pairs degenerate) or the nearest centroid as a start.
            let mut best = (f64::INFINITY, usize::from(nearest(&lab, &all)));
            for &(i, j, d, len2) in &lines {
                let e = pure[i];
                let t =
                    ((0..3).map(|k| (lin[k] - e[k]) * d[k]).sum::<f64>() / len2).clamp(0.0, 1.0);
                let m: [f64; 3] = std::array::from_fn(|k| e[k] + t * d[k]);
                let dist = lab.dist2(&linear_to_lab(m));
                if dist < best.0 {
                    best = (dist, if t > 0.5 { j } else { i });
                }
            }
            best.1 as u8
        })
        .collect()
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

/// One set of user-picked sample points (one phase, or one kind of void).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SeedSet {
    /// Name shown in the results.
    pub label: String,
    /// Points `[x, y]` in pixel coordinates (origin top-left); the pixel holding each point,
    /// and its neighbours within `radius_px`, are sampled.
    pub points: Vec<[f64; 2]>,
}

/// The colour-seeds file: sample points for each mineral phase (dark to bright or in any order;
/// results keep this order) and, optionally, for voids (epoxy, holes), which are excluded with
/// a rim. JSON:
/// `{"phases": [{"label": "host", "points": [[x, y], ...]}, ...],
///   "voids": [{"label": "epoxy", "points": [[x, y], ...]}], "radius_px": 1}`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ColourSeeds {
    /// One set per mineral phase (2 to 16).
    pub phases: Vec<SeedSet>,
    /// Void colours (optional).
    #[serde(default)]
    pub voids: Vec<SeedSet>,
    /// Half side of the square sampled around each point, px (0 = the point's pixel only).
    #[serde(default = "default_seed_radius")]
    pub radius_px: u32,
}

fn default_seed_radius() -> u32 {
    1
}

impl ColourSeeds {
    /// Parses the JSON text; `path` is only used in messages.
    pub fn from_json_str(text: &str, path: &Path) -> Result<Self> {
        serde_json::from_str(text).map_err(|e| MicrographError::SeedsSyntax {
            path: path.to_path_buf(),
            line: e.line(),
            column: e.column(),
            message: e.to_string(),
        })
    }

    /// Reads and parses a colour-seeds file.
    pub fn load(path: &Path) -> Result<Self> {
        let text = std::fs::read_to_string(path).map_err(|source| MicrographError::Io {
            path: PathBuf::from(path),
            source,
        })?;
        Self::from_json_str(&text, path)
    }

    /// Checks the sets against an image of `width x height`: 2 to 16 phases, at most 16 sets
    /// in all, every set with at least one point, every point finite and inside the image.
    pub fn validate(&self, width: u32, height: u32) -> Result<()> {
        let bad = |list, index, set: &SeedSet, message: String| MicrographError::InvalidSeeds {
            list,
            index,
            label: set.label.clone(),
            message,
        };
        if !(2..=16).contains(&self.phases.len()) || self.phases.len() + self.voids.len() > 16 {
            return Err(MicrographError::InvalidParameter {
                name: "colour seeds",
                value: format!("{} phases, {} voids", self.phases.len(), self.voids.len()),
                expected: "2 to 16 phases and at most 16 sets in all".to_string(),
            });
        }
        for (list, sets) in [("phases", &self.phases), ("voids", &self.voids)] {
            for (index, set) in sets.iter().enumerate() {
                if set.points.is_empty() {
                    return Err(bad(list, index, set, "has no points".to_string()));
                }
                for (k, p) in set.points.iter().enumerate() {
                    let inside = p[0].is_finite()
                        && p[1].is_finite()
                        && p[0] >= 0.0
                        && p[1] >= 0.0
                        && p[0] < f64::from(width)
                        && p[1] < f64::from(height);
                    if !inside {
                        return Err(bad(
                            list,
                            index,
                            set,
                            format!(
                                "point {k} [{}, {}] is outside the {width} x {height} image",
                                p[0], p[1]
                            ),
                        ));
                    }
                }
            }
        }
        Ok(())
    }

    /// Mean CIELAB colours of the phases and of the voids, sampled from `image` (checked with
    /// [`Self::validate`] first).
    pub fn centroids(&self, image: &Micrograph) -> Result<(Vec<Lab>, Vec<Lab>)> {
        let (w, h) = (image.width(), image.height());
        self.validate(w, h)?;
        let r = i64::from(self.radius_px.min(64));
        let sample = |set: &SeedSet| -> Vec<[u8; 3]> {
            let mut px = Vec::new();
            for p in &set.points {
                let (cx, cy) = (p[0].floor() as i64, p[1].floor() as i64);
                for y in (cy - r).max(0)..=(cy + r).min(i64::from(h) - 1) {
                    for x in (cx - r).max(0)..=(cx + r).min(i64::from(w) - 1) {
                        px.push(image.rgb8_at(x as u32, y as u32));
                    }
                }
            }
            px
        };
        let of = |sets: &[SeedSet]| -> Vec<Lab> {
            sets.iter().filter_map(|s| centroid(&sample(s))).collect()
        };
        Ok((of(&self.phases), of(&self.voids)))
    }

    /// The phases' labels, in order.
    pub fn labels(&self) -> Vec<String> {
        self.phases.iter().map(|s| s.label.clone()).collect()
    }
}

/// Fits a multiplicative illumination surface on a colour image and divides it out of every
/// channel, in linear light.
///
/// A lamp's (or camera's) uneven illumination scales the light reaching each pixel, the same
/// factor for all wavelengths; in linear light that is one gain `g(x, y)` for all three
/// channels, so the fit is made on the relative luminance and the same gain divides R, G and B
/// (hues are kept). Method as [`crate::correct::flatten`] (a class-aware polynomial fit of
/// each pixel's luminance over its class mean, degree 1 or 2, three classify-fit cycles; Russ,
/// *The Image Processing Handbook*, 6th ed. 2011, §4.2), with the classes taken by nearest
/// centroid in CIELAB from `phases` and `voids`; void pixels are left out of the fit. sRGB
/// decoding and encoding: IEC 61966-2-1:1999. The result keeps the image's depth.
pub fn flatten_colour(
    image: &Micrograph,
    region: &Mask,
    phases: &[Lab],
    voids: &[Lab],
    degree: u8,
    control: &Control,
) -> Result<(Micrograph, Flattening)> {
    if !(1..=2).contains(&degree) {
        return Err(MicrographError::InvalidParameter {
            name: "degree",
            value: degree.to_string(),
            expected: "1 (plane) or 2 (quadratic)".to_string(),
        });
    }
    let not_colour = || MicrographError::InvalidParameter {
        name: "colour flattening",
        value: "a greyscale image".to_string(),
        expected: "a colour image (use correct::flatten for greyscale)".to_string(),
    };
    if !image.is_colour() {
        return Err(not_colour());
    }
    if phases.is_empty() {
        return Err(MicrographError::InvalidParameter {
            name: "colour centroids",
            value: "0".to_string(),
            expected: "at least one phase colour".to_string(),
        });
    }
    let (w, h) = (image.width(), image.height());
    if region.width != w || region.height != h {
        return Err(MicrographError::Mismatch(format!(
            "region is {} x {}, image {w} x {h}",
            region.width, region.height
        )));
    }
    let all: Vec<Lab> = phases.iter().chain(voids).copied().collect();
    let lin = LinearRgb::of(image);
    let n = image.width() as usize * image.height() as usize;
    let step = ((n as f64 / 200_000.0).sqrt().floor() as u32).max(1);
    let uv = |x: u32, y: u32| {
        (
            2.0 * (f64::from(x) + 0.5) / f64::from(w) - 1.0,
            2.0 * (f64::from(y) + 0.5) / f64::from(h) - 1.0,
        )
    };
    // Samples (u, v, linear RGB).
    let mut samples: Vec<(f64, f64, [f64; 3])> = Vec::new();
    for y in (0..h).step_by(step as usize) {
        for x in (0..w).step_by(step as usize) {
            let i = (y * w + x) as usize;
            if region.bits[i] {
                let (u, v) = uv(x, y);
                samples.push((u, v, lin.at(i)));
            }
        }
    }
    let gain_at = |coef: &[f64], u: f64, v: f64| surface_at(coef, degree, u, v);
    let mut coef = flat_surface(samples.len(), degree)?;
    for _ in 0..3 {
        control.check()?;
        // Classify the corrected samples; class mean luminance of the phases.
        let classes: Vec<usize> = samples
            .iter()
            .map(|&(u, v, c)| {
                let g = gain_at(&coef, u, v).max(1e-6);
                usize::from(nearest(&linear_to_lab(c.map(|x| x / g)), &all))
            })
            .collect();
        let mut sum = vec![(0.0f64, 0usize); phases.len()];
        for (&(u, v, c), &k) in samples.iter().zip(&classes) {
            if k < phases.len() {
                sum[k].0 += luminance(c) / gain_at(&coef, u, v).max(1e-6);
                sum[k].1 += 1;
            }
        }
        let ratios = samples.iter().zip(&classes).filter_map(|(&(u, v, c), &k)| {
            let (total, count) = *sum.get(k)?;
            let mean = total / count.max(1) as f64;
            (count > 0 && mean > 0.0).then(|| (u, v, luminance(c) / mean))
        });
        coef = fit_gain_surface(ratios, degree, samples.iter().map(|&(u, v, _)| (u, v)))?;
    }
    let fl = Flattening::over_sample(degree, coef, samples.iter().map(|&(u, v, _)| (u, v)))?;
    let pixels = match image.pixels() {
        Pixels::Rgb8(v) => {
            // Encoding through a table over linear values in steps of 1/65535 (under 0.05 of
            // an 8-bit code even on the steep dark end of the curve).
            let enc: Vec<u8> = (0..=65535u32)
                .map(|k| (linear_to_srgb(f64::from(k) / 65535.0) * 255.0).round() as u8)
                .collect();
            let lut = linear_lut8();
            Pixels::Rgb8(
                v.par_chunks(w as usize)
                    .enumerate()
                    .flat_map_iter(|(y, row)| {
                        let (fl, enc, lut) = (&fl, &enc, &lut);
                        row.iter().enumerate().map(move |(x, p)| {
                            let g = fl.gain(x as u32, y as u32, w, h);
                            p.map(|c| {
                                let l = (lut[usize::from(c)] / g).clamp(0.0, 1.0);
                                enc[(l * 65535.0).round() as usize]
                            })
                        })
                    })
                    .collect(),
            )
        }
        Pixels::Rgb16(v) => Pixels::Rgb16(
            v.par_chunks(w as usize)
                .enumerate()
                .flat_map_iter(|(y, row)| {
                    let fl = &fl;
                    row.iter().enumerate().map(move |(x, p)| {
                        let g = fl.gain(x as u32, y as u32, w, h);
                        p.map(|c| {
                            let l = srgb_to_linear(f64::from(c) / 65535.0) / g;
                            (linear_to_srgb(l) * 65535.0).round() as u16
                        })
                    })
                })
                .collect(),
        ),
        Pixels::Gray8(_) | Pixels::Gray16(_) => return Err(not_colour()),
    };
    Ok((Micrograph::new(w, h, pixels)?, fl))
}

/// Linear-light RGB of a micrograph's pixels (8-bit codes through a table; 16-bit by formula).
struct LinearRgb<'a> {
    image: &'a Micrograph,
    lut8: Vec<f64>,
}

impl<'a> LinearRgb<'a> {
    fn of(image: &'a Micrograph) -> Self {
        Self {
            image,
            lut8: linear_lut8(),
        }
    }

    fn at(&self, i: usize) -> [f64; 3] {
        match self.image.pixels() {
            Pixels::Rgb8(v) => v[i].map(|c| self.lut8[usize::from(c)]),
            Pixels::Gray8(v) => [self.lut8[usize::from(v[i])]; 3],
            Pixels::Rgb16(v) => v[i].map(|c| srgb_to_linear(f64::from(c) / 65535.0)),
            Pixels::Gray16(v) => [srgb_to_linear(f64::from(v[i]) / 65535.0); 3],
        }
    }
}

/// Linear unmixing of the mean colour of a stained section into up to four phases.
///
/// Blur (optical or electronic) mixes light linearly and a normalised kernel preserves the
/// region's mean, so in linear light the mean colour is `m = sum_k f_k e_k` with `e_k` the pure
/// colour of phase `k` and `sum_k f_k = 1`: three channel equations and the sum give a
/// determined system for 4 phases and a least-squares one for 2 or 3 (linear spectral mixture
/// analysis: Adams, Smith & Johnson 1986, J. Geophys. Res. 91(B8):8098; sum-to-one by
/// eliminating the last phase, `m - e_N = sum_{k<N} f_k (e_k - e_N)`). With one grey channel
/// the same count gives two equations, so greyscale unmixing is defined for two phases only.
/// Pure colours are the mean linear RGB of each class's core pixels (at least
/// `core_distance_px` from any other class, as for the grey estimate).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ColourUnmixing {
    /// Pure colour of each phase, linear sRGB 0..1 (mean of its core pixels).
    pub pure_linear_rgb: Vec<[f64; 3]>,
    /// Core pixels behind each pure colour.
    pub core_pixels: Vec<u64>,
    /// Mean linear colour of the measured pixels.
    pub mean_linear_rgb: [f64; 3],
    /// Fractions, in the order of the phases (clamped to 0..1 and renormalised).
    pub area_fraction: Vec<f64>,
    /// 95% block-bootstrap intervals (pure colours held fixed).
    pub area_fraction_ci95: Option<Vec<[f64; 2]>>,
    /// Root-mean-square misfit of the mean colour, linear units (0 for four phases).
    pub residual_rms: f64,
    /// True when some interval of the two estimates (classification, unmixing) does not overlap.
    pub disagrees: bool,
}

/// Solves the mixing equations for the fractions (unconstrained, summing to one), with the RMS
/// misfit; None when the pure colours are linearly dependent.
pub fn unmix_colour(pure: &[[f64; 3]], mean: [f64; 3]) -> Option<(Vec<f64>, f64)> {
    let n = pure.len();
    if !(2..=4).contains(&n) {
        return None;
    }
    let last = pure[n - 1];
    let cols: Vec<[f64; 3]> = pure[..n - 1]
        .iter()
        .map(|e| [e[0] - last[0], e[1] - last[1], e[2] - last[2]])
        .collect();
    let rhs = [mean[0] - last[0], mean[1] - last[1], mean[2] - last[2]];
    let k = n - 1;
    let mut ata = vec![vec![0.0; k]; k];
    let mut atb = vec![0.0; k];
    for a in 0..k {
        atb[a] = (0..3).map(|c| cols[a][c] * rhs[c]).sum();
        for b in 0..k {
            ata[a][b] = (0..3).map(|c| cols[a][c] * cols[b][c]).sum();
        }
    }
    // Scale-aware singularity test: the normal matrix must not be near rank-deficient.
    let scale = (0..k).map(|a| ata[a][a]).fold(0.0f64, f64::max);
    if scale <= 1e-12 {
        return None;
    }
    let x = solve(
        ata.iter()
            .map(|r| r.iter().map(|v| v / scale).collect())
            .collect(),
        atb.iter().map(|v| v / scale).collect(),
    )?;
    let mut f = x.clone();
    f.push(1.0 - x.iter().sum::<f64>());
    let fit: Vec<f64> = (0..3)
        .map(|c| f.iter().zip(pure).map(|(fk, e)| fk * e[c]).sum())
        .collect();
    let rms = ((0..3).map(|c| (fit[c] - mean[c]).powi(2)).sum::<f64>() / 3.0).sqrt();
    Some((f, rms))
}

/// Clamps fractions to 0..1 and renormalises them to sum 1.
fn clamp_fractions(f: &[f64]) -> Vec<f64> {
    let c: Vec<f64> = f.iter().map(|v| v.clamp(0.0, 1.0)).collect();
    let s: f64 = c.iter().sum();
    if s > 0.0 {
        c.iter().map(|v| v / s).collect()
    } else {
        c
    }
}

/// Pixel count and summed linear colour of the core pixels of each class `0..classes` (pixels
/// whose `(2d-1) x (2d-1)` window is all of their class; see
/// [`crate::segment::core_histograms`]).
fn core_colours(
    lin: &LinearRgb,
    class_map: &[u8],
    (w, h): (usize, usize),
    classes: usize,
    d: u8,
) -> Vec<(u64, [f64; 3])> {
    let src = passes::MapSource {
        map: class_map,
        width: w,
    };
    passes::fold_core_rows(
        &src,
        (w, h),
        d,
        passes::band_rows(w, h),
        || vec![(0u64, [0.0f64; 3]); classes],
        |acc, y, row| {
            for (x, &c) in row.iter().enumerate() {
                if usize::from(c) < classes {
                    let p = lin.at(y * w + x);
                    let a = &mut acc[usize::from(c)];
                    a.0 += 1;
                    (0..3).for_each(|k| a.1[k] += p[k]);
                }
            }
        },
        |mut a, b| {
            for (x, y) in a.iter_mut().zip(b) {
                x.0 += y.0;
                (0..3).for_each(|k| x.1[k] += y.1[k]);
            }
            a
        },
    )
}

/// The colour unmixing estimate of a colour segmentation (see [`ColourUnmixing`]), with the
/// warnings it raises.
fn colour_unmixing(
    lin: &LinearRgb,
    class_map: &[u8],
    (w, h): (usize, usize),
    classes: usize,
    settings: &SegmentSettings,
    tile_px: usize,
    warnings: &mut Vec<String>,
) -> Option<ColourUnmixing> {
    let core = core_colours(lin, class_map, (w, h), classes, settings.core_distance_px);
    if let Some(k) = core.iter().position(|c| c.0 == 0) {
        warnings.push(format!(
            "colour unmixing: phase {} has no core pixels far enough from edges; no unmixing estimate",
            k + 1
        ));
        return None;
    }
    let pure: Vec<[f64; 3]> = core.iter().map(|(n, s)| s.map(|v| v / *n as f64)).collect();
    // Per-tile channel sums (they ride in `class_area`, one entry per channel).
    let t = tile_px.max(1);
    let tx = w.div_ceil(t);
    let tiles: Vec<TileStats> = (0..h.div_ceil(t))
        .into_par_iter()
        .flat_map_iter(|by| {
            let mut acc = vec![(0u64, [0.0f64; 3]); tx];
            for y in by * t..((by + 1) * t).min(h) {
                for x in 0..w {
                    let i = y * w + x;
                    if usize::from(class_map[i]) < classes {
                        let p = lin.at(i);
                        let a = &mut acc[x / t];
                        a.0 += 1;
                        (0..3).for_each(|k| a.1[k] += p[k]);
                    }
                }
            }
            acc.into_iter().map(|(n, s)| TileStats {
                measured: n as f64,
                class_area: s.to_vec(),
                gray_sum: 0.0,
            })
        })
        .collect();
    let measured: f64 = tiles.iter().map(|t| t.measured).sum();
    if measured <= 0.0 {
        return None;
    }
    let mean: [f64; 3] =
        std::array::from_fn(|k| tiles.iter().map(|t| t.class_area[k]).sum::<f64>() / measured);
    let Some((raw, residual_rms)) = unmix_colour(&pure, mean) else {
        warnings.push(
            "colour unmixing: the phases' pure colours are linearly dependent; no unmixing estimate"
                .to_string(),
        );
        return None;
    };
    let area_fraction = clamp_fractions(&raw);
    if raw
        .iter()
        .zip(&area_fraction)
        .any(|(a, b)| (a - b).abs() > 0.005)
    {
        warnings.push(format!(
            "colour unmixing: the mean colour lies outside the mixtures of the pure colours (raw fractions {raw:.4?}); check the seeds and flattening"
        ));
    }
    let ci = statistic_ci95(
        &tiles,
        settings.bootstrap_resamples,
        settings.seed ^ 0xA5A5,
        classes,
        |sum| {
            let m = std::array::from_fn(|k| sum.class_area[k] / sum.measured);
            unmix_colour(&pure, m)
                .map(|(f, _)| clamp_fractions(&f))
                .unwrap_or_else(|| vec![f64::NAN; classes])
        },
    );
    Some(ColourUnmixing {
        pure_linear_rgb: pure,
        core_pixels: core.iter().map(|c| c.0).collect(),
        mean_linear_rgb: mean,
        area_fraction,
        area_fraction_ci95: ci,
        residual_rms,
        disagrees: false,
    })
}

/// Segmentation of a stained (colour) section by nearest centroid in CIELAB, with boundaries
/// between phases at the half-way point in linear light ([`classify_half_way`]).
///
/// `centroids` are the phases' colours (from [`centroid`] of user samples or
/// [`ColourSeeds::centroids`], optionally refined by [`kmeans_seeded`]); `void_centroids` are
/// colours of voids (epoxy, holes), excluded with a rim of `settings.rim_px`. Phases are
/// reported in the order given; `mean_gray` is the mean luma. Clean-up, tiles and bootstrap as
/// in [`segment`](crate::segment::segment). For 2 to 4 phases a second estimate by linear
/// unmixing of the mean colour is added ([`ColourUnmixing`]).
pub fn segment_colour(
    image: &Micrograph,
    region: &Mask,
    centroids: &[Lab],
    void_centroids: &[Lab],
    settings: &SegmentSettings,
    control: &Control,
) -> Result<Segmentation> {
    let (w, h) = (image.width(), image.height());
    let (wu, hu) = (w as usize, h as usize);
    let classes = centroids.len();
    if !(2..=16).contains(&classes) {
        return Err(MicrographError::InvalidParameter {
            name: "colour centroids",
            value: classes.to_string(),
            expected: "2 to 16 phase colours".to_string(),
        });
    }
    let rgb = image.rgb8();
    let first = classify_half_way(&rgb, region, centroids, void_centroids)?;
    // Pure colours of the phases from the cores of the first classification (sampled colours
    // near lamella edges carry some of the neighbour's colour, most for the thinner phase,
    // which would move the half-way points), then the final classification with them; voids
    // keep their sampled colours (cracks are too thin for cores).
    let lin = LinearRgb::of(image);
    let cores = core_colours(&lin, &first, (wu, hu), classes, settings.core_distance_px);
    drop(first);
    let pure: Vec<[f64; 3]> = centroids
        .iter()
        .zip(&cores)
        .map(|(c, (n, sum))| {
            if *n > 0 {
                sum.map(|v| v / *n as f64)
            } else {
                lab_to_linear(*c)
            }
        })
        .chain(void_centroids.iter().map(|&c| lab_to_linear(c)))
        .collect();
    let mut class_map = classify_half_way_linear(&rgb, region, &pure);
    drop(rgb);
    control.step(0.3)?;
    let region_pixels = region.count();
    if !void_centroids.is_empty() {
        let is_void =
            |i: usize| class_map[i] != NOT_MEASURED && usize::from(class_map[i]) >= classes;
        let rim = passes::rim_indices(
            (wu, hu),
            settings.rim_px,
            |_| true,
            is_void,
            |j| usize::from(class_map[j]) < classes,
        );
        for c in class_map.iter_mut() {
            if usize::from(*c) >= classes {
                *c = NOT_MEASURED;
            }
        }
        for i in rim {
            class_map[i] = NOT_MEASURED;
        }
    }
    if settings.min_feature_px > 1 {
        remove_small_features(&mut class_map, w, h, settings.min_feature_px, classes)?;
    }
    control.step(0.7)?;
    let plane: GrayPlane = image.gray_plane();
    let hist = Histogram::of_class_map(&plane, &class_map, 0)?;
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
    let (tiles, gray) = tile_and_class_stats(&plane, &class_map, classes, tile_px);
    let ci = fraction_ci95(&tiles, classes, settings.bootstrap_resamples, settings.seed);
    let mut px = vec![0u64; classes];
    for t in &tiles {
        for (p, a) in px.iter_mut().zip(&t.class_area) {
            *p += *a as u64;
        }
    }
    let phases: Vec<PhaseResult> = (0..classes)
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
    let mut warnings = Vec::new();
    if phases.iter().any(|p| p.pixels == 0) {
        warnings.push("a phase has no pixels: check the seed colours".to_string());
    }
    let colour_unmixing = if classes <= 4 {
        colour_unmixing(
            &lin,
            &class_map,
            (wu, hu),
            classes,
            settings,
            tile_px as usize,
            &mut warnings,
        )
        .map(|mut u| {
            u.disagrees = (0..classes).any(|k| {
                crate::bootstrap::intervals_disagree(
                    phases[k].area_fraction_ci95,
                    u.area_fraction_ci95.as_ref().map(|c| c[k]),
                )
            });
            if u.disagrees {
                warnings.push(format!(
                    "classification {:.4?} and colour unmixing {:.4?} disagree beyond their intervals: check the seeds, blur and flattening",
                    phases.iter().map(|p| p.area_fraction).collect::<Vec<_>>(),
                    u.area_fraction
                ));
            }
            u
        })
    } else {
        warnings.push(format!(
            "colour unmixing is determined for at most 4 phases (3 channels and the sum to one); {classes} phases have no unmixing estimate"
        ));
        None
    };
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
        unmixing_note: None,
        colour_unmixing,
        tile_px,
        tiles,
        pixel_size_um: settings.pixel_size.map(|p| p.pixel_size_um()),
        warnings,
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

    #[test]
    fn srgb_transfer_round_trips_and_meets_its_breakpoint() {
        // Source: IEC 61966-2-1:1999; the encoded breakpoint 0.04045 decodes to 0.0031308
        // (to 5 digits, both branches meet there); decoding then encoding returns the value.
        assert!((srgb_to_linear(0.04045) - 0.003_130_8).abs() < 1e-6);
        for k in 0..=255 {
            let e = f64::from(k) / 255.0;
            assert!((linear_to_srgb(srgb_to_linear(e)) - e).abs() < 1e-9, "{k}");
        }
    }

    #[test]
    fn lab_inverse_round_trips() {
        // Source: definition; CIELAB back to linear sRGB must return the colour (1e-9).
        for p in [[205u8, 175, 70], [222, 220, 214], [3, 3, 3], [0, 128, 255]] {
            let lin = p.map(|c| srgb_to_linear(f64::from(c) / 255.0));
            let back = lab_to_linear(linear_to_lab(lin));
            for k in 0..3 {
                assert!(
                    (back[k] - lin[k]).abs() < 1e-9,
                    "{p:?}: {back:?} vs {lin:?}"
                );
            }
        }
    }

    #[test]
    fn half_way_rule_splits_linear_mixtures_at_one_half() {
        // Source: construction; mixtures of two colours in linear light at 45% and 55% of the
        // second fall on either side (the Lab bisector alone would put both with the paler).
        let (a, b) = ([205u8, 175, 70], [222u8, 220, 214]);
        let (la, lb) = (
            a.map(|c| srgb_to_linear(f64::from(c) / 255.0)),
            b.map(|c| srgb_to_linear(f64::from(c) / 255.0)),
        );
        let mix = |f: f64| -> [u8; 3] {
            std::array::from_fn(|k| {
                (linear_to_srgb((1.0 - f) * la[k] + f * lb[k]) * 255.0).round() as u8
            })
        };
        let px = vec![mix(0.45), mix(0.55), mix(0.35)];
        let region = Mask::full(3, 1);
        let cents = [srgb8_to_lab(a), srgb8_to_lab(b)];
        let ours = classify_half_way(&px, &region, &cents, &[]).unwrap();
        assert_eq!(ours, vec![0, 1, 0]);
        let lab_only = classify_nearest(&px, &region, &cents).unwrap();
        assert_eq!(
            lab_only[2], 1,
            "the Lab bisector lies below a third of the way"
        );
    }

    #[test]
    fn four_phase_mixture_is_recovered_exactly() {
        // Source: construction; a mean colour made from four pure colours with known fractions
        // (the linear mixing model) gives those fractions back to rounding (1e-9).
        let pure = [
            [0.60, 0.45, 0.08],
            [0.72, 0.70, 0.66],
            [0.10, 0.30, 0.55],
            [0.35, 0.05, 0.20],
        ];
        let f = [0.41, 0.27, 0.19, 0.13];
        let mean = std::array::from_fn(|c| (0..4).map(|k| f[k] * pure[k][c]).sum());
        let (got, rms) = unmix_colour(&pure, mean).unwrap();
        for (a, b) in got.iter().zip(f) {
            assert!((a - b).abs() < 1e-9, "{got:?}");
        }
        assert!(rms < 1e-12);
        // Three phases are over-determined: the exact mixture still fits with no misfit.
        let (got3, rms3) = unmix_colour(&pure[..3], [0.5, 0.5, 0.3]).unwrap();
        assert!((got3.iter().sum::<f64>() - 1.0).abs() < 1e-12);
        assert!(
            rms3 > 0.0,
            "a colour off the plane of the three leaves a misfit"
        );
        // Dependent pure colours are refused, not answered with NaN.
        assert!(unmix_colour(&[[0.2, 0.2, 0.2], [0.2, 0.2, 0.2]], [0.2; 3]).is_none());
    }

    #[test]
    fn seeds_file_errors_name_the_place() {
        let err = ColourSeeds::from_json_str(
            "{\"phases\": [\n {\"label\": \"host\", \"points\": [[1, 2],]}]}",
            Path::new("s.json"),
        )
        .unwrap_err();
        match err {
            MicrographError::SeedsSyntax { line, ref path, .. } => {
                assert_eq!(line, 2);
                assert!(err.to_string().starts_with("s.json:2:"), "{err}");
                assert_eq!(path, Path::new("s.json"));
            }
            other => panic!("unexpected {other}"),
        }
        let seeds = ColourSeeds::from_json_str(
            r#"{"phases": [{"label": "host", "points": [[1, 2]]},
                           {"label": "lamellae", "points": [[3, 4], [40, 4]]}]}"#,
            Path::new("s.json"),
        )
        .unwrap();
        let err = seeds.validate(20, 20).unwrap_err();
        let msg = err.to_string();
        assert!(
            msg.contains("phases 1 (lamellae)") && msg.contains("point 1 [40, 4]"),
            "{msg}"
        );
    }
}
