//! Prints the time of each stage of the segmentation job on one image (profiling aid): the
//! same steps as `consolute segment IMAGE` (load, then segment the whole image with the default
//! settings),
//! with the time at each progress mark of `segment`.
//!
//! `cargo run --release -p micrograph --example stage_times -- IMAGE`
//!
//! Progress marks of `segment`: 0.1 region histogram; 0.2 void level and rim pixels; 0.3
//! measured histogram and levels; 0.5 core pixels of the first classification and pure levels;
//! 0.6 final classification with the tile sums; 0.8 small-feature clean-up; 1.0 bootstrap,
//! sensitivity and unmixing.
#![allow(clippy::unwrap_used)]

use std::time::Instant;

use micrograph::control::Control;
use micrograph::load::{LoadOptions, load};
use micrograph::segment::{SegmentSettings, segment_region};

fn main() {
    let path = std::env::args().nth(1).unwrap();
    let start = Instant::now();
    let m = load(std::path::Path::new(&path), &LoadOptions::default()).unwrap();
    println!("load            {:8.3} s", start.elapsed().as_secs_f64());
    let t = Instant::now();
    let plane = m.into_gray_plane();
    println!("plane           {:8.3} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let progress = move |f: f32| {
        println!("  progress {f:.1} at {:8.3} s", t.elapsed().as_secs_f64());
    };
    let ctl = Control {
        cancel: None,
        progress: Some(&progress),
    };
    // No region of interest: the whole image, no mask (as the CLI without --roi).
    let seg = segment_region(&plane, None, &SegmentSettings::default(), &ctl).unwrap();
    println!(
        "segment total   {:8.3} s; fractions {:.4} {:.4}",
        t.elapsed().as_secs_f64(),
        seg.phases[0].area_fraction,
        seg.phases[1].area_fraction
    );
    println!("all             {:8.3} s", start.elapsed().as_secs_f64());
}
