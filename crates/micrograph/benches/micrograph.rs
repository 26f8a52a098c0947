//! Criterion benchmarks of the micrograph engine.
//!
//! `cargo bench -p micrograph` runs the small cases; set `MICROGRAPH_BENCH_BIG=1` to add the
//! whole job on an 8192 x 8192 16-bit image (about a minute per sample set on 2 cores).
#![allow(clippy::unwrap_used)]

use criterion::{BenchmarkId, Criterion, criterion_group, criterion_main};
use micrograph::control::Control;
use micrograph::histogram::Histogram;
use micrograph::roi::Mask;
use micrograph::segment::{SegmentSettings, segment};
use micrograph::synthetic::SyntheticSpec;
use micrograph::threshold::multi_otsu_levels;

fn plane(size: u32) -> micrograph::load::GrayPlane {
    let f = f64::from(size) / 256.0;
    SyntheticSpec {
        width: size,
        height: size,
        cracks: vec![(10.0 * f, 200.0 * f, 240.0 * f, 170.0 * f, 2.0)],
        pores: vec![(70.0 * f, 60.0 * f, 9.0 * f.sqrt())],
        supersample: 1,
        ..SyntheticSpec::default()
    }
    .generate()
    .plane(size, size, true)
    .unwrap()
}

fn bench_levels(c: &mut Criterion) {
    let p = plane(1024);
    let h = Histogram::of_region(&p, None, 0).unwrap();
    let mut g = c.benchmark_group("multi_otsu_65536_bins");
    for classes in [2usize, 3, 4, 5] {
        g.bench_with_input(BenchmarkId::from_parameter(classes), &classes, |b, &k| {
            b.iter(|| multi_otsu_levels(&h, k).unwrap())
        });
    }
    g.finish();
}

fn bench_level_change(c: &mut Criterion) {
    // The histogram has 65536 bins whatever the image size, so this is the cost at any size.
    let p = plane(1024);
    let seg = segment(
        &p,
        &Mask::full(1024, 1024),
        &SegmentSettings::default(),
        &Control::none(),
    )
    .unwrap();
    let mut level = seg.levels[0];
    c.bench_function("level_change_fractions_16bit", |b| {
        b.iter(|| {
            level = level.wrapping_add(37) % 60000;
            seg.fractions_at(&[level])
        })
    });
}

fn bench_whole_job(c: &mut Criterion) {
    let mut sizes = vec![1024u32, 2048];
    if std::env::var_os("MICROGRAPH_BENCH_BIG").is_some() {
        sizes.push(8192);
    }
    let mut g = c.benchmark_group("whole_job_16bit");
    g.sample_size(10);
    for size in sizes {
        let p = plane(size);
        let region = Mask::full(size, size);
        let settings = SegmentSettings::default();
        g.bench_with_input(BenchmarkId::from_parameter(size), &size, |b, _| {
            b.iter(|| segment(&p, &region, &settings, &Control::none()).unwrap())
        });
    }
    g.finish();
}

criterion_group!(benches, bench_levels, bench_level_change, bench_whole_job);
criterion_main!(benches);
