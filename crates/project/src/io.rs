//! Reading and writing project files: version checks, exact error locations, atomic saves and
//! an autosave beside the project.

use std::fs::{self, File};
use std::io::Write;
use std::path::{Path, PathBuf};

use serde_json::Value;

use crate::document::{FORMAT_VERSION, Project};

/// Why a project could not be read or written.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ProjectError {
    /// The file could not be read or written.
    #[error("{}: {source}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
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

/// Write bytes atomically: to a temporary file in the same folder, flushed to disk, then renamed
/// over the target (rename is atomic on POSIX file systems). The old file stays intact if
/// anything fails before the rename.
///
/// # Errors
/// [`ProjectError::Io`] naming the file that could not be written.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), ProjectError> {
    let io = |p: &Path| {
        let p = p.to_path_buf();
        move |source| ProjectError::Io { path: p, source }
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
        let mut file = File::create(&tmp).map_err(io(&tmp))?;
        file.write_all(bytes).map_err(io(&tmp))?;
        file.sync_all().map_err(io(&tmp))?;
        drop(file);
        fs::rename(&tmp, path).map_err(io(path))?;
        // Make the rename itself durable.
        if let Ok(dir) = File::open(folder) {
            let _ = dir.sync_all();
        }
        Ok(())
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
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
/// [`ProjectError::Io`]; the previous file is left as it was.
pub fn save_project(project: &Project, path: &Path) -> Result<(), ProjectError> {
    write_atomically(path, project_json(project).as_bytes())?;
    let _ = fs::remove_file(autosave_path(path));
    Ok(())
}

/// Write the autosave beside a project file (atomically).
///
/// # Errors
/// [`ProjectError::Io`].
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
