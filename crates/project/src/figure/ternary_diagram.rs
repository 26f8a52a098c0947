//! The ternary Ab–An–Or diagram: isotherms of a ternary model, a grain's lamellae, bulk with its
//! Monte Carlo cloud, and the spot analyses.

use std::path::Path;

use mineral::read_spot_file;
use serde::{Deserialize, Serialize};
use solvus::units::{bar_from_kbar, kelvin_from_celsius};
use solvus::{SolutionModel, ternary_isotherm};

use super::marks;
use super::solvus_diagram::short_citation;
use super::{
    Anchor, Dash, Figure, FigureError, FigureSize, Frame, Item, Label, LegendEntry, LegendPlace,
    LegendSymbol, Polyline, Style, palette,
};
use crate::document::Project;
use crate::run::GrainResult;

const H: f64 = 0.866_025_403_784_438_6; // sqrt(3)/2

/// Plane coordinates of a composition in the Ab–Or–An triangle: Ab at (0, 0), Or at (1, 0),
/// An at (1/2, √3/2); a side has length one. Barycentric coordinates of an equilateral
/// triangle: `x = X_Or + X_An/2`, `y = (√3/2) X_An`. The fractions are normalised to their sum.
pub fn ternary_xy(x_ab: f64, x_or: f64, x_an: f64) -> [f64; 2] {
    let s = x_ab + x_or + x_an;
    let (or, an) = if s > 0.0 {
        (x_or / s, x_an / s)
    } else {
        (0.0, 0.0)
    };
    [or + 0.5 * an, H * an]
}

/// Distance of a plane point from the nearest edge of the triangle.
fn edge_distance(p: [f64; 2]) -> f64 {
    let an = p[1] / H;
    let or = p[0] - 0.5 * an;
    let ab = 1.0 - or - an;
    ab.min(or).min(an) * H
}

fn xy(c: &[f64]) -> [f64; 2] {
    ternary_xy(
        c.first().copied().unwrap_or(0.0),
        c.get(1).copied().unwrap_or(0.0),
        c.get(2).copied().unwrap_or(0.0),
    )
}

/// One spot analysis for a figure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpotPoint {
    /// Phase label.
    pub phase: String,
    /// Spot id.
    pub spot: String,
    /// End-member fractions in the system's basis order (feldspar: Ab, Or, An).
    pub fractions: Vec<f64>,
}

/// The spot analyses a grain's result used, read again from the project's analysis files
/// (off the run's hot path: only figures need single spots).
///
/// # Errors
/// [`FigureError::Input`] when an analysis file cannot be read.
pub fn grain_spots(
    project: &Project,
    project_file: &Path,
    grain: &GrainResult,
) -> Result<Vec<SpotPoint>, FigureError> {
    let mut out = Vec::new();
    for file in project
        .analysis_files
        .iter()
        .filter(|f| f.system == grain.system)
    {
        let path = Project::resolve(project_file, &file.path);
        let table = read_spot_file(&path).map_err(|e| FigureError::Input {
            path: path.display().to_string(),
            message: e.to_string(),
        })?;
        for a in &table.analyses {
            if a.id.sample != grain.sample || a.id.grain != grain.grain {
                continue;
            }
            let Some(phase) = grain.phases.iter().find(|p| p.label == a.id.phase) else {
                continue;
            };
            if !phase.spots_used.contains(&a.id.spot) {
                continue;
            }
            if let Some(fractions) = grain.system.fractions_of(a) {
                out.push(SpotPoint {
                    phase: phase.label.clone(),
                    spot: a.id.spot.clone(),
                    fractions,
                });
            }
        }
    }
    Ok(out)
}

/// Choices for [`ternary_figure`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TernaryFigureOptions {
    /// Width.
    pub size: FigureSize,
    /// Lowest and highest isotherm, °C.
    pub isotherms_c: (f64, f64),
    /// Spacing of the isotherms, °C.
    pub interval_c: f64,
    /// Monte Carlo draws drawn in the cloud at most (evenly picked).
    pub cloud_points: usize,
}

impl Default for TernaryFigureOptions {
    fn default() -> Self {
        TernaryFigureOptions {
            size: FigureSize::SingleColumn,
            isotherms_c: (600.0, 1000.0),
            interval_c: 100.0,
            cloud_points: 600,
        }
    }
}

fn frame_items(fig: &mut Figure) {
    let grid = Style::solid(palette::LIGHT_GREY, 0.35);
    for k in 1..10 {
        let c = k as f64 / 10.0;
        // constant An, constant Or, constant Ab
        for (a, b) in [
            (ternary_xy(1.0 - c, 0.0, c), ternary_xy(0.0, 1.0 - c, c)),
            (ternary_xy(1.0 - c, c, 0.0), ternary_xy(0.0, c, 1.0 - c)),
            (ternary_xy(c, 1.0 - c, 0.0), ternary_xy(c, 0.0, 1.0 - c)),
        ] {
            fig.items.push(Item::Line(Polyline {
                points: vec![a, b],
                style: grid,
            }));
        }
    }
    fig.items.push(Item::Line(Polyline {
        points: vec![[0.0, 0.0], [1.0, 0.0], [0.5, H], [0.0, 0.0]],
        style: Style::solid(palette::BLACK, 0.8),
    }));
    marks::corner_labels(
        fig,
        &[
            ([0.0, 0.0], [-2.0, -8.0], "Ab", Anchor::Middle),
            ([1.0, 0.0], [2.0, -8.0], "Or", Anchor::Middle),
            ([0.5, H], [0.0, 6.0], "An", Anchor::Middle),
        ],
    );
    // edge ticks every 0.2 on the Ab–Or edge (X_Or)
    marks::base_ticks(fig, -7.0);
}

/// Ternary Ab–An–Or diagram (Ab lower left, Or lower right, An at the top) with isotherms of a
/// ternary `model` at `pressure_kbar` every `interval_c`, and for a feldspar grain: its spot
/// analyses as small symbols, phase means, the Monte Carlo cloud of the bulk and the bulk median.
///
/// Data coordinates are the plane coordinates of [`ternary_xy`].
///
/// # Errors
/// [`FigureError::Option`] for a binary model or a bad interval; [`FigureError::Model`] when an
/// isotherm cannot be computed.
pub fn ternary_figure(
    model: &SolutionModel,
    pressure_kbar: f64,
    grain: Option<&GrainResult>,
    spots: &[SpotPoint],
    options: &TernaryFigureOptions,
) -> Result<Figure, FigureError> {
    if model.kind != solvus::ModelKind::Ternary {
        return Err(FigureError::Option {
            option: "model",
            message: format!(
                "'{}' is a binary (Ab-Or) model; isotherms across the triangle need a ternary model (fl1988, eg1990)",
                model.id
            ),
        });
    }
    let (t0, t1) = options.isotherms_c;
    if !(options.interval_c >= 10.0 && t1 >= t0 && (t1 - t0) / options.interval_c <= 30.0) {
        return Err(FigureError::Option {
            option: "interval_c",
            message: format!(
                "isotherms {t0}-{t1} °C every {} °C: the spacing must be at least 10 °C and give at most 30 isotherms",
                options.interval_c
            ),
        });
    }
    let mut fig = Figure::new(
        options.size,
        Frame::Plain {
            x: (-0.07, 1.07),
            y: (-0.09, H + 0.07),
        },
    );
    fig.height_mm = fig.width_mm * 0.95;
    fig.legend_place = LegendPlace::Below;
    fig.title = format!(
        "Ab–An–Or, {} at {pressure_kbar} kbar",
        short_citation(model)
    );
    frame_items(&mut fig);
    let f = fig.font_size_pt;
    let p_bar = bar_from_kbar(pressure_kbar);
    let iso_style = Style::solid(palette::BLUE, 0.8);
    let n_iso = ((t1 - t0) / options.interval_c).floor() as usize;
    let mut placed: Vec<[f64; 2]> = Vec::new();
    for k in 0..=n_iso {
        let t_c = t0 + k as f64 * options.interval_c;
        let iso = ternary_isotherm(model, kelvin_from_celsius(t_c), p_bar).map_err(|e| {
            FigureError::Model {
                model: model.id.clone(),
                message: format!("isotherm {t_c} °C: {e}"),
            }
        })?;
        let bands = iso
            .tie_lines
            .iter()
            .map(|t| t.band)
            .max()
            .map_or(0, |b| b + 1);
        let first_item = fig.items.len();
        for band in 0..bands {
            let lines: Vec<_> = iso.tie_lines.iter().filter(|t| t.band == band).collect();
            let na: Vec<[f64; 2]> = lines.iter().map(|t| xy(&t.na_rich.as_array())).collect();
            let kk: Vec<[f64; 2]> = lines.iter().map(|t| xy(&t.k_rich.as_array())).collect();
            let mut limbs = Vec::new();
            match iso.critical_point {
                Some(cp) if band == bands - 1 => {
                    let mut all = na.clone();
                    all.push(xy(&cp.as_array()));
                    all.extend(kk.iter().rev());
                    limbs.push(all);
                }
                _ => {
                    limbs.push(na);
                    limbs.push(kk);
                }
            }
            for limb in limbs.into_iter().filter(|l| l.len() >= 2) {
                fig.items.push(Item::Line(Polyline {
                    points: limb,
                    style: iso_style,
                }));
            }
        }
        // label at the isotherm's most interior vertex (its "nose"), away from the edges
        let labels_at = fig.items[first_item..]
            .iter()
            .filter_map(|i| match i {
                Item::Line(l) => Some(l.points.iter().copied()),
                _ => None,
            })
            .flatten()
            .max_by(|a, b| edge_distance(*a).total_cmp(&edge_distance(*b)));
        // an isotherm whose nose is too close to a labelled one stays unlabelled (the spacing
        // gives its temperature)
        if let Some(at) = labels_at.filter(|p| {
            placed
                .iter()
                .all(|q: &[f64; 2]| (p[0] - q[0]).hypot(p[1] - q[1]) > 0.06)
        }) {
            placed.push(at);
            // nudged into the one-phase field inside the curve
            fig.items.push(Item::Label(Label {
                at,
                offset_pt: [3.0, 3.0],
                text: format!("{t_c:.0}"),
                size_pt: f * 0.85,
                colour: palette::BLUE,
                anchor: Anchor::Start,
                halo: true,
            }));
        }
        if let Some(tri) = iso.three_phase {
            let mut pts: Vec<[f64; 2]> = tri.iter().map(|c| xy(&c.as_array())).collect();
            pts.push(pts[0]);
            fig.items.push(Item::Line(Polyline {
                points: pts,
                style: Style::dashed(palette::BLUE, 0.5, Dash::Dashed),
            }));
        }
    }
    fig.legend.push(LegendEntry {
        label: format!("isotherms, {}", short_citation(model)),
        symbol: LegendSymbol::Line(iso_style),
    });
    if let Some(g) = grain {
        grain_items(&mut fig, g, spots, options.cloud_points);
    }
    Ok(fig)
}

fn grain_items(fig: &mut Figure, g: &GrainResult, spots: &[SpotPoint], cloud_points: usize) {
    marks::bulk_cloud(fig, g, cloud_points, xy);
    marks::spot_marks(fig, g, spots, xy);
    marks::phase_means(fig, g, xy, |label, _| format!("{label} mean"));
    let bulk: Vec<f64> = g.monte_carlo.bulk.iter().map(|s| s.median).collect();
    if !bulk.is_empty() {
        marks::bulk_mark(fig, xy(&bulk), "bulk (median)".into());
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ternary_vertices_and_centroid() {
        // Source: barycentric coordinates of an equilateral triangle of unit side (elementary
        // geometry): vertices at (0,0), (1,0), (1/2, √3/2); the centroid (1/3 each) at
        // (1/2, √3/6); the midpoint of Ab–Or at (1/2, 0). Tolerance: rounding only.
        let close =
            |a: [f64; 2], b: [f64; 2]| (a[0] - b[0]).abs() < 1e-12 && (a[1] - b[1]).abs() < 1e-12;
        assert!(close(ternary_xy(1.0, 0.0, 0.0), [0.0, 0.0]));
        assert!(close(ternary_xy(0.0, 1.0, 0.0), [1.0, 0.0]));
        assert!(close(ternary_xy(0.0, 0.0, 1.0), [0.5, 3f64.sqrt() / 2.0]));
        assert!(close(ternary_xy(1.0, 1.0, 1.0), [0.5, 3f64.sqrt() / 6.0]));
        assert!(close(ternary_xy(0.5, 0.5, 0.0), [0.5, 0.0]));
        // distance from a point to the Ab–Or edge is proportional to X_An (side 1: height √3/2)
        let p = ternary_xy(0.2, 0.5, 0.3);
        assert!((p[1] - 0.3 * 3f64.sqrt() / 2.0).abs() < 1e-12);
    }

    #[test]
    fn binary_model_is_refused_with_a_reason() {
        let m = SolutionModel::builtin("haselton1983").unwrap();
        let e = ternary_figure(&m, 1.0, None, &[], &TernaryFigureOptions::default()).unwrap_err();
        assert!(e.to_string().contains("ternary model"), "{e}");
    }
}
