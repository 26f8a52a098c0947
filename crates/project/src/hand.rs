//! Work done by hand on a micrograph: shapes that correct the automatic classification, and the
//! point count with its binomial interval.
//!
//! **Hand edits** are applied in the order they were drawn, after the automatic classification
//! (and its clean-up): the measured pixels under a shape become the shape's phase, or, for an
//! erasing shape, go back to their automatic class. Pixels outside the region of interest, in
//! voids or in void rims stay unmeasured. Fractions, tile statistics, the block-bootstrap
//! interval and the level sensitivity are then recomputed from the edited class map; the
//! linear-unmixing estimate, which reads only grey values, no longer describes the edited map
//! and is dropped.
//!
//! **Point count**: points on a regular or seeded random grid over the region, each given a
//! phase by the user. The fraction of points in a phase estimates its area fraction, hence its
//! volume fraction (Delesse principle; the point-count form: Glagolev 1933, Chayes 1956,
//! *Petrographic Modal Analysis*). Its 95 % interval is the Wilson score interval of a binomial
//! proportion (Wilson 1927, J. Am. Stat. Assoc. 22:209), which, unlike the normal-approximation
//! interval, stays inside 0-1 and keeps its coverage for counts near 0 or n (Newcombe 1998,
//! Stat. Med. 17:857). Points are not independent when a lamella spans several of them, so the
//! interval is a lower bound on the uncertainty when the grid spacing is below the lamella
//! spacing.

use micrograph::bootstrap::{SplitMix64, fraction_ci95};
use micrograph::histogram::Histogram;
use micrograph::load::GrayPlane;
use micrograph::roi::{Polygon, Roi};
use micrograph::segment::{NOT_MEASURED, SegmentSettings, Segmentation, tile_stats};
use serde::Serialize;

use crate::document::{EditShape, HandEdit, PointCount, PointGrid};

/// The most points a point-count grid may have.
pub const MAX_POINTS: usize = 100_000;

/// Two-sided 95 % quantile of the standard normal distribution.
pub const Z95: f64 = 1.959_963_984_540_054;

/// A rectangle of pixels, `x0..x1` by `y0..y1`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct PixelRect {
    x0: u32,
    y0: u32,
    x1: u32,
    y1: u32,
}

impl PixelRect {
    /// The pixels whose centres may lie within `[min, max]` (clipped to the image).
    fn around(min: [f64; 2], max: [f64; 2], width: u32, height: u32) -> Self {
        let clip = |v: f64, hi: u32| v.clamp(0.0, f64::from(hi)) as u32;
        PixelRect {
            x0: clip((min[0] - 0.5).floor(), width),
            y0: clip((min[1] - 0.5).floor(), height),
            x1: clip((max[0] + 0.5).ceil(), width),
            y1: clip((max[1] + 0.5).ceil(), height),
        }
    }

    fn width(&self) -> usize {
        self.x1.saturating_sub(self.x0) as usize
    }

    fn height(&self) -> usize {
        self.y1.saturating_sub(self.y0) as usize
    }

    fn is_empty(&self) -> bool {
        self.width() == 0 || self.height() == 0
    }

    fn union(&self, o: &PixelRect) -> PixelRect {
        if self.is_empty() {
            return *o;
        }
        if o.is_empty() {
            return *self;
        }
        PixelRect {
            x0: self.x0.min(o.x0),
            y0: self.y0.min(o.y0),
            x1: self.x1.max(o.x1),
            y1: self.y1.max(o.y1),
        }
    }
}

fn bounds(points: &[[f64; 2]]) -> ([f64; 2], [f64; 2]) {
    let mut min = [f64::INFINITY; 2];
    let mut max = [f64::NEG_INFINITY; 2];
    for p in points {
        for k in 0..2 {
            min[k] = min[k].min(p[k]);
            max[k] = max[k].max(p[k]);
        }
    }
    (min, max)
}

/// Checks a shape and says what is wrong with it.
///
/// # Errors
/// Too few points, a coordinate that is not a finite number, a brush radius not above zero.
pub fn check_shape(shape: &EditShape) -> Result<(), String> {
    let (points, least) = match shape {
        EditShape::Polygon { vertices } => (vertices, 3),
        EditShape::Stroke { points, radius_px } => {
            if !(radius_px.is_finite() && *radius_px > 0.0) {
                return Err(format!("brush radius {radius_px} px must be above zero"));
            }
            (points, 1)
        }
    };
    if points.len() < least {
        return Err(format!(
            "needs at least {least} points, has {}",
            points.len()
        ));
    }
    if let Some(k) = points
        .iter()
        .position(|p| !(p[0].is_finite() && p[1].is_finite()))
    {
        return Err(format!("point {k} is not a finite number"));
    }
    Ok(())
}

fn shape_rect(shape: &EditShape, width: u32, height: u32) -> PixelRect {
    match shape {
        EditShape::Polygon { vertices } => {
            let (min, max) = bounds(vertices);
            PixelRect::around(min, max, width, height)
        }
        EditShape::Stroke { points, radius_px } => {
            let (min, max) = bounds(points);
            PixelRect::around(
                [min[0] - radius_px, min[1] - radius_px],
                [max[0] + radius_px, max[1] + radius_px],
                width,
                height,
            )
        }
    }
}

/// Squared distance from `p` to the segment `a`-`b`.
fn dist2_to_segment(p: [f64; 2], a: [f64; 2], b: [f64; 2]) -> f64 {
    let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    let (qx, qy) = (a[0] + t * dx - p[0], a[1] + t * dy - p[1]);
    qx * qx + qy * qy
}

/// Calls `f(x, y)` for every pixel of the image covered by the shape: a polygon by the
/// pixel-centre rule of the region of interest ([`micrograph::roi`]), a stroke where the
/// pixel centre lies within the brush radius of the path.
///
/// # Errors
/// What [`check_shape`] finds wrong.
pub fn for_each_pixel(
    shape: &EditShape,
    width: u32,
    height: u32,
    mut f: impl FnMut(u32, u32),
) -> Result<(), String> {
    check_shape(shape)?;
    let r = shape_rect(shape, width, height);
    if r.is_empty() {
        return Ok(());
    }
    match shape {
        EditShape::Polygon { vertices } => {
            // The polygon moved by a whole number of pixels keeps every centre's side.
            let (ox, oy) = (f64::from(r.x0), f64::from(r.y0));
            let local = Roi {
                include: vec![Polygon(
                    vertices.iter().map(|p| [p[0] - ox, p[1] - oy]).collect(),
                )],
                exclude: Vec::new(),
            };
            let mask = local
                .rasterise(r.width() as u32, r.height() as u32)
                .map_err(|e| e.to_string())?;
            for (i, _) in mask.bits.iter().enumerate().filter(|(_, b)| **b) {
                f(r.x0 + (i % r.width()) as u32, r.y0 + (i / r.width()) as u32);
            }
        }
        EditShape::Stroke { points, radius_px } => {
            let mut covered = vec![false; r.width() * r.height()];
            let r2 = radius_px * radius_px;
            let segments: Vec<([f64; 2], [f64; 2])> = if points.len() == 1 {
                vec![(points[0], points[0])]
            } else {
                points.windows(2).map(|w| (w[0], w[1])).collect()
            };
            for (a, b) in segments {
                let (min, max) = bounds(&[a, b]);
                let s = PixelRect::around(
                    [min[0] - radius_px, min[1] - radius_px],
                    [max[0] + radius_px, max[1] + radius_px],
                    width,
                    height,
                );
                for y in s.y0..s.y1 {
                    for x in s.x0..s.x1 {
                        let c = [f64::from(x) + 0.5, f64::from(y) + 0.5];
                        if dist2_to_segment(c, a, b) <= r2 {
                            covered[(y - r.y0) as usize * r.width() + (x - r.x0) as usize] = true;
                        }
                    }
                }
            }
            for (i, _) in covered.iter().enumerate().filter(|(_, b)| **b) {
                f(r.x0 + (i % r.width()) as u32, r.y0 + (i / r.width()) as u32);
            }
        }
    }
    Ok(())
}

/// What the hand edits did to a classification.
#[derive(Debug, Clone, PartialEq)]
pub struct HandEditOutcome {
    /// Measured pixels under an edit (after erasing shapes).
    pub edited_pixels: u64,
    /// Of those, the pixels whose class differs from the automatic classification.
    pub changed_pixels: u64,
    /// Edited pixels per class.
    pub edited_per_class: Vec<u64>,
    /// Histogram of the measured pixels not under an edit (these still follow the levels).
    pub free_histogram: Histogram,
}

impl HandEditOutcome {
    /// Fractions of the measured area per class at other levels: the pixels not under an edit
    /// follow the levels, the edited pixels keep their phase. O(classes), no pass over pixels.
    pub fn fractions_at(&self, levels: &[u16]) -> Vec<f64> {
        let total = (self.free_histogram.total() + self.edited_pixels).max(1) as f64;
        self.free_histogram
            .class_stats(levels)
            .iter()
            .enumerate()
            .map(|(c, s)| {
                (s.pixels + self.edited_per_class.get(c).copied().unwrap_or(0)) as f64 / total
            })
            .collect()
    }
}

/// The class (dark to bright index) a phase label is given to: the first class assigned to it.
fn class_of(class_phases: &[String], label: &str) -> Option<u8> {
    class_phases
        .iter()
        .position(|p| p == label)
        .and_then(|c| u8::try_from(c).ok())
}

/// Apply hand edits to a classification (module docs). Returns `None` when there are none.
///
/// # Errors
/// A shape that is not valid, or a phase that no class of the micrograph is assigned to,
/// naming the edit (1-based, in drawing order).
pub fn apply_hand_edits(
    seg: &mut Segmentation,
    plane: &GrayPlane,
    edits: &[HandEdit],
    class_phases: &[String],
    settings: &SegmentSettings,
) -> Result<Option<HandEditOutcome>, String> {
    if edits.is_empty() {
        return Ok(None);
    }
    let (w, h) = (seg.width, seg.height);
    if plane.width != w || plane.height != h || seg.class_map.len() != plane.len() {
        return Err(format!(
            "the classification ({w} x {h}) does not match the image ({} x {})",
            plane.width, plane.height
        ));
    }
    const UNEDITED: u8 = u8::MAX;
    let classes = seg.phases.len();
    let mut targets = Vec::with_capacity(edits.len());
    let mut area = PixelRect {
        x0: 0,
        y0: 0,
        x1: 0,
        y1: 0,
    };
    for (k, e) in edits.iter().enumerate() {
        check_shape(&e.shape).map_err(|m| format!("hand edit {}: {m}", k + 1))?;
        let target = match &e.phase {
            Some(label) => class_of(class_phases, label).ok_or_else(|| {
                format!(
                    "hand edit {} gives its pixels to '{label}', but no grey class of this micrograph is that phase",
                    k + 1
                )
            })?,
            None => UNEDITED,
        };
        targets.push(target);
        area = area.union(&shape_rect(&e.shape, w, h));
    }
    let mut free_counts = seg.histogram.counts().to_vec();
    let mut edited_per_class = vec![0u64; classes];
    let (mut edited, mut changed) = (0u64, 0u64);
    if !area.is_empty() {
        let aw = area.width();
        let mut map = vec![UNEDITED; aw * area.height()];
        for (e, &target) in edits.iter().zip(&targets) {
            for_each_pixel(&e.shape, w, h, |x, y| {
                map[(y - area.y0) as usize * aw + (x - area.x0) as usize] = target;
            })?;
        }
        let mut class_px: Vec<i64> = seg.phases.iter().map(|p| p.pixels as i64).collect();
        let mut class_gray: Vec<f64> = seg
            .phases
            .iter()
            .map(|p| p.mean_gray * p.pixels as f64)
            .collect();
        for (j, &target) in map.iter().enumerate() {
            if target == UNEDITED {
                continue;
            }
            let x = area.x0 as usize + j % aw;
            let y = area.y0 as usize + j / aw;
            let i = y * w as usize + x;
            let old = seg.class_map[i];
            if old == NOT_MEASURED {
                continue;
            }
            let grey = plane.data[i];
            let bin = seg.histogram.bin_of(grey);
            free_counts[bin] = free_counts[bin].saturating_sub(1);
            edited += 1;
            edited_per_class[usize::from(target)] += 1;
            if old != target {
                changed += 1;
                class_px[usize::from(old)] -= 1;
                class_px[usize::from(target)] += 1;
                class_gray[usize::from(old)] -= f64::from(grey);
                class_gray[usize::from(target)] += f64::from(grey);
                seg.class_map[i] = target;
            }
        }
        let measured = seg.measured_pixels.max(1) as f64;
        for (c, p) in seg.phases.iter_mut().enumerate() {
            let n = class_px[c].max(0) as u64;
            p.pixels = n;
            p.area_fraction = n as f64 / measured;
            p.mean_gray = if n > 0 { class_gray[c] / n as f64 } else { 0.0 };
            p.area_um2 = seg.pixel_size_um.map(|s| n as f64 * s * s);
        }
    }
    let free_histogram = Histogram::from_counts(
        free_counts,
        seg.histogram.bin_shift(),
        seg.histogram.max_value(),
    )
    .map_err(|e| e.to_string())?;
    let outcome = HandEditOutcome {
        edited_pixels: edited,
        changed_pixels: changed,
        edited_per_class,
        free_histogram,
    };
    // Tiles and the bootstrap interval from the edited map.
    seg.tiles = tile_stats(plane, &seg.class_map, classes, seg.tile_px);
    let ci = fraction_ci95(
        &seg.tiles,
        classes,
        settings.bootstrap_resamples,
        settings.seed,
    );
    for (c, p) in seg.phases.iter_mut().enumerate() {
        p.area_fraction_ci95 = ci.as_ref().map(|v| v[c]);
    }
    // Level sensitivity: only the pixels not under an edit move with a level.
    let step = seg.sensitivity.step;
    let levels = seg.levels.clone();
    let base = outcome.fractions_at(&levels);
    let mut max_abs_change = vec![0.0f64; classes];
    let (mut minus, mut plus) = (Vec::new(), Vec::new());
    for k in 0..levels.len() {
        for (sign, out) in [(-1i32, &mut minus), (1, &mut plus)] {
            let mut l = levels.clone();
            l[k] = (i32::from(l[k]) + sign * i32::from(step))
                .clamp(0, i32::from(seg.histogram.max_value())) as u16;
            let f = outcome.fractions_at(&l);
            for (m, (a, b)) in max_abs_change.iter_mut().zip(f.iter().zip(&base)) {
                *m = m.max((a - b).abs());
            }
            out.push(f);
        }
    }
    seg.sensitivity.minus = minus;
    seg.sensitivity.plus = plus;
    seg.sensitivity.max_abs_change = max_abs_change;
    seg.unmixing = None;
    Ok(Some(outcome))
}

/// Whether a point lies in the region of interest, by the rule the region's pixels follow
/// (even-odd crossings, half-open edges; [`micrograph::roi`]).
pub fn region_contains(region: &Roi, p: [f64; 2]) -> bool {
    let inside = |poly: &Polygon| {
        let v = &poly.0;
        let n = v.len();
        let mut crossings = 0;
        for i in 0..n {
            let [x0, y0] = v[i];
            let [x1, y1] = v[(i + 1) % n];
            if (y0 <= p[1]) != (y1 <= p[1]) {
                let x = x0 + (p[1] - y0) * (x1 - x0) / (y1 - y0);
                if x <= p[0] {
                    crossings += 1;
                }
            }
        }
        crossings % 2 == 1
    };
    (region.include.is_empty() || region.include.iter().any(inside))
        && !region.exclude.iter().any(inside)
}

/// The points of a grid that fall in the region, in grid order, each at a pixel centre (so
/// each point reads one pixel's class).
///
/// # Errors
/// A spacing under 1 px, no points asked for, or more than [`MAX_POINTS`].
pub fn grid_points(
    grid: &PointGrid,
    region: &Roi,
    width: u32,
    height: u32,
) -> Result<Vec<[f64; 2]>, String> {
    let centre = |v: f64| v.floor() + 0.5;
    let mut out = Vec::new();
    match *grid {
        PointGrid::Regular { spacing_px } => {
            if !(spacing_px.is_finite() && spacing_px >= 1.0) {
                return Err(format!(
                    "grid spacing {spacing_px} px must be at least 1 px"
                ));
            }
            let nx = (f64::from(width) / spacing_px).floor() as usize;
            let ny = (f64::from(height) / spacing_px).floor() as usize;
            if nx.saturating_mul(ny) > MAX_POINTS {
                return Err(format!(
                    "a {spacing_px} px grid puts {} points on this image; use a wider spacing (at most {MAX_POINTS} points)",
                    nx.saturating_mul(ny)
                ));
            }
            for j in 0..ny {
                for i in 0..nx {
                    let p = [
                        centre((i as f64 + 0.5) * spacing_px),
                        centre((j as f64 + 0.5) * spacing_px),
                    ];
                    if region_contains(region, p) {
                        out.push(p);
                    }
                }
            }
        }
        PointGrid::Random { points, seed } => {
            if points == 0 || points > MAX_POINTS {
                return Err(format!(
                    "{points} random points: ask for between 1 and {MAX_POINTS}"
                ));
            }
            let mut rng = SplitMix64::new(seed);
            let mut tries = 0usize;
            while out.len() < points && tries < points.saturating_mul(1000) {
                tries += 1;
                let p = [
                    centre(rng.next_f64() * f64::from(width)),
                    centre(rng.next_f64() * f64::from(height)),
                ];
                if region_contains(region, p) {
                    out.push(p);
                }
            }
        }
    }
    Ok(out)
}

/// Wilson's score interval of a binomial proportion: `successes` of `trials`, with `z` the
/// normal quantile (1.96 for 95 %). Source: Wilson (1927), J. Am. Stat. Assoc. 22:209-212;
/// Newcombe (1998), Stat. Med. 17:857-872, method 3. `None` with no trials.
pub fn wilson_interval(successes: usize, trials: usize, z: f64) -> Option<(f64, f64)> {
    if trials == 0 || successes > trials {
        return None;
    }
    let n = trials as f64;
    let p = successes as f64 / n;
    let z2 = z * z;
    let centre = p + z2 / (2.0 * n);
    let half = z * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt();
    let d = 1.0 + z2 / n;
    Some((
        ((centre - half) / d).max(0.0),
        ((centre + half) / d).min(1.0),
    ))
}

/// One phase of a point count.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PhasePoints {
    /// Phase label.
    pub label: String,
    /// Points given to it.
    pub points: usize,
    /// Its fraction of the counted points (`None` before any point is counted).
    pub fraction: Option<f64>,
    /// Wilson 95 % interval of that fraction.
    pub wilson95: Option<(f64, f64)>,
}

/// The point-count estimate of a micrograph.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointCountEstimate {
    /// Points of the grid in the region.
    pub grid_points: usize,
    /// Points marked (counted or not).
    pub marked: usize,
    /// Points given a phase (the denominator of the fractions).
    pub counted: usize,
    /// Per phase, in the order given.
    pub phases: Vec<PhasePoints>,
}

/// Count the marks of a point count per phase, with Wilson 95 % intervals. Marks of points
/// beyond the grid, or of labels not in `phases`, are not counted.
pub fn point_count_estimate(
    count: &PointCount,
    phases: &[String],
    grid_points: usize,
) -> PointCountEstimate {
    let mut per = vec![0usize; phases.len()];
    let mut marked = 0;
    for m in count.marks.iter().filter(|m| m.point < grid_points) {
        marked += 1;
        if let Some(i) = m
            .phase
            .as_ref()
            .and_then(|l| phases.iter().position(|p| p == l))
        {
            per[i] += 1;
        }
    }
    let counted: usize = per.iter().sum();
    PointCountEstimate {
        grid_points,
        marked,
        counted,
        phases: phases
            .iter()
            .zip(per)
            .map(|(label, k)| PhasePoints {
                label: label.clone(),
                points: k,
                fraction: (counted > 0).then(|| k as f64 / counted as f64),
                wilson95: wilson_interval(k, counted, Z95),
            })
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::document::PointMark;
    use micrograph::control::Control;
    use micrograph::segment::segment;

    #[derive(serde::Deserialize)]
    struct WilsonFixture {
        scipy_version: String,
        cases: Vec<WilsonCase>,
    }

    #[derive(serde::Deserialize)]
    struct WilsonCase {
        successes: usize,
        trials: usize,
        low: f64,
        high: f64,
    }

    #[test]
    fn wilson_interval_matches_newcombe_and_scipy() {
        // Source: Newcombe (1998), Stat. Med. 17:857, Table I, method 3 (Wilson score, no
        // continuity correction), from memory: 81/263 -> 0.2553-0.3662, 15/148 -> 0.0624-0.1605,
        // 0/20 -> 0-0.1611, 1/29 -> 0.0061-0.1718 (four decimals, so tolerance 6e-5).
        for (k, n, lo, hi) in [
            (81, 263, 0.2553, 0.3662),
            (15, 148, 0.0624, 0.1605),
            (0, 20, 0.0, 0.1611),
            (1, 29, 0.0061, 0.1718),
        ] {
            let (a, b) = wilson_interval(k, n, Z95).expect("trials > 0");
            assert!(
                (a - lo).abs() < 6e-5 && (b - hi).abs() < 6e-5,
                "{k}/{n}: {a} {b}"
            );
        }
        // Source: SciPy's binomtest(...).proportion_ci(method="wilson"), values written by
        // tests/reference/wilson_scipy_reference.py (version in the fixture); the same formula
        // in double precision, so 1e-12.
        let fixture: WilsonFixture = serde_json::from_str(include_str!(
            "../../../tests/reference/wilson_scipy_reference.json"
        ))
        .expect("fixture reads");
        assert!(!fixture.scipy_version.is_empty());
        for c in &fixture.cases {
            let (a, b) = wilson_interval(c.successes, c.trials, Z95).expect("trials > 0");
            assert!(
                (a - c.low).abs() < 1e-12 && (b - c.high).abs() < 1e-12,
                "{}/{}: {a} {b} vs {} {}",
                c.successes,
                c.trials,
                c.low,
                c.high
            );
        }
        assert_eq!(wilson_interval(3, 0, Z95), None);
        assert_eq!(wilson_interval(4, 3, Z95), None);
    }

    #[test]
    fn point_count_fractions_and_intervals() {
        let count = PointCount {
            grid: PointGrid::Regular { spacing_px: 10.0 },
            marks: vec![
                PointMark {
                    point: 0,
                    phase: Some("host".into()),
                },
                PointMark {
                    point: 1,
                    phase: Some("lamella".into()),
                },
                PointMark {
                    point: 2,
                    phase: Some("host".into()),
                },
                PointMark {
                    point: 3,
                    phase: None,
                },
                PointMark {
                    point: 99,
                    phase: Some("host".into()),
                },
            ],
        };
        let labels = vec!["host".to_string(), "lamella".to_string()];
        let e = point_count_estimate(&count, &labels, 10);
        // Point 99 is beyond the grid, point 3 is not counted: 2 host of 3 counted.
        assert_eq!((e.marked, e.counted), (4, 3));
        assert_eq!(e.phases[0].points, 2);
        assert_eq!(e.phases[0].fraction, Some(2.0 / 3.0));
        assert_eq!(e.phases[0].wilson95, wilson_interval(2, 3, Z95));
        let empty = point_count_estimate(
            &PointCount {
                grid: count.grid.clone(),
                marks: Vec::new(),
            },
            &labels,
            10,
        );
        assert_eq!(empty.phases[0].fraction, None);
        assert_eq!(empty.phases[0].wilson95, None);
    }

    #[test]
    fn grids_stay_in_the_region_and_random_grids_repeat_with_the_seed() {
        let region = Roi {
            include: vec![Polygon(vec![
                [10.0, 10.0],
                [90.0, 10.0],
                [90.0, 90.0],
                [10.0, 90.0],
            ])],
            exclude: vec![Polygon(vec![
                [40.0, 40.0],
                [60.0, 40.0],
                [60.0, 60.0],
                [40.0, 60.0],
            ])],
        };
        let mask = region.rasterise(100, 100).expect("region rasterises");
        let in_mask = |p: [f64; 2]| mask.bits[p[1] as usize * 100 + p[0] as usize];
        // A 10 px grid has points at 5.5, 15.5, ... 95.5; inside 10..90 are 15.5..85.5 (8 x 8),
        // minus 45.5 and 55.5 in both directions (2 x 2) inside the exclusion.
        let regular =
            grid_points(&PointGrid::Regular { spacing_px: 10.0 }, &region, 100, 100).expect("grid");
        assert_eq!(regular.len(), 64 - 4);
        assert!(regular.iter().all(|p| in_mask(*p)));
        let random = PointGrid::Random {
            points: 500,
            seed: 7,
        };
        let a = grid_points(&random, &region, 100, 100).expect("grid");
        assert_eq!(a.len(), 500);
        assert!(a.iter().all(|p| in_mask(*p)));
        assert_eq!(a, grid_points(&random, &region, 100, 100).expect("grid"));
        let other = PointGrid::Random {
            points: 500,
            seed: 8,
        };
        assert_ne!(a, grid_points(&other, &region, 100, 100).expect("grid"));
        assert!(grid_points(&PointGrid::Regular { spacing_px: 0.5 }, &region, 100, 100).is_err());
        assert!(grid_points(&PointGrid::Random { points: 0, seed: 1 }, &region, 100, 100).is_err());
    }

    /// A plane with a dark band (grey 100) in columns 20..30 over a bright field (grey 200).
    fn banded() -> GrayPlane {
        let (w, h) = (64u32, 48u32);
        let data = (0..w * h)
            .map(|i| {
                if (20..30).contains(&(i % w)) {
                    100
                } else {
                    200
                }
            })
            .collect();
        GrayPlane::new(w, h, data, 255).expect("plane")
    }

    fn classified(plane: &GrayPlane) -> (Segmentation, SegmentSettings) {
        let settings = SegmentSettings {
            voids: micrograph::segment::VoidDetection::Off,
            min_feature_px: 0,
            tile_px: Some(16),
            ..SegmentSettings::default()
        };
        let region = micrograph::roi::Mask::full(plane.width, plane.height);
        let seg = segment(plane, &region, &settings, &Control::none()).expect("segments");
        (seg, settings)
    }

    #[test]
    fn a_polygon_edit_moves_exactly_its_pixels_and_erasing_restores_them() {
        let plane = banded();
        let (mut seg, settings) = classified(&plane);
        let before = seg.clone();
        let measured = seg.measured_pixels as f64;
        assert_eq!(seg.phases[0].pixels, 10 * 48);
        let phases = vec!["lamella".to_string(), "host".to_string()];
        // A rectangle 40..50 x 10..30 over the bright field, given to the dark phase: by the
        // pixel-centre rule it covers exactly 10 x 20 pixels (its area, corners on pixel edges).
        // Source: the region rule of micrograph::roi (Foley et al. 1990, §3.6).
        let rect = EditShape::Polygon {
            vertices: vec![[40.0, 10.0], [50.0, 10.0], [50.0, 30.0], [40.0, 30.0]],
        };
        let edits = vec![HandEdit {
            shape: rect.clone(),
            phase: Some("lamella".into()),
        }];
        let out = apply_hand_edits(&mut seg, &plane, &edits, &phases, &settings)
            .expect("applies")
            .expect("edits");
        assert_eq!((out.edited_pixels, out.changed_pixels), (200, 200));
        assert_eq!(seg.phases[0].pixels, 480 + 200);
        assert!((seg.phases[0].area_fraction - (480.0 + 200.0) / measured).abs() < 1e-12);
        // The edited pixels keep their phase whatever the level: at the classified level the
        // histogram route gives the class-map fractions.
        let f = out.fractions_at(&seg.levels);
        assert!((f[0] - seg.phases[0].area_fraction).abs() < 1e-12, "{f:?}");
        // Their grey (200) now counts in the dark phase's mean.
        let expected_mean = (480.0 * 100.0 + 200.0 * 200.0) / 680.0;
        assert!((seg.phases[0].mean_gray - expected_mean).abs() < 1e-9);
        // Erasing the same rectangle afterwards gives the automatic classification back.
        let mut seg2 = before.clone();
        let edits2 = vec![
            edits[0].clone(),
            HandEdit {
                shape: rect,
                phase: None,
            },
        ];
        let out2 = apply_hand_edits(&mut seg2, &plane, &edits2, &phases, &settings)
            .expect("applies")
            .expect("edits");
        assert_eq!(out2.edited_pixels, 0);
        assert_eq!(seg2.class_map, before.class_map);
        assert_eq!(seg2.phases[0].pixels, before.phases[0].pixels);
        // No edits: nothing changes.
        let mut seg3 = before.clone();
        assert!(
            apply_hand_edits(&mut seg3, &plane, &[], &phases, &settings)
                .expect("applies")
                .is_none()
        );
        assert_eq!(seg3, before);
    }

    #[test]
    fn a_brush_stroke_covers_the_pixels_within_its_radius() {
        // A single-point stroke of radius 3 at a pixel centre covers the centres within 3 px:
        // the lattice points (i, j) with i^2 + j^2 <= 9, which number 29 (Gauss circle
        // problem, N(3) = 29; count by hand).
        let mut n = 0;
        for_each_pixel(
            &EditShape::Stroke {
                points: vec![[20.5, 20.5]],
                radius_px: 3.0,
            },
            64,
            48,
            |_, _| n += 1,
        )
        .expect("valid");
        assert_eq!(n, 29);
        // A horizontal stroke 10 px long, radius 0.5, along pixel centres covers one row of 11
        // centres (both ends included).
        let mut row = Vec::new();
        for_each_pixel(
            &EditShape::Stroke {
                points: vec![[5.5, 7.5], [15.5, 7.5]],
                radius_px: 0.5,
            },
            64,
            48,
            |x, y| row.push((x, y)),
        )
        .expect("valid");
        assert_eq!(row.len(), 11);
        assert!(row.iter().all(|&(_, y)| y == 7));
        // Shapes off the image cover nothing; bad shapes are refused with a reason.
        let mut none = 0;
        for_each_pixel(
            &EditShape::Stroke {
                points: vec![[-50.0, -50.0]],
                radius_px: 3.0,
            },
            64,
            48,
            |_, _| none += 1,
        )
        .expect("valid");
        assert_eq!(none, 0);
        assert!(
            check_shape(&EditShape::Stroke {
                points: vec![[1.0, 1.0]],
                radius_px: 0.0
            })
            .is_err()
        );
        assert!(
            check_shape(&EditShape::Polygon {
                vertices: vec![[1.0, 1.0], [f64::NAN, 2.0], [3.0, 3.0]]
            })
            .unwrap_err()
            .contains("point 1")
        );
    }

    #[test]
    fn an_edit_naming_no_class_is_refused_with_its_number() {
        let plane = banded();
        let (mut seg, settings) = classified(&plane);
        let edits = vec![HandEdit {
            shape: EditShape::Polygon {
                vertices: vec![[1.0, 1.0], [5.0, 1.0], [5.0, 5.0]],
            },
            phase: Some("quartz".into()),
        }];
        let e = apply_hand_edits(
            &mut seg,
            &plane,
            &edits,
            &["lamella".into(), "host".into()],
            &settings,
        )
        .unwrap_err();
        assert!(e.contains("hand edit 1") && e.contains("quartz"), "{e}");
    }
}
