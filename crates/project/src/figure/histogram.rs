//! Histogram of the minimum crystallisation temperature over a grain's Monte Carlo draws.

use reintegration::percentile_sorted;

use super::{
    Axis, Dash, Figure, FigureError, FigureSize, Frame, Item, LegendEntry, LegendPlace,
    LegendSymbol, Polygon, Polyline, Style, palette,
};
use crate::run::GrainResult;

/// Bin edges by the Freedman–Diaconis rule, width `2 IQR n^(-1/3)` (Freedman & Diaconis 1981,
/// *Z. Wahrscheinlichkeitstheorie verw. Gebiete* 57:453-476), with the bin count kept within
/// 5-60 so a figure stays legible. `sorted` must be sorted; `None` for fewer than two values.
pub fn freedman_diaconis_edges(sorted: &[f64]) -> Option<Vec<f64>> {
    let n = sorted.len();
    if n < 2 {
        return None;
    }
    let (lo, hi) = (sorted[0], sorted[n - 1]);
    let iqr = percentile_sorted(sorted, 75.0) - percentile_sorted(sorted, 25.0);
    let bins = if hi > lo && iqr > 0.0 {
        let h = 2.0 * iqr / (n as f64).cbrt();
        ((hi - lo) / h).ceil().clamp(5.0, 60.0) as usize
    } else {
        5
    };
    let (lo, hi) = if hi > lo {
        (lo, hi)
    } else {
        (lo - 0.5, hi + 0.5)
    };
    Some(
        (0..=bins)
            .map(|i| lo + (hi - lo) * i as f64 / bins as f64)
            .collect(),
    )
}

/// Counts per bin (the last bin closed on the right, as NumPy's `histogram`).
pub fn bin_counts(values: &[f64], edges: &[f64]) -> Vec<usize> {
    let bins = edges.len().saturating_sub(1);
    let mut counts = vec![0; bins];
    if bins == 0 {
        return counts;
    }
    let (lo, hi) = (edges[0], edges[bins]);
    for &v in values {
        if v < lo || v > hi {
            continue;
        }
        let i = edges
            .partition_point(|e| *e <= v)
            .saturating_sub(1)
            .min(bins - 1);
        counts[i] += 1;
    }
    counts
}

/// Histogram of the minimum crystallisation temperature over the grain's Monte Carlo draws, with
/// the median and the 2.5-97.5 percentile interval marked. Data coordinates: x = °C, y = draws
/// per bin.
///
/// # Errors
/// [`FigureError::Grain`] when fewer than two draws gave a temperature.
pub fn min_temperature_figure(
    grain: &GrainResult,
    size: FigureSize,
) -> Result<Figure, FigureError> {
    let id = format!("{}/{}", grain.sample, grain.grain);
    let mut t: Vec<f64> = grain
        .monte_carlo
        .temperature_draws
        .iter()
        .flatten()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    t.sort_by(f64::total_cmp);
    let edges = freedman_diaconis_edges(&t).ok_or_else(|| FigureError::Grain {
        grain: id.clone(),
        message: format!(
            "only {} Monte Carlo draws gave a minimum temperature; a histogram needs two",
            t.len()
        ),
    })?;
    let counts = bin_counts(&t, &edges);
    let top = counts.iter().copied().max().unwrap_or(1) as f64;
    let span = edges[edges.len() - 1] - edges[0];
    let x = Axis::new(
        "Minimum crystallisation temperature (°C)",
        edges[0] - 0.05 * span,
        edges[edges.len() - 1] + 0.05 * span,
    );
    let y = Axis::new("Draws per bin", 0.0, top * 1.5);
    let mut fig = Figure::new(size, Frame::Cartesian { x, y });
    fig.title = format!("{id}: Monte Carlo minimum temperature");
    fig.height_mm = fig.width_mm * 0.7;
    fig.legend_place = LegendPlace::TopLeft;
    // the bars as one stepped outline
    let mut outline = vec![[edges[0], 0.0]];
    for (i, c) in counts.iter().enumerate() {
        outline.push([edges[i], *c as f64]);
        outline.push([edges[i + 1], *c as f64]);
    }
    outline.push([edges[edges.len() - 1], 0.0]);
    fig.items.push(Item::Polygon(Polygon {
        points: outline,
        fill: Some(palette::SKY_BLUE),
        fill_opacity: 0.55,
        stroke: Some(Style::solid(palette::BLACK, 0.6)),
    }));
    let median = percentile_sorted(&t, 50.0);
    let (p_lo, p_hi) = (percentile_sorted(&t, 2.5), percentile_sorted(&t, 97.5));
    let med_style = Style::solid(palette::VERMILLION, 1.2);
    let ci_style = Style::dashed(palette::VERMILLION, 0.8, Dash::Dashed);
    fig.items.push(Item::Line(Polyline {
        points: vec![[median, 0.0], [median, top * 1.5]],
        style: med_style,
    }));
    for v in [p_lo, p_hi] {
        fig.items.push(Item::Line(Polyline {
            points: vec![[v, 0.0], [v, top * 1.5]],
            style: ci_style,
        }));
    }
    fig.legend = vec![
        LegendEntry {
            label: format!(
                "draws with a temperature: {} of {}",
                t.len(),
                grain.monte_carlo.temperature_draws.len()
            ),
            symbol: LegendSymbol::Patch {
                fill: palette::SKY_BLUE,
                stroke: Some(Style::solid(palette::BLACK, 0.6)),
            },
        },
        LegendEntry {
            label: format!("median {median:.0} °C"),
            symbol: LegendSymbol::Line(med_style),
        },
        LegendEntry {
            label: format!("95 % interval {p_lo:.0}–{p_hi:.0} °C"),
            symbol: LegendSymbol::Line(ci_style),
        },
    ];
    Ok(fig)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn freedman_diaconis_on_1_to_100() {
        // Source: Freedman & Diaconis 1981, h = 2 IQR n^(-1/3). For 1..=100, IQR by linear
        // interpolation = 75.25 - 25.75 = 49.5, h = 99 / 4.6416 = 21.33, bins = ceil(99 / 21.33)
        // = 5 (worked by hand; numpy.histogram_bin_edges(bins="fd") applies the same rule).
        let v: Vec<f64> = (1..=100).map(f64::from).collect();
        let e = freedman_diaconis_edges(&v).unwrap();
        assert_eq!(e.len(), 6);
        assert_eq!((e[0], e[5]), (1.0, 100.0));
        let c = bin_counts(&v, &e);
        assert_eq!(c.iter().sum::<usize>(), 100, "every value in a bin");
        // edges 1, 20.8, 40.6, 60.4, 80.2, 100: 20 values in each bin
        assert_eq!(c, vec![20, 20, 20, 20, 20]);
    }
}
