//! The message strip: every warning and error for the selected grain, each clickable to the
//! stage (and micrograph) where it arises.

use egui::Ui;

use super::route::failure_stage;
use crate::app::{Action, Stage, View};
use crate::document::{Document, MicrographRef};
use project::FileRef;

/// How serious a message is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Severity {
    /// Could not compute.
    Error,
    /// A result to check.
    Warning,
    /// For information.
    Note,
}

/// One message with where it arises.
#[derive(Debug, Clone, PartialEq)]
pub struct Message {
    /// Seriousness.
    pub severity: Severity,
    /// Text.
    pub text: String,
    /// Where to go.
    pub stage: Stage,
    /// The micrograph, when it is about one.
    pub micrograph: Option<usize>,
    /// A file the project names that is not there (offers to relink it).
    pub file: Option<FileRef>,
}

/// The messages of the selection.
pub fn messages(view: &View<'_>) -> Vec<Message> {
    let mut out = Vec::new();
    // Missing files stop whatever uses them, in any grain: all are listed, first.
    for m in view.missing {
        let at = Document::micrograph_of(m.which);
        out.push(Message {
            severity: Severity::Error,
            text: m.to_string(),
            stage: if at.is_some() {
                Stage::Image
            } else {
                Stage::Analyses
            },
            micrograph: at
                .filter(|a| Some(a.grain) == view.grain)
                .map(|a| a.micrograph),
            file: Some(m.which),
        });
    }
    let selected_missing = view
        .micrograph_ref()
        .is_some_and(|at| view.missing_micrograph(at).is_some());
    if let Some(e) = view.run_error {
        out.push(Message {
            severity: Severity::Error,
            text: format!("the computation stopped: {e}"),
            stage: Stage::Bulk,
            micrograph: None,
            file: None,
        });
    }
    if let Some(e) = view.image_error.filter(|_| !selected_missing) {
        out.push(Message {
            severity: Severity::Error,
            text: format!("micrograph: {e}"),
            stage: Stage::Image,
            micrograph: Some(view.micrograph),
            file: None,
        });
    }
    let Some(at) = view.grain else { return out };
    let grain = view.doc.grain(at);
    // A grain stopped by a missing file says what the missing-file message above says already.
    let names_a_missing_file = |text: &str| {
        view.missing.iter().any(|m| {
            text.contains(&m.resolved.display().to_string())
                || text.contains(&m.stored.display().to_string())
        })
    };
    if let Some(f) = view
        .failure(at)
        .filter(|f| !names_a_missing_file(&f.message))
    {
        out.push(Message {
            severity: Severity::Error,
            text: f.message.clone(),
            stage: failure_stage(&f.message),
            micrograph: None,
            file: None,
        });
    }
    if let Some(r) = view.result(at) {
        for note in &r.notes {
            let micrograph = grain.and_then(|g| {
                g.micrographs
                    .iter()
                    .position(|m| note.starts_with(&format!("{}:", m.label)))
            });
            let (stage, severity) = if micrograph.is_some() && note.contains(" hand edits cover ") {
                (Stage::Phases, Severity::Note)
            } else if micrograph.is_some() {
                (Stage::Phases, Severity::Warning)
            } else if note.starts_with("spot ") {
                (Stage::Analyses, Severity::Warning)
            } else if note.starts_with("minimum temperature") || note.starts_with("pyroxene") {
                (Stage::Temperature, Severity::Note)
            } else {
                (Stage::Bulk, Severity::Note)
            };
            out.push(Message {
                severity,
                text: note.clone(),
                stage,
                micrograph,
                file: None,
            });
        }
        if let Some(p) = &r.pair {
            for n in &p.notes {
                out.push(Message {
                    severity: Severity::Note,
                    text: format!("pair: {n}"),
                    stage: Stage::Temperature,
                    micrograph: None,
                    file: None,
                });
            }
        }
    }
    if view.stale {
        out.push(Message {
            severity: Severity::Note,
            text: "the results are from before the last edit; compute again to update them".into(),
            stage: Stage::Bulk,
            micrograph: None,
            file: None,
        });
    }
    out
}

/// Draw the strip.
pub fn ui(ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
    let list = messages(view);
    ui.horizontal(|ui| {
        ui.label(egui::RichText::new("Messages").strong());
        ui.weak(format!("{} for the selection", list.len()));
    });
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show(ui, |ui| {
            if list.is_empty() {
                ui.weak("Nothing to report.");
            }
            for m in list {
                ui.horizontal(|ui| {
                    let (glyph, colour) = match m.severity {
                        Severity::Error => ("✖", ui.visuals().error_fg_color),
                        Severity::Warning => ("⚠", ui.visuals().warn_fg_color),
                        Severity::Note => ("ℹ", ui.visuals().weak_text_color()),
                    };
                    ui.colored_label(colour, glyph);
                    ui.weak(format!("[{}]", m.stage.label()));
                    let r = ui
                        .add(egui::Button::new(&m.text).frame(false))
                        .on_hover_text(format!("Go to {}", m.stage.label()));
                    if let Some(which) = m.file
                        && ui
                            .small_button("Relink…")
                            .on_hover_text("Point the project at the file's new place (undoable)")
                            .clicked()
                    {
                        actions.push(Action::Relink(which));
                    }
                    if r.clicked() {
                        if let Some(at) = m.file.and_then(Document::micrograph_of) {
                            actions.push(Action::SelectMicrograph(at));
                        } else if let (Some(g), Some(micrograph)) = (view.grain, m.micrograph) {
                            actions.push(Action::SelectMicrograph(MicrographRef {
                                grain: g,
                                micrograph,
                            }));
                        }
                        actions.push(Action::OpenStage(m.stage));
                    }
                });
            }
        });
}
