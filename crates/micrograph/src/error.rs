//! The one error type of this crate.

use std::path::PathBuf;

/// Everything that can go wrong in this crate, with the context a user needs to fix it.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum MicrographError {
    /// The file could not be opened or read.
    #[error("cannot read {path}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
    /// The file is empty (zero bytes).
    #[error("{path} is empty (0 bytes); it is not an image")]
    EmptyFile {
        /// The file.
        path: PathBuf,
    },
    /// The file's content is not an image format we can read (whatever its extension says).
    #[error("{path}: not a readable image ({detail}); supported: TIFF, PNG, JPEG, BMP")]
    UnsupportedFormat {
        /// The file.
        path: PathBuf,
        /// What the decoder said.
        detail: String,
    },
    /// The file is an image but decoding failed (truncated, corrupt, unsupported compression).
    #[error(
        "{path}: cannot decode the image: {detail}. The file is damaged or incomplete: copy it \
         again, or export it again from the acquisition software"
    )]
    Decode {
        /// The file.
        path: PathBuf,
        /// What the decoder said.
        detail: String,
    },
    /// An image could not be written.
    #[error("{path}: cannot write the image: {detail}")]
    Write {
        /// The file.
        path: PathBuf,
        /// What the encoder said.
        detail: String,
    },
    /// The image would need more memory than the budget allows.
    #[error(
        "{path}: the image ({width} x {height} px) needs about {needed_bytes} bytes, more than the \
         memory budget of {budget_bytes} bytes; raise the budget or crop the image"
    )]
    TooLarge {
        /// The file.
        path: PathBuf,
        /// Width from the header (0 when unknown).
        width: u32,
        /// Height from the header (0 when unknown).
        height: u32,
        /// Estimated bytes needed (0 when unknown).
        needed_bytes: u64,
        /// The budget in force.
        budget_bytes: u64,
    },
    /// The image has a zero width or height.
    #[error("{path}: the image has no pixels ({width} x {height})")]
    NoPixels {
        /// The file (or `<memory>`).
        path: PathBuf,
        /// Width.
        width: u32,
        /// Height.
        height: u32,
    },
    /// A region-of-interest file is not valid JSON of the expected shape.
    #[error("{path}:{line}:{column}: region of interest: {message}")]
    RoiSyntax {
        /// The file (or `<memory>`).
        path: PathBuf,
        /// 1-based line.
        line: usize,
        /// 1-based column.
        column: usize,
        /// What was wrong.
        message: String,
    },
    /// A polygon of the region of interest is unusable.
    #[error("region of interest: {list} polygon {index}: {message}")]
    InvalidPolygon {
        /// `include` or `exclude`.
        list: &'static str,
        /// 0-based index in its list.
        index: usize,
        /// What was wrong.
        message: String,
    },
    /// A colour-seeds file is not valid JSON of the expected shape.
    #[error("{path}:{line}:{column}: colour seeds: {message}")]
    SeedsSyntax {
        /// The file (or `<memory>`).
        path: PathBuf,
        /// 1-based line.
        line: usize,
        /// 1-based column.
        column: usize,
        /// What was wrong.
        message: String,
    },
    /// A set of colour seeds is unusable.
    #[error("colour seeds: {list} {index} ({label}): {message}")]
    InvalidSeeds {
        /// `phases` or `voids`.
        list: &'static str,
        /// 0-based index in its list.
        index: usize,
        /// The set's label.
        label: String,
        /// What was wrong.
        message: String,
    },
    /// No pixel is left to measure (region empty, or everything excluded).
    #[error("no pixel left to measure: {reason}")]
    EmptyRegion {
        /// Why.
        reason: String,
    },
    /// A parameter is out of its valid range.
    #[error("invalid parameter {name} = {value}: {expected}")]
    InvalidParameter {
        /// Parameter name as the user sees it.
        name: &'static str,
        /// The value given.
        value: String,
        /// What is expected.
        expected: String,
    },
    /// Two inputs do not fit together (e.g. image and mask sizes).
    #[error("mismatch: {0}")]
    Mismatch(String),
    /// The work was cancelled through the cancel flag.
    #[error("cancelled")]
    Cancelled,
}

/// Result alias for this crate.
pub type Result<T> = std::result::Result<T, MicrographError>;
