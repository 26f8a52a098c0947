//! The grain's route across the top of the centre: five stages, each with its mark.

use egui::Ui;

use super::Mark;
use crate::app::{Action, Stage, View};
use crate::document::GrainRef;

/// The mark of a stage for a grain.
pub fn stage_mark(view: &View<'_>, at: GrainRef, stage: Stage) -> Mark {
    let Some(result) = view.result(at) else {
        return match view.failure(at) {
            Some(f) if stage == failure_stage(&f.message) => Mark::Attention,
            _ => Mark::NotStarted,
        };
    };
    let micrograph_warnings = result.micrographs.iter().any(|m| !m.warnings.is_empty());
    match stage {
        Stage::Image => Mark::Done,
        Stage::Phases if micrograph_warnings => Mark::Attention,
        Stage::Phases => Mark::Done,
        Stage::Analyses if result.phases.iter().any(|p| !p.spots_excluded.is_empty()) => {
            Mark::Attention
        }
        Stage::Analyses => Mark::Done,
        Stage::Bulk if !result.reintegration.notes.is_empty() => Mark::Attention,
        Stage::Bulk => Mark::Done,
        Stage::Temperature => {
            let mc = &result.monte_carlo;
            let complete = result.min_temperature().is_some()
                && mc.outcomes.found == mc.temperature_draws.len()
                && result.pair.as_ref().is_none_or(|p| p.notes.is_empty());
            if complete {
                Mark::Done
            } else {
                Mark::Attention
            }
        }
    }
}

/// The stage a failure message points to.
pub fn failure_stage(message: &str) -> Stage {
    if message.starts_with("micrograph") || message.contains("no micrograph") {
        Stage::Image
    } else if message.contains("spot") || message.starts_with("phase") {
        Stage::Analyses
    } else {
        Stage::Bulk
    }
}

/// Draw the route.
pub fn ui(ui: &mut Ui, view: &View<'_>, open: Stage, actions: &mut Vec<Action>) {
    ui.horizontal(|ui| {
        if let Some(at) = view.grain {
            let sample = view.doc.sample(at).map(|s| s.id.as_str()).unwrap_or("?");
            let grain = view.doc.grain(at).map(|g| g.id.as_str()).unwrap_or("?");
            ui.label(egui::RichText::new(format!("{sample} / {grain}")).strong());
            ui.add_space(12.0);
        }
        for (i, stage) in Stage::ALL.into_iter().enumerate() {
            if i > 0 {
                ui.weak("›");
            }
            let mark = view
                .grain
                .map(|g| stage_mark(view, g, stage))
                .unwrap_or(Mark::NotStarted);
            ui.label(mark.rich(ui)).on_hover_text(mark.meaning());
            let button = ui
                .selectable_label(open == stage, egui::RichText::new(stage.label()).size(15.0))
                .on_hover_text(format!(
                    "{}: {} (Alt+{})",
                    stage.label(),
                    mark.meaning(),
                    i + 1
                ));
            if button.clicked() {
                actions.push(Action::OpenStage(stage));
            }
        }
    });
    let keys = [
        egui::Key::Num1,
        egui::Key::Num2,
        egui::Key::Num3,
        egui::Key::Num4,
        egui::Key::Num5,
    ];
    for (key, stage) in keys.into_iter().zip(Stage::ALL) {
        if ui.input_mut(|i| i.consume_key(egui::Modifiers::ALT, key)) {
            actions.push(Action::OpenStage(stage));
        }
    }
}
