//! The Analyses stage: per phase, the spot analyses of the grain with their totals, end-member
//! fractions and quality flags (with reasons), which spots the computation used or left out,
//! and the phase mean with its scatter.

use egui::Ui;
use mineral::{FeldsparIron, PyroxeneIron, QualityLimits, feldspar_formula, pyroxene_formula};
use reintegration::MineralSystem;

use crate::app::{Action, View};
use crate::command::Command;

/// Draw the stage.
pub fn ui(ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
    let Some(at) = view.grain else {
        ui.label("Select a grain.");
        return;
    };
    let (Some(sample), Some(grain)) = (view.doc.sample(at), view.doc.grain(at)) else {
        return;
    };
    let settings = &view.doc.project.settings;
    let mut exclude = settings.exclude_flagged_analyses;
    if ui
        .checkbox(&mut exclude, "Leave out spots with quality warnings")
        .on_hover_text("Oxide total outside 98.5–101.5 wt %, or site sums more than 0.05 apfu from ideal (common practice)")
        .changed()
    {
        actions.push(Action::Edit(Command::SetExcludeFlagged(exclude)));
    }
    for (system, table) in view.spot_tables {
        if let Err(e) = table
            && *system == grain.system
        {
            ui.colored_label(ui.visuals().error_fg_color, format!("analyses file: {e}"));
        }
    }
    let result = view.result(at);
    let basis: Vec<&str> = grain.system.basis().iter().map(|e| e.symbol()).collect();
    egui::ScrollArea::vertical().show(ui, |ui| {
        for phase in &grain.phases {
            ui.add_space(8.0);
            let phase_result =
                result.and_then(|r| r.phases.iter().find(|p| p.label == phase.label));
            ui.heading(&phase.label);
            if let Some(p) = phase_result {
                ui.label(format!(
                    "{} spots used, {} left out; mean {}",
                    p.spots_used.len(),
                    p.spots_excluded.len(),
                    basis
                        .iter()
                        .zip(p.mean.iter().zip(&p.sd))
                        .map(|(s, (m, sd))| format!("X_{s} {m:.3} ± {sd:.3}"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ))
                .on_hover_text("mean ± standard deviation of the spots used");
            }
            egui::Grid::new(("spots", &phase.label))
                .striped(true)
                .show(ui, |ui| {
                    ui.strong("spot");
                    ui.strong("total (wt %)");
                    for s in &basis {
                        ui.strong(format!("X_{s}"));
                    }
                    ui.strong("used");
                    ui.strong("flags");
                    ui.end_row();
                    for (system, table) in view.spot_tables {
                        let Ok(table) = table else { continue };
                        if *system != grain.system {
                            continue;
                        }
                        for a in &table.analyses {
                            if a.id.sample != sample.id
                                || a.id.grain != grain.id
                                || a.id.phase != phase.label
                            {
                                continue;
                            }
                            let limits = QualityLimits::default();
                            let flags = match system {
                                MineralSystem::Feldspar => {
                                    feldspar_formula(a, FeldsparIron::Ferric, &limits).flags
                                }
                                MineralSystem::Pyroxene => {
                                    pyroxene_formula(a, PyroxeneIron::ChargeBalance, &limits).flags
                                }
                            };
                            let warn = flags.iter().any(|f| !f.is_note());
                            let colour = if warn {
                                ui.visuals().warn_fg_color
                            } else {
                                ui.visuals().text_color()
                            };
                            ui.colored_label(colour, &a.id.spot);
                            ui.label(format!("{:.2}", a.total_wt()));
                            match system.fractions_of(a) {
                                Some(x) => {
                                    for v in x.iter().take(basis.len()) {
                                        ui.label(format!("{v:.3}"));
                                    }
                                }
                                None => {
                                    for _ in &basis {
                                        ui.weak("—");
                                    }
                                }
                            }
                            let used = phase_result.map(|p| p.spots_used.contains(&a.id.spot));
                            match used {
                                Some(true) => ui.label("✔"),
                                Some(false) => {
                                    ui.colored_label(ui.visuals().warn_fg_color, "left out")
                                }
                                None => ui.weak("—"),
                            };
                            // Warnings in full; notes (values below detection counted as zero) on hover.
                            let warnings: Vec<String> = flags
                                .iter()
                                .filter(|f| !f.is_note())
                                .map(|f| f.message())
                                .collect();
                            let notes: Vec<String> = flags
                                .iter()
                                .filter(|f| f.is_note())
                                .map(|f| f.message())
                                .collect();
                            let r = if warnings.is_empty() {
                                ui.weak(if notes.is_empty() {
                                    String::new()
                                } else {
                                    format!("{} notes", notes.len())
                                })
                            } else {
                                ui.colored_label(colour, warnings.join("; "))
                            };
                            if !notes.is_empty() {
                                r.on_hover_text(notes.join("\n"));
                            }
                            ui.end_row();
                        }
                    }
                });
        }
    });
}
