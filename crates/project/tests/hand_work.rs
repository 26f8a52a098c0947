//! What the user does by hand reaches the results: spots left out or corrected change the phase
//! means and the bulk, hand edits of a micrograph change its fractions by exactly the pixels
//! they move, and a point count is reported with its interval. Runs one grain of the bundled
//! demo with few Monte Carlo draws (the deterministic results do not depend on the draws).

use std::path::{Path, PathBuf};

use mineral::Oxide;
use project::hand::{Z95, wilson_interval};
use project::*;
use reintegration::JobControl;

fn demo_file() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_projects/tarn_moss/project.json")
}

fn demo() -> Project {
    let mut p = load_project(&demo_file()).expect("demo loads");
    p.settings.draws = 20;
    p
}

/// TM-01/g1, the first feldspar grain.
fn run_g1(p: &Project) -> GrainResult {
    let run = run_one_grain(p, &demo_file(), 0, 0, &JobControl::default()).expect("runs");
    assert!(run.failures.is_empty(), "{:?}", run.failures);
    run.grains.into_iter().next().expect("one grain")
}

/// X_Or = K / (Na + K + Ca) of an analysis, from oxide wt% and molar masses.
/// Source: standard atomic weights CIAAW 2021 (design §3.1): Na 22.98976928, K 39.0983,
/// Ca 40.078, O 15.999; two alkali cations per Na2O and K2O, one Ca per CaO.
fn x_or_by_hand(na2o: f64, k2o: f64, cao: f64) -> f64 {
    let (na, k, ca, o) = (22.98976928, 39.0983, 40.078, 15.999);
    let n_na = 2.0 * na2o / (2.0 * na + o);
    let n_k = 2.0 * k2o / (2.0 * k + o);
    let n_ca = cao / (ca + o);
    n_k / (n_na + n_k + n_ca)
}

fn host_spots() -> Vec<mineral::Analysis> {
    let table = mineral::read_spot_file(
        &demo_file()
            .parent()
            .expect("demo folder")
            .join("analyses.csv"),
    )
    .expect("demo analyses read");
    table
        .analyses
        .into_iter()
        .filter(|a| a.id.sample == "TM-01" && a.id.grain == "g1" && a.id.phase == "host")
        .collect()
}

fn mean_x_or(spots: &[&mineral::Analysis]) -> f64 {
    spots
        .iter()
        .map(|a| x_or_by_hand(a.wt(Oxide::Na2O), a.wt(Oxide::K2O), a.wt(Oxide::CaO)))
        .sum::<f64>()
        / spots.len() as f64
}

#[test]
fn a_spot_left_out_by_hand_leaves_the_phase_mean_and_changes_the_bulk() {
    let mut p = demo();
    let base = run_g1(&p);
    let host = &base.phases[0];
    assert_eq!(host.label, "host");
    let dropped = host.spots_used[0].clone();
    p.samples[0].grains[0].excluded_spots.push(dropped.clone());
    let after = run_g1(&p);
    let host2 = &after.phases[0];
    assert!(!host2.spots_used.contains(&dropped));
    assert!(
        host2
            .spots_excluded
            .iter()
            .any(|(s, why)| *s == dropped && why.contains("by hand"))
    );
    // The mean is that of the spots still used, each formula by hand (tolerance 1e-9: the same
    // ratio in double precision).
    let spots = host_spots();
    let used: Vec<&mineral::Analysis> = spots
        .iter()
        .filter(|a| host2.spots_used.contains(&a.id.spot))
        .collect();
    assert_eq!(used.len(), host.spots_used.len() - 1);
    let x_or = mean_x_or(&used);
    assert!(
        (host2.mean[1] - x_or).abs() < 1e-9,
        "{} {x_or}",
        host2.mean[1]
    );
    // The bulk moves with the host mean.
    let d = (after.reintegration.molar[1] - base.reintegration.molar[1]).abs();
    assert!(d > 1e-6, "bulk X_Or moved by {d}");
    assert!(after.notes.iter().any(|n| n.contains(&dropped)));
}

#[test]
fn a_corrected_spot_value_is_used_in_place_of_the_files() {
    let mut p = demo();
    // The corrected spot is kept whatever its flags say, so the test follows the value alone.
    p.settings.exclude_flagged_analyses = false;
    let base = run_g1(&p);
    let spot = base.phases[0].spots_used[0].clone();
    let spots = host_spots();
    let original = spots
        .iter()
        .find(|a| a.id.spot == spot)
        .expect("spot in file")
        .wt(Oxide::Na2O);
    // Half a percent more Na2O in one host spot (a correction a user might make after
    // re-reading a probe printout).
    let corrected = original + 0.5;
    p.samples[0].grains[0].spot_edits.push(SpotEdit {
        spot: spot.clone(),
        oxide: Oxide::Na2O,
        wt: corrected,
    });
    let after = run_g1(&p);
    let used: Vec<mineral::Analysis> = spots
        .iter()
        .filter(|a| after.phases[0].spots_used.contains(&a.id.spot))
        .map(|a| {
            let mut a = a.clone();
            if a.id.spot == spot {
                a.oxides_wt.insert(Oxide::Na2O, corrected);
            }
            a
        })
        .collect();
    assert!(
        used.iter().any(|a| a.id.spot == spot),
        "the spot is still used"
    );
    let x_or = mean_x_or(&used.iter().collect::<Vec<_>>());
    assert!((after.phases[0].mean[1] - x_or).abs() < 1e-9);
    // More sodium in the host: less Or in the bulk.
    assert!(after.reintegration.molar[1] < base.reintegration.molar[1] - 1e-5);
}

#[test]
fn a_hand_edit_moves_the_fraction_by_the_pixels_it_changes_and_points_are_counted() {
    let mut p = demo();
    let base = run_g1(&p);
    let m0 = &base.micrographs[0];
    let lamella = 1; // grain phase order: host, lamella
    let spec = &mut p.samples[0].grains[0].micrographs[0];
    spec.hand_edits.push(HandEdit {
        shape: EditShape::Polygon {
            vertices: vec![
                [100.0, 100.0],
                [180.0, 100.0],
                [180.0, 160.0],
                [100.0, 160.0],
            ],
        },
        phase: Some("lamella".into()),
    });
    spec.point_count = Some(PointCount {
        grid: PointGrid::Regular { spacing_px: 40.0 },
        marks: vec![
            PointMark {
                point: 0,
                phase: Some("host".into()),
            },
            PointMark {
                point: 1,
                phase: Some("lamella".into()),
            },
            PointMark {
                point: 2,
                phase: Some("host".into()),
            },
        ],
    });
    let after = run_g1(&p);
    let m1 = &after.micrographs[0];
    let h = m1.hand_edits.expect("hand edits reported");
    // The pixels the rectangle should move, counted independently on the automatic
    // classification: centres inside 100..180 x 100..160 (80 x 60 = 4800, corners on pixel
    // edges; micrograph::roi rule) that are measured, and of those the host ones.
    let spec = &p.samples[0].grains[0].micrographs[0];
    let image = micrograph::load::load(
        &Project::resolve(&demo_file(), &spec.path),
        &micrograph::load::LoadOptions::default(),
    )
    .expect("image loads");
    let plane = image.gray_plane();
    let region = spec
        .region
        .rasterise(plane.width, plane.height)
        .expect("region");
    let mut settings = spec.segmentation.clone();
    settings.pixel_size = spec
        .pixel_size_um
        .map(|s| micrograph::calibration::PixelSize::new(s).expect("size"));
    let seg = micrograph::segment::segment(
        &plane,
        &region,
        &settings,
        &micrograph::control::Control::none(),
    )
    .expect("classifies");
    let host_class = spec
        .class_phases
        .iter()
        .position(|l| l == "host")
        .expect("a host class") as u8;
    let (mut measured, mut host) = (0u64, 0u64);
    for y in 100..160usize {
        for x in 100..180usize {
            let c = seg.class_map[y * plane.width as usize + x];
            if c != micrograph::segment::NOT_MEASURED {
                measured += 1;
                if c == host_class {
                    host += 1;
                }
            }
        }
    }
    assert!(measured > 4000 && host > 0, "{measured} {host}");
    assert_eq!(h.edited_pixels, measured);
    assert_eq!(h.changed_pixels, host);
    assert_eq!(m1.measured_pixels, m0.measured_pixels);
    // Every changed pixel went from host to lamella: exactly that share of the measured area.
    let expected = m0.fractions[lamella] + host as f64 / m0.measured_pixels as f64;
    assert!(
        (m1.fractions[lamella] - expected).abs() < 1e-12,
        "{} {expected}",
        m1.fractions[lamella]
    );
    assert!(
        after.reintegration.volume_fractions[lamella]
            > base.reintegration.volume_fractions[lamella]
    );
    let pc = m1.point_count.as_ref().expect("point count reported");
    assert_eq!(pc.counted, 3);
    assert_eq!(pc.phases[0].points, 2);
    assert_eq!(pc.phases[0].wilson95, wilson_interval(2, 3, Z95));
    assert!(pc.grid_points > 100, "{}", pc.grid_points);
}

#[test]
fn an_edit_naming_an_unknown_phase_fails_the_grain_with_a_located_message() {
    let mut p = demo();
    p.samples[0].grains[0].micrographs[0]
        .hand_edits
        .push(HandEdit {
            shape: EditShape::Stroke {
                points: vec![[10.0, 10.0], [20.0, 20.0]],
                radius_px: 3.0,
            },
            phase: Some("quartz".into()),
        });
    let run = run_one_grain(&p, &demo_file(), 0, 0, &JobControl::default()).expect("runs");
    let f = run.failures.first().expect("the grain fails");
    assert!(
        f.message.contains("bse-1")
            && f.message.contains("hand edit 1")
            && f.message.contains("quartz"),
        "{}",
        f.message
    );
}

#[test]
fn files_without_hand_work_load_and_are_written_without_it() {
    let p = load_project(&demo_file()).expect("demo loads");
    let text = project_json(&p);
    for key in ["excluded_spots", "spot_edits", "hand_edits", "point_count"] {
        assert!(!text.contains(key), "{key} written for an empty list");
    }
    let mut q = p.clone();
    q.samples[0].grains[0].excluded_spots.push("g1-h1".into());
    q.samples[0].grains[0].micrographs[0].point_count = Some(PointCount {
        grid: PointGrid::Random {
            points: 50,
            seed: 3,
        },
        marks: Vec::new(),
    });
    let back = parse_project(&project_json(&q), Path::new("q.json")).expect("parses");
    assert_eq!(back, q);
}
