//! Palette PNGs and tiled, compressed and big-endian TIFFs decode to the pixel values that
//! independent readers give for the same files; palette and signed-integer TIFFs are refused
//! with a clear message.
//!
//! Source: Pillow (PNG, `Image.convert("RGB")`) and tifffile (TIFF, `imread`), run by `tests/reference/micrograph_load_fixtures.py`, which wrote the
//! files in `tests/data/load/` and the values in `expected.json` with the library versions.
//! Tolerance: none; decoding is exact, so every value must be equal.
#![allow(clippy::unwrap_used)]

use std::path::PathBuf;

use micrograph::error::MicrographError;
use micrograph::load::{LoadOptions, Pixels, load};
use serde_json::Value;

fn data_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/data/load")
}

fn expected() -> Value {
    let text = std::fs::read_to_string(data_dir().join("expected.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn case(name: &str) -> Value {
    expected()["files"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["file"] == name)
        .cloned()
        .unwrap_or_else(|| panic!("{name} not in expected.json"))
}

/// Loads a fixture and returns its values in the fixture's layout (row-major, RGB interleaved).
fn decoded(name: &str) -> (u32, u32, &'static str, Vec<u64>) {
    let m = load(&data_dir().join(name), &LoadOptions::default()).unwrap();
    let (kind, values): (&str, Vec<u64>) = match m.pixels() {
        Pixels::Gray8(v) => ("gray8", v.iter().map(|&x| u64::from(x)).collect()),
        Pixels::Gray16(v) => ("gray16", v.iter().map(|&x| u64::from(x)).collect()),
        Pixels::Rgb8(v) => ("rgb8", v.iter().flatten().map(|&x| u64::from(x)).collect()),
        Pixels::Rgb16(v) => ("rgb16", v.iter().flatten().map(|&x| u64::from(x)).collect()),
        other => panic!("unexpected pixel kind {other:?}"),
    };
    (m.width(), m.height(), kind, values)
}

fn check(name: &str) {
    let c = case(name);
    let (w, h, kind, values) = decoded(name);
    assert_eq!(
        (u64::from(w), u64::from(h)),
        (c["width"].as_u64().unwrap(), c["height"].as_u64().unwrap()),
        "{name}: size"
    );
    assert_eq!(kind, c["kind"].as_str().unwrap(), "{name}: pixel kind");
    let want: Vec<u64> = c["values"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_u64().unwrap())
        .collect();
    assert_eq!(values.len(), want.len(), "{name}: value count");
    let differ = values.iter().zip(&want).filter(|(a, b)| a != b).count();
    assert_eq!(
        differ, 0,
        "{name}: {differ} values differ from the reference reader"
    );
}

#[test]
fn fixture_names_the_library_versions() {
    let e = expected();
    for key in ["pillow_version", "tifffile_version", "numpy_version"] {
        assert!(e[key].as_str().unwrap().contains('.'), "{key}");
    }
}

#[test]
fn palette_pngs_expand_to_their_colours() {
    // Source: Pillow, see the module docs.
    check("palette8.png");
    check("palette4.png");
}

#[test]
fn tiled_tiffs_keep_their_depth() {
    // Source: tifffile, see the module docs. 29 x 19 px in 16 x 16 tiles: the right and bottom
    // tiles are padded in the file and must be clipped.
    check("grey16_tiled.tif");
    check("grey16_tiled_deflate.tif");
    check("grey8_tiled.tif");
}

#[test]
fn big_endian_strips_with_a_short_last_strip() {
    // Source: tifffile, see the module docs.
    check("grey16_strips_be.tif");
}

#[test]
fn palette_tiffs_are_refused_with_a_clear_message() {
    assert_eq!(case("palette8.tif")["kind"], "refused");
    let err = load(&data_dir().join("palette8.tif"), &LoadOptions::default()).unwrap_err();
    assert!(
        matches!(err, MicrographError::UnsupportedFormat { .. }),
        "{err}"
    );
    let msg = err.to_string();
    assert!(msg.contains("palette8.tif"), "names the file: {msg}");
    assert!(
        msg.contains("palette (colour-mapped) TIFF"),
        "says what: {msg}"
    );
    assert!(msg.contains("as PNG"), "says what to do: {msg}");
}

#[test]
fn signed_samples_are_refused_with_a_clear_message() {
    assert_eq!(case("signed16.tif")["kind"], "refused");
    let err = load(&data_dir().join("signed16.tif"), &LoadOptions::default()).unwrap_err();
    assert!(
        matches!(err, MicrographError::UnsupportedFormat { .. }),
        "{err}"
    );
    let msg = err.to_string();
    assert!(msg.contains("signed16.tif"), "names the file: {msg}");
    assert!(msg.contains("sample format"), "says what is wrong: {msg}");
}

#[test]
fn colour_fixtures_reduce_to_luma() {
    // Source: ITU-R BT.709 luma weights (0.2126, 0.7152, 0.0722) applied to the reference
    // reader's RGB values, rounded: the grey plane of a palette image follows its colours.
    // Tolerance: 0 (same arithmetic in f32, then rounding; a half-way case could differ by 1,
    // so 1 is allowed).
    let c = case("palette8.png");
    let rgb: Vec<f32> = c["values"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_u64().unwrap() as f32)
        .collect();
    let m = load(&data_dir().join("palette8.png"), &LoadOptions::default()).unwrap();
    let plane = m.gray_plane();
    assert_eq!(plane.max_value, 255);
    for (g, p) in plane.data.iter().zip(rgb.chunks(3)) {
        let want = (0.2126 * p[0] + 0.7152 * p[1] + 0.0722 * p[2]).round();
        assert!((f32::from(*g) - want).abs() <= 1.0, "{g} vs {want}");
    }
}
