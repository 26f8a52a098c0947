//! Otsu and multi-level Otsu levels against scikit-image on the same histograms.
//!
//! Source: scikit-image `skimage.filters.threshold_otsu` and `threshold_multiotsu` (the version
//! is written in the fixture), run by `tests/reference/micrograph_fixtures.py` on the histograms
//! stored in `tests/data/skimage_thresholds.json`. Tolerance: one bin (the criterion;
//! scikit-image evaluates the criterion in float32, so near-ties may fall one bin apart).
#![allow(clippy::unwrap_used)]

use micrograph::histogram::Histogram;
use micrograph::threshold::{multi_otsu_levels, otsu_level};
use serde_json::Value;

fn fixture() -> Value {
    let text = include_str!("data/skimage_thresholds.json");
    serde_json::from_str(text).unwrap()
}

fn histogram(case: &Value) -> Histogram {
    let bins = case["bins"].as_u64().unwrap() as usize;
    let mut counts = vec![0u64; bins];
    for pair in case["sparse_counts"].as_array().unwrap() {
        counts[pair[0].as_u64().unwrap() as usize] = pair[1].as_u64().unwrap();
    }
    Histogram::from_counts(counts, 0, (bins - 1) as u16).unwrap()
}

#[test]
fn fixture_names_the_library_version() {
    let f = fixture();
    assert!(f["scikit_image_version"].as_str().unwrap().contains('.'));
    assert!(f["cases"].as_array().unwrap().len() >= 5);
}

#[test]
fn otsu_and_multi_otsu_match_scikit_image_within_one_bin() {
    let f = fixture();
    let mut compared = 0;
    for case in f["cases"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        let h = histogram(case);
        let sk = case["skimage"].as_object().unwrap();
        for (key, expected) in sk {
            let ours: Vec<i64> = if key == "otsu" {
                vec![i64::from(otsu_level(&h).unwrap())]
            } else {
                let k: usize = key.trim_start_matches("multiotsu_").parse().unwrap();
                multi_otsu_levels(&h, k)
                    .unwrap()
                    .into_iter()
                    .map(i64::from)
                    .collect()
            };
            let theirs: Vec<i64> = match expected {
                Value::Array(a) => a.iter().map(|v| v.as_i64().unwrap()).collect(),
                v => vec![v.as_i64().unwrap()],
            };
            assert_eq!(ours.len(), theirs.len(), "{name} {key}");
            for (o, t) in ours.iter().zip(&theirs) {
                assert!(
                    (o - t).abs() <= 1,
                    "{name} {key}: ours {ours:?}, scikit-image {theirs:?}"
                );
            }
            compared += 1;
        }
    }
    assert_eq!(compared, 15, "every fixture level compared");
}
