//! One entry point for every figure kind of a grain, as the report, the `figure` subcommand
//! and the workbench ask for them.

use std::path::Path;

use serde::{Deserialize, Serialize};
use solvus::{ModelKind, SolutionModel};

use super::{
    Figure, FigureError, FigureSize, MicrographFigureOptions, QuadrilateralFigureOptions,
    SolvusFigureOptions, TernaryFigureOptions, grain_spots, micrograph_figure,
    min_temperature_figure, quadrilateral_figure, solvus_figure, ternary_figure,
};
use crate::document::Project;
use crate::run::GrainResult;

/// The figure kinds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FigureKind {
    /// Binary T–X solvus diagram.
    Solvus,
    /// Ternary Ab–An–Or diagram.
    Ternary,
    /// Histogram of the minimum temperature over the Monte Carlo draws.
    Histogram,
    /// Micrograph with phase overlay.
    Micrograph,
    /// Pyroxene quadrilateral (Wo–En–Fs).
    Quadrilateral,
}

impl FigureKind {
    /// All kinds, in report order.
    pub const ALL: [FigureKind; 5] = [
        FigureKind::Solvus,
        FigureKind::Ternary,
        FigureKind::Quadrilateral,
        FigureKind::Histogram,
        FigureKind::Micrograph,
    ];

    /// The name used on the command line and in file names.
    pub fn name(self) -> &'static str {
        match self {
            FigureKind::Solvus => "solvus",
            FigureKind::Ternary => "ternary",
            FigureKind::Histogram => "histogram",
            FigureKind::Micrograph => "micrograph",
            FigureKind::Quadrilateral => "quadrilateral",
        }
    }

    /// From [`FigureKind::name`].
    pub fn from_name(name: &str) -> Option<FigureKind> {
        FigureKind::ALL.into_iter().find(|k| k.name() == name)
    }

    /// Whether the kind applies to a grain: the solvus and ternary figures to feldspar grains,
    /// the quadrilateral to pyroxene grains, the histogram to grains whose Monte Carlo draws gave
    /// minimum temperatures, the micrograph to grains with micrographs.
    pub fn applies_to(self, grain: &GrainResult) -> bool {
        use reintegration::MineralSystem;
        match self {
            FigureKind::Micrograph => !grain.micrographs.is_empty(),
            FigureKind::Solvus | FigureKind::Ternary => grain.system == MineralSystem::Feldspar,
            FigureKind::Quadrilateral => grain.system == MineralSystem::Pyroxene,
            FigureKind::Histogram => {
                grain
                    .monte_carlo
                    .temperature_draws
                    .iter()
                    .flatten()
                    .filter(|t| t.is_finite())
                    .count()
                    >= 2
            }
        }
    }
}

/// Choices shared by the figure kinds of a grain.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GrainFigureOptions {
    /// Width.
    pub size: FigureSize,
    /// Models overlaid on the solvus figure after the project's own.
    pub extra_models: Vec<String>,
    /// Ternary model for the isotherms when the project's model is binary.
    pub ternary_model: String,
    /// Isotherm spacing, °C.
    pub isotherm_interval_c: f64,
    /// Which micrograph of the grain (0-based).
    pub micrograph: usize,
    /// Draw the spinodal on the solvus figure.
    pub spinodal: bool,
}

impl Default for GrainFigureOptions {
    fn default() -> Self {
        GrainFigureOptions {
            size: FigureSize::SingleColumn,
            extra_models: Vec::new(),
            ternary_model: "fl1988".into(),
            isotherm_interval_c: 100.0,
            micrograph: 0,
            spinodal: true,
        }
    }
}

/// The model whose isotherms the ternary figure draws: the project's own feldspar model when
/// it is ternary, otherwise `options.ternary_model` (a binary Ab-Or model says nothing across
/// the triangle). Readouts over the figure use the same model, so that they agree with it.
pub fn ternary_model_id<'a>(feldspar_model: &'a str, options: &'a GrainFigureOptions) -> &'a str {
    match SolutionModel::builtin(feldspar_model) {
        Ok(m) if m.kind == ModelKind::Ternary => feldspar_model,
        _ => &options.ternary_model,
    }
}

fn model(id: &str) -> Result<SolutionModel, FigureError> {
    SolutionModel::builtin(id).map_err(|e| FigureError::Model {
        model: id.into(),
        message: e.to_string(),
    })
}

/// Build one figure of a grain from the project and the grain's run result.
///
/// # Errors
/// [`FigureError::Grain`] when the kind does not apply to the grain; otherwise as the builder.
pub fn grain_figure(
    kind: FigureKind,
    project: &Project,
    project_file: &Path,
    grain: &GrainResult,
    options: &GrainFigureOptions,
) -> Result<Figure, FigureError> {
    if !kind.applies_to(grain) {
        return Err(FigureError::Grain {
            grain: format!("{}/{}", grain.sample, grain.grain),
            message: format!(
                "the {} figure does not apply to this {:?} grain ({})",
                kind.name(),
                grain.system,
                match kind {
                    FigureKind::Solvus | FigureKind::Ternary => "it is for feldspar grains",
                    FigureKind::Quadrilateral => "it is for pyroxene grains",
                    FigureKind::Histogram =>
                        "fewer than two Monte Carlo draws gave a minimum temperature",
                    FigureKind::Micrograph => "the grain has no micrograph",
                }
            ),
        });
    }
    let settings = &project.settings;
    match kind {
        FigureKind::Solvus => {
            let mut models = vec![model(&settings.feldspar_model)?];
            for id in &options.extra_models {
                if *id != settings.feldspar_model {
                    models.push(model(id)?);
                }
            }
            solvus_figure(
                &models,
                settings.pressure_kbar,
                Some(grain),
                &SolvusFigureOptions {
                    size: options.size,
                    spinodal: options.spinodal,
                    ..SolvusFigureOptions::default()
                },
            )
        }
        FigureKind::Ternary => {
            let m = model(ternary_model_id(&settings.feldspar_model, options))?;
            let spots = grain_spots(project, project_file, grain)?;
            ternary_figure(
                &m,
                settings.pressure_kbar,
                Some(grain),
                &spots,
                &TernaryFigureOptions {
                    size: options.size,
                    interval_c: options.isotherm_interval_c,
                    ..TernaryFigureOptions::default()
                },
            )
        }
        FigureKind::Histogram => min_temperature_figure(grain, options.size),
        FigureKind::Quadrilateral => quadrilateral_figure(
            grain,
            &grain_spots(project, project_file, grain)?,
            &QuadrilateralFigureOptions {
                size: options.size,
                ..QuadrilateralFigureOptions::default()
            },
        ),
        FigureKind::Micrograph => micrograph_figure(
            project,
            grain,
            options.micrograph,
            &MicrographFigureOptions {
                size: options.size,
                ..MicrographFigureOptions::default()
            },
        ),
    }
}
