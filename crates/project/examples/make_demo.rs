//! Writes the images and the project file of the invented Tarn Moss demo
//! (`demo_projects/tarn_moss/`). Every number is invented. Run from the repository root:
//!
//!     cargo run -p project --example make_demo
#![allow(clippy::unwrap_used, clippy::print_stdout)]

use std::path::{Path, PathBuf};

use micrograph::roi::{Polygon, Roi};
use micrograph::segment::SegmentSettings;
use micrograph::synthetic::SyntheticSpec;
use project::{AnalysisFile, Grain, MicrographSpec, PhaseSpec, Project, Sample, save_project};
use reintegration::MineralSystem;

/// One invented micrograph: the lamella geometry and grey levels of its grain.
struct Shot {
    file: &'static str,
    period_px: f64,
    lamella_width_px: f64,
    angle_deg: f64,
    host_level: f64,
    lamella_level: f64,
    seed: u64,
}

fn write_image(dir: &Path, shot: &Shot) -> PathBuf {
    let spec = SyntheticSpec {
        width: 640,
        height: 480,
        period_px: shot.period_px,
        lamella_width_px: shot.lamella_width_px,
        angle_deg: shot.angle_deg,
        host_level: shot.host_level,
        lamella_level: shot.lamella_level,
        void_level: 0.06,
        blur_sigma_px: 1.2,
        noise_sigma: 0.015,
        gradient: 0.08,
        cracks: vec![(20.0, 400.0, 610.0, 330.0, 2.5)],
        pores: vec![(150.0, 110.0, 12.0), (480.0, 260.0, 7.0)],
        seed: shot.seed,
        ..SyntheticSpec::default()
    };
    let plane = spec.generate().plane(640, 480, true).unwrap();
    let img =
        image::ImageBuffer::<image::Luma<u16>, Vec<u16>>::from_raw(640, 480, plane.data).unwrap();
    let path = dir.join("images").join(shot.file);
    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
    img.save(&path).unwrap();
    println!(
        "{}: true lamella fraction {:.4} (construction)",
        path.display(),
        spec.true_lamella_fraction()
    );
    PathBuf::from("images").join(shot.file)
}

fn region() -> Roi {
    // The grain outline, inset from the image edge, with a polish scratch excluded.
    Roi {
        include: vec![Polygon(vec![
            [24.0, 30.0],
            [600.0, 18.0],
            [624.0, 250.0],
            [590.0, 462.0],
            [40.0, 455.0],
            [14.0, 240.0],
        ])],
        exclude: vec![Polygon(vec![
            [300.0, 200.0],
            [360.0, 196.0],
            [362.0, 214.0],
            [302.0, 218.0],
        ])],
    }
}

fn micrograph(dir: &Path, label: &str, shot: &Shot, class_phases: [&str; 2]) -> MicrographSpec {
    MicrographSpec {
        label: label.into(),
        path: write_image(dir, shot),
        pixel_size_um: Some(0.2),
        region: region(),
        segmentation: SegmentSettings::default(),
        class_phases: class_phases.iter().map(|s| s.to_string()).collect(),
        hand_edits: Vec::new(),
        point_count: None,
    }
}

fn main() {
    let dir = Path::new("demo_projects/tarn_moss");
    // Backscattered electrons: the K-rich host (higher mean Z) is brighter than the Na-rich
    // lamellae; in the pyroxene the Fe-rich orthopyroxene lamellae are brighter than augite.
    let fsp = ["lamella", "host"];
    let px = ["augite", "opx-lamella"];
    let shot = |file, period, width, angle, host, lam, seed| Shot {
        file,
        period_px: period,
        lamella_width_px: width,
        angle_deg: angle,
        host_level: host,
        lamella_level: lam,
        seed,
    };
    let feldspar_grain = |id: &str, micrographs: Vec<MicrographSpec>| Grain {
        id: id.into(),
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
        micrographs,
        notes: String::new(),
        excluded_spots: Vec::new(),
        spot_edits: Vec::new(),
    };
    let pyroxene_grain = |id: &str, micrographs: Vec<MicrographSpec>| Grain {
        id: id.into(),
        system: MineralSystem::Pyroxene,
        phases: vec![
            PhaseSpec {
                label: "augite".into(),
                density_g_cm3: None,
            },
            PhaseSpec {
                label: "opx-lamella".into(),
                density_g_cm3: None,
            },
        ],
        micrographs,
        notes: String::new(),
        excluded_spots: Vec::new(),
        spot_edits: Vec::new(),
    };
    let mut project = Project::new("Tarn Moss (invented demo)");
    project.description =
        "An invented syenite and gabbro for trying Consolute; no real locality or data.".into();
    project.analysis_files = vec![
        AnalysisFile {
            path: "analyses.csv".into(),
            system: MineralSystem::Feldspar,
        },
        AnalysisFile {
            path: "pyroxene_analyses.csv".into(),
            system: MineralSystem::Pyroxene,
        },
    ];
    project.samples = vec![
        Sample {
            id: "TM-01".into(),
            description: "coarse alkali syenite, core of the invented intrusion".into(),
            grains: vec![
                feldspar_grain(
                    "g1",
                    vec![
                        micrograph(
                            dir,
                            "bse-1",
                            &shot("tm01_g1_a.png", 23.0, 8.5, 63.0, 0.68, 0.47, 11),
                            fsp,
                        ),
                        micrograph(
                            dir,
                            "bse-2",
                            &shot("tm01_g1_b.png", 25.0, 9.0, 58.0, 0.69, 0.46, 12),
                            fsp,
                        ),
                    ],
                ),
                feldspar_grain(
                    "g2",
                    vec![micrograph(
                        dir,
                        "bse-1",
                        &shot("tm01_g2_a.png", 19.0, 7.5, 115.0, 0.67, 0.47, 21),
                        fsp,
                    )],
                ),
            ],
        },
        Sample {
            id: "TM-04".into(),
            description: "finer syenite near the invented margin".into(),
            grains: vec![feldspar_grain(
                "g1",
                vec![micrograph(
                    dir,
                    "bse-1",
                    &shot("tm04_g1_a.png", 15.0, 4.5, 35.0, 0.68, 0.48, 31),
                    fsp,
                )],
            )],
        },
        Sample {
            id: "TM-09".into(),
            description: "gabbro screen with exsolved augite".into(),
            grains: vec![
                pyroxene_grain(
                    "p1",
                    vec![micrograph(
                        dir,
                        "bse-1",
                        &shot("tm09_p1_a.png", 30.0, 6.0, 80.0, 0.50, 0.66, 41),
                        px,
                    )],
                ),
                pyroxene_grain(
                    "p2",
                    vec![micrograph(
                        dir,
                        "bse-1",
                        &shot("tm09_p2_a.png", 26.0, 5.5, 20.0, 0.51, 0.65, 42),
                        px,
                    )],
                ),
            ],
        },
    ];
    project.settings.pressure_kbar = 1.0;
    project.settings.pressure_sigma_kbar = 0.5;
    save_project(&project, &dir.join("project.json")).unwrap();
    println!("wrote {}", dir.join("project.json").display());
}
