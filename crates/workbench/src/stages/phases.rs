//! The Phases stage: histogram of the measured region with draggable level lines, the phase
//! fractions updated live from the histogram while a level moves (no pass over the pixels), the
//! phase overlay on the image with its opacity, intervals and level sensitivity, and the shape
//! of the lamellae.

use egui::{Color32, Pos2, Sense, Ui, pos2};
use egui_plot::{Line, LineStyle, Plot, VLine};
use micrograph::order::{PhaseZ, bse_order_hint};
use micrograph::segment::{LevelChoice, Segmentation, VoidDetection};
use project::{Grain, MicrographSpec, PointGrid};

use super::image::{ImageStage, Tool};
use crate::app::{Action, View};
use crate::command::{AutoLevels, Command, MAX_CLASSES};
use crate::document::MicrographRef;
use crate::jobs::class_colour;

/// View state of the Phases stage.
pub struct PhasesStage {
    /// Levels being dragged, for the micrograph being edited.
    live: Option<(MicrographRef, Vec<u16>)>,
    dragging: Option<usize>,
    handles: Vec<Pos2>,
    rim_text: Option<u8>,
    min_feature_text: Option<u32>,
    void_level_text: Option<u16>,
    overlay_on: bool,
    grid_spacing_px: f64,
    random_points: usize,
    random_seed: u64,
}

impl Default for PhasesStage {
    fn default() -> Self {
        PhasesStage {
            live: None,
            dragging: None,
            handles: Vec::new(),
            rim_text: None,
            min_feature_text: None,
            void_level_text: None,
            overlay_on: false,
            grid_spacing_px: 40.0,
            random_points: 300,
            random_seed: 1,
        }
    }
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
        if matches!(
            image.tool,
            super::image::Tool::Region(_)
                | super::image::Tool::Vertices
                | super::image::Tool::ScaleBar
        ) {
            image.set_tool(super::image::Tool::Pan);
        }
        let (Some(spec), Some(grain)) = (view.doc.micrograph(at), view.doc.grain(at.grain)) else {
            return;
        };
        egui::Panel::left("phases-controls")
            .resizable(true)
            .default_size(460.0)
            .min_size(320.0)
            .show(ui, |ui| {
                egui::ScrollArea::both().show(ui, |ui| {
                    self.controls_ui(ui, view, at, spec, grain, actions);
                    ui.separator();
                    self.hand_ui(ui, view, at, spec, grain, image, actions);
                    ui.separator();
                    self.points_ui(ui, view, at, spec, grain, image, actions);
                });
            });
        ui.horizontal_wrapped(|ui| image.toolbar_ui(ui, view, actions));
        if !self.overlay_on {
            // The phase overlay is what this stage is about: on at first visit.
            self.overlay_on = true;
            image.show_classes = true;
        }
        image.show_points = true;
        let hover = image.canvas_ui(ui, view, true, actions);
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
        let class_fractions = classes.fractions_at(&levels);
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

        // Classification settings.
        ui.add_space(6.0);
        ui.label(egui::RichText::new("Classification").strong());
        egui::Grid::new("classification-settings")
            .num_columns(2)
            .show(ui, |ui| self.settings_ui(ui, at, spec, seg, actions));
        self.assignment_ui(ui, view, at, spec, grain, seg, actions);

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

    fn settings_ui(
        &mut self,
        ui: &mut Ui,
        at: MicrographRef,
        spec: &MicrographSpec,
        seg: &Segmentation,
        actions: &mut Vec<Action>,
    ) {
        let s = &spec.segmentation;
        let l = ui.label("Phases");
        l.clone().on_hover_text(
            "Number of grey classes the measured pixels are split into, dark to bright (voids are found separately)",
        );
        let mut classes = s.classes;
        if ui
            .add(egui::DragValue::new(&mut classes).range(2..=MAX_CLASSES))
            .labelled_by(l.id)
            .changed()
            && classes != s.classes
        {
            actions.push(Action::Edit(Command::SetClasses { at, classes }));
        }
        ui.end_row();

        let l = ui.label("Levels");
        l.clone()
            .on_hover_text("How the grey levels between the phases are chosen");
        let current = match &s.levels {
            LevelChoice::Manual(_) => "set by hand (drag a level line)",
            LevelChoice::Otsu => "Otsu's method",
            LevelChoice::OtsuMidpoint => "Otsu, then mode midpoints",
            _ => "other",
        };
        egui::ComboBox::from_id_salt(("level-method", at.micrograph))
            .selected_text(current)
            .width(230.0)
            .show_ui(ui, |ui| {
                let otsu = ui
                    .selectable_label(matches!(s.levels, LevelChoice::Otsu), "Otsu's method")
                    .on_hover_text("Otsu (1979): the levels that maximise the between-class variance; multi-level Otsu above two phases");
                if otsu.clicked() {
                    actions.push(Action::Edit(Command::SetAutoLevels {
                        at,
                        method: AutoLevels::Otsu,
                    }));
                }
                let mid = ui
                    .selectable_label(
                        matches!(s.levels, LevelChoice::OtsuMidpoint),
                        "Otsu, then mode midpoints",
                    )
                    .on_hover_text("Otsu's levels, each moved to the midpoint between the modes of its two phases (unbiased by symmetric edge blur); with two phases, half-way between the pure levels");
                if mid.clicked() {
                    actions.push(Action::Edit(Command::SetAutoLevels {
                        at,
                        method: AutoLevels::OtsuMidpoint,
                    }));
                }
                ui.weak("Drag a level line for levels by hand.");
            })
            .response
            .labelled_by(l.id);
        ui.end_row();

        let l = ui.label("Voids");
        l.clone().on_hover_text(
            "Cracks, pores and epoxy: left out of the measured area, with a rim around them",
        );
        ui.horizontal(|ui| {
            let label = match s.voids {
                VoidDetection::Off => "none".to_string(),
                VoidDetection::AtOrBelow(g) => format!("at or below {g}"),
                _ => "found automatically".to_string(),
            };
            egui::ComboBox::from_id_salt(("voids", at.micrograph))
                .selected_text(label)
                .show_ui(ui, |ui| {
                    if ui
                        .selectable_label(matches!(s.voids, VoidDetection::Off), "none")
                        .clicked()
                    {
                        actions.push(Action::Edit(Command::SetVoids {
                            at,
                            voids: VoidDetection::Off,
                        }));
                    }
                    if ui
                        .selectable_label(
                            matches!(s.voids, VoidDetection::Auto),
                            "found automatically",
                        )
                        .on_hover_text("Multi-level Otsu with one class more than the phases; the darkest is voids when the histogram has a real valley at its level (common practice)")
                        .clicked()
                    {
                        actions.push(Action::Edit(Command::SetVoids {
                            at,
                            voids: VoidDetection::Auto,
                        }));
                    }
                    if ui
                        .selectable_label(
                            matches!(s.voids, VoidDetection::AtOrBelow(_)),
                            "at or below a grey level",
                        )
                        .clicked()
                    {
                        let level = seg.void_level.unwrap_or(seg.histogram.max_value() / 20);
                        actions.push(Action::Edit(Command::SetVoids {
                            at,
                            voids: VoidDetection::AtOrBelow(level),
                        }));
                    }
                })
                .response
                .labelled_by(l.id);
            if let VoidDetection::AtOrBelow(g) = s.voids {
                let mut level = self.void_level_text.unwrap_or(g);
                let r = ui.add(
                    egui::DragValue::new(&mut level).range(0..=seg.histogram.max_value()),
                );
                if r.changed() {
                    self.void_level_text = Some(level);
                }
                if (r.drag_stopped() || r.lost_focus() || (r.changed() && !r.dragged()))
                    && let Some(v) = self.void_level_text.take()
                    && v != g
                {
                    actions.push(Action::Edit(Command::SetVoids {
                        at,
                        voids: VoidDetection::AtOrBelow(v),
                    }));
                }
            }
        });
        ui.end_row();

        let l = ui.label("Void rim");
        l.clone()
            .on_hover_text("Pixels left out around cracks and pores, as wide as the edge blur");
        let mut rim = self.rim_text.unwrap_or(s.rim_px);
        let r = ui
            .add(egui::DragValue::new(&mut rim).range(0..=20).suffix(" px"))
            .labelled_by(l.id);
        if r.changed() {
            self.rim_text = Some(rim);
        }
        if (r.drag_stopped() || r.lost_focus() || (r.changed() && !r.dragged()))
            && let Some(v) = self.rim_text.take()
            && v != s.rim_px
        {
            actions.push(Action::Edit(Command::SetVoidRim { at, rim_px: v }));
        }
        ui.end_row();

        let l = ui.label("Clean-up");
        l.clone().on_hover_text(
            "Connected specks of a phase smaller than this many pixels merge into the phase around them (0: off)",
        );
        let mut px = self.min_feature_text.unwrap_or(s.min_feature_px);
        let r = ui
            .add(
                egui::DragValue::new(&mut px)
                    .range(0..=10_000)
                    .prefix("below ")
                    .suffix(" px"),
            )
            .labelled_by(l.id);
        if r.changed() {
            self.min_feature_text = Some(px);
        }
        if (r.drag_stopped() || r.lost_focus() || (r.changed() && !r.dragged()))
            && let Some(v) = self.min_feature_text.take()
            && v != s.min_feature_px
        {
            actions.push(Action::Edit(Command::SetMinFeature {
                at,
                min_feature_px: v,
            }));
        }
        ui.end_row();
    }

    /// Which phase each grey class is, with the mean-atomic-number hint.
    #[allow(clippy::too_many_arguments)]
    fn assignment_ui(
        &mut self,
        ui: &mut Ui,
        view: &View<'_>,
        at: MicrographRef,
        spec: &MicrographSpec,
        grain: &Grain,
        seg: &Segmentation,
        actions: &mut Vec<Action>,
    ) {
        ui.add_space(6.0);
        ui.label(egui::RichText::new("Which phase is each class").strong())
            .on_hover_text("Classes are numbered dark to bright");
        ui.horizontal_wrapped(|ui| {
            for (class, current) in spec.class_phases.iter().enumerate() {
                let l = ui.colored_label(class_colour(class), format!("■ class {}", class + 1));
                egui::ComboBox::from_id_salt(("class-phase", at.micrograph, class))
                    .selected_text(current)
                    .show_ui(ui, |ui| {
                        for p in &grain.phases {
                            if ui.selectable_label(*current == p.label, &p.label).clicked()
                                && *current != p.label
                            {
                                let mut phases = spec.class_phases.clone();
                                phases[class] = p.label.clone();
                                actions.push(Action::Edit(Command::SetClassPhases { at, phases }));
                            }
                        }
                    })
                    .response
                    .labelled_by(l.id);
            }
        });
        // Mean atomic number of each phase from its spots in use, and the order it implies.
        let zs: Vec<Option<f64>> = grain
            .phases
            .iter()
            .map(|p| {
                let rows = super::analyses::spot_rows(view, at.grain, &p.label);
                let used: Vec<_> = rows.iter().filter(|r| r.used).collect();
                if used.is_empty() {
                    return None;
                }
                let mut mean = mineral::Analysis::default();
                for r in &used {
                    for (o, wt) in &r.analysis.oxides_wt {
                        *mean.oxides_wt.entry(*o).or_default() += wt / used.len() as f64;
                    }
                }
                mean.mean_atomic_number()
            })
            .collect();
        ui.horizontal_wrapped(|ui| {
            for (p, z) in grain.phases.iter().zip(&zs) {
                match z {
                    Some(z) => ui.weak(format!("{}: mean Z {z:.2}", p.label)),
                    None => ui.weak(format!("{}: no spots for a mean Z", p.label)),
                };
            }
        });
        let phases: Option<Vec<PhaseZ>> = grain
            .phases
            .iter()
            .zip(&zs)
            .map(|(p, z)| {
                z.map(|mean_z| PhaseZ {
                    name: p.label.clone(),
                    mean_z,
                })
            })
            .collect();
        let grey: Vec<f64> = seg.phases.iter().map(|p| p.mean_gray).collect();
        let hint = phases
            .ok_or_else(|| "a phase has no spot analyses in use".to_string())
            .and_then(|phases| {
                bse_order_hint(&grey, &phases).map_err(|_| {
                    format!(
                        "the hint pairs one class with each phase: set the number of phases to {}",
                        grain.phases.len()
                    )
                })
            });
        match hint {
            Ok(hint) => {
                let differs = hint.class_to_phase != spec.class_phases;
                ui.horizontal_wrapped(|ui| {
                    let b = ui
                        .add_enabled(differs, egui::Button::new("Order by mean atomic number"))
                        .on_hover_text(
                            "In a backscattered-electron image a phase of higher mean atomic number is brighter (Goldstein et al. 2003, §3.4.2): the darkest class goes to the phase of lowest mean Z",
                        );
                    if b.clicked() {
                        actions.push(Action::Edit(Command::SetClassPhases {
                            at,
                            phases: hint.class_to_phase.clone(),
                        }));
                    }
                    if differs {
                        ui.colored_label(
                            ui.visuals().warn_fg_color,
                            format!("mean Z suggests {}", hint.class_to_phase.join(", ")),
                        );
                    } else {
                        ui.weak("the assignment follows mean Z");
                    }
                });
                for w in &hint.warnings {
                    ui.colored_label(ui.visuals().warn_fg_color, format!("⚠ {w}"));
                }
            }
            Err(why) => {
                ui.weak(format!("No mean-Z hint: {why}."));
            }
        }
    }

    /// Hand tools: polygon and brush edits over the classification, with their list.
    #[allow(clippy::too_many_arguments)]
    fn hand_ui(
        &mut self,
        ui: &mut Ui,
        view: &View<'_>,
        at: MicrographRef,
        spec: &MicrographSpec,
        grain: &Grain,
        image: &mut ImageStage,
        actions: &mut Vec<Action>,
    ) {
        ui.label(egui::RichText::new("By hand").strong()).on_hover_text(
            "Where contrast fails, trace lamellae yourself: the pixels under a shape become the chosen phase (or, erasing, go back to the automatic classification). Edits are kept in the project, counted in the fractions, and undone with Ctrl+Z",
        );
        ui.horizontal_wrapped(|ui| {
            for (tool, label, tip) in [
                (Tool::Pan, "Pan", "Drag to move the image"),
                (
                    Tool::HandPolygon,
                    "Polygon",
                    "Click the corners; click the first corner, double-click or press Enter to close",
                ),
                (
                    Tool::Brush,
                    "Brush",
                    "Drag to paint (right-drag pans)",
                ),
            ] {
                image.tool_button(ui, tool, label, tip);
            }
            if image.tool == Tool::Brush {
                ui.add(
                    egui::DragValue::new(&mut image.brush_radius_px)
                        .range(0.5..=200.0)
                        .speed(0.2)
                        .prefix("radius ")
                        .suffix(" px"),
                );
            }
        });
        ui.horizontal_wrapped(|ui| {
            ui.label("gives pixels to");
            let valid = image
                .hand_phase
                .as_ref()
                .is_none_or(|p| spec.class_phases.contains(p));
            if !valid {
                image.hand_phase = None;
            }
            if image.hand_phase.is_none() && !self.hand_phase_chosen(image) {
                image.hand_phase = spec.class_phases.first().cloned();
            }
            for p in &grain.phases {
                let assigned = spec.class_phases.contains(&p.label);
                let r = ui
                    .add_enabled(
                        assigned,
                        egui::Button::selectable(
                            image.hand_phase.as_deref() == Some(p.label.as_str()),
                            egui::RichText::new(format!("■ {}", p.label))
                                .color(super::image::phase_colour(spec, &p.label)),
                        ),
                    )
                    .on_disabled_hover_text("No grey class is this phase: assign one first");
                if r.clicked() {
                    image.hand_phase = Some(p.label.clone());
                }
            }
            if ui
                .selectable_label(image.hand_phase.is_none(), "erase")
                .on_hover_text("Pixels under the shape go back to the automatic classification")
                .clicked()
            {
                image.hand_phase = None;
            }
        });
        if let Some(c) = view.classes {
            if let Some(h) = &c.hand {
                ui.weak(format!(
                    "{} edits cover {} measured px; {} of them changed phase",
                    spec.hand_edits.len(),
                    h.edited_pixels,
                    h.changed_pixels
                ));
            }
            if let Some(e) = &c.hand_error {
                ui.colored_label(
                    ui.visuals().error_fg_color,
                    format!("hand edits not applied: {e}"),
                );
            }
        }
        if !spec.hand_edits.is_empty() {
            ui.horizontal(|ui| {
                ui.checkbox(&mut image.show_edits, "Outline edits");
                if ui
                    .small_button("Remove last")
                    .on_hover_text("Remove the last hand edit (Ctrl+Z undoes any edit)")
                    .clicked()
                {
                    actions.push(Action::Edit(Command::RemoveHandEdit {
                        at,
                        index: spec.hand_edits.len() - 1,
                    }));
                }
            });
            egui::CollapsingHeader::new(format!("{} hand edits", spec.hand_edits.len()))
                .id_salt(("hand-edits", at.micrograph))
                .show(ui, |ui| {
                    for (i, e) in spec.hand_edits.iter().enumerate() {
                        ui.horizontal(|ui| {
                            let shape = match &e.shape {
                                project::EditShape::Polygon { vertices } => {
                                    format!("polygon, {} corners", vertices.len())
                                }
                                project::EditShape::Stroke { points, radius_px } => {
                                    format!(
                                        "stroke, {} points, radius {radius_px:.1} px",
                                        points.len()
                                    )
                                }
                            };
                            ui.label(format!(
                                "{}. {shape} → {}",
                                i + 1,
                                e.phase.as_deref().unwrap_or("erase")
                            ));
                            if ui
                                .small_button("✖")
                                .on_hover_text("Remove this edit")
                                .clicked()
                            {
                                actions
                                    .push(Action::Edit(Command::RemoveHandEdit { at, index: i }));
                            }
                        });
                    }
                });
        }
    }

    fn hand_phase_chosen(&self, image: &ImageStage) -> bool {
        matches!(image.tool, Tool::HandPolygon | Tool::Brush)
    }

    /// Point count: the grid, the key tool, and the estimate with its interval beside the
    /// image-analysis fractions.
    #[allow(clippy::too_many_arguments)]
    fn points_ui(
        &mut self,
        ui: &mut Ui,
        view: &View<'_>,
        at: MicrographRef,
        spec: &MicrographSpec,
        grain: &Grain,
        image: &mut ImageStage,
        actions: &mut Vec<Action>,
    ) {
        ui.label(egui::RichText::new("Point count").strong()).on_hover_text(
            "The classical estimate: lay points over the region and say which phase lies under each. The fraction of points estimates the volume fraction (Delesse principle; Chayes 1956); its 95 % interval is Wilson's score interval for a binomial proportion (Wilson 1927)",
        );
        ui.horizontal_wrapped(|ui| {
            ui.add(
                egui::DragValue::new(&mut self.grid_spacing_px)
                    .range(2.0..=2000.0)
                    .prefix("every ")
                    .suffix(" px"),
            );
            if ui
                .button("Regular grid")
                .on_hover_text("A square grid of points at this spacing over the region")
                .clicked()
            {
                actions.push(Action::Edit(Command::SetPointGrid {
                    at,
                    grid: Some(PointGrid::Regular {
                        spacing_px: self.grid_spacing_px,
                    }),
                }));
            }
            ui.separator();
            ui.add(
                egui::DragValue::new(&mut self.random_points)
                    .range(1..=project::hand::MAX_POINTS)
                    .suffix(" points"),
            );
            ui.add(egui::DragValue::new(&mut self.random_seed).prefix("seed "));
            if ui
                .button("Random points")
                .on_hover_text(
                    "Points drawn uniformly over the region; the same seed gives the same points",
                )
                .clicked()
            {
                actions.push(Action::Edit(Command::SetPointGrid {
                    at,
                    grid: Some(PointGrid::Random {
                        points: self.random_points,
                        seed: self.random_seed,
                    }),
                }));
            }
        });
        let Some(count) = &spec.point_count else {
            ui.weak("No point count on this micrograph.");
            return;
        };
        let (w, h) = view
            .image
            .map_or((0, 0), |i| (i.plane.width, i.plane.height));
        let points = match image.grid_points(spec, w, h) {
            Some(Ok(p)) => p.len(),
            Some(Err(e)) => {
                ui.colored_label(ui.visuals().error_fg_color, e.clone());
                return;
            }
            None => 0,
        };
        ui.horizontal_wrapped(|ui| {
            let counting = image.tool == Tool::Points;
            if ui
                .selectable_label(counting, "Count points")
                .on_hover_text(
                    "Keys 1–9 give the point under the cursor, or the ringed next point, to a phase; 0 leaves it uncounted; Backspace clears it",
                )
                .clicked()
            {
                image.set_tool(if counting { Tool::Pan } else { Tool::Points });
            }
            for (k, p) in grain.phases.iter().enumerate().take(9) {
                ui.colored_label(
                    super::image::phase_colour(spec, &p.label),
                    format!("{} = {}", k + 1, p.label),
                );
            }
            ui.weak("0 = not counted");
            if ui
                .small_button("Remove")
                .on_hover_text("Remove the point count and its marks (Ctrl+Z brings it back)")
                .clicked()
            {
                actions.push(Action::Edit(Command::SetPointGrid { at, grid: None }));
            }
        });
        let labels: Vec<String> = grain.phases.iter().map(|p| p.label.clone()).collect();
        let estimate = project::hand::point_count_estimate(count, &labels, points);
        ui.weak(format!(
            "{} of {} points marked, {} counted",
            estimate.marked, estimate.grid_points, estimate.counted
        ));
        let image_fractions = view.classes.map(|c| {
            let levels = self.levels_shown(spec, &c.segmentation);
            phase_fractions(grain, spec, &c.fractions_at(&levels))
        });
        egui::Grid::new(("point-count", at.micrograph))
            .striped(true)
            .num_columns(4)
            .show(ui, |ui| {
                ui.strong("phase");
                ui.strong("points");
                ui.strong("point count (Wilson 95 %)");
                ui.strong("image analysis");
                ui.end_row();
                for (i, p) in estimate.phases.iter().enumerate() {
                    ui.colored_label(super::image::phase_colour(spec, &p.label), &p.label);
                    ui.label(p.points.to_string());
                    match (p.fraction, p.wilson95) {
                        (Some(f), Some((lo, hi))) => ui.label(format!("{f:.3} ({lo:.3}–{hi:.3})")),
                        _ => ui.weak("—"),
                    };
                    match image_fractions.as_ref().and_then(|f| f.get(i)) {
                        Some(f) => ui.label(format!("{f:.3}")),
                        None => ui.weak("—"),
                    };
                    ui.end_row();
                }
            });
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
