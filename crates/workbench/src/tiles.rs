//! Large images as tiled textures with reduced levels.
//!
//! No texture may be larger than the renderer's limit (`max_texture_side`; egui_glow panics on a
//! larger one, and software OpenGL allows 16384 px), so an image is cut into tiles no larger than
//! that limit (and no larger than [`MAX_TILE`], which keeps each upload short). Zoomed-out views
//! draw from reduced levels (each half the size of the one before, 2 x 2 pixels averaged), so a
//! 16k x 16k mosaic shown whole draws a few small textures instead of sixty-four large ones.

use egui::{
    Color32, ColorImage, Context, Painter, Pos2, Rect, TextureHandle, TextureOptions, pos2,
};

/// Largest tile side used, whatever the renderer allows.
pub const MAX_TILE: usize = 2048;

/// Reduced levels stop once the whole image fits in this many pixels a side.
const SMALLEST_LEVEL: usize = 512;

/// One texture covering part of the image.
pub struct Tile {
    /// The part covered, in image pixel coordinates.
    pub image_rect: Rect,
    /// The texture.
    pub texture: TextureHandle,
}

/// The tiles of one level.
pub struct TileLevel {
    /// Image pixels per level pixel (1, 2, 4, ...).
    pub scale: f32,
    /// Its tiles.
    pub tiles: Vec<Tile>,
}

/// An image as levels of tiles.
pub struct TiledImage {
    /// Width of the full image, pixels.
    pub width: usize,
    /// Height of the full image, pixels.
    pub height: usize,
    /// Levels, full resolution first.
    pub levels: Vec<TileLevel>,
}

/// Colours of a full-size image, row-major.
pub struct Pixels {
    /// Width.
    pub width: usize,
    /// Height.
    pub height: usize,
    /// Row-major colours (premultiplied).
    pub data: Vec<Color32>,
}

impl Pixels {
    /// Half the size, each pixel the mean of (up to) 2 x 2 pixels.
    fn halved(&self) -> Pixels {
        let (w, h) = (self.width.div_ceil(2), self.height.div_ceil(2));
        let mut data = Vec::with_capacity(w * h);
        for y in 0..h {
            for x in 0..w {
                let mut sum = [0u32; 4];
                let mut n = 0u32;
                for (dx, dy) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
                    let (sx, sy) = (2 * x + dx, 2 * y + dy);
                    if sx < self.width && sy < self.height {
                        let c = self.data[sy * self.width + sx].to_array();
                        for k in 0..4 {
                            sum[k] += u32::from(c[k]);
                        }
                        n += 1;
                    }
                }
                let avg = |k: usize| ((sum[k] + n / 2) / n.max(1)) as u8;
                data.push(Color32::from_rgba_premultiplied(
                    avg(0),
                    avg(1),
                    avg(2),
                    avg(3),
                ));
            }
        }
        Pixels {
            width: w,
            height: h,
            data,
        }
    }

    fn crop(&self, x0: usize, y0: usize, w: usize, h: usize) -> ColorImage {
        let mut out = Vec::with_capacity(w * h);
        for y in y0..y0 + h {
            out.extend_from_slice(&self.data[y * self.width + x0..y * self.width + x0 + w]);
        }
        ColorImage::new([w, h], out)
    }
}

/// Tile side for a renderer whose largest texture is `max_texture_side`.
pub fn tile_side(max_texture_side: usize) -> usize {
    max_texture_side.clamp(64, MAX_TILE)
}

impl TiledImage {
    /// Cut `pixels` into tiles of at most `tile` pixels a side, with reduced levels, and upload
    /// them. Safe to call from a worker thread (the context is shared).
    pub fn new(ctx: &Context, name: &str, pixels: Pixels, tile: usize, smooth: bool) -> Self {
        let tile = tile.max(1);
        let options = if smooth {
            TextureOptions {
                magnification: egui::TextureFilter::Nearest,
                ..TextureOptions::LINEAR
            }
        } else {
            TextureOptions::NEAREST
        };
        let (width, height) = (pixels.width, pixels.height);
        let mut levels = Vec::new();
        let mut current = pixels;
        let mut scale = 1.0f32;
        loop {
            let mut tiles = Vec::new();
            let mut y = 0;
            while y < current.height {
                let h = tile.min(current.height - y);
                let mut x = 0;
                while x < current.width {
                    let w = tile.min(current.width - x);
                    let texture = ctx.load_texture(
                        format!("{name}-{scale}-{x}-{y}"),
                        current.crop(x, y, w, h),
                        options,
                    );
                    tiles.push(Tile {
                        image_rect: Rect::from_min_max(
                            pos2(x as f32 * scale, y as f32 * scale),
                            pos2(
                                ((x + w) as f32 * scale).min(width as f32),
                                ((y + h) as f32 * scale).min(height as f32),
                            ),
                        ),
                        texture,
                    });
                    x += w;
                }
                y += h;
            }
            levels.push(TileLevel { scale, tiles });
            if current.width.max(current.height) <= SMALLEST_LEVEL {
                break;
            }
            current = current.halved();
            scale *= 2.0;
        }
        TiledImage {
            width,
            height,
            levels,
        }
    }

    /// The level to draw at `zoom` screen points per image pixel: the coarsest level whose pixels
    /// are still no larger than a screen pixel.
    pub fn level_for_zoom(&self, zoom: f32, pixels_per_point: f32) -> usize {
        let image_px_per_screen_px = 1.0 / (zoom * pixels_per_point).max(1e-6);
        let mut best = 0;
        for (i, level) in self.levels.iter().enumerate() {
            if level.scale <= image_px_per_screen_px {
                best = i;
            }
        }
        best
    }

    /// Draw the tiles that meet the painter's clip rectangle. `to_screen` maps image pixel
    /// coordinates to screen points.
    pub fn paint(
        &self,
        painter: &Painter,
        to_screen: impl Fn(Pos2) -> Pos2,
        zoom: f32,
        tint: Color32,
    ) -> usize {
        let level = self.level_for_zoom(zoom, painter.ctx().pixels_per_point());
        let clip = painter.clip_rect();
        let mut drawn = 0;
        if let Some(level) = self.levels.get(level) {
            for tile in &level.tiles {
                let rect = Rect::from_min_max(
                    to_screen(tile.image_rect.min),
                    to_screen(tile.image_rect.max),
                );
                if rect.intersects(clip) {
                    painter.image(
                        tile.texture.id(),
                        rect,
                        Rect::from_min_max(Pos2::ZERO, pos2(1.0, 1.0)),
                        tint,
                    );
                    drawn += 1;
                }
            }
        }
        drawn
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_tile_exceeds_the_limit_and_levels_cover_the_image() {
        let ctx = Context::default();
        let (w, h) = (1300, 700);
        let pixels = Pixels {
            width: w,
            height: h,
            data: vec![Color32::GRAY; w * h],
        };
        let img = TiledImage::new(&ctx, "t", pixels, 256, true);
        // 1300 -> 650 -> 325: three levels, the last within 512 px.
        assert_eq!(img.levels.len(), 3);
        for level in &img.levels {
            let mut area = 0.0;
            for t in &level.tiles {
                let [tw, th] = t.texture.size();
                assert!(tw <= 256 && th <= 256, "tile {tw}x{th} over the limit");
                area += t.image_rect.area();
            }
            // The tiles cover the image exactly (area in image pixels, exact in f32 here).
            assert!((area - (w * h) as f32).abs() < 1.0, "area {area}");
        }
        // Zoomed out to a quarter, the level of scale 4 is drawn.
        assert_eq!(img.level_for_zoom(0.25, 1.0), 2);
        assert_eq!(img.level_for_zoom(2.0, 1.0), 0);
    }

    #[test]
    fn halving_averages_blocks() {
        let p = Pixels {
            width: 3,
            height: 1,
            data: vec![
                Color32::from_gray(0),
                Color32::from_gray(100),
                Color32::from_gray(50),
            ],
        };
        let h = p.halved();
        assert_eq!((h.width, h.height), (2, 1));
        assert_eq!(h.data[0], Color32::from_gray(50));
        assert_eq!(h.data[1], Color32::from_gray(50));
    }
}
