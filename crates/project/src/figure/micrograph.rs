//! The micrograph with its phase overlay, region outline, scale bar and legend.
//!
//! The class map is not kept in the run's results (it is as large as the image), so the figure
//! segments the image again with the micrograph's stored settings, the same call the run makes;
//! the classification is deterministic, so the overlay is the one the fractions came from.

use micrograph::control::Control;
use micrograph::load::{LoadOptions, load};
use micrograph::segment::{NOT_MEASURED, segment};
use serde::{Deserialize, Serialize};

use super::{
    Anchor, Dash, Figure, FigureError, FigureSize, Frame, Item, Label, LegendEntry, LegendPlace,
    LegendSymbol, Polyline, RasterImage, Rgb, Style, palette,
};
use crate::document::{MicrographSpec, Project};
use crate::run::GrainResult;

/// Choices for [`micrograph_figure`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MicrographFigureOptions {
    /// Width.
    pub size: FigureSize,
    /// Opacity of the phase colours over the grey image, 0-1.
    pub overlay_opacity: f64,
    /// Largest image side embedded, px (larger images are subsampled).
    pub max_side_px: u32,
}

impl Default for MicrographFigureOptions {
    fn default() -> Self {
        MicrographFigureOptions {
            size: FigureSize::SingleColumn,
            overlay_opacity: 0.45,
            max_side_px: 1600,
        }
    }
}

/// Overlay colours of the phases in grain order (light orange then dark blue: apart in
/// lightness as well as hue), and of voids.
const PHASE_COLOURS: [Rgb; 4] = [
    palette::ORANGE,
    palette::BLUE,
    palette::GREEN,
    palette::PURPLE,
];
const VOID_COLOUR: Rgb = palette::VERMILLION;

fn blend(grey: u8, c: Rgb, a: f64) -> [u8; 4] {
    let mix = |v: u8| (f64::from(grey) * (1.0 - a) + f64::from(v) * a).round() as u8;
    [mix(c.0), mix(c.1), mix(c.2), 255]
}

fn find_spec<'a>(
    project: &'a Project,
    grain: &GrainResult,
    label: &str,
) -> Option<&'a MicrographSpec> {
    project
        .samples
        .iter()
        .find(|s| s.id == grain.sample)?
        .grains
        .iter()
        .find(|g| g.id == grain.grain)?
        .micrographs
        .iter()
        .find(|m| m.label == label)
}

/// The grain's micrograph number `index` (0-based) with each measured pixel tinted by its phase,
/// voids and their rims in a separate colour, the area outside the region dimmed, the region
/// outline (exclusions dashed), a scale bar in µm (in px when the pixel size is unknown) and a
/// legend with the area fractions. Data coordinates are µm (or px) from the top-left corner,
/// y downwards.
///
/// # Errors
/// [`FigureError::Grain`] for an unknown micrograph; [`FigureError::Input`] when the image cannot
/// be read or segmented again.
pub fn micrograph_figure(
    project: &Project,
    grain: &GrainResult,
    index: usize,
    options: &MicrographFigureOptions,
) -> Result<Figure, FigureError> {
    let id = format!("{}/{}", grain.sample, grain.grain);
    let result = grain
        .micrographs
        .get(index)
        .ok_or_else(|| FigureError::Grain {
            grain: id.clone(),
            message: format!(
                "no micrograph number {} (the grain has {})",
                index + 1,
                grain.micrographs.len()
            ),
        })?;
    let spec = find_spec(project, grain, &result.label).ok_or_else(|| FigureError::Grain {
        grain: id.clone(),
        message: format!("micrograph '{}' is not in the project", result.label),
    })?;
    let input = |message: String| FigureError::Input {
        path: result.path.display().to_string(),
        message,
    };
    let image = load(&result.path, &LoadOptions::default()).map_err(|e| input(e.to_string()))?;
    let plane = image.gray_plane();
    let region = spec
        .region
        .rasterise(plane.width, plane.height)
        .map_err(|e| input(e.to_string()))?;
    let mut settings = spec.segmentation.clone();
    if let Some(size) = spec.pixel_size_um {
        settings.pixel_size =
            Some(micrograph::calibration::PixelSize::new(size).map_err(|e| input(e.to_string()))?);
    }
    let seg =
        segment(&plane, &region, &settings, &Control::none()).map_err(|e| input(e.to_string()))?;
    let phase_of_class: Vec<Option<usize>> = spec
        .class_phases
        .iter()
        .map(|l| grain.phases.iter().position(|p| &p.label == l))
        .collect();
    // grey stretch between the 0.5 and 99.5 percentiles of the region
    let mut values: Vec<u16> = plane
        .data
        .iter()
        .zip(&region.bits)
        .filter(|(_, r)| **r)
        .map(|(v, _)| *v)
        .collect();
    values.sort_unstable();
    let (g_lo, g_hi) = if values.is_empty() {
        (0.0, f64::from(plane.max_value))
    } else {
        let at = |p: f64| f64::from(values[((values.len() - 1) as f64 * p) as usize]);
        (at(0.005), at(0.995).max(at(0.005) + 1.0))
    };
    let (w, h) = (plane.width, plane.height);
    let step = w.max(h).div_ceil(options.max_side_px.max(64)).max(1);
    let (ow, oh) = (w.div_ceil(step), h.div_ceil(step));
    let a = options.overlay_opacity.clamp(0.0, 1.0);
    let mut rgba = Vec::with_capacity((ow * oh * 4) as usize);
    for y in (0..h).step_by(step as usize) {
        for x in (0..w).step_by(step as usize) {
            let i = (y * w + x) as usize;
            let grey = ((f64::from(plane.data[i]) - g_lo) / (g_hi - g_lo) * 255.0)
                .clamp(0.0, 255.0)
                .round() as u8;
            let c = seg.class_map.get(i).copied().unwrap_or(NOT_MEASURED);
            let px = if !region.bits[i] {
                let d = grey / 2;
                [d, d, d, 255]
            } else if c == NOT_MEASURED {
                blend(grey, VOID_COLOUR, 0.7)
            } else {
                match phase_of_class.get(usize::from(c)).copied().flatten() {
                    Some(p) => blend(grey, PHASE_COLOURS[p % PHASE_COLOURS.len()], a),
                    None => [grey, grey, grey, 255],
                }
            };
            rgba.extend_from_slice(&px);
        }
    }
    let scale = spec.pixel_size_um.unwrap_or(1.0);
    let unit = if spec.pixel_size_um.is_some() {
        "µm"
    } else {
        "px"
    };
    let (wu, hu) = (f64::from(w) * scale, f64::from(h) * scale);
    let mut fig = Figure::new(
        options.size,
        Frame::Plain {
            x: (0.0, wu),
            y: (hu, 0.0),
        },
    );
    fig.title = format!("{id}, {}", result.label);
    fig.legend_place = LegendPlace::Below;
    fig.height_mm = fig.width_mm * (hu / wu) + 22.0;
    fig.items.push(Item::Image(RasterImage {
        top_left: [0.0, 0.0],
        bottom_right: [f64::from(ow * step) * scale, f64::from(oh * step) * scale],
        width: ow,
        height: oh,
        rgba,
    }));
    // region outline: a dark line under a light one reads on any background
    for (polys, dash) in [
        (&spec.region.include, Dash::Solid),
        (&spec.region.exclude, Dash::Dashed),
    ] {
        for poly in polys.iter() {
            let mut pts: Vec<[f64; 2]> = poly
                .0
                .iter()
                .map(|p| [p[0] * scale, p[1] * scale])
                .collect();
            if let Some(first) = pts.first().copied() {
                pts.push(first);
            }
            fig.items.push(Item::Line(Polyline {
                points: pts.clone(),
                style: Style::solid(palette::BLACK, 1.8),
            }));
            fig.items.push(Item::Line(Polyline {
                points: pts,
                style: Style::dashed(Rgb(255, 255, 255), 0.8, dash),
            }));
        }
    }
    // scale bar: a 1-2-5 length near a fifth of the width, bottom right
    let bar = scale_bar_length(wu);
    let margin = wu * 0.04;
    let (x1, yb) = (wu - margin, hu - margin);
    let x0 = x1 - bar;
    fig.items.push(Item::Line(Polyline {
        points: vec![[x0, yb], [x1, yb]],
        style: Style {
            colour: Rgb(255, 255, 255),
            width_pt: 5.0,
            dash: Dash::Solid,
        },
    }));
    fig.items.push(Item::Line(Polyline {
        points: vec![[x0, yb], [x1, yb]],
        style: Style::solid(palette::BLACK, 3.0),
    }));
    fig.items.push(Item::Label(Label {
        at: [0.5 * (x0 + x1), yb],
        offset_pt: [0.0, 7.0],
        text: format!("{} {unit}", format_len(bar)),
        size_pt: fig.font_size_pt,
        colour: palette::BLACK,
        anchor: Anchor::Middle,
        halo: true,
    }));
    for (i, phase) in grain.phases.iter().enumerate() {
        let fraction = result.fractions.get(i).copied().unwrap_or(0.0);
        fig.legend.push(LegendEntry {
            label: format!("{} {:.1} %", phase.label, 100.0 * fraction),
            symbol: LegendSymbol::Patch {
                fill: PHASE_COLOURS[i % PHASE_COLOURS.len()],
                stroke: None,
            },
        });
    }
    fig.legend.push(LegendEntry {
        label: format!(
            "voids and rims (not measured) {:.1} %",
            100.0 * result.excluded_fraction
        ),
        symbol: LegendSymbol::Patch {
            fill: VOID_COLOUR,
            stroke: None,
        },
    });
    fig.legend.push(LegendEntry {
        label: "region outline".into(),
        symbol: LegendSymbol::Line(Style::solid(palette::BLACK, 1.2)),
    });
    Ok(fig)
}

fn format_len(v: f64) -> String {
    if v >= 1.0 {
        format!("{v:.0}")
    } else {
        let d = (-v.log10().floor()) as usize;
        format!("{v:.d$}")
    }
}

/// The scale bar length for an image `width` units wide: the longest 1, 2 or 5 × 10^k not
/// longer than a quarter of the width.
pub fn scale_bar_length(width: f64) -> f64 {
    let q = width / 4.0;
    let base = 10f64.powf(q.log10().floor());
    let f = q / base;
    base * if f >= 5.0 {
        5.0
    } else if f >= 2.0 {
        2.0
    } else {
        1.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scale_bar_is_a_round_length_near_a_fifth() {
        // 1-2-5 series (common practice for scale bars)
        assert_eq!(scale_bar_length(128.0), 20.0);
        assert_eq!(scale_bar_length(1000.0), 200.0);
        assert_eq!(scale_bar_length(50.0), 10.0);
        assert_eq!(format_len(0.5), "0.5");
        assert_eq!(format_len(20.0), "20");
    }
}
