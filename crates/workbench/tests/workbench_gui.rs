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
    let app = Workbench::new(WorkbenchOptions {
        project: Some(demo_copy(name)),
        remember_recent: false,
        run_on_open: false,
    });
    Harness::builder()
        .with_size(vec2(1500.0, 940.0))
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

#[test]
fn every_button_and_menu_item_can_be_pressed_without_a_panic() {
    let mut h = harness("smoke");
    h.state_mut().edit(Command::SetDraws(50));
    settle(&mut h, Duration::from_secs(120));
    for stage in Stage::ALL {
        h.get_by_label(stage.label()).click();
        settle(&mut h, Duration::from_secs(120));
        let labels: Vec<String> = h
            .query_all_by_role(egui::accesskit::Role::Button)
            .filter_map(|n| n.accesskit_node().label())
            .collect();
        for label in labels {
            // The system file dialog is left alone (no desktop here), and so is reopening the
            // bundled demo (a later Save would write into the repository).
            if label.contains("Browse") || label.contains("demo project") {
                continue;
            }
            let found = h
                .query_all_by_label(&label)
                .next()
                .map(|node| node.click())
                .is_some();
            if found {
                h.step();
            }
        }
        settle(&mut h, Duration::from_secs(300));
    }
    for menu in ["File", "Edit", "View"] {
        h.get_by_label(menu).click();
        h.run_ok();
    }
}
