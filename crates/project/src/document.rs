//! The project document: a whole study, saved as JSON.
//!
//! A project holds samples; a sample holds grains; a grain holds its phases (which spot
//! analyses belong to each) and its micrographs (image, pixel size, region, classification
//! settings, which grey class is which phase). File paths are relative to the project file.

use std::path::{Path, PathBuf};

use micrograph::roi::Roi;
use micrograph::segment::SegmentSettings;
use reintegration::{CompositionSpread, MineralSystem, VolumeSettings};
use serde::{Deserialize, Serialize};

/// The version of the document format this build writes.
pub const FORMAT_VERSION: u32 = 1;

/// A Consolute project.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Project {
    /// Version of the document format ([`FORMAT_VERSION`] when written by this build).
    pub format_version: u32,
    /// Title of the study.
    pub name: String,
    /// Free text: locality, purpose, who.
    #[serde(default)]
    pub description: String,
    /// Models, pressure, Monte Carlo settings.
    #[serde(default)]
    pub settings: Settings,
    /// Files of spot analyses the grains draw on.
    #[serde(default)]
    pub analysis_files: Vec<AnalysisFile>,
    /// The samples.
    #[serde(default)]
    pub samples: Vec<Sample>,
}

/// Choices that apply to the whole study.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Settings {
    /// Solution model id for feldspar temperatures (`haselton1983`, `fl1988`, ...).
    pub feldspar_model: String,
    /// Pressure, kbar.
    pub pressure_kbar: f64,
    /// One-sigma uncertainty of the pressure, kbar.
    pub pressure_sigma_kbar: f64,
    /// End-member volume table and structural state.
    pub volumes: VolumeSettings,
    /// Monte Carlo draws per grain.
    pub draws: usize,
    /// Seed of the Monte Carlo draws.
    pub seed: u64,
    /// One-sigma relative uncertainty of end-member volumes.
    pub volume_rel_sigma: f64,
    /// How spot scatter sets composition uncertainty.
    pub composition_spread: CompositionSpread,
    /// Analytical uncertainty (mole fraction) within which a lamella pair may be adjusted to
    /// bring its component temperatures together.
    pub pair_uncertainty: f64,
    /// Leave out spot analyses with quality warnings.
    pub exclude_flagged_analyses: bool,
    /// Two-pyroxene thermometer for a pyroxene grain's host-lamella pair (`bk1990`,
    /// `wells1977`, `putirka2008-36`, `putirka2008-37`).
    pub pyroxene_pair_thermometer: String,
    /// Clinopyroxene thermometer for a pyroxene grain's reintegrated bulk, its minimum
    /// crystallisation temperature (`putirka2008-32d`).
    pub pyroxene_bulk_thermometer: String,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            feldspar_model: "haselton1983".into(),
            pressure_kbar: 1.0,
            pressure_sigma_kbar: 0.0,
            volumes: VolumeSettings::default(),
            draws: 2000,
            seed: 1,
            volume_rel_sigma: 0.002,
            composition_spread: CompositionSpread::StandardError,
            pair_uncertainty: 0.02,
            exclude_flagged_analyses: true,
            pyroxene_pair_thermometer: "bk1990".into(),
            pyroxene_bulk_thermometer: "putirka2008-32d".into(),
        }
    }
}

/// A file of spot analyses.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AnalysisFile {
    /// Path relative to the project file.
    pub path: PathBuf,
    /// Which mineral system its analyses belong to.
    pub system: MineralSystem,
}

/// A sample (a rock).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Sample {
    /// Sample id, as in the `sample` column of the analyses.
    pub id: String,
    /// Free text.
    #[serde(default)]
    pub description: String,
    /// Its grains.
    #[serde(default)]
    pub grains: Vec<Grain>,
}

/// An exsolved grain.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Grain {
    /// Grain id, as in the `grain` column of the analyses.
    pub id: String,
    /// Mineral system.
    pub system: MineralSystem,
    /// Its phases, host first by convention.
    pub phases: Vec<PhaseSpec>,
    /// Its micrographs.
    #[serde(default)]
    pub micrographs: Vec<MicrographSpec>,
    /// Free text.
    #[serde(default)]
    pub notes: String,
}

/// A phase of a grain.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PhaseSpec {
    /// Label, as in the `phase` column of the analyses.
    pub label: String,
    /// A density entered by the user, g/cm3 (otherwise molar mass / molar volume).
    #[serde(default)]
    pub density_g_cm3: Option<f64>,
}

/// A micrograph of a grain.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MicrographSpec {
    /// Label.
    pub label: String,
    /// Image path relative to the project file.
    pub path: PathBuf,
    /// Micrometres per pixel, from a scale bar.
    #[serde(default)]
    pub pixel_size_um: Option<f64>,
    /// Region of interest (empty = whole image).
    #[serde(default)]
    pub region: Roi,
    /// Classification settings.
    #[serde(default)]
    pub segmentation: SegmentSettings,
    /// For each grey class, dark to bright, the label of the phase it is.
    pub class_phases: Vec<String>,
}

impl Project {
    /// A new empty project.
    pub fn new(name: &str) -> Self {
        Project {
            format_version: FORMAT_VERSION,
            name: name.into(),
            description: String::new(),
            settings: Settings::default(),
            analysis_files: Vec::new(),
            samples: Vec::new(),
        }
    }

    /// Resolve a path stored in the project against the folder of the project file.
    pub fn resolve(project_file: &Path, stored: &Path) -> PathBuf {
        if stored.is_absolute() {
            stored.to_path_buf()
        } else {
            project_file
                .parent()
                .unwrap_or_else(|| Path::new("."))
                .join(stored)
        }
    }
}
