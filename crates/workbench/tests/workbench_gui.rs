//! The real workbench driven headlessly with egui_kittest: widgets found by their labels,
//! clicked, and the application state checked afterwards. Each test works on a copy of the
//! bundled demo project in a temporary folder, so saves and autosaves never touch the repository.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use egui::{Key, Modifiers, vec2};
use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use micrograph::segment::LevelChoice;
use project::figure::FigureKind;
use workbench::command::Command;
use workbench::document::{GrainRef, MicrographRef};
use workbench::{Stage, Workbench, WorkbenchOptions};

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("make the temporary folder");
    for entry in std::fs::read_dir(from).expect("read the demo folder") {
        let entry = entry.expect("demo entry");
        let target = to.join(entry.file_name());
        if entry.path().is_dir() {
            copy_dir(&entry.path(), &target);
        } else if !entry.file_name().to_string_lossy().ends_with(".autosave") {
            std::fs::copy(entry.path(), &target).expect("copy a demo file");
        }
    }
}

/// A fresh copy of the demo project; returns its project file.
fn demo_copy(name: &str) -> PathBuf {
    let demo = workbench::demo_project_path();
    let folder = demo.parent().expect("demo folder");
    let to = std::env::temp_dir().join(format!("consolute-wb-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&to);
    copy_dir(folder, &to);
    to.join("project.json")
}

fn harness(name: &str) -> Harness<'static, Workbench> {
    harness_sized(name, vec2(1500.0, 940.0))
}

fn harness_sized(name: &str, size: egui::Vec2) -> Harness<'static, Workbench> {
    harness_at(demo_copy(name), size)
}

fn harness_at(project: PathBuf, size: egui::Vec2) -> Harness<'static, Workbench> {
    let app = Workbench::new(WorkbenchOptions {
        project: Some(project),
        remember_recent: false,
        run_on_open: false,
    });
    Harness::builder()
        .with_size(size)
        .with_context_setup(workbench::install_fonts)
        .build_ui_state(|ui, app: &mut Workbench| app.ui_root(ui), app)
}

/// Step until no job is running (the jobs run on their own threads).
fn settle(h: &mut Harness<'_, Workbench>, limit: Duration) {
    let start = Instant::now();
    h.step();
    while h.state().busy() {
        assert!(
            start.elapsed() < limit,
            "jobs still running after {limit:?}"
        );
        std::thread::sleep(Duration::from_millis(20));
        h.step();
    }
    h.step();
    h.step();
}

#[test]
fn selecting_a_grain_shows_its_result_card_and_stages_open_by_label() {
    let mut h = harness("select");
    h.run_ok();
    // The demo opens on its first grain.
    assert_eq!(
        h.state().selected_grain(),
        Some(GrainRef {
            sample: 0,
            grain: 0
        })
    );
    h.get_by_label("g2").click();
    h.run_ok();
    assert_eq!(
        h.state().selected_grain(),
        Some(GrainRef {
            sample: 0,
            grain: 1
        })
    );
    // The card names the grain (the route bar does too).
    assert!(h.query_all_by_label("TM-01 / g2").count() >= 1);
    for stage in [
        Stage::Image,
        Stage::Analyses,
        Stage::Bulk,
        Stage::Temperature,
        Stage::Phases,
    ] {
        h.get_by_label(stage.label()).click();
        h.run_ok();
        assert_eq!(
            h.state().stage(),
            stage,
            "clicking {} opens it",
            stage.label()
        );
    }
    // The pyroxene grains are in the tree too.
    h.get_by_label("p1").click();
    h.run_ok();
    assert_eq!(
        h.state().selected_grain(),
        Some(GrainRef {
            sample: 2,
            grain: 0
        })
    );
}

#[test]
fn moving_a_level_changes_the_fractions_and_undo_restores_them() {
    let mut h = harness("level");
    h.get_by_label("Phases").click();
    settle(&mut h, Duration::from_secs(120));
    let before = h
        .state()
        .shown_fractions()
        .expect("fractions shown once classified");
    assert_eq!(before.len(), 2);
    // The fractions of the two phases cover the measured area.
    assert!(
        (before.iter().sum::<f64>() - 1.0).abs() < 1e-9,
        "{before:?}"
    );
    let at = MicrographRef {
        grain: GrainRef {
            sample: 0,
            grain: 0,
        },
        micrograph: 0,
    };
    let handle = h.state().level_handle_pos(0).expect("level drawn");

    // Drag level 1 to the right: more pixels fall below it, so the dark class grows.
    h.drag_at(handle);
    h.step();
    h.hover_at(handle + vec2(15.0, 0.0));
    h.step();
    h.hover_at(handle + vec2(40.0, 0.0));
    h.step();
    let live = h
        .state()
        .shown_fractions()
        .expect("fractions while dragging");
    h.drop_at(handle + vec2(40.0, 0.0));
    h.step();
    let after = h
        .state()
        .shown_fractions()
        .expect("fractions after the drag");
    // The demo's class 1 (dark) is the lamella phase, listed second in the grain.
    assert!(
        live[1] > before[1] + 0.005,
        "live {live:?} before {before:?}"
    );
    assert!(
        after[1] > before[1] + 0.005,
        "after {after:?} before {before:?}"
    );
    let spec = h
        .state()
        .document()
        .micrograph(at)
        .expect("micrograph")
        .clone();
    assert!(
        matches!(spec.segmentation.levels, LevelChoice::Manual(_)),
        "{:?}",
        spec.segmentation.levels
    );
    // The new fraction is on screen.
    let text = format!("lamella: {:.1} %", after[1] * 100.0);
    h.get_by_label(&text);
    settle(&mut h, Duration::from_secs(120));

    // Undo (Ctrl+Z) brings back the automatic levels and the fractions.
    h.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    settle(&mut h, Duration::from_secs(120));
    let spec = h
        .state()
        .document()
        .micrograph(at)
        .expect("micrograph")
        .clone();
    assert!(matches!(
        spec.segmentation.levels,
        LevelChoice::OtsuMidpoint
    ));
    let undone = h.state().shown_fractions().expect("fractions after undo");
    for (a, b) in undone.iter().zip(&before) {
        // Same classification, same histogram: the same numbers.
        assert!((a - b).abs() < 1e-12, "undone {undone:?} before {before:?}");
    }
    // Redo from the Edit menu.
    h.get_by_label("Edit").click();
    h.run_ok();
    h.get_by_label_contains("Redo set levels").click();
    settle(&mut h, Duration::from_secs(120));
    let redone = h.state().shown_fractions().expect("fractions after redo");
    assert!((redone[1] - after[1]).abs() < 1e-12);
}

#[test]
fn computing_gives_temperatures_with_intervals() {
    let mut h = harness("run");
    // Fewer draws keep the test short; the computation is the real one.
    h.state_mut().edit(Command::SetDraws(100));
    h.run_ok();
    // The run bar and the result card both offer it.
    h.query_all_by_label("▶ Compute all grains")
        .next()
        .expect("a compute button")
        .click();
    settle(&mut h, Duration::from_secs(600));
    let results = h.state().results().expect("results");
    assert_eq!(results.grains.len() + results.failures.len(), 5);
    let g1 = results
        .grains
        .iter()
        .find(|g| g.sample == "TM-01" && g.grain == "g1")
        .expect("TM-01/g1 computed");
    let t = g1.min_temperature().expect("a minimum temperature");
    assert!(t.p2_5 <= t.median && t.median <= t.p97_5);
    // The card shows it with its interval.
    h.get_by_label(&format!("{:.0} °C", t.median));
    h.get_by_label(&format!("95 % interval {:.0}–{:.0} °C", t.p2_5, t.p97_5));
    // The tree shows the grain's minimum temperature.
    assert!(
        h.query_all_by_label(&format!("≥ {:.0} °C", t.median))
            .count()
            >= 1
    );
    // The Temperature stage draws the grain's figures; one exports to a file.
    h.get_by_label("Temperature").click();
    settle(&mut h, Duration::from_secs(300));
    assert!(h.state().figures_ready());
    let out = std::env::temp_dir().join(format!("consolute-wb-{}-tx.svg", std::process::id()));
    h.state_mut().export_figure(FigureKind::Solvus, &out);
    let svg = std::fs::read_to_string(&out).expect("figure written");
    assert!(svg.starts_with("<svg"), "{}", h.state().status());
    let png = out.with_extension("png");
    h.state_mut().export_figure(FigureKind::Histogram, &png);
    let bytes = std::fs::read(&png).expect("png written");
    assert_eq!(&bytes[1..4], b"PNG");
    // Editing the pressure marks the results as out of date.
    h.state_mut().edit(Command::SetPressure(2.0));
    h.run_ok();
    h.get_by_label("results are from before the last edit");
}

#[test]
fn saving_writes_the_edit_atomically_and_clears_the_edited_mark() {
    let mut h = harness("save");
    h.state_mut().edit(Command::SetPressure(3.5));
    h.run_ok();
    assert!(h.state().document().dirty);
    h.key_press_modifiers(Modifiers::COMMAND, Key::S);
    h.run_ok();
    assert!(
        !h.state().document().dirty,
        "status: {}",
        h.state().status()
    );
    let path = h.state().document().path.clone().expect("path");
    let back = project::load_project(&path).expect("saved project reads back");
    assert_eq!(back.settings.pressure_kbar, 3.5);
}

/// What the smoke test presses: buttons (egui's menu entries, combo-box choices and selectable
/// labels are buttons too) and menu items.
fn pressables(h: &Harness<'_, Workbench>) -> Vec<(egui::accesskit::NodeId, String)> {
    use egui::accesskit::Role;
    h.query_all_by(|n| {
        matches!(
            n.role(),
            Role::Button
                | Role::MenuItem
                | Role::MenuItemCheckBox
                | Role::MenuItemRadio
                | Role::ComboBox
        ) && !n.is_disabled()
    })
    .map(|n| {
        let n = n.accesskit_node();
        (n.locate().0, n.label().unwrap_or_default())
    })
    .collect()
}

/// Press the node with this id (through accesskit, so a window in front does not take the
/// click); false when it is not on screen now.
fn press(h: &mut Harness<'_, Workbench>, id: egui::accesskit::NodeId) -> bool {
    let found = h
        .query_by(|n| n.locate().0 == id)
        .map(|n| n.click_accesskit())
        .is_some();
    if found {
        h.step();
        h.step();
    }
    found
}

#[test]
fn every_button_and_menu_item_can_be_pressed_without_a_panic() {
    // Left alone: "Browse…" opens the system's file dialog (a native window; none here), and
    // "Open the demo project" reopens the bundled demo in the repository, where a later press
    // of Save would write. The workbench has no quit item; the close prompt's buttons appear
    // only when the window is asked to close, which this test does not do.
    let skipped = |label: &str| label.contains("Browse") || label.contains("demo project");
    // One micrograph of the selected grain is missing, so the relink actions are there too.
    let project_file = demo_copy("smoke");
    let images = project_file.parent().expect("folder").join("images");
    std::fs::rename(images.join("tm01_g1_b.png"), images.join("elsewhere.png"))
        .expect("move a micrograph");
    let mut h = harness_at(project_file, vec2(1500.0, 940.0));
    h.state_mut().edit(Command::SetDraws(50));
    settle(&mut h, Duration::from_secs(120));
    let started = Instant::now();
    let mut pressed = std::collections::BTreeSet::new();
    for stage in Stage::ALL {
        let reset = |h: &mut Harness<'_, Workbench>| {
            h.key_press(Key::Escape);
            h.state_mut().open_stage(stage);
            h.step();
            h.step();
        };
        reset(&mut h);
        // Each entry: the presses that make it appear (a menu, a combo box, a prompt), then it.
        let mut queue: Vec<(
            Vec<egui::accesskit::NodeId>,
            egui::accesskit::NodeId,
            String,
        )> = pressables(&h)
            .into_iter()
            .map(|(id, label)| (Vec::new(), id, label))
            .collect();
        let mut seen: std::collections::HashSet<egui::accesskit::NodeId> =
            queue.iter().map(|(_, id, _)| *id).collect();
        let mut i = 0;
        while i < queue.len() {
            let (path, id, label) = queue[i].clone();
            i += 1;
            if skipped(&label) {
                continue;
            }
            reset(&mut h);
            if !path.iter().all(|p| press(&mut h, *p)) {
                continue;
            }
            let before: std::collections::HashSet<_> =
                pressables(&h).into_iter().map(|(id, _)| id).collect();
            if !press(&mut h, id) {
                continue;
            }
            pressed.insert(label.clone());
            // What the press opened (menu entries, choices, a prompt's buttons) is pressed too,
            // one level deep.
            if path.is_empty() {
                for (new, label) in pressables(&h) {
                    if !before.contains(&new) && seen.insert(new) {
                        queue.push((vec![id], new, label));
                    }
                }
            }
        }
        settle(&mut h, Duration::from_secs(300));
    }
    // The menus' entries were reached, not only the buttons always on screen.
    // (A menu entry's label ends with its shortcut.)
    for entry in [
        "Open… Ctrl+O",
        "Save Ctrl+S",
        "Save as… Ctrl+Shift+S",
        "Import spot analyses…",
        "Export report…",
        "Undo 50 draws Ctrl+Z",
        "Relink…",
        "Relink",
        "Light",
        "Dark",
    ] {
        assert!(pressed.contains(entry), "{entry} not pressed: {pressed:?}");
    }
    eprintln!(
        "pressed {} distinct buttons and menu items in {:.1} s",
        pressed.len(),
        started.elapsed().as_secs_f64()
    );
}

/// A click at a screen position (press and release without moving).
fn click_at(h: &mut Harness<'_, Workbench>, pos: egui::Pos2) {
    h.hover_at(pos);
    h.step();
    h.drag_at(pos);
    h.step();
    h.drop_at(pos);
    h.step();
    h.step();
}

fn first_micrograph() -> MicrographRef {
    MicrographRef {
        grain: GrainRef {
            sample: 0,
            grain: 0,
        },
        micrograph: 0,
    }
}

#[test]
fn tracing_a_polygon_changes_the_fractions_by_its_area_and_undo_takes_it_back() {
    let mut h = harness("trace");
    h.get_by_label("Phases").click();
    settle(&mut h, Duration::from_secs(120));
    let before = h.state().shown_fractions().expect("fractions shown");
    let (_, measured) = h.state().shown_pixel_counts().expect("classified");
    // The rectangle 200..280 x 150..210 px, corners on pixel edges: by the pixel-centre rule
    // (micrograph::roi; Foley et al. 1990, §3.6) it holds the 80 x 60 pixels whose centres are
    // inside, its shoelace area. Those that were host (and measured) become lamella.
    let (x0, y0, x1, y1) = (200u32, 150u32, 280u32, 210u32);
    let host_class = h
        .state()
        .document()
        .micrograph(first_micrograph())
        .expect("micrograph")
        .class_phases
        .iter()
        .position(|p| p == "host")
        .expect("a host class") as u8;
    let mut host_inside = 0u64;
    for y in y0..y1 {
        for x in x0..x1 {
            if h.state().automatic_class_at(x, y) == Some(host_class) {
                host_inside += 1;
            }
        }
    }
    assert!(host_inside > 1000, "{host_inside}");
    // Polygon tool, phase "lamella" (the buttons of the By hand section).
    h.get_by_label("Polygon").click();
    h.run_ok();
    h.get_by_label_contains("■ lamella").click();
    h.run_ok();
    let corners = [[x0, y0], [x1, y0], [x1, y1], [x0, y1]];
    for c in corners {
        let p = h
            .state_mut()
            .canvas()
            .screen_pos([f64::from(c[0]), f64::from(c[1])])
            .expect("canvas drawn");
        click_at(&mut h, p);
    }
    h.key_press(Key::Enter);
    settle(&mut h, Duration::from_secs(120));
    let spec = h
        .state()
        .document()
        .micrograph(first_micrograph())
        .expect("micrograph")
        .clone();
    assert_eq!(spec.hand_edits.len(), 1, "status: {}", h.state().status());
    let project::EditShape::Polygon { vertices } = &spec.hand_edits[0].shape else {
        panic!("a polygon");
    };
    // The clicks land on the corners to within a screen pixel's worth of image pixels.
    let zoom = h
        .state_mut()
        .canvas()
        .screen_pos([1.0, 0.0])
        .zip(h.state_mut().canvas().screen_pos([0.0, 0.0]))
        .map(|(a, b)| a.x - b.x)
        .expect("zoom");
    for (v, c) in vertices.iter().zip(corners) {
        assert!(
            (v[0] - f64::from(c[0])).abs() <= 1.0 / f64::from(zoom)
                && (v[1] - f64::from(c[1])).abs() <= 1.0 / f64::from(zoom),
            "{v:?} vs {c:?}"
        );
    }
    // Move the corners to the exact pixel edges the count above used (a click cannot be placed
    // more finely than a screen point), as one undoable edit.
    h.state_mut().edit(Command::RemoveHandEdit {
        at: first_micrograph(),
        index: 0,
    });
    h.state_mut().edit(Command::AddHandEdit {
        at: first_micrograph(),
        edit: project::HandEdit {
            shape: project::EditShape::Polygon {
                vertices: corners
                    .iter()
                    .map(|c| [f64::from(c[0]), f64::from(c[1])])
                    .collect(),
            },
            phase: Some("lamella".into()),
        },
    });
    settle(&mut h, Duration::from_secs(120));
    let after = h
        .state()
        .shown_fractions()
        .expect("fractions after the edit");
    let (_, measured_after) = h.state().shown_pixel_counts().expect("classified");
    assert_eq!(measured_after, measured);
    // Lamella is the grain's second phase; it gains exactly the host pixels inside (1e-12:
    // sums of the same integers in double precision).
    let expected = before[1] + host_inside as f64 / measured as f64;
    assert!(
        (after[1] - expected).abs() < 1e-12,
        "after {after:?} expected {expected}"
    );
    // Undo (Ctrl+Z) removes the edit: the fractions are those before.
    h.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    settle(&mut h, Duration::from_secs(120));
    let undone = h.state().shown_fractions().expect("fractions after undo");
    assert!(
        (undone[1] - before[1]).abs() < 1e-12,
        "{undone:?} {before:?}"
    );
    assert!(
        h.state()
            .document()
            .micrograph(first_micrograph())
            .expect("micrograph")
            .hand_edits
            .is_empty()
    );
}

#[test]
fn an_exclude_polygon_traced_on_the_image_leaves_its_pixels_out_and_vertices_edit() {
    let mut h = harness("region");
    h.get_by_label("Image").click();
    settle(&mut h, Duration::from_secs(120));
    let (region_before, _) = h.state().shown_pixel_counts().expect("classified");
    h.get_by_label("Exclude polygon").click();
    h.run_ok();
    let corners = [
        [100.0, 300.0],
        [160.0, 300.0],
        [160.0, 340.0],
        [100.0, 340.0],
    ];
    for c in corners {
        let p = h.state_mut().canvas().screen_pos(c).expect("canvas drawn");
        click_at(&mut h, p);
    }
    // Clicking the first corner again closes the polygon.
    let first = h
        .state_mut()
        .canvas()
        .screen_pos(corners[0])
        .expect("canvas");
    click_at(&mut h, first);
    settle(&mut h, Duration::from_secs(120));
    let spec = h
        .state()
        .document()
        .micrograph(first_micrograph())
        .expect("micrograph")
        .clone();
    let added = spec
        .region
        .exclude
        .last()
        .expect("an exclude polygon")
        .clone();
    assert_eq!(added.0.len(), 4, "status: {}", h.state().status());
    // The region loses exactly the pixels of the traced polygon that were in it, counted by
    // rasterising the stored polygon with the old region (pixel-centre rule, micrograph::roi).
    let mut old = spec.region.clone();
    old.exclude.pop();
    let (w, hgt) = (640, 480);
    let old_mask = old.rasterise(w, hgt).expect("region");
    let poly_mask = micrograph::roi::Roi {
        include: vec![added.clone()],
        exclude: vec![],
    }
    .rasterise(w, hgt)
    .expect("polygon");
    let inside = old_mask
        .bits
        .iter()
        .zip(&poly_mask.bits)
        .filter(|(a, b)| **a && **b)
        .count() as u64;
    // About its shoelace area: 60 x 40 px, give or take half its perimeter (the pixel-centre
    // rule's bound) plus a screen point of click placement on each side.
    assert!((inside as f64 - 2400.0).abs() < 200.0, "{inside}");
    let (region_after, _) = h.state().shown_pixel_counts().expect("classified");
    assert_eq!(region_before - region_after, inside);
    // Edit vertices: drag the first corner 10 px left.
    h.get_by_label("Edit vertices").click();
    h.run_ok();
    let from = h
        .state_mut()
        .canvas()
        .screen_pos(added.0[0])
        .expect("canvas");
    let to = h
        .state_mut()
        .canvas()
        .screen_pos([added.0[0][0] - 10.0, added.0[0][1]])
        .expect("canvas");
    h.hover_at(from);
    h.step();
    h.drag_at(from);
    h.step();
    h.hover_at(from + (to - from) * 0.5);
    h.step();
    h.hover_at(to);
    h.step();
    h.drop_at(to);
    settle(&mut h, Duration::from_secs(120));
    let moved = h
        .state()
        .document()
        .micrograph(first_micrograph())
        .expect("micrograph")
        .region
        .exclude
        .last()
        .expect("polygon")
        .0[0];
    assert!((moved[0] - (added.0[0][0] - 10.0)).abs() < 1.0, "{moved:?}");
    // Right-click a corner: it goes.
    let corner = h
        .state_mut()
        .canvas()
        .screen_pos(added.0[2])
        .expect("canvas");
    h.hover_at(corner);
    h.step();
    h.event(egui::Event::PointerButton {
        pos: corner,
        button: egui::PointerButton::Secondary,
        pressed: true,
        modifiers: Modifiers::NONE,
    });
    h.step();
    h.event(egui::Event::PointerButton {
        pos: corner,
        button: egui::PointerButton::Secondary,
        pressed: false,
        modifiers: Modifiers::NONE,
    });
    settle(&mut h, Duration::from_secs(120));
    let left = h
        .state()
        .document()
        .micrograph(first_micrograph())
        .expect("micrograph")
        .region
        .exclude
        .last()
        .expect("polygon")
        .0
        .len();
    assert_eq!(left, 3);
}

#[test]
fn leaving_out_a_spot_and_correcting_another_change_the_bulk() {
    let mut h = harness("spots");
    h.state_mut().edit(Command::SetDraws(50));
    h.query_all_by_label("▶ Compute all grains")
        .next()
        .expect("a compute button")
        .click();
    settle(&mut h, Duration::from_secs(600));
    let bulk = |h: &Harness<'_, Workbench>| {
        h.state()
            .results()
            .and_then(|r| {
                r.grains
                    .iter()
                    .find(|g| g.sample == "TM-01" && g.grain == "g1")
            })
            .map(|g| (g.reintegration.molar[1], g.phases[0].spots_used.clone()))
            .expect("TM-01/g1 computed")
    };
    let (or0, used0) = bulk(&h);
    assert!(used0.contains(&"g1-h1".to_string()));
    h.get_by_label("Analyses").click();
    h.run_ok();
    // Untick spot g1-h1 and compute the grain again.
    h.get_by_label("g1-h1").click();
    h.run_ok();
    assert!(
        h.state()
            .document()
            .grain(GrainRef::default())
            .expect("grain")
            .excluded_spots
            == vec!["g1-h1".to_string()]
    );
    h.get_by_label("Bulk").click();
    h.run_ok();
    h.get_by_label("▶ Compute this grain").click();
    settle(&mut h, Duration::from_secs(300));
    let (or1, used1) = bulk(&h);
    assert!(!used1.contains(&"g1-h1".to_string()));
    assert!((or1 - or0).abs() > 1e-6, "{or0} {or1}");
    // Correct the K2O of g1-h2 (14.72 in the file) to 14.52 wt %: while the spot stays in use,
    // less K in the host means less Or in the bulk.
    h.get_by_label("Analyses").click();
    h.run_ok();
    h.get_by_label("14.72").click();
    h.run_ok();
    h.key_press_modifiers(Modifiers::COMMAND, Key::A);
    h.event(egui::Event::Text("14.52".into()));
    h.key_press(Key::Enter);
    h.run_ok();
    let g = h
        .state()
        .document()
        .grain(GrainRef::default())
        .expect("grain");
    assert_eq!(g.spot_edit("g1-h2", mineral::Oxide::K2O), Some(14.52));
    h.get_by_label("Bulk").click();
    h.run_ok();
    h.get_by_label("▶ Compute this grain").click();
    settle(&mut h, Duration::from_secs(300));
    let (or2, used2) = bulk(&h);
    assert!(used2.contains(&"g1-h2".to_string()), "{used2:?}");
    assert!(or2 < or1 - 1e-5, "{or1} {or2}");
    // Both edits undo.
    h.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    h.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    h.run_ok();
    let g = h
        .state()
        .document()
        .grain(GrainRef::default())
        .expect("grain");
    assert!(g.excluded_spots.is_empty() && g.spot_edits.is_empty());
}

#[test]
fn points_are_counted_with_number_keys_and_reported_with_their_interval() {
    // A tall window, so that the point-count section of the Phases controls is in view.
    let mut h = harness_sized("points", vec2(1500.0, 1700.0));
    h.get_by_label("Phases").click();
    settle(&mut h, Duration::from_secs(120));
    h.get_by_label("Regular grid").click();
    settle(&mut h, Duration::from_secs(60));
    h.get_by_label("Count points").click();
    h.run_ok();
    // With the cursor over the canvas away from any point, each key marks the next point.
    let centre = h
        .state_mut()
        .canvas()
        .screen_pos([3.0, 3.0])
        .expect("canvas");
    h.hover_at(centre);
    h.step();
    for key in [Key::Num1, Key::Num1, Key::Num2, Key::Num0] {
        h.key_press(key);
        h.step();
    }
    h.run_ok();
    let count = h
        .state()
        .document()
        .micrograph(first_micrograph())
        .expect("micrograph")
        .point_count
        .clone()
        .expect("a point count");
    let phases: Vec<Option<String>> = count.marks.iter().map(|m| m.phase.clone()).collect();
    assert_eq!(
        phases,
        vec![
            Some("host".into()),
            Some("host".into()),
            Some("lamella".into()),
            None
        ]
    );
    // 2 host of 3 counted: 0.667 with the Wilson interval 0.208-0.939 (Wilson 1927 formula;
    // SciPy binomtest(2, 3).proportion_ci(method="wilson") gives 0.2077, 0.9385).
    h.get_by_label("0.667 (0.208–0.939)");
}

/// The 1-based line of `text` holding `needle`.
fn line_of(text: &str, needle: &str) -> usize {
    let at = text.find(needle).expect("the needle is in the text");
    text[..at].matches('\n').count() + 1
}

#[test]
fn a_missing_micrograph_is_reported_relinked_computed_and_the_relink_undone() {
    let project_file = demo_copy("relink");
    let folder = project_file.parent().expect("folder").to_path_buf();
    // TM-01 / g2 has one micrograph; it is moved out of images/ as if reorganised on disk.
    std::fs::create_dir_all(folder.join("moved")).expect("make moved/");
    let new_place = folder.join("moved").join("tm01_g2_a.png");
    std::fs::rename(folder.join("images").join("tm01_g2_a.png"), &new_place)
        .expect("move the micrograph");
    let text = std::fs::read_to_string(&project_file).expect("project text");
    let line = line_of(&text, "\"images/tm01_g2_a.png\"");
    let mut h = harness_at(project_file.clone(), vec2(1500.0, 940.0));
    h.state_mut().edit(Command::SetDraws(50));
    h.run_ok();
    // Listed once, with its path and the project line naming it, in the strip and the tree.
    let missing = h.state().missing_files().to_vec();
    assert_eq!(missing.len(), 1, "{missing:?}");
    let message = h
        .get_by_label_contains(&format!("(project line {line})"))
        .accesskit_node()
        .label()
        .expect("message text");
    assert!(message.contains("TM-01 / g2"), "{message}");
    assert!(message.contains("tm01_g2_a.png not found"), "{message}");
    assert_eq!(h.query_all_by_label("✖ missing").count(), 1);
    // With the grain selected and computed (it stops at its missing micrograph), the strip
    // does not repeat the missing-file message as a failure: the path is in one message. (The
    // result card explains the missing result in its own words; the strip's messages are the
    // buttons.)
    h.get_by_label("g2").click();
    h.run_ok();
    h.query_all_by_label("▶ Compute all grains")
        .next()
        .expect("compute button")
        .click();
    settle(&mut h, Duration::from_secs(600));
    assert!(
        h.state().results().is_some_and(|r| r
            .failures
            .iter()
            .any(|f| f.sample == "TM-01" && f.grain == "g2")),
        "{}",
        h.state().status()
    );
    let in_the_strip = h
        .query_all_by_label_contains("tm01_g2_a.png")
        .filter(|n| n.accesskit_node().role() == egui::accesskit::Role::Button)
        .count();
    assert_eq!(in_the_strip, 1, "{}", h.state().status());
    // Relink through the typed path of the prompt (no file dialog here).
    h.query_all_by_label("Relink…")
        .next()
        .expect("a relink action")
        .click();
    h.run_ok();
    h.get_by_label("Where the micrograph is now:").focus();
    h.run_ok();
    h.key_press_modifiers(Modifiers::COMMAND, Key::A);
    h.event(egui::Event::Text(new_place.display().to_string()));
    h.run_ok();
    h.get_by_role_and_label(egui::accesskit::Role::Button, "Relink")
        .click();
    settle(&mut h, Duration::from_secs(600));
    let g2 = GrainRef {
        sample: 0,
        grain: 1,
    };
    let stored = |h: &Harness<'_, Workbench>| {
        h.state()
            .document()
            .micrograph(MicrographRef {
                grain: g2,
                micrograph: 0,
            })
            .expect("micrograph")
            .path
            .clone()
    };
    assert_eq!(
        stored(&h),
        Path::new("moved").join("tm01_g2_a.png"),
        "{}",
        h.state().status()
    );
    assert!(h.state().missing_files().is_empty());
    assert!(h.query_by_label_contains("not found").is_none());
    assert_eq!(h.query_all_by_label("✖ missing").count(), 0);
    // The grain is computed from the relinked micrograph.
    let results = h.state().results().expect("results");
    let r = results
        .grains
        .iter()
        .find(|g| g.sample == "TM-01" && g.grain == "g2")
        .expect("TM-01/g2 computed");
    let t = r.min_temperature().expect("a minimum temperature");
    assert!(t.p2_5 <= t.median && t.median <= t.p97_5);
    assert!(h.state().classification_current());
    // Undo puts the old path back, and the message with it.
    h.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    h.run_ok();
    assert_eq!(stored(&h), Path::new("images").join("tm01_g2_a.png"));
    assert_eq!(h.state().missing_files().len(), 1);
    h.get_by_label_contains(&format!("(project line {line})"));
}

#[test]
fn a_failed_save_says_why_and_keeps_the_document_unsaved() {
    let mut h = harness("save-fails");
    h.state_mut().edit(Command::SetPressure(4.0));
    h.run_ok();
    let before = h.state().document().path.clone();
    // Save as into a folder that does not exist.
    let bad = std::env::temp_dir()
        .join(format!(
            "consolute-wb-{}-no-such-folder",
            std::process::id()
        ))
        .join("project.json");
    h.key_press_modifiers(Modifiers::COMMAND.plus(Modifiers::SHIFT), Key::S);
    h.run_ok();
    h.get_by_label("Project file (.json):").focus();
    h.run_ok();
    h.key_press_modifiers(Modifiers::COMMAND, Key::A);
    h.event(egui::Event::Text(bad.display().to_string()));
    h.run_ok();
    h.get_by_role_and_label(egui::accesskit::Role::Button, "Save")
        .click();
    h.run_ok();
    // The project crate's own message for that save (ProjectError::Save), shown in full.
    let expected =
        project::save_project(&h.state().document().project, &bad).expect_err("no such folder");
    assert!(
        matches!(expected, project::ProjectError::Save { .. }),
        "{expected:?}"
    );
    let status = h.state().status().to_string();
    assert!(status.contains(&expected.to_string()), "{status}");
    h.get_by_label_contains("not saved:");
    assert!(h.state().document().dirty);
    assert_eq!(h.state().document().path, before);
    assert!(!bad.exists());
    h.get_by_label_contains("(edited)");
}

#[test]
fn a_fitted_image_is_fitted_again_when_the_canvas_changes_size_and_a_chosen_zoom_is_kept() {
    // Screen points per image pixel, from two image points one pixel apart.
    let zoom = |h: &mut Harness<'_, Workbench>| {
        let c = h.state_mut().canvas();
        c.screen_pos([1.0, 0.0])
            .zip(c.screen_pos([0.0, 0.0]))
            .map(|(a, b)| a.x - b.x)
            .expect("canvas drawn")
    };
    let mut h = harness_sized("refit", vec2(1500.0, 940.0));
    settle(&mut h, Duration::from_secs(120));
    let wide = zoom(&mut h);
    // A narrower window leaves a narrower canvas: the whole image is fitted into it again
    // (the fit is the smaller of width and height ratios, so it cannot grow).
    h.set_size(vec2(1100.0, 940.0));
    settle(&mut h, Duration::from_secs(120));
    let narrow = zoom(&mut h);
    assert!(narrow < wide * 0.95, "zoom {wide} -> {narrow}");
    // After the user zooms, a resize keeps their zoom.
    h.state_mut().canvas().zoom_by(2.0);
    settle(&mut h, Duration::from_secs(120));
    let chosen = zoom(&mut h);
    assert!(
        (chosen - 2.0 * narrow).abs() < 1e-3 * chosen,
        "{narrow} -> {chosen}"
    );
    h.set_size(vec2(1500.0, 940.0));
    settle(&mut h, Duration::from_secs(120));
    assert!((zoom(&mut h) - chosen).abs() < 1e-3 * chosen);
}

#[test]
fn each_stage_with_a_canvas_shows_the_whole_micrograph_at_first() {
    // The fitted view: both far corners of the image inside the canvas, on the Image stage and
    // on the Phases stage (whose controls panel leaves a narrower canvas), at two window sizes.
    for size in [vec2(1500.0, 940.0), vec2(1100.0, 800.0)] {
        let mut h = harness_sized("whole-image", size);
        settle(&mut h, Duration::from_secs(120));
        for stage in ["Image", "Phases"] {
            h.get_by_label(stage).click();
            settle(&mut h, Duration::from_secs(120));
            let c = h.state_mut().canvas();
            let rect = c.canvas_rect();
            let (w, hgt) = c.shown_size();
            let a = c.screen_pos([0.0, 0.0]).expect("drawn");
            let b = c.screen_pos([w as f64, hgt as f64]).expect("drawn");
            assert!(
                rect.expand(0.5).contains(a) && rect.expand(0.5).contains(b),
                "{stage} at {size:?}: image {a:?}-{b:?} outside the canvas {rect:?}"
            );
            // And the canvas is not under the result card on the right.
            let card_left = h.get_by_label("Result").rect().left();
            assert!(
                rect.right() <= card_left,
                "{stage} at {size:?}: canvas {rect:?} runs under the card at x = {card_left}"
            );
        }
    }
}
