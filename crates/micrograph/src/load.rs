//! Loading micrographs at full bit depth, within a memory budget.

use std::path::{Path, PathBuf};

use image::{DynamicImage, ImageDecoder, ImageError, ImageReader, Limits};

use crate::error::{MicrographError, Result};

mod tiff_direct;

/// Default memory budget: 2 GiB. A setting: pass your own [`LoadOptions`].
pub const DEFAULT_MEMORY_BUDGET_BYTES: u64 = 2 * 1024 * 1024 * 1024;

/// Options for [`load`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LoadOptions {
    /// Largest number of bytes the decoder and our copy of the pixels may use together.
    /// Also passed to the `image` crate as its allocation limit (replacing its 512 MiB default).
    pub memory_budget_bytes: u64,
}

impl Default for LoadOptions {
    fn default() -> Self {
        Self {
            memory_budget_bytes: DEFAULT_MEMORY_BUDGET_BYTES,
        }
    }
}

/// Pixel data kept at the depth of the file.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Pixels {
    /// 8-bit greyscale (also 1-, 2- and 4-bit greyscale, widened).
    Gray8(Vec<u8>),
    /// 16-bit greyscale, full depth.
    Gray16(Vec<u16>),
    /// 8-bit colour (RGB, RGBA with alpha dropped, palette expanded).
    Rgb8(Vec<[u8; 3]>),
    /// 16-bit colour (alpha dropped).
    Rgb16(Vec<[u16; 3]>),
}

/// One micrograph: pixels in row-major order, origin top-left.
#[derive(Debug, Clone, PartialEq)]
pub struct Micrograph {
    width: u32,
    height: u32,
    pixels: Pixels,
}

/// A greyscale plane in integer grey levels `0..=max_value`, row-major.
///
/// 8-bit images keep `max_value = 255`, 16-bit images `65535`; the data is `u16` either way
/// so that every later step handles both depths with one code path.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GrayPlane {
    /// Width in pixels.
    pub width: u32,
    /// Height in pixels.
    pub height: u32,
    /// Grey values, `width * height` of them.
    pub data: Vec<u16>,
    /// 255 or 65535.
    pub max_value: u16,
}

impl GrayPlane {
    /// Builds a plane, checking the length.
    pub fn new(width: u32, height: u32, data: Vec<u16>, max_value: u16) -> Result<Self> {
        check_len(width, height, data.len())?;
        Ok(Self {
            width,
            height,
            data,
            max_value,
        })
    }

    /// Number of pixels.
    pub fn len(&self) -> usize {
        self.data.len()
    }

    /// True when there are no pixels (never for a plane built by this crate).
    pub fn is_empty(&self) -> bool {
        self.data.is_empty()
    }

    /// Bits per pixel: 8 or 16.
    pub fn bit_depth(&self) -> u32 {
        if self.max_value <= 255 { 8 } else { 16 }
    }
}

fn check_len(width: u32, height: u32, len: usize) -> Result<()> {
    if width == 0 || height == 0 {
        return Err(MicrographError::NoPixels {
            path: PathBuf::from("<memory>"),
            width,
            height,
        });
    }
    let expected = width as usize * height as usize;
    if len != expected {
        return Err(MicrographError::Mismatch(format!(
            "{width} x {height} px needs {expected} values, got {len}"
        )));
    }
    Ok(())
}

impl Micrograph {
    /// Builds a micrograph from pixels already in memory.
    pub fn new(width: u32, height: u32, pixels: Pixels) -> Result<Self> {
        let len = match &pixels {
            Pixels::Gray8(v) => v.len(),
            Pixels::Gray16(v) => v.len(),
            Pixels::Rgb8(v) => v.len(),
            Pixels::Rgb16(v) => v.len(),
        };
        check_len(width, height, len)?;
        Ok(Self {
            width,
            height,
            pixels,
        })
    }

    /// Width in pixels.
    pub fn width(&self) -> u32 {
        self.width
    }

    /// Height in pixels.
    pub fn height(&self) -> u32 {
        self.height
    }

    /// The pixels at the file's depth.
    pub fn pixels(&self) -> &Pixels {
        &self.pixels
    }

    /// Bits per channel: 8 or 16.
    pub fn bit_depth(&self) -> u32 {
        match self.pixels {
            Pixels::Gray8(_) | Pixels::Rgb8(_) => 8,
            Pixels::Gray16(_) | Pixels::Rgb16(_) => 16,
        }
    }

    /// True for colour images (stained sections).
    pub fn is_colour(&self) -> bool {
        matches!(self.pixels, Pixels::Rgb8(_) | Pixels::Rgb16(_))
    }

    /// The greyscale plane at full depth. Colour images are reduced to luma with the
    /// ITU-R BT.709 weights (0.2126 R + 0.7152 G + 0.0722 B) on the stored values.
    pub fn gray_plane(&self) -> GrayPlane {
        fn luma(r: f32, g: f32, b: f32) -> u16 {
            (0.2126 * r + 0.7152 * g + 0.0722 * b).round() as u16
        }
        let (data, max_value) = match &self.pixels {
            Pixels::Gray8(v) => (v.iter().map(|&p| u16::from(p)).collect(), 255),
            Pixels::Gray16(v) => (v.clone(), u16::MAX),
            Pixels::Rgb8(v) => (
                v.iter()
                    .map(|p| luma(f32::from(p[0]), f32::from(p[1]), f32::from(p[2])))
                    .collect(),
                255,
            ),
            Pixels::Rgb16(v) => (
                v.iter()
                    .map(|p| luma(f32::from(p[0]), f32::from(p[1]), f32::from(p[2])))
                    .collect(),
                u16::MAX,
            ),
        };
        GrayPlane {
            width: self.width,
            height: self.height,
            data,
            max_value,
        }
    }

    /// The greyscale plane, consuming the micrograph: 16-bit grey data is moved, not copied.
    pub fn into_gray_plane(self) -> GrayPlane {
        match self.pixels {
            Pixels::Gray16(data) => GrayPlane {
                width: self.width,
                height: self.height,
                data,
                max_value: u16::MAX,
            },
            _ => self.gray_plane(),
        }
    }

    /// Writes the micrograph as a PNG at its depth (8/16-bit greyscale or RGB).
    pub fn save_png(&self, path: &Path) -> Result<()> {
        let (w, h) = (self.width, self.height);
        let size = || MicrographError::Mismatch("pixel buffer size".to_string());
        let image = match &self.pixels {
            Pixels::Gray8(v) => DynamicImage::ImageLuma8(
                image::GrayImage::from_raw(w, h, v.clone()).ok_or_else(size)?,
            ),
            Pixels::Gray16(v) => DynamicImage::ImageLuma16(
                image::ImageBuffer::from_raw(w, h, v.clone()).ok_or_else(size)?,
            ),
            Pixels::Rgb8(v) => DynamicImage::ImageRgb8(
                image::RgbImage::from_raw(w, h, v.iter().flatten().copied().collect())
                    .ok_or_else(size)?,
            ),
            Pixels::Rgb16(v) => DynamicImage::ImageRgb16(
                image::ImageBuffer::from_raw(w, h, v.iter().flatten().copied().collect())
                    .ok_or_else(size)?,
            ),
        };
        image
            .save_with_format(path, image::ImageFormat::Png)
            .map_err(|e| match e {
                ImageError::IoError(source) => MicrographError::Io {
                    path: path.to_path_buf(),
                    source,
                },
                other => MicrographError::Write {
                    path: path.to_path_buf(),
                    detail: other.to_string(),
                },
            })
    }

    /// The pixel at `(x, y)` as an 8-bit sRGB triplet (as [`Self::rgb8`]); black outside.
    pub fn rgb8_at(&self, x: u32, y: u32) -> [u8; 3] {
        if x >= self.width || y >= self.height {
            return [0; 3];
        }
        let i = y as usize * self.width as usize + x as usize;
        match &self.pixels {
            Pixels::Gray8(v) => [v[i]; 3],
            Pixels::Gray16(v) => [(v[i] >> 8) as u8; 3],
            Pixels::Rgb8(v) => v[i],
            Pixels::Rgb16(v) => v[i].map(|c| (c >> 8) as u8),
        }
    }

    /// Colour pixels as 8-bit sRGB triplets (16-bit colour is scaled down; grey is repeated).
    pub fn rgb8(&self) -> Vec<[u8; 3]> {
        match &self.pixels {
            Pixels::Gray8(v) => v.iter().map(|&p| [p, p, p]).collect(),
            Pixels::Gray16(v) => v
                .iter()
                .map(|&p| {
                    let q = (p >> 8) as u8;
                    [q, q, q]
                })
                .collect(),
            Pixels::Rgb8(v) => v.clone(),
            Pixels::Rgb16(v) => v
                .iter()
                .map(|p| [(p[0] >> 8) as u8, (p[1] >> 8) as u8, (p[2] >> 8) as u8])
                .collect(),
        }
    }
}

/// Bytes per pixel of our own copy for a colour type.
fn our_bytes_per_pixel(colour: image::ColorType) -> u64 {
    use image::ColorType as C;
    match colour {
        C::L8 | C::La8 => 1,
        C::L16 | C::La16 => 2,
        C::Rgb8 | C::Rgba8 => 3,
        _ => 6,
    }
}

/// Loads an image file: TIFF (strips and tiles), PNG, JPEG or BMP, greyscale (8/16-bit),
/// RGB(A) or palette. The format is recognised from the content, not the extension.
///
/// The memory budget of `options` is checked against the header before any pixel is decoded
/// (the decoder's buffer plus our copy), and given to the decoder as its allocation limit.
///
/// Greyscale (8/16-bit) TIFFs are read with the `tiff` crate straight into the pixel buffer,
/// strips or rows of tiles in parallel; everything else through the `image` crate. Palette
/// images are read from PNG and BMP; palette TIFFs are refused with a message (the TIFF
/// decoder cannot read colour-mapped TIFFs).
pub fn load(path: &Path, options: &LoadOptions) -> Result<Micrograph> {
    let path_buf = path.to_path_buf();
    let io_err = |source| MicrographError::Io {
        path: path_buf.clone(),
        source,
    };
    let meta = std::fs::metadata(path).map_err(io_err)?;
    if meta.len() == 0 {
        return Err(MicrographError::EmptyFile { path: path_buf });
    }
    // Recognise the format by content, whatever the extension says.
    let mut head = Vec::with_capacity(16);
    {
        use std::io::Read;
        std::fs::File::open(path)
            .map_err(io_err)?
            .take(16)
            .read_to_end(&mut head)
            .map_err(io_err)?;
    }
    let format = image::guess_format(&head).map_err(|_| MicrographError::UnsupportedFormat {
        path: path_buf.clone(),
        detail: "the first bytes match no image signature (the file extension is not trusted)"
            .to_string(),
    })?;
    if format == image::ImageFormat::Tiff
        && let Some(m) = tiff_direct::load(path, options)?
    {
        return Ok(m);
    }
    let mut reader = ImageReader::open(path).map_err(io_err)?;
    reader.set_format(format);
    reader.limits(limits_for(options));
    let decoder = reader
        .into_decoder()
        .map_err(|e| map_image_error(e, &path_buf, 0, 0, options))?;
    let (width, height) = decoder.dimensions();
    if width == 0 || height == 0 {
        return Err(MicrographError::NoPixels {
            path: path_buf,
            width,
            height,
        });
    }
    let pixels = u64::from(width) * u64::from(height);
    let needed = decoder
        .total_bytes()
        .saturating_add(pixels.saturating_mul(our_bytes_per_pixel(decoder.color_type())));
    if needed > options.memory_budget_bytes {
        return Err(MicrographError::TooLarge {
            path: path_buf,
            width,
            height,
            needed_bytes: needed,
            budget_bytes: options.memory_budget_bytes,
        });
    }
    let image = DynamicImage::from_decoder(decoder)
        .map_err(|e| map_image_error(e, &path_buf, width, height, options))?;
    from_dynamic(image, &path_buf)
}

fn limits_for(options: &LoadOptions) -> Limits {
    let mut limits = Limits::default();
    limits.max_alloc = Some(options.memory_budget_bytes);
    limits
}

fn map_image_error(
    err: ImageError,
    path: &Path,
    width: u32,
    height: u32,
    options: &LoadOptions,
) -> MicrographError {
    match err {
        ImageError::Limits(_) => MicrographError::TooLarge {
            path: path.to_path_buf(),
            width,
            height,
            needed_bytes: 0,
            budget_bytes: options.memory_budget_bytes,
        },
        ImageError::IoError(e) => MicrographError::Decode {
            path: path.to_path_buf(),
            detail: format!("{e} (the file ends early: truncated?)"),
        },
        ImageError::Unsupported(e) => MicrographError::UnsupportedFormat {
            path: path.to_path_buf(),
            detail: e.to_string(),
        },
        other => MicrographError::Decode {
            path: path.to_path_buf(),
            detail: plain_decoder_text(&other.to_string()),
        },
    }
}

/// A decoder's message in plain words: a chunk named by its Rust debug form
/// (`ChunkType { type: IHDR, critical: true, ... } chunk`) becomes `the IHDR chunk`, and a
/// trailing full stop goes (the error adds its own sentence).
fn plain_decoder_text(text: &str) -> String {
    let mut out = text.to_string();
    while let Some(start) = out.find("ChunkType { type: ") {
        let name_at = start + "ChunkType { type: ".len();
        let Some(end) = out[start..].find('}').map(|e| start + e + 1) else {
            break;
        };
        let name: String = out[name_at..end]
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric())
            .collect();
        let tail = out[end..]
            .strip_prefix(" chunk")
            .unwrap_or(&out[end..])
            .to_string();
        out = format!("{}the {name} chunk{tail}", &out[..start]);
    }
    out.trim_end_matches('.').trim().to_string()
}

/// Converts a decoded image, keeping 16-bit data at full depth.
pub fn from_dynamic(image: DynamicImage, path: &Path) -> Result<Micrograph> {
    let (width, height) = (image.width(), image.height());
    if width == 0 || height == 0 {
        return Err(MicrographError::NoPixels {
            path: path.to_path_buf(),
            width,
            height,
        });
    }
    let pixels = match image {
        DynamicImage::ImageLuma8(b) => Pixels::Gray8(b.into_raw()),
        DynamicImage::ImageLuma16(b) => Pixels::Gray16(b.into_raw()),
        DynamicImage::ImageLumaA8(b) => Pixels::Gray8(b.pixels().map(|p| p.0[0]).collect()),
        DynamicImage::ImageLumaA16(b) => Pixels::Gray16(b.pixels().map(|p| p.0[0]).collect()),
        DynamicImage::ImageRgb8(b) => Pixels::Rgb8(b.pixels().map(|p| p.0).collect()),
        DynamicImage::ImageRgba8(b) => {
            Pixels::Rgb8(b.pixels().map(|p| [p.0[0], p.0[1], p.0[2]]).collect())
        }
        DynamicImage::ImageRgb16(b) => Pixels::Rgb16(b.pixels().map(|p| p.0).collect()),
        DynamicImage::ImageRgba16(b) => {
            Pixels::Rgb16(b.pixels().map(|p| [p.0[0], p.0[1], p.0[2]]).collect())
        }
        other => {
            // 32-bit float images: scale 0..1 to 16 bits.
            let b = other.to_rgb16();
            let grey = b.pixels().all(|p| p.0[0] == p.0[1] && p.0[1] == p.0[2]);
            if grey {
                Pixels::Gray16(b.pixels().map(|p| p.0[0]).collect())
            } else {
                Pixels::Rgb16(b.pixels().map(|p| p.0).collect())
            }
        }
    };
    Micrograph::new(width, height, pixels)
}
