//! Drawing a [`Figure`] to SVG, PNG and PDF.
//!
//! The SVG is written here, path by path, with coordinates in points to three decimals (a
//! thousandth of a point is 0.35 µm: far below what a printer resolves), so curves stay smooth at
//! any zoom. PNG and PDF are made from that same SVG text: `usvg` parses it once with only the
//! bundled DejaVu Sans font in its font database, then `resvg` rasterises it at the requested dpi
//! or `svg2pdf` writes it as vector PDF with the font embedded.

use std::fmt::Write as _;
use std::sync::{Arc, OnceLock};

use resvg::tiny_skia;
use resvg::usvg;

use super::{
    Anchor, Figure, FigureError, Frame, Item, Label, LegendPlace, LegendSymbol, MarkerShape, Rgb,
    Script, Style, palette, text_runs,
};

/// The bundled font (DejaVu Sans; licence in `assets/fonts/LICENSE-DejaVu.txt`).
pub const FONT_BYTES: &[u8] = include_bytes!("../../../../assets/fonts/DejaVuSans.ttf");
/// Family name of the bundled font.
pub const FONT_FAMILY: &str = "DejaVu Sans";

pub(crate) const PT_PER_MM: f64 = 72.0 / 25.4;
/// The placement of the plot area inside the page, in points (y down).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Layout {
    /// Page width, pt.
    pub width_pt: f64,
    /// Page height, pt.
    pub height_pt: f64,
    /// Plot area left, pt.
    pub left: f64,
    /// Plot area top, pt.
    pub top: f64,
    /// Plot area width, pt.
    pub plot_width: f64,
    /// Plot area height, pt.
    pub plot_height: f64,
    x_range: (f64, f64),
    y_range: (f64, f64),
}

impl Layout {
    /// Page position (pt, y down) of a data point.
    pub fn to_page(&self, p: [f64; 2]) -> [f64; 2] {
        let (x0, x1) = self.x_range;
        let (y0, y1) = self.y_range;
        [
            self.left + (p[0] - x0) / (x1 - x0) * self.plot_width,
            self.top + self.plot_height - (p[1] - y0) / (y1 - y0) * self.plot_height,
        ]
    }
}

fn font_face() -> Option<&'static ttf_parser::Face<'static>> {
    static FACE: OnceLock<Option<ttf_parser::Face<'static>>> = OnceLock::new();
    FACE.get_or_init(|| ttf_parser::Face::parse(FONT_BYTES, 0).ok())
        .as_ref()
}

/// Width of a text in the bundled font, pt (sub/superscripts at their smaller size), from the
/// font's horizontal advances (kerning ignored: a fraction of a point).
pub fn text_width(text: &str, size: f64) -> f64 {
    let Some(face) = font_face() else {
        return super::plain_text(text).chars().count() as f64 * 0.6 * size;
    };
    let em = f64::from(face.units_per_em());
    text_runs(text)
        .iter()
        .map(|(run, script)| {
            let s = if *script == Script::Normal {
                size
            } else {
                size * 0.72
            };
            run.chars()
                .map(|c| {
                    face.glyph_index(c)
                        .and_then(|g| face.glyph_hor_advance(g))
                        .map_or(0.6 * em, f64::from)
                })
                .sum::<f64>()
                / em
                * s
        })
        .sum()
}

/// Legend entries laid out in columns (column-major): column count, rows, each column's width.
fn legend_columns(fig: &Figure, avail: f64) -> (usize, usize, Vec<f64>) {
    let f = fig.font_size_pt;
    let widths: Vec<f64> = fig
        .legend
        .iter()
        .map(|e| text_width(&e.label, f) + 20.0 + 10.0)
        .collect();
    let n = widths.len().max(1);
    for cols in (1..=n.min(4)).rev() {
        let rows = n.div_ceil(cols);
        let col_w: Vec<f64> = (0..cols)
            .map(|c| {
                widths
                    .iter()
                    .skip(c * rows)
                    .take(rows)
                    .copied()
                    .fold(0.0, f64::max)
            })
            .collect();
        if col_w.iter().sum::<f64>() <= avail || cols == 1 {
            return (cols, rows, col_w);
        }
    }
    (1, n, vec![avail])
}

fn legend_metrics(fig: &Figure) -> (f64, f64) {
    // (widest entry, row height)
    let f = fig.font_size_pt;
    let widest = fig
        .legend
        .iter()
        .map(|e| text_width(&e.label, f))
        .fold(0.0, f64::max);
    (widest + 20.0, f * 1.5)
}

/// Height of a legend placed below the plot, mm (zero for other places or no legend): builders
/// that put the legend below add it to the height of their plot.
pub fn legend_below_height_mm(fig: &Figure) -> f64 {
    if fig.legend_place != LegendPlace::Below || fig.legend.is_empty() {
        return 0.0;
    }
    let (_, row_h) = legend_metrics(fig);
    let (_, rows, _) = legend_columns(fig, fig.width_mm * PT_PER_MM - 12.0);
    (rows as f64 * row_h + fig.font_size_pt) / PT_PER_MM
}

/// Where the plot area goes for a figure.
pub fn layout(fig: &Figure) -> Layout {
    let width_pt = fig.width_mm * PT_PER_MM;
    let height_pt = fig.height_mm * PT_PER_MM;
    let f = fig.font_size_pt;
    let title_h = if fig.title.is_empty() { 0.0 } else { f * 1.8 };
    let (_, row_h) = legend_metrics(fig);
    let below_h = if fig.legend_place == LegendPlace::Below && !fig.legend.is_empty() {
        let (_, rows, _) = legend_columns(fig, width_pt - 12.0);
        rows as f64 * row_h + f
    } else {
        0.0
    };
    match &fig.frame {
        Frame::Cartesian { x, y } => {
            let widest_tick = y
                .ticks
                .iter()
                .map(|t| text_width(&t.label, f))
                .fold(0.0, f64::max);
            let left = widest_tick + f * 1.2 + 10.0;
            let bottom = f * 3.3 + 4.0;
            let top = title_h + 6.0;
            let right = 10.0;
            Layout {
                width_pt,
                height_pt,
                left,
                top,
                plot_width: width_pt - left - right,
                plot_height: height_pt - top - bottom - below_h,
                x_range: (x.min, x.max),
                y_range: (y.min, y.max),
            }
        }
        Frame::Plain { x, y } => {
            let margin = 4.0;
            let avail_w = width_pt - 2.0 * margin;
            let avail_h = height_pt - 2.0 * margin - title_h - below_h;
            let dx = (x.1 - x.0).abs();
            let dy = (y.1 - y.0).abs();
            let scale = (avail_w / dx).min(avail_h / dy);
            let (pw, ph) = (dx * scale, dy * scale);
            Layout {
                width_pt,
                height_pt,
                left: margin + (avail_w - pw) / 2.0,
                top: margin + title_h + (avail_h - ph) / 2.0,
                plot_width: pw,
                plot_height: ph,
                x_range: *x,
                y_range: *y,
            }
        }
    }
}

/// A number for SVG: three decimals, trailing zeros dropped.
fn n(v: f64) -> String {
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.into() }
}

fn esc(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

fn stroke_attrs(s: &Style) -> String {
    let mut a = format!(
        r#"stroke="{}" stroke-width="{}" stroke-linejoin="round" stroke-linecap="round""#,
        s.colour.hex(),
        n(s.width_pt)
    );
    if let Some(p) = s.dash.pattern() {
        let d: Vec<String> = p.iter().map(|v| n(v * s.width_pt.max(0.5))).collect();
        let _ = write!(a, r#" stroke-dasharray="{}""#, d.join(" "));
        a = a.replace(r#"stroke-linecap="round""#, r#"stroke-linecap="butt""#);
    }
    a
}

fn path_d(points: &[[f64; 2]], lay: &Layout, close: bool) -> String {
    let mut d = String::new();
    for (i, p) in points.iter().enumerate() {
        let q = lay.to_page(*p);
        let _ = write!(
            d,
            "{}{} {}",
            if i == 0 { "M" } else { " L" },
            n(q[0]),
            n(q[1])
        );
    }
    if close {
        d.push_str(" Z");
    }
    d
}

/// SVG of one marker centred at page point `c`.
fn marker_svg(
    out: &mut String,
    shape: MarkerShape,
    c: [f64; 2],
    size: f64,
    colour: Rgb,
    fill: Option<Rgb>,
    opacity: f64,
) {
    let r = size / 2.0;
    let fill_attr = fill.map_or("none".to_string(), |f| f.hex());
    let stroke_w = (size / 7.0).max(0.4);
    let common = format!(
        r#"fill="{fill_attr}" stroke="{}" stroke-width="{}"{}"#,
        colour.hex(),
        n(stroke_w),
        if opacity < 1.0 {
            format!(r#" fill-opacity="{0}" stroke-opacity="{0}""#, n(opacity))
        } else {
            String::new()
        }
    );
    let (x, y) = (c[0], c[1]);
    let pts = |v: &[(f64, f64)]| -> String {
        let p: Vec<String> = v
            .iter()
            .map(|(a, b)| format!("{} {}", n(x + a * r), n(y + b * r)))
            .collect();
        format!("M{} Z", p.join(" L"))
    };
    let _ = match shape {
        MarkerShape::Circle => writeln!(
            out,
            r#"<circle cx="{}" cy="{}" r="{}" {common}/>"#,
            n(x),
            n(y),
            n(r)
        ),
        MarkerShape::Square => {
            let s = r * 0.88;
            writeln!(
                out,
                r#"<rect x="{}" y="{}" width="{}" height="{}" {common}/>"#,
                n(x - s),
                n(y - s),
                n(2.0 * s),
                n(2.0 * s)
            )
        }
        MarkerShape::Diamond => writeln!(
            out,
            r#"<path d="{}" {common}/>"#,
            pts(&[(0.0, -1.2), (1.0, 0.0), (0.0, 1.2), (-1.0, 0.0)])
        ),
        MarkerShape::TriangleUp => writeln!(
            out,
            r#"<path d="{}" {common}/>"#,
            pts(&[(0.0, -1.15), (1.05, 0.75), (-1.05, 0.75)])
        ),
        MarkerShape::TriangleDown => writeln!(
            out,
            r#"<path d="{}" {common}/>"#,
            pts(&[(0.0, 1.15), (1.05, -0.75), (-1.05, -0.75)])
        ),
        MarkerShape::Cross | MarkerShape::Plus => {
            let d = if shape == MarkerShape::Cross {
                let k = r * 0.8;
                format!(
                    "M{} {} L{} {} M{} {} L{} {}",
                    n(x - k),
                    n(y - k),
                    n(x + k),
                    n(y + k),
                    n(x - k),
                    n(y + k),
                    n(x + k),
                    n(y - k)
                )
            } else {
                format!(
                    "M{} {} L{} {} M{} {} L{} {}",
                    n(x - r),
                    n(y),
                    n(x + r),
                    n(y),
                    n(x),
                    n(y - r),
                    n(x),
                    n(y + r)
                )
            };
            writeln!(
                out,
                r#"<path d="{d}" fill="none" stroke="{}" stroke-width="{}"{}/>"#,
                colour.hex(),
                n(stroke_w * 1.4),
                if opacity < 1.0 {
                    format!(r#" fill-opacity="{0}" stroke-opacity="{0}""#, n(opacity))
                } else {
                    String::new()
                }
            )
        }
    };
}

/// `<text>` with tspans for sub- and superscripts.
#[allow(clippy::too_many_arguments)]
fn text_svg(
    out: &mut String,
    text: &str,
    x: f64,
    y: f64,
    size: f64,
    colour: Rgb,
    anchor: Anchor,
    halo: bool,
    rotate: bool,
) {
    let anchor = match anchor {
        Anchor::Start => "start",
        Anchor::Middle => "middle",
        Anchor::End => "end",
    };
    let halo_attr = if halo {
        r##" stroke="#ffffff" stroke-width="2" stroke-linejoin="round" paint-order="stroke""##
    } else {
        ""
    };
    let transform = if rotate {
        format!(r#" transform="rotate(-90 {} {})""#, n(x), n(y))
    } else {
        String::new()
    };
    let _ = write!(
        out,
        r#"<text x="{}" y="{}" font-family="{FONT_FAMILY}" font-size="{}" fill="{}" text-anchor="{anchor}"{halo_attr}{transform}>"#,
        n(x),
        n(y),
        n(size),
        colour.hex()
    );
    for (run, script) in text_runs(text) {
        match script {
            Script::Normal => {
                let _ = write!(out, "<tspan>{}</tspan>", esc(&run));
            }
            Script::Sub | Script::Super => {
                let shift = if script == Script::Sub {
                    -0.25 * size
                } else {
                    0.4 * size
                };
                let _ = write!(
                    out,
                    r#"<tspan baseline-shift="{}" font-size="{}">{}</tspan>"#,
                    n(shift),
                    n(size * 0.72),
                    esc(&run)
                );
            }
        }
    }
    out.push_str("</text>\n");
}

fn label_svg(out: &mut String, l: &Label, lay: &Layout) {
    let p = lay.to_page(l.at);
    text_svg(
        out,
        &l.text,
        p[0] + l.offset_pt[0],
        p[1] - l.offset_pt[1] + l.size_pt * 0.35,
        l.size_pt,
        l.colour,
        l.anchor,
        l.halo,
        false,
    );
}

/// Standard base64 (RFC 4648 §4) for data URIs.
fn base64(bytes: &[u8]) -> String {
    const T: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut s = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for c in bytes.chunks(3) {
        let b = [c[0], *c.get(1).unwrap_or(&0), *c.get(2).unwrap_or(&0)];
        let v = (u32::from(b[0]) << 16) | (u32::from(b[1]) << 8) | u32::from(b[2]);
        for k in 0..4 {
            if k <= c.len() {
                s.push(T[((v >> (18 - 6 * k)) & 63) as usize] as char);
            } else {
                s.push('=');
            }
        }
    }
    s
}

/// PNG bytes of RGBA pixels, with the pixel density when `dpi` is given.
fn encode_png(width: u32, height: u32, rgba: &[u8], dpi: Option<f64>) -> Result<Vec<u8>, String> {
    let mut bytes = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut bytes, width, height);
        enc.set_color(png::ColorType::Rgba);
        enc.set_depth(png::BitDepth::Eight);
        if let Some(dpi) = dpi {
            let ppm = (dpi / 0.0254).round() as u32;
            enc.set_pixel_dims(Some(png::PixelDimensions {
                xppu: ppm,
                yppu: ppm,
                unit: png::Unit::Meter,
            }));
        }
        let mut w = enc.write_header().map_err(|e| e.to_string())?;
        w.write_image_data(rgba).map_err(|e| e.to_string())?;
    }
    Ok(bytes)
}

fn items_svg(out: &mut String, fig: &Figure, lay: &Layout, clip: bool) {
    let clip_attr = if clip {
        r#" clip-path="url(#plot)""#
    } else {
        ""
    };
    let _ = writeln!(out, "<g{clip_attr}>");
    for item in &fig.items {
        match item {
            Item::Line(l) if l.points.len() >= 2 => {
                let _ = writeln!(
                    out,
                    r#"<path d="{}" fill="none" {}/>"#,
                    path_d(&l.points, lay, false),
                    stroke_attrs(&l.style)
                );
            }
            Item::Polygon(p) if p.points.len() >= 3 => {
                let fill = p.fill.map_or("none".into(), |f| f.hex());
                let stroke = p
                    .stroke
                    .as_ref()
                    .map_or(r#"stroke="none""#.to_string(), stroke_attrs);
                let _ = writeln!(
                    out,
                    r#"<path d="{}" fill="{fill}" fill-opacity="{}" fill-rule="evenodd" {stroke}/>"#,
                    path_d(&p.points, lay, true),
                    n(p.fill_opacity)
                );
            }
            Item::Markers(m) => {
                for p in &m.points {
                    marker_svg(
                        out,
                        m.shape,
                        lay.to_page(*p),
                        m.size_pt,
                        m.colour,
                        m.fill,
                        m.opacity,
                    );
                }
            }
            Item::ErrorBar(e) => {
                let cap = 2.0;
                let mut d = String::new();
                if let Some((lo, hi)) = e.x {
                    let a = lay.to_page([lo, e.at[1]]);
                    let b = lay.to_page([hi, e.at[1]]);
                    let _ = write!(
                        d,
                        "M{} {} L{} {} M{} {} L{} {} M{} {} L{} {} ",
                        n(a[0]),
                        n(a[1]),
                        n(b[0]),
                        n(b[1]),
                        n(a[0]),
                        n(a[1] - cap),
                        n(a[0]),
                        n(a[1] + cap),
                        n(b[0]),
                        n(b[1] - cap),
                        n(b[0]),
                        n(b[1] + cap)
                    );
                }
                if let Some((lo, hi)) = e.y {
                    let a = lay.to_page([e.at[0], lo]);
                    let b = lay.to_page([e.at[0], hi]);
                    let _ = write!(
                        d,
                        "M{} {} L{} {} M{} {} L{} {} M{} {} L{} {}",
                        n(a[0]),
                        n(a[1]),
                        n(b[0]),
                        n(b[1]),
                        n(a[0] - cap),
                        n(a[1]),
                        n(a[0] + cap),
                        n(a[1]),
                        n(b[0] - cap),
                        n(b[1]),
                        n(b[0] + cap),
                        n(b[1])
                    );
                }
                if !d.is_empty() {
                    let _ = writeln!(
                        out,
                        r#"<path d="{}" fill="none" {}/>"#,
                        d.trim_end(),
                        stroke_attrs(&e.style)
                    );
                }
            }
            Item::Image(img) => {
                let a = lay.to_page(img.top_left);
                let b = lay.to_page(img.bottom_right);
                if let Ok(png) = encode_png(img.width, img.height, &img.rgba, None) {
                    let _ = writeln!(
                        out,
                        r#"<image x="{}" y="{}" width="{}" height="{}" preserveAspectRatio="none" image-rendering="optimizeSpeed" href="data:image/png;base64,{}"/>"#,
                        n(a[0].min(b[0])),
                        n(a[1].min(b[1])),
                        n((b[0] - a[0]).abs()),
                        n((b[1] - a[1]).abs()),
                        base64(&png)
                    );
                }
            }
            Item::Label(_) | Item::Line(_) | Item::Polygon(_) => {}
        }
    }
    out.push_str("</g>\n");
    for l in fig.labels() {
        label_svg(out, l, lay);
    }
}

fn legend_symbol_svg(out: &mut String, sym: &LegendSymbol, x: f64, y: f64, f: f64) {
    match sym {
        LegendSymbol::Line(s) => {
            let _ = writeln!(
                out,
                r#"<path d="M{} {} L{} {}" fill="none" {}/>"#,
                n(x),
                n(y),
                n(x + 14.0),
                n(y),
                stroke_attrs(s)
            );
        }
        LegendSymbol::Marker {
            shape,
            colour,
            fill,
        } => marker_svg(out, *shape, [x + 7.0, y], f * 0.8, *colour, *fill, 1.0),
        LegendSymbol::Patch { fill, stroke } => {
            let st = stroke
                .as_ref()
                .map_or(r#"stroke="none""#.to_string(), stroke_attrs);
            let _ = writeln!(
                out,
                r#"<rect x="{}" y="{}" width="10" height="{}" fill="{}" {st}/>"#,
                n(x + 2.0),
                n(y - f * 0.4),
                n(f * 0.8),
                fill.hex()
            );
        }
    }
}

fn legend_svg(out: &mut String, fig: &Figure, lay: &Layout) {
    if fig.legend.is_empty() {
        return;
    }
    let f = fig.font_size_pt;
    let (entry_w, row_h) = legend_metrics(fig);
    let positions: Vec<[f64; 2]> = match fig.legend_place {
        LegendPlace::TopLeft | LegendPlace::TopRight => {
            let box_w = entry_w + 6.0;
            let box_h = fig.legend.len() as f64 * row_h + 4.0;
            let x0 = if fig.legend_place == LegendPlace::TopLeft {
                lay.left + 4.0
            } else {
                lay.left + lay.plot_width - box_w - 4.0
            };
            let y0 = lay.top + 4.0;
            let _ = writeln!(
                out,
                r##"<rect x="{}" y="{}" width="{}" height="{}" fill="#ffffff" fill-opacity="0.9" stroke="#888888" stroke-width="0.4"/>"##,
                n(x0),
                n(y0),
                n(box_w),
                n(box_h)
            );
            (0..fig.legend.len())
                .map(|i| [x0 + 3.0, y0 + 2.0 + row_h * (i as f64 + 0.5)])
                .collect()
        }
        LegendPlace::Below => {
            let (_, rows, col_w) = legend_columns(fig, lay.width_pt - 12.0);
            let y0 = lay.height_pt - rows as f64 * row_h - f * 0.5;
            (0..fig.legend.len())
                .map(|i| {
                    let c = i / rows;
                    [
                        6.0 + col_w[..c].iter().sum::<f64>(),
                        y0 + row_h * ((i % rows) as f64 + 0.5),
                    ]
                })
                .collect()
        }
    };
    for (e, p) in fig.legend.iter().zip(positions) {
        legend_symbol_svg(out, &e.symbol, p[0], p[1], f);
        text_svg(
            out,
            &e.label,
            p[0] + 18.0,
            p[1] + f * 0.35,
            f,
            palette::BLACK,
            Anchor::Start,
            false,
            false,
        );
    }
}

/// The figure as an SVG document (width and height in mm, user units in points).
pub fn to_svg(fig: &Figure) -> String {
    let lay = layout(fig);
    let f = fig.font_size_pt;
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{}mm" height="{}mm" viewBox="0 0 {} {}">"#,
        n(fig.width_mm),
        n(fig.height_mm),
        n(lay.width_pt),
        n(lay.height_pt)
    );
    let _ = writeln!(
        out,
        r##"<rect x="0" y="0" width="{}" height="{}" fill="#ffffff"/>"##,
        n(lay.width_pt),
        n(lay.height_pt)
    );
    let _ = writeln!(
        out,
        r#"<defs><clipPath id="plot"><rect x="{}" y="{}" width="{}" height="{}"/></clipPath></defs>"#,
        n(lay.left),
        n(lay.top),
        n(lay.plot_width),
        n(lay.plot_height)
    );
    if !fig.title.is_empty() {
        let title_x = match fig.frame {
            Frame::Cartesian { .. } => lay.left,
            Frame::Plain { .. } => 6.0,
        };
        text_svg(
            &mut out,
            &fig.title,
            title_x,
            f * 1.3,
            f * 1.1,
            palette::BLACK,
            Anchor::Start,
            false,
            false,
        );
    }
    match &fig.frame {
        Frame::Cartesian { x, y } => {
            let (l, t, w, h) = (lay.left, lay.top, lay.plot_width, lay.plot_height);
            let axis_colour = "#000000";
            for tick in &x.ticks {
                let p = lay.to_page([tick.value, y.min]);
                let _ = writeln!(
                    out,
                    r#"<path d="M{} {} L{} {}" stroke="{axis_colour}" stroke-width="0.5"/>"#,
                    n(p[0]),
                    n(t + h),
                    n(p[0]),
                    n(t + h + 3.0)
                );
                text_svg(
                    &mut out,
                    &tick.label,
                    p[0],
                    t + h + 4.0 + f,
                    f,
                    palette::BLACK,
                    Anchor::Middle,
                    false,
                    false,
                );
            }
            for tick in &y.ticks {
                let p = lay.to_page([x.min, tick.value]);
                let _ = writeln!(
                    out,
                    r#"<path d="M{} {} L{} {}" stroke="{axis_colour}" stroke-width="0.5"/>"#,
                    n(l - 3.0),
                    n(p[1]),
                    n(l),
                    n(p[1])
                );
                text_svg(
                    &mut out,
                    &tick.label,
                    l - 4.5,
                    p[1] + f * 0.35,
                    f,
                    palette::BLACK,
                    Anchor::End,
                    false,
                    false,
                );
            }
            text_svg(
                &mut out,
                &x.label,
                l + w / 2.0,
                t + h + 4.0 + f * 2.4,
                f,
                palette::BLACK,
                Anchor::Middle,
                false,
                false,
            );
            text_svg(
                &mut out,
                &y.label,
                f * 1.0,
                t + h / 2.0,
                f,
                palette::BLACK,
                Anchor::Middle,
                false,
                true,
            );
            items_svg(&mut out, fig, &lay, true);
            let _ = writeln!(
                out,
                r#"<rect x="{}" y="{}" width="{}" height="{}" fill="none" stroke="{axis_colour}" stroke-width="0.6"/>"#,
                n(l),
                n(t),
                n(w),
                n(h)
            );
        }
        Frame::Plain { .. } => items_svg(&mut out, fig, &lay, true),
    }
    legend_svg(&mut out, fig, &lay);
    out.push_str("</svg>\n");
    out
}

fn font_database() -> Arc<usvg::fontdb::Database> {
    static DB: OnceLock<Arc<usvg::fontdb::Database>> = OnceLock::new();
    DB.get_or_init(|| {
        let mut db = usvg::fontdb::Database::new();
        db.load_font_data(FONT_BYTES.to_vec());
        db.set_sans_serif_family(FONT_FAMILY);
        Arc::new(db)
    })
    .clone()
}

/// Parse SVG text with the bundled font only (no system fonts), as every export does.
///
/// # Errors
/// [`FigureError::Render`] if `usvg` refuses the text.
pub fn parse_svg(svg: &str) -> Result<usvg::Tree, FigureError> {
    let options = usvg::Options {
        fontdb: font_database(),
        font_family: FONT_FAMILY.into(),
        ..usvg::Options::default()
    };
    usvg::Tree::from_str(svg, &options).map_err(|e| FigureError::Render(e.to_string()))
}

/// Pixel size of a figure rendered at `dpi`.
pub fn pixel_size(fig: &Figure, dpi: f64) -> (u32, u32) {
    (
        (fig.width_mm / 25.4 * dpi).round().max(1.0) as u32,
        (fig.height_mm / 25.4 * dpi).round().max(1.0) as u32,
    )
}

/// The figure as a PNG at `dpi` (pixel density written into the file).
///
/// # Errors
/// [`FigureError::Option`] for a dpi outside 10-2400 (a 174 mm figure at 2400 dpi is already
/// 16 000 px wide); [`FigureError::Render`] if parsing or encoding fails.
pub fn to_png(fig: &Figure, dpi: f64) -> Result<Vec<u8>, FigureError> {
    if !(10.0..=2400.0).contains(&dpi) {
        return Err(FigureError::Option {
            option: "dpi",
            message: format!("{dpi} is outside 10-2400"),
        });
    }
    let tree = parse_svg(&to_svg(fig))?;
    let (w, h) = pixel_size(fig, dpi);
    let mut pixmap = tiny_skia::Pixmap::new(w, h)
        .ok_or_else(|| FigureError::Render(format!("cannot allocate {w} x {h} pixels")))?;
    pixmap.fill(tiny_skia::Color::WHITE);
    let size = tree.size();
    let transform =
        tiny_skia::Transform::from_scale(w as f32 / size.width(), h as f32 / size.height());
    resvg::render(&tree, transform, &mut pixmap.as_mut());
    // opaque white background: premultiplied and straight RGBA are the same
    encode_png(w, h, pixmap.data(), Some(dpi)).map_err(FigureError::Render)
}

/// The figure as a vector PDF page of the figure's size, text embedded as DejaVu Sans.
///
/// # Errors
/// [`FigureError::Render`] if parsing or conversion fails.
pub fn to_pdf(fig: &Figure) -> Result<Vec<u8>, FigureError> {
    let tree = parse_svg(&to_svg(fig))?;
    // usvg turns mm into user units at its default 96 dpi; the same dpi here gives a page of
    // the figure's size in mm
    let page = svg2pdf::PageOptions {
        dpi: usvg::Options::default().dpi,
    };
    svg2pdf::to_pdf(&tree, svg2pdf::ConversionOptions::default(), page)
        .map_err(|e| FigureError::Render(e.to_string()))
}

/// File format by extension.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// SVG.
    Svg,
    /// PNG.
    Png,
    /// PDF.
    Pdf,
}

impl Format {
    /// From a file extension (`svg`, `png`, `pdf`, any case).
    pub fn from_extension(ext: &str) -> Option<Format> {
        match ext.to_ascii_lowercase().as_str() {
            "svg" => Some(Format::Svg),
            "png" => Some(Format::Png),
            "pdf" => Some(Format::Pdf),
            _ => None,
        }
    }
}

/// The figure encoded in a format.
///
/// # Errors
/// As [`to_png`] and [`to_pdf`].
pub fn encode(fig: &Figure, format: Format, dpi: f64) -> Result<Vec<u8>, FigureError> {
    match format {
        Format::Svg => Ok(to_svg(fig).into_bytes()),
        Format::Png => to_png(fig, dpi),
        Format::Pdf => to_pdf(fig),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base64_matches_rfc4648_vectors() {
        // Source: RFC 4648 §10 test vectors.
        for (plain, coded) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(base64(plain.as_bytes()), coded);
        }
    }

    #[test]
    fn numbers_keep_sub_pixel_precision() {
        assert_eq!(n(12.3456), "12.346");
        assert_eq!(n(3.0), "3");
        assert_eq!(n(-0.0001), "0");
    }
}
