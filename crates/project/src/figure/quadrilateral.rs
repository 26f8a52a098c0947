//! The pyroxene quadrilateral: the Ca-Mg-Fe pyroxenes on the lower half of the Wo–En–Fs
//! triangle, with a grain's spot analyses, phase means joined by the lamella tie-line, the Monte
//! Carlo cloud of the reintegrated bulk and its median.

use super::marks;
use super::{
    Anchor, Dash, Figure, FigureError, FigureSize, Frame, Item, Label, LegendEntry, LegendPlace,
    LegendSymbol, Polyline, SpotPoint, Style, palette,
};
use crate::run::GrainResult;
use reintegration::MineralSystem;

const H: f64 = 0.866_025_403_784_438_6; // sqrt(3)/2

/// Plane coordinates of a pyroxene in the Wo–En–Fs triangle: En at (0, 0), Fs at (1, 0), Wo at
/// (1/2, √3/2), side one; `x = X_Fs + X_Wo/2`, `y = (√3/2) X_Wo`. The quadrilateral is the part
/// with X_Wo ≤ 1/2, whose upper corners are Di (x = 1/4) and Hd (x = 3/4) at `y = √3/4`. The
/// proportions are normalised to their sum.
pub fn quadrilateral_xy(wo: f64, en: f64, fs: f64) -> [f64; 2] {
    let s = wo + en + fs;
    let (wo, fs) = if s > 0.0 {
        (wo / s, fs / s)
    } else {
        (0.0, 0.0)
    };
    [fs + 0.5 * wo, H * wo]
}

/// Wo, En, Fs (Ca, Mg, ΣFe proportions) of end-member fractions over Di, Hd, En, Fs.
fn wo_en_fs(fractions: &[f64]) -> [f64; 3] {
    match MineralSystem::Pyroxene.comparison_coordinates(fractions)[..] {
        [wo, en, fs] => [wo, en, fs],
        _ => [0.0; 3],
    }
}

fn xy(fractions: &[f64]) -> [f64; 2] {
    let [wo, en, fs] = wo_en_fs(fractions);
    quadrilateral_xy(wo, en, fs)
}

/// Choices for [`quadrilateral_figure`].
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct QuadrilateralFigureOptions {
    /// Width.
    pub size: FigureSize,
    /// Monte Carlo draws drawn in the cloud at most (evenly picked).
    pub cloud_points: usize,
    /// Draw the name fields of the quadrilateral.
    pub fields: bool,
}

impl Default for QuadrilateralFigureOptions {
    fn default() -> Self {
        QuadrilateralFigureOptions {
            size: FigureSize::SingleColumn,
            cloud_points: 600,
            fields: true,
        }
    }
}

/// The limits of the quadrilateral name fields in X_Wo: Di–Hd above 0.45, augite 0.20–0.45,
/// pigeonite 0.05–0.20, En–Fs below 0.05; Di/Hd and En/Fs split at Mg/(Mg + Fe) = 0.5
/// (Morimoto et al. 1988, Mineral. Mag. 52, 535-550, fig. 4; boundaries from memory).
pub const FIELD_WO_LIMITS: [f64; 3] = [0.05, 0.20, 0.45];

fn frame_items(fig: &mut Figure, fields: bool) {
    let grid = Style::solid(palette::LIGHT_GREY, 0.35);
    // constant Wo, and lines of constant Fs and En every 0.1 inside the quadrilateral
    for k in 1..5 {
        let wo = k as f64 / 10.0;
        if fields && FIELD_WO_LIMITS.iter().any(|l| (l - wo).abs() < 1e-9) {
            continue;
        }
        fig.items.push(Item::Line(Polyline {
            points: vec![
                quadrilateral_xy(wo, 1.0 - wo, 0.0),
                quadrilateral_xy(wo, 0.0, 1.0 - wo),
            ],
            style: grid,
        }));
    }
    for k in 1..10 {
        let c = k as f64 / 10.0;
        // constant Fs: from the En–Fs edge (En = 1 - c) up to Wo = 1/2 or to the Wo–Fs edge
        let wo_top = (1.0 - c).min(0.5);
        fig.items.push(Item::Line(Polyline {
            points: vec![
                quadrilateral_xy(0.0, 1.0 - c, c),
                quadrilateral_xy(wo_top, 1.0 - c - wo_top, c),
            ],
            style: grid,
        }));
        // constant En
        fig.items.push(Item::Line(Polyline {
            points: vec![
                quadrilateral_xy(0.0, c, 1.0 - c),
                quadrilateral_xy(wo_top, c, 1.0 - c - wo_top),
            ],
            style: grid,
        }));
    }
    let f = fig.font_size_pt;
    if fields {
        let field = Style::solid(palette::GREY, 0.6);
        for wo in FIELD_WO_LIMITS {
            fig.items.push(Item::Line(Polyline {
                points: vec![
                    quadrilateral_xy(wo, 1.0 - wo, 0.0),
                    quadrilateral_xy(wo, 0.0, 1.0 - wo),
                ],
                style: field,
            }));
        }
        // Mg# = 0.5 splits the Di–Hd and the En–Fs fields
        for (lo, hi) in [(FIELD_WO_LIMITS[2], 0.5), (0.0, FIELD_WO_LIMITS[0])] {
            fig.items.push(Item::Line(Polyline {
                points: vec![
                    quadrilateral_xy(lo, (1.0 - lo) / 2.0, (1.0 - lo) / 2.0),
                    quadrilateral_xy(hi, (1.0 - hi) / 2.0, (1.0 - hi) / 2.0),
                ],
                style: field,
            }));
        }
        // the Di–Hd and En–Fs bands are too narrow to name inside: the corners name them
        for (wo, en, text) in [(0.325, 0.2, "augite"), (0.125, 0.25, "pigeonite")] {
            fig.items.push(Item::Label(Label {
                at: quadrilateral_xy(wo, en, 1.0 - wo - en),
                offset_pt: [0.0, -2.5],
                text: text.into(),
                size_pt: f * 0.75,
                colour: palette::GREY,
                anchor: Anchor::Middle,
                halo: false,
            }));
        }
    }
    fig.items.push(Item::Line(Polyline {
        points: vec![
            [0.0, 0.0],
            [1.0, 0.0],
            quadrilateral_xy(0.5, 0.0, 0.5),
            quadrilateral_xy(0.5, 0.5, 0.0),
            [0.0, 0.0],
        ],
        style: Style::solid(palette::BLACK, 0.8),
    }));
    marks::corner_labels(
        fig,
        &[
            ([0.0, 0.0], [-3.0, -9.0], "En", Anchor::Middle),
            ([1.0, 0.0], [3.0, -9.0], "Fs", Anchor::Middle),
            (
                quadrilateral_xy(0.5, 0.5, 0.0),
                [-4.0, 4.0],
                "Di",
                Anchor::End,
            ),
            (
                quadrilateral_xy(0.5, 0.0, 0.5),
                [4.0, 4.0],
                "Hd",
                Anchor::Start,
            ),
        ],
    );
    // X_Fs every 0.2 along the En–Fs edge; X_Wo at the left edge
    marks::base_ticks(fig, -8.0);
    for wo in [0.1, 0.2, 0.3, 0.4] {
        fig.items.push(Item::Label(Label {
            at: quadrilateral_xy(wo, 1.0 - wo, 0.0),
            offset_pt: [-3.0, -2.5],
            text: format!("{wo:.1}"),
            size_pt: f * 0.85,
            colour: palette::BLACK,
            anchor: Anchor::End,
            halo: false,
        }));
    }
}

/// The pyroxene quadrilateral (En lower left, Fs lower right, Di and Hd at the top corners) for a
/// pyroxene grain: its spot analyses as small symbols, the phase means joined by the lamella
/// tie-line (labelled with the two-pyroxene temperature when there is one), the Monte Carlo cloud
/// of the reintegrated bulk and its median (labelled with the minimum crystallisation temperature).
/// Optionally the name fields of Morimoto et al. (1988).
///
/// Data coordinates are those of [`quadrilateral_xy`]; compositions are Wo, En, Fs as Ca, Mg and
/// ΣFe proportions (the comparison coordinates of the reintegration).
///
/// # Errors
/// [`FigureError::Grain`] when the grain is not a pyroxene.
pub fn quadrilateral_figure(
    grain: &GrainResult,
    spots: &[SpotPoint],
    options: &QuadrilateralFigureOptions,
) -> Result<Figure, FigureError> {
    if grain.system != MineralSystem::Pyroxene {
        return Err(FigureError::Grain {
            grain: format!("{}/{}", grain.sample, grain.grain),
            message: "the quadrilateral is for pyroxene grains; this grain is a feldspar".into(),
        });
    }
    let mut fig = Figure::new(
        options.size,
        Frame::Plain {
            x: (-0.09, 1.09),
            y: (-0.1, H / 2.0 + 0.07),
        },
    );
    fig.legend_place = LegendPlace::Below;
    fig.title = format!("{}/{}: Wo–En–Fs", grain.sample, grain.grain);
    frame_items(&mut fig, options.fields);
    if options.fields {
        fig.legend.push(LegendEntry {
            label: "fields (Morimoto et al. 1988): X_{Wo} 0.05, 0.20, 0.45".into(),
            symbol: LegendSymbol::Line(Style::solid(palette::GREY, 0.6)),
        });
    }
    let f = fig.font_size_pt;
    marks::bulk_cloud(&mut fig, grain, options.cloud_points, xy);
    marks::spot_marks(&mut fig, grain, spots, xy);
    if let [a, b] = &grain.phases[..] {
        let tie = Style::dashed(palette::BLUE, 0.9, Dash::Dashed);
        let (pa, pb) = (xy(&a.mean), xy(&b.mean));
        fig.items.push(Item::Line(Polyline {
            points: vec![pa, pb],
            style: tie,
        }));
        let label = match &grain.pyroxene_pair {
            Some(t) => format!(
                "lamella pair, {:.0} ± {:.0} °C ({})",
                t.temperature_c,
                t.see_c,
                t.thermometer.id()
            ),
            None => "lamella pair".into(),
        };
        fig.legend.push(LegendEntry {
            label,
            symbol: LegendSymbol::Line(tie),
        });
    }
    marks::phase_means(&mut fig, grain, xy, |label, mean| {
        let [wo, _, fs] = wo_en_fs(mean);
        format!(
            "{label} mean (Wo_{{{:.0}}} Fs_{{{:.0}}})",
            wo * 100.0,
            fs * 100.0
        )
    });
    let median: Vec<f64> = grain.monte_carlo.bulk.iter().map(|s| s.median).collect();
    let bulk = if median.len() == 4 {
        median
    } else {
        grain.reintegration.molar.clone()
    };
    if bulk.len() == 4 {
        let at = xy(&bulk);
        let [wo, _, fs] = wo_en_fs(&bulk);
        marks::bulk_mark(
            &mut fig,
            at,
            format!(
                "bulk (median), Wo_{{{:.0}}} Fs_{{{:.0}}}",
                wo * 100.0,
                fs * 100.0
            ),
        );
        if let Some(t) = grain.min_temperature() {
            fig.items.push(Item::Label(Label {
                at,
                offset_pt: [7.0, -3.0],
                text: format!("≥ {:.0} °C", t.median),
                size_pt: f * 0.9,
                colour: palette::VERMILLION,
                anchor: Anchor::Start,
                halo: true,
            }));
        }
    }
    // as tall as the plot at full width (the renderer's 4 pt margins and title row), plus the
    // legend below
    if let Frame::Plain { x, y } = fig.frame {
        let pt = super::render::PT_PER_MM;
        let plot_pt = (fig.width_mm * pt - 8.0) * (y.1 - y.0) / (x.1 - x.0);
        fig.height_mm = (plot_pt + 8.0 + fig.font_size_pt * 1.8) / pt
            + super::render::legend_below_height_mm(&fig);
    }
    Ok(fig)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn corners_of_the_quadrilateral() {
        // Source: barycentric coordinates of an equilateral triangle of unit side (elementary
        // geometry): En (0,0), Fs (1,0), Wo (1/2, √3/2); Di = Wo50 En50 lies at the midpoint of
        // the En–Wo edge (1/4, √3/4), Hd = Wo50 Fs50 at the midpoint of Fs–Wo (3/4, √3/4).
        // Tolerance: rounding only.
        let close =
            |a: [f64; 2], b: [f64; 2]| (a[0] - b[0]).abs() < 1e-12 && (a[1] - b[1]).abs() < 1e-12;
        assert!(close(quadrilateral_xy(0.0, 1.0, 0.0), [0.0, 0.0]));
        assert!(close(quadrilateral_xy(0.0, 0.0, 1.0), [1.0, 0.0]));
        assert!(close(quadrilateral_xy(0.5, 0.5, 0.0), [0.25, H / 2.0]));
        assert!(close(quadrilateral_xy(0.5, 0.0, 0.5), [0.75, H / 2.0]));
        // unnormalised input is normalised
        assert!(close(quadrilateral_xy(1.0, 1.0, 0.0), [0.25, H / 2.0]));
    }

    #[test]
    fn diopside_fractions_land_on_the_di_corner() {
        // Di = CaMgSi2O6 has Ca = Mg = 1: Wo 50, En 50, Fs 0 by definition of the Wo, En, Fs
        // proportions (Ca, Mg, ΣFe normalised). Tolerance: rounding only.
        let p = xy(&[1.0, 0.0, 0.0, 0.0]);
        assert!(
            (p[0] - 0.25).abs() < 1e-12 && (p[1] - H / 2.0).abs() < 1e-12,
            "{p:?}"
        );
        // Fs = Fe2Si2O6: the Fs corner
        let p = xy(&[0.0, 0.0, 0.0, 1.0]);
        assert!((p[0] - 1.0).abs() < 1e-12 && p[1].abs() < 1e-12, "{p:?}");
    }
}
