//! Killing the process during a save or an autosave never corrupts the project: 200 child
//! processes save (and autosave) revision after revision and are killed (SIGKILL) at seeded
//! random moments; after each kill the project file, and the autosave if there is one, must
//! read back as exactly one complete revision, never older than the last one seen.
//!
//! Source of the guarantee tested: POSIX `rename()` replaces the target atomically (The Open
//! Group Base Specifications, Issue 7: "If the link named by the new argument exists, it shall
//! be removed and old renamed to new ... a link named new shall remain visible to other
//! threads throughout the renaming operation"), which `project::write_atomically` relies on.
//! A control run with a naive writer (truncate, then write in 8 KiB pieces) shows the harness
//! does catch a torn file, so the main test can fail.
#![allow(clippy::unwrap_used)]

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use project::*;

const CHILD_ENV: &str = "CONSOLUTE_KILL_TEST_FILE";
const MODE_ENV: &str = "CONSOLUTE_KILL_TEST_MODE";

/// Revision `r` of the test document: its name carries the number, its size varies (about
/// 80 to 400 kB) so that writes take different times and kills land in different places.
fn revision(r: u64) -> Project {
    let mut p = Project::new(&format!("revision {r}"));
    p.description = format!("{r} ").repeat(20_000 + (r % 7) as usize * 10_000);
    p.settings.seed = r;
    p
}

fn revision_of(p: &Project) -> Option<u64> {
    p.name.strip_prefix("revision ")?.parse().ok()
}

/// SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number generators",
/// OOPSLA): a seeded, dependency-free source of kill delays.
struct SplitMix(u64);

impl SplitMix {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
}

/// Child side: started by the tests below with the file in `CHILD_ENV`; saves revision after
/// revision until killed. Does nothing when run on its own.
#[test]
#[ignore = "child process of the kill tests; does nothing on its own"]
fn kill_test_child() {
    let Ok(file) = std::env::var(CHILD_ENV) else {
        return;
    };
    let path = PathBuf::from(file);
    let naive = std::env::var(MODE_ENV).is_ok_and(|m| m == "naive");
    let mut r = load_project(&path)
        .ok()
        .and_then(|p| revision_of(&p))
        .unwrap_or(0);
    // Say we are running, so the parent's clock starts at the first save, not at exec.
    println!("ready");
    let _ = std::io::stdout().flush();
    loop {
        r += 1;
        let doc = revision(r);
        if naive {
            // What a save without a temporary file does: truncate, then write piece by piece.
            let mut f =
                std::io::BufWriter::with_capacity(8192, std::fs::File::create(&path).unwrap());
            f.write_all(project_json(&doc).as_bytes()).unwrap();
            f.flush().unwrap();
            continue;
        }
        if r.is_multiple_of(3) {
            autosave_project(&doc, &path).unwrap();
        }
        save_project(&doc, &path).unwrap();
    }
}

/// What a kill left: `Ok(revision)` when the file reads back as exactly that revision,
/// `Err(why)` when it is torn, unreadable or altered.
fn check_file(path: &Path) -> Result<u64, String> {
    let p = load_project(path).map_err(|e| e.to_string())?;
    let r = revision_of(&p).ok_or_else(|| format!("unexpected name {}", p.name))?;
    if p != revision(r) {
        return Err(format!("revision {r} reads back altered"));
    }
    Ok(r)
}

struct Outcome {
    torn: Vec<String>,
    revisions_seen: u64,
    autosaves_checked: usize,
}

fn run_kills(dir: &Path, kills: usize, seed: u64, mode: &str) -> Outcome {
    let path = dir.join("study.json");
    save_project(&revision(0), &path).unwrap();
    let exe = std::env::current_exe().unwrap();
    let mut rng = SplitMix(seed);
    let mut last = 0;
    let mut torn = Vec::new();
    let mut autosaves_checked = 0;
    for kill in 0..kills {
        let mut child = Command::new(&exe)
            .args(["kill_test_child", "--exact", "--ignored", "--nocapture"])
            .args(["--test-threads", "1"])
            .env(CHILD_ENV, &path)
            .env(MODE_ENV, mode)
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        // Wait for the child to start saving (it prints `ready`), then kill it 0-40 ms later.
        let mut out = child.stdout.take().unwrap();
        let mut seen = Vec::new();
        let started = Instant::now();
        let mut byte = [0u8; 1];
        while !String::from_utf8_lossy(&seen).contains("ready")
            && started.elapsed() < Duration::from_secs(10)
        {
            match std::io::Read::read(&mut out, &mut byte) {
                Ok(1) => seen.push(byte[0]),
                _ => break,
            }
        }
        std::thread::sleep(Duration::from_micros(rng.next() % 40_000));
        child.kill().unwrap();
        child.wait().unwrap();
        match check_file(&path) {
            Ok(r) if r >= last => last = r,
            Ok(r) => torn.push(format!("kill {kill}: went back from {last} to {r}")),
            Err(why) => {
                torn.push(format!("kill {kill}: {why}"));
                // Start the next round from a whole file.
                save_project(&revision(last), &path).unwrap();
            }
        }
        let autosave = autosave_path(&path);
        if autosave.exists() {
            autosaves_checked += 1;
            if let Err(why) = check_file(&autosave) {
                torn.push(format!("kill {kill}: autosave: {why}"));
            }
        }
    }
    Outcome {
        torn,
        revisions_seen: last,
        autosaves_checked,
    }
}

fn temp_dir(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("consolute-kill-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

#[test]
fn two_hundred_kills_during_saves_never_corrupt_the_project() {
    let dir = temp_dir("atomic");
    let outcome = run_kills(&dir, 200, 0x5eed_0009, "atomic");
    assert!(outcome.torn.is_empty(), "{}", outcome.torn.join("\n"));
    // Meaningful only if the children got well into saving: many revisions went by, and
    // autosaves were caught on disk.
    assert!(
        outcome.revisions_seen >= 200,
        "only {} revisions saved",
        outcome.revisions_seen
    );
    assert!(outcome.autosaves_checked > 0);
    let leftovers = std::fs::read_dir(&dir)
        .unwrap()
        .filter(|e| {
            e.as_ref()
                .is_ok_and(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        })
        .count();
    eprintln!(
        "200 kills: {} revisions saved, {} autosaves checked, {leftovers} temporary files of killed saves left (removed by a later save once ten minutes old)",
        outcome.revisions_seen, outcome.autosaves_checked
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_harness_catches_a_torn_file_from_a_naive_writer() {
    // Control: without the temporary file and rename, kills leave torn files.
    let dir = temp_dir("naive");
    let outcome = run_kills(&dir, 40, 0x5eed_0010, "naive");
    assert!(
        !outcome.torn.is_empty(),
        "40 kills of a naive writer left no torn file: the harness would not notice one"
    );
    eprintln!(
        "naive writer: {} of 40 kills left a torn file",
        outcome.torn.len()
    );
    let _ = std::fs::remove_dir_all(&dir);
}
