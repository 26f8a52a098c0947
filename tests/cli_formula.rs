//! The `formula` subcommand end to end: the real binary on files in `tests/data/` and the demo.

use std::process::Command;

use serde_json::Value;

fn consolute(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_consolute"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the binary runs")
}

fn json_of(args: &[&str]) -> Value {
    let out = consolute(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("stdout is one JSON object")
}

#[test]
fn ideal_feldspars_give_pure_end_members() {
    // Source: ideal stoichiometry of albite, orthoclase and anorthite; the file holds their oxide
    // wt% rounded to 0.01, so fractions are exact to about 1e-3 and site sums to about 0.005.
    let v = json_of(&[
        "formula",
        "tests/data/ideal_feldspars.csv",
        "--mineral",
        "feldspar",
        "--json",
    ]);
    let analyses = v["analyses"].as_array().expect("analyses array");
    assert_eq!(analyses.len(), 3);
    for (row, key) in analyses.iter().zip(["x_ab", "x_or", "x_an"]) {
        let x = row["end_members"][key].as_f64().expect("number");
        assert!((x - 1.0).abs() < 1e-3, "{}: {key} = {x}", row["id"]);
        let t = row["tetrahedral_sum"].as_f64().expect("number");
        assert!((t - 4.0).abs() < 0.005, "{}: T = {t}", row["id"]);
        assert!((row["total_wt"].as_f64().expect("number") - 100.0).abs() < 0.02);
        assert!(row["cations"]["Si"].as_f64().is_some());
        assert_eq!(row["flags"].as_array().map(Vec::len), Some(0));
    }
}

#[test]
fn demo_feldspar_flags_catch_the_poor_analyses() {
    // The demo's three deliberately poor spots (invented data) must be flagged, and the
    // acceptable ones not: limits are common practice (total 98.5-101.5, sites +/- 0.05).
    let v = json_of(&[
        "formula",
        "demo_projects/tarn_moss/analyses.csv",
        "--mineral",
        "feldspar",
        "--json",
    ]);
    let analyses = v["analyses"].as_array().expect("analyses");
    let warned: Vec<&str> = analyses
        .iter()
        .filter(|a| {
            a["flags"]
                .as_array()
                .is_some_and(|f| f.iter().any(|f| f["severity"] == "warning"))
        })
        .filter_map(|a| a["spot"].as_str())
        .collect();
    assert_eq!(
        warned,
        vec!["g1-h6-lowtotal", "g2-l5-hightotal", "g1-h6-crack"]
    );
}

#[test]
fn demo_pyroxenes_read_decimal_commas_and_total_iron() {
    let v = json_of(&[
        "formula",
        "demo_projects/tarn_moss/pyroxene_analyses.csv",
        "--mineral",
        "pyroxene",
        "--json",
    ]);
    for a in v["analyses"].as_array().expect("analyses") {
        let sum: f64 = a["cations"]
            .as_object()
            .expect("cations")
            .values()
            .filter_map(Value::as_f64)
            .sum();
        // Source: Droop (1987) normalises to 4 cations exactly.
        assert!((sum - 4.0).abs() < 1e-9, "{}: {sum}", a["id"]);
        let wo = a["end_members"]["wo"].as_f64().expect("wo");
        let en = a["end_members"]["en"].as_f64().expect("en");
        let fs = a["end_members"]["fs"].as_f64().expect("fs");
        assert!((wo + en + fs - 1.0).abs() < 1e-9);
    }
}

#[test]
fn a_bad_cell_is_reported_with_file_line_and_column() {
    let out = consolute(&[
        "formula",
        "tests/data/bad_cell.csv",
        "--mineral",
        "feldspar",
    ]);
    assert!(!out.status.success());
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("tests/data/bad_cell.csv:3:4: 'O.9' in column 'Na2O' is not a number"),
        "{stderr}"
    );
    assert!(!stderr.contains("panicked"));
    assert!(out.stdout.is_empty());
}

#[test]
fn a_missing_file_is_reported() {
    let out = consolute(&["formula", "no_such.csv", "--mineral", "pyroxene"]);
    assert!(!out.status.success());
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("no_such.csv") && stderr.contains("cannot read"),
        "{stderr}"
    );
}
