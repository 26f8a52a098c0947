//! Prints the time of each stage of the segmentation job on one image (profiling aid).
//!
//! `cargo run --release -p micrograph --example stage_times -- IMAGE`
#![allow(clippy::unwrap_used)]

use std::time::Instant;

use micrograph::control::Control;
use micrograph::histogram::Histogram;
use micrograph::load::{LoadOptions, load};
use micrograph::roi::Roi;
use micrograph::segment::{SegmentSettings, auto_void_level, segment};

fn main() {
    let path = std::env::args().nth(1).unwrap();
    let t = Instant::now();
    let m = load(std::path::Path::new(&path), &LoadOptions::default()).unwrap();
    println!("load            {:8.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let plane = m.into_gray_plane();
    let region = Roi::default().rasterise(plane.width, plane.height).unwrap();
    println!("plane + region  {:8.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let h = Histogram::of_region(&plane, Some(&region.bits), 0).unwrap();
    println!("histogram       {:8.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let v = auto_void_level(&h, 2);
    println!(
        "void level      {:8.3} s ({v:?})",
        t.elapsed().as_secs_f64()
    );
    let progress = |f: f32| {
        println!(
            "  progress {f:.1} at {:8.3} s",
            START.with(|s| s.elapsed().as_secs_f64())
        );
    };
    thread_local!(static START: Instant = Instant::now());
    START.with(|_| ());
    let t = Instant::now();
    let ctl = Control {
        cancel: None,
        progress: Some(&progress),
    };
    let seg = segment(&plane, &region, &SegmentSettings::default(), &ctl).unwrap();
    println!(
        "segment total   {:8.3} s; fractions {:.4} {:.4}",
        t.elapsed().as_secs_f64(),
        seg.phases[0].area_fraction,
        seg.phases[1].area_fraction
    );
    let mut cm = seg.class_map.clone();
    let t = Instant::now();
    let _ =
        micrograph::segment::exclude_voids_with_rim(&plane, &region, v.unwrap_or(0), 2, &mut cm);
    println!("voids + rim     {:8.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    micrograph::segment::remove_small_features(&mut cm, plane.width, plane.height, 4, 2).unwrap();
    println!("clean-up        {:8.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let _ = micrograph::segment::tile_and_class_stats(&plane, &cm, 2, 512);
    println!("tiles           {:8.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let _ = micrograph::segment::core_histograms(&plane, &cm, 2, 3, 4).unwrap();
    println!("core hists      {:8.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let _ = micrograph::bootstrap::fraction_ci95(&seg.tiles, 2, 1000, 1);
    println!("bootstrap       {:8.3} s", t.elapsed().as_secs_f64());
}
