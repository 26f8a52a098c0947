//! The result card of the selected grain: bulk composition with intervals, minimum
//! crystallisation temperature with its interval, the lamella pair's temperature and a small
//! solvus with the bulk point.

use egui::Ui;

use super::with_interval;
use crate::app::{Action, Stage, View};
use crate::figures;

/// Draw the card.
pub fn ui(ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
    ui.heading("Result");
    let Some(at) = view.grain else {
        ui.label("Select a grain in the study tree.");
        return;
    };
    let (Some(sample), Some(grain)) = (view.doc.sample(at), view.doc.grain(at)) else {
        return;
    };
    ui.label(egui::RichText::new(format!("{} / {}", sample.id, grain.id)).strong());
    if view.stale {
        ui.colored_label(ui.visuals().warn_fg_color, "from before the last edit");
    }
    if let Some(f) = view.failure(at) {
        ui.colored_label(
            ui.visuals().error_fg_color,
            format!("Could not compute: {}", f.message),
        );
        return;
    }
    let Some(result) = view.result(at) else {
        if view.running {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.label("computing…");
            });
        } else {
            ui.label("Not computed yet.");
            if ui.button("▶ Compute all grains").clicked() {
                actions.push(Action::Run);
            }
        }
        return;
    };
    egui::ScrollArea::vertical().show(ui, |ui| {
        ui.add_space(4.0);
        ui.label(egui::RichText::new("Bulk composition (mole fraction)").strong())
            .on_hover_text("Reintegrated composition: median of the Monte Carlo draws and 95 % interval");
        egui::Grid::new("card-bulk").striped(true).show(ui, |ui| {
            for (symbol, s) in result.basis.iter().zip(&result.monte_carlo.bulk) {
                ui.label(format!("X_{symbol}"));
                ui.label(with_interval(s.median, s.p2_5, s.p97_5, 3));
                ui.end_row();
            }
        });
        ui.add_space(6.0);
        ui.label(egui::RichText::new("Minimum crystallisation T").strong())
            .on_hover_text("Highest temperature at which the bulk is not stable as one feldspar, against the solvus of the chosen model");
        match result.min_temperature() {
            Some(t) => {
                ui.label(
                    egui::RichText::new(format!("{:.0} °C", t.median)).size(22.0).strong(),
                );
                ui.label(format!("95 % interval {:.0}–{:.0} °C", t.p2_5, t.p97_5));
            }
            None => {
                ui.weak("none (see the messages)");
            }
        }
        ui.add_space(6.0);
        ui.label(egui::RichText::new("Exsolution (pair) T").strong())
            .on_hover_text("Two-feldspar temperatures of the host and lamella compositions (one per component)");
        match &result.pair {
            Some(p) => {
                let t = |v: Option<f64>| v.map(|v| format!("{v:.0} °C")).unwrap_or_else(|| "—".into());
                ui.label(format!(
                    "T_Ab {}   T_Or {}   T_An {}",
                    t(p.temperatures_c[0]),
                    t(p.temperatures_c[1]),
                    t(p.temperatures_c[2])
                ));
                if let Some(a) = p.adjusted_c {
                    ui.label(format!(
                        "adjusted pair: {a:.0} °C{}",
                        match p.concordant {
                            Some(true) => " (concordant)",
                            Some(false) => " (not concordant)",
                            None => "",
                        }
                    ));
                }
            }
            None => match &result.pyroxene_pair {
                Some(t) => {
                    ui.label(format!(
                        "{:.0} °C ± {:.0} °C ({})",
                        t.temperature_c,
                        t.see_c,
                        t.thermometer.id()
                    ));
                }
                None => {
                    ui.weak("no pair thermometer for this grain");
                }
            },
        }
        if result.system == reintegration::MineralSystem::Feldspar {
            ui.add_space(6.0);
            match view.figures.filter(|f| f.grain == Some(at)).map(|f| &f.solvus) {
                Some(Ok(fig)) => {
                    figures::figure_ui(ui, "card-solvus", fig, 220.0, true);
                }
                Some(Err(e)) => {
                    ui.weak(format!("no solvus figure: {e}"));
                }
                None => {
                    ui.spinner();
                }
            }
            if ui.link("Open the Temperature stage").clicked() {
                actions.push(Action::OpenStage(Stage::Temperature));
            }
        }
    });
}
