//! `micrograph`: from a backscattered-electron or stained image of an exsolved grain to phase
//! area fractions with uncertainty.
//!
//! The steps, each usable on its own:
//!
//! 1. [`load::load`] reads TIFF, PNG, JPEG or BMP (8/16-bit grey, RGB(A), palette) at full
//!    depth within a memory budget; [`calibration::PixelSize`] turns pixels into µm.
//! 2. [`roi::Roi`] holds include/exclude polygons (design §4 JSON) and rasterises them by the
//!    pixel-centre rule.
//! 3. Optional corrections: [`correct::flatten`] (illumination gradient, fitted on the region)
//!    and [`correct::denoise`] (median or Gaussian).
//! 4. [`segment::segment`] finds voids (cracks, pores, epoxy) and excludes them with a rim,
//!    chooses levels ([`threshold::otsu_level`], [`threshold::multi_otsu_levels`] on the
//!    region's histogram at full depth, or manual), classifies, removes small features, and
//!    reports fractions with a block-bootstrap 95% interval, threshold sensitivity and a second,
//!    blur-insensitive estimate by linear unmixing. [`segment::Segmentation::fractions_at`]
//!    recomputes fractions for new levels from the histogram alone (no pixel pass).
//! 5. [`colour`] classifies stained sections in CIELAB; [`morphometry`] measures lamellae;
//!    [`order::bse_order_hint`] says which grey class is which phase from mean atomic numbers;
//!    [`bootstrap::combine_by_area`] pools several micrographs of one grain.
//!
//! Long passes take a [`control::Control`] (progress callback, cancel flag) and return
//! [`error::MicrographError::Cancelled`] when cancelled.
//!
//! ```
//! use micrograph::control::Control;
//! use micrograph::roi::{Polygon, Roi};
//! use micrograph::segment::{SegmentSettings, segment};
//! use micrograph::synthetic::SyntheticSpec;
//!
//! // A seeded synthetic image: lamellae 8 px wide every 23 px, blurred and noisy.
//! let spec = SyntheticSpec { width: 96, height: 96, gradient: 0.0, cracks: vec![], pores: vec![],
//!                            ..SyntheticSpec::default() };
//! let plane = spec.generate().plane(96, 96, true)?;
//! let roi = Roi { include: vec![Polygon(vec![[4.0, 4.0], [92.0, 4.0], [92.0, 92.0], [4.0, 92.0]])],
//!                 exclude: vec![] };
//! let region = roi.rasterise(96, 96)?;
//! let seg = segment(&plane, &region, &SegmentSettings::default(), &Control::none())?;
//! let lamellae = seg.phases[1].area_fraction;
//! assert!((lamellae - 8.0 / 23.0).abs() < 0.03);
//! // Moving the level: fractions from the histogram, no pass over the pixels.
//! let moved = seg.fractions_at(&[seg.levels[0] + 500]);
//! assert!(moved[1] < lamellae);
//! # Ok::<(), micrograph::error::MicrographError>(())
//! ```

pub mod bootstrap;
pub mod calibration;
pub mod colour;
pub mod control;
pub mod correct;
pub mod error;
pub mod histogram;
pub mod load;
pub mod morphometry;
pub mod order;
mod passes;
pub mod roi;
pub mod segment;
pub mod synthetic;
pub mod threshold;

pub use error::{MicrographError, Result};
