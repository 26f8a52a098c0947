//! The Phases stage: histogram of the measured region with draggable level lines, the phase
//! fractions updated live from the histogram while a level moves (no pass over the pixels), the
//! phase overlay on the image with its opacity, intervals and level sensitivity, and the shape
//! of the lamellae.

use egui::{Color32, Pos2, Sense, Ui, pos2};
use egui_plot::{Line, LineStyle, Plot, VLine};
use micrograph::segment::{LevelChoice, Segmentation};
use project::{Grain, MicrographSpec};

use super::image::ImageStage;
use crate::app::{Action, View};
use crate::command::Command;
use crate::document::MicrographRef;
use crate::jobs::class_colour;

/// View state of the Phases stage.
#[derive(Default)]
pub struct PhasesStage {
    /// Levels being dragged, for the micrograph being edited.
    live: Option<(MicrographRef, Vec<u16>)>,
    dragging: Option<usize>,
    handles: Vec<Pos2>,
    rim_text: Option<u8>,
    overlay_on: bool,
}

/// Fractions per grain phase from fractions per class (dark to bright), through the class to
/// phase assignment.
pub fn phase_fractions(grain: &Grain, spec: &MicrographSpec, class_fractions: &[f64]) -> Vec<f64> {
    let mut out = vec![0.0; grain.phases.len()];
    for (class, label) in spec.class_phases.iter().enumerate() {
        if let (Some(i), Some(f)) = (
            grain.phases.iter().position(|p| &p.label == label),
            class_fractions.get(class),
        ) {
            out[i] += f;
        }
    }
    out
}

impl PhasesStage {
    /// Forget levels being dragged (a new classification arrived).
    pub fn clear_live(&mut self) {
        if self.dragging.is_none() {
            self.live = None;
        }
    }

    /// Screen position of level handle `index` as last drawn.
    pub fn handle_pos(&self, index: usize) -> Option<Pos2> {
        self.handles.get(index).copied()
    }

    /// The levels shown: those being dragged, else the document's manual levels, else those the
    /// classification found.
    pub fn levels_shown(&self, spec: &MicrographSpec, seg: &Segmentation) -> Vec<u16> {
        if let Some((_, live)) = &self.live {
            return live.clone();
        }
        match &spec.segmentation.levels {
            LevelChoice::Manual(v) if v.len() + 1 == spec.segmentation.classes => v.clone(),
            _ => seg.levels.clone(),
        }
    }

    /// Draw the stage.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        view: &View<'_>,
        image: &mut ImageStage,
        actions: &mut Vec<Action>,
    ) {
        let Some(at) = view.micrograph_ref() else {
            ui.label(if view.grain.is_some() {
                "This grain has no micrograph."
            } else {
                "Select a grain in the study tree."
            });
            return;
        };
        if self.live.as_ref().is_some_and(|(m, _)| *m != at) {
            self.live = None;
            self.dragging = None;
        }
        let (Some(spec), Some(grain)) = (view.doc.micrograph(at), view.doc.grain(at.grain)) else {
            return;
        };
        egui::Panel::left("phases-controls")
            .resizable(true)
            .default_size(460.0)
            .min_size(320.0)
            .show(ui, |ui| {
                egui::ScrollArea::vertical().show(ui, |ui| {
                    self.controls_ui(ui, view, at, spec, grain, actions);
                });
            });
        ui.horizontal_wrapped(|ui| image.toolbar_ui(ui, view, actions));
        if !self.overlay_on {
            // The phase overlay is what this stage is about: on at first visit.
            self.overlay_on = true;
            image.show_classes = true;
        }
        let hover = image.canvas_ui(ui, view, true);
        image.hover_line(ui, view, hover);
    }

    fn controls_ui(
        &mut self,
        ui: &mut Ui,
        view: &View<'_>,
        at: MicrographRef,
        spec: &MicrographSpec,
        grain: &Grain,
        actions: &mut Vec<Action>,
    ) {
        ui.label(
            egui::RichText::new(format!(
                "{} — grey-level histogram of the region",
                spec.label
            ))
            .strong(),
        );
        let Some(classes) = view.classes else {
            match view.image_error {
                Some(e) => ui.colored_label(ui.visuals().error_fg_color, e),
                None => {
                    ui.horizontal(|ui| {
                        ui.spinner();
                        ui.label("classifying the micrograph…");
                    })
                    .response
                }
            };
            return;
        };
        let seg = &classes.segmentation;
        let levels = self.levels_shown(spec, seg);
        self.histogram_ui(ui, at, seg, &levels, actions);
        ui.horizontal_wrapped(|ui| {
            for (i, l) in levels.iter().enumerate() {
                ui.colored_label(
                    egui::Color32::from_rgb(230, 120, 20),
                    format!("level {}: {l}", i + 1),
                );
            }
            if let Some(v) = seg.void_level {
                ui.colored_label(
                    egui::Color32::from_rgb(200, 60, 60),
                    format!("voids at or below {v}"),
                );
            }
        });
        ui.weak("Drag a level line to move it; the fractions follow at once.");

        // Fractions.
        let class_fractions = seg.fractions_at(&levels);
        let at_classified_levels = levels == seg.levels && view.classes_current;
        ui.add_space(6.0);
        ui.label(egui::RichText::new("Area fractions of the measured area").strong())
            .on_hover_text("Delesse principle: on a random section the area fraction estimates the volume fraction");
        egui::Grid::new("phase-fractions").striped(true).num_columns(5).show(ui, |ui| {
            ui.strong("class");
            ui.strong("phase");
            ui.strong("fraction");
            ui.strong("95 % interval").on_hover_text("Block bootstrap over image tiles");
            ui.strong("level ∓ step").on_hover_text("Fraction with the level moved down and up by the sensitivity step");
            ui.end_row();
            for (class, f) in class_fractions.iter().enumerate() {
                ui.colored_label(class_colour(class), format!("■ {}", class + 1));
                ui.label(spec.class_phases.get(class).map(String::as_str).unwrap_or("?"));
                ui.label(format!("{f:.4}"));
                let p = seg.phases.get(class);
                match (at_classified_levels, p.and_then(|p| p.area_fraction_ci95)) {
                    (true, Some([a, b])) => ui.label(format!("{a:.4}–{b:.4}")),
                    (true, None) => ui.weak("—"),
                    (false, _) => ui.weak("after re-measuring").on_hover_text("The interval is computed when the micrograph is classified at these levels"),
                };
                let sens = (at_classified_levels && seg.sensitivity.minus.len() == 1)
                    .then(|| (seg.sensitivity.minus[0].get(class), seg.sensitivity.plus[0].get(class)));
                match sens {
                    Some((Some(a), Some(b))) => ui.label(format!("{a:.4} / {b:.4}")),
                    _ => ui.weak("—"),
                };
                ui.end_row();
            }
        });
        let by_phase = phase_fractions(grain, spec, &class_fractions);
        ui.horizontal_wrapped(|ui| {
            for (p, f) in grain.phases.iter().zip(&by_phase) {
                ui.label(format!("{}: {:.1} %", p.label, f * 100.0));
            }
        });
        ui.weak(format!(
            "measured {} px of {} in the region; voids and rims {:.2} %{}",
            seg.measured_pixels,
            seg.region_pixels,
            seg.excluded_fraction * 100.0,
            seg.void_level
                .map(|v| format!(" (void level {v})"))
                .unwrap_or_default()
        ));

        // Level controls.
        ui.add_space(6.0);
        ui.horizontal(|ui| {
            let auto = matches!(spec.segmentation.levels, LevelChoice::Manual(_));
            if ui
                .add_enabled(auto, egui::Button::new("Automatic levels"))
                .on_hover_text("Otsu's method, each level then moved to the midpoint between the modes of its two phases")
                .clicked()
            {
                actions.push(Action::Edit(Command::AutoLevels { at }));
            }
            let method = match &spec.segmentation.levels {
                LevelChoice::Manual(_) => "levels set by hand",
                LevelChoice::Otsu => "Otsu levels",
                LevelChoice::OtsuMidpoint => "Otsu levels, refined to mode midpoints",
                _ => "levels",
            };
            ui.weak(method);
        });
        ui.horizontal(|ui| {
            let l = ui.label("Void rim");
            l.clone()
                .on_hover_text("Pixels left out around cracks and pores, as wide as the edge blur");
            let mut rim = self.rim_text.unwrap_or(spec.segmentation.rim_px);
            let r = ui
                .add(egui::DragValue::new(&mut rim).range(0..=20).suffix(" px"))
                .labelled_by(l.id);
            if r.changed() {
                self.rim_text = Some(rim);
            }
            if (r.drag_stopped() || r.lost_focus() || (r.changed() && !r.dragged()))
                && let Some(v) = self.rim_text.take()
                && v != spec.segmentation.rim_px
            {
                actions.push(Action::Edit(Command::SetVoidRim { at, rim_px: v }));
            }
        });

        // Warnings and shape.
        for w in &seg.warnings {
            ui.colored_label(ui.visuals().warn_fg_color, format!("⚠ {w}"));
        }
        if let Some(m) = view
            .result(at.grain)
            .and_then(|r| r.micrographs.get(at.micrograph))
            .and_then(|m| m.morphometry.as_ref())
        {
            ui.add_space(6.0);
            ui.label(egui::RichText::new("Lamellae (minority phase)").strong());
            let um = |px: f64, v: Option<f64>| match v {
                Some(v) => format!("{v:.2} µm ({px:.1} px)"),
                None => format!("{px:.1} px"),
            };
            egui::Grid::new("morphometry").show(ui, |ui| {
                ui.label("count");
                ui.label(m.count.to_string());
                ui.end_row();
                ui.label("mean width");
                ui.label(um(m.mean_width_px, m.mean_width_um));
                ui.end_row();
                if let Some(s) = m.spacing_px {
                    ui.label("spacing");
                    ui.label(um(s, m.spacing_um));
                    ui.end_row();
                }
                ui.label("orientation");
                ui.label(format!(
                    "{:.0}° (coherence {:.2})",
                    m.orientation_deg, m.coherence
                ));
                ui.end_row();
            });
        }
    }

    fn histogram_ui(
        &mut self,
        ui: &mut Ui,
        at: MicrographRef,
        seg: &Segmentation,
        levels: &[u16],
        actions: &mut Vec<Action>,
    ) {
        let h = &seg.histogram;
        let counts = h.counts();
        let first = counts.iter().position(|&c| c > 0).unwrap_or(0);
        let last = counts
            .iter()
            .rposition(|&c| c > 0)
            .unwrap_or(counts.len().saturating_sub(1));
        let (lo, hi) = (
            h.bin_value(first),
            h.bin_value(last).max(h.bin_value(first) + 1.0),
        );
        // Up to 256 display bins over the occupied range, as a fraction of the measured pixels.
        let bins = 256usize.min(last - first + 1).max(1);
        let width = (hi - lo) / bins as f64;
        let mut sums = vec![0u64; bins];
        for (b, &c) in counts.iter().enumerate().take(last + 1).skip(first) {
            let i = (((h.bin_value(b) - lo) / width) as usize).min(bins - 1);
            sums[i] += c;
        }
        let total = h.total().max(1) as f64;
        let mut outline = Vec::with_capacity(2 * bins);
        for (i, s) in sums.iter().enumerate() {
            let y = *s as f64 / total;
            outline.push([lo + i as f64 * width, y]);
            outline.push([lo + (i + 1) as f64 * width, y]);
        }
        let response = Plot::new(("histogram", at.micrograph))
            .height(220.0)
            .allow_drag(false)
            .allow_zoom(false)
            .allow_scroll(false)
            .allow_boxed_zoom(false)
            .allow_double_click_reset(false)
            .sense(Sense::click_and_drag())
            .x_axis_label("grey value")
            .y_axis_label("fraction of pixels")
            .include_y(0.0)
            .show(ui, |pui| {
                pui.line(
                    Line::new("measured pixels", outline)
                        .color(Color32::from_gray(150))
                        .fill(0.0),
                );
                if let Some(v) = seg.void_level {
                    pui.add(
                        VLine::new(format!("void level {v}"), f64::from(v))
                            .color(Color32::from_rgb(200, 60, 60))
                            .style(LineStyle::dashed_dense()),
                    );
                }
                for (i, l) in levels.iter().enumerate() {
                    let dragging = self.dragging == Some(i);
                    pui.add(
                        VLine::new(format!("level {}: {l}", i + 1), f64::from(*l))
                            .color(if dragging {
                                Color32::from_rgb(255, 200, 0)
                            } else {
                                Color32::from_rgb(230, 120, 20)
                            })
                            .width(if dragging { 3.0 } else { 2.0 }),
                    );
                }
            });
        let t = response.transform;
        let frame = *t.frame();
        self.handles = levels
            .iter()
            .map(|l| pos2(t.position_from_point_x(f64::from(*l)), frame.center().y))
            .collect();
        let r = response.response;
        if r.drag_started()
            && let Some(origin) = ui.input(|i| i.pointer.press_origin())
        {
            self.dragging = self
                .handles
                .iter()
                .enumerate()
                .map(|(i, p)| (i, (p.x - origin.x).abs()))
                .filter(|(_, d)| *d < 12.0)
                .min_by(|a, b| a.1.total_cmp(&b.1))
                .map(|(i, _)| i);
            if self.dragging.is_some() {
                self.live = Some((at, levels.to_vec()));
            }
        }
        if let (Some(i), Some(p)) = (self.dragging, r.interact_pointer_pos()) {
            let value = t.value_from_position(p).x.round();
            let below = if i == 0 {
                1.0
            } else {
                f64::from(levels[i - 1]) + 1.0
            };
            let above = levels
                .get(i + 1)
                .map(|v| f64::from(*v) - 1.0)
                .unwrap_or(f64::from(h.max_value()));
            let v = value.clamp(below, above.max(below)) as u16;
            if let Some((_, live)) = &mut self.live {
                live[i] = v;
            }
        }
        if r.drag_stopped()
            && let Some(_) = self.dragging.take()
            && let Some((m, live)) = self.live.take()
        {
            // Applied after this frame; the document's manual levels are shown from then on.
            actions.push(Action::Edit(Command::SetLevels {
                at: m,
                levels: live,
            }));
        }
        if self.dragging.is_some() {
            ui.ctx().request_repaint();
        }
    }
}
