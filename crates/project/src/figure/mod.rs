//! Figures for reports and papers, as plain data that any renderer can draw.
//!
//! A [`Figure`] is a scene in **data coordinates**: a frame (Cartesian axes with ranges, labels
//! and ticks, or a plain frame for the ternary and the micrograph), then polylines, filled
//! polygons, markers, error bars, text, raster images and legend entries. The builders turn
//! engine results into figures:
//!
//! * [`solvus_figure`]: binary T–X diagram (binodal, spinodal, consolute point, lamella pair,
//!   reintegrated bulk, minimum crystallisation temperature; several models overlaid);
//! * [`ternary_figure`]: Ab–An–Or diagram with isotherms of a ternary model, lamellae, the
//!   bulk with its Monte Carlo cloud and the spot analyses;
//! * [`min_temperature_figure`]: histogram of the minimum temperature over the Monte Carlo draws;
//! * [`micrograph_figure`]: the micrograph with its phase overlay, region outline, scale bar;
//! * [`quadrilateral_figure`]: the pyroxene quadrilateral (Wo–En–Fs) with spots, the lamella
//!   tie-line, the bulk and its Monte Carlo cloud.
//!
//! The same [`Figure`] is drawn by the desktop workbench and written to files by
//! [`render::to_svg`], [`render::to_png`] and [`render::to_pdf`] (one SVG text parsed once by
//! `usvg`, then rasterised by `resvg` or converted by `svg2pdf`), so what you see is what you
//! export. Text uses the DejaVu Sans font bundled in `assets/fonts`, never a system font, so files
//! are identical on every machine.
//!
//! Text may carry sub- and superscripts as `_{..}` and `^{..}` (`X_{Or}`); [`text_runs`]
//! splits such a string for a renderer, [`plain_text`] flattens it.
//!
//! ```
//! use project::figure::{Axis, Figure, FigureSize, Frame, Item, Polyline, Style, render};
//! let mut fig = Figure::new(FigureSize::SingleColumn, Frame::Cartesian {
//!     x: Axis::new("X_{Or}", 0.0, 1.0),
//!     y: Axis::new("T (°C)", 400.0, 800.0),
//! });
//! fig.items.push(Item::Line(Polyline {
//!     points: vec![[0.1, 500.0], [0.34, 682.0], [0.76, 500.0]],
//!     style: Style::solid(project::figure::palette::BLUE, 1.0),
//! }));
//! let svg = render::to_svg(&fig);
//! assert!(svg.starts_with("<svg"));
//! let png = render::to_png(&fig, 150.0).unwrap();
//! assert_eq!(&png[1..4], b"PNG");
//! ```

use serde::{Deserialize, Serialize};

mod grain;
mod histogram;
mod marks;
mod micrograph;
mod quadrilateral;
pub mod render;
mod solvus_diagram;
mod ternary_diagram;

pub use grain::{FigureKind, GrainFigureOptions, grain_figure, ternary_model_id};
pub use histogram::{bin_counts, freedman_diaconis_edges, min_temperature_figure};
pub use micrograph::{MicrographFigureOptions, micrograph_figure, scale_bar_length};
pub use quadrilateral::{
    FIELD_WO_LIMITS, QuadrilateralFigureOptions, quadrilateral_figure, quadrilateral_xy,
};
pub use solvus_diagram::{SolvusFigureOptions, pair_temperature_c, short_citation, solvus_figure};
pub use ternary_diagram::{
    SpotPoint, TernaryFigureOptions, grain_spots, ternary_figure, ternary_xy,
};

/// Why a figure could not be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum FigureError {
    /// The solution model could not give what the figure needs.
    #[error("model '{model}': {message}")]
    Model {
        /// Model id.
        model: String,
        /// What the solvus engine said.
        message: String,
    },
    /// The grain lacks what this figure shows.
    #[error("grain {grain}: {message}")]
    Grain {
        /// `sample/grain`.
        grain: String,
        /// What is missing.
        message: String,
    },
    /// A file the figure needs could not be read.
    #[error("{path}: {message}")]
    Input {
        /// The file.
        path: String,
        /// What went wrong.
        message: String,
    },
    /// An option is out of range.
    #[error("option {option}: {message}")]
    Option {
        /// Which option.
        option: &'static str,
        /// What was wrong.
        message: String,
    },
    /// Rendering or encoding failed.
    #[error("rendering: {0}")]
    Render(String),
}

/// Journal column widths (common practice: about 84 mm single, 174 mm double column).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum FigureSize {
    /// 84 mm wide.
    SingleColumn,
    /// 174 mm wide.
    DoubleColumn,
    /// Any width, mm.
    WidthMm(f64),
}

impl FigureSize {
    /// Width in millimetres.
    pub fn width_mm(self) -> f64 {
        match self {
            FigureSize::SingleColumn => 84.0,
            FigureSize::DoubleColumn => 174.0,
            FigureSize::WidthMm(w) => w,
        }
    }
}

/// An RGB colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Rgb(pub u8, pub u8, pub u8);

impl Rgb {
    /// `#rrggbb`.
    pub fn hex(self) -> String {
        format!("#{:02x}{:02x}{:02x}", self.0, self.1, self.2)
    }
}

/// The colours of Consolute's figures: the Okabe–Ito palette, chosen to stay distinct for
/// readers with colour-vision deficiency (Okabe & Ito 2008, *Color Universal Design*,
/// jfly.uni-koeln.de; also Wong 2011, *Nature Methods* 8:441). Every series also differs in
/// line dash or marker shape, so the figures read in greyscale too.
pub mod palette {
    use super::Rgb;
    /// Black.
    pub const BLACK: Rgb = Rgb(0, 0, 0);
    /// Orange.
    pub const ORANGE: Rgb = Rgb(0xE6, 0x9F, 0x00);
    /// Sky blue.
    pub const SKY_BLUE: Rgb = Rgb(0x56, 0xB4, 0xE9);
    /// Bluish green.
    pub const GREEN: Rgb = Rgb(0x00, 0x9E, 0x73);
    /// Yellow.
    pub const YELLOW: Rgb = Rgb(0xF0, 0xE4, 0x42);
    /// Blue.
    pub const BLUE: Rgb = Rgb(0x00, 0x72, 0xB2);
    /// Vermillion.
    pub const VERMILLION: Rgb = Rgb(0xD5, 0x5E, 0x00);
    /// Reddish purple.
    pub const PURPLE: Rgb = Rgb(0xCC, 0x79, 0xA7);
    /// Mid grey for clouds and grids.
    pub const GREY: Rgb = Rgb(0x99, 0x99, 0x99);
    /// Light grey for grid lines.
    pub const LIGHT_GREY: Rgb = Rgb(0xDD, 0xDD, 0xDD);
    /// Series colours in order of use (vermillion and sky blue are kept for data points).
    pub const SERIES: [Rgb; 5] = [BLUE, GREEN, PURPLE, ORANGE, BLACK];
}

/// Line dash pattern.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Dash {
    /// Solid.
    Solid,
    /// Long dashes.
    Dashed,
    /// Dots.
    Dotted,
    /// Dash-dot.
    DashDot,
}

impl Dash {
    /// Dash pattern in units of the line width (`None` for solid).
    pub fn pattern(self) -> Option<&'static [f64]> {
        match self {
            Dash::Solid => None,
            Dash::Dashed => Some(&[5.0, 3.0]),
            Dash::Dotted => Some(&[1.0, 2.0]),
            Dash::DashDot => Some(&[5.0, 2.0, 1.0, 2.0]),
        }
    }
}

/// The dash of the k-th series (solid, dashed, dash-dot, dotted, then again).
pub fn dash_for(k: usize) -> Dash {
    [Dash::Solid, Dash::Dashed, Dash::DashDot, Dash::Dotted][k % 4]
}

/// How a line is stroked.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Style {
    /// Colour.
    pub colour: Rgb,
    /// Width, pt.
    pub width_pt: f64,
    /// Dash.
    pub dash: Dash,
}

impl Style {
    /// A solid line.
    pub fn solid(colour: Rgb, width_pt: f64) -> Self {
        Style {
            colour,
            width_pt,
            dash: Dash::Solid,
        }
    }
    /// A line with a dash pattern.
    pub fn dashed(colour: Rgb, width_pt: f64, dash: Dash) -> Self {
        Style {
            colour,
            width_pt,
            dash,
        }
    }
}

/// An axis of a Cartesian frame. `min` is drawn at the left/bottom, `max` at the right/top.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Axis {
    /// Label (may hold `_{..}`/`^{..}`).
    pub label: String,
    /// Value at the left or bottom.
    pub min: f64,
    /// Value at the right or top.
    pub max: f64,
    /// Ticks with their labels.
    pub ticks: Vec<Tick>,
}

impl Axis {
    /// An axis with ticks chosen by [`nice_ticks`].
    pub fn new(label: &str, min: f64, max: f64) -> Self {
        Axis {
            label: label.into(),
            min,
            max,
            ticks: nice_ticks(min, max, 6),
        }
    }
    /// Whether a value lies within the axis range.
    pub fn contains(&self, v: f64) -> bool {
        v >= self.min.min(self.max) && v <= self.min.max(self.max)
    }
}

/// One tick of an axis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Tick {
    /// Position, data units.
    pub value: f64,
    /// Text shown.
    pub label: String,
}

/// What sits around the data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum Frame {
    /// Two axes with ticks, labels and a box.
    Cartesian {
        /// Horizontal axis.
        x: Axis,
        /// Vertical axis.
        y: Axis,
    },
    /// No axes: the items draw everything (ternary diagrams, images). One data unit is the same
    /// length along x and y; `x`/`y` give the visible range (`y.0` at the bottom).
    Plain {
        /// Visible x range.
        x: (f64, f64),
        /// Visible y range, bottom then top (bottom > top flips the image way up).
        y: (f64, f64),
    },
}

/// Marker shapes, distinguishable without colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum MarkerShape {
    /// Circle.
    Circle,
    /// Square.
    Square,
    /// Diamond.
    Diamond,
    /// Triangle pointing up.
    TriangleUp,
    /// Triangle pointing down.
    TriangleDown,
    /// Diagonal cross.
    Cross,
    /// Plus sign.
    Plus,
}

/// A set of markers of one look.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Markers {
    /// Positions, data coordinates.
    pub points: Vec<[f64; 2]>,
    /// Shape.
    pub shape: MarkerShape,
    /// Size (width of the shape), pt.
    pub size_pt: f64,
    /// Outline colour.
    pub colour: Rgb,
    /// Fill colour (`None` = open symbol).
    pub fill: Option<Rgb>,
    /// Opacity of the whole marker, 0-1.
    pub opacity: f64,
}

/// A connected line.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Polyline {
    /// Vertices, data coordinates.
    pub points: Vec<[f64; 2]>,
    /// Stroke.
    pub style: Style,
}

/// A closed, filled shape.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Polygon {
    /// Vertices, data coordinates.
    pub points: Vec<[f64; 2]>,
    /// Fill colour.
    pub fill: Option<Rgb>,
    /// Fill opacity, 0-1.
    pub fill_opacity: f64,
    /// Outline.
    pub stroke: Option<Style>,
}

/// Error bars around a point: x and/or y intervals, with end caps.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ErrorBar {
    /// The point.
    pub at: [f64; 2],
    /// x interval (low, high).
    pub x: Option<(f64, f64)>,
    /// y interval (low, high).
    pub y: Option<(f64, f64)>,
    /// Stroke.
    pub style: Style,
}

/// Horizontal anchoring of a text.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Anchor {
    /// Text starts at the point.
    Start,
    /// Text is centred on the point.
    Middle,
    /// Text ends at the point.
    End,
}

/// A text placed in data coordinates, nudged by an offset in points.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Label {
    /// Anchor point, data coordinates.
    pub at: [f64; 2],
    /// Offset from the anchor, pt (x right, y up).
    pub offset_pt: [f64; 2],
    /// Text (may hold `_{..}`/`^{..}`).
    pub text: String,
    /// Font size, pt.
    pub size_pt: f64,
    /// Colour.
    pub colour: Rgb,
    /// Anchoring.
    pub anchor: Anchor,
    /// Draw a white halo behind the text (for text over lines or images).
    pub halo: bool,
}

/// A raster image spanning a rectangle in data coordinates (row 0 at `top_left`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RasterImage {
    /// Data coordinates of the top-left corner of pixel (0, 0).
    pub top_left: [f64; 2],
    /// Data coordinates of the bottom-right corner of the last pixel.
    pub bottom_right: [f64; 2],
    /// Width, px.
    pub width: u32,
    /// Height, px.
    pub height: u32,
    /// RGBA, row-major, `width * height * 4` bytes.
    pub rgba: Vec<u8>,
}

/// One drawable element.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum Item {
    /// A line.
    Line(Polyline),
    /// A filled shape.
    Polygon(Polygon),
    /// Markers.
    Markers(Markers),
    /// Error bars.
    ErrorBar(ErrorBar),
    /// Text.
    Label(Label),
    /// A raster image.
    Image(RasterImage),
}

/// How a legend entry is drawn.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum LegendSymbol {
    /// A short line.
    Line(Style),
    /// A marker.
    Marker {
        /// Shape.
        shape: MarkerShape,
        /// Outline.
        colour: Rgb,
        /// Fill.
        fill: Option<Rgb>,
    },
    /// A filled square.
    Patch {
        /// Fill.
        fill: Rgb,
        /// Outline.
        stroke: Option<Style>,
    },
}

/// One line of the legend.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LegendEntry {
    /// Text.
    pub label: String,
    /// Symbol.
    pub symbol: LegendSymbol,
}

/// Where the legend box goes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum LegendPlace {
    /// Inside the plot, top left.
    TopLeft,
    /// Inside the plot, top right.
    TopRight,
    /// Below the plot, entries in columns.
    Below,
}

/// A whole figure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Figure {
    /// Width, mm.
    pub width_mm: f64,
    /// Height, mm.
    pub height_mm: f64,
    /// Short title, drawn above the plot (may be empty).
    pub title: String,
    /// Axes or plain frame.
    pub frame: Frame,
    /// The content, drawn in order.
    pub items: Vec<Item>,
    /// Legend entries.
    pub legend: Vec<LegendEntry>,
    /// Legend position.
    pub legend_place: LegendPlace,
    /// Base font size, pt.
    pub font_size_pt: f64,
}

impl Figure {
    /// An empty figure of a journal width with a 4:3 (width:height) aspect ratio.
    pub fn new(size: FigureSize, frame: Frame) -> Self {
        let width_mm = size.width_mm();
        Figure {
            width_mm,
            height_mm: width_mm * 0.75,
            title: String::new(),
            frame,
            items: Vec::new(),
            legend: Vec::new(),
            legend_place: LegendPlace::TopRight,
            font_size_pt: 7.0,
        }
    }

    /// The figure with y pointing up everywhere: a plain frame drawn y-down (an image, bottom
    /// value above the top value) gets every y negated and its range swapped. For plot widgets
    /// that cannot invert an axis (egui_plot); the exporters do not need it.
    pub fn with_y_up(&self) -> Figure {
        let Frame::Plain { x, y } = &self.frame else {
            return self.clone();
        };
        if y.0 <= y.1 {
            return self.clone();
        }
        let flip = |p: &[f64; 2]| [p[0], -p[1]];
        let mut fig = self.clone();
        fig.frame = Frame::Plain {
            x: *x,
            y: (-y.0, -y.1),
        };
        for item in &mut fig.items {
            match item {
                Item::Line(l) => l.points.iter_mut().for_each(|p| *p = flip(p)),
                Item::Polygon(p) => p.points.iter_mut().for_each(|q| *q = flip(q)),
                Item::Markers(m) => m.points.iter_mut().for_each(|p| *p = flip(p)),
                Item::ErrorBar(e) => {
                    e.at = flip(&e.at);
                    e.y = e.y.map(|(lo, hi)| (-hi, -lo));
                }
                Item::Label(l) => l.at = flip(&l.at),
                Item::Image(i) => {
                    i.top_left = flip(&i.top_left);
                    i.bottom_right = flip(&i.bottom_right);
                }
            }
        }
        fig
    }

    /// All polylines of the figure.
    pub fn lines(&self) -> impl Iterator<Item = &Polyline> {
        self.items.iter().filter_map(|i| match i {
            Item::Line(l) => Some(l),
            _ => None,
        })
    }

    /// All marker sets of the figure.
    pub fn markers(&self) -> impl Iterator<Item = &Markers> {
        self.items.iter().filter_map(|i| match i {
            Item::Markers(m) => Some(m),
            _ => None,
        })
    }

    /// All texts of the figure.
    pub fn labels(&self) -> impl Iterator<Item = &Label> {
        self.items.iter().filter_map(|i| match i {
            Item::Label(l) => Some(l),
            _ => None,
        })
    }
}

/// Part of a text: normal, subscript or superscript.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Script {
    /// Normal.
    Normal,
    /// Subscript.
    Sub,
    /// Superscript.
    Super,
}

/// Split `X_{Or}` style text into runs.
pub fn text_runs(text: &str) -> Vec<(String, Script)> {
    let mut out: Vec<(String, Script)> = Vec::new();
    let mut rest = text;
    while !rest.is_empty() {
        let next = [("_{", Script::Sub), ("^{", Script::Super)]
            .iter()
            .filter_map(|(m, s)| rest.find(m).map(|i| (i, *s)))
            .min_by_key(|(i, _)| *i);
        match next {
            Some((i, script)) => match rest[i + 2..].find('}') {
                Some(j) => {
                    if i > 0 {
                        out.push((rest[..i].to_string(), Script::Normal));
                    }
                    out.push((rest[i + 2..i + 2 + j].to_string(), script));
                    rest = &rest[i + 3 + j..];
                }
                None => {
                    out.push((rest.to_string(), Script::Normal));
                    break;
                }
            },
            None => {
                out.push((rest.to_string(), Script::Normal));
                break;
            }
        }
    }
    out
}

/// A text with its sub/superscript markers removed (`X_{Or}` → `XOr`).
pub fn plain_text(text: &str) -> String {
    text_runs(text).into_iter().map(|(s, _)| s).collect()
}

/// Tick positions at "nice" steps (1, 2, 5 × 10^k) covering `[min, max]` with about `target`
/// ticks, after Heckbert (1990), "Nice numbers for graph labels", *Graphics Gems* I, 61-63.
pub fn nice_ticks(min: f64, max: f64, target: usize) -> Vec<Tick> {
    let (lo, hi) = (min.min(max), min.max(max));
    if !(lo.is_finite() && hi.is_finite()) || hi <= lo {
        return Vec::new();
    }
    let step = nice_step((hi - lo) / target.max(2) as f64);
    let decimals = (-step.log10().floor()).max(0.0) as usize;
    let first = (lo / step - 1e-9).ceil() as i64;
    let last = (hi / step + 1e-9).floor() as i64;
    (first..=last)
        .map(|k| {
            let value = k as f64 * step;
            let value = if value.abs() < step * 1e-9 {
                0.0
            } else {
                value
            };
            Tick {
                value,
                label: format!("{value:.decimals$}"),
            }
        })
        .collect()
}

/// The nice number (1, 2, 5 × 10^k) nearest above a raw step.
pub fn nice_step(raw: f64) -> f64 {
    let exp = raw.log10().floor();
    let base = 10f64.powf(exp);
    let f = raw / base;
    let nice = if f <= 1.0 {
        1.0
    } else if f <= 2.0 {
        2.0
    } else if f <= 5.0 {
        5.0
    } else {
        10.0
    };
    nice * base
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn y_up_keeps_the_page_layout() {
        // an image frame drawn y-down and its y-up copy put every point at the same page place
        let mut fig = Figure::new(
            FigureSize::SingleColumn,
            Frame::Plain {
                x: (0.0, 100.0),
                y: (80.0, 0.0),
            },
        );
        fig.items.push(Item::Line(Polyline {
            points: vec![[10.0, 5.0], [90.0, 70.0]],
            style: Style::solid(palette::BLACK, 1.0),
        }));
        let up = fig.with_y_up();
        let (a, b) = (render::layout(&fig), render::layout(&up));
        let (Item::Line(l1), Item::Line(l2)) = (&fig.items[0], &up.items[0]) else {
            panic!()
        };
        for (p, q) in l1.points.iter().zip(&l2.points) {
            let (pa, pb) = (a.to_page(*p), b.to_page(*q));
            assert!((pa[0] - pb[0]).abs() < 1e-9 && (pa[1] - pb[1]).abs() < 1e-9);
        }
        assert_eq!(l2.points[0], [10.0, -5.0]);
    }

    #[test]
    fn text_runs_split_sub_and_superscripts() {
        let runs = text_runs("X_{Or} at 10^{3} K");
        assert_eq!(
            runs,
            vec![
                ("X".to_string(), Script::Normal),
                ("Or".to_string(), Script::Sub),
                (" at 10".to_string(), Script::Normal),
                ("3".to_string(), Script::Super),
                (" K".to_string(), Script::Normal),
            ]
        );
        assert_eq!(plain_text("T_{min}"), "Tmin");
        // an unclosed marker is kept as written
        assert_eq!(plain_text("a_{b"), "a_{b");
    }

    #[test]
    fn nice_ticks_follow_heckbert() {
        // Source: Heckbert 1990 (Graphics Gems I): steps are 1, 2 or 5 times a power of ten.
        let t = nice_ticks(0.0, 1.0, 6);
        let v: Vec<f64> = t.iter().map(|t| t.value).collect();
        assert_eq!(v.len(), 6);
        assert!(
            (v[1] - 0.2).abs() < 1e-12,
            "step 0.2 for [0, 1] at ~6 ticks"
        );
        assert_eq!(t[5].label, "1.0");
        let t = nice_ticks(350.0, 1020.0, 6);
        assert_eq!(t[0].value, 400.0);
        assert_eq!(t.last().map(|t| t.value), Some(1000.0));
        assert_eq!(t[0].label, "400");
        assert!(nice_ticks(1.0, 1.0, 5).is_empty());
    }
}
