//! The fixed panels around the centre: menu and run bar, study tree, route, result card and
//! message strip. Each draws from a read-only [`crate::app::View`] and pushes actions.

pub mod card;
pub mod messages;
pub mod route;
pub mod top;
pub mod tree;

use egui::{Color32, RichText, Ui};

/// How far a grain or stage has come.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// Computed, nothing to look at.
    Done,
    /// Computed with warnings, or could not be computed.
    Attention,
    /// Not computed yet.
    NotStarted,
}

impl Mark {
    /// The mark's glyph and colour.
    pub fn rich(self, ui: &Ui) -> RichText {
        match self {
            Mark::Done => RichText::new("✔").color(Color32::from_rgb(60, 170, 80)),
            Mark::Attention => RichText::new("⚠").color(ui.visuals().warn_fg_color),
            Mark::NotStarted => RichText::new("○").color(ui.visuals().weak_text_color()),
        }
    }

    /// What the mark means, for tooltips.
    pub fn meaning(self) -> &'static str {
        match self {
            Mark::Done => "done",
            Mark::Attention => "needs attention",
            Mark::NotStarted => "not started",
        }
    }
}

/// A value with its 95 % interval: "0.436 (0.421–0.451)".
pub fn with_interval(median: f64, lo: f64, hi: f64, digits: usize) -> String {
    format!("{median:.digits$} ({lo:.digits$}–{hi:.digits$})")
}
