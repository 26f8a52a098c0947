//! Pixel size from a scale bar, and the one place where pixels become micrometres.

use serde::{Deserialize, Serialize};

use crate::error::{MicrographError, Result};

/// Micrometres per pixel (square pixels), set by the user from a scale bar.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PixelSize {
    pixel_size_um: f64,
}

impl PixelSize {
    /// A pixel size given directly in micrometres per pixel.
    pub fn new(pixel_size_um: f64) -> Result<Self> {
        if !(pixel_size_um.is_finite() && pixel_size_um > 0.0) {
            return Err(MicrographError::InvalidParameter {
                name: "pixel_size_um",
                value: pixel_size_um.to_string(),
                expected: "a positive, finite number of micrometres per pixel".to_string(),
            });
        }
        Ok(Self { pixel_size_um })
    }

    /// From a scale bar: its known length in micrometres and its measured length in pixels
    /// (for instance the distance between the two end points the user clicked).
    pub fn from_scale_bar(bar_length_um: f64, bar_length_px: f64) -> Result<Self> {
        if !(bar_length_px.is_finite() && bar_length_px > 0.0) {
            return Err(MicrographError::InvalidParameter {
                name: "bar_length_px",
                value: bar_length_px.to_string(),
                expected: "a positive length in pixels".to_string(),
            });
        }
        if !(bar_length_um.is_finite() && bar_length_um > 0.0) {
            return Err(MicrographError::InvalidParameter {
                name: "bar_length_um",
                value: bar_length_um.to_string(),
                expected: "a positive length in micrometres".to_string(),
            });
        }
        Self::new(bar_length_um / bar_length_px)
    }

    /// Micrometres per pixel.
    pub fn pixel_size_um(&self) -> f64 {
        self.pixel_size_um
    }

    /// A length in pixels as micrometres.
    pub fn length_um(&self, length_px: f64) -> f64 {
        length_px * self.pixel_size_um
    }

    /// An area in pixels as square micrometres.
    pub fn area_um2(&self, area_px: f64) -> f64 {
        area_px * self.pixel_size_um * self.pixel_size_um
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scale_bar_gives_pixel_size() {
        // Source: definition of scale (length / pixels); 100 um over 250 px = 0.4 um/px.
        let s = PixelSize::from_scale_bar(100.0, 250.0).unwrap();
        assert!((s.pixel_size_um() - 0.4).abs() < 1e-12, "exact arithmetic");
        assert!(
            (s.area_um2(100.0) - 16.0).abs() < 1e-9,
            "area scales with the square"
        );
        assert!(PixelSize::from_scale_bar(100.0, 0.0).is_err());
        assert!(PixelSize::new(f64::NAN).is_err());
    }
}
