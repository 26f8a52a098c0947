//! The project's renderer-neutral figures drawn with egui_plot, so that what the workbench shows
//! is what the exports contain; and the worker thread that builds them for the selected grain.

use std::path::PathBuf;
use std::sync::mpsc;

use egui::{Align2, Color32, RichText, Stroke, Ui};
use egui_plot::{Line, LineStyle, Plot, PlotPoint, Points, Polygon, Text};
use project::figure::{
    Anchor, Dash, Figure, FigureKind, Frame, GrainFigureOptions, Item, LegendSymbol, MarkerShape,
    Rgb, SolvusFigureOptions, plain_text, solvus_figure,
};
use project::{GrainResult, Project};
use solvus::SolutionModel;

use crate::document::GrainRef;

fn colour(c: Rgb) -> Color32 {
    Color32::from_rgb(c.0, c.1, c.2)
}

/// Dark lines of a figure made for white paper stay readable on a dark background.
fn on_screen(c: Rgb, dark: bool) -> Color32 {
    if dark && c.0 < 60 && c.1 < 60 && c.2 < 60 {
        Color32::from_gray(220)
    } else {
        colour(c)
    }
}

fn style(dash: Dash) -> LineStyle {
    match dash {
        Dash::Solid => LineStyle::Solid,
        Dash::Dashed => LineStyle::dashed_loose(),
        Dash::Dotted => LineStyle::dotted_dense(),
        Dash::DashDot => LineStyle::dashed_dense(),
    }
}

fn shape(s: MarkerShape) -> egui_plot::MarkerShape {
    match s {
        MarkerShape::Circle => egui_plot::MarkerShape::Circle,
        MarkerShape::Square => egui_plot::MarkerShape::Square,
        MarkerShape::Diamond => egui_plot::MarkerShape::Diamond,
        MarkerShape::TriangleUp => egui_plot::MarkerShape::Up,
        MarkerShape::TriangleDown => egui_plot::MarkerShape::Down,
        MarkerShape::Cross => egui_plot::MarkerShape::Cross,
        MarkerShape::Plus => egui_plot::MarkerShape::Plus,
    }
}

/// A simple polygon cut into convex pieces (trapezoids between consecutive vertex x values,
/// inside by the even-odd rule), so that concave shapes such as a histogram outline fill right.
pub fn trapezoids(points: &[[f64; 2]]) -> Vec<[[f64; 2]; 4]> {
    let n = points.len();
    if n < 3 {
        return Vec::new();
    }
    let mut xs: Vec<f64> = points
        .iter()
        .map(|p| p[0])
        .filter(|x| x.is_finite())
        .collect();
    xs.sort_by(f64::total_cmp);
    xs.dedup();
    let edges: Vec<([f64; 2], [f64; 2])> = (0..n)
        .map(|i| (points[i], points[(i + 1) % n]))
        .filter(|(a, b)| a[0] != b[0])
        .collect();
    let y_at =
        |(a, b): &([f64; 2], [f64; 2]), x: f64| a[1] + (x - a[0]) / (b[0] - a[0]) * (b[1] - a[1]);
    let mut out = Vec::new();
    for w in xs.windows(2) {
        let (x0, x1) = (w[0], w[1]);
        let mid = 0.5 * (x0 + x1);
        let mut crossing: Vec<(f64, f64, f64)> = edges
            .iter()
            .filter(|(a, b)| a[0].min(b[0]) <= x0 && a[0].max(b[0]) >= x1)
            .map(|e| (y_at(e, mid), y_at(e, x0), y_at(e, x1)))
            .collect();
        crossing.sort_by(|a, b| a.0.total_cmp(&b.0));
        for pair in crossing.chunks_exact(2) {
            let (lo, hi) = (pair[0], pair[1]);
            out.push([[x0, lo.1], [x1, lo.2], [x1, hi.2], [x0, hi.1]]);
        }
    }
    out
}

/// Screen points per typographic point of the figure.
const PT: f32 = 1.4;

/// Draw a figure. `small` makes a fixed, non-interactive plot for the result card. Hovering a
/// Cartesian figure reads its two axes. Returns the figure coordinates under the pointer, if
/// it is over the plot (the Temperature stage turns them into a ternary readout).
pub fn figure_ui(
    ui: &mut Ui,
    id: &str,
    fig: &Figure,
    height: f32,
    small: bool,
) -> Option<[f64; 2]> {
    let dark = ui.visuals().dark_mode;
    let mut plot = Plot::new(id).height(height).show_background(true);
    match &fig.frame {
        Frame::Cartesian { x, y } => {
            let (xl, yl) = (plain_text(&x.label), plain_text(&y.label));
            let (xl2, yl2) = (xl.clone(), yl.clone());
            plot = plot
                .x_axis_label(xl)
                .y_axis_label(yl)
                .default_x_bounds(x.min.min(x.max), x.min.max(x.max))
                .default_y_bounds(y.min.min(y.max), y.min.max(y.max))
                .label_formatter(move |hover| {
                    let (name, p) = match hover {
                        egui_plot::HoverPosition::NearDataPoint {
                            plot_name,
                            position,
                            ..
                        } => (*plot_name, position),
                        egui_plot::HoverPosition::Elsewhere { position } => ("", position),
                    };
                    let head = if name.is_empty() {
                        String::new()
                    } else {
                        format!("{name}\n")
                    };
                    Some(format!("{head}{xl2} {:.3}\n{yl2} {:.1}", p.x, p.y))
                });
        }
        Frame::Plain { x, y } => {
            plot = plot
                .data_aspect(1.0)
                .show_axes(false)
                .show_grid(false)
                .include_x(x.0)
                .include_x(x.1)
                .include_y(y.0)
                .include_y(y.1)
                .label_formatter(|_| None);
        }
    }
    if small {
        plot = plot
            .allow_drag(false)
            .allow_zoom(false)
            .allow_scroll(false)
            .allow_boxed_zoom(false);
    }
    let shown = plot.show(ui, |pui| {
        for item in &fig.items {
            match item {
                Item::Line(l) => pui.line(
                    Line::new("", l.points.clone())
                        .color(on_screen(l.style.colour, dark))
                        .width(l.style.width_pt as f32 * PT)
                        .style(style(l.style.dash))
                        .allow_band(false),
                ),
                Item::Polygon(p) => {
                    // egui fills convex shapes only: fill the polygon as trapezoids, then stroke
                    // its outline.
                    if let Some(f) = p.fill {
                        let fill = colour(f).gamma_multiply(p.fill_opacity as f32);
                        for piece in trapezoids(&p.points) {
                            pui.add(
                                Polygon::new("", piece.to_vec())
                                    .fill_color(fill)
                                    .stroke(Stroke::NONE)
                                    .allow_hover(false),
                            );
                        }
                    }
                    if let Some(s) = p.stroke {
                        // The outline as the polygon's own stroke (no fill): a closed path.
                        pui.add(
                            Polygon::new("", p.points.clone())
                                .fill_color(Color32::TRANSPARENT)
                                .stroke(Stroke::new(
                                    s.width_pt as f32 * PT,
                                    on_screen(s.colour, dark),
                                ))
                                .style(style(s.dash))
                                .allow_hover(false),
                        );
                    }
                }
                Item::Markers(m) => pui.add(
                    Points::new("", m.points.clone())
                        .shape(shape(m.shape))
                        .radius(m.size_pt as f32 * PT * 0.5)
                        .filled(m.fill.is_some())
                        .color(
                            on_screen(m.fill.unwrap_or(m.colour), dark)
                                .gamma_multiply(m.opacity as f32),
                        ),
                ),
                Item::ErrorBar(e) => {
                    let c = on_screen(e.style.colour, dark);
                    let w = e.style.width_pt as f32 * PT;
                    if let Some((lo, hi)) = e.x {
                        pui.line(
                            Line::new("", vec![[lo, e.at[1]], [hi, e.at[1]]])
                                .color(c)
                                .width(w),
                        );
                    }
                    if let Some((lo, hi)) = e.y {
                        pui.line(
                            Line::new("", vec![[e.at[0], lo], [e.at[0], hi]])
                                .color(c)
                                .width(w),
                        );
                    }
                }
                Item::Label(_) if small => {}
                Item::Label(l) => {
                    let anchor = match l.anchor {
                        Anchor::Start => Align2::LEFT_CENTER,
                        Anchor::Middle => Align2::CENTER_CENTER,
                        Anchor::End => Align2::RIGHT_CENTER,
                    };
                    pui.text(
                        Text::new(
                            "",
                            PlotPoint::new(l.at[0], l.at[1]),
                            RichText::new(plain_text(&l.text))
                                .size((l.size_pt as f32 * PT).max(9.0)),
                        )
                        .color(on_screen(l.colour, dark))
                        .anchor(anchor),
                    );
                }
                Item::Image(_) => {}
            }
        }
    });
    let hovered = shown.response.hover_pos().map(|p| {
        let v = shown.transform.value_from_position(p);
        [v.x, v.y]
    });
    if !small && !fig.legend.is_empty() {
        ui.horizontal_wrapped(|ui| {
            for entry in &fig.legend {
                let (glyph, c) = match &entry.symbol {
                    LegendSymbol::Line(s) => ("━", on_screen(s.colour, dark)),
                    LegendSymbol::Marker {
                        colour: c, fill, ..
                    } => ("●", on_screen(fill.unwrap_or(*c), dark)),
                    LegendSymbol::Patch { fill, .. } => ("■", colour(*fill)),
                };
                // Mark and label in one label that does not wrap, so a line never breaks
                // between an entry's mark and its words.
                let mut job = egui::text::LayoutJob::default();
                let font = egui::TextStyle::Body.resolve(ui.style());
                let text = ui.visuals().text_color();
                job.append(glyph, 0.0, egui::TextFormat::simple(font.clone(), c));
                job.append(
                    &plain_text(&entry.label),
                    4.0,
                    egui::TextFormat::simple(font, text),
                );
                ui.add(egui::Label::new(job).wrap_mode(egui::TextWrapMode::Extend));
                ui.add_space(8.0);
            }
        });
    }
    hovered
}

/// The figures of the selected grain.
pub struct FigureSet {
    /// What they were built from.
    pub key: String,
    /// The grain they are of.
    pub grain: Option<GrainRef>,
    /// T-X diagram (solvus alone when the grain has no result).
    pub solvus: Result<Figure, String>,
    /// Ternary diagram.
    pub ternary: Option<Result<Figure, String>>,
    /// Minimum-temperature distribution.
    pub histogram: Option<Result<Figure, String>>,
    /// Pyroxene quadrilateral (pyroxene grains).
    pub quadrilateral: Option<Result<Figure, String>>,
}

impl FigureSet {
    /// The figure of a kind, if built.
    pub fn get(&self, kind: FigureKind) -> Option<&Result<Figure, String>> {
        match kind {
            FigureKind::Solvus => Some(&self.solvus),
            FigureKind::Ternary => self.ternary.as_ref(),
            FigureKind::Histogram => self.histogram.as_ref(),
            FigureKind::Quadrilateral => self.quadrilateral.as_ref(),
            _ => None,
        }
    }
}

/// Building a [`FigureSet`] on the `consolute-figures` thread.
pub struct FigureJob {
    /// The set it builds.
    pub key: String,
    rx: mpsc::Receiver<FigureSet>,
}

impl FigureJob {
    /// Start building. `extra_models` are overlaid on the solvus.
    ///
    /// # Errors
    /// When the thread cannot start.
    pub fn start(
        ctx: egui::Context,
        key: String,
        grain_ref: Option<GrainRef>,
        project: Project,
        path: PathBuf,
        grain: Option<GrainResult>,
        extra_models: Vec<String>,
    ) -> Result<Self, String> {
        let (tx, rx) = mpsc::channel();
        let k = key.clone();
        std::thread::Builder::new()
            .name("consolute-figures".into())
            .spawn(move || {
                let options = GrainFigureOptions {
                    extra_models: extra_models.clone(),
                    spinodal: false,
                    ..GrainFigureOptions::default()
                };
                let build = |kind: FigureKind, g: &GrainResult| {
                    project::figure::grain_figure(kind, &project, &path, g, &options)
                        .map_err(|e| e.to_string())
                };
                let feldspar = grain
                    .as_ref()
                    .filter(|g| g.system == reintegration::MineralSystem::Feldspar);
                let solvus = match feldspar {
                    Some(g) => build(FigureKind::Solvus, g),
                    None => {
                        let models: Result<Vec<SolutionModel>, String> =
                            std::iter::once(project.settings.feldspar_model.clone())
                                .chain(extra_models)
                                .map(|id| SolutionModel::builtin(&id).map_err(|e| e.to_string()))
                                .collect();
                        models.and_then(|m| {
                            solvus_figure(
                                &m,
                                project.settings.pressure_kbar,
                                None,
                                &SolvusFigureOptions {
                                    spinodal: false,
                                    ..SolvusFigureOptions::default()
                                },
                            )
                            .map_err(|e| e.to_string())
                        })
                    }
                };
                let set = FigureSet {
                    key: k,
                    grain: grain_ref,
                    solvus,
                    histogram: grain
                        .as_ref()
                        .filter(|g| FigureKind::Histogram.applies_to(g))
                        .map(|g| build(FigureKind::Histogram, g)),
                    ternary: feldspar.map(|g| build(FigureKind::Ternary, g)),
                    quadrilateral: grain
                        .as_ref()
                        .filter(|g| FigureKind::Quadrilateral.applies_to(g))
                        .map(|g| build(FigureKind::Quadrilateral, g)),
                };
                let _ = tx.send(set);
                ctx.request_repaint();
            })
            .map_err(|e| format!("could not start drawing the figures: {e}"))?;
        Ok(FigureJob { key, rx })
    }

    /// The set, once built.
    pub fn poll(&self) -> Option<FigureSet> {
        self.rx.try_recv().ok()
    }
}

#[cfg(test)]
mod tests {
    use super::trapezoids;

    fn area(q: &[[f64; 2]; 4]) -> f64 {
        // Shoelace formula.
        let mut a = 0.0;
        for i in 0..4 {
            let (p, r) = (q[i], q[(i + 1) % 4]);
            a += p[0] * r[1] - r[0] * p[1];
        }
        (a / 2.0).abs()
    }

    #[test]
    fn a_step_outline_is_filled_by_pieces_of_the_same_area() {
        // Bars of heights 1, 3, 2 on unit bins, outlined as one concave polygon.
        let outline = [
            [0.0, 0.0],
            [0.0, 1.0],
            [1.0, 1.0],
            [1.0, 3.0],
            [2.0, 3.0],
            [2.0, 2.0],
            [3.0, 2.0],
            [3.0, 0.0],
        ];
        let pieces = trapezoids(&outline);
        let total: f64 = pieces.iter().map(area).sum();
        // Exact: 1 + 3 + 2.
        assert!((total - 6.0).abs() < 1e-12, "{total}");
        assert_eq!(pieces.len(), 3);
    }

    #[test]
    fn a_ring_leaves_its_hole_empty() {
        // A square with a notch cut from its top: a U shape of area 9 - 1 = 8.
        let u = [
            [0.0, 0.0],
            [3.0, 0.0],
            [3.0, 3.0],
            [2.0, 3.0],
            [2.0, 2.0],
            [1.0, 2.0],
            [1.0, 3.0],
            [0.0, 3.0],
        ];
        let total: f64 = trapezoids(&u).iter().map(area).sum();
        assert!((total - 8.0).abs() < 1e-12, "{total}");
    }
}
