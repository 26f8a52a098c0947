//! The Bulk stage: reintegration settings, the computation with progress and Cancel, the bulk
//! composition by the molar and mass routes and its Monte Carlo interval.

use egui::Ui;

use crate::app::{Action, View};
use crate::command::Command;
use crate::jobs::RunJob;
use crate::panels::with_interval;

/// Draw the stage.
pub fn ui(ui: &mut Ui, view: &View<'_>, run: Option<&RunJob>, actions: &mut Vec<Action>) {
    let settings = &view.doc.project.settings;
    ui.label(egui::RichText::new("Reintegration").strong());
    egui::Grid::new("bulk-settings").num_columns(2).show(ui, |ui| {
        let l = ui.label("Monte Carlo draws");
        l.clone().on_hover_text("Draws per grain; each draw perturbs fractions, compositions, volumes and pressure within their uncertainties");
        let mut draws = settings.draws;
        if ui.add(egui::DragValue::new(&mut draws).range(10..=200_000).speed(50)).labelled_by(l.id).changed() {
            actions.push(Action::Edit(Command::SetDraws(draws)));
        }
        ui.end_row();
        let l = ui.label("Seed");
        l.clone().on_hover_text("Seed of the random draws: the same seed gives the same result");
        let mut seed = settings.seed;
        if ui.add(egui::DragValue::new(&mut seed)).labelled_by(l.id).changed() {
            actions.push(Action::Edit(Command::SetSeed(seed)));
        }
        ui.end_row();
        let l = ui.label("Pressure uncertainty");
        l.clone().on_hover_text("One sigma, drawn with the rest");
        let mut sigma = settings.pressure_sigma_kbar;
        if ui.add(egui::DragValue::new(&mut sigma).range(0.0..=10.0).speed(0.05).suffix(" kbar")).labelled_by(l.id).changed() {
            actions.push(Action::Edit(Command::SetPressureSigma(sigma)));
        }
        ui.end_row();
        ui.label("Volumes").on_hover_text("End-member molar volumes and structural state used to turn area fractions into moles");
        ui.label(format!("{:?}, {:?} state", settings.volumes.dataset, settings.volumes.state));
        ui.end_row();
        ui.label("Composition spread");
        ui.label(format!("{:?}", settings.composition_spread));
        ui.end_row();
    });
    ui.horizontal(|ui| match run {
        Some(job) => {
            ui.add(
                egui::ProgressBar::new(job.fraction())
                    .desired_width(260.0)
                    .text(job.stage_text()),
            );
            if ui.button("Cancel").clicked() {
                actions.push(Action::CancelRun);
            }
        }
        None => {
            if ui.button("▶ Compute all grains").clicked() {
                actions.push(Action::Run);
            }
        }
    });
    ui.separator();
    let Some(at) = view.grain else { return };
    let Some(r) = view.result(at) else {
        if let Some(f) = view.failure(at) {
            ui.colored_label(ui.visuals().error_fg_color, &f.message);
        } else {
            ui.label("Not computed yet.");
        }
        return;
    };
    egui::ScrollArea::vertical().show(ui, |ui| {
        let ri = &r.reintegration;
        ui.label(egui::RichText::new("Volume fractions").strong())
            .on_hover_text("Area fractions of the micrographs, pooled by measured area (Delesse principle)");
        ui.horizontal_wrapped(|ui| {
            for (p, f) in r.phases.iter().zip(&ri.volume_fractions) {
                ui.label(format!("{}: {:.4}", p.label, f));
            }
        });
        ui.add_space(6.0);
        ui.label(egui::RichText::new("Bulk composition").strong());
        egui::Grid::new("bulk-table").striped(true).num_columns(5).show(ui, |ui| {
            ui.strong("end-member");
            ui.strong("molar route").on_hover_text("Moles per unit volume from the molar volumes");
            ui.strong("mass route").on_hover_text("Mass per unit volume from the densities, then the formula again");
            ui.strong("Monte Carlo median (95 % interval)");
            ui.end_row();
            for (i, symbol) in r.basis.iter().enumerate() {
                ui.label(format!("X_{symbol}"));
                ui.label(ri.molar.get(i).map(|v| format!("{v:.4}")).unwrap_or_default());
                ui.label(ri.mass.get(i).map(|v| format!("{v:.4}")).unwrap_or_default());
                match r.monte_carlo.bulk.get(i) {
                    Some(s) => ui.label(with_interval(s.median, s.p2_5, s.p97_5, 4)),
                    None => ui.weak("—"),
                };
                ui.end_row();
            }
        });
        ui.label(format!("largest difference between the routes: {:.5}", ri.route_difference))
            .on_hover_text("The routes agree when each density equals molar mass over molar volume: a consistency check");
        if !ri.bulk_oxides_wt.is_empty() {
            ui.add_space(6.0);
            ui.label(egui::RichText::new("Bulk oxides (wt %)").strong());
            ui.horizontal_wrapped(|ui| {
                for (oxide, wt) in &ri.bulk_oxides_wt {
                    ui.label(format!("{oxide:?} {wt:.2}"));
                }
            });
        }
        for n in &ri.notes {
            ui.colored_label(ui.visuals().warn_fg_color, n);
        }
    });
}
