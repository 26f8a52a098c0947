//! Choosing files: the recent-projects list, and a path prompt that offers the system file
//! dialog (on its own thread, so the window never freezes) with a typed path always beside it,
//! because the dialog returns nothing, silently, on a machine without a desktop portal or zenity.

use std::path::{Path, PathBuf};
use std::sync::mpsc;

const RECENT_MAX: usize = 8;

fn recent_file() -> Option<PathBuf> {
    let base = std::env::var_os("XDG_CONFIG_HOME")
        .map(PathBuf::from)
        .filter(|p| p.is_absolute())
        .or_else(|| std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".config")))?;
    Some(base.join("consolute").join("recent_projects.txt"))
}

/// The recent projects, most recent first.
pub fn recent() -> Vec<PathBuf> {
    recent_file()
        .and_then(|f| std::fs::read_to_string(f).ok())
        .map(|text| {
            text.lines()
                .filter(|l| !l.trim().is_empty())
                .map(PathBuf::from)
                .collect()
        })
        .unwrap_or_default()
}

/// The last project opened or saved, if any.
pub fn last_project() -> Option<PathBuf> {
    recent().into_iter().next()
}

/// Put a project at the top of the recent list (failures to write the list are ignored: it is
/// a convenience).
pub fn remember(path: &Path) {
    let Some(file) = recent_file() else { return };
    let path = path.canonicalize().unwrap_or_else(|_| path.to_path_buf());
    let mut list = recent();
    list.retain(|p| *p != path);
    list.insert(0, path);
    list.truncate(RECENT_MAX);
    let text: String = list.iter().map(|p| format!("{}\n", p.display())).collect();
    if let Some(dir) = file.parent() {
        let _ = std::fs::create_dir_all(dir);
    }
    let _ = project::write_atomically(&file, text.as_bytes());
}

/// What the prompt is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PromptPurpose {
    /// Open a project.
    Open,
    /// Save the project under a new name.
    SaveAs,
    /// Export a figure.
    Export(project::figure::FigureKind),
    /// Add a file of spot analyses.
    ImportAnalyses,
    /// Write the report.
    Report,
    /// Point a project entry whose file is missing at the file's new place.
    Relink(project::FileRef),
}

/// What the prompt ended with.
pub enum PromptOutcome {
    /// Still open.
    Pending,
    /// Closed without a choice.
    Cancel,
    /// Open this file.
    Open(PathBuf),
    /// Save to this file.
    SaveAs(PathBuf),
    /// Export the figure to this file.
    Export(project::figure::FigureKind, PathBuf),
    /// Import the spot analyses of this file.
    ImportAnalyses(PathBuf),
    /// Write the report to this file.
    Report(PathBuf),
    /// Point the entry at this file.
    Relink(project::FileRef, PathBuf),
}

/// A small window with a path field and a "Browse…" button.
pub struct PathPrompt {
    purpose: PromptPurpose,
    text: String,
    browsing: Option<mpsc::Receiver<Option<PathBuf>>>,
    note: Option<String>,
}

impl PathPrompt {
    /// A prompt starting at `current`.
    pub fn new(purpose: PromptPurpose, current: Option<PathBuf>) -> Self {
        PathPrompt {
            purpose,
            text: current.map(|p| p.display().to_string()).unwrap_or_default(),
            browsing: None,
            note: None,
        }
    }

    fn browse(&mut self, ctx: &egui::Context) {
        let (tx, rx) = mpsc::channel();
        let purpose = self.purpose;
        let start = PathBuf::from(&self.text);
        let ctx = ctx.clone();
        let spawned = std::thread::Builder::new()
            .name("consolute-file-dialog".into())
            .spawn(move || {
                let mut dialog = match purpose {
                    PromptPurpose::Export(_) => {
                        rfd::FileDialog::new().add_filter("Figure", &["svg", "png", "pdf"])
                    }
                    PromptPurpose::ImportAnalyses => {
                        rfd::FileDialog::new().add_filter("Spot analyses", &["csv", "tsv", "txt"])
                    }
                    PromptPurpose::Report => {
                        rfd::FileDialog::new().add_filter("Report", &["html", "md"])
                    }
                    PromptPurpose::Relink(project::FileRef::AnalysisFile { .. }) => {
                        rfd::FileDialog::new().add_filter("Spot analyses", &["csv", "tsv", "txt"])
                    }
                    PromptPurpose::Relink(_) => rfd::FileDialog::new()
                        .add_filter("Micrograph", &["png", "tif", "tiff", "jpg", "jpeg", "bmp"]),
                    _ => rfd::FileDialog::new().add_filter("Consolute project", &["json"]),
                };
                if let Some(dir) = start.parent().filter(|d| d.is_dir()) {
                    dialog = dialog.set_directory(dir);
                }
                let chosen = match purpose {
                    PromptPurpose::Open
                    | PromptPurpose::ImportAnalyses
                    | PromptPurpose::Relink(_) => dialog.pick_file(),
                    PromptPurpose::SaveAs | PromptPurpose::Export(_) | PromptPurpose::Report => {
                        dialog.save_file()
                    }
                };
                let _ = tx.send(chosen);
                ctx.request_repaint();
            });
        match spawned {
            Ok(_) => self.browsing = Some(rx),
            Err(e) => self.note = Some(format!("the file dialog could not start: {e}")),
        }
    }

    /// Draw the prompt.
    pub fn ui(&mut self, ctx: &egui::Context) -> PromptOutcome {
        if let Some(rx) = &self.browsing {
            match rx.try_recv() {
                Ok(Some(p)) => {
                    self.text = p.display().to_string();
                    self.browsing = None;
                }
                Ok(None) | Err(mpsc::TryRecvError::Disconnected) => {
                    self.browsing = None;
                    self.note = Some(
                        "no file chosen (on a machine without a desktop file dialog, type the path)"
                            .into(),
                    );
                }
                Err(mpsc::TryRecvError::Empty) => {}
            }
        }
        let title = match self.purpose {
            PromptPurpose::Open => "Open project",
            PromptPurpose::SaveAs => "Save project as",
            PromptPurpose::Export(_) => "Export figure",
            PromptPurpose::ImportAnalyses => "Import spot analyses",
            PromptPurpose::Report => "Export report",
            PromptPurpose::Relink(_) => "Relink a missing file",
        };
        let mut outcome = PromptOutcome::Pending;
        let mut open = true;
        egui::Window::new(title)
            .collapsible(false)
            .resizable(false)
            .pivot(egui::Align2::CENTER_CENTER)
            .default_pos(ctx.content_rect().center())
            .open(&mut open)
            .show(ctx, |ui| {
                let l = ui.label(match self.purpose {
                    PromptPurpose::Export(_) => "Figure file (.svg, .png or .pdf):",
                    PromptPurpose::ImportAnalyses => {
                        "Spot analyses (CSV: sample, grain, phase, spot and oxide columns):"
                    }
                    PromptPurpose::Report => {
                        "Report file (.html, self-contained; or .md, figures written to figures/ beside it):"
                    }
                    PromptPurpose::Relink(project::FileRef::AnalysisFile { .. }) => {
                        "Where the spot analyses file is now (CSV):"
                    }
                    PromptPurpose::Relink(_) => "Where the micrograph is now:",
                    _ => "Project file (.json):",
                });
                let edit = ui
                    .add(
                        egui::TextEdit::singleline(&mut self.text)
                            .desired_width(420.0)
                            .hint_text("/path/to/study.json"),
                    )
                    .labelled_by(l.id);
                let entered = edit.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
                ui.horizontal(|ui| {
                    let browse =
                        ui.add_enabled(self.browsing.is_none(), egui::Button::new("Browse…"));
                    if browse
                        .on_hover_text("Choose with the system's file dialog")
                        .clicked()
                    {
                        self.browse(ctx);
                    }
                    if self.browsing.is_some() {
                        ui.spinner();
                    }
                    let verb = match self.purpose {
                        PromptPurpose::Open => "Open",
                        PromptPurpose::SaveAs => "Save",
                        PromptPurpose::Export(_) | PromptPurpose::Report => "Export",
                        PromptPurpose::ImportAnalyses => "Import",
                        PromptPurpose::Relink(_) => "Relink",
                    };
                    if ui.button(verb).clicked() || entered {
                        let path = PathBuf::from(self.text.trim());
                        if self.text.trim().is_empty() {
                            self.note = Some("type a path first".into());
                        } else if matches!(
                            self.purpose,
                            PromptPurpose::Open
                                | PromptPurpose::ImportAnalyses
                                | PromptPurpose::Relink(_)
                        ) && !path.is_file()
                        {
                            self.note = Some(format!("{} is not a file", path.display()));
                        } else {
                            outcome = match self.purpose {
                                PromptPurpose::Open => PromptOutcome::Open(path),
                                PromptPurpose::SaveAs => PromptOutcome::SaveAs(path),
                                PromptPurpose::Export(kind) => PromptOutcome::Export(kind, path),
                                PromptPurpose::ImportAnalyses => {
                                    PromptOutcome::ImportAnalyses(path)
                                }
                                PromptPurpose::Report => PromptOutcome::Report(path),
                                PromptPurpose::Relink(which) => {
                                    PromptOutcome::Relink(which, path)
                                }
                            };
                        }
                    }
                    if ui.button("Cancel").clicked() {
                        outcome = PromptOutcome::Cancel;
                    }
                });
                if let Some(note) = &self.note {
                    ui.colored_label(ui.visuals().warn_fg_color, note);
                }
                if self.purpose == PromptPurpose::Open {
                    let recent = recent();
                    if !recent.is_empty() {
                        ui.separator();
                        ui.label("Recent projects:");
                        for p in recent {
                            if ui.link(p.display().to_string()).clicked() {
                                outcome = PromptOutcome::Open(p);
                            }
                        }
                    }
                }
            });
        if !open {
            outcome = PromptOutcome::Cancel;
        }
        outcome
    }
}
