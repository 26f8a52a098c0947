//! Every edit of the document is a [`Command`]. Panels emit commands while drawing; the
//! application applies them in one place after the frame is laid out, which keeps the document
//! consistent within a frame and gives undo and redo (the document keeps the state before each
//! command).

use std::path::PathBuf;

use micrograph::roi::Polygon;
use micrograph::segment::{LevelChoice, VoidDetection};
use mineral::Oxide;
use project::{
    AnalysisFile, FileRef, Grain, HandEdit, MicrographSpec, PointGrid, PointMark, Project, SpotEdit,
};
use reintegration::{CompositionSpread, MineralSystem, VolumeSettings};

use crate::document::{GrainRef, MicrographRef};

/// The most grey classes a micrograph may be split into here (the classifier takes 16; more
/// than six is rarely useful for an exsolved grain and runs out of distinct overlay colours).
pub const MAX_CLASSES: usize = 6;

/// Which list of region polygons.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum RegionList {
    /// Polygons whose union is the region.
    Include,
    /// Polygons cut out of it.
    Exclude,
}

impl RegionList {
    /// "include" or "exclude".
    pub fn name(self) -> &'static str {
        match self {
            RegionList::Include => "include",
            RegionList::Exclude => "exclude",
        }
    }
}

/// How the levels are found automatically.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AutoLevels {
    /// Otsu's method (multi-level Otsu above two phases).
    Otsu,
    /// Otsu, then moved to the midpoints between the phase modes.
    OtsuMidpoint,
}

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
    /// Set a pyroxene thermometer: the two-pyroxene one for lamella pairs (`pair`), or the
    /// clinopyroxene-only one for the reintegrated bulk.
    SetPyroxeneThermometer {
        /// The pair thermometer (else the bulk one).
        pair: bool,
        /// Thermometer id (`bk1990`, `putirka2008-32d`, ...).
        id: String,
    },
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
    /// Leave one spot of a grain out of the computation, or take it back in.
    SetSpotExcluded {
        /// The grain.
        grain: GrainRef,
        /// Spot id.
        spot: String,
        /// Leave it out.
        excluded: bool,
    },
    /// Correct one value of a spot analysis (`None`: back to the file's value).
    SetSpotValue {
        /// The grain.
        grain: GrainRef,
        /// Spot id.
        spot: String,
        /// The oxide.
        oxide: Oxide,
        /// The value to use, wt%.
        wt: Option<f64>,
    },
    /// Add a file of spot analyses (path relative to the project file where possible).
    AddAnalysisFile {
        /// The file.
        path: PathBuf,
        /// Mineral system of its analyses.
        system: MineralSystem,
    },
    /// Remove a file of spot analyses from the project (the file itself stays).
    RemoveAnalysisFile {
        /// Its index in the project's list.
        index: usize,
    },
    /// Set the number of grey classes (phases) of a micrograph; the levels become automatic.
    SetClasses {
        /// The micrograph.
        at: MicrographRef,
        /// Number of classes.
        classes: usize,
    },
    /// Find the levels automatically by this method.
    SetAutoLevels {
        /// The micrograph.
        at: MicrographRef,
        /// The method.
        method: AutoLevels,
    },
    /// How voids (cracks, pores, epoxy) are found.
    SetVoids {
        /// The micrograph.
        at: MicrographRef,
        /// Off, automatic, or at or below a grey level.
        voids: VoidDetection,
    },
    /// Smallest feature kept by the clean-up, pixels.
    SetMinFeature {
        /// The micrograph.
        at: MicrographRef,
        /// Features smaller than this merge into their surroundings (0 or 1: off).
        min_feature_px: u32,
    },
    /// Say which phase the pixels of every grey class are.
    SetClassPhases {
        /// The micrograph.
        at: MicrographRef,
        /// Phase label per class, dark to bright.
        phases: Vec<String>,
    },
    /// Add a polygon to the region of interest.
    AddRegionPolygon {
        /// The micrograph.
        at: MicrographRef,
        /// Include or exclude.
        list: RegionList,
        /// Vertices, image pixels.
        vertices: Vec<[f64; 2]>,
    },
    /// Move a vertex of a region polygon.
    MoveRegionVertex {
        /// The micrograph.
        at: MicrographRef,
        /// Include or exclude.
        list: RegionList,
        /// Polygon index.
        polygon: usize,
        /// Vertex index.
        vertex: usize,
        /// New position, image pixels.
        to: [f64; 2],
    },
    /// Insert a vertex into a region polygon before `vertex`.
    InsertRegionVertex {
        /// The micrograph.
        at: MicrographRef,
        /// Include or exclude.
        list: RegionList,
        /// Polygon index.
        polygon: usize,
        /// Index the new vertex takes.
        vertex: usize,
        /// Position, image pixels.
        point: [f64; 2],
    },
    /// Delete a vertex of a region polygon (a triangle loses the whole polygon).
    DeleteRegionVertex {
        /// The micrograph.
        at: MicrographRef,
        /// Include or exclude.
        list: RegionList,
        /// Polygon index.
        polygon: usize,
        /// Vertex index.
        vertex: usize,
    },
    /// Delete a region polygon.
    DeleteRegionPolygon {
        /// The micrograph.
        at: MicrographRef,
        /// Include or exclude.
        list: RegionList,
        /// Polygon index.
        polygon: usize,
    },
    /// Add a hand edit over the classification.
    AddHandEdit {
        /// The micrograph.
        at: MicrographRef,
        /// The edit.
        edit: HandEdit,
    },
    /// Remove a hand edit.
    RemoveHandEdit {
        /// The micrograph.
        at: MicrographRef,
        /// Its index (drawing order).
        index: usize,
    },
    /// Set up a point count with this grid, or remove it (`None`). Marks are kept only when the
    /// grid stays the same.
    SetPointGrid {
        /// The micrograph.
        at: MicrographRef,
        /// The grid.
        grid: Option<PointGrid>,
    },
    /// Give a point of the point count a phase (`Some(None)`: not counted), or clear its mark
    /// (`None`).
    MarkPoint {
        /// The micrograph.
        at: MicrographRef,
        /// Point index.
        point: usize,
        /// The mark.
        mark: Option<Option<String>>,
    },
    /// End-member volume table and structural state.
    SetVolumes(VolumeSettings),
    /// How spot scatter sets the composition uncertainty of the Monte Carlo draws.
    SetCompositionSpread(CompositionSpread),
    /// A density entered for a phase, g/cm3 (`None`: molar mass over molar volume).
    SetPhaseDensity {
        /// The grain.
        grain: GrainRef,
        /// Phase index.
        phase: usize,
        /// Density, g/cm3.
        density_g_cm3: Option<f64>,
    },
    /// Point a micrograph or analyses file entry at the file's new place (a file moved or
    /// renamed since the project was saved). Stored relative to the project's folder when the
    /// file is inside it.
    RelinkFile {
        /// The project file the stored path is relative to.
        project_file: PathBuf,
        /// Which entry.
        which: FileRef,
        /// The file's new place.
        new_path: PathBuf,
    },
}

fn micrograph(project: &mut Project, at: MicrographRef) -> Result<&mut MicrographSpec, String> {
    project
        .samples
        .get_mut(at.grain.sample)
        .and_then(|s| s.grains.get_mut(at.grain.grain))
        .and_then(|g| g.micrographs.get_mut(at.micrograph))
        .ok_or_else(|| "that micrograph is no longer in the project".to_string())
}

fn grain(project: &mut Project, at: GrainRef) -> Result<&mut Grain, String> {
    project
        .samples
        .get_mut(at.sample)
        .and_then(|s| s.grains.get_mut(at.grain))
        .ok_or_else(|| "that grain is no longer in the project".to_string())
}

fn polygons(spec: &mut MicrographSpec, list: RegionList) -> &mut Vec<Polygon> {
    match list {
        RegionList::Include => &mut spec.region.include,
        RegionList::Exclude => &mut spec.region.exclude,
    }
}

fn polygon(
    spec: &mut MicrographSpec,
    list: RegionList,
    index: usize,
) -> Result<&mut Polygon, String> {
    polygons(spec, list)
        .get_mut(index)
        .ok_or_else(|| format!("there is no {} polygon {}", list.name(), index + 1))
}

fn finite_point(p: [f64; 2]) -> Result<(), String> {
    if p[0].is_finite() && p[1].is_finite() {
        Ok(())
    } else {
        Err(format!(
            "point ({}, {}) is not a finite position",
            p[0], p[1]
        ))
    }
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
            Command::SetPyroxeneThermometer { pair, id } => format!(
                "{} thermometer {id}",
                if *pair {
                    "pyroxene pair"
                } else {
                    "pyroxene bulk"
                }
            ),
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
            Command::SetSpotExcluded { spot, excluded, .. } => {
                if *excluded {
                    format!("leave out spot {spot}")
                } else {
                    format!("use spot {spot}")
                }
            }
            Command::SetSpotValue {
                spot, oxide, wt, ..
            } => match wt {
                Some(v) => format!("{spot} {} = {v} wt %", oxide.formula()),
                None => format!("{spot} {} from the file", oxide.formula()),
            },
            Command::AddAnalysisFile { path, .. } => {
                format!("add analyses {}", path.display())
            }
            Command::RemoveAnalysisFile { .. } => "remove an analyses file".into(),
            Command::SetClasses { classes, .. } => format!("{classes} phases"),
            Command::SetAutoLevels { method, .. } => match method {
                AutoLevels::Otsu => "Otsu levels".into(),
                AutoLevels::OtsuMidpoint => "Otsu levels at mode midpoints".into(),
            },
            Command::SetVoids { voids, .. } => match voids {
                VoidDetection::Off => "no void detection".into(),
                VoidDetection::AtOrBelow(g) => format!("voids at or below {g}"),
                _ => "automatic voids".into(),
            },
            Command::SetMinFeature { min_feature_px, .. } => {
                format!("clean-up below {min_feature_px} px")
            }
            Command::SetClassPhases { phases, .. } => {
                format!("classes are {}", phases.join(", "))
            }
            Command::AddRegionPolygon { list, .. } => format!("add {} polygon", list.name()),
            Command::MoveRegionVertex { list, .. } => format!("move {} vertex", list.name()),
            Command::InsertRegionVertex { list, .. } => format!("add {} vertex", list.name()),
            Command::DeleteRegionVertex { list, .. } => {
                format!("delete {} vertex", list.name())
            }
            Command::DeleteRegionPolygon { list, .. } => {
                format!("delete {} polygon", list.name())
            }
            Command::AddHandEdit { edit, .. } => {
                let shape = match edit.shape {
                    project::EditShape::Polygon { .. } => "polygon",
                    project::EditShape::Stroke { .. } => "brush stroke",
                };
                match &edit.phase {
                    Some(p) => format!("{shape} as {p}"),
                    None => format!("erasing {shape}"),
                }
            }
            Command::RemoveHandEdit { index, .. } => format!("remove hand edit {}", index + 1),
            Command::SetPointGrid { grid, .. } => match grid {
                Some(PointGrid::Regular { spacing_px }) => {
                    format!("point grid every {spacing_px} px")
                }
                Some(PointGrid::Random { points, .. }) => format!("{points} random points"),
                None => "remove the point count".into(),
            },
            Command::MarkPoint { point, mark, .. } => match mark {
                Some(Some(p)) => format!("point {} is {p}", point + 1),
                Some(None) => format!("point {} not counted", point + 1),
                None => format!("clear point {}", point + 1),
            },
            Command::SetVolumes(v) => format!("volumes {:?}, {:?}", v.dataset, v.state),
            Command::SetCompositionSpread(s) => format!("composition spread {s:?}"),
            Command::SetPhaseDensity { density_g_cm3, .. } => match density_g_cm3 {
                Some(d) => format!("density {d} g/cm3"),
                None => "density from molar volume".into(),
            },
            Command::RelinkFile { new_path, .. } => format!("relink to {}", new_path.display()),
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
            Command::SetVoids {
                at,
                voids: VoidDetection::AtOrBelow(_),
            } => Some(format!("void level {at:?}")),
            Command::SetMinFeature { at, .. } => Some(format!("min feature {at:?}")),
            Command::SetPhaseDensity { grain, phase, .. } => {
                Some(format!("density {grain:?} {phase}"))
            }
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
            Command::SetPyroxeneThermometer { pair, id } => {
                use solvus::pyroxene::PyroxeneThermometer;
                let Some(t) = PyroxeneThermometer::from_id(&id) else {
                    return Err(format!("unknown pyroxene thermometer '{id}'"));
                };
                if pair && !t.needs_pair() {
                    return Err(format!(
                        "{id} takes a clinopyroxene alone; a lamella pair needs a two-pyroxene thermometer"
                    ));
                }
                if !pair && t.needs_pair() {
                    return Err(format!(
                        "{id} needs an orthopyroxene; the reintegrated bulk needs a clinopyroxene-only thermometer"
                    ));
                }
                if pair {
                    project.settings.pyroxene_pair_thermometer = id;
                } else {
                    project.settings.pyroxene_bulk_thermometer = id;
                }
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
            Command::SetSpotExcluded {
                grain: at,
                spot,
                excluded,
            } => {
                let g = grain(project, at)?;
                g.excluded_spots.retain(|s| *s != spot);
                if excluded {
                    g.excluded_spots.push(spot);
                }
            }
            Command::SetSpotValue {
                grain: at,
                spot,
                oxide,
                wt,
            } => {
                if let Some(v) = wt
                    && !(v.is_finite() && (0.0..=100.0).contains(&v))
                {
                    return Err(format!(
                        "{} {v} wt % must be between 0 and 100",
                        oxide.formula()
                    ));
                }
                let g = grain(project, at)?;
                g.spot_edits
                    .retain(|e| !(e.spot == spot && e.oxide == oxide));
                if let Some(wt) = wt {
                    g.spot_edits.push(SpotEdit { spot, oxide, wt });
                }
            }
            Command::AddAnalysisFile { path, system } => {
                if project
                    .analysis_files
                    .iter()
                    .any(|f| f.path == path && f.system == system)
                {
                    return Err(format!("{} is already in the project", path.display()));
                }
                project.analysis_files.push(AnalysisFile { path, system });
            }
            Command::RemoveAnalysisFile { index } => {
                if index >= project.analysis_files.len() {
                    return Err("that analyses file is no longer in the project".into());
                }
                project.analysis_files.remove(index);
            }
            Command::SetClasses { at, classes } => {
                if !(2..=MAX_CLASSES).contains(&classes) {
                    return Err(format!(
                        "{classes} phases: choose between 2 and {MAX_CLASSES}"
                    ));
                }
                let m = micrograph(project, at)?;
                m.segmentation.classes = classes;
                if let LevelChoice::Manual(_) = m.segmentation.levels {
                    m.segmentation.levels = LevelChoice::OtsuMidpoint;
                }
                if m.segmentation.open_close_px > 0 && classes != 2 {
                    m.segmentation.open_close_px = 0;
                }
                // New classes (brighter) take the brightest class's phase until assigned.
                let last = m.class_phases.last().cloned().unwrap_or_default();
                m.class_phases.resize(classes, last);
            }
            Command::SetAutoLevels { at, method } => {
                micrograph(project, at)?.segmentation.levels = match method {
                    AutoLevels::Otsu => LevelChoice::Otsu,
                    AutoLevels::OtsuMidpoint => LevelChoice::OtsuMidpoint,
                };
            }
            Command::SetVoids { at, voids } => {
                micrograph(project, at)?.segmentation.voids = voids;
            }
            Command::SetMinFeature { at, min_feature_px } => {
                if min_feature_px > 10_000 {
                    return Err(format!(
                        "clean-up below {min_feature_px} px would erase whole lamellae; use at most 10000"
                    ));
                }
                micrograph(project, at)?.segmentation.min_feature_px = min_feature_px;
            }
            Command::SetClassPhases { at, phases } => {
                let labels: Vec<String> = project
                    .samples
                    .get(at.grain.sample)
                    .and_then(|s| s.grains.get(at.grain.grain))
                    .map(|g| g.phases.iter().map(|p| p.label.clone()).collect())
                    .unwrap_or_default();
                if let Some(bad) = phases.iter().find(|p| !labels.contains(p)) {
                    return Err(format!("'{bad}' is not a phase of the grain"));
                }
                let m = micrograph(project, at)?;
                if phases.len() != m.segmentation.classes {
                    return Err(format!(
                        "{} classes need {} phase names, got {}",
                        m.segmentation.classes,
                        m.segmentation.classes,
                        phases.len()
                    ));
                }
                m.class_phases = phases;
            }
            Command::AddRegionPolygon { at, list, vertices } => {
                if vertices.len() < 3 {
                    return Err(format!(
                        "a polygon needs at least 3 vertices, has {}",
                        vertices.len()
                    ));
                }
                for p in &vertices {
                    finite_point(*p)?;
                }
                polygons(micrograph(project, at)?, list).push(Polygon(vertices));
            }
            Command::MoveRegionVertex {
                at,
                list,
                polygon: index,
                vertex,
                to,
            } => {
                finite_point(to)?;
                let p = polygon(micrograph(project, at)?, list, index)?;
                *p.0.get_mut(vertex).ok_or("there is no such vertex")? = to;
            }
            Command::InsertRegionVertex {
                at,
                list,
                polygon: index,
                vertex,
                point,
            } => {
                finite_point(point)?;
                let p = polygon(micrograph(project, at)?, list, index)?;
                if vertex > p.0.len() {
                    return Err("there is no such vertex".into());
                }
                p.0.insert(vertex, point);
            }
            Command::DeleteRegionVertex {
                at,
                list,
                polygon: index,
                vertex,
            } => {
                let m = micrograph(project, at)?;
                let p = polygon(m, list, index)?;
                if vertex >= p.0.len() {
                    return Err("there is no such vertex".into());
                }
                if p.0.len() <= 3 {
                    polygons(m, list).remove(index);
                } else {
                    p.0.remove(vertex);
                }
            }
            Command::DeleteRegionPolygon {
                at,
                list,
                polygon: index,
            } => {
                let m = micrograph(project, at)?;
                polygon(m, list, index)?;
                polygons(m, list).remove(index);
            }
            Command::AddHandEdit { at, edit } => {
                project::hand::check_shape(&edit.shape)?;
                let m = micrograph(project, at)?;
                if let Some(label) = &edit.phase
                    && !m.class_phases.contains(label)
                {
                    return Err(format!(
                        "no grey class of this micrograph is '{label}': assign a class to it first"
                    ));
                }
                m.hand_edits.push(edit);
            }
            Command::RemoveHandEdit { at, index } => {
                let m = micrograph(project, at)?;
                if index >= m.hand_edits.len() {
                    return Err("that hand edit is no longer there".into());
                }
                m.hand_edits.remove(index);
            }
            Command::SetPointGrid { at, grid } => {
                match &grid {
                    Some(PointGrid::Regular { spacing_px })
                        if spacing_px.is_nan() || *spacing_px < 1.0 =>
                    {
                        return Err(format!(
                            "grid spacing {spacing_px} px must be at least 1 px"
                        ));
                    }
                    Some(PointGrid::Random { points, .. })
                        if *points == 0 || *points > project::hand::MAX_POINTS =>
                    {
                        return Err(format!(
                            "{points} points: choose between 1 and {}",
                            project::hand::MAX_POINTS
                        ));
                    }
                    _ => {}
                }
                let m = micrograph(project, at)?;
                m.point_count = match (grid, m.point_count.take()) {
                    (Some(g), Some(old)) if old.grid == g => Some(old),
                    (Some(g), _) => Some(project::PointCount {
                        grid: g,
                        marks: Vec::new(),
                    }),
                    (None, _) => None,
                };
            }
            Command::MarkPoint { at, point, mark } => {
                if let Some(Some(label)) = &mark {
                    let known = project
                        .samples
                        .get(at.grain.sample)
                        .and_then(|s| s.grains.get(at.grain.grain))
                        .is_some_and(|g| g.phases.iter().any(|p| &p.label == label));
                    if !known {
                        return Err(format!("'{label}' is not a phase of the grain"));
                    }
                }
                let m = micrograph(project, at)?;
                let count = m
                    .point_count
                    .as_mut()
                    .ok_or("this micrograph has no point count")?;
                count.marks.retain(|k| k.point != point);
                if let Some(phase) = mark {
                    count.marks.push(PointMark { point, phase });
                    count.marks.sort_by_key(|k| k.point);
                }
            }
            Command::SetVolumes(v) => project.settings.volumes = v,
            Command::SetCompositionSpread(s) => project.settings.composition_spread = s,
            Command::SetPhaseDensity {
                grain: at,
                phase,
                density_g_cm3,
            } => {
                if let Some(d) = density_g_cm3
                    && !(d.is_finite() && d > 0.5 && d < 10.0)
                {
                    return Err(format!(
                        "density {d} g/cm3 is not a mineral's (expected 0.5-10)"
                    ));
                }
                let g = grain(project, at)?;
                g.phases
                    .get_mut(phase)
                    .ok_or("that phase is no longer in the grain")?
                    .density_g_cm3 = density_g_cm3;
            }
            Command::RelinkFile {
                project_file,
                which,
                new_path,
            } => {
                project::relink_file(project, &project_file, which, &new_path)
                    .map_err(|e| e.to_string())?;
            }
        }
        Ok(())
    }
}
