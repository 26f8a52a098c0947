//! Progress reporting and cancellation for long passes over large images.

use std::sync::atomic::{AtomicBool, Ordering};

use crate::error::{MicrographError, Result};

/// Progress callback (fraction done, 0..=1) and cancel flag for a long job. Both optional.
///
/// A GUI sets the flag from its thread to stop the job; the job then returns
/// [`MicrographError::Cancelled`] at its next check.
#[derive(Clone, Copy, Default)]
pub struct Control<'a> {
    /// Set to true to cancel.
    pub cancel: Option<&'a AtomicBool>,
    /// Called with the fraction done.
    pub progress: Option<&'a (dyn Fn(f32) + Sync)>,
}

impl std::fmt::Debug for Control<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Control")
            .field("cancel", &self.cancel)
            .field("progress", &self.progress.is_some())
            .finish()
    }
}

impl<'a> Control<'a> {
    /// No progress, no cancellation.
    pub fn none() -> Self {
        Self::default()
    }

    /// Returns `Err(Cancelled)` when the flag is set.
    pub fn check(&self) -> Result<()> {
        match self.cancel {
            Some(flag) if flag.load(Ordering::Relaxed) => Err(MicrographError::Cancelled),
            _ => Ok(()),
        }
    }

    /// Reports progress, then checks for cancellation.
    pub fn step(&self, done: f32) -> Result<()> {
        if let Some(p) = self.progress {
            p(done.clamp(0.0, 1.0));
        }
        self.check()
    }
}
