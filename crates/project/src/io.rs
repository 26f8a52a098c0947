//! Reading and writing project files: version checks, exact error locations, atomic saves and
//! an autosave beside the project.

use std::fs::{self, File};
use std::io::{ErrorKind, Write};
use std::path::{Path, PathBuf};

use serde_json::Value;

use crate::document::{FORMAT_VERSION, Project};

/// Why a project could not be read or written.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ProjectError {
    /// The file could not be read or written.
    #[error("{}: {source}{}", path.display(), advice(source.kind()))]
    Io {
        /// The file.
        path: PathBuf,
        /// What the system said.
        source: std::io::Error,
    },
    /// A save or autosave did not complete. Nothing was replaced: the file at `path` is as it
    /// was before the save began, and the document in memory keeps its unsaved changes.
    #[error(
        "{}: not saved: {step}: {source}{}; the file on disk is unchanged",
        path.display(),
        advice(source.kind())
    )]
    Save {
        /// The file that was to be written.
        path: PathBuf,
        /// The step that failed, naming the file or folder it touched.
        step: String,
        /// What the system said.
        source: std::io::Error,
    },
    /// The file is not a valid project document.
    #[error("{}:{line}:{column}: {message}", path.display())]
    Syntax {
        /// The file.
        path: PathBuf,
        /// 1-based line.
        line: usize,
        /// 1-based column.
        column: usize,
        /// What was wrong (unknown or missing field, wrong type, bad JSON).
        message: String,
    },
    /// The file was written by a newer Consolute.
    #[error(
        "{}: format version {found} is newer than this build understands ({FORMAT_VERSION}); update Consolute",
        path.display()
    )]
    TooNew {
        /// The file.
        path: PathBuf,
        /// The version found.
        found: u64,
    },
}

/// What to do about a file-system error, by its kind (empty when there is nothing specific to
/// say). Shown after the system's own message.
fn advice(kind: ErrorKind) -> &'static str {
    match kind {
        ErrorKind::StorageFull | ErrorKind::QuotaExceeded => {
            " (the disk is full: free some space, or save to another disk)"
        }
        ErrorKind::PermissionDenied => {
            " (no permission: choose a folder you may write to, or ask for access)"
        }
        ErrorKind::ReadOnlyFilesystem => " (the disk is read-only: save to another place)",
        ErrorKind::NotADirectory => {
            " (part of the path is a file, not a folder: check the path or choose another folder)"
        }
        ErrorKind::IsADirectory => " (this is a folder: give a file name)",
        ErrorKind::NotFound => " (no such file or folder: check the path)",
        ErrorKind::FileTooLarge => " (the file is too large for this disk's file system)",
        _ => "",
    }
}

/// Path of the autosave kept beside a project file (`study.json` → `.study.json.autosave`).
pub fn autosave_path(project_file: &Path) -> PathBuf {
    let name = project_file
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "project.json".into());
    project_file.with_file_name(format!(".{name}.autosave"))
}

/// Bring an older document up to [`FORMAT_VERSION`]. Version 1 is the first; later versions add
/// their steps here, each taking version n to n + 1.
fn migrate(mut value: Value, path: &Path) -> Result<Value, ProjectError> {
    let version = value
        .get("format_version")
        .and_then(Value::as_u64)
        .ok_or_else(|| ProjectError::Syntax {
            path: path.to_path_buf(),
            line: 1,
            column: 1,
            message: "missing `format_version` (a whole number): is this a Consolute project?"
                .into(),
        })?;
    if version > u64::from(FORMAT_VERSION) {
        return Err(ProjectError::TooNew {
            path: path.to_path_buf(),
            found: version,
        });
    }
    if version == 0 {
        return Err(ProjectError::Syntax {
            path: path.to_path_buf(),
            line: 1,
            column: 1,
            message: "format_version 0 does not exist; the first version is 1".into(),
        });
    }
    if let Some(object) = value.as_object_mut() {
        object.insert("format_version".into(), Value::from(FORMAT_VERSION));
    }
    Ok(value)
}

/// Parse a project from JSON text; `path` names the file in messages.
///
/// # Errors
/// [`ProjectError::Syntax`] with the line and column of bad JSON, an unknown field, a missing
/// field or a wrong type; [`ProjectError::TooNew`] for a newer format.
pub fn parse_project(text: &str, path: &Path) -> Result<Project, ProjectError> {
    let syntax = |e: serde_json::Error| ProjectError::Syntax {
        path: path.to_path_buf(),
        line: e.line(),
        column: e.column(),
        message: e.to_string(),
    };
    let value: Value = serde_json::from_str(text).map_err(syntax)?;
    let version = value.get("format_version").and_then(Value::as_u64);
    if version == Some(u64::from(FORMAT_VERSION)) {
        // Parse the text itself, so that errors carry the line and column in the file.
        return serde_json::from_str(text).map_err(syntax);
    }
    let migrated = migrate(value, path)?;
    serde_json::from_value(migrated).map_err(|e| ProjectError::Syntax {
        path: path.to_path_buf(),
        line: 0,
        column: 0,
        message: format!("after migrating from an older format: {e}"),
    })
}

/// Read a project file.
///
/// # Errors
/// See [`parse_project`]; [`ProjectError::Io`] when the file cannot be read.
pub fn load_project(path: &Path) -> Result<Project, ProjectError> {
    let text = fs::read_to_string(path).map_err(|source| ProjectError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    parse_project(&text, path)
}

/// A file being written by a save: bytes go in, then [`SaveSink::sync`] makes them durable.
///
/// [`File`] is the real one. [`write_atomically_with`] passes the temporary file through a
/// caller's layer first, so a test can put a layer there that fails the way a full disk or a
/// lost network share does.
pub trait SaveSink: Write {
    /// Flush everything written so far to the storage device.
    ///
    /// # Errors
    /// What the system said.
    fn sync(&mut self) -> std::io::Result<()>;
}

impl SaveSink for File {
    fn sync(&mut self) -> std::io::Result<()> {
        self.sync_all()
    }
}

/// Write bytes atomically: to a temporary file in the same folder, flushed to disk, then renamed
/// over the target (rename is atomic on POSIX file systems). The old file stays intact if
/// anything fails before the rename, and the temporary file is removed.
///
/// # Errors
/// [`ProjectError::Save`] naming the file, the step that failed and what to do.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), ProjectError> {
    write_atomically_with(path, bytes, |file| file)
}

/// [`write_atomically`], with the temporary file passed through `layer` before anything is
/// written to it (see [`SaveSink`]).
///
/// # Errors
/// [`ProjectError::Save`] naming the file, the step that failed and what to do.
pub fn write_atomically_with<S: SaveSink>(
    path: &Path,
    bytes: &[u8],
    layer: impl FnOnce(File) -> S,
) -> Result<(), ProjectError> {
    write_atomically_filled(path, layer, |sink| sink.write_all(bytes))
}

/// [`write_atomically`] for a file written piece by piece (through a buffer), so that a large
/// file (a report with hundreds of figures) need not be held in memory whole.
///
/// # Errors
/// [`ProjectError::Save`] naming the file, the step that failed and what to do.
pub fn write_atomically_streamed(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
) -> Result<(), ProjectError> {
    write_atomically_filled(
        path,
        |file| file,
        |file| {
            let mut buffered = std::io::BufWriter::new(file);
            fill(&mut buffered)?;
            buffered.flush()
        },
    )
}

fn write_atomically_filled<S: SaveSink>(
    path: &Path,
    layer: impl FnOnce(File) -> S,
    fill: impl FnOnce(&mut S) -> std::io::Result<()>,
) -> Result<(), ProjectError> {
    let failed = |step: String| {
        let path = path.to_path_buf();
        move |source| ProjectError::Save { path, step, source }
    };
    let folder = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or_else(|| Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "file".into());
    let tmp = folder.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let file = File::create(&tmp).map_err(failed(format!(
            "cannot create a temporary file in {}",
            folder.display()
        )))?;
        let mut sink = layer(file);
        let writing = || format!("cannot write {}", tmp.display());
        fill(&mut sink).map_err(failed(writing()))?;
        sink.flush().map_err(failed(writing()))?;
        sink.sync().map_err(failed(writing()))?;
        drop(sink);
        fs::rename(&tmp, path).map_err(failed(format!(
            "cannot put {} in place of {}",
            tmp.display(),
            path.display()
        )))?;
        // Make the rename itself durable.
        if let Ok(dir) = File::open(folder) {
            let _ = dir.sync_all();
        }
        remove_stale_temporaries(folder, &name);
        Ok(())
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
}

/// Age beyond which a temporary file of a save cannot belong to a save still running.
const STALE_AFTER: std::time::Duration = std::time::Duration::from_secs(600);

/// Remove the temporary files (`.NAME.PID.tmp`) that saves of `name` killed before their rename
/// left behind, once they are older than [`STALE_AFTER`]. A younger one may be a save in
/// progress in another process, and is left alone.
fn remove_stale_temporaries(folder: &Path, name: &str) {
    let prefix = format!(".{name}.");
    let Ok(entries) = fs::read_dir(folder) else {
        return;
    };
    for entry in entries.flatten() {
        let file_name = entry.file_name();
        let file_name = file_name.to_string_lossy();
        let Some(pid) = file_name
            .strip_prefix(&prefix)
            .and_then(|rest| rest.strip_suffix(".tmp"))
        else {
            continue;
        };
        if pid.is_empty() || !pid.bytes().all(|b| b.is_ascii_digit()) {
            continue;
        }
        let stale = entry
            .metadata()
            .and_then(|m| m.modified())
            .ok()
            .and_then(|t| t.elapsed().ok())
            .is_some_and(|age| age > STALE_AFTER);
        if stale {
            let _ = fs::remove_file(entry.path());
        }
    }
}

/// The JSON text of a project (pretty-printed, ending with a newline).
pub fn project_json(project: &Project) -> String {
    let mut text = serde_json::to_string_pretty(project).unwrap_or_else(|e| {
        // Serialising plain data cannot fail; keep a visible trace if it ever does.
        format!("{{\"error\": \"{e}\"}}")
    });
    text.push('\n');
    text
}

/// Save a project atomically, and remove its autosave (now out of date).
///
/// # Errors
/// [`ProjectError::Save`] (disk full, no permission, a missing folder, ...), saying what to do;
/// the previous file is left as it was.
pub fn save_project(project: &Project, path: &Path) -> Result<(), ProjectError> {
    save_project_with(project, path, |file| file)
}

/// [`save_project`] through a layer over the temporary file (see [`SaveSink`]).
///
/// # Errors
/// As [`save_project`].
pub fn save_project_with<S: SaveSink>(
    project: &Project,
    path: &Path,
    layer: impl FnOnce(File) -> S,
) -> Result<(), ProjectError> {
    write_atomically_with(path, project_json(project).as_bytes(), layer)?;
    let _ = fs::remove_file(autosave_path(path));
    Ok(())
}

/// Write the autosave beside a project file (atomically).
///
/// # Errors
/// [`ProjectError::Save`], naming the autosave file.
pub fn autosave_project(project: &Project, path: &Path) -> Result<(), ProjectError> {
    write_atomically(&autosave_path(path), project_json(project).as_bytes())
}

/// An autosave newer than its project file, to offer for restoring after a crash.
pub fn pending_autosave(path: &Path) -> Option<PathBuf> {
    let autosave = autosave_path(path);
    let saved = fs::metadata(&autosave).and_then(|m| m.modified()).ok()?;
    match fs::metadata(path).and_then(|m| m.modified()) {
        Ok(project) if project >= saved => None,
        _ => Some(autosave),
    }
}

/// Which file of a project a [`MissingFile`] or a relink refers to, by position in the document.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum FileRef {
    /// `analysis_files[index]`.
    AnalysisFile {
        /// Index in `analysis_files`.
        index: usize,
    },
    /// `samples[sample].grains[grain].micrographs[micrograph]`.
    Micrograph {
        /// Index of the sample.
        sample: usize,
        /// Index of the grain in its sample.
        grain: usize,
        /// Index of the micrograph in its grain.
        micrograph: usize,
    },
}

/// A file named by a project that is not there (moved, renamed, on a disk not mounted).
#[derive(Debug, Clone, PartialEq)]
pub struct MissingFile {
    /// Which entry of the project names it.
    pub which: FileRef,
    /// The entry in words: `micrograph 'bse-1' of grain TM-01 / g1`, `analyses file 1`.
    pub what: String,
    /// The path as stored in the project (relative to the project's folder, or absolute).
    pub stored: PathBuf,
    /// Where it was looked for.
    pub resolved: PathBuf,
    /// The line of the project file holding the stored path (1-based), when known.
    pub line: Option<usize>,
}

impl std::fmt::Display for MissingFile {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let line = self
            .line
            .map(|l| format!(" (project line {l})"))
            .unwrap_or_default();
        write!(
            f,
            "{}: {} not found{line}; the rest of the project is loaded. Relink it to the file's new place, or put the file back",
            self.what,
            self.resolved.display(),
        )
    }
}

/// A project read from its file, with the files it names that are not there.
#[derive(Debug, Clone, PartialEq)]
pub struct OpenedProject {
    /// The document, complete (entries whose file is missing are kept as they were).
    pub project: Project,
    /// Files the project names that are not there, in document order.
    pub missing: Vec<MissingFile>,
}

/// Read a project file and check that the files it names (analyses files, micrographs) are
/// there. A missing file does not stop the project from loading: it is listed in
/// [`OpenedProject::missing`] with its path and the project line naming it, and can be pointed
/// at its new place with [`relink_file`].
///
/// # Errors
/// As [`load_project`]: only a project file that cannot be read or parsed is an error.
pub fn open_project(path: &Path) -> Result<OpenedProject, ProjectError> {
    let text = fs::read_to_string(path).map_err(|source| ProjectError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let project = parse_project(&text, path)?;
    let missing = missing_files(&project, path, Some(&text));
    Ok(OpenedProject { project, missing })
}

/// Every file entry of a project, in document order, with its entry described in words.
fn file_entries(project: &Project) -> Vec<(FileRef, String, &Path)> {
    let mut out = Vec::new();
    for (index, f) in project.analysis_files.iter().enumerate() {
        out.push((
            FileRef::AnalysisFile { index },
            format!("analyses file {}", index + 1),
            f.path.as_path(),
        ));
    }
    for (s, sample) in project.samples.iter().enumerate() {
        for (g, grain) in sample.grains.iter().enumerate() {
            for (m, spec) in grain.micrographs.iter().enumerate() {
                out.push((
                    FileRef::Micrograph {
                        sample: s,
                        grain: g,
                        micrograph: m,
                    },
                    format!(
                        "micrograph '{}' of grain {} / {}",
                        spec.label, sample.id, grain.id
                    ),
                    spec.path.as_path(),
                ));
            }
        }
    }
    out
}

/// The files a project names that are not there (see [`open_project`]). `text`, the project
/// file's text, lets each be given the line that names it.
pub fn missing_files(
    project: &Project,
    project_file: &Path,
    text: Option<&str>,
) -> Vec<MissingFile> {
    // Each stored path is looked for in the text after the previous entry's, since the JSON is
    // written in document order (analyses files before samples).
    let mut cursor = 0usize;
    let mut out = Vec::new();
    for (which, what, stored) in file_entries(project) {
        let found_at = text.and_then(|t| {
            let needle = serde_json::to_string(stored).ok()?;
            let at = t.get(cursor..)?.find(&needle)? + cursor;
            cursor = at + needle.len();
            Some(t[..at].matches('\n').count() + 1)
        });
        let resolved = Project::resolve(project_file, stored);
        if !resolved.is_file() {
            out.push(MissingFile {
                which,
                what,
                stored: stored.to_path_buf(),
                resolved,
                line: found_at,
            });
        }
    }
    out
}

/// Why [`relink_file`] refused.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum RelinkError {
    /// The project has no such entry (it was removed, or the indices are stale).
    #[error("the project has no {0:?}; reopen the project and try again")]
    NoSuchEntry(FileRef),
    /// The new file is not there or is not a file.
    #[error("{}: not a file that can be read ({reason}); choose the file again", path.display())]
    NotAFile {
        /// The path given.
        path: PathBuf,
        /// What was wrong.
        reason: String,
    },
}

/// Point a project's file entry (an analyses file or a micrograph, e.g. one listed as missing
/// by [`open_project`]) at a new file. The path is stored relative to the project's folder
/// when the file is inside it, as given otherwise. Returns the path as stored.
///
/// Only the document in memory changes; save it to keep the change.
///
/// # Errors
/// [`RelinkError::NoSuchEntry`] for a stale reference, [`RelinkError::NotAFile`] when the new
/// path is not a readable file (the document is then unchanged).
pub fn relink_file(
    project: &mut Project,
    project_file: &Path,
    which: FileRef,
    new_path: &Path,
) -> Result<PathBuf, RelinkError> {
    let meta = fs::metadata(new_path).map_err(|e| RelinkError::NotAFile {
        path: new_path.to_path_buf(),
        reason: e.to_string(),
    })?;
    if !meta.is_file() {
        return Err(RelinkError::NotAFile {
            path: new_path.to_path_buf(),
            reason: "it is a folder".into(),
        });
    }
    let folder = project_file
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or_else(|| Path::new("."));
    let absolute = |p: &Path| fs::canonicalize(p).unwrap_or_else(|_| p.to_path_buf());
    let stored = absolute(new_path)
        .strip_prefix(absolute(folder))
        .map(Path::to_path_buf)
        .unwrap_or_else(|_| new_path.to_path_buf());
    let slot = match which {
        FileRef::AnalysisFile { index } => {
            project.analysis_files.get_mut(index).map(|f| &mut f.path)
        }
        FileRef::Micrograph {
            sample,
            grain,
            micrograph,
        } => project
            .samples
            .get_mut(sample)
            .and_then(|s| s.grains.get_mut(grain))
            .and_then(|g| g.micrographs.get_mut(micrograph))
            .map(|m| &mut m.path),
    }
    .ok_or(RelinkError::NoSuchEntry(which))?;
    *slot = stored.clone();
    Ok(stored)
}
