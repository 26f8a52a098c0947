//! Every figure kind of the demo project, in all three formats, checked by parsing the files
//! back (usvg for SVG, the png decoder for PNG, lopdf for PDF), and the figures' content checked
//! against the engine results they draw.

use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use project::figure::{
    FigureKind, FigureSize, Frame, GrainFigureOptions, Item, MarkerShape, grain_figure,
    quadrilateral_xy, render, ternary_xy,
};
use project::{GrainResult, Project, Quiet, RunResult, load_project, run_project};
use reintegration::{JobControl, MineralSystem};

fn demo_file() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_projects/tarn_moss/project.json")
}

/// The demo run with fewer draws (the figures do not depend on the count; tests stay fast).
fn demo() -> &'static (Project, RunResult) {
    static RUN: OnceLock<(Project, RunResult)> = OnceLock::new();
    RUN.get_or_init(|| {
        let mut project = load_project(&demo_file()).expect("demo project loads");
        project.settings.draws = 200;
        let run = run_project(&project, &demo_file(), &Quiet, &JobControl::default())
            .expect("demo project runs");
        (project, run)
    })
}

fn feldspar_grain(run: &RunResult) -> &GrainResult {
    run.grains
        .iter()
        .find(|g| g.system == MineralSystem::Feldspar && g.pair.is_some())
        .expect("the demo has a feldspar grain with a lamella pair")
}

fn pyroxene_grain(run: &RunResult) -> &GrainResult {
    run.grains
        .iter()
        .find(|g| g.system == MineralSystem::Pyroxene && g.phases.len() == 2)
        .expect("the demo has a two-phase pyroxene grain")
}

#[test]
fn quadrilateral_draws_spots_means_tie_line_and_bulk() {
    let (project, run) = demo();
    let g = pyroxene_grain(run);
    let fig = grain_figure(
        FigureKind::Quadrilateral,
        project,
        &demo_file(),
        g,
        &GrainFigureOptions::default(),
    )
    .unwrap();
    // Source: Wo, En, Fs as Ca, Mg and ΣFe proportions of Di + Hd + En + Fs
    // (Ca = Di + Hd, Mg = Di + 2 En, Fe = Hd + 2 Fs per M2M1Si2O6); the bulk diamond sits at the
    // plane point of the Monte Carlo median, the phase means at theirs. Tolerance: rounding.
    let to_xy = |f: &[f64]| {
        let c = MineralSystem::Pyroxene.comparison_coordinates(f);
        quadrilateral_xy(c[0], c[1], c[2])
    };
    let markers = |shape: MarkerShape| -> Vec<[f64; 2]> {
        fig.items
            .iter()
            .filter_map(|i| match i {
                Item::Markers(m) if m.shape == shape => Some(m.points.clone()),
                _ => None,
            })
            .flatten()
            .collect()
    };
    let median: Vec<f64> = g.monte_carlo.bulk.iter().map(|s| s.median).collect();
    let bulk = markers(MarkerShape::Diamond);
    assert_eq!(bulk.len(), 1);
    let want = to_xy(&median);
    assert!(
        (bulk[0][0] - want[0]).abs() < 1e-12 && (bulk[0][1] - want[1]).abs() < 1e-12,
        "{bulk:?} vs {want:?}"
    );
    // the two phase means are the ends of the tie-line
    let means = [to_xy(&g.phases[0].mean), to_xy(&g.phases[1].mean)];
    let tie = fig.items.iter().find_map(|i| match i {
        Item::Line(l) if l.points.len() == 2 && l.points == means.to_vec() => Some(l),
        _ => None,
    });
    assert!(tie.is_some(), "tie-line between {means:?}");
    // every plotted composition lies in the quadrilateral: 0 <= y <= √3/4 and inside the
    // slanted sides (x >= y/√3 on the En side, x <= 1 - y/√3 on the Fs side)
    let h = 3f64.sqrt() / 2.0;
    for shape in [MarkerShape::Circle, MarkerShape::Plus, MarkerShape::Diamond] {
        for p in markers(shape) {
            assert!(p[1] >= -1e-12 && p[1] <= h / 2.0 + 1e-12, "{p:?}");
            assert!(p[0] >= p[1] / 3f64.sqrt() - 1e-12, "{p:?}");
            assert!(p[0] <= 1.0 - p[1] / 3f64.sqrt() + 1e-12, "{p:?}");
        }
    }
    // the lamella pair's two-pyroxene temperature is in the legend
    if let Some(t) = &g.pyroxene_pair {
        let text = format!("{:.0} ± {:.0} °C", t.temperature_c, t.see_c);
        assert!(fig.legend.iter().any(|e| e.label.contains(&text)), "{text}");
    }
    // a feldspar grain is refused with a reason
    let e = grain_figure(
        FigureKind::Quadrilateral,
        project,
        &demo_file(),
        feldspar_grain(run),
        &GrainFigureOptions::default(),
    )
    .unwrap_err();
    assert!(e.to_string().contains("pyroxene grains"), "{e}");
}

#[test]
fn every_kind_renders_to_svg_png_and_pdf() {
    let (project, run) = demo();
    let jobs: Vec<(&GrainResult, FigureKind)> = [feldspar_grain(run), pyroxene_grain(run)]
        .into_iter()
        .flat_map(|g| {
            FigureKind::ALL
                .into_iter()
                .filter(|k| k.applies_to(g))
                .map(move |k| (g, k))
        })
        .collect();
    // every kind is drawn for one of the two grains
    for kind in FigureKind::ALL {
        assert!(jobs.iter().any(|(_, k)| *k == kind), "{}", kind.name());
    }
    for (g, kind) in jobs {
        let options = GrainFigureOptions {
            size: FigureSize::WidthMm(100.0),
            ..GrainFigureOptions::default()
        };
        let fig = grain_figure(kind, project, &demo_file(), g, &options)
            .unwrap_or_else(|e| panic!("{}: {e}", kind.name()));
        assert_eq!(fig.width_mm, 100.0);

        // SVG: parses with usvg and has the figure's size (usvg: 96 user units per inch)
        let svg = render::to_svg(&fig);
        let tree = render::parse_svg(&svg).unwrap();
        let expect_w = 100.0 / 25.4 * 96.0;
        assert!(
            (f64::from(tree.size().width()) - expect_w).abs() < 0.01,
            "{}: width {} vs {expect_w}",
            kind.name(),
            tree.size().width()
        );

        // PNG: the requested pixel size at 150 dpi: round(100 mm / 25.4 × 150) = 591 px
        let png_bytes = render::to_png(&fig, 150.0).unwrap();
        let decoder = png::Decoder::new(std::io::Cursor::new(png_bytes));
        let reader = decoder.read_info().unwrap();
        let info = reader.info();
        assert_eq!(info.width, 591, "{}", kind.name());
        assert_eq!(
            info.height,
            (fig.height_mm / 25.4 * 150.0).round() as u32,
            "{}",
            kind.name()
        );
        // pixel density: 150 dpi = 5906 px/m (150 / 0.0254)
        let dims = info.pixel_dims.unwrap();
        assert_eq!(dims.xppu, 5906);

        // PDF: parses back, one page of the figure's size in points (1 pt = 1/72 in)
        let pdf = render::to_pdf(&fig).unwrap();
        let doc = lopdf::Document::load_mem(&pdf).unwrap();
        let pages = doc.get_pages();
        assert_eq!(pages.len(), 1, "{}", kind.name());
        let page = doc.get_dictionary(*pages.values().next().unwrap()).unwrap();
        let media = page.get(b"MediaBox").unwrap().as_array().unwrap();
        let w = media[2].as_float().unwrap() - media[0].as_float().unwrap();
        // tolerance 0.05 pt: the PDF writer rounds to a few decimals
        assert!(
            (f64::from(w) - 100.0 / 25.4 * 72.0).abs() < 0.05,
            "{}: page width {w} pt",
            kind.name()
        );
        // the micrograph goes into the PDF as an image XObject
        let images = doc
            .objects
            .values()
            .filter(|o| {
                o.as_stream().is_ok_and(|s| {
                    s.dict
                        .get(b"Subtype")
                        .and_then(|v| v.as_name())
                        .is_ok_and(|n| n == b"Image")
                })
            })
            .count();
        assert_eq!(
            images > 0,
            kind == FigureKind::Micrograph,
            "{}",
            kind.name()
        );
    }
}

#[test]
fn solvus_figure_draws_the_grains_results() {
    let (project, run) = demo();
    let g = feldspar_grain(run);
    let fig = grain_figure(
        FigureKind::Solvus,
        project,
        &demo_file(),
        g,
        &GrainFigureOptions {
            extra_models: vec!["tw1969".into()],
            ..GrainFigureOptions::default()
        },
    )
    .unwrap();
    let Frame::Cartesian { x, y } = &fig.frame else {
        panic!("solvus figure has axes")
    };
    // both models named in the legend
    assert!(
        fig.legend
            .iter()
            .any(|e| e.label.contains("Haselton et al. (1983)"))
    );
    assert!(
        fig.legend
            .iter()
            .any(|e| e.label.contains("Thompson & Waldbaum (1969)"))
    );
    // the bulk marker sits at the median minimum temperature, inside the axes
    let t = g.min_temperature().unwrap();
    let bulk = fig
        .markers()
        .find(|m| m.shape == MarkerShape::Diamond)
        .unwrap()
        .points[0];
    assert_eq!(bulk[1], t.median);
    assert!(x.contains(bulk[0]) && y.contains(bulk[1]));
    // the bulk X_Or is the median of the projected draws: within the draws' range
    let (mut lo, mut hi) = (f64::MAX, f64::MIN);
    for d in &g.monte_carlo.bulk_draws {
        let v = d[1] / (d[0] + d[1]);
        lo = lo.min(v);
        hi = hi.max(v);
    }
    assert!(bulk[0] >= lo && bulk[0] <= hi);
    // the tie-line is horizontal at the pair temperature
    let pair_t = project::figure::pair_temperature_c(g).unwrap();
    assert!(fig.lines().any(|l| l.points.len() == 2
        && l.points[0][1] == pair_t
        && l.points[1][1] == pair_t
        && l.points[0][0] != l.points[1][0]));
    assert!(y.contains(pair_t));
}

#[test]
fn histogram_and_ternary_content() {
    let (project, run) = demo();
    let g = feldspar_grain(run);
    let hist = grain_figure(
        FigureKind::Histogram,
        project,
        &demo_file(),
        g,
        &GrainFigureOptions::default(),
    )
    .unwrap();
    // the stepped outline's bar heights add up to the draws that gave a temperature
    let Some(Item::Polygon(bars)) = hist.items.first() else {
        panic!("bars first")
    };
    let total: f64 = bars
        .points
        .chunks(2)
        .skip(1)
        .map(|c| c[0][1])
        .take((bars.points.len() - 2) / 2)
        .sum();
    assert_eq!(total as usize, g.monte_carlo.outcomes.found);
    let Frame::Cartesian { x, .. } = &hist.frame else {
        panic!()
    };
    for t in g.monte_carlo.temperature_draws.iter().flatten() {
        assert!(x.contains(*t));
    }

    let tern = grain_figure(
        FigureKind::Ternary,
        project,
        &demo_file(),
        g,
        &GrainFigureOptions::default(),
    )
    .unwrap();
    let b: Vec<f64> = g.monte_carlo.bulk.iter().map(|s| s.median).collect();
    let bulk = tern
        .markers()
        .find(|m| m.shape == MarkerShape::Diamond)
        .unwrap();
    assert_eq!(bulk.points[0], ternary_xy(b[0], b[1], b[2]));
    // one small symbol per spot used
    let spots: usize = g.phases.iter().map(|p| p.spots_used.len()).sum();
    let drawn: usize = tern
        .markers()
        .filter(|m| m.fill.is_none())
        .map(|m| m.points.len())
        .sum();
    assert_eq!(drawn, spots);
    assert!(
        tern.legend
            .iter()
            .any(|e| e.label.contains("Fuhrman & Lindsley (1988)"))
    );
}

#[test]
fn micrograph_figure_has_image_scale_bar_and_fractions() {
    let (project, run) = demo();
    let g = feldspar_grain(run);
    let fig = grain_figure(
        FigureKind::Micrograph,
        project,
        &demo_file(),
        g,
        &GrainFigureOptions::default(),
    )
    .unwrap();
    let img = fig
        .items
        .iter()
        .find_map(|i| match i {
            Item::Image(img) => Some(img),
            _ => None,
        })
        .unwrap();
    assert_eq!(img.rgba.len(), (img.width * img.height * 4) as usize);
    // the legend gives the run's own area fractions
    let m = &g.micrographs[0];
    let first = format!("{} {:.1} %", g.phases[0].label, 100.0 * m.fractions[0]);
    assert!(fig.legend.iter().any(|e| e.label == first), "{first}");
    assert!(fig.labels().any(|l| l.text.ends_with(" µm")));
}
