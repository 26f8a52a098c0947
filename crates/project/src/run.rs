//! Recompute a whole project: spot analyses → phase compositions, micrographs → modal
//! fractions, reintegration with Monte Carlo uncertainty, minimum crystallisation temperature and
//! the lamella pair's exsolution temperature.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use micrograph::control::Control;
use micrograph::load::{LoadOptions, load};
use micrograph::segment::segment;
use mineral::{
    Analysis, FeldsparIron, Oxide, PyroxeneIron, QualityLimits, SpotTable, feldspar_formula,
    pyroxene_formula, read_spot_file,
};
use reintegration::{
    BulkThermometer, ExcessVolume, GrainInput, IdealVolume, JobControl, MineralSystem, ModalInput,
    MonteCarloResult, MonteCarloSettings, PhaseInput, Reintegration, SolvusThermometer, Summary,
    monte_carlo, reintegrate,
};
use serde::Serialize;
use solvus::model::{Composition, SolutionModel};
use solvus::pyroxene::{PyroxeneTemperature, PyroxeneThermometer, pyroxene_temperature};
use solvus::thermometry::{AdjustmentOutcome, adjust_pair, pair_temperatures};
use solvus::units::{bar_from_kbar, celsius_from_kelvin};

use crate::document::{Grain, MicrographSpec, Project, Sample};
use crate::hand::{PointCountEstimate, apply_hand_edits, grid_points, point_count_estimate};

/// What went wrong with one grain (the rest of the project still runs).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GrainFailure {
    /// Sample id.
    pub sample: String,
    /// Grain id.
    pub grain: String,
    /// What was wrong, with the file or field.
    pub message: String,
}

/// A phase's composition from its spot analyses.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PhaseResult {
    /// Phase label.
    pub label: String,
    /// Spots used.
    pub spots_used: Vec<String>,
    /// Spots left out for quality warnings, with the first warning.
    pub spots_excluded: Vec<(String, String)>,
    /// Mean end-member fractions over the system's basis.
    pub mean: Vec<f64>,
    /// Standard deviation of the spots, per end-member (zero with one spot).
    pub sd: Vec<f64>,
    /// Mean oxide analysis, wt%.
    pub mean_oxides_wt: BTreeMap<Oxide, f64>,
}

/// A micrograph's modal result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MicrographResult {
    /// Label.
    pub label: String,
    /// Image path as resolved.
    pub path: PathBuf,
    /// Measured pixels (region minus voids and rims).
    pub measured_pixels: u64,
    /// Measured area, µm², when the pixel size is known.
    pub measured_area_um2: Option<f64>,
    /// Voids and rims as a fraction of the region.
    pub excluded_fraction: f64,
    /// Levels used.
    pub levels: Vec<u16>,
    /// Area fraction per phase (grain phase order).
    pub fractions: Vec<f64>,
    /// 95 % interval per phase.
    pub ci95: Vec<(f64, f64)>,
    /// Fractions with the level moved down and up by the sensitivity step, per phase.
    pub level_sensitivity: Option<Vec<(f64, f64)>>,
    /// Linear-unmixing estimate per phase, when available (two phases).
    pub unmixing_fractions: Option<Vec<f64>>,
    /// Shape of the minority phase (the lamellae).
    pub morphometry: Option<micrograph::morphometry::Morphometry>,
    /// Warnings from the image analysis.
    pub warnings: Vec<String>,
    /// What the hand edits changed, when there are any.
    pub hand_edits: Option<HandEditSummary>,
    /// The point count, when one was set up.
    pub point_count: Option<PointCountEstimate>,
}

/// What a micrograph's hand edits changed.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HandEditSummary {
    /// Number of edits.
    pub edits: usize,
    /// Measured pixels under an edit.
    pub edited_pixels: u64,
    /// Of those, pixels whose phase differs from the automatic classification.
    pub changed_pixels: u64,
}

/// A two-feldspar temperature of the lamella pair.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PairResult {
    /// T from Ab, Or, An activities, °C (`None` where that component has no root in range).
    pub temperatures_c: [Option<f64>; 3],
    /// Largest minus smallest, °C.
    pub spread_c: Option<f64>,
    /// Single temperature after adjusting the pair within the analytical uncertainty, °C.
    pub adjusted_c: Option<f64>,
    /// Whether the adjustment brought the temperatures together within the uncertainty.
    pub concordant: Option<bool>,
    /// Why a component has no temperature, if any has none.
    pub notes: Vec<String>,
}

/// Everything computed for one grain.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GrainResult {
    /// Sample id.
    pub sample: String,
    /// Grain id.
    pub grain: String,
    /// Mineral system.
    pub system: MineralSystem,
    /// Basis end-member symbols, in order.
    pub basis: Vec<String>,
    /// Phase compositions.
    pub phases: Vec<PhaseResult>,
    /// Micrographs.
    pub micrographs: Vec<MicrographResult>,
    /// Deterministic reintegration.
    pub reintegration: Reintegration,
    /// Monte Carlo result (draws included for figures).
    pub monte_carlo: MonteCarloResult,
    /// Lamella pair temperature (feldspar, two phases).
    pub pair: Option<PairResult>,
    /// Two-pyroxene temperature of the host-lamella pair (pyroxene, two phases).
    pub pyroxene_pair: Option<PyroxeneTemperature>,
    /// Notes and warnings for the user.
    pub notes: Vec<String>,
}

impl GrainResult {
    /// Minimum crystallisation temperature summary, °C.
    pub fn min_temperature(&self) -> Option<&Summary> {
        self.monte_carlo.min_temperature_c.as_ref()
    }
}

/// A whole run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunResult {
    /// Project name.
    pub project: String,
    /// Grains computed.
    pub grains: Vec<GrainResult>,
    /// Grains that could not be computed.
    pub failures: Vec<GrainFailure>,
}

/// Progress messages of a run.
pub trait RunProgress: Sync {
    /// A grain starts.
    fn grain(&self, index: usize, total: usize, sample: &str, grain: &str);
}

/// No progress reporting.
pub struct Quiet;

impl RunProgress for Quiet {
    fn grain(&self, _: usize, _: usize, _: &str, _: &str) {}
}

/// Run a whole project. Grains that fail are listed in [`RunResult::failures`].
///
/// # Errors
/// A message when the project as a whole cannot run (unknown model, unreadable analyses file).
pub fn run_project(
    project: &Project,
    project_file: &Path,
    progress: &dyn RunProgress,
    control: &JobControl,
) -> Result<RunResult, String> {
    let grains: Vec<(&Sample, &Grain)> = project
        .samples
        .iter()
        .flat_map(|s| s.grains.iter().map(move |g| (s, g)))
        .collect();
    run_grains(project, project_file, &grains, progress, control)
}

/// Run one grain of a project (sample and grain by index): the analyses files are read and the
/// grain computed as in [`run_project`]; the result lists that grain alone.
///
/// # Errors
/// As [`run_project`], and when there is no such grain.
pub fn run_one_grain(
    project: &Project,
    project_file: &Path,
    sample: usize,
    grain: usize,
    control: &JobControl,
) -> Result<RunResult, String> {
    let s = project
        .samples
        .get(sample)
        .ok_or_else(|| format!("there is no sample {}", sample + 1))?;
    let g = s
        .grains
        .get(grain)
        .ok_or_else(|| format!("sample '{}' has no grain {}", s.id, grain + 1))?;
    run_grains(project, project_file, &[(s, g)], &Quiet, control)
}

fn run_grains(
    project: &Project,
    project_file: &Path,
    grains: &[(&Sample, &Grain)],
    progress: &dyn RunProgress,
    control: &JobControl,
) -> Result<RunResult, String> {
    let model = SolutionModel::builtin(&project.settings.feldspar_model)
        .map_err(|e| format!("settings.feldspar_model: {e}"))?;
    let mut tables: Vec<(MineralSystem, SpotTable)> = Vec::new();
    for file in &project.analysis_files {
        let path = Project::resolve(project_file, &file.path);
        let table = read_spot_file(&path).map_err(|e| e.to_string())?;
        tables.push((file.system, table));
    }
    let mut out = RunResult {
        project: project.name.clone(),
        grains: Vec::new(),
        failures: Vec::new(),
    };
    for (index, (sample, grain)) in grains.iter().enumerate() {
        if control.cancel.load(std::sync::atomic::Ordering::Relaxed) {
            return Err("cancelled".into());
        }
        progress.grain(index, grains.len(), &sample.id, &grain.id);
        match run_grain(
            project,
            project_file,
            &model,
            &tables,
            sample,
            grain,
            control,
        ) {
            Ok(result) => out.grains.push(result),
            Err(message) => out.failures.push(GrainFailure {
                sample: sample.id.clone(),
                grain: grain.id.clone(),
                message,
            }),
        }
    }
    Ok(out)
}

/// The first quality warning of an analysis, if any (notes such as `n.d.` do not count).
fn first_warning(system: MineralSystem, analysis: &Analysis) -> Option<String> {
    let limits = QualityLimits::default();
    let flags = match system {
        MineralSystem::Feldspar => feldspar_formula(analysis, FeldsparIron::Ferric, &limits).flags,
        MineralSystem::Pyroxene => {
            pyroxene_formula(analysis, PyroxeneIron::ChargeBalance, &limits).flags
        }
    };
    flags.iter().find(|f| !f.is_note()).map(|f| f.message())
}

fn phase_from_spots(
    project: &Project,
    tables: &[(MineralSystem, SpotTable)],
    sample: &Sample,
    grain: &Grain,
    label: &str,
) -> Result<PhaseResult, String> {
    let mut used = Vec::new();
    let mut excluded = Vec::new();
    let mut fractions = Vec::new();
    let mut oxides: Vec<BTreeMap<Oxide, f64>> = Vec::new();
    for (system, table) in tables.iter().filter(|(s, _)| *s == grain.system) {
        for a in &table.analyses {
            if a.id.sample != sample.id || a.id.grain != grain.id || a.id.phase != label {
                continue;
            }
            if grain.spot_excluded(&a.id.spot) {
                excluded.push((a.id.spot.clone(), "left out by hand".into()));
                continue;
            }
            let edited;
            let a = if grain.spot_edits.is_empty() {
                a
            } else {
                edited = grain.edited_analysis(a);
                &edited
            };
            if project.settings.exclude_flagged_analyses
                && let Some(w) = first_warning(*system, a)
            {
                excluded.push((a.id.spot.clone(), w));
                continue;
            }
            let Some(x) = system.fractions_of(a) else {
                excluded.push((a.id.spot.clone(), "no usable cations".into()));
                continue;
            };
            used.push(a.id.spot.clone());
            fractions.push(x);
            oxides.push(a.oxides_wt.clone());
        }
    }
    if fractions.is_empty() {
        return Err(format!(
            "phase '{label}': no usable spot analysis with sample '{}', grain '{}', phase '{label}' ({} left out for quality warnings or by hand)",
            sample.id,
            grain.id,
            excluded.len()
        ));
    }
    let n = fractions.len() as f64;
    let k = fractions[0].len();
    let mean: Vec<f64> = (0..k)
        .map(|j| fractions.iter().map(|x| x[j]).sum::<f64>() / n)
        .collect();
    let sd: Vec<f64> = (0..k)
        .map(|j| {
            if fractions.len() < 2 {
                0.0
            } else {
                (fractions
                    .iter()
                    .map(|x| (x[j] - mean[j]).powi(2))
                    .sum::<f64>()
                    / (n - 1.0))
                    .sqrt()
            }
        })
        .collect();
    let mut mean_oxides_wt: BTreeMap<Oxide, f64> = BTreeMap::new();
    for o in &oxides {
        for (oxide, wt) in o.iter() {
            *mean_oxides_wt.entry(*oxide).or_default() += wt.max(0.0) / n;
        }
    }
    mean_oxides_wt.retain(|_, v| *v > 0.0);
    Ok(PhaseResult {
        label: label.to_string(),
        spots_used: used,
        spots_excluded: excluded,
        mean,
        sd,
        mean_oxides_wt,
    })
}

fn run_micrograph(
    project_file: &Path,
    grain: &Grain,
    spec: &MicrographSpec,
) -> Result<MicrographResult, String> {
    let path = Project::resolve(project_file, &spec.path);
    let place = format!("micrograph '{}'", spec.label);
    let image = load(&path, &LoadOptions::default()).map_err(|e| format!("{place}: {e}"))?;
    let plane = image.gray_plane();
    let region = spec
        .region
        .rasterise(plane.width, plane.height)
        .map_err(|e| format!("{place}: {e}"))?;
    let mut settings = spec.segmentation.clone();
    if let Some(size) = spec.pixel_size_um {
        settings.pixel_size = Some(
            micrograph::calibration::PixelSize::new(size).map_err(|e| format!("{place}: {e}"))?,
        );
    }
    if spec.class_phases.len() != settings.classes {
        return Err(format!(
            "{place}: class_phases names {} phases but the classification has {} classes",
            spec.class_phases.len(),
            settings.classes
        ));
    }
    let mut seg = segment(&plane, &region, &settings, &Control::none())
        .map_err(|e| format!("{place}: {e}"))?;
    let hand_edits = apply_hand_edits(
        &mut seg,
        &plane,
        &spec.hand_edits,
        &spec.class_phases,
        &settings,
    )
    .map_err(|e| format!("{place}: {e}"))?
    .map(|o| HandEditSummary {
        edits: spec.hand_edits.len(),
        edited_pixels: o.edited_pixels,
        changed_pixels: o.changed_pixels,
    });
    let point_count = match &spec.point_count {
        Some(count) => {
            let points = grid_points(&count.grid, &spec.region, plane.width, plane.height)
                .map_err(|e| format!("{place}: point count: {e}"))?;
            let labels: Vec<String> = grain.phases.iter().map(|p| p.label.clone()).collect();
            Some(point_count_estimate(count, &labels, points.len()))
        }
        None => None,
    };
    let n = grain.phases.len();
    let phase_index = |label: &str| grain.phases.iter().position(|p| p.label == label);
    let mut fractions = vec![0.0; n];
    let mut lo = vec![0.0; n];
    let mut hi = vec![0.0; n];
    let mut unmix = seg.unmixing.as_ref().map(|_| vec![0.0; n]);
    for (class, label) in spec.class_phases.iter().enumerate() {
        let i = phase_index(label).ok_or_else(|| {
            format!(
                "{place}: class {} is assigned to '{label}', which is not a phase of the grain",
                class + 1
            )
        })?;
        let p = &seg.phases[class];
        fractions[i] += p.area_fraction;
        let [a, b] = p
            .area_fraction_ci95
            .unwrap_or([p.area_fraction, p.area_fraction]);
        lo[i] += a;
        hi[i] += b;
        if let (Some(u), Some(m)) = (unmix.as_mut(), seg.unmixing.as_ref()) {
            u[i] += m.area_fraction[class.min(1)];
        }
    }
    // Sensitivity to the level (one level between two phases): fractions at level -/+ step.
    let level_sensitivity = (seg.sensitivity.minus.len() == 1).then(|| {
        let mut pairs = vec![(0.0, 0.0); n];
        for (class, label) in spec.class_phases.iter().enumerate() {
            if let Some(i) = phase_index(label) {
                pairs[i].0 += seg.sensitivity.minus[0][class];
                pairs[i].1 += seg.sensitivity.plus[0][class];
            }
        }
        pairs
    });
    let mut warnings = seg.warnings.clone();
    // Shape of the minority phase (the lamellae): width, spacing, and a warning when they are
    // too thin for edge blur to leave the area fraction reliable.
    let minority = seg
        .phases
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.area_fraction.total_cmp(&b.1.area_fraction))
        .map(|(class, _)| class as u8);
    let morphometry = minority.and_then(|class| {
        micrograph::morphometry::morphometry(
            &seg.class_map,
            seg.width,
            seg.height,
            class,
            settings.pixel_size,
            &Control::none(),
        )
        .ok()
    });
    if let Some(m) = &morphometry {
        warnings.extend(m.warnings.iter().cloned());
    }
    if seg.unmixing.as_ref().is_some_and(|u| u.disagrees) {
        warnings.push("the classification and linear-unmixing fractions disagree beyond their intervals: check the levels and the edge blur".to_string());
    }
    Ok(MicrographResult {
        label: spec.label.clone(),
        path,
        measured_pixels: seg.measured_pixels,
        measured_area_um2: spec
            .pixel_size_um
            .map(|s| seg.measured_pixels as f64 * s * s),
        excluded_fraction: seg.excluded_fraction,
        levels: seg.levels.clone(),
        fractions,
        ci95: lo.into_iter().zip(hi).collect(),
        level_sensitivity,
        unmixing_fractions: unmix,
        morphometry,
        warnings,
        hand_edits,
        point_count,
    })
}

fn pair_result(
    model: &SolutionModel,
    a: &[f64],
    b: &[f64],
    p_kbar: f64,
    unc: f64,
) -> Option<PairResult> {
    let c1 = Composition::new(a[0], a[1], a[2]).ok()?;
    let c2 = Composition::new(b[0], b[1], b[2]).ok()?;
    let pt = pair_temperatures(model, &c1, &c2, bar_from_kbar(p_kbar)).ok()?;
    let mut notes = Vec::new();
    let temperatures_c = pt
        .components()
        .map(|c| c.temperature_k().map(celsius_from_kelvin));
    for (name, c) in ["Ab", "Or", "An"].iter().zip(pt.components()) {
        if let solvus::thermometry::ComponentTemperature::NoRootInRange { reason } = c {
            notes.push(format!("T_{name}: {reason}"));
        }
    }
    let (adjusted_c, concordant) = match adjust_pair(model, &c1, &c2, bar_from_kbar(p_kbar), unc) {
        Ok(AdjustmentOutcome::Adjusted(adj)) => (
            Some(celsius_from_kelvin(adj.temperature_k)),
            Some(adj.concordant_within_uncertainty),
        ),
        _ => (None, None),
    };
    Some(PairResult {
        temperatures_c,
        spread_c: pt.spread_k,
        adjusted_c,
        concordant,
        notes,
    })
}

fn run_grain(
    project: &Project,
    project_file: &Path,
    model: &SolutionModel,
    tables: &[(MineralSystem, SpotTable)],
    sample: &Sample,
    grain: &Grain,
    control: &JobControl,
) -> Result<GrainResult, String> {
    let settings = &project.settings;
    let phases: Vec<PhaseResult> = grain
        .phases
        .iter()
        .map(|p| phase_from_spots(project, tables, sample, grain, &p.label))
        .collect::<Result<_, _>>()?;
    if grain.micrographs.is_empty() {
        return Err("the grain has no micrograph".into());
    }
    let micrographs: Vec<MicrographResult> = grain
        .micrographs
        .iter()
        .map(|m| run_micrograph(project_file, grain, m))
        .collect::<Result<_, _>>()?;
    let input = GrainInput {
        label: format!("{}/{}", sample.id, grain.id),
        system: grain.system,
        phases: grain
            .phases
            .iter()
            .zip(&phases)
            .map(|(spec, p)| PhaseInput {
                label: p.label.clone(),
                fractions: p.mean.clone(),
                spots: vec![],
                sigma: p
                    .sd
                    .iter()
                    .map(|s| match settings.composition_spread {
                        reintegration::CompositionSpread::StandardError => {
                            s / (p.spots_used.len() as f64).sqrt()
                        }
                        reintegration::CompositionSpread::Scatter => *s,
                    })
                    .collect(),
                oxides_wt: Some(p.mean_oxides_wt.clone()),
                density_g_cm3: spec.density_g_cm3,
            })
            .collect(),
        micrographs: micrographs
            .iter()
            .map(|m| ModalInput {
                label: m.label.clone(),
                measured_area: m.measured_area_um2.unwrap_or(m.measured_pixels as f64),
                fractions: m.fractions.clone(),
                ci95: m.ci95.clone(),
                level_sensitivity: m.level_sensitivity.clone(),
            })
            .collect(),
    };
    let excess: &dyn ExcessVolume = match grain.system {
        MineralSystem::Feldspar => model,
        MineralSystem::Pyroxene => &IdealVolume,
    };
    let reintegrated = reintegrate(&input, &settings.volumes, excess).map_err(|e| e.to_string())?;
    let thermometer: Option<Box<dyn BulkThermometer>> = match grain.system {
        MineralSystem::Feldspar => Some(Box::new(SolvusThermometer {
            model: model.clone(),
        })),
        MineralSystem::Pyroxene => {
            let id = &settings.pyroxene_bulk_thermometer;
            let thermometer = PyroxeneThermometer::from_id(id)
                .filter(|t| !t.needs_pair())
                .ok_or_else(|| {
                    format!("settings.pyroxene_bulk_thermometer: '{id}' is not a clinopyroxene-only thermometer (use putirka2008-32d)")
                })?;
            let bulk = Analysis {
                oxides_wt: reintegrated.bulk_oxides_wt.clone(),
                ..Analysis::default()
            };
            crate::px::thermometry_cations(&bulk).map(|reference| {
                Box::new(crate::px::PyroxeneBulkThermometer {
                    thermometer,
                    reference,
                }) as Box<dyn BulkThermometer>
            })
        }
    };
    let mc_settings = MonteCarloSettings {
        draws: settings.draws,
        seed: settings.seed,
        pressure_kbar: settings.pressure_kbar,
        pressure_sigma_kbar: settings.pressure_sigma_kbar,
        volume_rel_sigma: settings.volume_rel_sigma,
        composition_spread: settings.composition_spread,
        temperatures: thermometer.is_some(),
    };
    let mc = monte_carlo(
        &input,
        &settings.volumes,
        excess,
        thermometer.as_deref(),
        &mc_settings,
        control,
    )
    .map_err(|e| e.to_string())?;
    let mut notes = reintegrated.notes.clone();
    for p in &phases {
        for (spot, why) in &p.spots_excluded {
            notes.push(format!("spot {spot} ({}) left out: {why}", p.label));
        }
    }
    for m in &micrographs {
        for w in &m.warnings {
            notes.push(format!("{}: {w}", m.label));
        }
        if let Some(h) = &m.hand_edits {
            notes.push(format!(
                "{}: {} hand edits cover {} measured px, {} of them changed from the automatic classification",
                m.label, h.edits, h.edited_pixels, h.changed_pixels
            ));
        }
    }
    let o = mc.outcomes;
    if thermometer.is_some() && o.found < mc.temperature_draws.len() {
        notes.push(format!(
            "minimum temperature found in {} of {} draws ({} stable at every temperature, {} above the model's range, {} refused{})",
            o.found,
            mc.temperature_draws.len(),
            o.stable_at_every_temperature,
            o.above_range,
            o.refused,
            mc.first_refusal.as_ref().map(|r| format!(": {r}")).unwrap_or_default()
        ));
    }
    let pyroxene_pair = if grain.system == MineralSystem::Pyroxene && phases.len() == 2 {
        let result = pyroxene_pair_temperature(
            &settings.pyroxene_pair_thermometer,
            &phases,
            settings.pressure_kbar,
        );
        match result {
            Ok(t) => {
                notes.extend(t.warnings.iter().map(|w| format!("pyroxene pair: {w}")));
                Some(t)
            }
            Err(e) => {
                notes.push(format!("pyroxene pair: no temperature: {e}"));
                None
            }
        }
    } else {
        None
    };
    if grain.system == MineralSystem::Pyroxene {
        notes.push(format!(
            "minimum crystallisation temperature from {} on the reintegrated clinopyroxene (published SEE {} C, not included in the interval)",
            settings.pyroxene_bulk_thermometer,
            PyroxeneThermometer::from_id(&settings.pyroxene_bulk_thermometer).map_or(0.0, |t| t.see_c())
        ));
    }
    let pair = (grain.system == MineralSystem::Feldspar && phases.len() == 2)
        .then(|| {
            pair_result(
                model,
                &phases[0].mean,
                &phases[1].mean,
                settings.pressure_kbar,
                settings.pair_uncertainty,
            )
        })
        .flatten();
    Ok(GrainResult {
        sample: sample.id.clone(),
        grain: grain.id.clone(),
        system: grain.system,
        basis: grain
            .system
            .basis()
            .iter()
            .map(|e| e.symbol().to_string())
            .collect(),
        phases,
        micrographs,
        reintegration: reintegrated,
        monte_carlo: mc,
        pair,
        pyroxene_pair,
        notes,
    })
}

/// The two-pyroxene temperature of a grain's pair: the phase richer in Ca is the
/// clinopyroxene.
fn pyroxene_pair_temperature(
    id: &str,
    phases: &[PhaseResult],
    pressure_kbar: f64,
) -> Result<PyroxeneTemperature, String> {
    let thermometer = PyroxeneThermometer::from_id(id)
        .filter(|t| t.needs_pair())
        .ok_or_else(|| {
            format!("settings.pyroxene_pair_thermometer: '{id}' is not a two-pyroxene thermometer")
        })?;
    let cations: Vec<_> = phases
        .iter()
        .map(|p| {
            let a = Analysis {
                oxides_wt: p.mean_oxides_wt.clone(),
                ..Analysis::default()
            };
            crate::px::thermometry_cations(&a)
                .ok_or_else(|| format!("phase '{}' has no usable oxides", p.label))
        })
        .collect::<Result<_, _>>()?;
    let (cpx, opx) = if cations[0].ca >= cations[1].ca {
        (&cations[0], &cations[1])
    } else {
        (&cations[1], &cations[0])
    };
    pyroxene_temperature(thermometer, cpx, Some(opx), pressure_kbar).map_err(|e| e.to_string())
}
