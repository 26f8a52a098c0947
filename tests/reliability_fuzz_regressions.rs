//! Replays the saved fuzzing cases (`tests/data/fuzz_regressions/<target>/`) through the same
//! checked entry points the fuzz targets drive (`tests/fuzz/src/lib.rs`, included below), so
//! that a plain `cargo test` catches a regression without libFuzzer or a nightly toolchain.
//!
//! Each file's name says what it must give: `ok-*` is accepted, `err-*` is refused with a
//! typed error, `crash-*` (an input that once crashed a target) may go either way. Whatever the
//! outcome, the entry point's own checks hold: a refusal's message is non-empty and shows
//! neither a panic nor a NaN; accepted results are finite. Source of these rules: the
//! project's design rules (bad input gets a located message, never a panic, never NaN).
#![allow(clippy::unwrap_used)]

use std::path::{Path, PathBuf};

#[path = "fuzz/src/lib.rs"]
#[allow(dead_code)]
mod entry;

fn cases(target: &str) -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/fuzz_regressions")
        .join(target);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    files
}

fn replay(target: &str) {
    let (_, run) = entry::TARGETS
        .iter()
        .find(|(name, _)| *name == target)
        .unwrap();
    let files = cases(target);
    assert!(
        files.iter().any(|f| name_of(f).starts_with("ok-"))
            && files.iter().any(|f| name_of(f).starts_with("err-")),
        "{target}: keep at least one accepted and one refused case"
    );
    let mut problems = Vec::new();
    for file in &files {
        let name = name_of(file);
        let data = std::fs::read(file).unwrap();
        let outcome = std::panic::catch_unwind(|| run(&data));
        match (name.split('-').next().unwrap_or(""), outcome) {
            (_, Err(panic)) => {
                let text = panic
                    .downcast_ref::<String>()
                    .cloned()
                    .or_else(|| panic.downcast_ref::<&str>().map(|s| s.to_string()))
                    .unwrap_or_default();
                problems.push(format!("{name}: broke a contract: {text}"));
            }
            ("ok", Ok(Err(message))) => problems.push(format!("{name}: refused: {message}")),
            ("err", Ok(Ok(()))) => problems.push(format!("{name}: accepted")),
            ("ok" | "crash", Ok(_)) => {}
            ("err", Ok(Err(message))) => {
                // The entry point checked the message is usable; it must also say where: each
                // entry point names its input with a file name containing `fuzz`.
                if !message.contains("fuzz") {
                    problems.push(format!("{name}: the message names no file: {message}"));
                }
            }
            (other, _) => problems.push(format!("{name}: unknown prefix '{other}'")),
        }
    }
    assert!(problems.is_empty(), "{target}:\n{}", problems.join("\n"));
}

fn name_of(path: &Path) -> String {
    path.file_name()
        .unwrap_or_default()
        .to_string_lossy()
        .into_owned()
}

#[test]
fn spot_table_cases() {
    replay("spot_table");
}

#[test]
fn project_file_cases() {
    replay("project_file");
}

#[test]
fn region_of_interest_cases() {
    replay("region_of_interest");
}

#[test]
fn user_model_cases() {
    replay("user_model");
}

#[test]
fn image_file_cases() {
    replay("image_file");
}

#[test]
fn a_refusal_showing_an_invented_nan_or_a_panic_is_caught() {
    // The checks themselves must be able to fail (else the replay above proves nothing).
    assert!(std::panic::catch_unwind(|| entry::check_message("", b"x")).is_err());
    assert!(std::panic::catch_unwind(|| entry::check_message("x: NaN", b"12")).is_err());
    assert!(
        std::panic::catch_unwind(|| entry::check_message("thread 'main' panicked at", b"1"))
            .is_err()
    );
    // A NaN the user typed may be quoted back.
    assert_eq!(
        entry::check_message("'nan' is not a number", b"nan"),
        "'nan' is not a number"
    );
    assert!(
        std::panic::catch_unwind(|| entry::check_message("'panicked' is odd", b"panicked")).is_ok()
    );
}
