//! Writes a seeded synthetic micrograph (lamellae, blur, noise, gradient, a crack and a pore).
//!
//! `cargo run -p micrograph --example synthetic_image -- OUT.tif|png SIZE [8|16]`
//!
//! Used by `tests/reference/micrograph_speed.py` so both tools read the same file.

use micrograph::synthetic::SyntheticSpec;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    if args.len() < 3 {
        return Err("usage: synthetic_image OUT.(tif|png) SIZE [8|16]".into());
    }
    let size: u32 = args[2].parse()?;
    let bits16 = args.get(3).map(|s| s == "16").unwrap_or(true);
    let f = f64::from(size) / 256.0;
    let spec = SyntheticSpec {
        width: size,
        height: size,
        period_px: 23.0,
        lamella_width_px: 8.0,
        cracks: vec![(10.0 * f, 200.0 * f, 240.0 * f, 170.0 * f, 2.0)],
        pores: vec![(70.0 * f, 60.0 * f, 9.0 * f.sqrt())],
        supersample: if size > 2048 { 2 } else { 8 },
        ..SyntheticSpec::default()
    };
    let syn = spec.generate();
    let plane = syn.plane(size, size, bits16)?;
    if bits16 {
        image::ImageBuffer::<image::Luma<u16>, Vec<u16>>::from_raw(size, size, plane.data)
            .ok_or("size")?
            .save(&args[1])?;
    } else {
        let data: Vec<u8> = plane.data.iter().map(|&v| v as u8).collect();
        image::GrayImage::from_raw(size, size, data)
            .ok_or("size")?
            .save(&args[1])?;
    }
    println!(
        "wrote {} ({size} x {size}, {}-bit); lamella fraction of the construction {:.4}",
        args[1],
        if bits16 { 16 } else { 8 },
        spec.true_lamella_fraction()
    );
    Ok(())
}
