//! The Analyses stage: per phase, the grain's spot analyses with their oxides (each value
//! editable: a correction is kept in the project, the file is never changed), totals,
//! end-member fractions and quality flags with their reasons; a box to leave each spot out or
//! take it back; the phase mean and scatter of the spots in use, updated at once; a plot of the
//! spots; and the analyses files of the project, with import by file dialog or by dropping a
//! CSV on the window.

use egui::{Color32, RichText, Ui};
use egui_plot::{Legend, MarkerShape, Plot, Points};
use mineral::{
    Analysis, FeldsparIron, Flag, Oxide, PyroxeneIron, QualityLimits, feldspar_formula,
    pyroxene_formula,
};
use project::Grain;
use reintegration::MineralSystem;

use crate::app::{Action, View};
use crate::command::Command;
use crate::document::GrainRef;
use crate::jobs::class_colour;

/// View state of the Analyses stage: the value being typed, if any.
#[derive(Default)]
pub struct AnalysesStage {
    editing: Option<(String, Oxide, String)>,
}

/// One spot of the grain as the stage shows it.
pub struct SpotRow {
    /// The analysis with the user's corrections.
    pub analysis: Analysis,
    /// The analysis as read from the file.
    pub original: Analysis,
    /// Its quality flags (warnings and notes).
    pub flags: Vec<Flag>,
    /// End-member fractions, when it has usable cations.
    pub fractions: Option<Vec<f64>>,
    /// Left out by the user.
    pub excluded_by_hand: bool,
    /// Used in the computation (not left out by hand, nor for a warning when those are left
    /// out, and with usable cations).
    pub used: bool,
}

fn flags_of(system: MineralSystem, a: &Analysis) -> Vec<Flag> {
    let limits = QualityLimits::default();
    match system {
        MineralSystem::Feldspar => feldspar_formula(a, FeldsparIron::Ferric, &limits).flags,
        MineralSystem::Pyroxene => pyroxene_formula(a, PyroxeneIron::ChargeBalance, &limits).flags,
    }
}

/// The spots of one phase of a grain, as the computation will use them (the same rules as the
/// project run).
pub fn spot_rows(view: &View<'_>, at: GrainRef, phase: &str) -> Vec<SpotRow> {
    let (Some(sample), Some(grain)) = (view.doc.sample(at), view.doc.grain(at)) else {
        return Vec::new();
    };
    let exclude_flagged = view.doc.project.settings.exclude_flagged_analyses;
    let mut rows = Vec::new();
    for (system, table) in view.spot_tables {
        let Ok(table) = table else { continue };
        if *system != grain.system {
            continue;
        }
        for a in &table.analyses {
            if a.id.sample != sample.id || a.id.grain != grain.id || a.id.phase != phase {
                continue;
            }
            let analysis = grain.edited_analysis(a);
            let flags = flags_of(*system, &analysis);
            let fractions = system.fractions_of(&analysis);
            let excluded_by_hand = grain.spot_excluded(&a.id.spot);
            let warned = flags.iter().any(|f| !f.is_note());
            rows.push(SpotRow {
                used: !(excluded_by_hand || exclude_flagged && warned) && fractions.is_some(),
                analysis,
                original: a.clone(),
                flags,
                fractions,
                excluded_by_hand,
            });
        }
    }
    rows
}

/// Mean and sample standard deviation per end-member of the spots in use (`None` with none).
pub fn mean_and_sd(rows: &[SpotRow]) -> Option<(Vec<f64>, Vec<f64>)> {
    let used: Vec<&Vec<f64>> = rows
        .iter()
        .filter(|r| r.used)
        .filter_map(|r| r.fractions.as_ref())
        .collect();
    let n = used.len();
    let k = used.first()?.len();
    let mean: Vec<f64> = (0..k)
        .map(|j| used.iter().map(|x| x[j]).sum::<f64>() / n as f64)
        .collect();
    let sd = (0..k)
        .map(|j| {
            if n < 2 {
                0.0
            } else {
                (used.iter().map(|x| (x[j] - mean[j]).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt()
            }
        })
        .collect();
    Some((mean, sd))
}

impl AnalysesStage {
    /// Draw the stage.
    pub fn ui(&mut self, ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
        let Some(at) = view.grain else {
            ui.label("Select a grain.");
            return;
        };
        let Some(grain) = view.doc.grain(at) else {
            return;
        };
        self.files_ui(ui, view, grain, actions);
        let settings = &view.doc.project.settings;
        let mut exclude = settings.exclude_flagged_analyses;
        if ui
            .checkbox(&mut exclude, "Leave out spots with quality warnings")
            .on_hover_text("Oxide total outside 98.5–101.5 wt %, or site sums more than 0.05 apfu from ideal (common practice)")
            .changed()
        {
            actions.push(Action::Edit(Command::SetExcludeFlagged(exclude)));
        }
        ui.weak("Untick a spot to leave it out; click a value to correct it (Enter to keep, empty for the file's value). Compute again to update the bulk.");
        let basis: Vec<&str> = grain.system.basis().iter().map(|e| e.symbol()).collect();
        let phases: Vec<(String, Vec<SpotRow>)> = grain
            .phases
            .iter()
            .map(|p| (p.label.clone(), spot_rows(view, at, &p.label)))
            .collect();
        egui::ScrollArea::both().show(ui, |ui| {
            self.scatter_ui(ui, &basis, &phases);
            for (label, rows) in &phases {
                ui.add_space(8.0);
                self.phase_ui(ui, view, at, grain, label, rows, &basis, actions);
            }
        });
    }

    fn files_ui(&mut self, ui: &mut Ui, view: &View<'_>, grain: &Grain, actions: &mut Vec<Action>) {
        ui.horizontal_wrapped(|ui| {
            ui.label(RichText::new("Analyses files").strong());
            for (i, (file, (system, table))) in view
                .doc
                .project
                .analysis_files
                .iter()
                .zip(view.spot_tables)
                .enumerate()
            {
                let text = format!(
                    "{} ({})",
                    file.path.display(),
                    match system {
                        MineralSystem::Feldspar => "feldspar",
                        MineralSystem::Pyroxene => "pyroxene",
                    }
                );
                match table {
                    Ok(t) => {
                        ui.label(text).on_hover_text(format!(
                            "{} analyses{}",
                            t.analyses.len(),
                            if t.ignored_columns.is_empty() {
                                String::new()
                            } else {
                                format!(
                                    "; columns not read: {}",
                                    t.ignored_columns
                                        .iter()
                                        .map(|(c, n)| format!("{n} (column {c})"))
                                        .collect::<Vec<_>>()
                                        .join(", ")
                                )
                            }
                        ));
                    }
                    Err(e) => {
                        ui.colored_label(ui.visuals().error_fg_color, format!("{text}: {e}"));
                    }
                }
                if ui
                    .small_button("✖")
                    .on_hover_text("Remove this file from the project (the file itself stays)")
                    .clicked()
                {
                    actions.push(Action::Edit(Command::RemoveAnalysisFile { index: i }));
                }
            }
            if ui
                .button("Import CSV…")
                .on_hover_text(format!(
                    "Add a file of spot analyses as {} analyses (or drop a CSV on the window)",
                    match grain.system {
                        MineralSystem::Feldspar => "feldspar",
                        MineralSystem::Pyroxene => "pyroxene",
                    }
                ))
                .clicked()
            {
                actions.push(Action::ImportAnalyses);
            }
        });
    }

    fn scatter_ui(&self, ui: &mut Ui, basis: &[&str], phases: &[(String, Vec<SpotRow>)]) {
        if basis.len() < 2 {
            return;
        }
        let (xi, yi) = (1, 0);
        ui.label(RichText::new("Spots of each phase").strong()).on_hover_text(
            "Each spot's end-member fractions; filled: used, hollow: left out; the large mark is the mean of the spots used",
        );
        Plot::new("spot-scatter")
            .height(180.0)
            .legend(Legend::default())
            .x_axis_label(format!("X_{}", basis[xi]))
            .y_axis_label(format!("X_{}", basis[yi]))
            .allow_scroll(false)
            .show(ui, |pui| {
                for (k, (label, rows)) in phases.iter().enumerate() {
                    let colour = class_colour(k);
                    let pick = |used: bool| -> Vec<[f64; 2]> {
                        rows.iter()
                            .filter(|r| r.used == used)
                            .filter_map(|r| r.fractions.as_ref())
                            .map(|x| [x[xi], x[yi]])
                            .collect()
                    };
                    pui.points(
                        Points::new(label.clone(), pick(true))
                            .color(colour)
                            .radius(3.5)
                            .shape(MarkerShape::Circle)
                            .filled(true),
                    );
                    let out = pick(false);
                    if !out.is_empty() {
                        pui.points(
                            Points::new(format!("{label} (left out)"), out)
                                .color(colour)
                                .radius(3.5)
                                .shape(MarkerShape::Circle)
                                .filled(false),
                        );
                    }
                    if let Some((mean, _)) = mean_and_sd(rows) {
                        pui.points(
                            Points::new(format!("{label} mean"), vec![[mean[xi], mean[yi]]])
                                .color(colour)
                                .radius(7.0)
                                .shape(MarkerShape::Diamond)
                                .filled(true),
                        );
                    }
                }
            });
    }

    #[allow(clippy::too_many_arguments)]
    fn phase_ui(
        &mut self,
        ui: &mut Ui,
        view: &View<'_>,
        at: GrainRef,
        grain: &Grain,
        label: &str,
        rows: &[SpotRow],
        basis: &[&str],
        actions: &mut Vec<Action>,
    ) {
        ui.heading(label);
        let used = rows.iter().filter(|r| r.used).count();
        match mean_and_sd(rows) {
            Some((mean, sd)) => {
                ui.label(format!(
                    "{used} of {} spots used; mean ± sd: {}",
                    rows.len(),
                    basis
                        .iter()
                        .zip(mean.iter().zip(&sd))
                        .map(|(s, (m, d))| format!("X_{s} {m:.3} ± {d:.3}"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ))
                .on_hover_text("Mean and sample standard deviation of the spots in use (the scatter); the Monte Carlo uses the standard error or the scatter as set in the Bulk stage");
            }
            None => {
                ui.colored_label(
                    ui.visuals().warn_fg_color,
                    format!("no spot in use for '{label}' ({} in the files): the grain cannot be computed", rows.len()),
                );
            }
        }
        if let Some(p) = view
            .result(at)
            .and_then(|r| r.phases.iter().find(|p| p.label == label))
            && view.stale
        {
            ui.weak(format!(
                "last computed with {} spots; compute again to use the current choice",
                p.spots_used.len()
            ));
        }
        if rows.is_empty() {
            return;
        }
        // Oxide columns: those any spot of the phase reports.
        let oxides: Vec<Oxide> = Oxide::ALL
            .into_iter()
            .filter(|o| {
                rows.iter().any(|r| {
                    r.original.oxides_wt.contains_key(o) || r.analysis.oxides_wt.contains_key(o)
                })
            })
            .collect();
        egui::Grid::new(("spots", label))
            .striped(true)
            .min_col_width(20.0)
            .show(ui, |ui| {
                ui.strong("use / spot")
                    .on_hover_text("Untick a spot to leave it out of the phase mean");
                let headers: Vec<egui::Id> =
                    oxides.iter().map(|o| ui.strong(o.formula()).id).collect();
                ui.strong("total");
                for s in basis {
                    ui.strong(format!("X_{s}"));
                }
                ui.strong("flags");
                ui.end_row();
                for row in rows {
                    let spot = &row.analysis.id.spot;
                    let warnings: Vec<String> = row
                        .flags
                        .iter()
                        .filter(|f| !f.is_note())
                        .map(|f| f.message())
                        .collect();
                    let notes: Vec<String> = row
                        .flags
                        .iter()
                        .filter(|f| f.is_note())
                        .map(|f| f.message())
                        .collect();
                    let colour = if !warnings.is_empty() {
                        ui.visuals().warn_fg_color
                    } else if row.used {
                        ui.visuals().text_color()
                    } else {
                        ui.visuals().weak_text_color()
                    };
                    let mut keep = !row.excluded_by_hand;
                    if ui
                        .checkbox(&mut keep, RichText::new(spot).color(colour))
                        .on_hover_text(format!("Use spot {spot} (untick to leave it out)"))
                        .changed()
                    {
                        actions.push(Action::Edit(Command::SetSpotExcluded {
                            grain: at,
                            spot: spot.clone(),
                            excluded: !keep,
                        }));
                    }
                    for (o, header) in oxides.iter().zip(&headers) {
                        self.value_cell_ui(ui, at, grain, row, *o, *header, actions);
                    }
                    ui.colored_label(colour, format!("{:.2}", row.analysis.total_wt()));
                    match &row.fractions {
                        Some(x) => {
                            for v in x.iter().take(basis.len()) {
                                ui.label(format!("{v:.3}"));
                            }
                        }
                        None => {
                            for _ in basis {
                                ui.weak("—");
                            }
                        }
                    }
                    let status = if row.excluded_by_hand {
                        "left out by hand".to_string()
                    } else if !row.used && !warnings.is_empty() {
                        format!("left out: {}", warnings.join("; "))
                    } else if !warnings.is_empty() {
                        format!("kept despite: {}", warnings.join("; "))
                    } else if !row.used {
                        "left out: no usable cations".to_string()
                    } else if notes.is_empty() {
                        String::new()
                    } else {
                        format!("{} notes", notes.len())
                    };
                    let r = if warnings.is_empty() {
                        ui.weak(status)
                    } else {
                        ui.label(RichText::new(status).color(ui.visuals().warn_fg_color))
                    };
                    if !notes.is_empty() {
                        r.on_hover_text(notes.join("\n"));
                    }
                    ui.end_row();
                }
            });
    }

    #[allow(clippy::too_many_arguments)]
    fn value_cell_ui(
        &mut self,
        ui: &mut Ui,
        at: GrainRef,
        grain: &Grain,
        row: &SpotRow,
        oxide: Oxide,
        header: egui::Id,
        actions: &mut Vec<Action>,
    ) {
        let spot = &row.analysis.id.spot;
        let editing_here = self
            .editing
            .as_ref()
            .is_some_and(|(s, o, _)| s == spot && *o == oxide);
        if editing_here {
            let Some((_, _, text)) = self.editing.as_mut() else {
                return;
            };
            let r = ui
                .add(egui::TextEdit::singleline(text).desired_width(48.0))
                .labelled_by(header);
            r.request_focus();
            let enter = ui.input(|i| i.key_pressed(egui::Key::Enter));
            let escape = ui.input(|i| i.key_pressed(egui::Key::Escape));
            if escape {
                self.editing = None;
            } else if enter || r.lost_focus() {
                let t = text.trim().replace(',', ".");
                let value = if t.is_empty() {
                    Ok(None)
                } else {
                    t.parse::<f64>().map(Some)
                };
                match value {
                    Ok(v) => {
                        let current = grain.spot_edit(spot, oxide);
                        if v != current {
                            actions.push(Action::Edit(Command::SetSpotValue {
                                grain: at,
                                spot: spot.clone(),
                                oxide,
                                wt: v,
                            }));
                        }
                        self.editing = None;
                    }
                    Err(_) => {
                        r.on_hover_text(
                            "type a number in wt %, or leave it empty for the file's value",
                        );
                    }
                }
            }
            return;
        }
        let edited = grain.spot_edit(spot, oxide);
        let shown = row.analysis.wt(oxide);
        let censored = row
            .original
            .censored
            .get(&oxide)
            .filter(|_| edited.is_none());
        let text = match censored {
            Some(mineral::Censored::BelowDetection { text, .. })
            | Some(mineral::Censored::NotDetermined { text }) => {
                if text.is_empty() {
                    "—".to_string()
                } else {
                    text.clone()
                }
            }
            None => format!("{shown:.2}"),
        };
        let rich = match edited {
            Some(_) => RichText::new(text)
                .color(Color32::from_rgb(70, 150, 230))
                .italics(),
            None => RichText::new(text),
        };
        let r = ui.add(egui::Button::new(rich).frame(false).small());
        let r = match edited {
            Some(v) => r.on_hover_text(format!(
                "corrected to {v} wt %; the file says {:.2}. Right-click for the file's value",
                row.original.wt(oxide)
            )),
            None => r.on_hover_text(format!("{} of {spot}: click to correct", oxide.formula())),
        };
        if r.clicked() {
            self.editing = Some((spot.clone(), oxide, format!("{shown}")));
        }
        if r.secondary_clicked() && edited.is_some() {
            actions.push(Action::Edit(Command::SetSpotValue {
                grain: at,
                spot: spot.clone(),
                oxide,
                wt: None,
            }));
        }
    }
}
