//! `consolute run` end to end on the bundled demo, and its refusals.

use std::process::Command;

use serde_json::Value;

fn consolute(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_consolute"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the binary runs")
}

#[test]
fn run_writes_results_with_the_documented_keys() {
    let out_dir = std::env::temp_dir().join(format!("consolute-run-{}", std::process::id()));
    let out_str = out_dir.to_string_lossy().into_owned();
    let out = consolute(&[
        "run",
        "demo_projects/tarn_moss/project.json",
        "--out",
        &out_str,
        "--draws",
        "200",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("[1/5]"), "progress on stderr: {stderr}");
    let results: Value = serde_json::from_str(
        &std::fs::read_to_string(out_dir.join("results.json")).expect("results.json"),
    )
    .expect("valid JSON");
    let grains = results["grains"].as_array().expect("grains");
    assert_eq!(grains.len(), 5);
    for g in grains.iter().filter(|g| g["system"] == "feldspar") {
        // design §4: bulk {x_ab, x_or, x_an}, min_temperature_c {median, p2_5, p97_5}
        let sum: f64 = ["x_ab", "x_or", "x_an"]
            .iter()
            .map(|k| g["bulk"][k].as_f64().expect("bulk fraction"))
            .sum();
        // Medians of each fraction need not sum exactly to one; 0.01 is ample.
        assert!((sum - 1.0).abs() < 0.01, "{sum}");
        let t = &g["min_temperature_c"];
        let (lo, mid, hi) = (
            t["p2_5"].as_f64().expect("p2_5"),
            t["median"].as_f64().expect("median"),
            t["p97_5"].as_f64().expect("p97_5"),
        );
        assert!(lo < mid && mid < hi, "{t}");
    }
    for name in ["phases.csv", "bulk.csv", "temperatures.csv", "summary.txt"] {
        let text = std::fs::read_to_string(out_dir.join(name)).expect(name);
        assert!(text.lines().count() > 1, "{name}");
        assert!(!text.contains("NaN"), "{name}");
    }
}

#[test]
fn a_broken_project_file_is_reported_with_its_location() {
    let dir = std::env::temp_dir().join(format!("consolute-bad-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("dir");
    let file = dir.join("bad.json");
    std::fs::write(
        &file,
        "{\"format_version\": 1,\n \"name\": \"x\",\n \"samples\": 3}\n",
    )
    .expect("write");
    let out = consolute(&[
        "run",
        &file.to_string_lossy(),
        "--out",
        &dir.join("out").to_string_lossy(),
    ]);
    assert!(!out.status.success());
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("bad.json:3:"), "{stderr}");
    assert!(!stderr.contains("panicked"));
}

#[test]
fn a_project_path_that_is_not_there_is_refused_before_any_window_opens() {
    // `consolute PROJECT` opens that project in the workbench; a wrong path is an error naming
    // it (not a silent fall-back to another project, and no window, so no display is needed).
    let out = consolute(&["/no/such/folder/study.json"]);
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.starts_with("error: /no/such/folder/study.json: no such project file"),
        "{err}"
    );
    assert!(!err.contains("panicked"), "{err}");
    // A subcommand is still a subcommand, not a project path.
    let out = consolute(&["models"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}
