//! Greyscale (8/16-bit) TIFFs read with the `tiff` crate straight into our pixel buffer, and
//! the clear refusal of palette TIFFs.
//!
//! The `image` crate decodes a TIFF into a buffer of its own and then copies it into the
//! caller's (two full copies of a 128 MiB 16-bit 8192 x 8192 image at once), one strip after
//! the other. Here each strip (or row of tiles) is decoded by its own reader, in parallel, into
//! its place in the one output buffer. Layout and tag meanings: TIFF 6.0 specification (Adobe
//! 1992), §3 (greyscale: BitsPerSample, PhotometricInterpretation 1 = BlackIsZero), §5
//! (PhotometricInterpretation 3 = palette colour), §15 (tiles: TileWidth, TileLength; edge
//! tiles are padded).

use std::fs::File;
use std::io::BufReader;
use std::path::Path;

use rayon::prelude::*;
use tiff::decoder::{ChunkType, Decoder, Limits};
use tiff::tags::Tag;
use tiff::{ColorType, TiffError};

use super::{LoadOptions, Micrograph, Pixels};
use crate::error::{MicrographError, Result};

type Reader = Decoder<BufReader<File>>;

/// What we read directly.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    Gray8,
    Gray16,
}

fn open(path: &Path, options: &LoadOptions) -> std::result::Result<Reader, TiffError> {
    let file = File::open(path)?;
    let mut limits = Limits::default();
    limits.decoding_buffer_size =
        usize::try_from(options.memory_budget_bytes).unwrap_or(usize::MAX);
    Ok(Decoder::new(BufReader::new(file))?.with_limits(limits))
}

fn map_error(err: TiffError, path: &Path, options: &LoadOptions) -> MicrographError {
    match err {
        TiffError::IoError(e) => MicrographError::Decode {
            path: path.to_path_buf(),
            detail: format!("{e} (is the file truncated?)"),
        },
        TiffError::UnsupportedError(e) => MicrographError::UnsupportedFormat {
            path: path.to_path_buf(),
            detail: format!("TIFF feature not supported: {e}"),
        },
        TiffError::LimitsExceeded => MicrographError::TooLarge {
            path: path.to_path_buf(),
            width: 0,
            height: 0,
            needed_bytes: 0,
            budget_bytes: options.memory_budget_bytes,
        },
        other => MicrographError::Decode {
            path: path.to_path_buf(),
            detail: other.to_string(),
        },
    }
}

/// Reads the TIFF at `path` when it is greyscale (8/16-bit unsigned, black is zero); refuses
/// palette TIFFs with a message saying what to do; `Ok(None)` for every other kind (the caller
/// uses the `image` crate).
pub(super) fn load(path: &Path, options: &LoadOptions) -> Result<Option<Micrograph>> {
    let err = |e: TiffError| map_error(e, path, options);
    let mut dec = open(path, options).map_err(err)?;
    let (width, height) = dec.dimensions().map_err(err)?;
    if width == 0 || height == 0 {
        return Err(MicrographError::NoPixels {
            path: path.to_path_buf(),
            width,
            height,
        });
    }
    let sample_format = dec
        .find_tag_unsigned_vec::<u16>(Tag::SampleFormat)
        .map_err(err)?;
    if sample_format.is_some_and(|v| v.iter().any(|&f| f != 1)) {
        return Ok(None);
    }
    let photometric = dec
        .find_tag_unsigned::<u16>(Tag::PhotometricInterpretation)
        .map_err(err)?;
    if photometric == Some(3) {
        return Err(MicrographError::UnsupportedFormat {
            path: path.to_path_buf(),
            detail: "palette (colour-mapped) TIFF: the TIFF decoder (tiff crate 0.11) cannot \
                     read colour-mapped images; save the micrograph as greyscale or RGB TIFF, \
                     or as PNG (palette PNGs are read)"
                .to_string(),
        });
    }
    let kind = match (dec.colortype().map_err(err)?, photometric) {
        (ColorType::Gray(8), Some(1)) => Kind::Gray8,
        (ColorType::Gray(16), Some(1)) => Kind::Gray16,
        _ => return Ok(None),
    };
    let pixels = u64::from(width) * u64::from(height);
    let bytes_per_pixel = match kind {
        Kind::Gray8 => 1,
        Kind::Gray16 => 2,
    };
    let needed = pixels.saturating_mul(bytes_per_pixel);
    if needed > options.memory_budget_bytes || usize::try_from(needed).is_err() {
        return Err(MicrographError::TooLarge {
            path: path.to_path_buf(),
            width,
            height,
            needed_bytes: needed,
            budget_bytes: options.memory_budget_bytes,
        });
    }
    let (w, h) = (width as usize, height as usize);
    let layout = ChunkLayout::of(&mut dec, w, h).map_err(err)?;
    let pixels = match kind {
        Kind::Gray8 => {
            let mut out = vec![0u8; w * h];
            read_chunks(path, options, &layout, 8, &mut out)?;
            Pixels::Gray8(out)
        }
        Kind::Gray16 => {
            let mut out = vec![0u16; w * h];
            read_chunks(
                path,
                options,
                &layout,
                16,
                bytemuck::cast_slice_mut(&mut out),
            )?;
            Pixels::Gray16(out)
        }
    };
    Micrograph::new(width, height, pixels).map(Some)
}

/// Strips or tiles: chunk size and how many across and down.
#[derive(Debug, Clone, Copy)]
struct ChunkLayout {
    width: usize,
    chunk_w: usize,
    chunk_h: usize,
    across: usize,
    down: usize,
}

impl ChunkLayout {
    fn of(dec: &mut Reader, w: usize, h: usize) -> std::result::Result<Self, TiffError> {
        let (chunk_w, chunk_h, count) = match dec.get_chunk_type() {
            ChunkType::Strip => {
                let rows = dec
                    .find_tag_unsigned::<u32>(Tag::RowsPerStrip)?
                    .map_or(h, |r| r as usize)
                    .clamp(1, h);
                (w, rows, dec.strip_count()? as usize)
            }
            ChunkType::Tile => (
                dec.get_tag_u32(Tag::TileWidth)? as usize,
                dec.get_tag_u32(Tag::TileLength)? as usize,
                dec.tile_count()? as usize,
            ),
        };
        if chunk_w == 0 || chunk_h == 0 {
            return Err(TiffError::FormatError(
                tiff::TiffFormatError::InvalidDimensions(chunk_w as u32, chunk_h as u32),
            ));
        }
        let layout = Self {
            width: w,
            chunk_w,
            chunk_h,
            across: w.div_ceil(chunk_w),
            down: h.div_ceil(chunk_h),
        };
        if count < layout.across * layout.down {
            return Err(TiffError::FormatError(
                tiff::TiffFormatError::InconsistentSizesEncountered,
            ));
        }
        Ok(layout)
    }
}

/// Decodes every chunk into `out` (`bits` 8 or 16 per pixel), one row of chunks per task, each
/// task with its own reader.
fn read_chunks(
    path: &Path,
    options: &LoadOptions,
    l: &ChunkLayout,
    bits: u8,
    out: &mut [u8],
) -> Result<()> {
    let bits = usize::from(bits);
    let out_bpp = bits.div_ceil(8);
    let row_out = l.width * out_bpp;
    let decode_err = |e: TiffError| map_error(e, path, options);
    out.par_chunks_mut(l.chunk_h * row_out)
        .enumerate()
        .try_for_each_init(
            || (open(path, options), Vec::new()),
            |(reader, scratch), (cy, band)| -> Result<()> {
                let dec = match reader {
                    Ok(d) => d,
                    Err(e) => {
                        return Err(MicrographError::Decode {
                            path: path.to_path_buf(),
                            detail: e.to_string(),
                        });
                    }
                };
                let dh = band.len() / row_out;
                for cx in 0..l.across {
                    let chunk = (cy * l.across + cx) as u32;
                    let dw = l.chunk_w.min(l.width - cx * l.chunk_w);
                    if l.across == 1 {
                        // A full-width strip: decoded in place.
                        dec.read_chunk_bytes(chunk, band).map_err(decode_err)?;
                        continue;
                    }
                    let in_row = dw * out_bpp;
                    scratch.resize(in_row * dh, 0);
                    dec.read_chunk_bytes(chunk, scratch).map_err(decode_err)?;
                    for (r, src) in scratch.chunks(in_row).enumerate() {
                        let at = r * row_out + cx * l.chunk_w * out_bpp;
                        band[at..at + dw * out_bpp].copy_from_slice(&src[..dw * out_bpp]);
                    }
                }
                Ok(())
            },
        )?;
    Ok(())
}
