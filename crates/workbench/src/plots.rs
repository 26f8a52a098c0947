//! The plots of the workbench, drawn with egui_plot from the engine results.
//!
//! All drawing of the solvus (T-X) diagram and the temperature distribution lives here, so that
//! it can be switched in one place to rendering the project's renderer-neutral figures (the ones
//! the exports are made from) when they are available.

use egui::{Color32, Ui};
use egui_plot::{Bar, BarChart, Legend, Line, LineStyle, MarkerShape, Plot, Points};
use reintegration::Summary;
use solvus::SolutionModel;
use solvus::units::{bar_from_kbar, celsius_from_kelvin};

/// A traced Ab-Or solvus ready to draw: the binodal as one closed curve, °C against X_Or.
#[derive(Debug, Clone, PartialEq)]
pub struct SolvusLine {
    /// Model id.
    pub model: String,
    /// Pressure, kbar.
    pub pressure_kbar: f64,
    /// Binodal points (X_Or, T °C): Na limb up to the consolute point, then down the K limb.
    pub binodal: Vec<[f64; 2]>,
    /// Consolute point (X_Or, T °C).
    pub consolute: [f64; 2],
}

impl SolvusLine {
    /// Trace the solvus of a built-in model at a pressure, down to 200 °C.
    ///
    /// # Errors
    /// Unknown model, no miscibility gap, or a binodal that did not converge.
    pub fn trace(model: &str, pressure_kbar: f64) -> Result<Self, String> {
        let m = SolutionModel::builtin(model).map_err(|e| e.to_string())?;
        let curve = solvus::solvus_curve(&m, bar_from_kbar(pressure_kbar), 80, 473.15)
            .map_err(|e| e.to_string())?;
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
                .map(|p| [p.x_or_k_limb, celsius_from_kelvin(p.temperature_k)]),
        );
        Ok(SolvusLine {
            model: model.into(),
            pressure_kbar,
            binodal,
            consolute: [
                curve.critical.x_or,
                celsius_from_kelvin(curve.critical.temperature_k),
            ],
        })
    }
}

/// A grain's bulk point on the T-X diagram.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BulkPoint {
    /// X_Or / (X_Ab + X_Or) of the bulk: median and 95 % interval.
    pub x_or: [f64; 3],
    /// Minimum crystallisation temperature, °C: median and 95 % interval.
    pub temperature_c: Option<[f64; 3]>,
}

impl BulkPoint {
    /// From Monte Carlo summaries of the bulk (Ab, Or, An order) and the minimum temperature.
    pub fn from_summaries(bulk: &[Summary], temperature: Option<&Summary>) -> Option<Self> {
        let (ab, or) = (bulk.first()?, bulk.get(1)?);
        let project = |a: f64, o: f64| o / (a + o).max(1e-12);
        Some(BulkPoint {
            x_or: [
                project(ab.median, or.median),
                project(ab.p97_5, or.p2_5),
                project(ab.p2_5, or.p97_5),
            ],
            temperature_c: temperature.map(|t| [t.median, t.p2_5, t.p97_5]),
        })
    }
}

const SOLVUS_COLOUR: Color32 = Color32::from_rgb(70, 130, 200);
const OTHER_COLOURS: [Color32; 4] = [
    Color32::from_rgb(120, 170, 90),
    Color32::from_rgb(170, 120, 190),
    Color32::from_rgb(200, 170, 80),
    Color32::from_rgb(110, 160, 170),
];
const BULK_COLOUR: Color32 = Color32::from_rgb(220, 80, 40);

/// The T-X diagram: the solvus, its consolute point and the grain's bulk with its intervals.
/// `small` drops the legend and interaction for the result card.
pub fn solvus_ui(
    ui: &mut Ui,
    id: &str,
    solvus: Option<&SolvusLine>,
    others: &[SolvusLine],
    bulk: Option<BulkPoint>,
    height: f32,
    small: bool,
) {
    let mut plot = Plot::new(id)
        .height(height)
        .x_axis_label("X_Or")
        .y_axis_label("T (°C)")
        .include_x(0.0)
        .include_x(1.0)
        .include_y(300.0)
        .include_y(750.0)
        .label_formatter(|hover| match hover {
            egui_plot::HoverPosition::NearDataPoint {
                plot_name,
                position,
                ..
            } => Some(format!(
                "{plot_name}\nX_Or {:.3}\n{:.0} °C",
                position.x, position.y
            )),
            egui_plot::HoverPosition::Elsewhere { position } => {
                Some(format!("X_Or {:.3}\n{:.0} °C", position.x, position.y))
            }
        });
    if small {
        plot = plot
            .allow_drag(false)
            .allow_zoom(false)
            .allow_scroll(false)
            .allow_boxed_zoom(false)
            .show_x(true)
            .show_y(true);
    } else {
        plot = plot.legend(Legend::default());
    }
    plot.show(ui, |pui| {
        for (i, o) in others.iter().enumerate() {
            pui.line(
                Line::new(
                    format!("{} ({} kbar)", o.model, o.pressure_kbar),
                    o.binodal.clone(),
                )
                .color(OTHER_COLOURS[i % OTHER_COLOURS.len()])
                .style(LineStyle::dashed_dense())
                .width(1.2),
            );
        }
        if let Some(s) = solvus {
            pui.line(
                Line::new(
                    format!("solvus ({}, {} kbar)", s.model, s.pressure_kbar),
                    s.binodal.clone(),
                )
                .color(SOLVUS_COLOUR)
                .width(2.0),
            );
            pui.add(
                Points::new("consolute point", vec![s.consolute])
                    .shape(MarkerShape::Diamond)
                    .radius(4.0)
                    .color(SOLVUS_COLOUR),
            );
        }
        if let Some(b) = bulk {
            let t = b.temperature_c.map(|t| t[0]).unwrap_or(400.0);
            if let Some([_, lo, hi]) = b.temperature_c {
                pui.line(
                    Line::new(
                        "minimum T, 95 % interval",
                        vec![[b.x_or[0], lo], [b.x_or[0], hi]],
                    )
                    .color(BULK_COLOUR)
                    .width(1.5),
                );
            }
            pui.line(
                Line::new(
                    "bulk X_Or, 95 % interval",
                    vec![[b.x_or[1], t], [b.x_or[2], t]],
                )
                .color(BULK_COLOUR)
                .width(1.5)
                .style(if b.temperature_c.is_some() {
                    LineStyle::Solid
                } else {
                    LineStyle::dashed_dense()
                }),
            );
            pui.add(
                Points::new("bulk", vec![[b.x_or[0], t]])
                    .shape(MarkerShape::Circle)
                    .radius(5.0)
                    .filled(true)
                    .color(BULK_COLOUR),
            );
        }
    });
}

/// Histogram of the Monte Carlo minimum temperatures, with the median and 95 % interval.
pub fn temperature_histogram_ui(
    ui: &mut Ui,
    draws: &[Option<f64>],
    summary: Option<&Summary>,
    height: f32,
) {
    let values: Vec<f64> = draws
        .iter()
        .flatten()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    let (lo, hi) = values
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let mut bars = Vec::new();
    if values.len() > 1 && hi > lo {
        let bins = 40usize;
        let width = (hi - lo) / bins as f64;
        let mut counts = vec![0u32; bins];
        for v in &values {
            let i = (((v - lo) / width) as usize).min(bins - 1);
            counts[i] += 1;
        }
        for (i, c) in counts.iter().enumerate() {
            bars.push(Bar::new(lo + (i as f64 + 0.5) * width, f64::from(*c)).width(width * 0.95));
        }
    }
    Plot::new("temperature-histogram")
        .height(height)
        .x_axis_label("minimum crystallisation T (°C)")
        .y_axis_label("draws")
        .legend(Legend::default())
        .show(ui, |pui| {
            pui.add(
                BarChart::new("Monte Carlo draws", bars).color(Color32::from_rgb(120, 150, 190)),
            );
            if let Some(s) = summary {
                pui.add(
                    egui_plot::VLine::new(format!("median {:.0} °C", s.median), s.median)
                        .color(BULK_COLOUR)
                        .width(2.0),
                );
                pui.add(
                    egui_plot::VLine::new(
                        format!("95 % interval {:.0}-{:.0} °C", s.p2_5, s.p97_5),
                        s.p2_5,
                    )
                    .color(BULK_COLOUR)
                    .style(LineStyle::dashed_loose()),
                );
                pui.add(
                    egui_plot::VLine::new(
                        format!("95 % interval {:.0}-{:.0} °C", s.p2_5, s.p97_5),
                        s.p97_5,
                    )
                    .color(BULK_COLOUR)
                    .style(LineStyle::dashed_loose()),
                );
            }
        });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn traced_solvus_passes_through_the_consolute_point() {
        // Source: design §3.3 check values (derived from Haselton et al. 1983 as used by
        // Fuhrman & Lindsley): consolute point at 1 kbar 682.4 °C, X_Or 0.339. Tolerance 0.5 °C
        // and 0.002 covers the rounding of the quoted values.
        let s = SolvusLine::trace("haselton1983", 1.0).expect("traces");
        assert!((s.consolute[1] - 682.4).abs() < 0.5, "{:?}", s.consolute);
        assert!((s.consolute[0] - 0.339).abs() < 0.002, "{:?}", s.consolute);
        let top = s.binodal.iter().map(|p| p[1]).fold(f64::MIN, f64::max);
        assert!((top - s.consolute[1]).abs() < 1e-6);
        // Source: design §3.3, Haselton set at 1 kbar, limbs at 600 °C: 0.1308 / 0.6151. The
        // traced points are not exactly at 600 °C, so interpolate along each limb (0.01 allows
        // for linear interpolation between traced points).
        let half = s.binodal.len() / 2;
        let at = |limb: &[[f64; 2]]| {
            limb.windows(2)
                .find(|w| (w[0][1] - 600.0) * (w[1][1] - 600.0) <= 0.0)
                .map(|w| w[0][0] + (600.0 - w[0][1]) / (w[1][1] - w[0][1]) * (w[1][0] - w[0][0]))
        };
        let na = at(&s.binodal[..half]).expect("Na limb crosses 600 °C");
        let k = at(&s.binodal[half..]).expect("K limb crosses 600 °C");
        assert!((na - 0.1308).abs() < 0.01, "Na limb {na}");
        assert!((k - 0.6151).abs() < 0.01, "K limb {k}");
    }
}
