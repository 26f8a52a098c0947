//! The run report: `report.md` and a self-contained `report.html` (figures inline as SVG), and
//! every figure of every grain in `figures/` as SVG, PNG and PDF.
//!
//! Both reports are written from one list of blocks (headings, paragraphs, tables, figures), so
//! they say the same thing.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use rayon::prelude::*;
use solvus::{ModelKind, SolutionModel};

use crate::document::Project;
use crate::figure::{Figure, FigureKind, GrainFigureOptions, grain_figure, render, short_citation};
use crate::io::{ProjectError, write_atomically, write_atomically_streamed};
use crate::run::{GrainResult, RunResult};

/// Resolution of the PNG figures written with a run, dpi (300 dpi: a common journal minimum
/// for line art with halftones, common practice).
pub const REPORT_DPI: f64 = 300.0;

/// A block of the report.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// Heading of a level (1-3).
    Heading(usize, String),
    /// A paragraph.
    Para(String),
    /// A bulleted list.
    List(Vec<String>),
    /// A table: header, rows.
    Table(Vec<String>, Vec<Vec<String>>),
    /// A figure: caption, file stem under `figures/`, SVG text.
    Figure {
        /// Caption.
        caption: String,
        /// File stem (`figures/STEM.svg`).
        stem: String,
        /// The SVG.
        svg: String,
    },
}

/// A figure of a grain, ready to write.
pub struct GrainFigure {
    /// `sample/grain`.
    pub grain: String,
    /// Kind.
    pub kind: FigureKind,
    /// File stem.
    pub stem: String,
    /// The figure, or why it could not be drawn.
    pub figure: Result<Figure, String>,
}

fn safe(name: &str) -> String {
    name.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// Build every applicable figure of every grain (micrographs: each one).
pub fn grain_figures(project: &Project, project_file: &Path, run: &RunResult) -> Vec<GrainFigure> {
    figure_jobs(run)
        .par_iter()
        .map(|&job| build_figure(project, project_file, job))
        .collect()
}

/// One figure to draw: the grain, the kind and (for micrograph figures) which micrograph.
type FigureJob<'a> = (&'a GrainResult, FigureKind, usize);

/// Every applicable figure of every grain, in report order.
fn figure_jobs(run: &RunResult) -> Vec<FigureJob<'_>> {
    let mut jobs = Vec::new();
    for g in &run.grains {
        for kind in FigureKind::ALL {
            if !kind.applies_to(g) {
                continue;
            }
            let count = if kind == FigureKind::Micrograph {
                g.micrographs.len()
            } else {
                1
            };
            for m in 0..count {
                jobs.push((g, kind, m));
            }
        }
    }
    jobs
}

fn build_figure(
    project: &Project,
    project_file: &Path,
    (g, kind, m): FigureJob<'_>,
) -> GrainFigure {
    let options = GrainFigureOptions {
        micrograph: m,
        ..GrainFigureOptions::default()
    };
    let stem = if kind == FigureKind::Micrograph {
        format!(
            "{}_{}_{}_{}",
            safe(&g.sample),
            safe(&g.grain),
            kind.name(),
            safe(&g.micrographs[m].label)
        )
    } else {
        format!("{}_{}_{}", safe(&g.sample), safe(&g.grain), kind.name())
    };
    GrainFigure {
        grain: format!("{}/{}", g.sample, g.grain),
        kind,
        stem,
        figure: grain_figure(kind, project, project_file, g, &options).map_err(|e| e.to_string()),
    }
}

/// A figure drawn and written by [`write_report`]: what the text needs, and its files.
struct Drawn {
    grain: String,
    kind: FigureKind,
    stem: String,
    problem: Option<String>,
    files: Vec<WrittenFile>,
}

/// What the report's text needs of a figure: whose it is, its kind and file stem, and the
/// figure (`None` when its SVG is read back from the file written) or why it was not drawn.
struct FigureEntry<'a> {
    grain: &'a str,
    kind: FigureKind,
    stem: &'a str,
    figure: Result<Option<&'a Figure>, &'a str>,
}

fn f3(v: f64) -> String {
    format!("{v:.3}")
}

fn t0(v: Option<f64>) -> String {
    v.map_or("–".into(), |v| format!("{v:.0}"))
}

fn caption(kind: FigureKind, g: &GrainResult, project: &Project) -> String {
    let s = &project.settings;
    let model = SolutionModel::builtin(&s.feldspar_model)
        .map(|m| short_citation(&m))
        .unwrap_or_else(|_| s.feldspar_model.clone());
    let id = format!("{}/{}", g.sample, g.grain);
    match kind {
        FigureKind::Solvus => format!(
            "{id}: Ab–Or solvus of {model} at {} kbar (binodal solid, spinodal dotted, consolute point filled circle); the lamella pair as a tie-line at its two-feldspar temperature; the reintegrated bulk (median, 95 % interval of the Monte Carlo draws in composition and temperature) at its minimum crystallisation temperature (dashed line). X_Or is projected onto Ab–Or.",
            s.pressure_kbar
        ),
        FigureKind::Ternary => format!(
            "{id}: Ab–An–Or diagram with isotherms of the ternary model at {} kbar; spot analyses (small symbols), phase means, Monte Carlo draws of the bulk (grey) and its median (diamond).",
            s.pressure_kbar
        ),
        FigureKind::Histogram => format!(
            "{id}: minimum crystallisation temperature over the Monte Carlo draws ({}, {} kbar); median and 95 % interval marked; bin width by the Freedman–Diaconis rule.",
            if g.system == reintegration::MineralSystem::Pyroxene {
                format!(
                    "{} on the reintegrated clinopyroxene",
                    s.pyroxene_bulk_thermometer
                )
            } else {
                model
            },
            s.pressure_kbar
        ),
        FigureKind::Quadrilateral => format!(
            "{id}: pyroxene quadrilateral (Wo–En–Fs as Ca, Mg and ΣFe proportions) with the spot analyses (small symbols), the phase means joined by the lamella tie-line, Monte Carlo draws of the reintegrated bulk (grey) and its median (diamond) labelled with its minimum crystallisation temperature; name fields after Morimoto et al. (1988)."
        ),
        FigureKind::Micrograph => format!(
            "{id}: micrograph with the phase classification overlaid, voids and rims excluded from measurement, region of interest outlined (exclusions dashed); area fractions in the legend."
        ),
    }
}

fn methods(project: &Project, run: &RunResult) -> String {
    let s = &project.settings;
    let model = SolutionModel::builtin(&s.feldspar_model).ok();
    let spots: usize = run
        .grains
        .iter()
        .flat_map(|g| g.phases.iter())
        .map(|p| p.spots_used.len())
        .sum();
    let excluded: usize = run
        .grains
        .iter()
        .flat_map(|g| g.phases.iter())
        .map(|p| p.spots_excluded.len())
        .sum();
    let micrographs: usize = run.grains.iter().map(|g| g.micrographs.len()).sum();
    let volumes = serde_json::to_value(s.volumes).unwrap_or_default();
    let dataset = match volumes.get("dataset").and_then(|v| v.as_str()) {
        Some("holland_powell2011") => "Holland & Powell (2011)".to_string(),
        Some("berman1988") => "Berman (1988)".to_string(),
        Some(other) => other.to_string(),
        None => "the default table".to_string(),
    };
    let state = volumes
        .get("state")
        .and_then(|v| v.as_str())
        .unwrap_or("default");
    let (model_text, ideal) = match &model {
        Some(m) => (
            format!(
                "the {} solution model of {}",
                if m.kind == ModelKind::Ternary {
                    "ternary (Ab–Or–An)"
                } else {
                    "binary (Ab–Or)"
                },
                short_citation(m)
            ),
            match m.ideal_mixing {
                solvus::IdealMixing::Molecular => "molecular (ideal) mixing",
                solvus::IdealMixing::AlAvoidance => "Al-avoidance ideal mixing",
            },
        ),
        None => (
            format!("model '{}'", s.feldspar_model),
            "its ideal-mixing term",
        ),
    };
    let projected = model.as_ref().is_some_and(|m| m.kind == ModelKind::Binary);
    format!(
        "Phase area fractions were measured on {micrographs} micrograph(s) by grey-level classification \
         (multi-level Otsu thresholds unless set by hand), with voids, cracks and their blurred rims \
         excluded, and taken as volume fractions (Delesse principle). Phase compositions are means of \
         {spots} spot analyses ({excluded} left out for quality warnings), recalculated to structural \
         formulae (feldspar on 8 oxygens). Bulk compositions were reintegrated by the molar route: \
         moles of each phase from its volume fraction and molar volume, with end-member volumes of \
         {dataset} ({state} structural state) plus the excess volume of the solution model; the mass \
         route (volume fraction × density, oxides recombined) is computed as a check. Uncertainties come \
         from {draws} Monte Carlo draws per grain (seed {seed}) that perturb the modal fractions, the \
         phase compositions ({spread}), the end-member volumes (relative σ {vol}) and the pressure \
         (σ {psig} kbar). Minimum crystallisation temperatures are the highest temperatures at which \
         each bulk composition is not stable as one phase (tangent-plane test, Michelsen 1982), under \
         {model_text} with {ideal}, at {p} kbar{proj}. Lamella-pair (exsolution) temperatures are \
         two-feldspar temperatures from equal activities of Ab, Or and An in both phases (Fuhrman & \
         Lindsley 1988 approach), adjusted within ±{unc} mole fraction to bring them together.",
        draws = s.draws,
        seed = s.seed,
        spread = match s.composition_spread {
            reintegration::CompositionSpread::StandardError => "standard error of the spot mean",
            reintegration::CompositionSpread::Scatter => "scatter of the spots",
        },
        vol = s.volume_rel_sigma,
        psig = s.pressure_sigma_kbar,
        p = s.pressure_kbar,
        proj = if projected {
            "; the binary model uses X_Or / (X_Ab + X_Or) of each bulk (An projected away)"
        } else {
            ""
        },
        unc = s.pair_uncertainty,
    )
}

fn has_pyroxene(run: &RunResult) -> bool {
    run.grains
        .iter()
        .any(|g| g.system == reintegration::MineralSystem::Pyroxene)
}

/// The thermometers named in the settings, for the methods and references.
fn pyroxene_thermometers(project: &Project) -> Vec<solvus::pyroxene::PyroxeneThermometer> {
    let s = &project.settings;
    [&s.pyroxene_pair_thermometer, &s.pyroxene_bulk_thermometer]
        .into_iter()
        .filter_map(|id| solvus::pyroxene::PyroxeneThermometer::from_id(id))
        .collect()
}

/// The methods paragraph for pyroxene grains, when the run has any.
fn pyroxene_methods(project: &Project, run: &RunResult) -> Option<String> {
    if !has_pyroxene(run) {
        return None;
    }
    let s = &project.settings;
    let see = |id: &str| {
        solvus::pyroxene::PyroxeneThermometer::from_id(id).map_or(String::new(), |t| {
            format!(" (published standard error ±{:.0} °C)", t.see_c())
        })
    };
    Some(format!(
        "Pyroxene analyses were recalculated to formulae on 6 oxygens with Fe3+ from charge balance \
         (Droop 1987) and expressed as Di, Hd, En and Fs (Wo, En and Fs as Ca, Mg and ΣFe \
         proportions). Pyroxene bulk compositions were reintegrated by the same molar and mass routes \
         with end-member volumes of Holland & Powell (2011); the routes are compared in Wo, En and Fs. \
         The lamella pair gives an exsolution temperature from the two-pyroxene thermometer {pair}{pair_see}; \
         the reintegrated bulk gives a minimum crystallisation temperature from the clinopyroxene-only \
         thermometer {bulk}{bulk_see}, evaluated on every Monte Carlo draw, at {p} kbar.",
        pair = s.pyroxene_pair_thermometer,
        pair_see = see(&s.pyroxene_pair_thermometer),
        bulk = s.pyroxene_bulk_thermometer,
        bulk_see = see(&s.pyroxene_bulk_thermometer),
        p = s.pressure_kbar,
    ))
}

/// The references the report cites.
fn references(project: &Project, run: &RunResult) -> Vec<String> {
    let mut refs: Vec<String> = Vec::new();
    if let Ok(m) = SolutionModel::builtin(&project.settings.feldspar_model) {
        refs.push(m.citation.clone());
    }
    if let Ok(m) = SolutionModel::builtin("fl1988")
        && !refs.contains(&m.citation)
    {
        refs.push(m.citation.clone());
    }
    refs.extend(
        [
            "Holland, T.J.B. & Powell, R. (2011) An improved and extended internally consistent thermodynamic dataset for phases of petrological interest. Journal of Metamorphic Geology 29, 333-383",
            "Berman, R.G. (1988) Internally-consistent thermodynamic data for minerals in the system Na2O-K2O-CaO-MgO-FeO-Fe2O3-Al2O3-SiO2-TiO2-H2O-CO2. Journal of Petrology 29, 445-522",
            "Michelsen, M.L. (1982) The isothermal flash problem. Part I. Stability. Fluid Phase Equilibria 9, 1-19",
            "Otsu, N. (1979) A threshold selection method from gray-level histograms. IEEE Transactions on Systems, Man, and Cybernetics 9, 62-66",
            "Smith, P. & Parsons, I. (1974) The alkali-feldspar solvus at 1 kilobar water-vapour pressure. Mineralogical Magazine 39, 747-767",
            "Freedman, D. & Diaconis, P. (1981) On the histogram as a density estimator: L2 theory. Zeitschrift für Wahrscheinlichkeitstheorie und verwandte Gebiete 57, 453-476",
            "Okabe, M. & Ito, K. (2008) Color Universal Design (CUD): how to make figures and presentations that are friendly to colorblind people (colour palette of the figures)",
        ]
        .map(String::from),
    );
    if has_pyroxene(run) {
        for t in pyroxene_thermometers(project) {
            if !refs.iter().any(|r| r == t.citation()) {
                refs.push(t.citation().into());
            }
        }
        refs.extend(
            [
                "Droop, G.T.R. (1987) A general equation for estimating Fe3+ concentrations in ferromagnesian silicates and oxides from microprobe analyses, using stoichiometric criteria. Mineralogical Magazine 51, 431-435",
                "Morimoto, N. et al. (1988) Nomenclature of pyroxenes. Mineralogical Magazine 52, 535-550",
            ]
            .map(String::from),
        );
    }
    refs
}

fn cautions(run: &RunResult) -> Vec<String> {
    let mut out: Vec<String> = [
        "A solvus temperature from a reintegrated bulk is a minimum for crystallisation, not the crystallisation temperature.",
        "The solvus used is the strain-free one. Lamellae that exsolved coherently follow a coherent solvus that lies about 100 °C lower; set against the strain-free solvus, a coherent pair gives a different, not a better, temperature.",
        "Later re-equilibration (coarsening, deuteric or hydrothermal alteration, loss of lamellae to grain boundaries) moves lamella compositions and modal fractions; the lamella pair records when exchange stopped, and a bulk rebuilt from an altered grain is not the primary crystal.",
        "The pressure is an assumption supplied by the user; the critical temperature of the alkali-feldspar solvus rises by about 16 °C per kbar (Smith & Parsons 1974), so the temperatures move with it.",
        "Area fractions estimate volume fractions only for a random section through a representative grain; lamellae thinner than the beam or the image resolution blur and bias the result.",
    ]
    .map(String::from)
    .to_vec();
    if has_pyroxene(run) {
        out.push("Pyroxene thermometers are empirical fits: a temperature outside a thermometer's calibration, or from a pair not in Fe-Mg exchange equilibrium, is flagged but still shown; the clinopyroxene-only thermometer is calibrated on anhydrous experiments and overestimates hydrous ones (Putirka 2008). Pigeonite that has inverted to orthopyroxene keeps its bulk composition but not its structure.".into());
    }
    out
}

/// The report as blocks, figures included from `figures`.
pub fn report_blocks(project: &Project, run: &RunResult, figures: &[GrainFigure]) -> Vec<Block> {
    let entries: Vec<FigureEntry<'_>> = figures
        .iter()
        .map(|f| FigureEntry {
            grain: &f.grain,
            kind: f.kind,
            stem: &f.stem,
            figure: f.figure.as_ref().map(Some).map_err(String::as_str),
        })
        .collect();
    blocks_of(project, run, &entries)
}

/// [`report_blocks`] from figure entries; a figure given as `Ok(None)` gets a block with no
/// SVG text (the page writer reads it from the figure's file).
fn blocks_of(project: &Project, run: &RunResult, figures: &[FigureEntry<'_>]) -> Vec<Block> {
    let s = &project.settings;
    let mut b = vec![Block::Heading(
        1,
        format!("Consolute report: {}", project.name),
    )];
    if !project.description.is_empty() {
        b.push(Block::Para(project.description.clone()));
    }
    b.push(Block::Para(format!(
        "Written by Consolute {}. {} grain(s) computed, {} failed. Model {} at {} kbar; {} Monte Carlo draws per grain.",
        env!("CARGO_PKG_VERSION"),
        run.grains.len(),
        run.failures.len(),
        s.feldspar_model,
        s.pressure_kbar,
        s.draws
    )));
    b.push(Block::Heading(2, "Methods".into()));
    b.push(Block::Para(methods(project, run)));
    if let Some(text) = pyroxene_methods(project, run) {
        b.push(Block::Para(text));
    }
    b.push(Block::Heading(2, "Results".into()));
    let mut rows = Vec::new();
    for g in &run.grains {
        let bulk: Vec<String> = g
            .basis
            .iter()
            .zip(&g.monte_carlo.bulk)
            .map(|(e, s)| format!("{e} {} ({}–{})", f3(s.median), f3(s.p2_5), f3(s.p97_5)))
            .collect();
        let tmin = g.min_temperature().map_or("–".into(), |t| {
            format!("{:.0} ({:.0}–{:.0})", t.median, t.p2_5, t.p97_5)
        });
        let pair = match (&g.pair, &g.pyroxene_pair) {
            (Some(p), _) => format!(
                "{} / {} / {}; adjusted {}",
                t0(p.temperatures_c[0]),
                t0(p.temperatures_c[1]),
                t0(p.temperatures_c[2]),
                t0(p.adjusted_c)
            ),
            (None, Some(t)) => format!(
                "{:.0} ± {:.0} ({})",
                t.temperature_c,
                t.see_c,
                t.thermometer.id()
            ),
            (None, None) => "–".into(),
        };
        rows.push(vec![
            g.sample.clone(),
            g.grain.clone(),
            format!("{:?}", g.system).to_lowercase(),
            bulk.join(", "),
            tmin,
            if g.monte_carlo.temperature_draws.is_empty() {
                "–".into()
            } else {
                format!(
                    "{} of {}",
                    g.monte_carlo.outcomes.found,
                    g.monte_carlo.temperature_draws.len()
                )
            },
            pair,
        ]);
    }
    b.push(Block::Para(
        "Bulk compositions: median and 95 % interval of the Monte Carlo draws (molar route). Minimum crystallisation temperature, °C: median and 95 % interval over the draws that gave one. Lamella pair, °C: feldspar T_Ab / T_Or / T_An and the adjusted single temperature; pyroxene: the two-pyroxene temperature ± the thermometer's published standard error of estimate.".into(),
    ));
    b.push(Block::Table(
        [
            "sample",
            "grain",
            "system",
            "bulk (mole fractions)",
            "min. crystallisation T (°C)",
            "draws with T",
            "lamella pair T (°C)",
        ]
        .map(String::from)
        .to_vec(),
        rows,
    ));
    if !run.failures.is_empty() {
        b.push(Block::List(
            run.failures
                .iter()
                .map(|f| format!("{} / {} not computed: {}", f.sample, f.grain, f.message))
                .collect(),
        ));
    }
    b.push(Block::Heading(2, "Data".into()));
    let mut rows = Vec::new();
    for g in &run.grains {
        for (i, p) in g.phases.iter().enumerate() {
            let comp: Vec<String> = g
                .basis
                .iter()
                .zip(p.mean.iter().zip(&p.sd))
                .map(|(e, (m, s))| format!("{e} {} ± {}", f3(*m), f3(*s)))
                .collect();
            rows.push(vec![
                g.sample.clone(),
                g.grain.clone(),
                p.label.clone(),
                p.spots_used.len().to_string(),
                p.spots_excluded.len().to_string(),
                comp.join(", "),
                g.reintegration
                    .volume_fractions
                    .get(i)
                    .map_or("–".into(), |v| f3(*v)),
                g.reintegration
                    .densities_g_cm3
                    .get(i)
                    .map_or("–".into(), |v| f3(*v)),
            ]);
        }
    }
    b.push(Block::Para("Phases: mean end-member fractions ± standard deviation of the spots; volume fraction (area-weighted over the micrographs) and density used.".into()));
    b.push(Block::Table(
        [
            "sample",
            "grain",
            "phase",
            "spots used",
            "spots left out",
            "composition",
            "volume fraction",
            "density (g/cm³)",
        ]
        .map(String::from)
        .to_vec(),
        rows,
    ));
    let mut rows = Vec::new();
    for g in &run.grains {
        for m in &g.micrographs {
            let fr: Vec<String> = g
                .phases
                .iter()
                .zip(m.fractions.iter().zip(&m.ci95))
                .map(|(p, (f, ci))| format!("{} {} ({}–{})", p.label, f3(*f), f3(ci.0), f3(ci.1)))
                .collect();
            rows.push(vec![
                g.sample.clone(),
                g.grain.clone(),
                m.label.clone(),
                m.measured_pixels.to_string(),
                m.measured_area_um2
                    .map_or("–".into(), |a| format!("{a:.0}")),
                f3(m.excluded_fraction),
                fr.join(", "),
            ]);
        }
    }
    b.push(Block::Para("Micrographs: measured pixels and area, excluded (voids and rims) fraction of the region, and area fractions with 95 % intervals.".into()));
    b.push(Block::Table(
        [
            "sample",
            "grain",
            "micrograph",
            "measured px",
            "area (µm²)",
            "excluded",
            "area fractions",
        ]
        .map(String::from)
        .to_vec(),
        rows,
    ));
    let notes: Vec<String> = run
        .grains
        .iter()
        .flat_map(|g| {
            g.notes
                .iter()
                .map(move |n| format!("{} / {}: {n}", g.sample, g.grain))
        })
        .collect();
    if !notes.is_empty() {
        b.push(Block::Heading(3, "Notes".into()));
        b.push(Block::List(notes));
    }
    b.push(Block::Heading(2, "Figures".into()));
    let mut not_drawn = Vec::new();
    for f in figures {
        let Some(g) = run
            .grains
            .iter()
            .find(|g| format!("{}/{}", g.sample, g.grain) == f.grain)
        else {
            continue;
        };
        match &f.figure {
            Ok(fig) => b.push(Block::Figure {
                caption: caption(f.kind, g, project),
                stem: f.stem.to_string(),
                svg: fig.map(render::to_svg).unwrap_or_default(),
            }),
            Err(e) => not_drawn.push(format!("{} {}: {e}", f.grain, f.kind.name())),
        }
    }
    if !not_drawn.is_empty() {
        b.push(Block::Para("Figures not drawn:".into()));
        b.push(Block::List(not_drawn));
    }
    b.push(Block::Heading(2, "Interpreting the temperatures".into()));
    b.push(Block::List(cautions(run)));
    b.push(Block::Heading(2, "References".into()));
    b.push(Block::List(references(project, run)));
    b
}

fn md_cell(s: &str) -> String {
    s.replace('|', "\\|").replace('\n', " ")
}

/// The blocks as Markdown (figures linked from `figures/`).
pub fn to_markdown(blocks: &[Block]) -> String {
    let mut out = String::new();
    for block in blocks {
        match block {
            Block::Heading(level, text) => {
                let _ = writeln!(out, "{} {text}\n", "#".repeat(*level));
            }
            Block::Para(text) => {
                let _ = writeln!(out, "{text}\n");
            }
            Block::List(items) => {
                for i in items {
                    let _ = writeln!(out, "- {i}");
                }
                out.push('\n');
            }
            Block::Table(header, rows) => {
                let h: Vec<String> = header.iter().map(|c| md_cell(c)).collect();
                let _ = writeln!(out, "| {} |", h.join(" | "));
                let _ = writeln!(out, "|{}", "---|".repeat(header.len()));
                for r in rows {
                    let c: Vec<String> = r.iter().map(|c| md_cell(c)).collect();
                    let _ = writeln!(out, "| {} |", c.join(" | "));
                }
                out.push('\n');
            }
            Block::Figure { caption, stem, .. } => {
                let _ = writeln!(
                    out,
                    "![{}](figures/{stem}.svg)\n\n*{caption}* (also [PNG](figures/{stem}.png), [PDF](figures/{stem}.pdf))\n",
                    md_cell(caption).replace(['[', ']'], "")
                );
            }
        }
    }
    out
}

fn html_esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// The blocks as one self-contained HTML page (figures inline as SVG, no external files).
pub fn to_html(blocks: &[Block]) -> String {
    let mut out = Vec::new();
    // Writing into memory cannot fail.
    let _ = write_html(blocks, &|_, svg| svg.to_string(), &mut out);
    String::from_utf8_lossy(&out).into_owned()
}

/// Write the page of [`to_html`] to `out` piece by piece; `svg_of(stem, svg)` gives each
/// figure's SVG from its block's stem and SVG text.
fn write_html(
    blocks: &[Block],
    svg_of: &dyn Fn(&str, &str) -> String,
    out: &mut dyn std::io::Write,
) -> std::io::Result<()> {
    let title = blocks
        .iter()
        .find_map(|b| match b {
            Block::Heading(1, t) => Some(t.clone()),
            _ => None,
        })
        .unwrap_or_else(|| "Consolute report".into());
    write!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{}</title>\n<style>\n\
         body {{ font-family: 'DejaVu Sans', sans-serif; max-width: 60em; margin: 2em auto; padding: 0 1em; color: #111; line-height: 1.45; }}\n\
         table {{ border-collapse: collapse; margin: 0.5em 0 1.5em; font-size: 0.85em; }}\n\
         th, td {{ border: 1px solid #999; padding: 0.25em 0.5em; text-align: left; vertical-align: top; }}\n\
         th {{ background: #eee; }}\n\
         figure {{ margin: 1.5em 0; }} figure svg {{ width: 100%; height: auto; max-width: 40em; }}\n\
         figcaption {{ font-size: 0.85em; }}\n</style>\n</head>\n<body>\n",
        html_esc(&title)
    )?;
    for block in blocks {
        match block {
            Block::Heading(level, text) => {
                writeln!(out, "<h{level}>{}</h{level}>", html_esc(text))?;
            }
            Block::Para(text) => {
                writeln!(out, "<p>{}</p>", html_esc(text))?;
            }
            Block::List(items) => {
                out.write_all("<ul>\n".as_bytes())?;
                for i in items {
                    writeln!(out, "<li>{}</li>", html_esc(i))?;
                }
                out.write_all("</ul>\n".as_bytes())?;
            }
            Block::Table(header, rows) => {
                out.write_all("<table>\n<tr>".as_bytes())?;
                for h in header {
                    write!(out, "<th>{}</th>", html_esc(h))?;
                }
                out.write_all("</tr>\n".as_bytes())?;
                for r in rows {
                    out.write_all("<tr>".as_bytes())?;
                    for c in r {
                        write!(out, "<td>{}</td>", html_esc(c))?;
                    }
                    out.write_all("</tr>\n".as_bytes())?;
                }
                out.write_all("</table>\n".as_bytes())?;
            }
            Block::Figure { caption, stem, svg } => {
                // ids inside inline SVGs share the page: make each figure's clip id its own
                let clip = format!("plot-{stem}");
                let svg = svg_of(stem, svg)
                    .replace("id=\"plot\"", &format!("id=\"{clip}\""))
                    .replace("url(#plot)", &format!("url(#{clip})"));
                writeln!(
                    out,
                    "<figure id=\"{}\">\n{}<figcaption>{}</figcaption>\n</figure>",
                    html_esc(stem),
                    svg,
                    html_esc(caption)
                )?;
            }
        }
    }
    out.write_all("</body>\n</html>\n".as_bytes())
}

/// A figure file: its path, and whether it was written (the outer error: writing failed; the
/// inner one: the figure could not be encoded).
type WrittenFile = (PathBuf, Result<Result<(), String>, ProjectError>);

/// What [`write_report`] wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportFiles {
    /// `report.md`.
    pub markdown: PathBuf,
    /// `report.html`.
    pub html: PathBuf,
    /// Figure files (SVG, PNG, PDF).
    pub figures: Vec<PathBuf>,
    /// Figures that could not be drawn or encoded, with the reason.
    pub problems: Vec<String>,
}

/// Write `report.md`, `report.html` and `figures/*.{svg,png,pdf}` into `dir`.
///
/// A figure that cannot be drawn is listed in the report and in [`ReportFiles::problems`]; the
/// rest is still written.
///
/// # Errors
/// [`ProjectError::Io`] naming the file that could not be written.
pub fn write_report(
    project: &Project,
    project_file: &Path,
    run: &RunResult,
    dir: &Path,
) -> Result<ReportFiles, ProjectError> {
    let fig_dir = dir.join("figures");
    std::fs::create_dir_all(&fig_dir).map_err(|source| ProjectError::Io {
        path: fig_dir.clone(),
        source,
    })?;
    // Each figure is drawn, encoded and written by one worker, then dropped: memory holds a
    // few figures at a time, not the whole report's (50 grains x 5 micrographs: 400 figures,
    // 417 MB of files). The page reads each SVG back from its file when it reaches it.
    let jobs = figure_jobs(run);
    let mut drawn: Vec<Drawn> = jobs
        .par_iter()
        .map(|&job| {
            let f = build_figure(project, project_file, job);
            let files = match &f.figure {
                Ok(fig) => [
                    ("svg", render::Format::Svg),
                    ("png", render::Format::Png),
                    ("pdf", render::Format::Pdf),
                ]
                .into_iter()
                .map(|(ext, format)| {
                    let path = fig_dir.join(format!("{}.{ext}", f.stem));
                    let outcome = match render::encode(fig, format, REPORT_DPI) {
                        Ok(bytes) => write_atomically(&path, &bytes).map(|()| Ok(())),
                        Err(e) => Ok(Err(e.to_string())),
                    };
                    (path, outcome)
                })
                .collect(),
                Err(_) => Vec::new(),
            };
            Drawn {
                grain: f.grain,
                kind: f.kind,
                stem: f.stem,
                problem: f.figure.err(),
                files,
            }
        })
        .collect();
    let mut written = Vec::new();
    let mut problems: Vec<String> = drawn
        .iter()
        .filter_map(|d| {
            d.problem
                .as_ref()
                .map(|e| format!("{} {}: {e}", d.grain, d.kind.name()))
        })
        .collect();
    for d in &mut drawn {
        for (path, outcome) in std::mem::take(&mut d.files) {
            match outcome? {
                Ok(()) => written.push(path),
                Err(e) => problems.push(format!("{}: {e}", path.display())),
            }
        }
    }
    let entries: Vec<FigureEntry<'_>> = drawn
        .iter()
        .map(|d| FigureEntry {
            grain: &d.grain,
            kind: d.kind,
            stem: &d.stem,
            figure: d.problem.as_deref().map_or(Ok(None), Err),
        })
        .collect();
    let blocks = blocks_of(project, run, &entries);
    let svg_of = |stem: &str, _: &str| {
        std::fs::read_to_string(fig_dir.join(format!("{stem}.svg"))).unwrap_or_default()
    };
    let markdown = dir.join("report.md");
    let html = dir.join("report.html");
    write_atomically(&markdown, to_markdown(&blocks).as_bytes())?;
    write_atomically_streamed(&html, |out| write_html(&blocks, &svg_of, out))?;
    Ok(ReportFiles {
        markdown,
        html,
        figures: written,
        problems,
    })
}
