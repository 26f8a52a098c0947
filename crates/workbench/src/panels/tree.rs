//! The study tree: samples > grains > micrographs, each grain with its minimum temperature and
//! status mark once computed.

use egui::Ui;

use super::Mark;
use crate::app::{Action, Stage, View};
use crate::document::{GrainRef, MicrographRef};

/// The overall mark of a grain: the worst of its stages.
pub fn grain_mark(view: &View<'_>, at: GrainRef) -> Mark {
    if view.failure(at).is_some() {
        return Mark::Attention;
    }
    if view.result(at).is_none() {
        return Mark::NotStarted;
    }
    let marks: Vec<Mark> = Stage::ALL
        .iter()
        .map(|s| super::route::stage_mark(view, at, *s))
        .collect();
    if marks.contains(&Mark::Attention) {
        Mark::Attention
    } else {
        Mark::Done
    }
}

/// Draw the tree.
pub fn ui(ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
    ui.heading("Study");
    ui.weak(&view.doc.project.name);
    ui.separator();
    egui::ScrollArea::vertical().show(ui, |ui| {
        for (s, sample) in view.doc.project.samples.iter().enumerate() {
            egui::CollapsingHeader::new(egui::RichText::new(&sample.id).strong())
                .id_salt(("sample", s))
                .default_open(true)
                .show(ui, |ui| {
                    if !sample.description.is_empty() {
                        ui.weak(&sample.description);
                    }
                    for (g, grain) in sample.grains.iter().enumerate() {
                        let at = GrainRef {
                            sample: s,
                            grain: g,
                        };
                        let selected = view.grain == Some(at);
                        let mark = grain_mark(view, at);
                        ui.horizontal(|ui| {
                            ui.label(mark.rich(ui)).on_hover_text(mark.meaning());
                            let system = match grain.system {
                                reintegration::MineralSystem::Feldspar => "feldspar",
                                reintegration::MineralSystem::Pyroxene => "pyroxene",
                            };
                            let r = ui
                                .selectable_label(selected, egui::RichText::new(&grain.id).strong())
                                .on_hover_text(format!(
                                    "{} grain {} ({system})",
                                    sample.id, grain.id
                                ));
                            if r.clicked() {
                                actions.push(Action::SelectGrain(at));
                            }
                            let t = view
                                .result(at)
                                .and_then(|r| r.min_temperature())
                                .map(|t| format!("≥ {:.0} °C", t.median));
                            match t {
                                Some(t) => {
                                    ui.label(t).on_hover_text(
                                        "minimum crystallisation temperature (median of the draws)",
                                    );
                                }
                                None => {
                                    ui.weak(system);
                                }
                            }
                        });
                        ui.indent(("micrographs", s, g), |ui| {
                            for (m, micro) in grain.micrographs.iter().enumerate() {
                                let here = selected && view.micrograph == m;
                                let at = MicrographRef {
                                    grain: at,
                                    micrograph: m,
                                };
                                ui.horizontal(|ui| {
                                    let r = ui
                                        .selectable_label(here, format!("▣ {}", micro.label))
                                        .on_hover_text(micro.path.display().to_string());
                                    if r.clicked() {
                                        actions.push(Action::SelectMicrograph(at));
                                    }
                                    if let Some(missing) = view.missing_micrograph(at) {
                                        missing_ui(ui, missing, actions);
                                    }
                                });
                            }
                        });
                    }
                });
        }
        if !view.doc.project.analysis_files.is_empty() {
            ui.separator();
            egui::CollapsingHeader::new("Spot analyses files")
                .id_salt("analysis files")
                .default_open(true)
                .show(ui, |ui| {
                    for (index, file) in view.doc.project.analysis_files.iter().enumerate() {
                        ui.horizontal(|ui| {
                            let name = file.path.file_name().map_or_else(
                                || file.path.display().to_string(),
                                |n| n.to_string_lossy().into_owned(),
                            );
                            ui.label(format!("▤ {name}"))
                                .on_hover_text(file.path.display().to_string());
                            let missing = view
                                .missing
                                .iter()
                                .find(|m| m.which == project::FileRef::AnalysisFile { index });
                            if let Some(missing) = missing {
                                missing_ui(ui, missing, actions);
                            }
                        });
                    }
                });
        }
        if view.doc.project.samples.is_empty() {
            ui.label("No samples in this project.");
            if ui.button("Open the demo project").clicked() {
                actions.push(Action::OpenDemo);
            }
        }
    });
}

/// The mark of an entry whose file is not there, with the action to relink it.
fn missing_ui(ui: &mut Ui, missing: &project::MissingFile, actions: &mut Vec<Action>) {
    ui.colored_label(ui.visuals().error_fg_color, "✖ missing")
        .on_hover_text(missing.to_string());
    if ui
        .small_button("Relink…")
        .on_hover_text("Point the project at the file's new place (undoable)")
        .clicked()
    {
        actions.push(Action::Relink(missing.which));
    }
}
