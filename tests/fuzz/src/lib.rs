//! The checked entry points that the fuzz targets drive, shared with the regression test that
//! replays the saved cases (`tests/reliability_fuzz_regressions.rs` includes this file).
//!
//! Each entry point feeds raw bytes to the same function a user's file reaches and returns
//! `Ok(())` when the input was accepted or `Err(message)` with the typed error's message when it
//! was refused. A broken contract is a panic, which libFuzzer records as a crash and the
//! regression test as a failure:
//! - a refusal whose message is empty, mentions a panic, or shows `NaN` that the input did not
//!   contain (design rule: bad input gets a located message, never a panic or a NaN);
//! - an accepted input whose results are not finite numbers or break a basic invariant
//!   (a project that does not survive a save/reload, a region larger than its image, ...).

use std::path::{Path, PathBuf};

/// Memory budget of the image entry point: small, so that a hostile header is refused quickly
/// and the fuzzer's 2 GB RSS limit is never approached. The budget check is the same code as
/// with the 2 GiB default.
pub const IMAGE_BUDGET_BYTES: u64 = 64 * 1024 * 1024;

/// Check a refusal's message against the design rules; `input` is the text that was refused.
///
/// # Panics
/// When the message is empty, or mentions a panic or shows a NaN that the input did not hold.
pub fn check_message(message: &str, input: &[u8]) -> String {
    // A message may quote the offending text back; only words the input did not hold count.
    // The spot-table reader drops a carriage return outside quotes (CRLF line ends), so a cell
    // quoted back may join words the input split with one: compare without them.
    let input: Vec<u8> = input.iter().copied().filter(|&b| b != b'\r').collect();
    let echoed = |word: &str| {
        input
            .windows(word.len())
            .any(|w| w.eq_ignore_ascii_case(word.as_bytes()))
    };
    assert!(!message.trim().is_empty(), "empty error message");
    assert!(
        echoed("panicked") || !message.contains("panicked"),
        "message mentions a panic: {message}"
    );
    assert!(
        echoed("nan") || !message.contains("NaN"),
        "message shows a NaN the input did not contain: {message}"
    );
    message.to_string()
}

fn finite(what: &str, value: f64) {
    assert!(value.is_finite(), "{what} is {value}");
}

/// Spot-analysis import (`mineral::parse_spot_table`), then the feldspar and pyroxene formulae
/// of every analysis read: cations, site sums and end-member fractions must be finite, and the
/// fractions within [0, 1].
pub fn spot_table(data: &[u8]) -> Result<(), String> {
    use mineral::{
        FeldsparIron, PyroxeneIron, QualityLimits, feldspar_formula, parse_spot_table,
        pyroxene_formula,
    };
    let table =
        parse_spot_table(data, "fuzz.csv").map_err(|e| check_message(&e.to_string(), data))?;
    assert!(!table.analyses.is_empty(), "accepted with no analyses");
    assert_eq!(table.analyses.len(), table.lines.len());
    let limits = QualityLimits::default();
    for a in &table.analyses {
        for iron in [FeldsparIron::Ferric, FeldsparIron::Ferrous] {
            let f = feldspar_formula(a, iron, &limits);
            for (c, v) in &f.cations {
                finite(&format!("feldspar cation {c:?}"), *v);
            }
            finite("feldspar tetrahedral sum", f.tetrahedral_sum);
            finite("feldspar large-cation sum", f.large_cation_sum);
            let e = f.end_members;
            for (name, x) in [
                ("x_ab", e.x_ab),
                ("x_or", e.x_or),
                ("x_an", e.x_an),
                ("x_cn", e.x_cn),
                ("x_sr", e.x_sr),
            ] {
                assert!(
                    (0.0..=1.0 + 1e-9).contains(&x),
                    "feldspar {name} = {x} for {a:?}"
                );
            }
            for flag in &f.flags {
                check_message(&flag.message(), data);
            }
        }
        for iron in [PyroxeneIron::ChargeBalance, PyroxeneIron::AsReported] {
            let p = pyroxene_formula(a, iron, &limits);
            for (c, v) in &p.cations {
                finite(&format!("pyroxene cation {c:?}"), *v);
            }
            finite("pyroxene Fe3+/Fe", p.fe3_over_fe_total);
            finite("pyroxene Mg#", p.mg_number);
            finite("pyroxene X_Fe", p.x_fe);
            let e = p.end_members;
            for (name, x) in [("wo", e.wo), ("en", e.en), ("fs", e.fs)] {
                assert!(
                    (0.0..=1.0 + 1e-9).contains(&x),
                    "pyroxene {name} = {x} for {a:?}"
                );
            }
            finite("pyroxene jd", e.jd);
            finite("pyroxene ae", e.ae);
            for flag in &p.flags {
                check_message(&flag.message(), data);
            }
        }
    }
    Ok(())
}

/// Project loader (`project::parse_project`); an accepted project must come back equal after
/// being written out and read again (what a save followed by an open does).
pub fn project_file(data: &[u8]) -> Result<(), String> {
    let text = String::from_utf8_lossy(data);
    let path = Path::new("fuzz.json");
    let project =
        project::parse_project(&text, path).map_err(|e| check_message(&e.to_string(), data))?;
    let written = project::project_json(&project);
    let back = project::parse_project(&written, path)
        .unwrap_or_else(|e| panic!("a project this build wrote does not read back: {e}"));
    assert_eq!(back, project, "the project changed in a save and reload");
    Ok(())
}

/// Region-of-interest loader (`micrograph::roi::Roi::from_json_str`), then rasterisation on a
/// 48 x 40 grid: never more pixels than the grid holds, and an exclusion never adds pixels.
pub fn region_of_interest(data: &[u8]) -> Result<(), String> {
    use micrograph::roi::Roi;
    let text = String::from_utf8_lossy(data);
    let roi = Roi::from_json_str(&text, Path::new("fuzz-roi.json"))
        .map_err(|e| check_message(&e.to_string(), data))?;
    let (w, h) = (48, 40);
    let mask = match roi.rasterise(w, h) {
        Ok(mask) => mask,
        Err(e) => return Err(check_message(&e.to_string(), data)),
    };
    assert_eq!(mask.bits.len(), (w * h) as usize);
    let included = Roi {
        include: roi.include.clone(),
        exclude: Vec::new(),
    }
    .rasterise(w, h)
    .unwrap_or_else(|e| panic!("includes alone failed after the whole region passed: {e}"));
    for (i, (&with, &without)) in mask.bits.iter().zip(&included.bits).enumerate() {
        assert!(
            !with || without,
            "pixel {i} is in the region but not in its include polygons"
        );
    }
    Ok(())
}

/// User solution model (`solvus::SolutionModel::from_json_str`), then what a run asks of it:
/// the consolute point, a binodal, a minimum crystallisation temperature and a pair temperature,
/// each a finite value or a typed refusal with a usable message.
pub fn user_model(data: &[u8]) -> Result<(), String> {
    use solvus::units::bar_from_kbar;
    use solvus::{
        BinodalOutcome, Composition, MinTemperature, SolutionModel, binodal, critical_point,
        min_crystallisation_temperature, pair_temperatures,
    };
    let text = String::from_utf8_lossy(data);
    let model = SolutionModel::from_json_str(&text, Path::new("fuzz-model.json"))
        .map_err(|e| check_message(&e.to_string(), data))?;
    let p = bar_from_kbar(model.range.pressure_kbar[0]);
    let refused = |e: solvus::SolvusError| {
        check_message(&e.to_string(), data);
    };
    match critical_point(&model, p) {
        Ok(c) => {
            finite("critical temperature", c.temperature_k);
            assert!(
                c.x_or > 0.0 && c.x_or < 1.0,
                "critical X_Or {} outside (0, 1)",
                c.x_or
            );
            match binodal(&model, 0.9 * c.temperature_k, p) {
                Ok(BinodalOutcome::Gap(pair)) => {
                    finite("binodal Na limb", pair.x_or_na_limb);
                    finite("binodal K limb", pair.x_or_k_limb);
                    assert!(pair.x_or_na_limb <= pair.x_or_k_limb, "{pair:?}");
                }
                Ok(BinodalOutcome::NoGap) => {}
                Ok(other) => panic!("unknown outcome {other:?}"),
                Err(e) => refused(e),
            }
        }
        Err(e) => refused(e),
    }
    let bulk = Composition::new(0.55, 0.42, 0.03).map_err(|e| e.to_string())?;
    match min_crystallisation_temperature(&model, &bulk, p) {
        Ok(r) => match r.outcome {
            MinTemperature::Found { temperature_k, .. } => {
                finite("minimum crystallisation temperature", temperature_k);
            }
            MinTemperature::StableInRange { t_min_k, t_max_k } => {
                finite("range bottom", t_min_k);
                finite("range top", t_max_k);
            }
            MinTemperature::UnstableAtRangeTop { t_max_k } => finite("range top", t_max_k),
            MinTemperature::OutsideCompositionRange { reason } => {
                check_message(&reason, data);
            }
            other => panic!("unknown outcome {other:?}"),
        },
        Err(e) => refused(e),
    }
    let na = Composition::new(0.90, 0.08, 0.02).map_err(|e| e.to_string())?;
    let k = Composition::new(0.12, 0.86, 0.02).map_err(|e| e.to_string())?;
    match pair_temperatures(&model, &na, &k, p) {
        Ok(r) => {
            for c in r.components() {
                match c {
                    solvus::ComponentTemperature::Root { temperature_k } => {
                        finite("pair temperature", *temperature_k);
                    }
                    solvus::ComponentTemperature::NoRootInRange { reason } => {
                        check_message(reason, data);
                    }
                    other => panic!("unknown outcome {other:?}"),
                }
            }
            if let Some(s) = r.spread_k {
                finite("pair spread", s);
            }
        }
        Err(e) => refused(e),
    }
    Ok(())
}

/// A scratch file for the image entry point: in `/dev/shm` when there is one (no disk writes
/// per input), otherwise in the temporary folder. One per process and thread.
fn scratch_image_path() -> PathBuf {
    let shm = Path::new("/dev/shm");
    let dir = if shm.is_dir() {
        shm.to_path_buf()
    } else {
        std::env::temp_dir()
    };
    dir.join(format!(
        "consolute-fuzz-image-{}-{}.bin",
        std::process::id(),
        thread_tag()
    ))
}

fn thread_tag() -> String {
    format!("{:?}", std::thread::current().id())
        .chars()
        .filter(char::is_ascii_alphanumeric)
        .collect()
}

/// Image decoding through our loader (`micrograph::load::load`, which reads a file), with a
/// [`IMAGE_BUDGET_BYTES`] budget; an accepted image has as many pixels as its dimensions say
/// and fits the budget, and its grey plane keeps them.
pub fn image_file(data: &[u8]) -> Result<(), String> {
    use micrograph::load::{LoadOptions, Pixels, load};
    let path = scratch_image_path();
    std::fs::write(&path, data)
        .unwrap_or_else(|e| panic!("cannot write the scratch file {}: {e}", path.display()));
    let options = LoadOptions {
        memory_budget_bytes: IMAGE_BUDGET_BYTES,
    };
    let result = load(&path, &options);
    let _ = std::fs::remove_file(&path);
    let image = result.map_err(|e| check_message(&e.to_string(), data))?;
    let n = u64::from(image.width()) * u64::from(image.height());
    assert!(n > 0, "accepted an image without pixels");
    let (len, bytes_per_pixel) = match image.pixels() {
        Pixels::Gray8(v) => (v.len(), 1),
        Pixels::Gray16(v) => (v.len(), 2),
        Pixels::Rgb8(v) => (v.len(), 3),
        Pixels::Rgb16(v) => (v.len(), 6),
        _ => panic!("unknown pixel layout"),
    };
    assert_eq!(len as u64, n, "pixel count differs from the dimensions");
    assert!(
        n * bytes_per_pixel <= IMAGE_BUDGET_BYTES,
        "{} x {} accepted beyond the budget",
        image.width(),
        image.height()
    );
    let plane = image.gray_plane();
    assert_eq!(plane.data.len() as u64, n);
    assert!(plane.data.iter().all(|&v| v <= plane.max_value));
    Ok(())
}

/// A checked entry point: the input's bytes to `Ok` (accepted) or a refusal's message.
pub type EntryPoint = fn(&[u8]) -> Result<(), String>;

/// The entry points by target name, as the fuzz targets and the corpus folders name them.
pub const TARGETS: [(&str, EntryPoint); 5] = [
    ("spot_table", spot_table),
    ("project_file", project_file),
    ("region_of_interest", region_of_interest),
    ("user_model", user_model),
    ("image_file", image_file),
];
