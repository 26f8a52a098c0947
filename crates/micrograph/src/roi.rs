//! Region of interest: include and exclude polygons (design §4 JSON), rasterised by the
//! pixel-centre rule.
//!
//! **Rasterisation rule.** Pixel `(col, row)` covers the square `[col, col+1) x [row, row+1)`
//! and belongs to a polygon when its centre `(col + 0.5, row + 0.5)` is inside the polygon by
//! the even-odd (crossing-number) rule, with the top-left convention for centres that fall
//! exactly on an edge: a centre on a left or top edge is inside, on a right or bottom edge
//! outside. Hence two polygons sharing an edge never both claim a pixel, and the pixel count
//! of a polygon differs from its exact area by at most about half its perimeter (each edge
//! pixel is at most half inside or outside). Source: Foley, van Dam, Feiner & Hughes,
//! *Computer Graphics: Principles and Practice* (2nd ed., 1990), §3.6 (scan-line polygon
//! filling and the half-open edge rule).
//!
//! The region is the union of the include polygons (the whole image when there are none)
//! minus the union of the exclude polygons.

use std::path::{Path, PathBuf};

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::error::{MicrographError, Result};

/// A closed polygon in pixel coordinates (origin top-left, x to the right, y down).
/// The last vertex joins the first; do not repeat it (a repeated closing vertex is harmless).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(transparent)]
pub struct Polygon(pub Vec<[f64; 2]>);

impl Polygon {
    /// Exact enclosed area by the shoelace formula (absolute value), in px².
    /// Source: Gauss's area formula (the "shoelace" formula), e.g. Braden (1986),
    /// *The College Mathematics Journal* 17(4):326-337.
    pub fn area_px2(&self) -> f64 {
        let v = &self.0;
        let n = v.len();
        if n < 3 {
            return 0.0;
        }
        let mut twice = 0.0;
        for i in 0..n {
            let [x0, y0] = v[i];
            let [x1, y1] = v[(i + 1) % n];
            twice += x0 * y1 - x1 * y0;
        }
        (twice / 2.0).abs()
    }

    /// Perimeter in px.
    pub fn perimeter_px(&self) -> f64 {
        let v = &self.0;
        let n = v.len();
        if n < 2 {
            return 0.0;
        }
        (0..n)
            .map(|i| {
                let [x0, y0] = v[i];
                let [x1, y1] = v[(i + 1) % n];
                (x1 - x0).hypot(y1 - y0)
            })
            .sum()
    }

    fn validate(&self, list: &'static str, index: usize) -> Result<()> {
        if self.0.len() < 3 {
            return Err(MicrographError::InvalidPolygon {
                list,
                index,
                message: format!("needs at least 3 vertices, has {}", self.0.len()),
            });
        }
        if let Some((k, _)) = self
            .0
            .iter()
            .enumerate()
            .find(|(_, p)| !(p[0].is_finite() && p[1].is_finite()))
        {
            return Err(MicrographError::InvalidPolygon {
                list,
                index,
                message: format!("vertex {k} is not a finite number"),
            });
        }
        Ok(())
    }

    /// Sorted x positions where the horizontal line `y` crosses the polygon's edges, with the
    /// half-open rule `min(y0, y1) <= y < max(y0, y1)` (horizontal edges never cross).
    fn crossings(&self, y: f64, out: &mut Vec<f64>) {
        out.clear();
        let v = &self.0;
        let n = v.len();
        for i in 0..n {
            let [x0, y0] = v[i];
            let [x1, y1] = v[(i + 1) % n];
            if (y0 <= y) != (y1 <= y) {
                out.push(x0 + (y - y0) * (x1 - x0) / (y1 - y0));
            }
        }
        out.sort_by(f64::total_cmp);
    }

    /// Marks this polygon's pixels in `row` (one image row) with `value`.
    fn fill_row(&self, row: u32, width: u32, value: bool, line: &mut [bool], xs: &mut Vec<f64>) {
        self.crossings(f64::from(row) + 0.5, xs);
        for pair in xs.chunks_exact(2) {
            // Centres x_c = col + 0.5 with pair[0] <= x_c < pair[1].
            let start = (pair[0] - 0.5).ceil().max(0.0);
            let end = (pair[1] - 0.5).ceil().min(f64::from(width));
            if end > start {
                for cell in &mut line[start as usize..end as usize] {
                    *cell = value;
                }
            }
        }
    }
}

/// Include and exclude polygons, as in the region-of-interest JSON of design §4:
/// `{"include": [[[x, y], ...], ...], "exclude": [[[x, y], ...], ...]}`. Both lists are optional.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Roi {
    /// Polygons whose union is the region; empty = the whole image.
    #[serde(default)]
    pub include: Vec<Polygon>,
    /// Polygons removed from the region (cracks, holes, a scale bar, other grains).
    #[serde(default)]
    pub exclude: Vec<Polygon>,
}

impl Roi {
    /// Parses the JSON text; `path` is only used in messages.
    pub fn from_json_str(text: &str, path: &Path) -> Result<Self> {
        let roi: Roi = serde_json::from_str(text).map_err(|e| MicrographError::RoiSyntax {
            path: path.to_path_buf(),
            line: e.line(),
            column: e.column(),
            message: e.to_string(),
        })?;
        // A polygon error names the file and the line of its list, like a syntax error.
        roi.validate().map_err(|e| match e {
            MicrographError::InvalidPolygon {
                list,
                index,
                message,
            } => {
                let (line, column) = key_location(text, list);
                MicrographError::RoiSyntax {
                    path: path.to_path_buf(),
                    line,
                    column,
                    message: format!("{list} polygon {index}: {message}"),
                }
            }
            other => other,
        })?;
        Ok(roi)
    }

    /// Reads and parses a region-of-interest file.
    pub fn load(path: &Path) -> Result<Self> {
        let text = std::fs::read_to_string(path).map_err(|source| MicrographError::Io {
            path: PathBuf::from(path),
            source,
        })?;
        Self::from_json_str(&text, path)
    }

    /// Checks every polygon has at least 3 finite vertices.
    pub fn validate(&self) -> Result<()> {
        for (i, p) in self.include.iter().enumerate() {
            p.validate("include", i)?;
        }
        for (i, p) in self.exclude.iter().enumerate() {
            p.validate("exclude", i)?;
        }
        Ok(())
    }

    /// Rasterises the region on a `width x height` grid by the pixel-centre rule (module docs).
    pub fn rasterise(&self, width: u32, height: u32) -> Result<Mask> {
        self.validate()?;
        let w = width as usize;
        let mut bits = vec![self.include.is_empty(); w * height as usize];
        if w > 0 {
            bits.par_chunks_mut(w).enumerate().for_each(|(row, line)| {
                let mut xs = Vec::new();
                for p in &self.include {
                    p.fill_row(row as u32, width, true, line, &mut xs);
                }
                for p in &self.exclude {
                    p.fill_row(row as u32, width, false, line, &mut xs);
                }
            });
        }
        Ok(Mask {
            width,
            height,
            bits,
        })
    }
}

/// Line and column (1-based) of the first `"key"` in JSON text; 1:1 when it is not found.
fn key_location(text: &str, key: &str) -> (usize, usize) {
    let Some(at) = text.find(&format!("\"{key}\"")) else {
        return (1, 1);
    };
    let before = &text[..at];
    let line = before.matches('\n').count() + 1;
    let column = before[before.rfind('\n').map_or(0, |i| i + 1)..]
        .chars()
        .count()
        + 1;
    (line, column)
}

/// A binary mask over an image (true = in the region), row-major.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Mask {
    /// Width in pixels.
    pub width: u32,
    /// Height in pixels.
    pub height: u32,
    /// One flag per pixel.
    pub bits: Vec<bool>,
}

impl Mask {
    /// A mask covering the whole image.
    pub fn full(width: u32, height: u32) -> Self {
        Self {
            width,
            height,
            bits: vec![true; width as usize * height as usize],
        }
    }

    /// Number of pixels in the mask.
    pub fn count(&self) -> u64 {
        self.bits.par_iter().filter(|&&b| b).count() as u64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn square_on_pixel_edges_is_exact() {
        // Source: module rule; a 10 x 10 square with corners on pixel boundaries covers
        // exactly 100 pixel centres.
        let roi = Roi {
            include: vec![Polygon(vec![
                [2.0, 3.0],
                [12.0, 3.0],
                [12.0, 13.0],
                [2.0, 13.0],
            ])],
            exclude: vec![],
        };
        let m = roi.rasterise(20, 20).unwrap();
        assert_eq!(m.count(), 100);
        assert!(m.bits[3 * 20 + 2] && !m.bits[3 * 20 + 12] && !m.bits[13 * 20 + 2]);
    }

    #[test]
    fn syntax_error_reports_line_and_column() {
        let err = Roi::from_json_str("{\n \"include\": [[[1, 2], [3,]]]}", Path::new("r.json"))
            .unwrap_err();
        match err {
            MicrographError::RoiSyntax { line, .. } => assert_eq!(line, 2),
            other => panic!("unexpected {other}"),
        }
        let err = Roi::from_json_str(r#"{"include": [[[1, 2], [3, 4]]]}"#, Path::new("r.json"))
            .unwrap_err();
        assert!(err.to_string().contains("include polygon 0"), "{err}");
        let err = Roi::from_json_str(
            "{\"include\": [],\n \"exclude\": [[[1, 2], [3, 4]]]}",
            Path::new("r.json"),
        )
        .unwrap_err();
        assert!(
            err.to_string()
                .starts_with("r.json:2:2: region of interest: exclude polygon 0"),
            "{err}"
        );
    }
}

#[cfg(test)]
mod prop_tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(300))]
        /// Source: the issue's bound, from the pixel-centre rule: only pixels cut by the
        /// boundary can be miscounted, each by at most its uncovered (or covered) part, so
        /// |pixel count - shoelace area| <= perimeter / 2 (plus 1e-9 for rounding).
        #[test]
        fn pixel_count_within_half_perimeter_of_shoelace_area(
            cx in 20.0f64..60.0, cy in 20.0f64..60.0,
            radii in proptest::collection::vec(3.0f64..19.0, 3..12),
            turn in 0.0f64..1.0,
        ) {
            let n = radii.len();
            let poly = Polygon(
                radii.iter().enumerate().map(|(i, r)| {
                    let a = std::f64::consts::TAU * (i as f64 + turn) / n as f64;
                    [cx + r * a.cos(), cy + r * a.sin()]
                }).collect(),
            );
            let roi = Roi { include: vec![poly.clone()], exclude: vec![] };
            let count = roi.rasterise(80, 80).unwrap().count() as f64;
            let area = poly.area_px2();
            prop_assert!((count - area).abs() <= poly.perimeter_px() / 2.0 + 1e-9,
                "count {count}, area {area}, perimeter {}", poly.perimeter_px());
        }

        /// Exclusions remove exactly the pixels of the exclude polygon that were inside.
        #[test]
        fn exclusion_is_set_difference(x0 in 5.0f64..30.0, w in 3.0f64..20.0) {
            let sq = |a: f64, b: f64, s: f64| Polygon(vec![[a, b], [a + s, b], [a + s, b + s], [a, b + s]]);
            let inc = Roi { include: vec![sq(2.0, 2.0, 50.0)], exclude: vec![] }.rasterise(60, 60).unwrap();
            let exc = Roi { include: vec![sq(x0, x0, w)], exclude: vec![] }.rasterise(60, 60).unwrap();
            let both = Roi { include: vec![sq(2.0, 2.0, 50.0)], exclude: vec![sq(x0, x0, w)] }.rasterise(60, 60).unwrap();
            for i in 0..3600 {
                prop_assert_eq!(both.bits[i], inc.bits[i] && !exc.bits[i]);
            }
        }
    }
}
