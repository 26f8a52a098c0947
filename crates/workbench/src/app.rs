//! The application: document, results, running jobs and the view state of each panel, drawn
//! once a frame by [`Workbench::ui_root`], with the frame's actions applied afterwards.

use std::path::PathBuf;
use std::sync::Arc;

use egui::{Key, KeyboardShortcut, Modifiers, Ui};
use mineral::SpotTable;
use project::{FileRef, GrainFailure, GrainResult, MissingFile, RunResult};
use reintegration::MineralSystem;

use crate::command::Command;
use crate::document::{Document, GrainRef, MicrographRef};
use crate::figures::{FigureJob, FigureSet};
use crate::files::{self, PathPrompt, PromptPurpose};
use crate::jobs::{ClassData, ImageData, ImageJob, RunJob, image_key};
use crate::panels;
use crate::stages;

/// How the workbench starts.
#[derive(Debug, Clone, Default)]
pub struct WorkbenchOptions {
    /// The project to open (none: an empty project).
    pub project: Option<PathBuf>,
    /// Remember opened projects in the user's recent list (off for tests).
    pub remember_recent: bool,
    /// Compute the project as soon as it is open.
    pub run_on_open: bool,
}

impl WorkbenchOptions {
    /// An empty project, nothing remembered, nothing run.
    pub fn empty() -> Self {
        Self::default()
    }

    /// The bundled demo, nothing remembered.
    pub fn demo(run_on_open: bool) -> Self {
        WorkbenchOptions {
            project: Some(crate::demo_project_path()),
            remember_recent: false,
            run_on_open,
        }
    }
}

/// The five stages of a grain's route.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Stage {
    /// The micrograph: region, pixel values, scale.
    Image,
    /// Grey levels, phase classes and their area fractions.
    Phases,
    /// Spot analyses of each phase.
    Analyses,
    /// Reintegration into the bulk composition.
    Bulk,
    /// Solvus, minimum crystallisation and pair temperatures.
    Temperature,
}

impl Stage {
    /// All stages, in route order.
    pub const ALL: [Stage; 5] = [
        Stage::Image,
        Stage::Phases,
        Stage::Analyses,
        Stage::Bulk,
        Stage::Temperature,
    ];

    /// The stage's name on screen.
    pub fn label(self) -> &'static str {
        match self {
            Stage::Image => "Image",
            Stage::Phases => "Phases",
            Stage::Analyses => "Analyses",
            Stage::Bulk => "Bulk",
            Stage::Temperature => "Temperature",
        }
    }
}

/// Something the user asked for during a frame; applied after drawing.
#[derive(Debug, Clone, PartialEq)]
pub enum Action {
    /// An edit of the document.
    Edit(Command),
    /// Select a grain.
    SelectGrain(GrainRef),
    /// Select a micrograph (and its grain).
    SelectMicrograph(MicrographRef),
    /// Open a stage.
    OpenStage(Stage),
    /// Compute the project.
    Run,
    /// Stop the computation.
    CancelRun,
    /// Undo the last edit.
    Undo,
    /// Redo.
    Redo,
    /// Save to the project file.
    Save,
    /// Ask for a file to save to.
    SaveAs,
    /// Ask for a project to open.
    Open,
    /// Open this project file.
    OpenPath(PathBuf),
    /// Open the bundled demo.
    OpenDemo,
    /// Ask for a file to export a figure of the selected grain to.
    ExportFigure(project::figure::FigureKind),
    /// Compute the selected grain only.
    RunGrain,
    /// Ask for a file of spot analyses to add to the project.
    ImportAnalyses,
    /// Add this file of spot analyses (checked first).
    ImportAnalysesPath(PathBuf),
    /// Ask for a file to write the report to (Markdown or HTML).
    ExportReport,
    /// Ask where a missing file (micrograph, analyses file) is now.
    Relink(FileRef),
    /// Point a project entry at this file.
    RelinkPath(FileRef, PathBuf),
}

/// The shortcuts of the common actions (shown in menus and tooltips).
pub mod shortcuts {
    use super::*;
    /// Open a project.
    pub const OPEN: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::O);
    /// Save.
    pub const SAVE: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::S);
    /// Save under another name.
    pub const SAVE_AS: KeyboardShortcut =
        KeyboardShortcut::new(Modifiers::COMMAND.plus(Modifiers::SHIFT), Key::S);
    /// Undo.
    pub const UNDO: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::Z);
    /// Redo.
    pub const REDO: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::Y);
    /// Compute the project.
    pub const RUN: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::R);
}

/// Computed results and the document revision they were computed from.
pub struct Results {
    /// The run.
    pub run: RunResult,
    /// Document revision at the start of the run.
    pub revision: u64,
    /// Grains computed again since (sample id, grain id), with the revision they were computed
    /// from.
    pub grain_revisions: Vec<((String, String), u64)>,
}

impl Results {
    /// The revision a grain's result comes from.
    fn revision_of(&self, sample: &str, grain: &str) -> u64 {
        self.grain_revisions
            .iter()
            .find(|((s, g), _)| s == sample && g == grain)
            .map_or(self.revision, |(_, r)| *r)
    }

    /// Put the result of a run of one grain in place of the grain's earlier result.
    fn merge_grain(&mut self, run: RunResult, revision: u64, sample: String, grain: String) {
        self.run
            .grains
            .retain(|g| !(g.sample == sample && g.grain == grain));
        self.run
            .failures
            .retain(|g| !(g.sample == sample && g.grain == grain));
        self.run.grains.extend(run.grains);
        self.run.failures.extend(run.failures);
        self.grain_revisions
            .retain(|((s, g), _)| !(*s == sample && *g == grain));
        self.grain_revisions.push(((sample, grain), revision));
    }
}

/// What a panel may read while drawing: the document, results, and what is loaded.
pub struct View<'a> {
    /// The document.
    pub doc: &'a Document,
    /// The last results.
    pub run: Option<&'a RunResult>,
    /// The results are older than the document.
    pub stale: bool,
    /// A run is going on.
    pub running: bool,
    /// Why the last run failed as a whole.
    pub run_error: Option<&'a str>,
    /// Selected grain.
    pub grain: Option<GrainRef>,
    /// Selected micrograph of that grain.
    pub micrograph: usize,
    /// The selected micrograph's image, once loaded.
    pub image: Option<&'a ImageData>,
    /// Its classification (possibly for earlier settings while a new one runs).
    pub classes: Option<&'a ClassData>,
    /// The classification in hand matches the document.
    pub classes_current: bool,
    /// Loading or classifying: the fraction done.
    pub image_busy: Option<f32>,
    /// Why the image could not be loaded or classified.
    pub image_error: Option<&'a str>,
    /// The figures of the selected grain (possibly of an earlier state while new ones are
    /// drawn).
    pub figures: Option<&'a FigureSet>,
    /// Spot analyses read from the project's files.
    pub spot_tables: &'a [(MineralSystem, Result<SpotTable, String>)],
    /// Files the project names that are not there.
    pub missing: &'a [MissingFile],
}

impl View<'_> {
    /// The selected micrograph.
    pub fn micrograph_ref(&self) -> Option<MicrographRef> {
        let grain = self.grain?;
        let n = self.doc.grain(grain)?.micrographs.len();
        (self.micrograph < n).then_some(MicrographRef {
            grain,
            micrograph: self.micrograph,
        })
    }

    /// The missing-file entry of a micrograph, if its file is not there.
    pub fn missing_micrograph(&self, at: MicrographRef) -> Option<&MissingFile> {
        self.missing
            .iter()
            .find(|m| Document::micrograph_of(m.which) == Some(at))
    }

    /// Result of a grain.
    pub fn result(&self, at: GrainRef) -> Option<&GrainResult> {
        let sample = self.doc.sample(at)?;
        let grain = self.doc.grain(at)?;
        self.run?
            .grains
            .iter()
            .find(|g| g.sample == sample.id && g.grain == grain.id)
    }

    /// Failure of a grain.
    pub fn failure(&self, at: GrainRef) -> Option<&GrainFailure> {
        let sample = self.doc.sample(at)?;
        let grain = self.doc.grain(at)?;
        self.run?
            .failures
            .iter()
            .find(|g| g.sample == sample.id && g.grain == grain.id)
    }
}

/// The workbench application.
pub struct Workbench {
    doc: Document,
    options: WorkbenchOptions,
    grain: Option<GrainRef>,
    micrograph: usize,
    stage: Stage,
    results: Option<Results>,
    run_error: Option<String>,
    run_job: Option<RunJob>,
    image_data: Option<Arc<ImageData>>,
    classes: Option<ClassData>,
    image_error: Option<(String, String)>,
    image_job: Option<ImageJob>,
    figures: Option<FigureSet>,
    figure_job: Option<FigureJob>,
    results_serial: u64,
    spot_tables: Vec<(MineralSystem, Result<SpotTable, String>)>,
    spot_tables_for: Vec<project::AnalysisFile>,
    missing: Vec<MissingFile>,
    /// Document revision and file the missing list was made for, and when (seconds).
    missing_for: Option<(u64, Option<PathBuf>, f64)>,
    report_job: Option<std::sync::mpsc::Receiver<String>>,
    ctx_for_jobs: Option<egui::Context>,
    image_stage: stages::image::ImageStage,
    phases_stage: stages::phases::PhasesStage,
    analyses_stage: stages::analyses::AnalysesStage,
    temperature_stage: stages::temperature::TemperatureStage,
    status: String,
    prompt: Option<PathPrompt>,
    restore_offer: Option<PathBuf>,
    last_autosave: f64,
    close_prompt: bool,
    allow_close: bool,
    started: bool,
}

impl Workbench {
    /// A workbench on the project named in `options` (an empty project when none is named or
    /// it cannot be read; the reason is shown in the status line).
    pub fn new(options: WorkbenchOptions) -> Self {
        let mut app = Workbench {
            doc: Document::new(project::Project::new("untitled"), None),
            options: options.clone(),
            grain: None,
            micrograph: 0,
            stage: Stage::Phases,
            results: None,
            run_error: None,
            run_job: None,
            image_data: None,
            classes: None,
            image_error: None,
            image_job: None,
            figures: None,
            figure_job: None,
            results_serial: 0,
            spot_tables: Vec::new(),
            spot_tables_for: Vec::new(),
            missing: Vec::new(),
            missing_for: None,
            report_job: None,
            ctx_for_jobs: None,
            image_stage: Default::default(),
            phases_stage: Default::default(),
            analyses_stage: Default::default(),
            temperature_stage: Default::default(),
            status: String::new(),
            prompt: None,
            restore_offer: None,
            last_autosave: 0.0,
            close_prompt: false,
            allow_close: false,
            started: false,
        };
        if let Some(path) = options.project {
            app.open_path(path);
        }
        app
    }

    /// The document.
    pub fn document(&self) -> &Document {
        &self.doc
    }

    /// Apply an edit as if it came from a panel (for scripts and tests); the outcome is in
    /// [`Self::status`].
    pub fn edit(&mut self, command: Command) {
        let what = command.describe();
        self.status = match self.doc.apply(command) {
            Ok(()) => what,
            Err(e) => format!("not applied: {e}"),
        };
    }

    /// The stage open in the centre.
    pub fn stage(&self) -> Stage {
        self.stage
    }

    /// Open a stage (as clicking it in the route bar does).
    pub fn open_stage(&mut self, stage: Stage) {
        self.stage = stage;
    }

    /// The selected grain.
    pub fn selected_grain(&self) -> Option<GrainRef> {
        self.grain
    }

    /// The last results.
    pub fn results(&self) -> Option<&RunResult> {
        self.results.as_ref().map(|r| &r.run)
    }

    /// The last status message (saves, errors, undo).
    pub fn status(&self) -> &str {
        &self.status
    }

    /// A run or an image job is still going on.
    pub fn busy(&self) -> bool {
        self.run_job.is_some()
            || self.image_job.is_some()
            || self.figure_job.is_some()
            || self.report_job.is_some()
    }

    /// The phase fractions the Phases stage shows for the selected micrograph (grain phase
    /// order), as computed from the histogram at the levels shown.
    pub fn shown_fractions(&self) -> Option<Vec<f64>> {
        let at = MicrographRef {
            grain: self.grain?,
            micrograph: self.micrograph,
        };
        let spec = self.doc.micrograph(at)?;
        let grain = self.doc.grain(at.grain)?;
        let classes = self.classes.as_ref()?;
        let levels = self.phases_stage.levels_shown(spec, &classes.segmentation);
        Some(stages::phases::phase_fractions(
            grain,
            spec,
            &classes.fractions_at(&levels),
        ))
    }

    /// The selected micrograph's classification is loaded and matches the document.
    pub fn classification_current(&self) -> bool {
        let Some(g) = self.grain else { return false };
        let at = MicrographRef {
            grain: g,
            micrograph: self.micrograph,
        };
        self.doc.micrograph(at).is_some_and(|spec| {
            let key = image_key(&self.doc.resolve(&spec.path), spec);
            self.classes.as_ref().is_some_and(|c| c.key == key)
        })
    }

    /// Class of a pixel in the automatic classification of the selected micrograph (before
    /// hand edits; `u8::MAX` = not measured), for tests.
    #[doc(hidden)]
    pub fn automatic_class_at(&self, x: u32, y: u32) -> Option<u8> {
        let c = self.classes.as_ref()?;
        let i = y as usize * c.base.width as usize + x as usize;
        c.base.class_map.get(i).copied()
    }

    /// Pixels in the region and measured pixels of the classification shown, for tests.
    #[doc(hidden)]
    pub fn shown_pixel_counts(&self) -> Option<(u64, u64)> {
        let c = self.classes.as_ref()?;
        Some((c.segmentation.region_pixels, c.segmentation.measured_pixels))
    }

    /// The view state of the micrograph canvas (for tests driving the region and hand tools).
    #[doc(hidden)]
    pub fn canvas(&mut self) -> &mut stages::image::ImageStage {
        &mut self.image_stage
    }

    /// Where the Phases stage last drew level `index` (for tests driving the drag).
    #[doc(hidden)]
    pub fn level_handle_pos(&self, index: usize) -> Option<egui::Pos2> {
        self.phases_stage.handle_pos(index)
    }

    fn open_path(&mut self, path: PathBuf) {
        match Document::open(&path) {
            Ok(doc) => {
                self.doc = doc;
                self.results = None;
                self.run_error = None;
                self.image_data = None;
                self.classes = None;
                self.image_error = None;
                self.image_job = None;
                self.grain = self.doc.grains().first().copied();
                self.micrograph = 0;
                self.missing_for = None;
                self.status = format!("opened {}", path.display());
                self.restore_offer = project::pending_autosave(&path);
                self.load_spot_tables();
                if self.options.remember_recent {
                    files::remember(&path);
                }
                self.started = false;
            }
            Err(e) => self.status = format!("could not open: {e}"),
        }
    }

    fn load_spot_tables(&mut self) {
        self.spot_tables_for = self.doc.project.analysis_files.clone();
        self.spot_tables = self
            .doc
            .project
            .analysis_files
            .iter()
            .map(|f| {
                let path = self.doc.resolve(&f.path);
                (
                    f.system,
                    mineral::read_spot_file(&path).map_err(|e| e.to_string()),
                )
            })
            .collect();
    }

    fn start_run(&mut self, ctx: &egui::Context, only: Option<GrainRef>) {
        if let Some(job) = &self.run_job {
            job.cancel();
        }
        // One grain is merged into earlier results; with none yet, everything is computed.
        let only = only
            .filter(|_| self.results.is_some())
            .map(|g| (g.sample, g.grain));
        match RunJob::start(
            self.doc.project.clone(),
            self.doc.path_or_default(),
            self.doc.revision,
            ctx.clone(),
            only,
        ) {
            Ok(job) => {
                self.run_job = Some(job);
                self.run_error = None;
            }
            Err(e) => self.run_error = Some(e),
        }
    }

    fn save_to(&mut self, path: PathBuf) {
        match project::save_project(&self.doc.project, &path) {
            Ok(()) => {
                let moved = self.doc.path.as_ref() != Some(&path);
                self.doc.path = Some(path.clone());
                self.doc.dirty = false;
                self.status = format!("saved {}", path.display());
                if moved {
                    self.load_spot_tables();
                }
                if self.options.remember_recent {
                    files::remember(&path);
                }
            }
            Err(e) => self.status = format!("not saved: {e}"),
        }
    }

    /// Write a figure of the selected grain, in the format its extension names (SVG, PNG at
    /// 300 dpi, PDF).
    pub fn export_figure(&mut self, kind: project::figure::FigureKind, path: &std::path::Path) {
        use project::figure::render::{Format, encode};
        let Some(fig) = self
            .figures
            .as_ref()
            .filter(|f| f.grain == self.grain)
            .and_then(|f| f.get(kind))
        else {
            self.status = "that figure is not drawn yet".into();
            return;
        };
        let fig = match fig {
            Ok(f) => f,
            Err(e) => {
                self.status = format!("no figure to export: {e}");
                return;
            }
        };
        let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("");
        let Some(format) = Format::from_extension(ext) else {
            self.status = format!("{}: name the file .svg, .png or .pdf", path.display());
            return;
        };
        self.status = match encode(fig, format, 300.0)
            .map_err(|e| e.to_string())
            .and_then(|bytes| project::write_atomically(path, &bytes).map_err(|e| e.to_string()))
        {
            Ok(()) => format!("exported {}", path.display()),
            Err(e) => format!("not exported: {e}"),
        };
    }

    /// Add a file of spot analyses to the project, for the selected grain's mineral system,
    /// after reading it: a file that does not read is refused with its file, line and column.
    pub fn import_analyses(&mut self, path: &std::path::Path) {
        let system = self
            .grain
            .and_then(|g| self.doc.grain(g))
            .map_or(MineralSystem::Feldspar, |g| g.system);
        let table = match mineral::read_spot_file(path) {
            Ok(t) => t,
            Err(e) => {
                self.status = format!("not imported: {e}");
                return;
            }
        };
        let stored = self
            .doc
            .path
            .as_ref()
            .and_then(|p| p.parent())
            .and_then(|dir| {
                let abs = path.canonicalize().ok()?;
                let dir = dir.canonicalize().ok()?;
                abs.strip_prefix(dir).ok().map(std::path::Path::to_path_buf)
            })
            .unwrap_or_else(|| path.to_path_buf());
        let for_grain = self.grain.and_then(|g| {
            let sample = self.doc.sample(g)?;
            let grain = self.doc.grain(g)?;
            Some(
                table
                    .analyses
                    .iter()
                    .filter(|a| a.id.sample == sample.id && a.id.grain == grain.id)
                    .count(),
            )
        });
        let system_name = match system {
            MineralSystem::Feldspar => "feldspar",
            MineralSystem::Pyroxene => "pyroxene",
        };
        match self.doc.apply(Command::AddAnalysisFile {
            path: stored,
            system,
        }) {
            Ok(()) => {
                self.status = format!(
                    "imported {} {system_name} analyses from {}{}",
                    table.analyses.len(),
                    path.display(),
                    for_grain
                        .map(|n| format!(", {n} for the selected grain"))
                        .unwrap_or_default()
                );
                self.load_spot_tables();
            }
            Err(e) => self.status = format!("not imported: {e}"),
        }
    }

    /// Write the report of the last results to `path`: a self-contained page for `.html`, or
    /// Markdown for `.md` with its figures in `figures/` beside it. Runs on a worker thread.
    pub fn export_report(&mut self, path: &std::path::Path) {
        let Some(results) = &self.results else {
            self.status = "compute the project first: the report is of its results".into();
            return;
        };
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase)
            .unwrap_or_default();
        if !matches!(ext.as_str(), "html" | "htm" | "md") {
            self.status = format!("{}: name the report .html or .md", path.display());
            return;
        }
        let project = self.doc.project.clone();
        let project_file = self.doc.path_or_default();
        let run = results.run.clone();
        let path = path.to_path_buf();
        let (tx, rx) = std::sync::mpsc::channel();
        let ctx = self.ctx_for_jobs.clone();
        let spawned = std::thread::Builder::new()
            .name("consolute-report".into())
            .spawn(move || {
                let message = match write_report_file(&project, &project_file, &run, &path, &ext) {
                    Ok(()) => format!("report written to {}", path.display()),
                    Err(e) => format!("report not written: {e}"),
                };
                let _ = tx.send(message);
                if let Some(ctx) = ctx {
                    ctx.request_repaint();
                }
            });
        match spawned {
            Ok(_) => {
                self.report_job = Some(rx);
                self.status = "writing the report…".into();
            }
            Err(e) => self.status = format!("could not start the report: {e}"),
        }
    }

    /// The files the open project names that are not there (as the message strip lists them).
    pub fn missing_files(&self) -> &[MissingFile] {
        &self.missing
    }

    /// Make the list of missing files again when the document changed, and every few seconds
    /// (a file put back in place, or a disk mounted, clears its message).
    fn check_missing(&mut self, now: f64) {
        const EVERY_S: f64 = 3.0;
        let fresh = self.missing_for.as_ref().is_some_and(|(rev, path, at)| {
            *rev == self.doc.revision && *path == self.doc.path && now - at < EVERY_S
        });
        if !fresh {
            self.missing = self.doc.missing_files();
            self.missing_for = Some((self.doc.revision, self.doc.path.clone(), now));
        }
    }

    /// Point a project entry at a file's new place (an undoable edit), then compute what it
    /// feeds: the micrograph's grain, or every grain for an analyses file.
    pub fn relink(&mut self, which: FileRef, path: &std::path::Path, ctx: &egui::Context) {
        let what = self
            .missing
            .iter()
            .find(|m| m.which == which)
            .map_or_else(|| "the file".to_string(), |m| m.what.clone());
        match self.doc.apply(Command::RelinkFile {
            project_file: self.doc.path_or_default(),
            which,
            new_path: path.to_path_buf(),
        }) {
            Ok(()) => {
                self.status = format!("relinked {what} to {}", path.display());
                self.missing_for = None;
                match Document::micrograph_of(which) {
                    Some(at) => {
                        self.grain = Some(at.grain);
                        self.micrograph = at.micrograph;
                        self.start_run(ctx, Some(at.grain));
                    }
                    None => self.start_run(ctx, None),
                }
            }
            Err(e) => self.status = format!("not relinked: {e}"),
        }
    }

    /// Whether the figures of the selected grain are drawn and current.
    pub fn figures_ready(&self) -> bool {
        self.figure_job.is_none() && self.figures.as_ref().is_some_and(|f| f.grain == self.grain)
    }

    fn apply(&mut self, action: Action, ctx: &egui::Context) {
        match action {
            Action::Edit(command) => {
                let what = command.describe();
                match self.doc.apply(command) {
                    Ok(()) => self.status = what,
                    Err(e) => self.status = format!("not applied: {e}"),
                }
            }
            Action::SelectGrain(g) => {
                if self.grain != Some(g) {
                    self.micrograph = 0;
                }
                self.grain = Some(g);
            }
            Action::SelectMicrograph(m) => {
                self.grain = Some(m.grain);
                self.micrograph = m.micrograph;
                if !matches!(self.stage, Stage::Image | Stage::Phases) {
                    self.stage = Stage::Image;
                }
            }
            Action::OpenStage(s) => self.stage = s,
            Action::Run => self.start_run(ctx, None),
            Action::RunGrain => self.start_run(ctx, self.grain),
            Action::ImportAnalyses => {
                let folder = self
                    .doc
                    .path
                    .as_ref()
                    .and_then(|p| p.parent())
                    .map(|p| p.join("analyses.csv"));
                self.prompt = Some(PathPrompt::new(PromptPurpose::ImportAnalyses, folder));
            }
            Action::ImportAnalysesPath(p) => self.import_analyses(&p),
            Action::Relink(which) => {
                let start = self
                    .missing
                    .iter()
                    .find(|m| m.which == which)
                    .map(|m| m.resolved.clone());
                self.prompt = Some(PathPrompt::new(PromptPurpose::Relink(which), start));
            }
            Action::RelinkPath(which, path) => self.relink(which, &path, ctx),
            Action::ExportReport => {
                let folder = self
                    .doc
                    .path
                    .as_ref()
                    .and_then(|p| p.parent())
                    .map(|p| p.join("report.html"));
                self.prompt = Some(PathPrompt::new(PromptPurpose::Report, folder));
            }
            Action::CancelRun => {
                if let Some(job) = &self.run_job {
                    job.cancel();
                }
            }
            Action::Undo => {
                self.status = match self.doc.undo() {
                    Some(w) => format!("undid {w}"),
                    None => "nothing to undo".into(),
                }
            }
            Action::Redo => {
                self.status = match self.doc.redo() {
                    Some(w) => format!("redid {w}"),
                    None => "nothing to redo".into(),
                }
            }
            Action::Save => match self.doc.path.clone() {
                Some(p) => self.save_to(p),
                None => self.prompt = Some(PathPrompt::new(PromptPurpose::SaveAs, None)),
            },
            Action::SaveAs => {
                self.prompt = Some(PathPrompt::new(
                    PromptPurpose::SaveAs,
                    self.doc.path.clone(),
                ))
            }
            Action::Open => {
                self.prompt = Some(PathPrompt::new(PromptPurpose::Open, self.doc.path.clone()))
            }
            Action::OpenPath(p) => self.open_path(p),
            Action::OpenDemo => self.open_path(crate::demo_project_path()),
            Action::ExportFigure(kind) => {
                let stem = self
                    .grain
                    .and_then(|g| {
                        Some(format!(
                            "{}_{}",
                            self.doc.sample(g)?.id,
                            self.doc.grain(g)?.id
                        ))
                    })
                    .unwrap_or_else(|| "figure".into());
                let folder = self
                    .doc
                    .path
                    .as_ref()
                    .and_then(|p| p.parent())
                    .map(|p| p.to_path_buf())
                    .unwrap_or_default();
                let name = format!("{stem}-{}.svg", kind.name());
                self.prompt = Some(PathPrompt::new(
                    PromptPurpose::Export(kind),
                    Some(folder.join(name)),
                ));
            }
        }
    }

    /// Poll the jobs and start the image job the selection needs.
    fn tend_jobs(&mut self, ctx: &egui::Context) {
        if let Some(job) = &self.run_job
            && let Some(outcome) = job.poll()
        {
            let revision = job.revision;
            let only = job.only;
            self.run_job = None;
            match outcome {
                Ok(run) => {
                    self.status = format!(
                        "computed {} grain{}{}",
                        run.grains.len(),
                        if run.grains.len() == 1 { "" } else { "s" },
                        if run.failures.is_empty() {
                            String::new()
                        } else {
                            format!(", {} could not be computed", run.failures.len())
                        }
                    );
                    let one = only.and_then(|(s, g)| {
                        let sample = self.doc.project.samples.get(s)?;
                        Some((sample.id.clone(), sample.grains.get(g)?.id.clone()))
                    });
                    match (one, self.results.as_mut()) {
                        (Some((sample, grain)), Some(results)) => {
                            results.merge_grain(run, revision, sample, grain);
                        }
                        _ => {
                            self.results = Some(Results {
                                run,
                                revision,
                                grain_revisions: Vec::new(),
                            })
                        }
                    }
                    self.results_serial += 1;
                    self.run_error = None;
                }
                Err(e) => {
                    self.status = format!("run stopped: {e}");
                    self.run_error = Some(e);
                }
            }
        }
        if let Some(job) = &self.image_job
            && let Some(outcome) = job.poll()
        {
            let key = job.key.clone();
            self.image_job = None;
            match outcome.image {
                Ok(d) => self.image_data = Some(d),
                Err(e) => {
                    self.image_data = None;
                    self.image_error = Some((key.clone(), e));
                }
            }
            match outcome.classes {
                Ok(c) => {
                    self.classes = Some(c);
                    self.phases_stage.clear_live();
                }
                Err(e) => self.image_error = Some((key, e)),
            }
        }
        // The image the selection needs.
        let wanted = self.grain.and_then(|g| {
            let at = MicrographRef {
                grain: g,
                micrograph: self.micrograph,
            };
            let spec = self.doc.micrograph(at)?;
            let path = self.doc.resolve(&spec.path);
            Some((image_key(&path, spec), path, spec.clone()))
        });
        if let Some((key, path, spec)) = wanted {
            let have = self.classes.as_ref().is_some_and(|c| c.key == key)
                || self.image_job.as_ref().is_some_and(|j| j.key == key)
                || self.image_error.as_ref().is_some_and(|(k, _)| *k == key);
            if !have {
                let max_side = ctx.input(|i| i.max_texture_side);
                let reuse = self.image_data.clone();
                let reuse_base = self
                    .classes
                    .as_ref()
                    .map(|c| (c.base_key.clone(), c.base.clone()));
                if self.image_data.as_ref().is_some_and(|d| d.path != path) {
                    self.image_data = None;
                    self.classes = None;
                }
                self.image_error = None;
                match ImageJob::start(ctx.clone(), path, spec, reuse, reuse_base, max_side) {
                    Ok(job) => self.image_job = Some(job),
                    Err(e) => self.image_error = Some((key, e)),
                }
            }
        }
        // The figures of the selected grain.
        if let Some(job) = &self.figure_job
            && let Some(set) = job.poll()
        {
            self.figure_job = None;
            self.figures = Some(set);
        }
        let settings = &self.doc.project.settings;
        let extra: Vec<String> = if self.temperature_stage.compare {
            solvus::BUILTIN_IDS
                .iter()
                .filter(|id| **id != settings.feldspar_model)
                .map(|id| id.to_string())
                .collect()
        } else {
            Vec::new()
        };
        let key = format!(
            "{:?}|{}|{}|{}|{:?}",
            self.grain, self.results_serial, settings.feldspar_model, settings.pressure_kbar, extra
        );
        let have = self.figures.as_ref().is_some_and(|f| f.key == key)
            || self.figure_job.as_ref().is_some_and(|j| j.key == key);
        if !have {
            let grain_result = self.grain.and_then(|g| {
                let sample = self.doc.sample(g)?;
                let grain = self.doc.grain(g)?;
                self.results
                    .as_ref()?
                    .run
                    .grains
                    .iter()
                    .find(|r| r.sample == sample.id && r.grain == grain.id)
                    .cloned()
            });
            match FigureJob::start(
                ctx.clone(),
                key,
                self.grain,
                self.doc.project.clone(),
                self.doc.path_or_default(),
                grain_result,
                extra,
            ) {
                Ok(job) => self.figure_job = Some(job),
                Err(e) => self.status = e,
            }
        }
        if self.busy() {
            ctx.request_repaint_after(std::time::Duration::from_millis(100));
        }
    }

    fn autosave(&mut self, now: f64) {
        const EVERY_S: f64 = 60.0;
        if now - self.last_autosave < EVERY_S {
            return;
        }
        self.last_autosave = now;
        if self.doc.dirty
            && let Some(path) = &self.doc.path
        {
            match project::autosave_project(&self.doc.project, path) {
                Ok(()) => self.status = "autosaved".into(),
                Err(e) => self.status = format!("autosave failed: {e}"),
            }
        }
    }

    fn shortcuts(&self, ctx: &egui::Context, actions: &mut Vec<Action>) {
        use shortcuts::*;
        ctx.input_mut(|i| {
            for (s, a) in [
                (SAVE_AS, Action::SaveAs),
                (SAVE, Action::Save),
                (OPEN, Action::Open),
                (UNDO, Action::Undo),
                (REDO, Action::Redo),
                (RUN, Action::Run),
            ] {
                if i.consume_shortcut(&s) {
                    actions.push(a);
                }
            }
        });
    }

    /// Draw the whole window into `ui` and apply what the user asked for.
    pub fn ui_root(&mut self, ui: &mut Ui) {
        let ctx = ui.ctx().clone();
        if self.ctx_for_jobs.is_none() {
            self.ctx_for_jobs = Some(ctx.clone());
        }
        if !self.started {
            self.started = true;
            if self.options.run_on_open && !self.doc.project.samples.is_empty() {
                self.start_run(&ctx, None);
            }
        }
        if self.doc.project.analysis_files != self.spot_tables_for {
            self.load_spot_tables();
        }
        self.check_missing(ctx.input(|i| i.time));
        if let Some(rx) = &self.report_job {
            match rx.try_recv() {
                Ok(message) => {
                    self.status = message;
                    self.report_job = None;
                }
                Err(std::sync::mpsc::TryRecvError::Disconnected) => {
                    self.status = "the report stopped unexpectedly".into();
                    self.report_job = None;
                }
                Err(std::sync::mpsc::TryRecvError::Empty) => {}
            }
        }
        self.tend_jobs(&ctx);
        self.autosave(ctx.input(|i| i.time));
        let mut actions = Vec::new();
        self.shortcuts(&ctx, &mut actions);
        // Files dropped on the window: analyses are imported, a project is opened.
        for file in ctx.input(|i| i.raw.dropped_files.clone()) {
            let path = file.path().to_path_buf();
            if path.as_os_str().is_empty() {
                continue;
            }
            let ext = path
                .extension()
                .and_then(|e| e.to_str())
                .map(str::to_ascii_lowercase)
                .unwrap_or_default();
            match ext.as_str() {
                "csv" | "tsv" | "txt" => actions.push(Action::ImportAnalysesPath(path)),
                "json" => actions.push(Action::OpenPath(path)),
                _ => {
                    self.status = format!(
                        "{}: drop a CSV of spot analyses or a project (.json)",
                        path.display()
                    )
                }
            }
        }

        let stale = self.results.as_ref().is_some_and(|r| {
            let selected = self.grain.and_then(|g| {
                let sample = self.doc.sample(g)?;
                Some(r.revision_of(&sample.id, &self.doc.grain(g)?.id))
            });
            selected.unwrap_or(r.revision) != self.doc.revision
        });
        let wanted_key = self.grain.and_then(|g| {
            let spec = self.doc.micrograph(MicrographRef {
                grain: g,
                micrograph: self.micrograph,
            })?;
            Some(image_key(&self.doc.resolve(&spec.path), spec))
        });
        let image = self.image_data.as_deref().filter(|d| {
            self.grain
                .and_then(|g| {
                    self.doc.micrograph(MicrographRef {
                        grain: g,
                        micrograph: self.micrograph,
                    })
                })
                .is_some_and(|spec| self.doc.resolve(&spec.path) == d.path)
        });
        let view = View {
            doc: &self.doc,
            run: self.results.as_ref().map(|r| &r.run),
            stale,
            running: self.run_job.is_some(),
            run_error: self.run_error.as_deref(),
            grain: self.grain,
            micrograph: self.micrograph,
            image,
            classes: self.classes.as_ref().filter(|_| image.is_some()),
            classes_current: self
                .classes
                .as_ref()
                .is_some_and(|c| Some(&c.key) == wanted_key.as_ref()),
            image_busy: self.image_job.as_ref().map(|j| j.fraction()),
            image_error: self
                .image_error
                .as_ref()
                .filter(|(k, _)| Some(k) == wanted_key.as_ref())
                .map(|(_, e)| e.as_str()),
            figures: self.figures.as_ref(),
            spot_tables: &self.spot_tables,
            missing: &self.missing,
        };

        egui::Panel::top("menu").show(ui, |ui| {
            panels::top::ui(ui, &view, self.run_job.as_ref(), &self.status, &mut actions);
        });
        egui::Panel::bottom("messages")
            .resizable(true)
            .default_size(120.0)
            .min_size(60.0)
            .show(ui, |ui| {
                panels::messages::ui(ui, &view, &mut actions);
            });
        egui::Panel::left("study")
            .resizable(true)
            .default_size(230.0)
            .show(ui, |ui| {
                panels::tree::ui(ui, &view, &mut actions);
            });
        egui::Panel::right("card")
            .resizable(true)
            .default_size(340.0)
            .min_size(260.0)
            .show(ui, |ui| {
                panels::card::ui(ui, &view, &mut actions);
            });
        egui::CentralPanel::default().show(ui, |ui| {
            panels::route::ui(ui, &view, self.stage, &mut actions);
            ui.separator();
            match self.stage {
                Stage::Image => self.image_stage.ui(ui, &view, &mut actions),

                Stage::Phases => {
                    self.phases_stage
                        .ui(ui, &view, &mut self.image_stage, &mut actions)
                }
                Stage::Analyses => self.analyses_stage.ui(ui, &view, &mut actions),
                Stage::Bulk => stages::bulk::ui(ui, &view, self.run_job.as_ref(), &mut actions),
                Stage::Temperature => self.temperature_stage.ui(ui, &view, &mut actions),
            }
        });

        self.dialogs_ui(&ctx, &mut actions);
        for action in actions {
            self.apply(action, &ctx);
        }
    }

    fn dialogs_ui(&mut self, ctx: &egui::Context, actions: &mut Vec<Action>) {
        if let Some(prompt) = &mut self.prompt {
            match prompt.ui(ctx) {
                files::PromptOutcome::Open(p) => {
                    actions.push(Action::OpenPath(p));
                    self.prompt = None;
                }
                files::PromptOutcome::SaveAs(p) => {
                    self.prompt = None;
                    self.save_to(p);
                }
                files::PromptOutcome::Export(kind, p) => {
                    self.prompt = None;
                    self.export_figure(kind, &p);
                }
                files::PromptOutcome::ImportAnalyses(p) => {
                    self.prompt = None;
                    actions.push(Action::ImportAnalysesPath(p));
                }
                files::PromptOutcome::Report(p) => {
                    self.prompt = None;
                    self.export_report(&p);
                }
                files::PromptOutcome::Relink(which, p) => {
                    self.prompt = None;
                    actions.push(Action::RelinkPath(which, p));
                }
                files::PromptOutcome::Cancel => self.prompt = None,
                files::PromptOutcome::Pending => {}
            }
        }
        if let Some(autosave) = self.restore_offer.clone() {
            let modal = egui::Modal::new(egui::Id::unique("consolute-restore")).show(ctx, |ui| {
                ui.heading("Restore unsaved work?");
                ui.label(format!(
                    "An autosave newer than the project file was found:\n{}",
                    autosave.display()
                ));
                ui.horizontal(|ui| {
                    if ui.button("Restore the autosave").clicked() {
                        return Some(true);
                    }
                    if ui.button("Keep the saved project").clicked() {
                        return Some(false);
                    }
                    None
                })
                .inner
            });
            match modal.inner {
                Some(true) => {
                    match project::load_project(&autosave) {
                        Ok(p) => {
                            let path = self.doc.path.clone();
                            self.doc = Document::new(p, path);
                            self.doc.dirty = true;
                            self.missing_for = None;
                            self.status = "restored the autosave (not yet saved)".into();
                        }
                        Err(e) => self.status = format!("could not restore: {e}"),
                    }
                    self.restore_offer = None;
                }
                Some(false) => self.restore_offer = None,
                None => {}
            }
        }
        // Closing with unsaved changes.
        if ctx.input(|i| i.viewport().close_requested()) && self.doc.dirty && !self.allow_close {
            ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
            self.close_prompt = true;
        }
        if self.close_prompt {
            let modal = egui::Modal::new(egui::Id::unique("consolute-close")).show(ctx, |ui| {
                ui.heading("Save changes before closing?");
                ui.horizontal(|ui| {
                    if ui.button("Save and close").clicked() {
                        return Some(0);
                    }
                    if ui.button("Close without saving").clicked() {
                        return Some(1);
                    }
                    if ui.button("Keep working").clicked() {
                        return Some(2);
                    }
                    None
                })
                .inner
            });
            match modal.inner {
                Some(0) => {
                    if let Some(p) = self.doc.path.clone() {
                        self.save_to(p);
                    }
                    self.allow_close = true;
                    ctx.send_viewport_cmd(egui::ViewportCommand::Close);
                }
                Some(1) => {
                    self.allow_close = true;
                    ctx.send_viewport_cmd(egui::ViewportCommand::Close);
                }
                Some(_) => self.close_prompt = false,
                None => {}
            }
        }
        let _ = actions;
    }
}

impl eframe::App for Workbench {
    fn ui(&mut self, ui: &mut Ui, _frame: &mut eframe::Frame) {
        self.ui_root(ui);
    }

    fn on_exit(&mut self, _gl: Option<&eframe::glow::Context>) {
        if let Some(job) = &self.run_job {
            job.cancel();
        }
    }
}

/// One report file: HTML with the figures inline, or Markdown with the figures (SVG, PNG, PDF)
/// in `figures/` beside it, as its links expect.
fn write_report_file(
    project: &project::Project,
    project_file: &std::path::Path,
    run: &RunResult,
    path: &std::path::Path,
    ext: &str,
) -> Result<(), String> {
    use project::report::{REPORT_DPI, grain_figures, report_blocks, to_html, to_markdown};
    let figures = grain_figures(project, project_file, run);
    let blocks = report_blocks(project, run, &figures);
    if ext == "md" {
        let dir = path
            .parent()
            .unwrap_or_else(|| std::path::Path::new("."))
            .join("figures");
        std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
        for f in &figures {
            let Ok(fig) = &f.figure else { continue };
            for (suffix, format) in [
                ("svg", project::figure::render::Format::Svg),
                ("png", project::figure::render::Format::Png),
                ("pdf", project::figure::render::Format::Pdf),
            ] {
                let bytes = project::figure::render::encode(fig, format, REPORT_DPI)
                    .map_err(|e| format!("{} {}: {e}", f.grain, f.kind.name()))?;
                project::write_atomically(&dir.join(format!("{}.{suffix}", f.stem)), &bytes)
                    .map_err(|e| e.to_string())?;
            }
        }
        project::write_atomically(path, to_markdown(&blocks).as_bytes()).map_err(|e| e.to_string())
    } else {
        project::write_atomically(path, to_html(&blocks).as_bytes()).map_err(|e| e.to_string())
    }
}
