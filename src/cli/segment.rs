//! `consolute segment IMAGE [--roi ROI.json] [--classes N] [--level G ...] [--json]`:
//! modal fractions of the N mineral phases of a micrograph (design §4).

use std::path::PathBuf;

use anyhow::Context;
use clap::{Args, ValueEnum};
use micrograph::calibration::PixelSize;
use micrograph::control::Control;
use micrograph::correct::{Denoise, denoise, flatten};
use micrograph::histogram::Histogram;
use micrograph::load::{LoadOptions, load};
use micrograph::roi::Roi;
use micrograph::segment::{LevelChoice, SegmentSettings, VoidDetection, auto_void_level, segment};
use serde_json::{Value, json};

/// How levels are chosen when none are given.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum LevelMethod {
    /// Multi-level Otsu, then each level moved to the midpoint of the class modes (default).
    OtsuMidpoint,
    /// Multi-level Otsu as is.
    Otsu,
}

/// Arguments of `consolute segment`.
#[derive(Debug, Args)]
pub struct SegmentArgs {
    /// Image file: TIFF, PNG, JPEG or BMP; 8- or 16-bit greyscale or colour (colour uses luma).
    pub image: PathBuf,
    /// Region-of-interest JSON: {"include": [[[x, y], ...]], "exclude": [[[x, y], ...]]}.
    #[arg(long)]
    pub roi: Option<PathBuf>,
    /// Number of mineral phases.
    #[arg(long, default_value_t = 2)]
    pub classes: usize,
    /// Grey level between two phases (give N-1 of them, increasing); default: automatic.
    #[arg(long = "level")]
    pub levels: Vec<u16>,
    /// Automatic level method.
    #[arg(long, value_enum, default_value = "otsu-midpoint")]
    pub level_method: LevelMethod,
    /// Voids: pixels at or below this grey value (default: detected automatically).
    #[arg(long, conflicts_with = "no_voids")]
    pub void_level: Option<u16>,
    /// Do not look for voids.
    #[arg(long)]
    pub no_voids: bool,
    /// Rim excluded around voids, px (as wide as the edge blur).
    #[arg(long, default_value_t = 2)]
    pub rim_px: u8,
    /// Features smaller than this many pixels are merged into their surroundings.
    #[arg(long, default_value_t = 4)]
    pub min_feature_px: u32,
    /// Opening then closing of the brighter phase (two phases), square radius in px.
    #[arg(long, default_value_t = 0)]
    pub open_close_px: u8,
    /// Flatten illumination with a polynomial of this degree (1 or 2) before classification.
    #[arg(long)]
    pub flatten: Option<u8>,
    /// Median filter radius (px) before classification.
    #[arg(long, conflicts_with = "gaussian_sigma_px")]
    pub median_px: Option<u8>,
    /// Gaussian filter sigma (px) before classification.
    #[arg(long)]
    pub gaussian_sigma_px: Option<f32>,
    /// Histogram binning: bins of 2^SHIFT grey values (0 = full depth).
    #[arg(long, default_value_t = 0)]
    pub bin_shift: u32,
    /// Micrometres per pixel.
    #[arg(long, conflicts_with = "scale_bar_um")]
    pub pixel_size_um: Option<f64>,
    /// Scale bar length in micrometres (with --scale-bar-px).
    #[arg(long, requires = "scale_bar_px")]
    pub scale_bar_um: Option<f64>,
    /// Scale bar length in pixels (with --scale-bar-um).
    #[arg(long, requires = "scale_bar_um")]
    pub scale_bar_px: Option<f64>,
    /// Memory budget for loading, MiB.
    #[arg(long, default_value_t = 2048)]
    pub memory_budget_mib: u64,
    /// Also measure the lamellae (the phase with the smaller area): count, areas, width,
    /// orientation, spacing; warns when they are only a few pixels wide.
    #[arg(long)]
    pub morphometry: bool,
    /// Print one JSON object on stdout instead of a table.
    #[arg(long)]
    pub json: bool,
}

/// Runs `consolute segment`.
pub fn run(args: &SegmentArgs) -> anyhow::Result<()> {
    let options = LoadOptions {
        memory_budget_bytes: args.memory_budget_mib.saturating_mul(1024 * 1024),
    };
    let image = load(&args.image, &options)?;
    let mut warnings = Vec::new();
    if image.is_colour() {
        warnings.push(
            "colour image: classified on its luma; use the workbench's colour classification for stained sections"
                .to_string(),
        );
    }
    let mut plane = image.into_gray_plane();
    let roi = match &args.roi {
        Some(p) => Roi::load(p)?,
        None => Roi::default(),
    };
    let region = roi.rasterise(plane.width, plane.height)?;
    let pixel_size = match (args.pixel_size_um, args.scale_bar_um, args.scale_bar_px) {
        (Some(p), _, _) => Some(PixelSize::new(p)?),
        (None, Some(um), Some(px)) => Some(PixelSize::from_scale_bar(um, px)?),
        _ => None,
    };
    if let Some(r) = args.median_px {
        plane = denoise(&plane, Denoise::Median { radius: r })?;
    } else if let Some(s) = args.gaussian_sigma_px {
        plane = denoise(&plane, Denoise::Gaussian { sigma_px: s })?;
    }
    let voids = if args.no_voids {
        VoidDetection::Off
    } else if let Some(v) = args.void_level {
        VoidDetection::AtOrBelow(v)
    } else {
        VoidDetection::Auto
    };
    let mut flattening = Value::Null;
    if let Some(degree) = args.flatten {
        let void_level = match voids {
            VoidDetection::AtOrBelow(v) => Some(v),
            VoidDetection::Auto => auto_void_level(
                &Histogram::of_region(&plane, Some(&region.bits), args.bin_shift)?,
                args.classes,
            ),
            _ => None,
        };
        let (flat, fl) = flatten(
            &plane,
            &region,
            args.classes,
            degree,
            void_level,
            &Control::none(),
        )
        .context("flattening the illumination")?;
        plane = flat;
        flattening = serde_json::to_value(&fl)?;
    }
    let levels = if !args.levels.is_empty() {
        LevelChoice::Manual(args.levels.clone())
    } else {
        match args.level_method {
            LevelMethod::Otsu => LevelChoice::Otsu,
            LevelMethod::OtsuMidpoint => LevelChoice::OtsuMidpoint,
        }
    };
    let settings = SegmentSettings {
        classes: args.classes,
        levels,
        bin_shift: args.bin_shift,
        voids,
        rim_px: args.rim_px,
        min_feature_px: args.min_feature_px,
        open_close_px: args.open_close_px,
        pixel_size,
        ..SegmentSettings::default()
    };
    let seg = segment(&plane, &region, &settings, &Control::none())
        .with_context(|| format!("segmenting {}", args.image.display()))?;
    warnings.extend(seg.warnings.iter().cloned());
    let morph = if args.morphometry {
        let lamellae = seg
            .phases
            .iter()
            .enumerate()
            .min_by(|a, b| a.1.area_fraction.total_cmp(&b.1.area_fraction))
            .map(|(i, _)| i as u8)
            .unwrap_or(0);
        let m = micrograph::morphometry::morphometry(
            &seg.class_map,
            seg.width,
            seg.height,
            lamellae,
            pixel_size,
            &Control::none(),
        )?;
        warnings.extend(m.warnings.iter().cloned());
        Some((lamellae, m))
    } else {
        None
    };

    if args.json {
        let out = json!({
            "image": args.image.display().to_string(),
            "width": seg.width,
            "height": seg.height,
            "bit_depth": plane.bit_depth(),
            "pixel_size_um": seg.pixel_size_um,
            "phases": seg.phases.iter().map(|p| json!({
                "label": p.label,
                "pixels": p.pixels,
                "area_fraction": p.area_fraction,
                "mean_gray": p.mean_gray,
                "area_fraction_ci95": p.area_fraction_ci95,
                "area_um2": p.area_um2,
            })).collect::<Vec<_>>(),
            "excluded_fraction": seg.excluded_fraction,
            "thresholds": seg.levels,
            "otsu_thresholds": seg.otsu_levels,
            "void_level": seg.void_level,
            "rim_px": seg.rim_px,
            "region_pixels": seg.region_pixels,
            "measured_pixels": seg.measured_pixels,
            "sensitivity": seg.sensitivity,
            "unmixing": seg.unmixing,
            "flattening": flattening,
            "morphometry": morph.as_ref().map(|(phase, m)| json!({
                "phase": seg.phases[usize::from(*phase)].label,
                "count": m.count,
                "median_area_px": m.median_area_px,
                "median_area_um2": m.median_area_um2,
                "mean_width_px": m.mean_width_px,
                "mean_width_um": m.mean_width_um,
                "orientation_deg": m.orientation_deg,
                "coherence": m.coherence,
                "spacing_px": m.spacing_px,
                "spacing_um": m.spacing_um,
            })),
            "warnings": warnings,
        });
        println!("{}", serde_json::to_string_pretty(&out)?);
    } else {
        println!(
            "{}: {} x {} px, {}-bit; measured {} of {} region px; excluded (voids + rims) {:.2}%",
            args.image.display(),
            seg.width,
            seg.height,
            plane.bit_depth(),
            seg.measured_pixels,
            seg.region_pixels,
            100.0 * seg.excluded_fraction
        );
        println!(
            "thresholds: {:?}  (Otsu: {:?})",
            seg.levels, seg.otsu_levels
        );
        println!(
            "{:<10} {:>12} {:>10} {:>10} {:>20}",
            "phase", "pixels", "area %", "mean grey", "95% interval %"
        );
        for p in &seg.phases {
            let ci = p
                .area_fraction_ci95
                .map(|c| format!("{:.2} - {:.2}", 100.0 * c[0], 100.0 * c[1]))
                .unwrap_or_else(|| "n/a".to_string());
            println!(
                "{:<10} {:>12} {:>10.2} {:>10.1} {:>20}",
                p.label,
                p.pixels,
                100.0 * p.area_fraction,
                p.mean_gray,
                ci
            );
        }
        if let Some(u) = &seg.unmixing {
            println!(
                "linear unmixing: {:.2}% / {:.2}% (pure levels {:.1}, {:.1})",
                100.0 * u.area_fraction[0],
                100.0 * u.area_fraction[1],
                u.pure_levels[0],
                u.pure_levels[1]
            );
        }
        if let Some((phase, m)) = &morph {
            println!(
                "lamellae ({}): {} features, mean width {:.1} px, orientation {:.1} deg, spacing {}",
                seg.phases[usize::from(*phase)].label,
                m.count,
                m.mean_width_px,
                m.orientation_deg,
                m.spacing_px
                    .map(|s| format!("{s:.1} px"))
                    .unwrap_or_else(|| "n/a".to_string())
            );
        }
        for w in &warnings {
            println!("warning: {w}");
        }
    }
    Ok(())
}
