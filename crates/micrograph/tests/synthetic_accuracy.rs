//! Recovered area fractions on seeded synthetic micrographs of known construction.
//!
//! Source of the truth: the construction itself (exact lamella coverage of each pixel by 8 x 8
//! supersampling of the analytic lamella geometry), averaged over the pixels the pipeline
//! measured; the acceptance limit is 0.5 volume % (0.005 as a fraction).
#![allow(clippy::unwrap_used)]

use micrograph::control::Control;
use micrograph::correct::flatten;
use micrograph::histogram::Histogram;
use micrograph::roi::Mask;
use micrograph::segment::{NOT_MEASURED, SegmentSettings, auto_void_level, segment};
use micrograph::synthetic::{Synthetic, SyntheticSpec};

fn truth_over_measured(s: &Synthetic, class_map: &[u8]) -> f64 {
    let (mut sum, mut n) = (0.0f64, 0usize);
    for (c, &l) in class_map.iter().zip(&s.lamella_coverage) {
        if *c != NOT_MEASURED {
            sum += f64::from(l);
            n += 1;
        }
    }
    sum / n as f64
}

fn run(bits16: bool, seed: u64) -> (f64, f64, f64, f64) {
    let spec = SyntheticSpec {
        seed,
        ..SyntheticSpec::default()
    };
    let syn = spec.generate();
    let plane = syn.plane(spec.width, spec.height, bits16).unwrap();
    let region = Mask::full(spec.width, spec.height);
    let rh = Histogram::of_region(&plane, None, 0).unwrap();
    let void = auto_void_level(&rh, 2);
    assert!(void.is_some(), "the pore and crack must be found as voids");
    let (flat, _) = flatten(&plane, &region, 2, 1, void, &Control::none()).unwrap();
    let seg = segment(
        &flat,
        &region,
        &SegmentSettings::default(),
        &Control::none(),
    )
    .unwrap();
    let truth = truth_over_measured(&syn, &seg.class_map);
    let got = seg.phases[1].area_fraction;
    let unmixed = seg.unmixing.as_ref().unwrap().area_fraction[1];
    let true_void: f64 = syn.void_coverage.iter().map(|&v| f64::from(v)).sum::<f64>()
        / syn.void_coverage.len() as f64;
    assert!(
        seg.excluded_fraction > true_void,
        "excluded {} must hold the voids ({true_void}) and their rims",
        seg.excluded_fraction
    );
    (got, truth, unmixed, seg.excluded_fraction)
}

#[test]
fn eight_bit_recovers_fraction_within_half_a_percent() {
    for seed in [1, 2, 3] {
        let (got, truth, unmixed, excl) = run(false, seed);
        eprintln!(
            "8-bit seed {seed}: got {got:.5} truth {truth:.5} unmixed {unmixed:.5} excluded {excl:.4}"
        );
        assert!(
            (got - truth).abs() < 0.005,
            "classification {got} vs truth {truth}"
        );
        assert!(
            (unmixed - truth).abs() < 0.005,
            "unmixing {unmixed} vs truth {truth}"
        );
    }
}

#[test]
fn sixteen_bit_recovers_fraction_within_half_a_percent() {
    for seed in [4, 5] {
        let (got, truth, unmixed, excl) = run(true, seed);
        eprintln!(
            "16-bit seed {seed}: got {got:.5} truth {truth:.5} unmixed {unmixed:.5} excluded {excl:.4}"
        );
        assert!(
            (got - truth).abs() < 0.005,
            "classification {got} vs truth {truth}"
        );
        assert!(
            (unmixed - truth).abs() < 0.005,
            "unmixing {unmixed} vs truth {truth}"
        );
    }
}

/// "User-picked" samples: up to 200 pixels (every 7th) whose construction coverage is pure.
fn pick(rgb: &[[u8; 3]], pred: &dyn Fn(usize) -> bool) -> Vec<[u8; 3]> {
    (0..rgb.len())
        .filter(|&i| pred(i))
        .step_by(7)
        .take(200)
        .map(|i| rgb[i])
        .collect()
}

#[test]
fn stained_colour_variant_recovers_fraction_within_half_a_percent() {
    use micrograph::colour::{centroid, flatten_colour, kmeans_seeded, segment_colour};
    // Stained host (yellowish), unstained lamellae (pale grey), dark epoxy in the voids, under
    // the default illumination gradient (10% across), flattened in linear light first.
    let spec = SyntheticSpec {
        seed: 9,
        ..SyntheticSpec::default()
    };
    assert!(spec.gradient > 0.0);
    let colours = [[205, 175, 70], [222, 220, 214], [35, 30, 40]];
    let (raw, syn) = Synthetic::stained(&spec, colours, 0.02).unwrap();
    let region = Mask::full(spec.width, spec.height);
    let pure_host = |i: usize| syn.lamella_coverage[i] == 0.0 && syn.void_coverage[i] == 0.0;
    let pure_lam = |i: usize| syn.lamella_coverage[i] == 1.0;
    let pure_void = |i: usize| syn.void_coverage[i] == 1.0;
    let seeds_of = |rgb: &[[u8; 3]]| {
        (
            vec![
                centroid(&pick(rgb, &pure_host)).unwrap(),
                centroid(&pick(rgb, &pure_lam)).unwrap(),
            ],
            vec![centroid(&pick(rgb, &pure_void)).unwrap()],
        )
    };
    let (phases, voids) = seeds_of(&raw.rgb8());
    let (image, fl) = flatten_colour(&raw, &region, &phases, &voids, 1, &Control::none()).unwrap();
    // Source: construction; the fitted gain spans the construction's 1 +/- 0.075 (x and y
    // terms) within 0.02 at either end.
    assert!(
        (fl.max_gain - fl.min_gain - 0.15).abs() < 0.02,
        "gain {} .. {}",
        fl.min_gain,
        fl.max_gain
    );
    // Samples picked again on the flattened image, as a user would.
    let rgb = image.rgb8();
    let (phases, voids) = seeds_of(&rgb);
    let mut all = phases.clone();
    all.extend(&voids);
    let refined = kmeans_seeded(&rgb, &region, &all, 20, &Control::none()).unwrap();
    for (label, cents) in [("nearest centroid", all), ("k-means", refined)] {
        let seg = segment_colour(
            &image,
            &region,
            &cents[..2],
            &cents[2..],
            &SegmentSettings::default(),
            &Control::none(),
        )
        .unwrap();
        let truth = truth_over_measured(&syn, &seg.class_map);
        let got = seg.phases[1].area_fraction;
        let unmixed = seg.colour_unmixing.as_ref().unwrap().area_fraction[1];
        eprintln!(
            "stained {label}: got {got:.5} unmixed {unmixed:.5} truth {truth:.5} excluded {:.4}",
            seg.excluded_fraction
        );
        // Source: the construction; the limit of 0.5 volume %.
        assert!(
            (got - truth).abs() < 0.005,
            "{label}: {got} vs truth {truth}"
        );
        assert!(
            (unmixed - truth).abs() < 0.005,
            "{label}: unmixing {unmixed} vs truth {truth}"
        );
    }
}

#[test]
fn stained_three_and_four_phase_images_unmix_within_half_a_percent() {
    use micrograph::colour::{centroid, segment_colour};
    use micrograph::synthetic::{LamellaSet, stained_multi};
    // Host, the default lamellae, and one or two further sets crossing them, each phase its
    // own stain colour; no gradient (flattening is checked above).
    let spec = SyntheticSpec {
        width: 240,
        height: 200,
        gradient: 0.0,
        seed: 17,
        ..SyntheticSpec::default()
    };
    let sets = [
        LamellaSet {
            period_px: 31.0,
            lamella_width_px: 7.0,
            angle_deg: -20.0,
            offset_px: 3.0,
        },
        LamellaSet {
            period_px: 41.0,
            lamella_width_px: 9.0,
            angle_deg: 15.0,
            offset_px: 11.0,
        },
    ];
    let colours = [
        [205, 175, 70],
        [222, 220, 214],
        [120, 150, 200],
        [170, 80, 90],
    ];
    for extra in [&sets[..1], &sets[..]] {
        let n = 2 + extra.len();
        let syn = stained_multi(&spec, extra, &colours[..n], [35, 30, 40], 0.02).unwrap();
        let rgb = syn.image.rgb8();
        let phases: Vec<_> = (0..n)
            .map(|k| centroid(&pick(&rgb, &|i| syn.phase_coverage[k][i] == 1.0)).unwrap())
            .collect();
        let voids = vec![centroid(&pick(&rgb, &|i| syn.void_coverage[i] == 1.0)).unwrap()];
        let region = Mask::full(spec.width, spec.height);
        let seg = segment_colour(
            &syn.image,
            &region,
            &phases,
            &voids,
            &SegmentSettings::default(),
            &Control::none(),
        )
        .unwrap();
        let u = seg.colour_unmixing.as_ref().unwrap();
        for k in 0..n {
            // Truth: the construction's coverage of phase k over the measured pixels.
            let (mut sum, mut cnt) = (0.0f64, 0usize);
            for (c, cov) in seg.class_map.iter().zip(&syn.phase_coverage[k]) {
                if *c != NOT_MEASURED {
                    sum += f64::from(*cov);
                    cnt += 1;
                }
            }
            let truth = sum / cnt as f64;
            let (got, unmixed) = (seg.phases[k].area_fraction, u.area_fraction[k]);
            eprintln!(
                "{n} phases, phase {k}: classified {got:.5} unmixed {unmixed:.5} truth {truth:.5}"
            );
            // Source: the construction; the limit of 0.5 volume %.
            assert!(
                (unmixed - truth).abs() < 0.005,
                "{n} phases, phase {k}: unmixing {unmixed} vs truth {truth}"
            );
            assert!(
                (got - truth).abs() < 0.005,
                "{n} phases, phase {k}: classification {got} vs truth {truth}"
            );
        }
    }
}

#[test]
fn greyscale_three_phases_say_why_there_is_no_unmixing() {
    let spec = SyntheticSpec::default();
    let plane = spec
        .generate()
        .plane(spec.width, spec.height, true)
        .unwrap();
    let settings = SegmentSettings {
        classes: 3,
        ..SegmentSettings::default()
    };
    let seg = segment(
        &plane,
        &Mask::full(spec.width, spec.height),
        &settings,
        &Control::none(),
    )
    .unwrap();
    assert!(seg.unmixing.is_none());
    let note = seg.unmixing_note.as_deref().unwrap();
    assert!(note.contains("two phases only"), "{note}");
    assert!(seg.warnings.iter().any(|w| w == note));
}

/// Thin lamellae (a few blur widths wide): the two images of issue 4, dark 4.5-px lamellae
/// every 15 px and bright 6-px lamellae every 30 px, blur sigma 1.2 px.
fn thin_spec(dark_thin: bool) -> SyntheticSpec {
    let base = SyntheticSpec {
        width: 640,
        height: 480,
        period_px: 15.0,
        lamella_width_px: 4.5,
        angle_deg: 35.0,
        host_level: 0.68,
        lamella_level: 0.48,
        void_level: 0.06,
        blur_sigma_px: 1.2,
        noise_sigma: 0.015,
        gradient: 0.08,
        cracks: vec![(20.0, 400.0, 610.0, 330.0, 2.5)],
        pores: vec![(150.0, 110.0, 12.0), (480.0, 260.0, 7.0)],
        seed: 31,
        ..SyntheticSpec::default()
    };
    if dark_thin {
        base
    } else {
        SyntheticSpec {
            period_px: 30.0,
            lamella_width_px: 6.0,
            host_level: 0.50,
            lamella_level: 0.66,
            seed: 41,
            ..base
        }
    }
}

#[test]
fn thin_lamellae_within_half_a_percent_and_warned_below_five_px() {
    use micrograph::morphometry::morphometry;
    for dark_thin in [true, false] {
        let spec = thin_spec(dark_thin);
        let syn = spec.generate();
        let plane = syn.plane(spec.width, spec.height, true).unwrap();
        let region = Mask::full(spec.width, spec.height);
        let rh = Histogram::of_region(&plane, None, 0).unwrap();
        let void = auto_void_level(&rh, 2);
        assert!(void.is_some(), "the pores and crack must be found as voids");
        let (flat, _) = flatten(&plane, &region, 2, 1, void, &Control::none()).unwrap();
        let seg = segment(
            &flat,
            &region,
            &SegmentSettings::default(),
            &Control::none(),
        )
        .unwrap();
        // Lamellae are class 0 when darker than the host, class 1 when brighter.
        let lam = usize::from(!dark_thin);
        let truth = truth_over_measured(&syn, &seg.class_map);
        let got = seg.phases[lam].area_fraction;
        let unmixed = seg.unmixing.as_ref().unwrap().area_fraction[lam];
        let m = morphometry(
            &seg.class_map,
            spec.width,
            spec.height,
            lam as u8,
            None,
            &Control::none(),
        )
        .unwrap();
        eprintln!(
            "thin {} px / {} px: got {got:.5} unmixed {unmixed:.5} truth {truth:.5} width {:.2} px",
            spec.lamella_width_px, spec.period_px, m.mean_width_px
        );
        // Source: the construction (see the module docs); the limit of 0.5 volume %.
        assert!(
            (got - truth).abs() < 0.005,
            "classification {got} vs truth {truth}"
        );
        assert!(
            (unmixed - truth).abs() < 0.005,
            "unmixing {unmixed} vs truth {truth}"
        );
        // The 4.5-px lamellae are under the 5-px limit of the thin-lamella warning (common
        // practice; the morphometry width is good to about 0.5 px, so the 6-px case is not
        // asserted either way).
        if spec.lamella_width_px < 5.0 {
            assert!(
                m.warnings.iter().any(|w| w.contains("px wide")),
                "no thin-lamella warning at {} px: {:?}",
                m.mean_width_px,
                m.warnings
            );
        }
    }
}
