//! The Bulk stage: reintegration settings, the computation with progress and Cancel, the bulk
//! composition by the molar and mass routes and its Monte Carlo interval.

use egui::{RichText, Ui};
use mineral::{FeldsparState, VolumeDataset};
use reintegration::{CompositionSpread, VolumeSettings};

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
        let l = ui.label("Molar volumes");
        l.clone().on_hover_text("End-member molar volumes that turn volume fractions into moles (molar route) and give each phase's density as molar mass over molar volume (mass route)");
        ui.horizontal(|ui| {
            let v = settings.volumes;
            egui::ComboBox::from_id_salt("volume-table")
                .selected_text(v.dataset.citation().split(" (").next().unwrap_or("table").split(',').next().unwrap_or("table"))
                .width(220.0)
                .show_ui(ui, |ui| {
                    for d in [VolumeDataset::HollandPowell2011, VolumeDataset::Berman1988] {
                        if ui.selectable_label(v.dataset == d, d.citation()).clicked() && v.dataset != d {
                            actions.push(Action::Edit(Command::SetVolumes(VolumeSettings { dataset: d, ..v })));
                        }
                    }
                })
                .response
                .labelled_by(l.id);
            let s = ui.label("state");
            s.clone().on_hover_text("Structural state of the alkali feldspar end-members: disordered (high albite, sanidine) as befits the primary crystal, or ordered (low albite, microcline)");
            egui::ComboBox::from_id_salt("volume-state")
                .selected_text(match v.state {
                    FeldsparState::High => "disordered (high)",
                    FeldsparState::Low => "ordered (low)",
                })
                .show_ui(ui, |ui| {
                    for (st, name) in [(FeldsparState::High, "disordered (high)"), (FeldsparState::Low, "ordered (low)")] {
                        if ui.selectable_label(v.state == st, name).clicked() && v.state != st {
                            actions.push(Action::Edit(Command::SetVolumes(VolumeSettings { state: st, ..v })));
                        }
                    }
                })
                .response
                .labelled_by(s.id);
        });
        ui.end_row();
        let l = ui.label("Composition spread");
        l.clone().on_hover_text("How the spots' scatter sets each phase's composition uncertainty in the draws");
        egui::ComboBox::from_id_salt("composition-spread")
            .selected_text(match settings.composition_spread {
                CompositionSpread::StandardError => "standard error of the mean",
                CompositionSpread::Scatter => "scatter of the spots",
            })
            .show_ui(ui, |ui| {
                for (c, name, tip) in [
                    (CompositionSpread::StandardError, "standard error of the mean", "σ/√n: the phase is homogeneous and the spots sample it"),
                    (CompositionSpread::Scatter, "scatter of the spots", "σ: each draw could be any spot (zoned or heterogeneous phases)"),
                ] {
                    if ui.selectable_label(settings.composition_spread == c, name).on_hover_text(tip).clicked()
                        && settings.composition_spread != c
                    {
                        actions.push(Action::Edit(Command::SetCompositionSpread(c)));
                    }
                }
            })
            .response
            .labelled_by(l.id);
        ui.end_row();
    });
    if let Some(at) = view.grain
        && let Some(grain) = view.doc.grain(at)
    {
        ui.label(RichText::new("Densities (mass route)").strong()).on_hover_text(
            "The mass route weights each phase by volume fraction × density. Left to the molar volumes, density = molar mass / molar volume and the two routes agree (a consistency check); a density you enter (pycnometer, literature) makes them differ by the amount it disagrees",
        );
        ui.horizontal_wrapped(|ui| {
            for (i, p) in grain.phases.iter().enumerate() {
                let mut entered = p.density_g_cm3.is_some();
                if ui
                    .checkbox(&mut entered, format!("{}: enter", p.label))
                    .on_hover_text("Unticked: molar mass / molar volume")
                    .changed()
                {
                    let from_result = view
                        .result(at)
                        .and_then(|r| r.reintegration.densities_g_cm3.get(i).copied());
                    actions.push(Action::Edit(Command::SetPhaseDensity {
                        grain: at,
                        phase: i,
                        density_g_cm3: entered.then(|| from_result.unwrap_or(2.6)),
                    }));
                }
                if let Some(d) = p.density_g_cm3 {
                    let mut v = d;
                    if ui
                        .add(
                            egui::DragValue::new(&mut v)
                                .range(0.6..=9.9)
                                .speed(0.001)
                                .max_decimals(3)
                                .suffix(" g/cm³"),
                        )
                        .changed()
                    {
                        actions.push(Action::Edit(Command::SetPhaseDensity {
                            grain: at,
                            phase: i,
                            density_g_cm3: Some(v),
                        }));
                    }
                } else if let Some(d) = view
                    .result(at)
                    .and_then(|r| r.reintegration.densities_g_cm3.get(i))
                {
                    ui.weak(format!("{d:.3} g/cm³"));
                }
                ui.separator();
            }
        });
    }
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
            if ui
                .add_enabled(view.grain.is_some() && view.run.is_some(), egui::Button::new("▶ Compute this grain"))
                .on_hover_text("Recompute the selected grain alone (image analysis, reintegration, Monte Carlo, temperatures); the other grains keep their results")
                .on_disabled_hover_text("Compute all grains once first")
                .clicked()
            {
                actions.push(Action::RunGrain);
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
