//! Long work on named worker threads: the project run (analyses, micrographs, reintegration,
//! Monte Carlo) and the loading and classifying of the micrograph on screen. Each job reports
//! progress through atomics, can be cancelled, sends its result over a channel and asks for a
//! repaint when it is done; the UI polls it once a frame and never waits.

use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, AtomicU32, AtomicUsize, Ordering};
use std::sync::{Arc, mpsc};

use egui::{Color32, Context};
use micrograph::control::Control;
use micrograph::load::{GrayPlane, LoadOptions, load};
use micrograph::segment::{NOT_MEASURED, Segmentation, segment};
use project::hand::{HandEditOutcome, apply_hand_edits};
use project::{MicrographSpec, Project, RunProgress, RunResult, run_one_grain, run_project};
use reintegration::JobControl;

use crate::tiles::{Pixels, TiledImage};

/// Counts the grains started, for the progress line.
struct GrainCounter(Arc<AtomicUsize>);

impl RunProgress for GrainCounter {
    fn grain(&self, index: usize, _total: usize, _sample: &str, _grain: &str) {
        self.0.store(index + 1, Ordering::Relaxed);
    }
}

/// A project run on the `consolute-run` thread.
pub struct RunJob {
    control: Arc<JobControl>,
    grains_started: Arc<AtomicUsize>,
    grains: usize,
    total_draws: usize,
    /// Document revision the run was started from.
    pub revision: u64,
    /// The one grain computed (sample and grain index), or `None` for the whole project.
    pub only: Option<(usize, usize)>,
    rx: mpsc::Receiver<Result<RunResult, String>>,
}

impl RunJob {
    /// Start a run of `project` (read from `path`): every grain, or only the grain `only`
    /// (sample and grain index).
    ///
    /// # Errors
    /// When the thread cannot be started.
    pub fn start(
        project: Project,
        path: PathBuf,
        revision: u64,
        ctx: Context,
        only: Option<(usize, usize)>,
    ) -> Result<Self, String> {
        let control = Arc::new(JobControl::default());
        let grains_started = Arc::new(AtomicUsize::new(0));
        let grains: usize = match only {
            Some(_) => 1,
            None => project.samples.iter().map(|s| s.grains.len()).sum(),
        };
        let total_draws = grains * project.settings.draws;
        let (tx, rx) = mpsc::channel();
        let (c, g) = (control.clone(), grains_started.clone());
        std::thread::Builder::new()
            .name("consolute-run".into())
            .spawn(move || {
                let result = match only {
                    Some((s, gr)) => {
                        g.store(1, Ordering::Relaxed);
                        run_one_grain(&project, &path, s, gr, &c)
                    }
                    None => run_project(&project, &path, &GrainCounter(g), &c),
                };
                let _ = tx.send(result);
                ctx.request_repaint();
            })
            .map_err(|e| format!("could not start the run: {e}"))?;
        Ok(RunJob {
            control,
            grains_started,
            grains,
            total_draws,
            revision,
            only,
            rx,
        })
    }

    /// Fraction done, 0-1 (Monte Carlo draws finished over all draws of the run).
    pub fn fraction(&self) -> f32 {
        self.control.fraction(self.total_draws).clamp(0.0, 1.0)
    }

    /// "grain 2 of 5".
    pub fn stage_text(&self) -> String {
        format!(
            "grain {} of {}",
            self.grains_started.load(Ordering::Relaxed).max(1),
            self.grains
        )
    }

    /// Ask the run to stop.
    pub fn cancel(&self) {
        self.control.cancel.store(true, Ordering::Relaxed);
    }

    /// Whether cancel was asked for.
    pub fn cancelling(&self) -> bool {
        self.control.cancel.load(Ordering::Relaxed)
    }

    /// The result, once the run has finished.
    pub fn poll(&self) -> Option<Result<RunResult, String>> {
        match self.rx.try_recv() {
            Ok(r) => Some(r),
            Err(mpsc::TryRecvError::Empty) => None,
            Err(mpsc::TryRecvError::Disconnected) => {
                Some(Err("the run stopped unexpectedly".into()))
            }
        }
    }
}

/// A loaded micrograph: its grey values and their display tiles.
pub struct ImageData {
    /// The file.
    pub path: PathBuf,
    /// Grey values.
    pub plane: Arc<GrayPlane>,
    /// Display tiles.
    pub grey: TiledImage,
    /// Grey values shown as black and white (0.2 and 99.8 percentiles).
    pub display_range: (u16, u16),
}

/// A classified micrograph.
pub struct ClassData {
    /// The settings and hand edits it was classified with (see [`image_key`]).
    pub key: String,
    /// The settings of the automatic classification alone (see [`base_key`]).
    pub base_key: String,
    /// The automatic classification, before hand edits (kept so that a new hand edit does not
    /// classify the image again).
    pub base: Arc<Segmentation>,
    /// The classification with the hand edits applied.
    pub segmentation: Segmentation,
    /// What the hand edits did (none: no edits).
    pub hand: Option<HandEditOutcome>,
    /// Why the hand edits could not be applied (the automatic classification is shown).
    pub hand_error: Option<String>,
    /// The classes as coloured tiles.
    pub overlay: TiledImage,
}

impl ClassData {
    /// Fractions of the measured area per class at other levels, from the histogram (pixels
    /// under hand edits keep their phase).
    pub fn fractions_at(&self, levels: &[u16]) -> Vec<f64> {
        match &self.hand {
            Some(h) => h.fractions_at(levels),
            None => self.segmentation.fractions_at(levels),
        }
    }
}

/// What the image job sends back.
pub struct ImageOutcome {
    /// The image (or why it could not be read).
    pub image: Result<Arc<ImageData>, String>,
    /// The classification (or why it failed).
    pub classes: Result<ClassData, String>,
}

/// Identifies what the automatic classification depends on.
pub fn base_key(path: &std::path::Path, spec: &MicrographSpec) -> String {
    format!(
        "{}|{:?}|{:?}|{:?}",
        path.display(),
        spec.region,
        spec.segmentation,
        spec.pixel_size_um
    )
}

/// Identifies what the classification shown depends on (the automatic one, the hand edits and
/// the phases they name).
pub fn image_key(path: &std::path::Path, spec: &MicrographSpec) -> String {
    format!(
        "{}|{:?}|{:?}",
        base_key(path, spec),
        spec.hand_edits,
        spec.class_phases
    )
}

/// Colour of a class on the overlay (dark to bright), opaque.
pub fn class_colour(class: usize) -> Color32 {
    const COLOURS: [Color32; 6] = [
        Color32::from_rgb(40, 110, 220),
        Color32::from_rgb(235, 150, 30),
        Color32::from_rgb(60, 180, 90),
        Color32::from_rgb(200, 60, 160),
        Color32::from_rgb(230, 220, 60),
        Color32::from_rgb(120, 80, 40),
    ];
    COLOURS[class % COLOURS.len()]
}

/// Loading and classifying one micrograph on the `consolute-image` thread.
pub struct ImageJob {
    /// The classification key it works towards.
    pub key: String,
    cancel: Arc<AtomicBool>,
    progress: Arc<AtomicU32>,
    rx: mpsc::Receiver<ImageOutcome>,
}

impl ImageJob {
    /// Start loading (unless `reuse` already holds this file) and classifying.
    ///
    /// # Errors
    /// When the thread cannot be started.
    pub fn start(
        ctx: Context,
        path: PathBuf,
        spec: MicrographSpec,
        reuse: Option<Arc<ImageData>>,
        reuse_base: Option<(String, Arc<Segmentation>)>,
        max_texture_side: usize,
    ) -> Result<Self, String> {
        let key = image_key(&path, &spec);
        let cancel = Arc::new(AtomicBool::new(false));
        let progress = Arc::new(AtomicU32::new(0));
        let (tx, rx) = mpsc::channel();
        let (cancel2, progress2, key2) = (cancel.clone(), progress.clone(), key.clone());
        std::thread::Builder::new()
            .name("consolute-image".into())
            .spawn(move || {
                let tile = crate::tiles::tile_side(max_texture_side);
                let image = match reuse.filter(|d| d.path == path) {
                    Some(d) => Ok(d),
                    None => load_image(&ctx, &path, tile).map(Arc::new),
                };
                let classes = match &image {
                    Ok(data) => {
                        let report = |f: f32| progress2.store(f.to_bits(), Ordering::Relaxed);
                        let control = Control {
                            cancel: Some(&cancel2),
                            progress: Some(&report),
                        };
                        classify(&ctx, data, &spec, &control, tile, key2, reuse_base)
                    }
                    Err(e) => Err(e.clone()),
                };
                let _ = tx.send(ImageOutcome { image, classes });
                ctx.request_repaint();
            })
            .map_err(|e| format!("could not start loading the image: {e}"))?;
        Ok(ImageJob {
            key,
            cancel,
            progress,
            rx,
        })
    }

    /// Fraction of the classification done.
    pub fn fraction(&self) -> f32 {
        f32::from_bits(self.progress.load(Ordering::Relaxed)).clamp(0.0, 1.0)
    }

    /// Ask the job to stop.
    pub fn cancel(&self) {
        self.cancel.store(true, Ordering::Relaxed);
    }

    /// The outcome once done.
    pub fn poll(&self) -> Option<ImageOutcome> {
        match self.rx.try_recv() {
            Ok(o) => Some(o),
            Err(mpsc::TryRecvError::Empty) => None,
            Err(mpsc::TryRecvError::Disconnected) => Some(ImageOutcome {
                image: Err("loading stopped unexpectedly".into()),
                classes: Err("loading stopped unexpectedly".into()),
            }),
        }
    }
}

impl Drop for ImageJob {
    fn drop(&mut self) {
        self.cancel();
    }
}

fn load_image(ctx: &Context, path: &std::path::Path, tile: usize) -> Result<ImageData, String> {
    let micrograph = load(path, &LoadOptions::default()).map_err(|e| e.to_string())?;
    let plane = micrograph.into_gray_plane();
    let display_range = display_range(&plane);
    let (lo, hi) = (f32::from(display_range.0), f32::from(display_range.1));
    let span = (hi - lo).max(1.0);
    let data = plane
        .data
        .iter()
        .map(|&v| {
            let g = ((f32::from(v) - lo) / span * 255.0).clamp(0.0, 255.0) as u8;
            Color32::from_gray(g)
        })
        .collect();
    let pixels = Pixels {
        width: plane.width as usize,
        height: plane.height as usize,
        data,
    };
    let grey = TiledImage::new(ctx, &format!("grey:{}", path.display()), pixels, tile, true);
    Ok(ImageData {
        path: path.to_path_buf(),
        plane: Arc::new(plane),
        grey,
        display_range,
    })
}

/// Grey values at the 0.2 and 99.8 percentiles (the display stretch).
fn display_range(plane: &GrayPlane) -> (u16, u16) {
    let mut counts = vec![0u64; usize::from(plane.max_value) + 1];
    for &v in &plane.data {
        if let Some(c) = counts.get_mut(usize::from(v)) {
            *c += 1;
        }
    }
    let total: u64 = counts.iter().sum();
    let at = |q: f64| {
        let target = (q * total as f64) as u64;
        let mut acc = 0;
        for (v, &c) in counts.iter().enumerate() {
            acc += c;
            if acc > target {
                return v as u16;
            }
        }
        plane.max_value
    };
    let (lo, hi) = (at(0.002), at(0.998));
    if hi > lo {
        (lo, hi)
    } else {
        (0, plane.max_value.max(1))
    }
}

fn classify(
    ctx: &Context,
    data: &ImageData,
    spec: &MicrographSpec,
    control: &Control<'_>,
    tile: usize,
    key: String,
    reuse_base: Option<(String, Arc<Segmentation>)>,
) -> Result<ClassData, String> {
    let plane = &data.plane;
    let mut settings = spec.segmentation.clone();
    if let Some(size) = spec.pixel_size_um {
        settings.pixel_size =
            Some(micrograph::calibration::PixelSize::new(size).map_err(|e| e.to_string())?);
    }
    let base_key = base_key(&data.path, spec);
    let base = match reuse_base.filter(|(k, _)| *k == base_key) {
        Some((_, base)) => base,
        None => {
            let region = spec
                .region
                .rasterise(plane.width, plane.height)
                .map_err(|e| format!("region: {e}"))?;
            Arc::new(segment(plane, &region, &settings, control).map_err(|e| e.to_string())?)
        }
    };
    let mut segmentation = (*base).clone();
    let (hand, hand_error) = match apply_hand_edits(
        &mut segmentation,
        plane,
        &spec.hand_edits,
        &spec.class_phases,
        &settings,
    ) {
        Ok(h) => (h, None),
        Err(e) => {
            segmentation = (*base).clone();
            (None, Some(e))
        }
    };
    let colours: Vec<Color32> = (0..settings.classes).map(class_colour).collect();
    let overlay = segmentation
        .class_map
        .iter()
        .map(|&c| {
            if c == NOT_MEASURED {
                Color32::TRANSPARENT
            } else {
                colours.get(usize::from(c)).copied().unwrap_or(Color32::RED)
            }
        })
        .collect();
    let pixels = Pixels {
        width: plane.width as usize,
        height: plane.height as usize,
        data: overlay,
    };
    let name = {
        use std::hash::{Hash, Hasher};
        let mut h = std::collections::hash_map::DefaultHasher::new();
        key.hash(&mut h);
        format!("classes:{:016x}", h.finish())
    };
    let overlay = TiledImage::new(ctx, &name, pixels, tile, false);
    Ok(ClassData {
        key,
        base_key,
        base,
        segmentation,
        hand,
        hand_error,
        overlay,
    })
}
