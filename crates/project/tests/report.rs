//! The run report: report.md and a self-contained report.html with every figure, and the figure
//! files, for the demo project.

use std::path::{Path, PathBuf};

use project::report::write_report;
use project::{Quiet, load_project, run_project};
use reintegration::JobControl;

fn demo_file() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_projects/tarn_moss/project.json")
}

#[test]
fn report_has_methods_results_cautions_and_figures() {
    let mut project = load_project(&demo_file()).unwrap();
    project.settings.draws = 100;
    let run = run_project(&project, &demo_file(), &Quiet, &JobControl::default()).unwrap();
    let dir = std::env::temp_dir().join(format!("consolute-report-test-{}", std::process::id()));
    let files = write_report(&project, &demo_file(), &run, &dir).unwrap();
    assert!(files.problems.is_empty(), "{:?}", files.problems);

    let md = std::fs::read_to_string(&files.markdown).unwrap();
    // methods: model, pressure, ideal mixing, route, analyses and draws
    for needle in [
        "Haselton et al. (1983)",
        "at 1 kbar",
        "molecular (ideal) mixing",
        "molar route",
        "spot analyses",
        "100 Monte Carlo draws",
        "## References",
        "coherent solvus",
        "re-equilibration",
        "pressure is an assumption",
    ] {
        assert!(md.contains(needle), "report.md lacks '{needle}'");
    }
    // every grain's minimum temperature appears with its interval, as computed
    for g in &run.grains {
        if let Some(t) = g.min_temperature() {
            let text = format!("{:.0} ({:.0}–{:.0})", t.median, t.p2_5, t.p97_5);
            assert!(md.contains(&text), "{text}");
        }
    }
    // every figure linked from report.md exists in all three formats
    let feldspar = run
        .grains
        .iter()
        .filter(|g| g.system == reintegration::MineralSystem::Feldspar)
        .count();
    let micrographs: usize = run.grains.iter().map(|g| g.micrographs.len()).sum();
    // feldspar: solvus, ternary, histogram; pyroxene: quadrilateral, and a histogram when its
    // draws gave temperatures
    let pyroxene: Vec<_> = run
        .grains
        .iter()
        .filter(|g| g.system == reintegration::MineralSystem::Pyroxene)
        .collect();
    let pyroxene_histograms = pyroxene
        .iter()
        .filter(|g| g.min_temperature().is_some())
        .count();
    assert!(!pyroxene.is_empty(), "the demo has pyroxene grains");
    let figures = 3 * feldspar + pyroxene.len() + pyroxene_histograms + micrographs;
    // each figure is linked as SVG image, PNG and PDF
    assert_eq!(md.matches("_quadrilateral.").count(), 3 * pyroxene.len());
    // the pyroxene methods, the thermometers' citations and the nomenclature of the fields
    for needle in [
        "Droop 1987",
        "clinopyroxene-only thermometer putirka2008-32d (published standard error ±58 °C)",
        "Brey G.P. & Köhler T. (1990)",
        "Putirka K.D. (2008)",
        "Morimoto, N. et al. (1988)",
        "overestimates hydrous ones",
    ] {
        assert!(md.contains(needle), "report.md lacks '{needle}'");
    }
    // a pyroxene grain's pair temperature is in the results with its standard error
    for g in &pyroxene {
        if let Some(t) = &g.pyroxene_pair {
            let text = format!(
                "{:.0} ± {:.0} ({})",
                t.temperature_c,
                t.see_c,
                t.thermometer.id()
            );
            assert!(md.contains(&text), "{text}");
        }
    }
    assert_eq!(files.figures.len(), 3 * figures);
    assert_eq!(md.matches("![").count(), figures);
    for f in &files.figures {
        assert!(std::fs::metadata(f).unwrap().len() > 0, "{}", f.display());
    }

    // HTML: self-contained (figures inline, nothing fetched), one inline SVG per figure, each
    // with its own clip id
    let html = std::fs::read_to_string(&files.html).unwrap();
    assert_eq!(html.matches("<svg ").count(), figures);
    assert!(!html.contains("src=\"http") && !html.contains("href=\"http"));
    assert!(!html.contains("url(#plot)"));
    std::fs::remove_dir_all(&dir).unwrap();
}
