//! CPU frame time of the workbench with an 8192 x 8192 16-bit micrograph open, while the view
//! pans and zooms: the whole frame of the real application (layout, widgets, tile selection,
//! the shapes of the overlay, region and scale bar) plus tessellation, which is all the CPU
//! does before the renderer draws. Texture uploads happen once, when the image is loaded, and
//! are not part of a frame.
//!
//!     cargo bench -p workbench --bench frame
//!
//! The image (a synthetic exsolved grain) is written once to the temporary folder and reused;
//! loading and classifying it takes a while before the first measurement.
#![allow(clippy::unwrap_used)]

use std::path::PathBuf;
use std::time::{Duration, Instant};

use criterion::{Criterion, criterion_group, criterion_main};
use egui::{Event, MouseWheelUnit, PointerButton, Pos2, RawInput, Rect, pos2, vec2};
use micrograph::synthetic::SyntheticSpec;
use project::PointGrid;
use project::{Grain, MicrographSpec, PhaseSpec, Project, Sample};
use reintegration::MineralSystem;
use workbench::command::Command;
use workbench::document::MicrographRef;
use workbench::{Stage, Tool, Workbench, WorkbenchOptions};

const SIZE: u32 = 8192;
const SCREEN: (f32, f32) = (1500.0, 940.0);

fn image_file() -> PathBuf {
    let path = std::env::temp_dir().join(format!("consolute-bench-{SIZE}.tif"));
    if !path.exists() {
        let f = f64::from(SIZE) / 256.0;
        let plane = SyntheticSpec {
            width: SIZE,
            height: SIZE,
            cracks: vec![(10.0 * f, 200.0 * f, 240.0 * f, 170.0 * f, 2.0)],
            pores: vec![(70.0 * f, 60.0 * f, 9.0 * f.sqrt())],
            supersample: 1,
            ..SyntheticSpec::default()
        }
        .generate()
        .plane(SIZE, SIZE, true)
        .unwrap();
        let img =
            image::ImageBuffer::<image::Luma<u16>, Vec<u16>>::from_raw(SIZE, SIZE, plane.data)
                .unwrap();
        let part = path.with_extension("part.tif");
        img.save(&part).unwrap();
        std::fs::rename(&part, &path).unwrap();
    }
    path
}

fn project_file() -> PathBuf {
    let dir = std::env::temp_dir().join(format!("consolute-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let mut p = Project::new("frame-time bench");
    p.samples.push(Sample {
        id: "S".into(),
        description: String::new(),
        grains: vec![Grain {
            id: "g".into(),
            system: MineralSystem::Feldspar,
            phases: vec![
                PhaseSpec {
                    label: "host".into(),
                    density_g_cm3: None,
                },
                PhaseSpec {
                    label: "lamella".into(),
                    density_g_cm3: None,
                },
            ],
            micrographs: vec![MicrographSpec {
                label: "big".into(),
                path: image_file(),
                pixel_size_um: Some(0.05),
                region: Default::default(),
                segmentation: Default::default(),
                class_phases: vec!["lamella".into(), "host".into()],
                hand_edits: Vec::new(),
                point_count: None,
            }],
            notes: String::new(),
            excluded_spots: Vec::new(),
            spot_edits: Vec::new(),
        }],
    });
    let file = dir.join("project.json");
    project::save_project(&p, &file).unwrap();
    file
}

fn input(events: Vec<Event>) -> RawInput {
    RawInput {
        screen_rect: Some(Rect::from_min_size(Pos2::ZERO, vec2(SCREEN.0, SCREEN.1))),
        max_texture_side: Some(16384),
        events,
        ..Default::default()
    }
}

/// One frame: the application's UI, then tessellation. Returns the primitives' count so the
/// work cannot be optimised away.
fn frame(ctx: &egui::Context, app: &mut Workbench, events: Vec<Event>) -> usize {
    let out = ctx.run_ui(input(events), |ui| app.ui_root(ui));
    ctx.tessellate(out.shapes, out.pixels_per_point).len()
}

fn open(stage: Stage, points: bool) -> (egui::Context, Workbench) {
    let ctx = egui::Context::default();
    workbench::install_fonts(&ctx);
    let mut app = Workbench::new(WorkbenchOptions {
        project: Some(project_file()),
        remember_recent: false,
        run_on_open: false,
    });
    app.open_stage(stage);
    if points {
        // A 100 px grid (6724 points) with every point marked, and the counting tool on: the
        // most shapes the canvas draws.
        let at = MicrographRef::default();
        app.edit(Command::SetPointGrid {
            at,
            grid: Some(PointGrid::Regular { spacing_px: 100.0 }),
        });
        for point in 0..6724 {
            app.edit(Command::MarkPoint {
                at,
                point,
                mark: Some(Some(
                    if point.is_multiple_of(3) {
                        "lamella"
                    } else {
                        "host"
                    }
                    .into(),
                )),
            });
        }
        app.canvas().set_tool(Tool::Points);
    }
    let start = Instant::now();
    frame(&ctx, &mut app, vec![]);
    while app.busy() || !app.classification_current() {
        assert!(
            start.elapsed() < Duration::from_secs(900),
            "the image did not load: {}",
            app.status()
        );
        std::thread::sleep(Duration::from_millis(50));
        frame(&ctx, &mut app, vec![]);
    }
    app.canvas().show_classes = true;
    for _ in 0..3 {
        frame(&ctx, &mut app, vec![]);
    }
    let (region, _) = app.shown_pixel_counts().expect("classified");
    assert_eq!(
        region,
        u64::from(SIZE) * u64::from(SIZE),
        "the whole image is the region"
    );
    eprintln!(
        "{stage:?} stage open on the {SIZE} x {SIZE} image after {:.1} s; {} primitives a frame",
        start.elapsed().as_secs_f64(),
        frame(&ctx, &mut app, vec![])
    );
    (ctx, app)
}

/// Pointer events of frame `i`: a drag across the canvas (pan), with a wheel step every
/// fourth frame that zooms in and out around the pointer.
fn events(app: &mut Workbench, i: usize) -> Vec<Event> {
    let centre = app
        .canvas()
        .screen_pos([f64::from(SIZE) / 2.0, f64::from(SIZE) / 2.0]);
    let c = centre.unwrap_or(pos2(SCREEN.0 / 2.0, SCREEN.1 / 2.0));
    let phase = i % 16;
    let dx = if phase < 8 { 6.0 } else { -6.0 };
    let p = c + vec2(dx * (phase % 8) as f32, 0.0);
    let mut e = vec![Event::PointerMoved(p)];
    if i.is_multiple_of(4) {
        let zoom_in = (i / 4) % 8 < 4;
        e.push(Event::MouseWheel {
            unit: MouseWheelUnit::Point,
            delta: vec2(0.0, if zoom_in { 120.0 } else { -120.0 }),
            modifiers: egui::Modifiers::NONE,
            phase: egui::TouchPhase::Move,
            source: egui::MouseWheelSource::Wheel,
        });
    }
    if phase == 0 {
        e.push(Event::PointerButton {
            pos: p,
            button: PointerButton::Primary,
            pressed: true,
            modifiers: egui::Modifiers::NONE,
        });
    }
    if phase == 15 {
        e.push(Event::PointerButton {
            pos: p,
            button: PointerButton::Primary,
            pressed: false,
            modifiers: egui::Modifiers::NONE,
        });
    }
    e
}

fn bench_frames(c: &mut Criterion) {
    let mut g = c.benchmark_group("frame_8192x8192_16bit_pan_zoom");
    g.sample_size(30);
    for (name, stage, points) in [
        ("image_stage", Stage::Image, false),
        ("phases_stage", Stage::Phases, false),
        ("phases_stage_6724_points", Stage::Phases, true),
    ] {
        let (ctx, mut app) = open(stage, points);
        let mut i = 0usize;
        g.bench_function(name, |b| {
            b.iter(|| {
                i += 1;
                let e = events(&mut app, i);
                frame(&ctx, &mut app, e)
            })
        });
    }
    g.finish();
}

criterion_group!(benches, bench_frames);
criterion_main!(benches);
