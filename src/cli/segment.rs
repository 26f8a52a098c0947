//! `consolute segment IMAGE [--roi ROI.json] [--classes N] [--level G ...] [--json]`:
//! modal fractions of the N mineral phases of a micrograph (design §4); with
//! `--seeds SEEDS.json`, colour classification of a stained section.

use std::path::PathBuf;

use anyhow::{Context, bail};
use clap::{Args, ValueEnum};
use micrograph::calibration::PixelSize;
use micrograph::colour::{ColourSeeds, Lab, flatten_colour, kmeans_seeded, segment_colour};
use micrograph::control::Control;
use micrograph::correct::{Denoise, denoise, flatten};
use micrograph::histogram::Histogram;
use micrograph::load::{LoadOptions, Micrograph, load};
use micrograph::roi::{Mask, Roi};
use micrograph::segment::{
    LevelChoice, SegmentSettings, Segmentation, VoidDetection, auto_void_level, segment_region,
};
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
    /// Image file: TIFF, PNG, JPEG or BMP; 8- or 16-bit greyscale or colour (colour images are
    /// classified on their luma unless --seeds is given).
    pub image: PathBuf,
    /// Region-of-interest JSON: {"include": [[[x, y], ...]], "exclude": [[[x, y], ...]]}.
    #[arg(long)]
    pub roi: Option<PathBuf>,
    /// Number of mineral phases (default 2, or the number of phases in --seeds).
    #[arg(long)]
    pub classes: Option<usize>,
    /// Colour classification of a stained section from sampled colours, JSON:
    /// {"phases": [{"label": "host", "points": [[x, y], ...]}, ...],
    /// "voids": [{"label": "epoxy", "points": [[x, y], ...]}], "radius_px": 1}.
    /// Each pixel goes to the nearest mixture of two sampled colours (CIELAB), split half way
    /// in linear light.
    #[arg(long, conflicts_with_all = ["levels", "void_level", "no_voids", "bin_shift", "open_close_px", "median_px", "gaussian_sigma_px", "level_method"])]
    pub seeds: Option<PathBuf>,
    /// With --seeds: refine the sampled colours by k-means (seeded from them) first.
    #[arg(long, requires = "seeds")]
    pub kmeans: bool,
    /// Grey level between two phases (give N-1 of them, increasing); default: automatic.
    #[arg(long = "level")]
    pub levels: Vec<u16>,
    /// Automatic level method.
    #[arg(long, value_enum)]
    pub level_method: Option<LevelMethod>,
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
    #[arg(long)]
    pub open_close_px: Option<u8>,
    /// Flatten illumination with a polynomial of this degree (1 or 2) before classification
    /// (colour images with --seeds: one gain for all channels, in linear light).
    #[arg(long)]
    pub flatten: Option<u8>,
    /// Median filter radius (px) before classification.
    #[arg(long, conflicts_with = "gaussian_sigma_px")]
    pub median_px: Option<u8>,
    /// Gaussian filter sigma (px) before classification.
    #[arg(long)]
    pub gaussian_sigma_px: Option<f32>,
    /// Histogram binning: bins of 2^SHIFT grey values (0 = full depth).
    #[arg(long)]
    pub bin_shift: Option<u32>,
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

/// What one classification route adds to the common output.
struct Extra {
    bit_depth: u32,
    labels: Option<Vec<String>>,
    flattening: Value,
    colour: Value,
}

/// Runs `consolute segment`.
pub fn run(args: &SegmentArgs) -> anyhow::Result<()> {
    let options = LoadOptions {
        memory_budget_bytes: args.memory_budget_mib.saturating_mul(1024 * 1024),
    };
    let image = load(&args.image, &options)?;
    // No region of interest: the whole image, with no mask at all where a step needs none.
    let region = match &args.roi {
        Some(p) => Some(Roi::load(p)?.rasterise(image.width(), image.height())?),
        None => None,
    };
    let pixel_size = match (args.pixel_size_um, args.scale_bar_um, args.scale_bar_px) {
        (Some(p), _, _) => Some(PixelSize::new(p)?),
        (None, Some(um), Some(px)) => Some(PixelSize::from_scale_bar(um, px)?),
        _ => None,
    };
    let mut warnings = Vec::new();
    let (seg, extra) = match &args.seeds {
        Some(seeds) => run_colour(args, seeds, &image, region.as_ref(), pixel_size)?,
        None => {
            if image.is_colour() {
                warnings.push(
                    "colour image: classified on its luma; give --seeds for the colour classification of a stained section"
                        .to_string(),
                );
            }
            run_grey(args, image, region.as_ref(), pixel_size)?
        }
    };
    warnings.extend(seg.warnings.iter().cloned());
    let mut phases = seg.phases.clone();
    if let Some(labels) = &extra.labels {
        for (p, l) in phases.iter_mut().zip(labels) {
            p.label = l.clone();
        }
    }
    let morph = if args.morphometry {
        let lamellae = phases
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
            "bit_depth": extra.bit_depth,
            "pixel_size_um": seg.pixel_size_um,
            "phases": phases.iter().map(|p| json!({
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
            "unmixing_note": seg.unmixing_note,
            "colour_unmixing": seg.colour_unmixing,
            "colour": extra.colour,
            "flattening": extra.flattening,
            "morphometry": morph.as_ref().map(|(phase, m)| json!({
                "phase": phases[usize::from(*phase)].label,
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
        return Ok(());
    }
    println!(
        "{}: {} x {} px, {}-bit; measured {} of {} region px; excluded (voids + rims) {:.2}%",
        args.image.display(),
        seg.width,
        seg.height,
        extra.bit_depth,
        seg.measured_pixels,
        seg.region_pixels,
        100.0 * seg.excluded_fraction
    );
    if extra.labels.is_none() {
        println!(
            "thresholds: {:?}  (Otsu: {:?})",
            seg.levels, seg.otsu_levels
        );
    }
    println!(
        "{:<14} {:>12} {:>10} {:>10} {:>20}",
        "phase", "pixels", "area %", "mean grey", "95% interval %"
    );
    for p in &phases {
        let ci = p
            .area_fraction_ci95
            .map(|c| format!("{:.2} - {:.2}", 100.0 * c[0], 100.0 * c[1]))
            .unwrap_or_else(|| "n/a".to_string());
        println!(
            "{:<14} {:>12} {:>10.2} {:>10.1} {:>20}",
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
    if let Some(u) = &seg.colour_unmixing {
        let f: Vec<String> = u
            .area_fraction
            .iter()
            .map(|f| format!("{:.2}%", 100.0 * f))
            .collect();
        println!(
            "colour unmixing: {} (misfit {:.4})",
            f.join(" / "),
            u.residual_rms
        );
    }
    if let Some((phase, m)) = &morph {
        println!(
            "lamellae ({}): {} features, mean width {:.1} px, orientation {:.1} deg, spacing {}",
            phases[usize::from(*phase)].label,
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
    Ok(())
}

/// Greyscale classification (colour images through their luma).
fn run_grey(
    args: &SegmentArgs,
    image: Micrograph,
    region: Option<&Mask>,
    pixel_size: Option<PixelSize>,
) -> anyhow::Result<(Segmentation, Extra)> {
    let classes = args.classes.unwrap_or(2);
    let bin_shift = args.bin_shift.unwrap_or(0);
    let mut plane = image.into_gray_plane();
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
                &Histogram::of_region(&plane, region.map(|r| r.bits.as_slice()), bin_shift)?,
                classes,
            ),
            _ => None,
        };
        let full;
        let fit_region = match region {
            Some(r) => r,
            None => {
                full = Mask::full(plane.width, plane.height);
                &full
            }
        };
        let (flat, fl) = flatten(
            &plane,
            fit_region,
            classes,
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
        match args.level_method.unwrap_or(LevelMethod::OtsuMidpoint) {
            LevelMethod::Otsu => LevelChoice::Otsu,
            LevelMethod::OtsuMidpoint => LevelChoice::OtsuMidpoint,
        }
    };
    let settings = SegmentSettings {
        classes,
        levels,
        bin_shift,
        voids,
        rim_px: args.rim_px,
        min_feature_px: args.min_feature_px,
        open_close_px: args.open_close_px.unwrap_or(0),
        pixel_size,
        ..SegmentSettings::default()
    };
    let seg = segment_region(&plane, region, &settings, &Control::none())
        .with_context(|| format!("segmenting {}", args.image.display()))?;
    let extra = Extra {
        bit_depth: plane.bit_depth(),
        labels: None,
        flattening,
        colour: Value::Null,
    };
    Ok((seg, extra))
}

/// Colour classification of a stained section from the seeds file.
fn run_colour(
    args: &SegmentArgs,
    seeds_path: &std::path::Path,
    image: &Micrograph,
    region: Option<&Mask>,
    pixel_size: Option<PixelSize>,
) -> anyhow::Result<(Segmentation, Extra)> {
    let full;
    let region = match region {
        Some(r) => r,
        None => {
            full = Mask::full(image.width(), image.height());
            &full
        }
    };
    if !image.is_colour() {
        bail!(
            "{}: --seeds needs a colour image (a stained section); this image is greyscale: leave out --seeds",
            args.image.display()
        );
    }
    let seeds = ColourSeeds::load(seeds_path)?;
    if let Some(n) = args.classes
        && n != seeds.phases.len()
    {
        bail!(
            "--classes {n}, but {} names {} phases",
            seeds_path.display(),
            seeds.phases.len()
        );
    }
    let (mut phases, mut voids) = seeds
        .centroids(image)
        .with_context(|| format!("sampling the colours of {}", seeds_path.display()))?;
    let mut flattening = Value::Null;
    let flat;
    let image = match args.flatten {
        Some(degree) => {
            let (f, fl) = flatten_colour(image, region, &phases, &voids, degree, &Control::none())
                .context("flattening the illumination")?;
            flattening = serde_json::to_value(&fl)?;
            // The samples again, on the flattened image.
            (phases, voids) = seeds.centroids(&f)?;
            flat = f;
            &flat
        }
        None => image,
    };
    let method = if args.kmeans {
        let all: Vec<Lab> = phases.iter().chain(&voids).copied().collect();
        let refined = kmeans_seeded(&image.rgb8(), region, &all, 50, &Control::none())?;
        voids = refined[phases.len()..].to_vec();
        phases = refined[..phases.len()].to_vec();
        "k-means seeded from the samples, then nearest mixture line (CIELAB), split half way in linear light"
    } else {
        "sampled colours, nearest mixture line (CIELAB), split half way in linear light"
    };
    let settings = SegmentSettings {
        classes: phases.len(),
        rim_px: args.rim_px,
        min_feature_px: args.min_feature_px,
        pixel_size,
        ..SegmentSettings::default()
    };
    let seg = segment_colour(image, region, &phases, &voids, &settings, &Control::none())
        .with_context(|| format!("segmenting {}", args.image.display()))?;
    let colour = json!({
        "seeds": seeds_path.display().to_string(),
        "method": method,
        "phase_colours_lab": phases,
        "void_colours_lab": voids,
        "void_labels": seeds.voids.iter().map(|v| v.label.clone()).collect::<Vec<_>>(),
    });
    let extra = Extra {
        bit_depth: image.bit_depth(),
        labels: Some(seeds.labels()),
        flattening,
        colour,
    };
    Ok((seg, extra))
}
