//! The marks a composition diagram draws for a grain, whatever its projection: the Monte Carlo
//! cloud of the bulk, the spot analyses, the phase means and the bulk median. The ternary and the
//! quadrilateral differ only in how a composition becomes a plane point (`xy`) and in the labels.

use super::{
    Anchor, Figure, Item, Label, LegendEntry, LegendSymbol, MarkerShape, Markers, SpotPoint,
    palette,
};
use crate::run::GrainResult;

const SPOT_SHAPES: [MarkerShape; 3] = [MarkerShape::Circle, MarkerShape::Plus, MarkerShape::Cross];
const PHASE_SHAPES: [MarkerShape; 3] = [
    MarkerShape::Square,
    MarkerShape::TriangleUp,
    MarkerShape::TriangleDown,
];

fn push_markers(fig: &mut Figure, label: String, markers: Markers) {
    fig.legend.push(LegendEntry {
        label,
        symbol: LegendSymbol::Marker {
            shape: markers.shape,
            colour: markers.colour,
            fill: markers.fill,
        },
    });
    fig.items.push(Item::Markers(markers));
}

/// At most `cloud_points` of the grain's Monte Carlo bulk draws (evenly picked), small and grey.
pub(super) fn bulk_cloud(
    fig: &mut Figure,
    g: &GrainResult,
    cloud_points: usize,
    xy: impl Fn(&[f64]) -> [f64; 2],
) {
    let draws = &g.monte_carlo.bulk_draws;
    if draws.is_empty() || cloud_points == 0 {
        return;
    }
    let step = draws.len().div_ceil(cloud_points).max(1);
    push_markers(
        fig,
        format!("bulk, {} Monte Carlo draws", draws.len().div_ceil(step)),
        Markers {
            points: draws.iter().step_by(step).map(|d| xy(d)).collect(),
            shape: MarkerShape::Circle,
            size_pt: 1.2,
            colour: palette::GREY,
            fill: Some(palette::GREY),
            opacity: 0.5,
        },
    );
}

/// Each phase's spot analyses, one open shape per phase.
pub(super) fn spot_marks(
    fig: &mut Figure,
    g: &GrainResult,
    spots: &[SpotPoint],
    xy: impl Fn(&[f64]) -> [f64; 2],
) {
    for (i, phase) in g.phases.iter().enumerate() {
        let points: Vec<[f64; 2]> = spots
            .iter()
            .filter(|s| s.phase == phase.label)
            .map(|s| xy(&s.fractions))
            .collect();
        if points.is_empty() {
            continue;
        }
        push_markers(
            fig,
            format!("{} spots", phase.label),
            Markers {
                points,
                shape: SPOT_SHAPES[i % SPOT_SHAPES.len()],
                size_pt: 2.4,
                colour: palette::BLACK,
                fill: None,
                opacity: 1.0,
            },
        );
    }
}

/// Each phase's mean, a filled shape, labelled by `label(phase label, mean)`.
pub(super) fn phase_means(
    fig: &mut Figure,
    g: &GrainResult,
    xy: impl Fn(&[f64]) -> [f64; 2],
    label: impl Fn(&str, &[f64]) -> String,
) {
    for (i, phase) in g.phases.iter().enumerate() {
        push_markers(
            fig,
            label(&phase.label, &phase.mean),
            Markers {
                points: vec![xy(&phase.mean)],
                shape: PHASE_SHAPES[i % PHASE_SHAPES.len()],
                size_pt: 4.5,
                colour: palette::BLACK,
                fill: Some(palette::SKY_BLUE),
                opacity: 1.0,
            },
        );
    }
}

/// The bulk as a large diamond at `at`.
pub(super) fn bulk_mark(fig: &mut Figure, at: [f64; 2], label: String) {
    push_markers(
        fig,
        label,
        Markers {
            points: vec![at],
            shape: MarkerShape::Diamond,
            size_pt: 5.5,
            colour: palette::BLACK,
            fill: Some(palette::VERMILLION),
            opacity: 1.0,
        },
    );
}

/// The end-member names at a diagram's corners: (where, offset in pt, text, anchor).
pub(super) fn corner_labels(fig: &mut Figure, corners: &[([f64; 2], [f64; 2], &str, Anchor)]) {
    let f = fig.font_size_pt;
    for &(at, offset_pt, text, anchor) in corners {
        fig.items.push(Item::Label(Label {
            at,
            offset_pt,
            text: text.into(),
            size_pt: f * 1.2,
            colour: palette::BLACK,
            anchor,
            halo: false,
        }));
    }
}

/// Ticks 0.2, 0.4, 0.6, 0.8 along the base (from (0, 0) to (1, 0)), `dy_pt` below it.
pub(super) fn base_ticks(fig: &mut Figure, dy_pt: f64) {
    let f = fig.font_size_pt;
    for k in 1..5 {
        let c = f64::from(k) / 5.0;
        fig.items.push(Item::Label(Label {
            at: [c, 0.0],
            offset_pt: [0.0, dy_pt],
            text: format!("{c:.1}"),
            size_pt: f * 0.85,
            colour: palette::BLACK,
            anchor: Anchor::Middle,
            halo: false,
        }));
    }
}
