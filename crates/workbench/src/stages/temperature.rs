//! The Temperature stage: model and pressure; the T-X diagram and the ternary diagram of the
//! grain (hover reads temperature and composition), other models for comparison; the pair
//! thermometry table and the distribution of the minimum temperature. The diagrams are the
//! project's figures, so each can be exported exactly as shown.

use egui::Ui;
use project::figure::FigureKind;
use solvus::SolutionModel;

use crate::app::{Action, View};
use crate::command::Command;
use crate::figures::figure_ui;

/// View state of the Temperature stage.
#[derive(Default)]
pub struct TemperatureStage {
    /// Draw the other built-in models' solvi too.
    pub compare: bool,
    /// The last ternary readout: model, pressure and composition (rounded), and its text.
    readout: Option<(String, String)>,
}

/// Composition (Ab, Or, An) of a point of the ternary figure, when it lies in the triangle:
/// the inverse of the figure's barycentric placement (`x = X_Or + X_An/2`, `y = (√3/2) X_An`).
pub fn ternary_composition(p: [f64; 2]) -> Option<[f64; 3]> {
    const H: f64 = 0.866_025_403_784_438_6;
    let an = p[1] / H;
    let or = p[0] - 0.5 * an;
    let ab = 1.0 - or - an;
    let eps = 1e-9;
    (ab >= -eps && or >= -eps && an >= -eps).then(|| [ab.max(0.0), or.max(0.0), an.max(0.0)])
}

/// What the ternary readout says about a composition: the composition and the minimum
/// crystallisation temperature of a feldspar of that bulk under the model and pressure.
pub fn ternary_readout(model_id: &str, pressure_kbar: f64, x: [f64; 3]) -> String {
    use reintegration::{BulkThermometer, SolvusThermometer, TemperatureOutcome};
    let head = format!("Ab {:.3}  Or {:.3}  An {:.3}", x[0], x[1], x[2]);
    let model = match SolutionModel::builtin(model_id) {
        Ok(m) => m,
        Err(e) => return format!("{head}: {e}"),
    };
    let binary = x[2] > 0.0 && model.kind == solvus::ModelKind::Binary;
    let t = SolvusThermometer { model }.min_temperature(&x, pressure_kbar);
    let what = match t {
        TemperatureOutcome::Value { temperature_c } => {
            format!(
                "one feldspar above {temperature_c:.0} °C (minimum crystallisation temperature)"
            )
        }
        TemperatureOutcome::StableAtEveryTemperature => {
            "one feldspar at every temperature of the model (outside the solvus)".into()
        }
        TemperatureOutcome::AboveRange => {
            "inside the solvus even at the top of the model's range".into()
        }
        TemperatureOutcome::Refused { reason } => {
            // The composition is already in the head, rounded; the solver repeats it in full.
            let reason = match reason.split_once("): ") {
                Some((lead, rest)) if lead.starts_with("invalid composition (") => rest.to_string(),
                _ => reason,
            };
            format!("no temperature: {reason}")
        }
        _ => "no temperature".into(),
    };
    format!(
        "{head} — {what}, {model_id} at {pressure_kbar} kbar{}",
        if binary {
            " (binary model: An projected out)"
        } else {
            ""
        }
    )
}

fn figure_with_export(
    ui: &mut Ui,
    view: &View<'_>,
    kind: FigureKind,
    title: &str,
    height: f32,
    actions: &mut Vec<Action>,
) -> Option<[f64; 2]> {
    ui.horizontal(|ui| {
        ui.label(egui::RichText::new(title).strong());
        if ui
            .small_button("Export…")
            .on_hover_text("Write this figure as SVG, PNG (300 dpi) or PDF")
            .clicked()
        {
            actions.push(Action::ExportFigure(kind));
        }
    });
    let fig = view
        .figures
        .filter(|f| f.grain == view.grain)
        .and_then(|f| f.get(kind));
    match fig {
        Some(Ok(fig)) => figure_ui(ui, kind.name(), fig, height, false),
        Some(Err(e)) => {
            ui.weak(format!("not drawn: {e}"));
            None
        }
        None if view.figures.is_some_and(|f| f.grain == view.grain) => {
            ui.weak("computed for feldspar grains with a result");
            None
        }
        None => {
            ui.spinner();
            None
        }
    }
}

/// A choice of pyroxene thermometer: two-pyroxene ones for the pair, clinopyroxene-only ones
/// for the bulk, each with its citation and published standard error.
fn pyroxene_thermometer_ui(ui: &mut Ui, pair: bool, current: &str, actions: &mut Vec<Action>) {
    use solvus::pyroxene::PyroxeneThermometer;
    let label = ui.label(if pair {
        "Pair thermometer"
    } else {
        "Bulk thermometer"
    });
    label.clone().on_hover_text(if pair {
        "Two-pyroxene thermometer for the lamella pair: its exsolution temperature"
    } else {
        "Clinopyroxene-only thermometer for the reintegrated bulk: its minimum crystallisation temperature"
    });
    let mut chosen = current.to_string();
    egui::ComboBox::from_id_salt(if pair { "px-pair" } else { "px-bulk" })
        .selected_text(&chosen)
        .show_ui(ui, |ui| {
            for t in PyroxeneThermometer::ALL
                .into_iter()
                .filter(|t| t.needs_pair() == pair)
            {
                ui.selectable_value(&mut chosen, t.id().to_string(), t.id())
                    .on_hover_text(format!(
                        "{}; standard error ±{:.0} °C",
                        t.citation(),
                        t.see_c()
                    ));
            }
        })
        .response
        .labelled_by(label.id);
    if chosen != current {
        actions.push(Action::Edit(Command::SetPyroxeneThermometer {
            pair,
            id: chosen,
        }));
    }
}

impl TemperatureStage {
    /// Draw the stage.
    pub fn ui(&mut self, ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
        let settings = &view.doc.project.settings;
        let pyroxene = view
            .grain
            .and_then(|g| view.result(g))
            .is_some_and(|r| r.system == reintegration::MineralSystem::Pyroxene);
        ui.horizontal(|ui| {
            if pyroxene {
                pyroxene_thermometer_ui(ui, true, &settings.pyroxene_pair_thermometer, actions);
                pyroxene_thermometer_ui(ui, false, &settings.pyroxene_bulk_thermometer, actions);
                ui.separator();
            }
            let model_label = ui.label(if pyroxene { "Feldspar model" } else { "Model" });
            model_label
                .clone()
                .on_hover_text("Solution model of the feldspar solvus");
            let mut model = settings.feldspar_model.clone();
            egui::ComboBox::from_id_salt("model")
                .selected_text(&model)
                .show_ui(ui, |ui| {
                    for m in SolutionModel::builtins() {
                        ui.selectable_value(
                            &mut model,
                            m.id.clone(),
                            format!("{} — {}", m.id, m.citation),
                        );
                    }
                })
                .response
                .labelled_by(model_label.id);
            if model != settings.feldspar_model {
                actions.push(Action::Edit(Command::SetModel(model)));
            }
            let l = ui.label("Pressure");
            l.clone()
                .on_hover_text("Pressure of crystallisation, an assumption you supply");
            let mut p = settings.pressure_kbar;
            if ui
                .add(
                    egui::DragValue::new(&mut p)
                        .range(0.0..=30.0)
                        .speed(0.05)
                        .suffix(" kbar"),
                )
                .labelled_by(l.id)
                .changed()
            {
                actions.push(Action::Edit(Command::SetPressure(p)));
            }
            ui.checkbox(&mut self.compare, "Compare models")
                .on_hover_text("Draw the solvi of the other built-in models at the same pressure");
        });
        egui::ScrollArea::vertical().show(ui, |ui| self.figures_ui(ui, view, actions));
    }

    fn figures_ui(&mut self, ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
        let result = view.grain.and_then(|g| view.result(g));
        let pyroxene = result.is_some_and(|r| r.system == reintegration::MineralSystem::Pyroxene);
        let h = (ui.available_height() * 0.6).max(320.0);
        ui.columns(2, |cols| {
            if pyroxene {
                // the feldspar solvus says nothing about a pyroxene: its quadrilateral instead,
                // beside the distribution of its clinopyroxene-only temperatures
                figure_with_export(
                    &mut cols[0],
                    view,
                    FigureKind::Quadrilateral,
                    "Pyroxene quadrilateral (Wo–En–Fs)",
                    h,
                    actions,
                );
                figure_with_export(
                    &mut cols[1],
                    view,
                    FigureKind::Histogram,
                    "Minimum-temperature draws",
                    h,
                    actions,
                );
                return;
            }
            figure_with_export(
                &mut cols[0],
                view,
                FigureKind::Solvus,
                "T–X diagram",
                h,
                actions,
            );
            // Text under the ternary wraps at the column's width (the figure and its legend
            // may widen the column's layout).
            let width = cols[1].available_width();
            let hovered = figure_with_export(
                &mut cols[1],
                view,
                FigureKind::Ternary,
                "Ternary diagram",
                h,
                actions,
            );
            let settings = &view.doc.project.settings;
            // The readout uses the model the figure draws (the project's when it is ternary).
            let options = project::figure::GrainFigureOptions::default();
            let model_id = project::figure::ternary_model_id(&settings.feldspar_model, &options);
            match hovered.and_then(ternary_composition) {
                Some(x) => {
                    // Rounded to the readout's digits: the temperature is found again only when
                    // the pointer moves to another composition.
                    let key = format!(
                        "{model_id}|{}|{:.3}|{:.3}|{:.3}",
                        settings.pressure_kbar, x[0], x[1], x[2]
                    );
                    if self.readout.as_ref().is_none_or(|(k, _)| *k != key) {
                        let x = x.map(|v| (v * 1000.0).round() / 1000.0);
                        let text = ternary_readout(model_id, settings.pressure_kbar, x);
                        self.readout = Some((key, text));
                    }
                    if let Some((_, text)) = &self.readout {
                        cols[1].scope(|ui| {
                            ui.set_max_width(width);
                            ui.label(text);
                        });
                    }
                }
                None => {
                    cols[1].scope(|ui| {
                        ui.set_max_width(width);
                        ui.weak("Point at the triangle to read a composition and its minimum crystallisation temperature.");
                    });
                }
            }
        });
        ui.separator();
        let Some(r) = result else {
            ui.label("Not computed yet.");
            return;
        };
        ui.columns(2, |cols| {
            let ui = &mut cols[0];
            ui.label(egui::RichText::new("Minimum crystallisation temperature").strong());
            match r.min_temperature() {
                Some(t) => {
                    ui.label(format!(
                        "median {:.0} °C, 95 % interval {:.0}–{:.0} °C",
                        t.median, t.p2_5, t.p97_5
                    ));
                    ui.weak(format!(
                        "mean {:.0} °C, sd {:.0} °C; Monte Carlo error of the median {:.1} °C",
                        t.mean, t.sd, t.mcse_median
                    ));
                }
                None => {
                    ui.weak("none for this grain");
                }
            }
            let o = &r.monte_carlo.outcomes;
            ui.weak(format!(
                "{} draws: {} with a temperature, {} stable at every temperature, {} above the model's range, {} refused",
                r.monte_carlo.temperature_draws.len(),
                o.found,
                o.stable_at_every_temperature,
                o.above_range,
                o.refused
            ));
            ui.add_space(6.0);
            ui.label(
                egui::RichText::new(if pyroxene {
                    "Lamella pair (two-pyroxene thermometry)"
                } else {
                    "Lamella pair (two-feldspar thermometry)"
                })
                .strong(),
            );
            match &r.pair {
                Some(p) => {
                    egui::Grid::new("pair").striped(true).show(ui, |ui| {
                        for (name, t) in ["T_Ab", "T_Or", "T_An"].iter().zip(p.temperatures_c) {
                            ui.label(*name);
                            ui.label(t.map(|t| format!("{t:.0} °C")).unwrap_or_else(|| "no root in range".into()));
                            ui.end_row();
                        }
                        ui.label("spread");
                        ui.label(p.spread_c.map(|s| format!("{s:.0} °C")).unwrap_or_else(|| "—".into()));
                        ui.end_row();
                        ui.label("adjusted");
                        ui.label(match (p.adjusted_c, p.concordant) {
                            (Some(t), Some(true)) => format!("{t:.0} °C, concordant within the uncertainty"),
                            (Some(t), _) => format!("{t:.0} °C, not concordant"),
                            _ => "—".into(),
                        });
                        ui.end_row();
                    });
                    for n in &p.notes {
                        ui.weak(n);
                    }
                }
                None => match &r.pyroxene_pair {
                    Some(t) => {
                        ui.label(format!(
                            "Two-pyroxene temperature: {:.0} °C ± {:.0} °C (published standard error), {}",
                            t.temperature_c,
                            t.see_c,
                            t.thermometer.id()
                        ));
                        for w in &t.warnings {
                            ui.weak(w);
                        }
                    }
                    None => {
                        ui.weak("no pair thermometer for this grain");
                    }
                },
            }
            if !pyroxene {
                let ui = &mut cols[1];
                let h = 260.0;
                figure_with_export(ui, view, FigureKind::Histogram, "Minimum-temperature draws", h, actions);
            }
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_readout_inverts_the_figures_placement() {
        // Round trip through the figure's own placement (project::figure::ternary_xy).
        for x in [
            [0.45, 0.5, 0.05],
            [1.0, 0.0, 0.0],
            [0.0, 0.0, 1.0],
            [0.2, 0.3, 0.5],
        ] {
            let p = project::figure::ternary_xy(x[0], x[1], x[2]);
            let back = ternary_composition(p).expect("inside");
            for (a, b) in back.iter().zip(x) {
                assert!((a - b).abs() < 1e-12, "{back:?} {x:?}");
            }
        }
        assert!(
            ternary_composition([0.9, 0.8]).is_none(),
            "outside the triangle"
        );
        assert!(
            ternary_composition([0.5, -0.1]).is_none(),
            "below the Ab-Or edge"
        );
    }

    #[test]
    fn the_readout_reads_the_model_the_ternary_draws() {
        // A binary (Ab-Or) project model has no isotherms across the triangle, so the figure
        // draws the default ternary model; a ternary project model is drawn as it is.
        let options = project::figure::GrainFigureOptions::default();
        let id = |m| project::figure::ternary_model_id(m, &options).to_string();
        assert_eq!(id("haselton1983"), options.ternary_model);
        assert_eq!(id("eg1990"), "eg1990");
        assert_eq!(id("fl1988"), "fl1988");
    }

    #[test]
    fn the_readout_gives_the_solvus_temperature_of_a_limb_composition() {
        // Source: design §3.3 check values (derived from Haselton et al. 1983 as used by
        // Fuhrman & Lindsley): at 1 kbar the K-rich limb of the 600 °C isotherm is at
        // X_Or 0.6151, so that bulk first meets the solvus at 600 °C (4-digit X_Or: ±0.5 °C).
        let text = ternary_readout("haselton1983", 1.0, [0.3849, 0.6151, 0.0]);
        assert!(text.contains("above 600 °C"), "{text}");
        // A sodic feldspar far from the solvus at this pressure is one phase at every
        // temperature of the model, or has its temperature far below; either way not 600.
        let far = ternary_readout("haselton1983", 1.0, [0.99, 0.01, 0.0]);
        assert!(!far.contains("above 600 °C"), "{far}");
        // An binary model with An says it projects.
        assert!(ternary_readout("haselton1983", 1.0, [0.4, 0.5, 0.1]).contains("projected"));
    }
}
