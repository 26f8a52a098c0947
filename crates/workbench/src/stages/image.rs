//! The Image stage: the micrograph with pan (drag), zoom (wheel, + and - keys) and fit (F),
//! drawn from tiled textures with reduced levels; grey value and class under the cursor; the
//! region of interest with its tools (include and exclude polygons: click to add vertices,
//! drag a vertex to move it, double-click an edge to add one, right-click or Delete to remove
//! one); a scale bar once the pixel size is known, and the scale-bar tool to set it.
//!
//! The canvas is shared with the Phases stage, whose hand tools draw here too: polygon and
//! brush edits over the classification, and the point count (keys 1-9 give the point under the
//! cursor, or the next point, to a phase; 0 leaves it uncounted).

use egui::{Color32, Key, PointerButton, Pos2, Rect, Sense, Stroke, Ui, Vec2, pos2, vec2};
use micrograph::segment::NOT_MEASURED;
use project::{EditShape, HandEdit, MicrographSpec};

use crate::app::{Action, View};
use crate::command::{Command, RegionList};
use crate::document::MicrographRef;
use crate::jobs::class_colour;

/// Point-count points (image pixels), or why the grid has none.
type GridPoints = Result<Vec<[f64; 2]>, String>;

/// What a click or drag on the canvas does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Tool {
    /// Drag pans.
    Pan,
    /// Click both ends of the scale bar.
    ScaleBar,
    /// Click the vertices of a new region polygon.
    Region(RegionList),
    /// Drag, add or delete vertices of the region polygons.
    Vertices,
    /// Click the vertices of a polygon whose pixels become the chosen phase.
    HandPolygon,
    /// Paint the chosen phase with a round brush.
    Brush,
    /// Give the points of the point count a phase with the number keys.
    Points,
}

const REGION_INCLUDE: Color32 = Color32::from_rgb(240, 210, 40);
const REGION_EXCLUDE: Color32 = Color32::from_rgb(230, 60, 50);
const DRAFT: Color32 = Color32::from_rgb(80, 220, 255);

/// View state of the micrograph canvas (shared by the Image and Phases stages).
pub struct ImageStage {
    /// Screen points per image pixel (0 = fit on next draw).
    zoom: f32,
    /// Image point at the centre of the canvas.
    centre: Pos2,
    /// Size of the image last shown (a new size refits).
    shown_size: (usize, usize),
    /// Canvas rectangle last drawn.
    last_rect: Rect,
    /// The view is the fitted one (no pan or zoom since): a canvas of another size refits it.
    fitted: bool,
    /// Show the phase classes over the image.
    pub show_classes: bool,
    /// Opacity of the classes.
    pub opacity: f32,
    /// Outline the region of interest.
    pub show_region: bool,
    /// Outline the hand edits.
    pub show_edits: bool,
    /// Draw the point count (the Phases stage's; the Image stage leaves it out).
    pub show_points: bool,
    /// The active tool.
    pub tool: Tool,
    /// Phase the hand tools give pixels to (`None`: erase back to automatic).
    pub hand_phase: Option<String>,
    /// Brush radius, image pixels.
    pub brush_radius_px: f32,
    pixel_size_text: String,
    pixel_size_for: Option<Option<f64>>,
    bar_ends: Vec<Pos2>,
    bar_length_text: String,
    /// Polygon being drawn (image pixels).
    draft: Vec<Pos2>,
    /// Region vertex being dragged: list, polygon, vertex, where it is now.
    drag_vertex: Option<(RegionList, usize, usize, Pos2)>,
    /// Brush stroke being painted (image pixels).
    stroke: Vec<Pos2>,
    /// Point-count points for a grid and region (the key says which).
    grid_cache: Option<(String, GridPoints)>,
    /// The grain's phase labels, for the number keys of the point count.
    phase_labels: Vec<String>,
}

impl Default for ImageStage {
    fn default() -> Self {
        ImageStage {
            zoom: 0.0,
            centre: Pos2::ZERO,
            shown_size: (0, 0),
            last_rect: Rect::NOTHING,
            fitted: false,
            show_classes: false,
            opacity: 0.5,
            show_region: true,
            show_edits: true,
            show_points: false,
            tool: Tool::Pan,
            hand_phase: None,
            brush_radius_px: 4.0,
            pixel_size_text: String::new(),
            pixel_size_for: None,
            bar_ends: Vec::new(),
            bar_length_text: String::new(),
            draft: Vec::new(),
            drag_vertex: None,
            stroke: Vec::new(),
            grid_cache: None,
            phase_labels: Vec::new(),
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

/// Vertices of a region list.
fn region_list(spec: &MicrographSpec, list: RegionList) -> &[micrograph::roi::Polygon] {
    match list {
        RegionList::Include => &spec.region.include,
        RegionList::Exclude => &spec.region.exclude,
    }
}

fn to_pair(p: Pos2) -> [f64; 2] {
    [f64::from(p.x), f64::from(p.y)]
}

fn to_pos(p: [f64; 2]) -> Pos2 {
    pos2(p[0] as f32, p[1] as f32)
}

/// Colour of a phase on the canvas: that of the first class assigned to it.
pub fn phase_colour(spec: &MicrographSpec, label: &str) -> Color32 {
    spec.class_phases
        .iter()
        .position(|p| p == label)
        .map_or(Color32::WHITE, class_colour)
}

/// Distance from `p` to the segment `a`-`b`.
fn distance_to_segment(p: Pos2, a: Pos2, b: Pos2) -> f32 {
    let ab = b - a;
    let t = if ab.length_sq() > 0.0 {
        ((p - a).dot(ab) / ab.length_sq()).clamp(0.0, 1.0)
    } else {
        0.0
    };
    p.distance(a + ab * t)
}

impl ImageStage {
    /// The canvas rectangle last drawn (screen points).
    pub fn canvas_rect(&self) -> Rect {
        self.last_rect
    }

    /// Width and height (pixels) of the image last drawn.
    pub fn shown_size(&self) -> (usize, usize) {
        self.shown_size
    }

    /// Where an image point (pixels) was on screen at the last draw.
    pub fn screen_pos(&self, p: [f64; 2]) -> Option<Pos2> {
        (self.zoom > 0.0 && self.last_rect.is_positive())
            .then(|| self.last_rect.center() + (to_pos(p) - self.centre) * self.zoom)
    }

    /// The image point under a screen position at the last draw.
    pub fn image_pos(&self, p: Pos2) -> Option<[f64; 2]> {
        (self.zoom > 0.0 && self.last_rect.is_positive())
            .then(|| to_pair(self.centre + (p - self.last_rect.center()) / self.zoom))
    }

    /// Choose a tool (an unfinished polygon or stroke is dropped).
    pub fn set_tool(&mut self, tool: Tool) {
        if self.tool != tool {
            self.tool = tool;
            self.draft.clear();
            self.stroke.clear();
            self.drag_vertex = None;
            self.bar_ends.clear();
        }
    }

    /// The point-count points of a micrograph (cached per grid and region).
    pub fn grid_points(
        &mut self,
        spec: &MicrographSpec,
        width: u32,
        height: u32,
    ) -> Option<&Result<Vec<[f64; 2]>, String>> {
        let grid = &spec.point_count.as_ref()?.grid;
        let key = format!("{grid:?}|{:?}|{width}x{height}", spec.region);
        if self.grid_cache.as_ref().is_none_or(|(k, _)| *k != key) {
            let points = project::hand::grid_points(grid, &spec.region, width, height);
            self.grid_cache = Some((key, points));
        }
        self.grid_cache.as_ref().map(|(_, p)| p)
    }

    /// Fit the whole image on the next draw.
    pub fn fit(&mut self) {
        self.zoom = 0.0;
    }

    /// Zoom in (factor above 1) or out about the canvas centre.
    pub fn zoom_by(&mut self, factor: f32) {
        if self.zoom > 0.0 {
            self.zoom = (self.zoom * factor).clamp(0.005, 64.0);
            self.fitted = false;
        }
    }

    /// Draw the Image stage.
    pub fn ui(&mut self, ui: &mut Ui, view: &View<'_>, actions: &mut Vec<Action>) {
        if matches!(self.tool, Tool::HandPolygon | Tool::Brush | Tool::Points) {
            self.set_tool(Tool::Pan);
        }
        self.show_points = false;
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
        ui.horizontal_wrapped(|ui| self.region_tools_ui(ui, at, spec, actions));
        if self.tool == Tool::ScaleBar {
            ui.horizontal(|ui| self.calibration_ui(ui, at, actions));
        }
        let hover = self.canvas_ui(ui, view, true, actions);
        self.hover_line(ui, view, hover);
    }

    /// A button that selects a tool, lit while it is the active one; pressing the active tool
    /// again goes back to panning.
    pub fn tool_button(&mut self, ui: &mut Ui, tool: Tool, label: &str, tip: &str) {
        if ui
            .selectable_label(self.tool == tool, label)
            .on_hover_text(tip)
            .clicked()
        {
            self.set_tool(if self.tool == tool && tool != Tool::Pan {
                Tool::Pan
            } else {
                tool
            });
        }
    }

    /// Region tools: include and exclude polygons, vertex editing, the scale bar.
    fn region_tools_ui(
        &mut self,
        ui: &mut Ui,
        at: MicrographRef,
        spec: &MicrographSpec,
        actions: &mut Vec<Action>,
    ) {
        ui.label("Region:");
        for (tool, label, tip) in [
            (Tool::Pan, "Pan", "Drag to move the image"),
            (
                Tool::Region(RegionList::Include),
                "Include polygon",
                "Click the corners of an area to measure (the region is the union of these; none: the whole image). Click the first corner, double-click or press Enter to close; Esc drops it, Backspace the last corner",
            ),
            (
                Tool::Region(RegionList::Exclude),
                "Exclude polygon",
                "Click the corners of an area to leave out (cracks, inclusions, the scale bar, other grains)",
            ),
            (
                Tool::Vertices,
                "Edit vertices",
                "Drag a corner to move it; double-click an edge to add one; right-click a corner or hover it and press Delete to remove it",
            ),
            (
                Tool::ScaleBar,
                "Scale bar tool",
                "Click both ends of the micrograph's scale bar, then type its length: sets the pixel size",
            ),
        ] {
            self.tool_button(ui, tool, label, tip);
        }
        let n_in = spec.region.include.len();
        let n_out = spec.region.exclude.len();
        ui.weak(format!("{n_in} include, {n_out} exclude"));
        if n_in > 0
            && ui
                .small_button("Whole image")
                .on_hover_text("Delete every include polygon: the region becomes the whole image")
                .clicked()
        {
            for polygon in (0..n_in).rev() {
                actions.push(Action::Edit(Command::DeleteRegionPolygon {
                    at,
                    list: RegionList::Include,
                    polygon,
                }));
            }
        }
        if !self.draft.is_empty() && matches!(self.tool, Tool::Region(_)) {
            ui.weak(format!("{} corners; Enter closes", self.draft.len()));
        }
    }

    /// The scale-bar tool: click both ends of the bar on the image, type its length.
    fn calibration_ui(
        &mut self,
        ui: &mut Ui,
        at: crate::document::MicrographRef,
        actions: &mut Vec<Action>,
    ) {
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
                            self.set_tool(Tool::Pan);
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
            ui.add(egui::Slider::new(&mut self.opacity, 0.0..=1.0))
                .on_hover_text("Opacity of the phase overlay (0 = image only, 1 = classes only)");
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
                    ui.weak(match self.tool {
                        Tool::Brush => "Drag to paint (right-drag pans), wheel or + − to zoom, F to fit.",
                        Tool::Points => "Keys 1–9 give the point under the cursor (or the ringed next point) a phase, 0 leaves it uncounted, Backspace clears it.",
                        _ => "Drag to pan, wheel or + − to zoom, F to fit.",
                    });
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

    /// Close the polygon being drawn, as a region polygon or a hand edit.
    fn finish_polygon(&mut self, at: MicrographRef, actions: &mut Vec<Action>) {
        if self.draft.len() < 3 {
            return;
        }
        let vertices: Vec<[f64; 2]> = self.draft.drain(..).map(to_pair).collect();
        match self.tool {
            Tool::Region(list) => actions.push(Action::Edit(Command::AddRegionPolygon {
                at,
                list,
                vertices,
            })),
            Tool::HandPolygon => actions.push(Action::Edit(Command::AddHandEdit {
                at,
                edit: HandEdit {
                    shape: EditShape::Polygon { vertices },
                    phase: self.hand_phase.clone(),
                },
            })),
            _ => {}
        }
    }

    /// The canvas. `interactive_keys` lets + − F (and the tools' keys) act while the pointer is
    /// over it.
    pub fn canvas_ui(
        &mut self,
        ui: &mut Ui,
        view: &View<'_>,
        interactive_keys: bool,
        actions: &mut Vec<Action>,
    ) -> Option<Hover> {
        // The space left that is also visible: a row above that overflowed (a toolbar wider
        // than the panel) widens the ui beyond its clip, and a canvas sized to that would hide
        // part of the fitted image under the next panel.
        let visible = ui.available_rect_before_wrap().intersect(ui.clip_rect());
        let size = visible.size() - vec2(0.0, 22.0);
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
        if self.fitted && self.last_rect.size() != rect.size() {
            // The canvas changed size (window resized, side panels moved): fit again.
            self.zoom = 0.0;
        }
        if self.zoom <= 0.0 {
            self.zoom = (rect.width() / w as f32).min(rect.height() / h as f32) * 0.98;
            self.centre = pos2(w as f32 / 2.0, h as f32 / 2.0);
            self.fitted = true;
        }
        self.last_rect = rect;
        let at = view.micrograph_ref();
        let spec = at.and_then(|m| view.doc.micrograph(m));
        let keys_free = interactive_keys && !ui.ctx().egui_wants_keyboard_input();
        self.phase_labels = at
            .and_then(|m| view.doc.grain(m.grain))
            .map(|g| g.phases.iter().map(|p| p.label.clone()).collect())
            .unwrap_or_default();
        let over = response.hover_pos().is_some();

        // Tools first: they may take the drag away from panning.
        let mut drag_taken = false;
        if let (Some(at), Some(spec)) = (at, spec) {
            drag_taken = self.tools_input(ui, &response, rect, at, spec, keys_free, actions);
        }

        // Pan and zoom.
        let pan = if drag_taken {
            response.dragged_by(PointerButton::Secondary)
                || response.dragged_by(PointerButton::Middle)
        } else {
            response.dragged()
        };
        if pan && response.drag_delta() != Vec2::ZERO {
            self.centre -= response.drag_delta() / self.zoom;
            self.fitted = false;
        }
        if let Some(pointer) = response.hover_pos() {
            let (scroll, pinch) = ui.input(|i| (i.smooth_scroll_delta.y, i.zoom_delta()));
            let factor = (scroll * 0.002).exp() * pinch;
            if (factor - 1.0).abs() > 1e-4 {
                let before = self.centre + (pointer - rect.center()) / self.zoom;
                self.zoom = (self.zoom * factor).clamp(0.005, 64.0);
                self.centre = before - (pointer - rect.center()) / self.zoom;
                self.fitted = false;
            }
        }
        if over && keys_free {
            let (plus, minus, fit) = ui.input(|i| {
                (
                    i.key_pressed(Key::Plus) || i.key_pressed(Key::Equals),
                    i.key_pressed(Key::Minus),
                    i.key_pressed(Key::F),
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
        if let Some(spec) = spec {
            self.paint_region(&painter, spec, to_screen);
            if self.show_edits {
                paint_hand_edits(&painter, spec, to_screen, zoom);
            }
            self.paint_points(
                &painter,
                view,
                spec,
                w as u32,
                h as u32,
                to_screen,
                response.hover_pos(),
            );
            if let Some(size_um) = spec.pixel_size_um {
                scale_bar(&painter, rect, zoom, size_um);
            }
        }
        self.paint_drafts(&painter, to_screen, response.hover_pos());
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

    /// The active tool's clicks, drags and keys. Returns whether the tool took the primary drag
    /// (then only a secondary or middle drag pans).
    #[allow(clippy::too_many_arguments)]
    fn tools_input(
        &mut self,
        ui: &Ui,
        response: &egui::Response,
        rect: Rect,
        at: MicrographRef,
        spec: &MicrographSpec,
        keys_free: bool,
        actions: &mut Vec<Action>,
    ) -> bool {
        let (centre, zoom) = (self.centre, self.zoom);
        let from_screen = |p: Pos2| centre + (p - rect.center()) / zoom;
        let to_screen = |p: Pos2| rect.center() + (p - centre) * zoom;
        let key = |k: Key| keys_free && ui.input(|i| i.key_pressed(k));
        match self.tool {
            Tool::Pan => false,
            Tool::ScaleBar => {
                if response.clicked()
                    && let Some(p) = response.interact_pointer_pos()
                {
                    if self.bar_ends.len() >= 2 {
                        self.bar_ends.clear();
                    }
                    self.bar_ends.push(from_screen(p));
                }
                false
            }
            Tool::Region(_) | Tool::HandPolygon => {
                if response.double_clicked() {
                    // The double click's second press added a corner on top of the last one.
                    if self.draft.len() >= 2 {
                        let n = self.draft.len();
                        if to_screen(self.draft[n - 1]).distance(to_screen(self.draft[n - 2])) < 4.0
                        {
                            self.draft.pop();
                        }
                    }
                    self.finish_polygon(at, actions);
                } else if response.clicked()
                    && let Some(p) = response.interact_pointer_pos()
                {
                    let closes =
                        self.draft.len() >= 3 && to_screen(self.draft[0]).distance(p) < 8.0;
                    if closes {
                        self.finish_polygon(at, actions);
                    } else {
                        self.draft.push(from_screen(p));
                    }
                }
                if key(Key::Enter) {
                    self.finish_polygon(at, actions);
                }
                if key(Key::Escape) {
                    self.draft.clear();
                }
                if key(Key::Backspace) {
                    self.draft.pop();
                }
                false
            }
            Tool::Vertices => {
                let hovered = response
                    .hover_pos()
                    .and_then(|p| nearest_vertex(spec, p, to_screen, 8.0));
                if response.drag_started_by(PointerButton::Primary)
                    && let Some(origin) = ui.input(|i| i.pointer.press_origin())
                    && let Some((list, poly, vertex)) = nearest_vertex(spec, origin, to_screen, 8.0)
                {
                    let v = region_list(spec, list)[poly].0[vertex];
                    self.drag_vertex = Some((list, poly, vertex, to_pos(v)));
                }
                let mut taken = false;
                if let Some((list, polygon, vertex, _)) = self.drag_vertex {
                    taken = true;
                    if let Some(p) = response.interact_pointer_pos() {
                        self.drag_vertex = Some((list, polygon, vertex, from_screen(p)));
                    }
                    if response.drag_stopped()
                        && let Some((_, _, _, to)) = self.drag_vertex.take()
                    {
                        actions.push(Action::Edit(Command::MoveRegionVertex {
                            at,
                            list,
                            polygon,
                            vertex,
                            to: to_pair(to),
                        }));
                    }
                }
                if let Some((list, polygon, vertex)) = hovered
                    && self.drag_vertex.is_none()
                    && (response.secondary_clicked() || key(Key::Delete) || key(Key::Backspace))
                {
                    actions.push(Action::Edit(Command::DeleteRegionVertex {
                        at,
                        list,
                        polygon,
                        vertex,
                    }));
                } else if response.double_clicked()
                    && hovered.is_none()
                    && let Some(p) = response.interact_pointer_pos()
                    && let Some((list, polygon, vertex)) = nearest_edge(spec, p, to_screen, 6.0)
                {
                    actions.push(Action::Edit(Command::InsertRegionVertex {
                        at,
                        list,
                        polygon,
                        vertex,
                        point: to_pair(from_screen(p)),
                    }));
                }
                taken
            }
            Tool::Brush => {
                let min_step = (self.brush_radius_px / 3.0).max(0.5);
                if response.drag_started_by(PointerButton::Primary) {
                    self.stroke.clear();
                    if let Some(origin) = ui.input(|i| i.pointer.press_origin()) {
                        self.stroke.push(from_screen(origin));
                    }
                }
                if response.dragged_by(PointerButton::Primary)
                    && let Some(p) = response.interact_pointer_pos()
                {
                    let q = from_screen(p);
                    if self.stroke.last().is_none_or(|l| l.distance(q) >= min_step) {
                        self.stroke.push(q);
                    }
                }
                let single = response.clicked()
                    && response.interact_pointer_pos().is_some()
                    && self.stroke.is_empty();
                if single && let Some(p) = response.interact_pointer_pos() {
                    self.stroke.push(from_screen(p));
                }
                if (response.drag_stopped_by(PointerButton::Primary) || single)
                    && !self.stroke.is_empty()
                {
                    let points = self.stroke.drain(..).map(to_pair).collect();
                    actions.push(Action::Edit(Command::AddHandEdit {
                        at,
                        edit: HandEdit {
                            shape: EditShape::Stroke {
                                points,
                                radius_px: f64::from(self.brush_radius_px),
                            },
                            phase: self.hand_phase.clone(),
                        },
                    }));
                }
                true
            }
            Tool::Points => {
                self.points_input(ui, response, at, spec, keys_free, to_screen, actions);
                false
            }
        }
    }

    /// Keys 1-9 (phase), 0 (not counted), Backspace (clear) on the point under the cursor or
    /// the next unmarked point.
    #[allow(clippy::too_many_arguments)]
    fn points_input(
        &mut self,
        ui: &Ui,
        response: &egui::Response,
        at: MicrographRef,
        spec: &MicrographSpec,
        keys_free: bool,
        to_screen: impl Fn(Pos2) -> Pos2,
        actions: &mut Vec<Action>,
    ) {
        if !keys_free || response.hover_pos().is_none() && !response.has_focus() {
            return;
        }
        let Some(count) = spec.point_count.as_ref() else {
            return;
        };
        let (w, h) = self.shown_size;
        let Some(Ok(points)) = self.grid_points(spec, w as u32, h as u32).cloned() else {
            return;
        };
        const NUMBERS: [Key; 9] = [
            Key::Num1,
            Key::Num2,
            Key::Num3,
            Key::Num4,
            Key::Num5,
            Key::Num6,
            Key::Num7,
            Key::Num8,
            Key::Num9,
        ];
        let pressed = ui.input(|i| {
            if let Some(k) = NUMBERS.iter().position(|k| i.key_pressed(*k)) {
                Some(Some(Some(k)))
            } else if i.key_pressed(Key::Num0) {
                Some(Some(None))
            } else if i.key_pressed(Key::Backspace) || i.key_pressed(Key::Delete) {
                Some(None)
            } else {
                None
            }
        });
        let Some(mark) = pressed else { return };
        let hovered = response.hover_pos().and_then(|p| {
            points
                .iter()
                .enumerate()
                .map(|(i, q)| (i, to_screen(to_pos(*q)).distance(p)))
                .filter(|(_, d)| *d < 12.0)
                .min_by(|a, b| a.1.total_cmp(&b.1))
                .map(|(i, _)| i)
        });
        let marks = marks_by_point(count, points.len());
        let next = marks.iter().position(Option::is_none);
        let Some(point) = hovered.or(next) else {
            return;
        };
        let mark = match mark {
            Some(Some(k)) => match self.phase_labels.get(k) {
                Some(label) => Some(Some(label.clone())),
                None => return,
            },
            Some(None) => Some(None),
            None => None,
        };
        actions.push(Action::Edit(Command::MarkPoint { at, point, mark }));
        // Bring the following point into view when the next point was marked.
        if hovered.is_none()
            && let Some(following) = (point + 1..points.len()).find(|i| marks[*i].is_none())
        {
            let p = to_pos(points[following]);
            let view = Rect::from_center_size(self.centre, self.last_rect.size() / self.zoom);
            if !view.shrink(20.0 / self.zoom).contains(p) {
                self.centre = p;
                self.fitted = false;
            }
        }
    }

    fn paint_region(
        &self,
        painter: &egui::Painter,
        spec: &MicrographSpec,
        to_screen: impl Fn(Pos2) -> Pos2,
    ) {
        let editing = self.tool == Tool::Vertices;
        if !(self.show_region || editing || matches!(self.tool, Tool::Region(_))) {
            return;
        }
        for (list, colour) in [
            (RegionList::Include, REGION_INCLUDE),
            (RegionList::Exclude, REGION_EXCLUDE),
        ] {
            for (pi, poly) in region_list(spec, list).iter().enumerate() {
                let mut points: Vec<Pos2> = poly
                    .0
                    .iter()
                    .enumerate()
                    .map(|(vi, p)| match self.drag_vertex {
                        Some((l, dp, dv, to)) if l == list && dp == pi && dv == vi => to_screen(to),
                        _ => to_screen(to_pos(*p)),
                    })
                    .collect();
                if editing {
                    for p in &points {
                        painter.rect_filled(
                            Rect::from_center_size(*p, vec2(7.0, 7.0)),
                            1.0,
                            colour,
                        );
                    }
                }
                if let Some(first) = points.first().copied() {
                    points.push(first);
                }
                painter.add(egui::Shape::line(points, Stroke::new(2.0, colour)));
            }
        }
    }

    fn paint_drafts(
        &self,
        painter: &egui::Painter,
        to_screen: impl Fn(Pos2) -> Pos2,
        pointer: Option<Pos2>,
    ) {
        let colour = match self.tool {
            Tool::Region(RegionList::Include) => REGION_INCLUDE,
            Tool::Region(RegionList::Exclude) => REGION_EXCLUDE,
            _ => DRAFT,
        };
        if !self.draft.is_empty() {
            let mut line: Vec<Pos2> = self.draft.iter().map(|p| to_screen(*p)).collect();
            for p in &line {
                painter.circle_filled(*p, 3.5, colour);
            }
            painter.circle_stroke(line[0], 8.0, Stroke::new(1.5, colour));
            if let Some(p) = pointer {
                line.push(p);
            }
            painter.add(egui::Shape::line(line, Stroke::new(2.0, colour)));
        }
        if self.tool == Tool::ScaleBar {
            let ends: Vec<Pos2> = self.bar_ends.iter().map(|p| to_screen(*p)).collect();
            for p in &ends {
                painter.circle_stroke(*p, 5.0, Stroke::new(2.0, DRAFT));
            }
            if let [a, b] = ends.as_slice() {
                painter.line_segment([*a, *b], Stroke::new(2.0, DRAFT));
            }
        }
        if self.tool == Tool::Brush {
            let r = self.brush_radius_px * self.zoom;
            if self.stroke.len() > 1 {
                let line: Vec<Pos2> = self.stroke.iter().map(|p| to_screen(*p)).collect();
                painter.add(egui::Shape::line(
                    line,
                    Stroke::new((2.0 * r).max(1.0), DRAFT.gamma_multiply(0.5)),
                ));
            }
            if let Some(p) = pointer {
                painter.circle_stroke(p, r.max(2.0), Stroke::new(1.5, DRAFT));
            }
        }
    }

    #[allow(clippy::too_many_arguments)]
    fn paint_points(
        &mut self,
        painter: &egui::Painter,
        view: &View<'_>,
        spec: &MicrographSpec,
        w: u32,
        h: u32,
        to_screen: impl Fn(Pos2) -> Pos2,
        pointer: Option<Pos2>,
    ) {
        let Some(count) = spec.point_count.as_ref() else {
            return;
        };
        if !self.show_points || (self.tool != Tool::Points && count.marks.is_empty()) {
            return;
        }
        // Take the cached points out while drawing (no copy), and put them back after.
        if self.grid_points(spec, w, h).is_none() {
            return;
        }
        let Some((key, Ok(points))) = self.grid_cache.take() else {
            return;
        };
        let _ = view;
        let clip = painter.clip_rect();
        let marks = marks_by_point(count, points.len());
        let next = marks.iter().position(Option::is_none);
        // One colour per phase label, looked up once.
        let colours: Vec<(&str, Color32)> = spec
            .class_phases
            .iter()
            .map(|l| (l.as_str(), phase_colour(spec, l)))
            .collect();
        let colour_of = |label: &str| {
            colours
                .iter()
                .find(|(l, _)| *l == label)
                .map_or(Color32::WHITE, |(_, c)| *c)
        };
        for (i, p) in points.iter().enumerate() {
            let s = to_screen(to_pos(*p));
            if !clip.expand(6.0).contains(s) {
                continue;
            }
            match marks[i] {
                Some(m) => match &m.phase {
                    Some(label) => {
                        painter.add(egui::epaint::CircleShape {
                            center: s,
                            radius: 4.0,
                            fill: colour_of(label),
                            stroke: Stroke::new(1.0, Color32::BLACK),
                        });
                    }
                    None => {
                        painter.line_segment(
                            [s - vec2(3.0, 3.0), s + vec2(3.0, 3.0)],
                            Stroke::new(1.5, Color32::GRAY),
                        );
                        painter.line_segment(
                            [s - vec2(3.0, -3.0), s + vec2(3.0, -3.0)],
                            Stroke::new(1.5, Color32::GRAY),
                        );
                    }
                },
                None => {
                    painter.circle_stroke(s, 3.0, Stroke::new(1.2, Color32::WHITE));
                }
            }
            if Some(i) == next && self.tool == Tool::Points {
                painter.circle_stroke(s, 9.0, Stroke::new(2.0, DRAFT));
            }
            if self.tool == Tool::Points && pointer.is_some_and(|q| q.distance(s) < 12.0) {
                painter.circle_stroke(s, 7.0, Stroke::new(1.5, Color32::YELLOW));
            }
        }
        self.grid_cache = Some((key, Ok(points)));
    }
}

/// The mark of each point of a grid of `n` points (marks beyond the grid are ignored).
fn marks_by_point(count: &project::PointCount, n: usize) -> Vec<Option<&project::PointMark>> {
    let mut marks = vec![None; n];
    for m in &count.marks {
        if let Some(slot) = marks.get_mut(m.point) {
            *slot = Some(m);
        }
    }
    marks
}

/// The region item nearest a screen position, within `radius` points: `distances` gives each
/// polygon's candidates as (index, distance in points).
fn nearest_in_region<I: Iterator<Item = (usize, f32)>>(
    spec: &MicrographSpec,
    radius: f32,
    distances: impl Fn(&micrograph::roi::Polygon) -> I,
) -> Option<(RegionList, usize, usize)> {
    let mut best: Option<((RegionList, usize, usize), f32)> = None;
    for list in [RegionList::Include, RegionList::Exclude] {
        for (pi, poly) in region_list(spec, list).iter().enumerate() {
            for (i, d) in distances(poly) {
                if d < radius && best.is_none_or(|(_, b)| d < b) {
                    best = Some(((list, pi, i), d));
                }
            }
        }
    }
    best.map(|(k, _)| k)
}

/// The region vertex nearest a screen position, within `radius` points.
fn nearest_vertex(
    spec: &MicrographSpec,
    p: Pos2,
    to_screen: impl Fn(Pos2) -> Pos2,
    radius: f32,
) -> Option<(RegionList, usize, usize)> {
    nearest_in_region(spec, radius, |poly| {
        poly.0
            .iter()
            .map(|v| to_screen(to_pos(*v)).distance(p))
            .enumerate()
            .collect::<Vec<_>>()
            .into_iter()
    })
}

/// The region edge nearest a screen position, within `radius` points: the list, polygon and
/// the index a vertex inserted there takes.
fn nearest_edge(
    spec: &MicrographSpec,
    p: Pos2,
    to_screen: impl Fn(Pos2) -> Pos2,
    radius: f32,
) -> Option<(RegionList, usize, usize)> {
    nearest_in_region(spec, radius, |poly| {
        let n = poly.0.len();
        (0..n)
            .map(|vi| {
                let a = to_screen(to_pos(poly.0[vi]));
                let b = to_screen(to_pos(poly.0[(vi + 1) % n]));
                (vi + 1, distance_to_segment(p, a, b))
            })
            .collect::<Vec<_>>()
            .into_iter()
    })
}

/// Outlines of the hand edits: polygons in their phase's colour (dashed white when erasing),
/// strokes as translucent bands of the brush width.
fn paint_hand_edits(
    painter: &egui::Painter,
    spec: &MicrographSpec,
    to_screen: impl Fn(Pos2) -> Pos2,
    zoom: f32,
) {
    for edit in &spec.hand_edits {
        let colour = edit
            .phase
            .as_deref()
            .map_or(Color32::WHITE, |l| phase_colour(spec, l));
        match &edit.shape {
            EditShape::Polygon { vertices } => {
                let mut line: Vec<Pos2> = vertices.iter().map(|p| to_screen(to_pos(*p))).collect();
                if let Some(first) = line.first().copied() {
                    line.push(first);
                }
                if edit.phase.is_some() {
                    painter.add(egui::Shape::line(line, Stroke::new(1.5, colour)));
                } else {
                    painter.extend(egui::Shape::dashed_line(
                        &line,
                        Stroke::new(1.5, colour),
                        6.0,
                        4.0,
                    ));
                }
            }
            EditShape::Stroke { points, radius_px } => {
                let line: Vec<Pos2> = points.iter().map(|p| to_screen(to_pos(*p))).collect();
                let width = (2.0 * *radius_px as f32 * zoom).max(1.0);
                let c = colour.gamma_multiply(0.35);
                if line.len() == 1 {
                    painter.circle_filled(line[0], width / 2.0, c);
                } else {
                    painter.add(egui::Shape::line(line, Stroke::new(width, c)));
                }
            }
        }
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
