//! Seeded synthetic micrographs of known construction: parallel lamellae, edge blur, noise, an
//! illumination gradient, cracks and pores. Used by the tests, the benches and the demo; the
//! construction's exact lamella coverage of every pixel is returned with the image.

use rayon::prelude::*;

use crate::bootstrap::SplitMix64;
use crate::error::Result;
use crate::load::{GrayPlane, Micrograph, Pixels};

/// Construction of a synthetic two-phase image with voids.
#[derive(Debug, Clone, PartialEq)]
pub struct SyntheticSpec {
    /// Width in px.
    pub width: u32,
    /// Height in px.
    pub height: u32,
    /// Lamella repeat distance across the lamellae, px.
    pub period_px: f64,
    /// Lamella width across the lamellae, px.
    pub lamella_width_px: f64,
    /// Lamella orientation (direction along the lamellae), degrees from the x axis.
    pub angle_deg: f64,
    /// Host (matrix) level, 0..1 of full scale.
    pub host_level: f64,
    /// Lamella level, 0..1.
    pub lamella_level: f64,
    /// Void (crack, pore, epoxy) level, 0..1.
    pub void_level: f64,
    /// Gaussian edge blur, px (0 = none).
    pub blur_sigma_px: f64,
    /// Gaussian noise, fraction of full scale.
    pub noise_sigma: f64,
    /// Multiplicative illumination gradient: gain `1 + g (x/w - 1/2) + g/2 (y/h - 1/2)`.
    pub gradient: f64,
    /// Cracks as line segments `(x0, y0, x1, y1, width_px)`.
    pub cracks: Vec<(f64, f64, f64, f64, f64)>,
    /// Pores as discs `(cx, cy, radius_px)`.
    pub pores: Vec<(f64, f64, f64)>,
    /// Seed of the noise.
    pub seed: u64,
    /// Sub-samples per pixel side for the exact coverage (8 for tests; 1 for huge images).
    pub supersample: usize,
}

impl Default for SyntheticSpec {
    fn default() -> Self {
        Self {
            width: 256,
            height: 256,
            period_px: 23.0,
            lamella_width_px: 8.0,
            angle_deg: 63.0,
            host_level: 0.45,
            lamella_level: 0.70,
            void_level: 0.05,
            blur_sigma_px: 1.0,
            noise_sigma: 0.02,
            gradient: 0.10,
            cracks: vec![(10.0, 200.0, 240.0, 170.0, 2.0)],
            pores: vec![(70.0, 60.0, 9.0)],
            seed: 1,
            supersample: 8,
        }
    }
}

/// A generated image with its ground truth.
#[derive(Debug, Clone)]
pub struct Synthetic {
    /// Ideal (blurred, lit, noisy) intensity 0..1 per pixel before quantisation.
    pub intensity: Vec<f32>,
    /// Exact lamella area coverage of each pixel (0..1), before blur, voids removed.
    pub lamella_coverage: Vec<f32>,
    /// Exact void coverage of each pixel (0..1).
    pub void_coverage: Vec<f32>,
}

fn dist_to_segment(px: f64, py: f64, c: &(f64, f64, f64, f64, f64)) -> f64 {
    let (dx, dy) = (c.2 - c.0, c.3 - c.1);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        (((px - c.0) * dx + (py - c.1) * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (px - c.0 - t * dx).hypot(py - c.1 - t * dy)
}

/// Separable Gaussian blur of an f32 plane (edges clamped).
fn gaussian_blur(data: &[f32], w: usize, h: usize, sigma: f64) -> Vec<f32> {
    if sigma <= 0.0 {
        return data.to_vec();
    }
    let r = (3.0 * sigma).ceil() as isize;
    let k: Vec<f32> = (-r..=r)
        .map(|i| (-(i * i) as f64 / (2.0 * sigma * sigma)).exp() as f32)
        .collect();
    let ks: f32 = k.iter().sum();
    let k: Vec<f32> = k.iter().map(|v| v / ks).collect();
    let mut tmp = vec![0f32; w * h];
    tmp.par_chunks_mut(w).enumerate().for_each(|(y, row)| {
        for (x, o) in row.iter_mut().enumerate() {
            *o = (-r..=r)
                .map(|i| {
                    let xx = (x as isize + i).clamp(0, w as isize - 1) as usize;
                    data[y * w + xx] * k[(i + r) as usize]
                })
                .sum();
        }
    });
    let mut out = vec![0f32; w * h];
    out.par_chunks_mut(w).enumerate().for_each(|(y, row)| {
        for (x, o) in row.iter_mut().enumerate() {
            *o = (-r..=r)
                .map(|i| {
                    let yy = (y as isize + i).clamp(0, h as isize - 1) as usize;
                    tmp[yy * w + x] * k[(i + r) as usize]
                })
                .sum();
        }
    });
    out
}

impl SyntheticSpec {
    /// Coverage of lamellae and voids per pixel by `supersample`² sub-samples.
    fn coverage(&self) -> (Vec<f32>, Vec<f32>) {
        let (w, h) = (self.width as usize, self.height as usize);
        let a = self.angle_deg.to_radians();
        let (nx, ny) = (-a.sin(), a.cos()); // normal to the lamellae
        let ss = self.supersample.max(1);
        let mut lam = vec![0f32; w * h];
        let mut void = vec![0f32; w * h];
        lam.par_chunks_mut(w)
            .zip(void.par_chunks_mut(w))
            .enumerate()
            .for_each(|(y, (lrow, vrow))| {
                for x in 0..w {
                    let (mut nl, mut nv) = (0u32, 0u32);
                    for sy in 0..ss {
                        for sx in 0..ss {
                            let px = x as f64 + (sx as f64 + 0.5) / ss as f64;
                            let py = y as f64 + (sy as f64 + 0.5) / ss as f64;
                            let is_void = self
                                .pores
                                .iter()
                                .any(|&(cx, cy, r)| (px - cx).hypot(py - cy) < r)
                                || self
                                    .cracks
                                    .iter()
                                    .any(|c| dist_to_segment(px, py, c) < c.4 / 2.0);
                            if is_void {
                                nv += 1;
                            } else {
                                let d = (px * nx + py * ny).rem_euclid(self.period_px);
                                if d < self.lamella_width_px {
                                    nl += 1;
                                }
                            }
                        }
                    }
                    let n = (ss * ss) as f32;
                    lrow[x] = nl as f32 / n;
                    vrow[x] = nv as f32 / n;
                }
            });
        (lam, void)
    }

    /// Generates the greyscale image.
    pub fn generate(&self) -> Synthetic {
        let (w, h) = (self.width as usize, self.height as usize);
        let (lam, void) = self.coverage();
        let ideal: Vec<f32> = lam
            .iter()
            .zip(&void)
            .map(|(&l, &v)| {
                (self.host_level * f64::from(1.0 - l - v)
                    + self.lamella_level * f64::from(l)
                    + self.void_level * f64::from(v)) as f32
            })
            .collect();
        let blurred = gaussian_blur(&ideal, w, h, self.blur_sigma_px);
        let mut rng = SplitMix64::new(self.seed);
        let intensity: Vec<f32> = blurred
            .iter()
            .enumerate()
            .map(|(i, &b)| {
                let (x, y) = ((i % w) as f64, (i / w) as f64);
                let gain = 1.0
                    + self.gradient * (x / w as f64 - 0.5)
                    + self.gradient / 2.0 * (y / h as f64 - 0.5);
                (f64::from(b) * gain + self.noise_sigma * rng.normal()) as f32
            })
            .collect();
        Synthetic {
            intensity,
            lamella_coverage: lam,
            void_coverage: void,
        }
    }

    /// Exact lamella volume fraction of the infinite construction (width / period).
    pub fn true_lamella_fraction(&self) -> f64 {
        self.lamella_width_px / self.period_px
    }
}

impl Synthetic {
    /// Quantised to 8 or 16 bits.
    pub fn plane(&self, width: u32, height: u32, bits16: bool) -> Result<GrayPlane> {
        let max = if bits16 { u16::MAX } else { 255 };
        let m = f32::from(max);
        let data = self
            .intensity
            .iter()
            .map(|&v| (v * m).round().clamp(0.0, m) as u16)
            .collect();
        GrayPlane::new(width, height, data, max)
    }

    /// As a micrograph (8- or 16-bit greyscale).
    pub fn micrograph(&self, width: u32, height: u32, bits16: bool) -> Result<Micrograph> {
        let p = self.plane(width, height, bits16)?;
        let pixels = if bits16 {
            Pixels::Gray16(p.data)
        } else {
            Pixels::Gray8(p.data.iter().map(|&v| v as u8).collect())
        };
        Micrograph::new(width, height, pixels)
    }

    /// A "stained" colour version: the same construction painted with three sRGB colours
    /// (host, lamella, void); see [`stained_multi`] for how it is rendered. The returned
    /// [`Synthetic`] is the greyscale construction (its coverages are the truth).
    pub fn stained(
        spec: &SyntheticSpec,
        colours: [[u8; 3]; 3],
        noise_sigma: f64,
    ) -> Result<(Micrograph, Synthetic)> {
        let grey = spec.generate();
        let [host, lam, void] = colours;
        let host_cov: Vec<f32> = grey
            .lamella_coverage
            .iter()
            .zip(&grey.void_coverage)
            .map(|(&l, &v)| (1.0 - l - v).max(0.0))
            .collect();
        let image = render_stained(
            spec,
            &[&host_cov, &grey.lamella_coverage],
            &grey.void_coverage,
            &[host, lam],
            void,
            noise_sigma,
        )?;
        Ok((image, grey))
    }
}

/// A further set of parallel lamellae for multi-phase synthetic images.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LamellaSet {
    /// Repeat distance across the lamellae, px.
    pub period_px: f64,
    /// Lamella width, px.
    pub lamella_width_px: f64,
    /// Direction along the lamellae, degrees from the x axis.
    pub angle_deg: f64,
    /// Shift of the pattern across the lamellae, px.
    pub offset_px: f64,
}

/// A stained multi-phase synthetic image with its truth.
#[derive(Debug, Clone)]
pub struct StainedSynthetic {
    /// The colour image.
    pub image: Micrograph,
    /// Exact coverage of each phase per pixel (host first, then the spec's lamellae, then each
    /// further set), voids removed.
    pub phase_coverage: Vec<Vec<f32>>,
    /// Exact void coverage per pixel.
    pub void_coverage: Vec<f32>,
}

/// A stained image of `2 + extra.len()` phases: the host, the lamellae of `spec`, and each
/// further set of lamellae (a later set covers the earlier ones where they cross), with the
/// cracks and pores of `spec` as voids. `phase_colours` are the sRGB colours of the phases in
/// that order; coverage by `spec.supersample`² sub-samples.
///
/// Rendering, in linear light as a camera sees it: each colour is decoded from sRGB
/// (IEC 61966-2-1), the phases are mixed by their coverage of the pixel, blurred by a Gaussian
/// of `spec.blur_sigma_px` (optical blur mixes light linearly), multiplied by the illumination
/// gain `1 + g (x/w - 1/2) + g/2 (y/h - 1/2)` with `g = spec.gradient`, encoded to sRGB, and
/// Gaussian noise of `noise_sigma` (fraction of full scale) is added per channel before
/// rounding to 8 bits.
pub fn stained_multi(
    spec: &SyntheticSpec,
    extra: &[LamellaSet],
    phase_colours: &[[u8; 3]],
    void_colour: [u8; 3],
    noise_sigma: f64,
) -> Result<StainedSynthetic> {
    let n = 2 + extra.len();
    if phase_colours.len() != n {
        return Err(crate::error::MicrographError::InvalidParameter {
            name: "phase_colours",
            value: phase_colours.len().to_string(),
            expected: format!("one colour per phase ({n})"),
        });
    }
    let (w, h) = (spec.width as usize, spec.height as usize);
    let ss = spec.supersample.max(1);
    let normal = |deg: f64| {
        let a = deg.to_radians();
        (-a.sin(), a.cos())
    };
    let (nx, ny) = normal(spec.angle_deg);
    let sets: Vec<(f64, f64, LamellaSet)> = extra
        .iter()
        .map(|s| {
            let (a, b) = normal(s.angle_deg);
            (a, b, *s)
        })
        .collect();
    let mut cov = vec![0f32; n * w * h];
    let mut void = vec![0f32; w * h];
    cov.par_chunks_mut(n * w)
        .zip(void.par_chunks_mut(w))
        .enumerate()
        .for_each(|(y, (crow, vrow))| {
            for x in 0..w {
                let mut counts = vec![0u32; n];
                let mut nv = 0u32;
                for sy in 0..ss {
                    for sx in 0..ss {
                        let px = x as f64 + (sx as f64 + 0.5) / ss as f64;
                        let py = y as f64 + (sy as f64 + 0.5) / ss as f64;
                        let is_void = spec
                            .pores
                            .iter()
                            .any(|&(cx, cy, r)| (px - cx).hypot(py - cy) < r)
                            || spec
                                .cracks
                                .iter()
                                .any(|c| dist_to_segment(px, py, c) < c.4 / 2.0);
                        if is_void {
                            nv += 1;
                            continue;
                        }
                        let mut phase = 0;
                        if (px * nx + py * ny).rem_euclid(spec.period_px) < spec.lamella_width_px {
                            phase = 1;
                        }
                        for (k, (ax, ay, s)) in sets.iter().enumerate() {
                            if (px * ax + py * ay + s.offset_px).rem_euclid(s.period_px)
                                < s.lamella_width_px
                            {
                                phase = 2 + k;
                            }
                        }
                        counts[phase] += 1;
                    }
                }
                let total = (ss * ss) as f32;
                for (k, c) in counts.iter().enumerate() {
                    crow[k * w + x] = *c as f32 / total;
                }
                vrow[x] = nv as f32 / total;
            }
        });
    // Regroup per phase.
    let phase_coverage: Vec<Vec<f32>> = (0..n)
        .map(|k| {
            cov.chunks(n * w)
                .flat_map(|row| row[k * w..(k + 1) * w].iter().copied())
                .collect()
        })
        .collect();
    drop(cov);
    let refs: Vec<&[f32]> = phase_coverage.iter().map(|c| c.as_slice()).collect();
    let image = render_stained(spec, &refs, &void, phase_colours, void_colour, noise_sigma)?;
    Ok(StainedSynthetic {
        image,
        phase_coverage,
        void_coverage: void,
    })
}

/// Renders coverages as a colour image (see [`stained_multi`]).
fn render_stained(
    spec: &SyntheticSpec,
    coverage: &[&[f32]],
    void: &[f32],
    colours: &[[u8; 3]],
    void_colour: [u8; 3],
    noise_sigma: f64,
) -> Result<Micrograph> {
    use crate::colour::{linear_to_srgb, srgb_to_linear};
    let (w, h) = (spec.width as usize, spec.height as usize);
    let lin = |c: [u8; 3]| c.map(|v| srgb_to_linear(f64::from(v) / 255.0));
    let phase_lin: Vec<[f64; 3]> = colours.iter().map(|&c| lin(c)).collect();
    let void_lin = lin(void_colour);
    let mut chans = Vec::with_capacity(3);
    for ch in 0..3 {
        let ideal: Vec<f32> = (0..w * h)
            .map(|i| {
                let mut v = f64::from(void[i]) * void_lin[ch];
                for (cov, c) in coverage.iter().zip(&phase_lin) {
                    v += f64::from(cov[i]) * c[ch];
                }
                v as f32
            })
            .collect();
        chans.push(gaussian_blur(&ideal, w, h, spec.blur_sigma_px));
    }
    let mut rng = SplitMix64::new(spec.seed ^ 0xC0FFEE);
    let px: Vec<[u8; 3]> = (0..w * h)
        .map(|i| {
            let (x, y) = ((i % w) as f64, (i / w) as f64);
            let gain = 1.0
                + spec.gradient * (x / w as f64 - 0.5)
                + spec.gradient / 2.0 * (y / h as f64 - 0.5);
            let mut p = [0u8; 3];
            for (ch, o) in p.iter_mut().enumerate() {
                let v = linear_to_srgb(f64::from(chans[ch][i]) * gain) + noise_sigma * rng.normal();
                *o = (v * 255.0).round().clamp(0.0, 255.0) as u8;
            }
            p
        })
        .collect();
    Micrograph::new(spec.width, spec.height, Pixels::Rgb8(px))
}
