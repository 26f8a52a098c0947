//! Saves that fail (a full disk, a path through a file, a device error at flush time) say so,
//! name the file and what to do, and leave the file on disk as it was; a project whose files
//! have moved still opens, lists them with the project line naming each, and can be relinked.
//!
//! Source for the failure kinds: the Rust standard library's `std::io::ErrorKind`
//! (`StorageFull` for ENOSPC, `NotADirectory` for ENOTDIR, `PermissionDenied` for EACCES), as
//! the operating system reports them; for atomic replacement, POSIX `rename()` ("shall be
//! atomic" when the target exists, The Open Group Base Specifications, Issue 7).
#![allow(clippy::unwrap_used)]

use std::fs::File;
use std::io::{self, ErrorKind, Write};
use std::path::{Path, PathBuf};

use project::*;

fn temp_dir(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!(
        "consolute-reliability-{name}-{}",
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn demo_file() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_projects/tarn_moss/project.json")
}

/// A layer over the temporary file that behaves like a disk with `room` bytes left: it writes
/// up to `room` bytes, then fails with `kind` (ENOSPC is reported only when a write finds no
/// room, after a partial write).
struct Failing {
    inner: File,
    room: usize,
    kind: ErrorKind,
    fail_sync: bool,
}

impl Write for Failing {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        if self.room == 0 {
            return Err(io::Error::from(self.kind));
        }
        let n = buf.len().min(self.room);
        self.room -= n;
        self.inner.write(&buf[..n])
    }
    fn flush(&mut self) -> io::Result<()> {
        self.inner.flush()
    }
}

impl SaveSink for Failing {
    fn sync(&mut self) -> io::Result<()> {
        if self.fail_sync {
            return Err(io::Error::from(self.kind));
        }
        self.inner.sync_all()
    }
}

fn no_temporary_files(dir: &Path) {
    let names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(names.iter().all(|n| !n.ends_with(".tmp")), "{names:?}");
}

#[test]
fn a_full_disk_is_reported_and_the_saved_file_is_unchanged() {
    let dir = temp_dir("full");
    let path = dir.join("study.json");
    let saved = load_project(&demo_file()).unwrap();
    save_project(&saved, &path).unwrap();
    let before = std::fs::read(&path).unwrap();

    let mut edited = saved.clone();
    edited.name = "edited, not yet saved".into();
    let err = save_project_with(&edited, &path, |inner| Failing {
        inner,
        room: 1000,
        kind: ErrorKind::StorageFull,
        fail_sync: false,
    })
    .expect_err("the disk is full");
    let ProjectError::Save { source, .. } = &err else {
        panic!("{err}");
    };
    assert_eq!(source.kind(), ErrorKind::StorageFull);
    let message = err.to_string();
    assert!(message.contains("study.json"), "names the file: {message}");
    assert!(message.contains("disk is full"), "says what: {message}");
    assert!(
        message.contains("free some space"),
        "says what to do: {message}"
    );
    assert!(message.contains("unchanged"), "{message}");
    // The file on disk is byte for byte the last good save, and no temporary file is left.
    assert_eq!(std::fs::read(&path).unwrap(), before);
    no_temporary_files(&dir);
    // The edited document is still whole in memory and saves once there is room.
    assert_eq!(edited.name, "edited, not yet saved");
    save_project(&edited, &path).unwrap();
    assert_eq!(load_project(&path).unwrap(), edited);
}

#[test]
fn a_device_error_when_flushing_leaves_the_file_unchanged() {
    // The bytes all went in, but the device refused to make them durable (fsync failed).
    let dir = temp_dir("fsync");
    let path = dir.join("study.json");
    let first = Project::new("first");
    save_project(&first, &path).unwrap();
    let err = save_project_with(&Project::new("second"), &path, |inner| Failing {
        inner,
        room: usize::MAX,
        kind: ErrorKind::Other,
        fail_sync: true,
    })
    .expect_err("fsync failed");
    assert!(matches!(err, ProjectError::Save { .. }), "{err}");
    assert_eq!(load_project(&path).unwrap(), first);
    no_temporary_files(&dir);
}

#[test]
fn a_permission_error_says_where_to_save_instead() {
    // Tests may run as root, for whom file modes do not block writes: the refusal comes from
    // the layer, as it would from a read-only share.
    let dir = temp_dir("perm");
    let path = dir.join("study.json");
    let err = save_project_with(&Project::new("x"), &path, |inner| Failing {
        inner,
        room: 0,
        kind: ErrorKind::PermissionDenied,
        fail_sync: false,
    })
    .expect_err("refused");
    let message = err.to_string();
    assert!(message.contains("no permission"), "{message}");
    assert!(message.contains("folder you may write to"), "{message}");
    assert!(!path.exists(), "nothing appears where the save was refused");
    no_temporary_files(&dir);
}

#[test]
fn a_path_through_a_file_is_reported_as_such() {
    let dir = temp_dir("notdir");
    let file = dir.join("notes.txt");
    std::fs::write(&file, "a file, not a folder").unwrap();
    let path = file.join("study.json");
    let err = save_project(&Project::new("x"), &path).expect_err("parent is a file");
    let ProjectError::Save { source, step, .. } = &err else {
        panic!("{err}");
    };
    assert_eq!(source.kind(), ErrorKind::NotADirectory);
    assert!(
        step.contains("notes.txt"),
        "the step names the folder: {step}"
    );
    let message = err.to_string();
    assert!(message.contains("part of the path is a file"), "{message}");
    assert_eq!(
        std::fs::read_to_string(&file).unwrap(),
        "a file, not a folder"
    );
    // The autosave goes through the same path and says the same.
    let err = autosave_project(&Project::new("x"), &path).expect_err("autosave too");
    assert!(err.to_string().contains(".study.json.autosave"), "{err}");
}

#[test]
fn a_failed_autosave_leaves_the_earlier_autosave_and_the_project() {
    let dir = temp_dir("autosave");
    let path = dir.join("study.json");
    let saved = Project::new("saved");
    save_project(&saved, &path).unwrap();
    let mut draft = saved.clone();
    draft.description = "first draft".into();
    autosave_project(&draft, &path).unwrap();
    // A second autosave onto a full disk.
    draft.description = "second draft".into();
    let err = write_atomically_with(
        &autosave_path(&path),
        project_json(&draft).as_bytes(),
        |inner| Failing {
            inner,
            room: 10,
            kind: ErrorKind::StorageFull,
            fail_sync: false,
        },
    )
    .expect_err("full");
    assert!(err.to_string().contains("disk is full"), "{err}");
    assert_eq!(load_project(&path).unwrap(), saved);
    assert_eq!(
        load_project(&autosave_path(&path)).unwrap().description,
        "first draft"
    );
    no_temporary_files(&dir);
}

#[test]
fn stale_temporary_files_of_interrupted_saves_are_cleared_by_the_next_save() {
    // A save killed before its rename leaves `.NAME.PID.tmp`; one older than ten minutes cannot
    // belong to a save still running, and the next successful save removes it. A fresh one (a
    // save in progress in another process) is left alone.
    let dir = temp_dir("stale");
    let path = dir.join("study.json");
    let old = dir.join(".study.json.4242.tmp");
    let fresh = dir.join(".study.json.4343.tmp");
    let unrelated = dir.join(".other.json.4242.tmp");
    for p in [&old, &fresh, &unrelated] {
        std::fs::write(p, "{\"format_version\": 1, \"na").unwrap();
    }
    let hour_ago = std::time::SystemTime::now() - std::time::Duration::from_secs(3600);
    for p in [&old, &unrelated] {
        File::options()
            .write(true)
            .open(p)
            .unwrap()
            .set_modified(hour_ago)
            .unwrap();
    }
    save_project(&Project::new("x"), &path).unwrap();
    assert!(!old.exists(), "the stale temporary file is removed");
    assert!(fresh.exists(), "a recent one may be another save's");
    assert!(
        unrelated.exists(),
        "another file's temporaries are not ours"
    );
}

/// The demo project copied into `dir` with its analyses files but without its images.
fn demo_without_images(dir: &Path) -> PathBuf {
    let demo_dir = demo_file().parent().unwrap().to_path_buf();
    for name in ["project.json", "analyses.csv", "pyroxene_analyses.csv"] {
        std::fs::copy(demo_dir.join(name), dir.join(name)).unwrap();
    }
    dir.join("project.json")
}

#[test]
fn missing_micrographs_are_listed_with_their_lines_and_the_project_still_opens() {
    let dir = temp_dir("missing");
    let file = demo_without_images(&dir);
    let text = std::fs::read_to_string(&file).unwrap();
    let opened = open_project(&file).expect("the project opens without its images");
    assert_eq!(opened.project, load_project(&demo_file()).unwrap());
    let micrographs: usize = opened
        .project
        .samples
        .iter()
        .flat_map(|s| &s.grains)
        .map(|g| g.micrographs.len())
        .sum();
    assert!(micrographs > 0);
    // Every micrograph is missing, no analyses file is.
    assert_eq!(opened.missing.len(), micrographs, "{:?}", opened.missing);
    let lines: Vec<&str> = text.lines().collect();
    for m in &opened.missing {
        assert!(matches!(m.which, FileRef::Micrograph { .. }), "{m}");
        let line = m.line.expect("the project line is known");
        let stored = m.stored.to_string_lossy();
        assert!(
            lines[line - 1].contains(&*stored),
            "line {line} names {stored}: {}",
            lines[line - 1]
        );
        let message = m.to_string();
        assert!(
            message.contains(&*m.resolved.to_string_lossy()),
            "{message}"
        );
        assert!(
            message.contains(&format!("project line {line}")),
            "{message}"
        );
        assert!(message.contains("Relink"), "says what to do: {message}");
    }
    // Each line is named once: entries are matched in document order.
    let mut seen: Vec<usize> = opened.missing.iter().filter_map(|m| m.line).collect();
    seen.dedup();
    assert_eq!(seen.len(), opened.missing.len());
}

#[test]
fn a_missing_micrograph_is_relinked_to_its_new_place() {
    let dir = temp_dir("relink");
    let file = demo_without_images(&dir);
    let mut opened = open_project(&file).unwrap();
    let first = opened.missing[0].clone();
    // The image turns up in another folder, inside the project's folder.
    let source = Project::resolve(&demo_file(), &first.stored);
    let moved = dir.join("moved").join("first.png");
    std::fs::create_dir_all(moved.parent().unwrap()).unwrap();
    std::fs::copy(&source, &moved).unwrap();

    // A wrong choice is refused and changes nothing.
    let before = opened.project.clone();
    let err = relink_file(
        &mut opened.project,
        &file,
        first.which,
        &dir.join("moved/nope.png"),
    )
    .expect_err("no such file");
    assert!(err.to_string().contains("nope.png"), "{err}");
    let err = relink_file(&mut opened.project, &file, first.which, &dir).expect_err("a folder");
    assert!(matches!(err, RelinkError::NotAFile { .. }), "{err}");
    let stale = FileRef::Micrograph {
        sample: 99,
        grain: 0,
        micrograph: 0,
    };
    let err = relink_file(&mut opened.project, &file, stale, &moved).expect_err("stale");
    assert!(matches!(err, RelinkError::NoSuchEntry(_)), "{err}");
    assert_eq!(opened.project, before);

    let stored = relink_file(&mut opened.project, &file, first.which, &moved).unwrap();
    assert_eq!(stored, Path::new("moved/first.png"), "stored relative");
    let still = missing_files(&opened.project, &file, None);
    assert_eq!(still.len(), opened.missing.len() - 1);
    assert!(still.iter().all(|m| m.which != first.which));
    // Saved and reopened, the link holds.
    save_project(&opened.project, &file).unwrap();
    let again = open_project(&file).unwrap();
    assert_eq!(again.missing.len(), still.len());
}

#[test]
fn a_missing_analyses_file_is_listed_too() {
    let dir = temp_dir("missing-csv");
    let file = demo_without_images(&dir);
    std::fs::remove_file(dir.join("pyroxene_analyses.csv")).unwrap();
    let opened = open_project(&file).unwrap();
    let csv: Vec<&MissingFile> = opened
        .missing
        .iter()
        .filter(|m| matches!(m.which, FileRef::AnalysisFile { .. }))
        .collect();
    assert_eq!(csv.len(), 1);
    assert_eq!(csv[0].stored, Path::new("pyroxene_analyses.csv"));
    assert!(csv[0].line.is_some());
}
