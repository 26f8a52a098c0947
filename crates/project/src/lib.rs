//! The Consolute project: the document that holds a whole study, its reading and atomic saving,
//! and the run that recomputes every result from it.
//!
//! ```
//! use project::{Project, parse_project, project_json};
//! let p = Project::new("example");
//! let text = project_json(&p);
//! let back = parse_project(&text, std::path::Path::new("example.json")).unwrap();
//! assert_eq!(back, p);
//! ```

mod document;
pub mod figure;
pub mod hand;
mod io;
pub mod output;
pub mod px;
pub mod report;
mod run;

pub use document::{
    AnalysisFile, EditShape, FORMAT_VERSION, Grain, HandEdit, MicrographSpec, PhaseSpec,
    PointCount, PointGrid, PointMark, Project, Sample, Settings, SpotEdit,
};
pub use io::{
    FileRef, MissingFile, OpenedProject, ProjectError, RelinkError, SaveSink, autosave_path,
    autosave_project, load_project, missing_files, open_project, parse_project, pending_autosave,
    project_json, relink_file, save_project, save_project_with, write_atomically,
    write_atomically_streamed, write_atomically_with,
};
pub use run::{
    GrainFailure, GrainResult, HandEditSummary, MicrographResult, PairResult, PhaseResult, Quiet,
    RunProgress, RunResult, run_one_grain, run_project,
};
