//! The open project with its file path and undo history. Nothing here knows about egui.

use std::path::{Path, PathBuf};

use project::{FileRef, Grain, MicrographSpec, MissingFile, Project, ProjectError, Sample};

use crate::command::Command;

/// Where a grain sits in the project: sample index and grain index.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub struct GrainRef {
    /// Index of the sample.
    pub sample: usize,
    /// Index of the grain within the sample.
    pub grain: usize,
}

/// Where a micrograph sits in the project.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub struct MicrographRef {
    /// The grain.
    pub grain: GrainRef,
    /// Index of the micrograph within the grain.
    pub micrograph: usize,
}

/// The project being edited.
#[derive(Debug, Clone)]
pub struct Document {
    /// The persisted document.
    pub project: Project,
    /// Its file (relative paths inside it resolve against this file's folder).
    pub path: Option<PathBuf>,
    /// Edited since the last save.
    pub dirty: bool,
    /// Counts every change (edits, undo, redo); results remember the revision they came from.
    pub revision: u64,
    undo: Vec<(Project, String)>,
    redo: Vec<(Project, String)>,
    merge: Option<String>,
    /// The files found missing when the project was opened (they carry the project line that
    /// names each; a path relinked since has no line in the file on disk).
    opened_missing: Vec<MissingFile>,
}

impl Document {
    /// A document holding `project`, read from `path`.
    pub fn new(project: Project, path: Option<PathBuf>) -> Self {
        Document {
            project,
            path,
            dirty: false,
            revision: 0,
            undo: Vec::new(),
            redo: Vec::new(),
            merge: None,
            opened_missing: Vec::new(),
        }
    }

    /// Read a project file. Files it names that are not there (micrographs, analyses files) do
    /// not stop it from opening: see [`Self::missing_files`].
    ///
    /// # Errors
    /// The project's own error, with file, line and column.
    pub fn open(path: &Path) -> Result<Self, ProjectError> {
        let opened = project::open_project(path)?;
        let mut doc = Self::new(opened.project, Some(path.to_path_buf()));
        doc.opened_missing = opened.missing;
        Ok(doc)
    }

    /// The files the document names that are not there now, in document order, each with the
    /// line of the project file naming it when that path is the one read from the file.
    /// (Looks at the file system: call it when the document changes, not every frame.)
    pub fn missing_files(&self) -> Vec<MissingFile> {
        let mut list = project::missing_files(&self.project, &self.path_or_default(), None);
        for m in &mut list {
            m.line = self
                .opened_missing
                .iter()
                .find(|o| o.which == m.which && o.stored == m.stored)
                .and_then(|o| o.line);
        }
        list
    }

    /// The micrograph a file entry names, if it is one.
    pub fn micrograph_of(which: FileRef) -> Option<MicrographRef> {
        match which {
            FileRef::Micrograph {
                sample,
                grain,
                micrograph,
            } => Some(MicrographRef {
                grain: GrainRef { sample, grain },
                micrograph,
            }),
            _ => None,
        }
    }

    /// Apply an edit, keeping the previous state for undo.
    ///
    /// # Errors
    /// Why the edit does not apply (the document is left unchanged).
    pub fn apply(&mut self, command: Command) -> Result<(), String> {
        let before = self.project.clone();
        let what = command.describe();
        let merge = command.merge_key();
        command.apply(&mut self.project)?;
        if self.project == before {
            return Ok(());
        }
        let continues = merge.is_some() && merge == self.merge && !self.undo.is_empty();
        if continues {
            if let Some(last) = self.undo.last_mut() {
                last.1 = what;
            }
        } else {
            self.undo.push((before, what));
        }
        self.merge = merge;
        self.redo.clear();
        self.changed();
        Ok(())
    }

    fn changed(&mut self) {
        self.dirty = true;
        self.revision += 1;
    }

    /// Step back one edit. Returns what was undone.
    pub fn undo(&mut self) -> Option<String> {
        let (previous, what) = self.undo.pop()?;
        self.merge = None;
        let current = std::mem::replace(&mut self.project, previous);
        self.redo.push((current, what.clone()));
        self.changed();
        Some(what)
    }

    /// Redo the last undone edit. Returns what was redone.
    pub fn redo(&mut self) -> Option<String> {
        let (next, what) = self.redo.pop()?;
        self.merge = None;
        let current = std::mem::replace(&mut self.project, next);
        self.undo.push((current, what.clone()));
        self.changed();
        Some(what)
    }

    /// What undo would undo.
    pub fn undo_label(&self) -> Option<&str> {
        self.undo.last().map(|(_, w)| w.as_str())
    }

    /// What redo would redo.
    pub fn redo_label(&self) -> Option<&str> {
        self.redo.last().map(|(_, w)| w.as_str())
    }

    /// The sample of a grain reference.
    pub fn sample(&self, at: GrainRef) -> Option<&Sample> {
        self.project.samples.get(at.sample)
    }

    /// The grain of a reference.
    pub fn grain(&self, at: GrainRef) -> Option<&Grain> {
        self.sample(at)?.grains.get(at.grain)
    }

    /// The micrograph of a reference.
    pub fn micrograph(&self, at: MicrographRef) -> Option<&MicrographSpec> {
        self.grain(at.grain)?.micrographs.get(at.micrograph)
    }

    /// Every grain, in tree order.
    pub fn grains(&self) -> Vec<GrainRef> {
        self.project
            .samples
            .iter()
            .enumerate()
            .flat_map(|(s, sample)| {
                (0..sample.grains.len()).map(move |g| GrainRef {
                    sample: s,
                    grain: g,
                })
            })
            .collect()
    }

    /// Resolve a path stored in the project (relative to the project file).
    pub fn resolve(&self, stored: &Path) -> PathBuf {
        match &self.path {
            Some(p) => Project::resolve(p, stored),
            None => stored.to_path_buf(),
        }
    }

    /// The project file, or a stand-in name in the working folder for a project never saved.
    pub fn path_or_default(&self) -> PathBuf {
        self.path
            .clone()
            .unwrap_or_else(|| PathBuf::from("untitled.json"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo() -> Document {
        Document::open(&crate::demo_project_path()).expect("the demo project reads")
    }

    #[test]
    fn undo_and_redo_walk_the_history() {
        let mut doc = demo();
        let original = doc.project.clone();
        doc.apply(Command::SetPressure(2.5)).expect("applies");
        doc.apply(Command::SetModel("tw1969".into()))
            .expect("applies");
        assert_eq!(doc.project.settings.pressure_kbar, 2.5);
        assert_eq!(doc.undo_label(), Some("model tw1969"));
        doc.undo();
        assert_eq!(
            doc.project.settings.feldspar_model,
            original.settings.feldspar_model
        );
        doc.undo();
        assert_eq!(doc.project, original);
        assert!(doc.undo().is_none());
        doc.redo();
        doc.redo();
        assert_eq!(doc.project.settings.feldspar_model, "tw1969");
        assert_eq!(doc.project.settings.pressure_kbar, 2.5);
    }

    #[test]
    fn a_dragged_value_is_undone_in_one_step() {
        let mut doc = demo();
        let draws = doc.project.settings.draws;
        for n in [100, 200, 300] {
            doc.apply(Command::SetDraws(n)).expect("applies");
        }
        doc.undo();
        assert_eq!(doc.project.settings.draws, draws);
        assert!(doc.undo_label().is_none());
    }

    #[test]
    fn a_refused_edit_leaves_the_document_alone() {
        let mut doc = demo();
        let before = doc.project.clone();
        let at = MicrographRef::default();
        // Two phases need one level.
        assert!(
            doc.apply(Command::SetLevels {
                at,
                levels: vec![100, 200]
            })
            .is_err()
        );
        assert!(
            doc.apply(Command::SetLevels { at, levels: vec![] })
                .is_err()
        );
        assert!(
            doc.apply(Command::SetModel("no-such-model".into()))
                .is_err()
        );
        assert!(doc.apply(Command::SetPressure(f64::NAN)).is_err());
        assert!(doc.apply(Command::SetDraws(0)).is_err());
        let gone = MicrographRef {
            micrograph: 99,
            ..at
        };
        assert!(
            doc.apply(Command::SetPixelSize {
                at: gone,
                pixel_size_um: Some(1.0)
            })
            .is_err()
        );
        assert_eq!(doc.project, before);
        assert!(!doc.dirty);
        assert!(doc.undo_label().is_none());
    }

    #[test]
    fn pyroxene_thermometers_are_set_checked_and_undone() {
        let mut doc = demo();
        let before = doc.project.settings.clone();
        doc.apply(Command::SetPyroxeneThermometer {
            pair: true,
            id: "putirka2008-37".into(),
        })
        .unwrap();
        assert_eq!(
            doc.project.settings.pyroxene_pair_thermometer,
            "putirka2008-37"
        );
        // Putirka (2008) eq 32d takes a clinopyroxene alone: not a pair thermometer; bk1990
        // needs both pyroxenes: not a bulk one; unknown ids are refused
        for (pair, id) in [
            (true, "putirka2008-32d"),
            (false, "bk1990"),
            (false, "nope"),
        ] {
            assert!(
                doc.apply(Command::SetPyroxeneThermometer {
                    pair,
                    id: id.into()
                })
                .is_err(),
                "{id}"
            );
        }
        doc.undo();
        assert_eq!(
            doc.project.settings.pyroxene_pair_thermometer,
            before.pyroxene_pair_thermometer
        );
    }
}
