//! Delesse principle: the area fraction of a phase on random planar sections estimates its
//! volume fraction.
//!
//! Source: Delesse (1847), "Procédé mécanique pour déterminer la composition des roches",
//! C. R. Acad. Sci. Paris 25:544-545; for isotropic uniform random (IUR) sections the ratio of
//! summed phase area to summed section area is a ratio-unbiased estimator of V_V (Baddeley &
//! Vedel Jensen, *Stereology for Statisticians*, 2005, §4-5; Weibel 1979 *Stereological
//! Methods* vol. 1). The volume is built from oblate spheroids (lamella lenses) of exact total
//! volume; sections are classified by this crate's pipeline and pooled with
//! `combine_by_area`. The check: |estimate - V_V| < 3 standard errors of the ratio estimator
//! (a 3-sigma band: about 1 chance in 370 for a random seed; the seed here is fixed).
#![allow(clippy::unwrap_used)]

use micrograph::bootstrap::{SplitMix64, combine_by_area};
use micrograph::control::Control;
use micrograph::load::GrayPlane;
use micrograph::roi::Mask;
use micrograph::segment::{LevelChoice, SegmentSettings, VoidDetection, segment};

const NX: usize = 4;
const NZ: usize = 10;
const A: f64 = 0.09; // in-plane semi-axis
const C: f64 = 0.025; // semi-axis along z (lamella thickness / 2)

struct Volume {
    centres: Vec<[f64; 3]>,
}

impl Volume {
    fn new(rng: &mut SplitMix64) -> Self {
        let (cxy, cz) = (1.0 / NX as f64, 1.0 / NZ as f64);
        let mut centres = Vec::new();
        for k in 0..NZ {
            for j in 0..NX {
                for i in 0..NX {
                    let jit = |cell: f64, semi: f64, r: f64| (r - 0.5) * (cell - 2.0 * semi);
                    centres.push([
                        (i as f64 + 0.5) * cxy + jit(cxy, A, rng.next_f64()),
                        (j as f64 + 0.5) * cxy + jit(cxy, A, rng.next_f64()),
                        (k as f64 + 0.5) * cz + jit(cz, C, rng.next_f64()),
                    ]);
                }
            }
        }
        Self { centres }
    }

    fn volume_fraction(&self) -> f64 {
        self.centres.len() as f64 * 4.0 / 3.0 * std::f64::consts::PI * A * A * C
    }

    fn inside(&self, p: [f64; 3]) -> bool {
        // Each spheroid lies wholly inside its own grid cell.
        let i = ((p[0] * NX as f64) as usize).min(NX - 1);
        let j = ((p[1] * NX as f64) as usize).min(NX - 1);
        let k = ((p[2] * NZ as f64) as usize).min(NZ - 1);
        let c = self.centres[(k * NX + j) * NX + i];
        let (dx, dy, dz) = ((p[0] - c[0]) / A, (p[1] - c[1]) / A, (p[2] - c[2]) / C);
        dx * dx + dy * dy + dz * dz < 1.0
    }
}

#[test]
fn random_sections_estimate_volume_fraction() {
    let mut rng = SplitMix64::new(1847);
    let vol = Volume::new(&mut rng);
    let vv = vol.volume_fraction();
    let n_px = 128u32;
    let half = 0.9; // section window [-0.9, 0.9]^2 around the plane's point nearest the centre
    let px_size = 2.0 * half / f64::from(n_px);
    let settings = SegmentSettings {
        levels: LevelChoice::Manual(vec![130]),
        voids: VoidDetection::Off,
        min_feature_px: 0,
        tile_px: Some(32),
        bootstrap_resamples: 10,
        ..SegmentSettings::default()
    };
    let mut segs = Vec::new();
    let mut per_section = Vec::new();
    for _ in 0..80 {
        // IUR plane: normal uniform on the sphere, offset uniform over the cube's extent.
        let z = 2.0 * rng.next_f64() - 1.0;
        let phi = std::f64::consts::TAU * rng.next_f64();
        let r = (1.0 - z * z).sqrt();
        let n = [r * phi.cos(), r * phi.sin(), z];
        let extent = 0.5 * (n[0].abs() + n[1].abs() + n[2].abs());
        let offset = (2.0 * rng.next_f64() - 1.0) * extent;
        // Orthonormal basis u, v of the plane.
        let a = if n[0].abs() < 0.9 {
            [1.0, 0.0, 0.0]
        } else {
            [0.0, 1.0, 0.0]
        };
        let dot = a[0] * n[0] + a[1] * n[1] + a[2] * n[2];
        let u0 = [a[0] - dot * n[0], a[1] - dot * n[1], a[2] - dot * n[2]];
        let ul = (u0[0] * u0[0] + u0[1] * u0[1] + u0[2] * u0[2]).sqrt();
        let u = [u0[0] / ul, u0[1] / ul, u0[2] / ul];
        let v = [
            n[1] * u[2] - n[2] * u[1],
            n[2] * u[0] - n[0] * u[2],
            n[0] * u[1] - n[1] * u[0],
        ];
        let origin = [
            0.5 + offset * n[0],
            0.5 + offset * n[1],
            0.5 + offset * n[2],
        ];
        let mut data = Vec::with_capacity((n_px * n_px) as usize);
        let mut bits = Vec::with_capacity((n_px * n_px) as usize);
        for row in 0..n_px {
            for col in 0..n_px {
                let s = -half + (f64::from(col) + 0.5) * px_size;
                let t = -half + (f64::from(row) + 0.5) * px_size;
                let p = [
                    origin[0] + s * u[0] + t * v[0],
                    origin[1] + s * u[1] + t * v[1],
                    origin[2] + s * u[2] + t * v[2],
                ];
                let in_cube = p.iter().all(|&c| (0.0..1.0).contains(&c));
                bits.push(in_cube);
                data.push(if in_cube && vol.inside(p) { 200 } else { 60 });
            }
        }
        if bits.iter().filter(|&&b| b).count() < 200 {
            continue; // a corner graze: too small a section to classify
        }
        let plane = GrayPlane::new(n_px, n_px, data, 255).unwrap();
        let mask = Mask {
            width: n_px,
            height: n_px,
            bits,
        };
        let seg = segment(&plane, &mask, &settings, &Control::none()).unwrap();
        per_section.push((seg.phases[1].pixels as f64, seg.measured_pixels as f64));
        segs.push(seg);
    }
    let parts: Vec<(&[micrograph::bootstrap::TileStats], f64)> = segs
        .iter()
        .map(|s| (s.tiles.as_slice(), px_size * px_size))
        .collect();
    let combined = combine_by_area(&parts, 200, 3).unwrap();
    let est = combined.area_fraction[1];
    // Standard error of the ratio estimator across sections.
    let n = per_section.len() as f64;
    let mean_area = per_section.iter().map(|p| p.1).sum::<f64>() / n;
    let resid: f64 = per_section.iter().map(|(a, t)| (a - est * t).powi(2)).sum();
    let se = (resid / (n * (n - 1.0))).sqrt() / mean_area;
    eprintln!("V_V {vv:.4}, area-weighted A_A {est:.4} +/- {se:.4} (SE) over {n} sections");
    assert!(
        se < 0.02,
        "enough sections for a meaningful check (SE {se})"
    );
    assert!(
        (est - vv).abs() < 3.0 * se,
        "A_A {est} vs V_V {vv}, SE {se}"
    );
}
