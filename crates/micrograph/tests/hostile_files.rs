//! Bad and hostile files give errors, never panics.
//!
//! Source: PNG specification (ISO/IEC 15948:2004, W3C PNG 2nd ed.) §5.3 chunk layout and CRC-32,
//! §11.2.2 IHDR; TIFF 6.0 specification (Adobe 1992) §2 header and IFD layout; these are used
//! to write headers that claim huge images.
#![allow(clippy::unwrap_used)]

use std::path::PathBuf;

use micrograph::error::MicrographError;
use micrograph::load::{LoadOptions, Pixels, load};
use proptest::prelude::*;

fn tmp(name: &str, bytes: &[u8]) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("micrograph-hostile-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, bytes).unwrap();
    p
}

/// CRC-32 (ISO 3309 / ITU-T V.42 polynomial 0xEDB88320), as PNG requires.
fn crc32(data: &[u8]) -> u32 {
    let mut crc = 0xFFFF_FFFFu32;
    for &b in data {
        crc ^= u32::from(b);
        for _ in 0..8 {
            crc = if crc & 1 != 0 {
                (crc >> 1) ^ 0xEDB8_8320
            } else {
                crc >> 1
            };
        }
    }
    !crc
}

fn chunk(kind: &[u8; 4], data: &[u8]) -> Vec<u8> {
    let mut out = (data.len() as u32).to_be_bytes().to_vec();
    let mut body = kind.to_vec();
    body.extend_from_slice(data);
    out.extend_from_slice(&body);
    out.extend_from_slice(&crc32(&body).to_be_bytes());
    out
}

fn png_header_claiming(width: u32, height: u32) -> Vec<u8> {
    let mut png = b"\x89PNG\r\n\x1a\n".to_vec();
    let mut ihdr = width.to_be_bytes().to_vec();
    ihdr.extend_from_slice(&height.to_be_bytes());
    ihdr.extend_from_slice(&[16, 0, 0, 0, 0]); // 16-bit greyscale
    png.extend(chunk(b"IHDR", &ihdr));
    png.extend(chunk(
        b"IDAT",
        &[0x78, 0x9c, 0x03, 0x00, 0x00, 0x00, 0x00, 0x01],
    ));
    png.extend(chunk(b"IEND", &[]));
    png
}

fn valid_png16(w: u32, h: u32) -> Vec<u8> {
    let img = image::ImageBuffer::<image::Luma<u16>, Vec<u16>>::from_fn(w, h, |x, y| {
        image::Luma([(x * 1000 + y * 7) as u16])
    });
    let mut buf = std::io::Cursor::new(Vec::new());
    img.write_to(&mut buf, image::ImageFormat::Png).unwrap();
    buf.into_inner()
}

#[test]
fn zero_sized_file_is_an_error() {
    let p = tmp("empty.tif", &[]);
    let err = load(&p, &LoadOptions::default()).unwrap_err();
    assert!(matches!(err, MicrographError::EmptyFile { .. }), "{err}");
    assert!(
        err.to_string().contains("empty.tif"),
        "message names the file: {err}"
    );
}

#[test]
fn truncated_png_is_an_error() {
    let png = valid_png16(64, 64);
    let p = tmp("truncated.png", &png[..png.len() / 2]);
    let err = load(&p, &LoadOptions::default()).unwrap_err();
    assert!(matches!(err, MicrographError::Decode { .. }), "{err}");
}

#[test]
fn a_damaged_png_says_what_to_do_in_plain_words() {
    // A PNG whose header chunk fails its CRC (ISO/IEC 15948, PNG §5.3: every chunk carries a
    // CRC-32 of its type and data), kept from the image_file fuzz run. The png crate names the
    // chunk by its Rust debug form; the message names it in words and says what to do.
    let p = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../tests/data/fuzz_regressions/image_file/err-png-ihdr-crc.png");
    let err = load(&p, &LoadOptions::default()).unwrap_err();
    let text = err.to_string();
    assert!(matches!(err, MicrographError::Decode { .. }), "{text}");
    assert!(text.contains("the IHDR chunk"), "{text}");
    assert!(!text.contains("ChunkType {"), "{text}");
    assert!(text.contains("export it again"), "{text}");
}

#[test]
fn huge_dimensions_in_png_header_exceed_the_budget() {
    let p = tmp("huge.png", &png_header_claiming(100_000, 100_000));
    let err = load(&p, &LoadOptions::default()).unwrap_err();
    assert!(matches!(err, MicrographError::TooLarge { .. }), "{err}");
    assert!(err.to_string().contains("100000 x 100000"), "{err}");
}

#[test]
fn huge_dimensions_in_tiff_header_are_an_error() {
    // Little-endian TIFF, one IFD with ImageWidth = ImageLength = 3,000,000 (LONG), 16 bits,
    // one strip at offset 8 of 2 bytes.
    let mut t = b"II*\x00".to_vec();
    t.extend_from_slice(&8u32.to_le_bytes());
    let entries: [(u16, u16, u32, u32); 7] = [
        (256, 4, 1, 3_000_000),
        (257, 4, 1, 3_000_000),
        (258, 3, 1, 16),
        (259, 3, 1, 1),
        (262, 3, 1, 1),
        (273, 4, 1, 8),
        (279, 4, 1, 2),
    ];
    t.extend_from_slice(&(entries.len() as u16).to_le_bytes());
    for (tag, typ, count, value) in entries {
        t.extend_from_slice(&tag.to_le_bytes());
        t.extend_from_slice(&typ.to_le_bytes());
        t.extend_from_slice(&count.to_le_bytes());
        if typ == 3 {
            t.extend_from_slice(&(value as u16).to_le_bytes());
            t.extend_from_slice(&[0, 0]);
        } else {
            t.extend_from_slice(&value.to_le_bytes());
        }
    }
    t.extend_from_slice(&0u32.to_le_bytes());
    let p = tmp("huge.tif", &t);
    let err = load(&p, &LoadOptions::default()).unwrap_err();
    assert!(
        matches!(
            err,
            MicrographError::TooLarge { .. } | MicrographError::Decode { .. }
        ),
        "{err}"
    );
}

#[test]
fn budget_is_a_setting() {
    let p = tmp("small.png", &valid_png16(64, 64));
    let tight = LoadOptions {
        memory_budget_bytes: 1000,
    };
    assert!(matches!(
        load(&p, &tight).unwrap_err(),
        MicrographError::TooLarge { .. }
    ));
    let m = load(&p, &LoadOptions::default()).unwrap();
    assert_eq!((m.width(), m.height(), m.bit_depth()), (64, 64, 16));
    match m.pixels() {
        Pixels::Gray16(v) => assert_eq!(v[64 + 1], 1007, "16-bit value kept at full depth"),
        other => panic!("expected 16-bit grey, got {other:?}"),
    }
}

#[test]
fn wrong_extension_is_read_by_content_or_refused() {
    // A PNG named .tif is recognised by its signature.
    let p = tmp("actually_png.tif", &valid_png16(8, 8));
    assert_eq!(load(&p, &LoadOptions::default()).unwrap().width(), 8);
    // Text named .png is refused with a message naming the file.
    let p = tmp("notes.png", b"sample 12, grain 3: see notebook\n");
    let err = load(&p, &LoadOptions::default()).unwrap_err();
    assert!(
        matches!(err, MicrographError::UnsupportedFormat { .. }),
        "{err}"
    );
    assert!(err.to_string().contains("notes.png"));
}

#[test]
fn missing_file_is_an_io_error() {
    let err = load(
        std::path::Path::new("/nonexistent/dir/x.png"),
        &LoadOptions::default(),
    )
    .unwrap_err();
    assert!(matches!(err, MicrographError::Io { .. }), "{err}");
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    /// Corrupting bytes of a valid PNG, TIFF (RGB, and 16-bit grey) or BMP never panics.
    #[test]
    fn corrupted_files_never_panic(
        fmt in 0usize..4,
        edits in proptest::collection::vec((0usize..4000, any::<u8>()), 1..20),
        cut in 0usize..4000,
    ) {
        let img = image::RgbImage::from_fn(24, 17, |x, y| image::Rgb([x as u8 * 9, y as u8 * 13, 77]));
        let format = [image::ImageFormat::Png, image::ImageFormat::Tiff, image::ImageFormat::Bmp, image::ImageFormat::Tiff][fmt];
        let mut buf = std::io::Cursor::new(Vec::new());
        if fmt == 3 {
            // 16-bit greyscale TIFF: read by our direct TIFF path, not the `image` crate's.
            image::DynamicImage::ImageRgb8(img).to_luma16().write_to(&mut buf, format).unwrap();
        } else {
            img.write_to(&mut buf, format).unwrap();
        }
        let mut bytes = buf.into_inner();
        for (pos, b) in edits {
            let n = bytes.len();
            bytes[pos % n] = b;
        }
        bytes.truncate(cut.max(1).min(bytes.len()));
        let p = tmp(&format!("fuzz{fmt}.bin"), &bytes);
        let _ = load(&p, &LoadOptions::default());
    }
}

#[test]
fn formats_round_trip_at_their_depth() {
    // Source: the `image` crate's encoders (independent of our loader); lossless formats must
    // give back the exact values, JPEG within its quantisation (8 grey levels on a flat area).
    let g16 = image::ImageBuffer::<image::Luma<u16>, Vec<u16>>::from_fn(20, 10, |x, y| {
        image::Luma([(x * 3000 + y) as u16])
    });
    let mut buf = std::io::Cursor::new(Vec::new());
    g16.write_to(&mut buf, image::ImageFormat::Tiff).unwrap();
    let m = load(&tmp("g16.tif", &buf.into_inner()), &LoadOptions::default()).unwrap();
    assert!(matches!(m.pixels(), Pixels::Gray16(v) if v[19] == 57000));

    let rgb = image::RgbImage::from_fn(20, 10, |x, _| image::Rgb([x as u8 * 10, 50, 200]));
    let mut buf = std::io::Cursor::new(Vec::new());
    rgb.write_to(&mut buf, image::ImageFormat::Bmp).unwrap();
    let m = load(&tmp("c.bmp", &buf.into_inner()), &LoadOptions::default()).unwrap();
    assert!(matches!(m.pixels(), Pixels::Rgb8(v) if v[3] == [30, 50, 200]));

    let g8 = image::GrayImage::from_pixel(16, 16, image::Luma([140]));
    let mut buf = std::io::Cursor::new(Vec::new());
    g8.write_to(&mut buf, image::ImageFormat::Jpeg).unwrap();
    let m = load(&tmp("g.jpg", &buf.into_inner()), &LoadOptions::default()).unwrap();
    match m.pixels() {
        Pixels::Gray8(v) => assert!((i32::from(v[40]) - 140).abs() <= 8),
        other => panic!("expected 8-bit grey, got {other:?}"),
    }
}

/// A little-endian 16-bit greyscale TIFF header (TIFF 6.0 §2, baseline tags) claiming
/// `width` x `height` pixels in one strip of 2 bytes: the data is missing.
fn tiff_header_claiming(width: u32, height: u32) -> Vec<u8> {
    let mut t = b"II*\x00".to_vec();
    t.extend_from_slice(&8u32.to_le_bytes());
    let entries: [(u16, u16, u32, u32); 8] = [
        (256, 4, 1, width),
        (257, 4, 1, height),
        (258, 3, 1, 16),
        (259, 3, 1, 1),
        (262, 3, 1, 1),
        (273, 4, 1, 8),
        (278, 4, 1, height),
        (279, 4, 1, 2),
    ];
    t.extend_from_slice(&(entries.len() as u16).to_le_bytes());
    for (tag, typ, count, value) in entries {
        t.extend_from_slice(&tag.to_le_bytes());
        t.extend_from_slice(&typ.to_le_bytes());
        t.extend_from_slice(&count.to_le_bytes());
        if typ == 3 {
            t.extend_from_slice(&(value as u16).to_le_bytes());
            t.extend_from_slice(&[0, 0]);
        } else {
            t.extend_from_slice(&value.to_le_bytes());
        }
    }
    t.extend_from_slice(&0u32.to_le_bytes());
    t
}

#[test]
fn a_20000_square_16_bit_image_over_the_budget_is_refused_from_its_header() {
    // 20000 x 20000 px at 2 bytes = 800,000,000 bytes of pixels (arithmetic). Over a 512 MiB
    // budget both loaders refuse from the header alone (the files are a few hundred bytes, so
    // nothing was decoded), naming the size and what to do. The PNG route counts the decoder's
    // buffer and our copy (1.6e9 bytes); the TIFF route reads straight into our buffer (8e8).
    let budget = LoadOptions {
        memory_budget_bytes: 512 * 1024 * 1024,
    };
    for (name, bytes, needed) in [
        (
            "big20000.png",
            png_header_claiming(20_000, 20_000),
            1_600_000_000u64,
        ),
        (
            "big20000.tif",
            tiff_header_claiming(20_000, 20_000),
            800_000_000,
        ),
    ] {
        let p = tmp(name, &bytes);
        let err = load(&p, &budget).unwrap_err();
        match &err {
            MicrographError::TooLarge {
                width,
                height,
                needed_bytes,
                budget_bytes,
                ..
            } => {
                assert_eq!((*width, *height), (20_000, 20_000), "{name}");
                assert_eq!(*needed_bytes, needed, "{name}");
                assert_eq!(*budget_bytes, 512 * 1024 * 1024, "{name}");
            }
            other => panic!("{name}: expected TooLarge, got {other}"),
        }
        let message = err.to_string();
        for part in [name, "20000 x 20000", "raise the budget"] {
            assert!(message.contains(part), "{name}: {message}");
        }
    }
}

#[test]
fn a_20000_square_16_bit_image_within_the_budget_passes_the_header_check() {
    // With the default 2 GiB budget the same headers are accepted by the budget check, and the
    // loaders go on to decode: the refusal is then about the missing data, not the size.
    for (name, bytes) in [
        ("ok20000.png", png_header_claiming(20_000, 20_000)),
        ("ok20000.tif", tiff_header_claiming(20_000, 20_000)),
    ] {
        let p = tmp(name, &bytes);
        let err = load(&p, &LoadOptions::default()).unwrap_err();
        assert!(
            matches!(err, MicrographError::Decode { .. }),
            "{name}: {err}"
        );
    }
}
