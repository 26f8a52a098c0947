//! The Consolute workbench: the desktop window that carries a grain from micrograph to
//! temperature.
//!
//! The window has four fixed parts around a centre:
//! - on the left, the **study tree** (samples > grains > micrographs), each grain with its
//!   minimum crystallisation temperature and a status mark once computed;
//! - across the top of the centre, the grain's **route** in five stages
//!   (Image > Phases > Analyses > Bulk > Temperature), each with a mark;
//! - on the right, the grain's **result card** (bulk composition, temperatures, a small solvus);
//! - at the bottom, the **message strip** listing the warnings for the selection.
//!
//! The code follows the state / view / commands split: [`document::Document`] holds the persisted
//! project with its undo history, every edit is a [`command::Command`] applied after drawing,
//! each panel is a module holding only view state, and long work (project runs, loading and
//! classifying micrographs) runs on named worker threads that report progress and can be
//! cancelled.
//!
//! Building the real application without a window (this is what the headless tests do):
//!
//! ```
//! use workbench::{Workbench, WorkbenchOptions};
//! let app = Workbench::new(WorkbenchOptions::empty());
//! assert!(app.document().project.samples.is_empty());
//! ```

pub mod app;
pub mod command;
pub mod document;
mod figures;
mod files;
mod jobs;
mod panels;
mod stages;
mod tiles;

pub use app::{Stage, Workbench, WorkbenchOptions};
pub use stages::image::{ImageStage, Tool};

use std::path::{Path, PathBuf};

/// Why the workbench window could not open.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum LaunchError {
    /// There is no display to open a window on.
    #[error(
        "no display to open the workbench on (DISPLAY and WAYLAND_DISPLAY are unset); without one, use `consolute run PROJECT --out DIR`"
    )]
    NoDisplay,
    /// The window system or OpenGL failed.
    #[error(
        "the workbench window could not open: {0}; without a window, use `consolute run PROJECT --out DIR`"
    )]
    Window(String),
}

/// DejaVu Sans, bundled in `assets/fonts` (the figures use it too): added after egui's own
/// fonts so that marks and symbols (✔ ⚠ ○ ▶ ∓ ≥) have glyphs.
const DEJAVU_SANS: &[u8] = include_bytes!("../../../assets/fonts/DejaVuSans.ttf");

/// Install the workbench's fonts in a context (egui's defaults, then DejaVu Sans as fallback).
pub fn install_fonts(ctx: &egui::Context) {
    let mut fonts = egui::FontDefinitions::default();
    fonts.font_data.insert(
        "dejavu-sans".into(),
        std::sync::Arc::new(egui::FontData::from_static(DEJAVU_SANS)),
    );
    for family in [egui::FontFamily::Proportional, egui::FontFamily::Monospace] {
        fonts
            .families
            .entry(family)
            .or_default()
            .push("dejavu-sans".into());
    }
    ctx.set_fonts(fonts);
}

/// The bundled demo project, looked for beside the working folder first, then in the source tree
/// this binary was built from.
pub fn demo_project_path() -> PathBuf {
    let relative = Path::new("demo_projects")
        .join("tarn_moss")
        .join("project.json");
    if relative.exists() {
        return relative;
    }
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("..")
        .join("..")
        .join(relative)
}

/// Open the workbench window on `project` (or, when `None`, on the last project opened, or on the
/// bundled demo) and run until it is closed.
///
/// # Errors
/// [`LaunchError::NoDisplay`] when there is no display at all; [`LaunchError::Window`] when the
/// window or its OpenGL context cannot be created.
pub fn run(project: Option<PathBuf>) -> Result<(), LaunchError> {
    if cfg!(target_os = "linux")
        && std::env::var_os("DISPLAY").is_none()
        && std::env::var_os("WAYLAND_DISPLAY").is_none()
    {
        return Err(LaunchError::NoDisplay);
    }
    let path = project
        .or_else(files::last_project)
        .filter(|p| p.exists())
        .unwrap_or_else(demo_project_path);
    let options = eframe::NativeOptions {
        viewport: egui::ViewportBuilder::default()
            .with_title("Consolute")
            .with_inner_size([1500.0, 940.0])
            .with_min_inner_size([900.0, 600.0]),
        renderer: eframe::Renderer::Glow,
        ..Default::default()
    };
    eframe::run_native(
        "Consolute",
        options,
        Box::new(move |cc| {
            install_fonts(&cc.egui_ctx);
            let app = Workbench::new(WorkbenchOptions {
                project: Some(path),
                remember_recent: true,
                run_on_open: true,
            });
            Ok(Box::new(app))
        }),
    )
    .map_err(|e| LaunchError::Window(e.to_string()))
}
