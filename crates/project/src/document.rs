//! The project document: a whole study, saved as JSON.
//!
//! A project holds samples; a sample holds grains; a grain holds its phases (which spot
//! analyses belong to each) and its micrographs (image, pixel size, region, classification
//! settings, which grey class is which phase). File paths are relative to the project file.

use std::path::{Path, PathBuf};

use micrograph::roi::Roi;
use micrograph::segment::SegmentSettings;
use mineral::{Analysis, Oxide};
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
    /// Spots of this grain the user left out of the computation (spot ids, as in the `spot`
    /// column of the analyses), whatever their quality flags.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub excluded_spots: Vec<String>,
    /// Corrections of single values of this grain's spot analyses, applied over the values read
    /// from the analyses files (the files themselves are never changed).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub spot_edits: Vec<SpotEdit>,
}

/// A corrected value of one oxide in one spot analysis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SpotEdit {
    /// Spot id, as in the `spot` column of the analyses.
    pub spot: String,
    /// The oxide.
    pub oxide: Oxide,
    /// The value used instead of the file's, wt%.
    pub wt: f64,
}

impl Grain {
    /// Whether the user left this spot out.
    pub fn spot_excluded(&self, spot: &str) -> bool {
        self.excluded_spots.iter().any(|s| s == spot)
    }

    /// The user's value of an oxide of a spot, if corrected.
    pub fn spot_edit(&self, spot: &str, oxide: Oxide) -> Option<f64> {
        self.spot_edits
            .iter()
            .find(|e| e.spot == spot && e.oxide == oxide)
            .map(|e| e.wt)
    }

    /// A spot analysis with the user's corrections applied: a corrected value replaces the
    /// file's value and any below-detection or not-determined mark on it, and the file's total
    /// (when it has one) moves by the same amount, so that the check of the total against the
    /// sum of the oxides still catches a mistyped column and not the correction itself.
    pub fn edited_analysis(&self, analysis: &Analysis) -> Analysis {
        let mut a = analysis.clone();
        for e in self.spot_edits.iter().filter(|e| e.spot == a.id.spot) {
            let old = a.oxides_wt.insert(e.oxide, e.wt).unwrap_or(0.0);
            if let Some(total) = a.reported_total_wt.as_mut() {
                *total += e.wt - old;
            }
            a.censored.remove(&e.oxide);
        }
        a
    }
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
    /// Corrections drawn by hand over the automatic classification, applied in order.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub hand_edits: Vec<HandEdit>,
    /// A point count over the region, the classical estimate beside the image analysis.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub point_count: Option<PointCount>,
}

/// A shape drawn on a micrograph, in image pixel coordinates (origin top-left, y down).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum EditShape {
    /// A closed polygon; a pixel is inside when its centre is (the region-of-interest rule).
    Polygon {
        /// Vertices (the last joins the first).
        vertices: Vec<[f64; 2]>,
    },
    /// A brush stroke: every pixel whose centre lies within `radius_px` of the polyline.
    Stroke {
        /// The path of the brush centre.
        points: Vec<[f64; 2]>,
        /// Brush radius, pixels.
        radius_px: f64,
    },
}

/// A hand correction of the classification: the measured pixels under a shape become a phase,
/// or (with no phase) go back to what the automatic classification made them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HandEdit {
    /// Where.
    pub shape: EditShape,
    /// The phase label the pixels become; `None` erases earlier edits under the shape.
    pub phase: Option<String>,
}

/// Where the points of a point count lie.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum PointGrid {
    /// A square grid of this spacing, pixels.
    Regular {
        /// Distance between neighbouring points, pixels.
        spacing_px: f64,
    },
    /// Points drawn uniformly at random over the region, reproducibly from the seed.
    Random {
        /// How many points.
        points: usize,
        /// Seed of the draw.
        seed: u64,
    },
}

/// The phase given to one point of a point count.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PointMark {
    /// Index of the point in the grid's order.
    pub point: usize,
    /// Its phase; `None` = not counted (a void, a crack, a boundary).
    pub phase: Option<String>,
}

/// A point count: the grid and the points marked so far.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PointCount {
    /// The grid.
    pub grid: PointGrid,
    /// Marked points, by point index.
    #[serde(default)]
    pub marks: Vec<PointMark>,
}

impl PointCount {
    /// The mark of a point, if it has one.
    pub fn mark(&self, point: usize) -> Option<&PointMark> {
        self.marks.iter().find(|m| m.point == point)
    }
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
