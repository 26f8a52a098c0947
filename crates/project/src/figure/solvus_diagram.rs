//! The binary T–X diagram: the Ab–Or solvus of one or more models at a pressure, with a grain's
//! lamella pair, reintegrated bulk and minimum crystallisation temperature.

use serde::{Deserialize, Serialize};
use solvus::units::{bar_from_kbar, celsius_from_kelvin, kelvin_from_celsius};
use solvus::{SolutionModel, solvus_curve};

use super::{
    Anchor, Axis, Dash, ErrorBar, Figure, FigureError, FigureSize, Frame, Item, Label, LegendEntry,
    LegendPlace, LegendSymbol, MarkerShape, Markers, Polyline, Style, dash_for, palette,
};
use crate::run::GrainResult;

/// Choices for [`solvus_figure`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SolvusFigureOptions {
    /// Width.
    pub size: FigureSize,
    /// Draw the spinodal too.
    pub spinodal: bool,
    /// Lowest temperature shown, °C (`None`: chosen from the data, at most 400 °C).
    pub t_min_c: Option<f64>,
    /// Binodal points traced below the consolute point, per model.
    pub points: usize,
}

impl Default for SolvusFigureOptions {
    fn default() -> Self {
        SolvusFigureOptions {
            size: FigureSize::SingleColumn,
            spinodal: true,
            t_min_c: None,
            points: 120,
        }
    }
}

/// "Haselton et al. (1983)" from a full citation; the model id when the citation has no
/// "Authors (year)" form.
pub fn short_citation(model: &SolutionModel) -> String {
    let c = &model.citation;
    let (Some(open), Some(close)) = (c.find('('), c.find(')')) else {
        return model.id.clone();
    };
    if close <= open {
        return model.id.clone();
    }
    let year = &c[open + 1..close];
    let surnames: Vec<&str> = c[..open]
        .split([',', '&'])
        .map(str::trim)
        .filter(|t| !t.is_empty() && !t.ends_with('.'))
        .collect();
    match surnames.len() {
        0 => model.id.clone(),
        1 => format!("{} ({year})", surnames[0]),
        2 => format!("{} & {} ({year})", surnames[0], surnames[1]),
        _ => format!("{} et al. ({year})", surnames[0]),
    }
}

/// X_Or / (X_Ab + X_Or) of a composition in the feldspar basis order (Ab, Or, An).
fn projected_x_or(x: &[f64]) -> Option<f64> {
    let (ab, or) = (*x.first()?, *x.get(1)?);
    (ab + or > 0.0).then(|| or / (ab + or))
}

/// The temperature of a lamella pair for the figure: the adjusted single temperature, or the
/// mean of the component temperatures found.
pub fn pair_temperature_c(grain: &GrainResult) -> Option<f64> {
    let pair = grain.pair.as_ref()?;
    pair.adjusted_c.or_else(|| {
        let t: Vec<f64> = pair.temperatures_c.iter().flatten().copied().collect();
        (!t.is_empty()).then(|| t.iter().sum::<f64>() / t.len() as f64)
    })
}

fn percentile(sorted: &[f64], p: f64) -> f64 {
    reintegration::percentile_sorted(sorted, p)
}

/// Binary T–X diagram of the Ab–Or solvus at `pressure_kbar` for each model (first model drawn
/// first, with the grain's data), with the consolute point of each model, the spinodal if asked,
/// and for a feldspar grain: the lamella pair as a tie-line at its pair temperature, the
/// reintegrated bulk (median X_Or projected onto Ab–Or, 95 % interval of the Monte Carlo draws in
/// X and T) at its minimum crystallisation temperature, and that temperature marked as a line.
///
/// Data coordinates: x = X_Or / (X_Ab + X_Or), y = temperature in °C. The binodal and spinodal
/// points are the solvus engine's own ([`solvus::solvus_curve`]); the first binodal point drawn
/// at the top is the engine's consolute point.
///
/// # Errors
/// [`FigureError::Model`] when a model has no miscibility gap at that pressure or a solve fails;
/// [`FigureError::Option`] for no model or a bad pressure.
pub fn solvus_figure(
    models: &[SolutionModel],
    pressure_kbar: f64,
    grain: Option<&GrainResult>,
    options: &SolvusFigureOptions,
) -> Result<Figure, FigureError> {
    if models.is_empty() {
        return Err(FigureError::Option {
            option: "models",
            message: "at least one solution model is needed".into(),
        });
    }
    if !pressure_kbar.is_finite() || pressure_kbar < 0.0 {
        return Err(FigureError::Option {
            option: "pressure_kbar",
            message: format!("{pressure_kbar} is not a pressure"),
        });
    }
    let p_bar = bar_from_kbar(pressure_kbar);
    let pair_t = grain.and_then(pair_temperature_c);
    let t_min = grain.and_then(|g| g.min_temperature());
    let temps_sorted: Vec<f64> = grain
        .map(|g| {
            let mut t: Vec<f64> = g
                .monte_carlo
                .temperature_draws
                .iter()
                .flatten()
                .copied()
                .collect();
            t.sort_by(f64::total_cmp);
            t
        })
        .unwrap_or_default();
    // lowest temperature: 400 °C or below the lowest datum
    let mut lowest: f64 = 400.0;
    if let Some(t) = pair_t {
        lowest = lowest.min(t - 60.0);
    }
    if let Some(s) = t_min {
        lowest = lowest.min(s.p2_5 - 60.0);
    }
    let t_lo = options
        .t_min_c
        .unwrap_or(((lowest / 50.0).floor() * 50.0).max(0.0));
    let mut curves = Vec::new();
    for model in models {
        let curve = solvus_curve(
            model,
            p_bar,
            options.points.max(10),
            kelvin_from_celsius(t_lo).max(1.0),
        )
        .map_err(|e| FigureError::Model {
            model: model.id.clone(),
            message: e.to_string(),
        })?;
        curves.push(curve);
    }
    let t_top = curves
        .iter()
        .map(|c| celsius_from_kelvin(c.critical.temperature_k))
        .fold(f64::MIN, f64::max)
        .max(t_min.map_or(f64::MIN, |s| s.p97_5));
    let t_hi = ((t_top + 40.0) / 50.0).ceil() * 50.0;
    let mut fig = Figure::new(
        options.size,
        Frame::Cartesian {
            x: Axis::new("X_{Or} / (X_{Ab} + X_{Or})", 0.0, 1.0),
            y: Axis::new("Temperature (°C)", t_lo, t_hi),
        },
    );
    fig.title = format!("Ab–Or solvus at {pressure_kbar} kbar");
    fig.legend_place = LegendPlace::Below;
    fig.height_mm = fig.width_mm * 0.9;
    let f = fig.font_size_pt;
    for (k, (model, curve)) in models.iter().zip(&curves).enumerate() {
        let colour = palette::SERIES[k % palette::SERIES.len()];
        let dash = dash_for(k);
        // binodal: Na limb from the bottom up to the consolute point, then the K limb down
        let mut binodal: Vec<[f64; 2]> = curve
            .points
            .iter()
            .rev()
            .map(|p| [p.x_or_na_limb, celsius_from_kelvin(p.temperature_k)])
            .collect();
        binodal.extend(
            curve
                .points
                .iter()
                .skip(1)
                .map(|p| [p.x_or_k_limb, celsius_from_kelvin(p.temperature_k)]),
        );
        let style = Style::dashed(colour, 1.2, dash);
        fig.items.push(Item::Line(Polyline {
            points: binodal,
            style,
        }));
        let t_c = celsius_from_kelvin(curve.critical.temperature_k);
        fig.legend.push(LegendEntry {
            label: if models.len() > 1 {
                format!("{}, T_{{c}} {t_c:.0} °C", short_citation(model))
            } else {
                short_citation(model)
            },
            symbol: LegendSymbol::Line(style),
        });
        if options.spinodal {
            let mut sp: Vec<[f64; 2]> = curve
                .points
                .iter()
                .rev()
                .map(|p| [p.spinodal_na, celsius_from_kelvin(p.temperature_k)])
                .collect();
            sp.extend(
                curve
                    .points
                    .iter()
                    .skip(1)
                    .map(|p| [p.spinodal_k, celsius_from_kelvin(p.temperature_k)]),
            );
            let sp_style = Style::dashed(colour, 0.6, Dash::Dotted);
            fig.items.push(Item::Line(Polyline {
                points: sp,
                style: sp_style,
            }));
        }
        let top = [
            curve.critical.x_or,
            celsius_from_kelvin(curve.critical.temperature_k),
        ];
        fig.items.push(Item::Markers(Markers {
            points: vec![top],
            shape: MarkerShape::Circle,
            size_pt: 4.0,
            colour,
            fill: Some(colour),
            opacity: 1.0,
        }));
        if models.len() == 1 {
            fig.items.push(Item::Label(Label {
                at: top,
                offset_pt: [0.0, 7.0],
                text: format!("{:.0} °C", top[1]),
                size_pt: f,
                colour,
                anchor: Anchor::Middle,
                halo: true,
            }));
        }
    }
    if options.spinodal {
        fig.legend.push(LegendEntry {
            label: "spinodal".into(),
            symbol: LegendSymbol::Line(Style::dashed(palette::BLACK, 0.6, Dash::Dotted)),
        });
    }
    fig.legend.push(LegendEntry {
        label: "consolute point".into(),
        symbol: LegendSymbol::Marker {
            shape: MarkerShape::Circle,
            colour: palette::BLACK,
            fill: Some(palette::BLACK),
        },
    });
    if let Some(g) = grain {
        grain_overlay(&mut fig, g, pair_t, &temps_sorted);
    }
    Ok(fig)
}

fn grain_overlay(fig: &mut Figure, g: &GrainResult, pair_t: Option<f64>, temps_sorted: &[f64]) {
    let f = fig.font_size_pt;
    let ink = palette::BLACK;
    // lamella pair as a tie-line at its pair temperature
    if let (Some(t), [host, lamella, ..]) = (pair_t, g.phases.as_slice())
        && let (Some(xh), Some(xl)) = (projected_x_or(&host.mean), projected_x_or(&lamella.mean))
    {
        fig.items.push(Item::Line(Polyline {
            points: vec![[xh, t], [xl, t]],
            style: Style::solid(ink, 0.8),
        }));
        for (phase, x, shape) in [
            (host, xh, MarkerShape::Square),
            (lamella, xl, MarkerShape::TriangleUp),
        ] {
            let sd = projected_sd(&phase.mean, &phase.sd);
            if sd > 0.0 {
                fig.items.push(Item::ErrorBar(ErrorBar {
                    at: [x, t],
                    x: Some((x - 2.0 * sd, x + 2.0 * sd)),
                    y: None,
                    style: Style::solid(ink, 0.5),
                }));
            }
            fig.items.push(Item::Markers(Markers {
                points: vec![[x, t]],
                shape,
                size_pt: 4.5,
                colour: ink,
                fill: Some(palette::SKY_BLUE),
                opacity: 1.0,
            }));
        }
        fig.items.push(Item::Label(Label {
            at: [0.5 * (xh + xl), t],
            offset_pt: [0.0, 6.0],
            text: format!("lamella pair {t:.0} °C"),
            size_pt: f,
            colour: ink,
            anchor: Anchor::Middle,
            halo: true,
        }));
        fig.legend.push(LegendEntry {
            label: format!("{} ± 2 s.d.", host.label),
            symbol: LegendSymbol::Marker {
                shape: MarkerShape::Square,
                colour: ink,
                fill: Some(palette::SKY_BLUE),
            },
        });
        fig.legend.push(LegendEntry {
            label: format!("{} ± 2 s.d.", lamella.label),
            symbol: LegendSymbol::Marker {
                shape: MarkerShape::TriangleUp,
                colour: ink,
                fill: Some(palette::SKY_BLUE),
            },
        });
    }
    // bulk: median X_Or of the draws at the median minimum temperature, 95 % intervals
    let mut xs: Vec<f64> = g
        .monte_carlo
        .bulk_draws
        .iter()
        .filter_map(|x| projected_x_or(x))
        .collect();
    xs.sort_by(f64::total_cmp);
    let Some(s) = g.min_temperature() else {
        return;
    };
    if xs.is_empty() {
        return;
    }
    let x_med = percentile(&xs, 50.0);
    let x_ci = (percentile(&xs, 2.5), percentile(&xs, 97.5));
    let t_ci = if temps_sorted.is_empty() {
        (s.p2_5, s.p97_5)
    } else {
        (
            percentile(temps_sorted, 2.5),
            percentile(temps_sorted, 97.5),
        )
    };
    let mark = Style::dashed(palette::VERMILLION, 0.7, Dash::Dashed);
    fig.items.push(Item::Line(Polyline {
        points: vec![[0.0, s.median], [1.0, s.median]],
        style: mark,
    }));
    // the label on the side away from the bulk point
    let (at_x, dx, anchor) = if x_med > 0.5 {
        (0.0, 3.0, Anchor::Start)
    } else {
        (1.0, -3.0, Anchor::End)
    };
    fig.items.push(Item::Label(Label {
        at: [at_x, s.median],
        offset_pt: [dx, 6.0],
        text: format!("T_{{min}} {:.0} °C ({:.0}–{:.0})", s.median, t_ci.0, t_ci.1),
        size_pt: f,
        colour: palette::VERMILLION,
        anchor,
        halo: true,
    }));
    fig.items.push(Item::ErrorBar(ErrorBar {
        at: [x_med, s.median],
        x: Some(x_ci),
        y: Some(t_ci),
        style: Style::solid(palette::VERMILLION, 0.8),
    }));
    fig.items.push(Item::Markers(Markers {
        points: vec![[x_med, s.median]],
        shape: MarkerShape::Diamond,
        size_pt: 5.5,
        colour: palette::BLACK,
        fill: Some(palette::VERMILLION),
        opacity: 1.0,
    }));
    fig.legend.push(LegendEntry {
        label: "bulk, 95 % interval".into(),
        symbol: LegendSymbol::Marker {
            shape: MarkerShape::Diamond,
            colour: palette::BLACK,
            fill: Some(palette::VERMILLION),
        },
    });
    fig.legend.push(LegendEntry {
        label: "min. crystallisation T".into(),
        symbol: LegendSymbol::Line(mark),
    });
}

/// Standard deviation of X_Or/(X_Ab+X_Or) from the end-member s.d. (first-order propagation,
/// the two fractions taken as independent).
fn projected_sd(mean: &[f64], sd: &[f64]) -> f64 {
    let (Some(&ab), Some(&or), Some(&sa), Some(&so)) =
        (mean.first(), mean.get(1), sd.first(), sd.get(1))
    else {
        return 0.0;
    };
    let s = ab + or;
    if s <= 0.0 {
        return 0.0;
    }
    // d/d(ab) = -or/s², d/d(or) = ab/s²
    ((or * sa).powi(2) + (ab * so).powi(2)).sqrt() / (s * s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn short_citations() {
        let m = |id: &str| SolutionModel::builtin(id).unwrap();
        assert_eq!(short_citation(&m("haselton1983")), "Haselton et al. (1983)");
        assert_eq!(short_citation(&m("tw1969")), "Thompson & Waldbaum (1969)");
        assert_eq!(short_citation(&m("fl1988")), "Fuhrman & Lindsley (1988)");
    }

    #[test]
    fn binodal_passes_through_the_engines_consolute_point() {
        // Source: design §3.3 check values (derived from Haselton et al. 1983 parameters):
        // consolute point at 1 kbar 682.4 °C, X_Or 0.339; limbs at 600 °C 0.1308 / 0.6151.
        let model = SolutionModel::builtin("haselton1983").unwrap();
        let fig = solvus_figure(
            std::slice::from_ref(&model),
            1.0,
            None,
            &SolvusFigureOptions::default(),
        )
        .unwrap();
        let binodal = fig.lines().next().unwrap();
        let top = binodal
            .points
            .iter()
            .copied()
            .max_by(|a, b| a[1].total_cmp(&b[1]))
            .unwrap();
        // the engine's own point, exactly; the published check to its stated 0.1 °C / 0.001
        let cp = solvus::critical_point(&model, 1000.0).unwrap();
        assert_eq!(top, [cp.x_or, celsius_from_kelvin(cp.temperature_k)]);
        assert!((top[1] - 682.4).abs() < 0.1 && (top[0] - 0.339).abs() < 0.001);
        // the plotted curve crosses 600 °C at the check limbs (linear interpolation between
        // traced points: 120 points over ~280 °C, tolerance 0.003 in X)
        let cross: Vec<f64> = binodal
            .points
            .windows(2)
            .filter(|w| (w[0][1] - 600.0) * (w[1][1] - 600.0) <= 0.0 && w[0][1] != w[1][1])
            .map(|w| w[0][0] + (600.0 - w[0][1]) / (w[1][1] - w[0][1]) * (w[1][0] - w[0][0]))
            .collect();
        assert_eq!(cross.len(), 2);
        assert!((cross[0] - 0.1308).abs() < 0.003, "{cross:?}");
        assert!((cross[1] - 0.6151).abs() < 0.003, "{cross:?}");
        // every plotted point is the engine's binodal at its temperature
        for p in binodal.points.iter().step_by(17) {
            if p[1] >= top[1] - 1e-9 {
                continue;
            }
            let t_k = kelvin_from_celsius(p[1]);
            match solvus::binodal(&model, t_k, 1000.0).unwrap() {
                solvus::BinodalOutcome::Gap(b) => {
                    let d = (p[0] - b.x_or_na_limb)
                        .abs()
                        .min((p[0] - b.x_or_k_limb).abs());
                    assert!(d < 1e-6, "{p:?} vs {b:?}");
                }
                other => panic!("{other:?}"),
            }
        }
        // the legend names the model; the axis range holds the curve
        assert!(
            fig.legend
                .iter()
                .any(|e| e.label.contains("Haselton et al. (1983)"))
        );
        let Frame::Cartesian { x, y } = &fig.frame else {
            panic!()
        };
        assert!(
            binodal
                .points
                .iter()
                .all(|p| x.contains(p[0]) && y.contains(p[1]))
        );
    }

    #[test]
    fn projected_sd_matches_finite_differences() {
        let (mean, sd) = ([0.3, 0.65, 0.05], [0.01, 0.02, 0.0]);
        let g = |ab: f64, or: f64| or / (ab + or);
        let h = 1e-6;
        let dab = (g(0.3 + h, 0.65) - g(0.3 - h, 0.65)) / (2.0 * h);
        let dor = (g(0.3, 0.65 + h) - g(0.3, 0.65 - h)) / (2.0 * h);
        let expect = ((dab * 0.01).powi(2) + (dor * 0.02).powi(2)).sqrt();
        assert!((projected_sd(&mean, &sd) - expect).abs() < 1e-9);
    }
}
