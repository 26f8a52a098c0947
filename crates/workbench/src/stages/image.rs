//! The Image stage: the micrograph with pan (drag), zoom (wheel, + and - keys) and fit (F),
//! drawn from tiled textures with reduced levels; grey value and class under the cursor; the
//! region of interest outlined; a scale bar once the pixel size is known.

use egui::{Color32, Pos2, Rect, Sense, Stroke, Ui, Vec2, pos2, vec2};
use micrograph::segment::NOT_MEASURED;

use crate::app::{Action, View};
use crate::command::Command;

/// View state of the micrograph canvas (shared by the Image and Phases stages).
pub struct ImageStage {
    /// Screen points per image pixel (0 = fit on next draw).
    zoom: f32,
    /// Image point at the centre of the canvas.
    centre: Pos2,
    /// Size of the image last shown (a new size refits).
    shown_size: (usize, usize),
    /// Show the phase classes over the image.
    pub show_classes: bool,
    /// Opacity of the classes.
    pub opacity: f32,
    /// Outline the region of interest.
    pub show_region: bool,
    pixel_size_text: String,
    pixel_size_for: Option<Option<f64>>,
    /// Scale-bar calibration: on, and the ends clicked so far (image pixels).
    calibrating: bool,
    bar_ends: Vec<Pos2>,
    bar_length_text: String,
}

impl Default for ImageStage {
    fn default() -> Self {
        ImageStage {
            zoom: 0.0,
            centre: Pos2::ZERO,
            shown_size: (0, 0),
            show_classes: false,
            opacity: 0.5,
            show_region: true,
            pixel_size_text: String::new(),
            pixel_size_for: None,
            calibrating: false,
            bar_ends: Vec::new(),
            bar_length_text: String::new(),
        }
    }
}

/// What is under the cursor.
pub struct Hover {
    /// Pixel column.
    pub x: u32,
    /// Pixel row.
    pub y: u32,
    /// Grey value.
    pub grey: u16,
    /// Phase (or "not measured").
    pub class: Option<String>,
}

impl ImageStage {
    /// Fit the whole image on the next draw.
    pub fn fit(&mut self) {
        self.zoom = 0.0;
    }

    /// Zoom in (factor above 1) or out about the canvas centre.
    pub fn zoom_by(&mut self, factor: f32) {
        if self.zoom > 0.0 {
            self.zoom = (self.zoom * factor).clamp(0.005, 64.0);
        }
    }

    /// Draw the Image stage.
    pub fn ui(&mut self, ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
        let Some(at) = view.micrograph_ref() else {
            ui.label(if view.grain.is_some() {
                "This grain has no micrograph."
            } else {
                "Select a grain in the study tree."
            });
            return;
        };
        let Some(spec) = view.doc.micrograph(at) else {
            return;
        };
        ui.horizontal_wrapped(|ui| {
            self.toolbar_ui(ui, view, actions);
            ui.separator();
            let l = ui.label("Pixel size");
            l.clone()
                .on_hover_text("Micrometres per pixel, from the scale bar of the micrograph");
            if self.pixel_size_for != Some(spec.pixel_size_um) {
                self.pixel_size_for = Some(spec.pixel_size_um);
                self.pixel_size_text = spec
                    .pixel_size_um
                    .map(|s| s.to_string())
                    .unwrap_or_default();
            }
            let r = ui
                .add(
                    egui::TextEdit::singleline(&mut self.pixel_size_text)
                        .desired_width(60.0)
                        .hint_text("µm/px"),
                )
                .labelled_by(l.id);
            ui.label("µm/px");
            if r.lost_focus() {
                let text = self.pixel_size_text.trim();
                let value = if text.is_empty() {
                    Ok(None)
                } else {
                    text.parse::<f64>().map(Some)
                };
                match value {
                    Ok(v) if v != spec.pixel_size_um => {
                        actions.push(Action::Edit(Command::SetPixelSize {
                            at,
                            pixel_size_um: v,
                        }))
                    }
                    Ok(_) => {}
                    Err(_) => self.pixel_size_for = None,
                }
            }
        });
        ui.horizontal(|ui| self.calibration_ui(ui, at, actions));
        let hover = self.canvas_ui(ui, view, true);
        self.hover_line(ui, view, hover);
    }

    /// The scale-bar tool: click both ends of the bar on the image, type its length.
    fn calibration_ui(
        &mut self,
        ui: &mut Ui,
        at: crate::document::MicrographRef,
        actions: &mut Vec<Action>,
    ) {
        let toggle = ui
            .selectable_label(self.calibrating, "Scale bar tool")
            .on_hover_text("Click both ends of the micrograph's scale bar, then type its length: sets the pixel size");
        if toggle.clicked() {
            self.calibrating = !self.calibrating;
            self.bar_ends.clear();
        }
        if !self.calibrating {
            return;
        }
        match self.bar_ends.as_slice() {
            [] => {
                ui.label("Click one end of the scale bar.");
            }
            [_] => {
                ui.label("Click the other end.");
            }
            [a, b, ..] => {
                let px = a.distance(*b);
                ui.label(format!("{px:.1} px long; its length is"));
                let l = ui.label("");
                let r = ui
                    .add(egui::TextEdit::singleline(&mut self.bar_length_text).desired_width(60.0))
                    .labelled_by(l.id);
                ui.label("µm");
                let enter = r.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
                if ui.button("Set pixel size").clicked() || enter {
                    match self.bar_length_text.trim().parse::<f64>() {
                        Ok(um) if um > 0.0 && px > 0.0 => {
                            actions.push(Action::Edit(Command::SetPixelSize {
                                at,
                                pixel_size_um: Some(um / f64::from(px)),
                            }));
                            self.calibrating = false;
                            self.bar_ends.clear();
                        }
                        _ => {
                            ui.colored_label(
                                ui.visuals().warn_fg_color,
                                "type a length above zero",
                            );
                        }
                    }
                }
                if ui.button("Again").clicked() {
                    self.bar_ends.clear();
                }
            }
        }
    }

    /// Fit and zoom buttons, class overlay switch.
    pub fn toolbar_ui(&mut self, ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
        if let (Some(g), Some(grain)) = (view.grain, view.grain.and_then(|g| view.doc.grain(g)))
            && grain.micrographs.len() > 1
        {
            for (i, m) in grain.micrographs.iter().enumerate() {
                if ui
                    .selectable_label(view.micrograph == i, &m.label)
                    .clicked()
                {
                    actions.push(Action::SelectMicrograph(crate::document::MicrographRef {
                        grain: g,
                        micrograph: i,
                    }));
                }
            }
            ui.separator();
        }
        if ui
            .button("Fit")
            .on_hover_text("Show the whole image (F)")
            .clicked()
        {
            self.fit();
        }
        if ui
            .button("−")
            .on_hover_text("Zoom out (−, or the mouse wheel)")
            .clicked()
        {
            self.zoom_by(1.0 / 1.25);
        }
        if ui
            .button("+")
            .on_hover_text("Zoom in (+, or the mouse wheel)")
            .clicked()
        {
            self.zoom_by(1.25);
        }
        ui.weak(format!("{:.0} %", self.zoom * 100.0));
        ui.checkbox(&mut self.show_classes, "Phase overlay")
            .on_hover_text("Colour each measured pixel by its phase class");
        if self.show_classes {
            ui.add(egui::Slider::new(&mut self.opacity, 0.0..=1.0).text("opacity"));
        }
        ui.checkbox(&mut self.show_region, "Region outline")
            .on_hover_text("Outline the region of interest (yellow) and exclusions (red)");
    }

    /// The status line under the canvas.
    pub fn hover_line(&self, ui: &mut Ui, view: &View<'_>, hover: Option<Hover>) {
        ui.horizontal(|ui| {
            match hover {
                Some(h) => {
                    ui.monospace(format!("x {:5}  y {:5}  grey {:5}", h.x, h.y, h.grey));
                    if let Some(c) = h.class {
                        ui.monospace(format!("  {c}"));
                    }
                }
                None => {
                    ui.weak("Drag to pan, wheel or + − to zoom, F to fit.");
                }
            }
            if let Some(img) = view.image {
                ui.separator();
                ui.weak(format!(
                    "{} × {} px, {}-bit",
                    img.plane.width,
                    img.plane.height,
                    img.plane.bit_depth()
                ));
            }
        });
    }

    /// The canvas. `interactive_keys` lets + − F act while the pointer is over it.
    pub fn canvas_ui(
        &mut self,
        ui: &mut Ui,
        view: &View<'_>,
        interactive_keys: bool,
    ) -> Option<Hover> {
        let size = ui.available_size() - vec2(0.0, 22.0);
        let (rect, response) =
            ui.allocate_exact_size(size.max(vec2(50.0, 50.0)), Sense::click_and_drag());
        let painter = ui.painter_at(rect);
        painter.rect_filled(rect, 0.0, Color32::from_gray(24));
        let Some(img) = view.image else {
            let text = match (view.image_error, view.image_busy) {
                (Some(e), _) => format!("Could not show the micrograph: {e}"),
                (None, Some(_)) => "loading the micrograph…".into(),
                (None, None) => "no micrograph".into(),
            };
            painter.text(
                rect.center(),
                egui::Align2::CENTER_CENTER,
                text,
                egui::FontId::proportional(15.0),
                Color32::LIGHT_GRAY,
            );
            return None;
        };
        let (w, h) = (img.grey.width, img.grey.height);
        if self.shown_size != (w, h) {
            self.shown_size = (w, h);
            self.zoom = 0.0;
        }
        if self.zoom <= 0.0 {
            self.zoom = (rect.width() / w as f32).min(rect.height() / h as f32) * 0.98;
            self.centre = pos2(w as f32 / 2.0, h as f32 / 2.0);
        }
        // Pan and zoom.
        if response.dragged() {
            self.centre -= response.drag_delta() / self.zoom;
        }
        if let Some(pointer) = response.hover_pos() {
            let (scroll, pinch) = ui.input(|i| (i.smooth_scroll_delta.y, i.zoom_delta()));
            let factor = (scroll * 0.002).exp() * pinch;
            if (factor - 1.0).abs() > 1e-4 {
                let before = self.centre + (pointer - rect.center()) / self.zoom;
                self.zoom = (self.zoom * factor).clamp(0.005, 64.0);
                self.centre = before - (pointer - rect.center()) / self.zoom;
            }
            if interactive_keys && !ui.ctx().egui_wants_keyboard_input() {
                let (plus, minus, fit) = ui.input(|i| {
                    (
                        i.key_pressed(egui::Key::Plus) || i.key_pressed(egui::Key::Equals),
                        i.key_pressed(egui::Key::Minus),
                        i.key_pressed(egui::Key::F),
                    )
                });
                if plus {
                    self.zoom_by(1.25);
                }
                if minus {
                    self.zoom_by(1.0 / 1.25);
                }
                if fit {
                    self.fit();
                }
            }
        }
        let (centre, zoom) = (self.centre, self.zoom);
        let to_screen = move |p: Pos2| rect.center() + (p - centre) * zoom;
        img.grey.paint(&painter, to_screen, zoom, Color32::WHITE);
        if self.show_classes
            && let Some(c) = view.classes
        {
            c.overlay.paint(
                &painter,
                to_screen,
                zoom,
                Color32::WHITE.gamma_multiply(self.opacity),
            );
        }
        let spec = view.micrograph_ref().and_then(|m| view.doc.micrograph(m));
        if self.show_region
            && let Some(spec) = spec
        {
            for (polys, colour) in [
                (&spec.region.include, Color32::from_rgb(240, 210, 40)),
                (&spec.region.exclude, Color32::from_rgb(230, 60, 50)),
            ] {
                for poly in polys {
                    let mut points: Vec<Pos2> = poly
                        .0
                        .iter()
                        .map(|p| to_screen(pos2(p[0] as f32, p[1] as f32)))
                        .collect();
                    if let Some(first) = points.first().copied() {
                        points.push(first);
                    }
                    painter.add(egui::Shape::line(points, Stroke::new(2.0, colour)));
                }
            }
        }
        if let Some(size_um) = spec.and_then(|s| s.pixel_size_um) {
            scale_bar(&painter, rect, zoom, size_um);
        }
        if self.calibrating {
            if response.clicked()
                && let Some(p) = response.interact_pointer_pos()
            {
                if self.bar_ends.len() >= 2 {
                    self.bar_ends.clear();
                }
                self.bar_ends.push(centre + (p - rect.center()) / zoom);
            }
            let ends: Vec<Pos2> = self.bar_ends.iter().map(|p| to_screen(*p)).collect();
            for p in &ends {
                painter.circle_stroke(*p, 5.0, Stroke::new(2.0, Color32::from_rgb(80, 220, 255)));
            }
            if let [a, b] = ends.as_slice() {
                painter.line_segment([*a, *b], Stroke::new(2.0, Color32::from_rgb(80, 220, 255)));
            }
        }
        if view.image_busy.is_some() {
            painter.text(
                rect.left_top() + vec2(8.0, 8.0),
                egui::Align2::LEFT_TOP,
                "classifying…",
                egui::FontId::proportional(14.0),
                Color32::YELLOW,
            );
        }
        // Under the cursor.
        let pointer = response.hover_pos()?;
        let p = centre + (pointer - rect.center()) / zoom;
        if p.x < 0.0 || p.y < 0.0 || p.x >= w as f32 || p.y >= h as f32 {
            return None;
        }
        let (x, y) = (p.x as u32, p.y as u32);
        let index = y as usize * w + x as usize;
        let grey = *img.plane.data.get(index)?;
        let class = view.classes.and_then(|c| {
            let class = *c.segmentation.class_map.get(index)?;
            Some(if class == NOT_MEASURED {
                "not measured (outside the region, void or rim)".to_string()
            } else {
                let phase = spec
                    .and_then(|s| s.class_phases.get(usize::from(class)))
                    .cloned()
                    .unwrap_or_else(|| format!("class {}", class + 1));
                format!("class {} ({phase})", class + 1)
            })
        });
        Some(Hover { x, y, grey, class })
    }
}

/// A scale bar of a round length in the lower left corner.
fn scale_bar(painter: &egui::Painter, rect: Rect, zoom: f32, pixel_size_um: f64) {
    let um_per_point = pixel_size_um / f64::from(zoom);
    let target = um_per_point * 120.0;
    let magnitude = 10f64.powf(target.log10().floor());
    let length_um = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * magnitude)
        .rfind(|l| *l <= target)
        .unwrap_or(magnitude);
    let length_pt = (length_um / um_per_point) as f32;
    let start = rect.left_bottom() + vec2(16.0, -18.0);
    let bg = Rect::from_min_size(start - vec2(6.0, 20.0), Vec2::new(length_pt + 12.0, 28.0));
    painter.rect_filled(bg, 3.0, Color32::from_black_alpha(160));
    painter.line_segment(
        [start, start + vec2(length_pt, 0.0)],
        Stroke::new(3.0, Color32::WHITE),
    );
    let label = if length_um >= 1.0 {
        format!("{length_um:.0} µm")
    } else {
        format!("{length_um} µm")
    };
    painter.text(
        start + vec2(length_pt / 2.0, -4.0),
        egui::Align2::CENTER_BOTTOM,
        label,
        egui::FontId::proportional(12.0),
        Color32::WHITE,
    );
}
