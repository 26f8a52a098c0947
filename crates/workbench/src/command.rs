//! Every edit of the document is a [`Command`]. Panels emit commands while drawing; the
//! application applies them in one place after the frame is laid out, which keeps the document
//! consistent within a frame and gives undo and redo (the document keeps the state before each
//! command).

use micrograph::segment::LevelChoice;
use project::{MicrographSpec, Project};

use crate::document::MicrographRef;

/// An edit of the project.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Command {
    /// Set the grey levels between the phases of a micrograph by hand.
    SetLevels {
        /// The micrograph.
        at: MicrographRef,
        /// Levels, increasing grey values, one fewer than the phases.
        levels: Vec<u16>,
    },
    /// Let the levels of a micrograph be found automatically again (Otsu, refined to the
    /// midpoints between the phase modes).
    AutoLevels {
        /// The micrograph.
        at: MicrographRef,
    },
    /// Set the pixel size of a micrograph (µm per pixel), or clear it.
    SetPixelSize {
        /// The micrograph.
        at: MicrographRef,
        /// Micrometres per pixel.
        pixel_size_um: Option<f64>,
    },
    /// Set the rim left out around voids, pixels.
    SetVoidRim {
        /// The micrograph.
        at: MicrographRef,
        /// Rim width, pixels.
        rim_px: u8,
    },
    /// Set the solution model used for feldspar temperatures.
    SetModel(String),
    /// Set the pressure, kbar.
    SetPressure(f64),
    /// Set the one-sigma uncertainty of the pressure, kbar.
    SetPressureSigma(f64),
    /// Set the number of Monte Carlo draws per grain.
    SetDraws(usize),
    /// Set the seed of the Monte Carlo draws.
    SetSeed(u64),
    /// Leave out, or keep, spot analyses with quality warnings.
    SetExcludeFlagged(bool),
}

fn micrograph(project: &mut Project, at: MicrographRef) -> Result<&mut MicrographSpec, String> {
    project
        .samples
        .get_mut(at.grain.sample)
        .and_then(|s| s.grains.get_mut(at.grain.grain))
        .and_then(|g| g.micrographs.get_mut(at.micrograph))
        .ok_or_else(|| "that micrograph is no longer in the project".to_string())
}

impl Command {
    /// A short description for the undo and redo menu items.
    pub fn describe(&self) -> String {
        match self {
            Command::SetLevels { levels, .. } => format!("set levels {levels:?}"),
            Command::AutoLevels { .. } => "automatic levels".into(),
            Command::SetPixelSize { pixel_size_um, .. } => match pixel_size_um {
                Some(s) => format!("pixel size {s} µm"),
                None => "clear pixel size".into(),
            },
            Command::SetVoidRim { rim_px, .. } => format!("void rim {rim_px} px"),
            Command::SetModel(m) => format!("model {m}"),
            Command::SetPressure(p) => format!("pressure {p} kbar"),
            Command::SetPressureSigma(p) => format!("pressure uncertainty {p} kbar"),
            Command::SetDraws(n) => format!("{n} draws"),
            Command::SetSeed(s) => format!("seed {s}"),
            Command::SetExcludeFlagged(b) => {
                if *b {
                    "leave out flagged spots".into()
                } else {
                    "keep flagged spots".into()
                }
            }
        }
    }

    /// Edits of the same setting made one after another (a value dragged through many steps)
    /// share this key and are undone as one.
    pub fn merge_key(&self) -> Option<String> {
        match self {
            Command::SetDraws(_) => Some("draws".into()),
            Command::SetSeed(_) => Some("seed".into()),
            Command::SetPressure(_) => Some("pressure".into()),
            Command::SetPressureSigma(_) => Some("pressure sigma".into()),
            Command::SetVoidRim { at, .. } => Some(format!("rim {at:?}")),
            _ => None,
        }
    }

    /// Apply the edit to a project.
    ///
    /// # Errors
    /// Why it does not apply (a reference to something that no longer exists, a value out of
    /// range); the project is then unchanged.
    pub fn apply(self, project: &mut Project) -> Result<(), String> {
        match self {
            Command::SetLevels { at, levels } => {
                let m = micrograph(project, at)?;
                if levels.len() + 1 != m.segmentation.classes {
                    return Err(format!(
                        "{} phases need {} levels, got {}",
                        m.segmentation.classes,
                        m.segmentation.classes - 1,
                        levels.len()
                    ));
                }
                if levels.windows(2).any(|w| w[0] >= w[1]) {
                    return Err("levels must increase".into());
                }
                m.segmentation.levels = LevelChoice::Manual(levels);
            }
            Command::AutoLevels { at } => {
                micrograph(project, at)?.segmentation.levels = LevelChoice::OtsuMidpoint;
            }
            Command::SetPixelSize { at, pixel_size_um } => {
                if let Some(s) = pixel_size_um
                    && !(s.is_finite() && s > 0.0)
                {
                    return Err(format!("pixel size {s} µm must be above zero"));
                }
                micrograph(project, at)?.pixel_size_um = pixel_size_um;
            }
            Command::SetVoidRim { at, rim_px } => {
                micrograph(project, at)?.segmentation.rim_px = rim_px;
            }
            Command::SetModel(id) => {
                if !solvus::BUILTIN_IDS.contains(&id.as_str()) {
                    return Err(format!("unknown model '{id}'"));
                }
                project.settings.feldspar_model = id;
            }
            Command::SetPressure(p) => {
                if !(0.0..=100.0).contains(&p) {
                    return Err(format!("pressure {p} kbar must be between 0 and 100"));
                }
                project.settings.pressure_kbar = p;
            }
            Command::SetPressureSigma(p) => {
                if !(p.is_finite() && p >= 0.0) {
                    return Err(format!(
                        "pressure uncertainty {p} kbar must be zero or more"
                    ));
                }
                project.settings.pressure_sigma_kbar = p;
            }
            Command::SetDraws(n) => {
                if n == 0 {
                    return Err("at least one draw is needed".into());
                }
                project.settings.draws = n;
            }
            Command::SetSeed(s) => project.settings.seed = s,
            Command::SetExcludeFlagged(b) => project.settings.exclude_flagged_analyses = b,
        }
        Ok(())
    }
}
