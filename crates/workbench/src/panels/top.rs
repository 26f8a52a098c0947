//! Menu bar, run controls with progress and Cancel, and the status line.

use egui::Ui;

use crate::app::{Action, View, shortcuts};
use crate::jobs::RunJob;

/// Draw the menu and run bar.
pub fn ui(
    ui: &mut Ui,
    view: &View<'_>,
    run: Option<&RunJob>,
    status: &str,
    actions: &mut Vec<Action>,
) {
    let ctx = ui.ctx().clone();
    egui::MenuBar::new().ui(ui, |ui| {
        ui.menu_button("File", |ui| {
            if ui
                .add(
                    egui::Button::new("Open…").shortcut_text(ctx.format_shortcut(&shortcuts::OPEN)),
                )
                .clicked()
            {
                actions.push(Action::Open);
            }
            if ui.button("Open the demo project").clicked() {
                actions.push(Action::OpenDemo);
            }
            ui.separator();
            if ui
                .add(egui::Button::new("Save").shortcut_text(ctx.format_shortcut(&shortcuts::SAVE)))
                .clicked()
            {
                actions.push(Action::Save);
            }
            if ui
                .add(
                    egui::Button::new("Save as…")
                        .shortcut_text(ctx.format_shortcut(&shortcuts::SAVE_AS)),
                )
                .clicked()
            {
                actions.push(Action::SaveAs);
            }
            ui.separator();
            if ui
                .button("Import spot analyses…")
                .on_hover_text("Add a CSV of microprobe spot analyses for the selected grain's mineral (or drop the file on the window)")
                .clicked()
            {
                actions.push(Action::ImportAnalyses);
            }
            let report = ui.add_enabled(view.run.is_some(), egui::Button::new("Export report…"));
            if report
                .on_hover_text("Write the report of the last results: .html (one self-contained page) or .md (figures beside it)")
                .on_disabled_hover_text("Compute the project first")
                .clicked()
            {
                actions.push(Action::ExportReport);
            }
        });
        ui.menu_button("Edit", |ui| {
            let undo = match view.doc.undo_label() {
                Some(w) => format!("Undo {w}"),
                None => "Undo".into(),
            };
            if ui
                .add_enabled(
                    view.doc.undo_label().is_some(),
                    egui::Button::new(undo).shortcut_text(ctx.format_shortcut(&shortcuts::UNDO)),
                )
                .clicked()
            {
                actions.push(Action::Undo);
            }
            let redo = match view.doc.redo_label() {
                Some(w) => format!("Redo {w}"),
                None => "Redo".into(),
            };
            if ui
                .add_enabled(
                    view.doc.redo_label().is_some(),
                    egui::Button::new(redo).shortcut_text(ctx.format_shortcut(&shortcuts::REDO)),
                )
                .clicked()
            {
                actions.push(Action::Redo);
            }
        });
        ui.menu_button("View", |ui| {
            ui.label("Theme");
            for (label, theme) in [
                ("Follow the system", egui::ThemePreference::System),
                ("Light", egui::ThemePreference::Light),
                ("Dark", egui::ThemePreference::Dark),
            ] {
                if ui.button(label).clicked() {
                    ui.ctx().set_theme(theme);
                }
            }
        });
        ui.separator();
        let title = match &view.doc.path {
            Some(p) => format!(
                "{}{} — {}",
                view.doc.project.name,
                if view.doc.dirty { " (edited)" } else { "" },
                p.display()
            ),
            None => view.doc.project.name.clone(),
        };
        ui.label(egui::RichText::new(title).strong());
    });
    ui.horizontal(|ui| {
        match run {
            Some(job) => {
                ui.add(
                    egui::ProgressBar::new(job.fraction())
                        .desired_width(220.0)
                        .show_percentage()
                        .text(format!("computing {} — {:.0} %", job.stage_text(), job.fraction() * 100.0)),
                );
                let cancel = ui.add_enabled(!job.cancelling(), egui::Button::new("Cancel"));
                if cancel.on_hover_text("Stop the computation").clicked() {
                    actions.push(Action::CancelRun);
                }
            }
            None => {
                let label = if view.stale || view.run.is_none() {
                    "▶ Compute all grains"
                } else {
                    "▶ Compute again"
                };
                if ui
                    .button(label)
                    .on_hover_text(format!(
                        "Image analysis, reintegration, Monte Carlo and temperatures for every grain ({})",
                        ui.ctx().format_shortcut(&shortcuts::RUN)
                    ))
                    .clicked()
                {
                    actions.push(Action::Run);
                }
                if view.stale {
                    ui.colored_label(
                        ui.visuals().warn_fg_color,
                        "results are from before the last edit",
                    );
                }
            }
        }
        ui.separator();
        ui.weak(status);
    });
}
