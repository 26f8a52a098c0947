//! Units: the one place where Celsius/Kelvin and bar/kbar are converted.
//!
//! Inside the crate temperatures are in kelvin and pressures in bar, as in the Margules
//! parameters `W = WH - T WS + P WV` (J/mol, J/(mol K), J/(mol bar)). Interfaces that face users
//! (the command line, reports) speak Celsius and kbar and convert here, nowhere else.

/// Molar gas constant, J/(mol K) (CODATA 2018 exact value).
pub const GAS_CONSTANT: f64 = 8.314_462_618;

/// Offset between the Celsius and Kelvin scales.
const CELSIUS_ZERO_K: f64 = 273.15;

/// Bar per kilobar.
const BAR_PER_KBAR: f64 = 1000.0;

/// Temperature in kelvin from Celsius.
#[must_use]
pub fn kelvin_from_celsius(temperature_c: f64) -> f64 {
    temperature_c + CELSIUS_ZERO_K
}

/// Temperature in Celsius from kelvin.
#[must_use]
pub fn celsius_from_kelvin(temperature_k: f64) -> f64 {
    temperature_k - CELSIUS_ZERO_K
}

/// Pressure in bar from kilobar.
#[must_use]
pub fn bar_from_kbar(pressure_kbar: f64) -> f64 {
    pressure_kbar * BAR_PER_KBAR
}

/// Pressure in kilobar from bar.
#[must_use]
pub fn kbar_from_bar(pressure_bar: f64) -> f64 {
    pressure_bar / BAR_PER_KBAR
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn conversions_round_trip() {
        // Source: SI definition of the Celsius scale (0 C = 273.15 K exactly).
        assert!((kelvin_from_celsius(0.0) - 273.15).abs() < 1e-12);
        assert!((celsius_from_kelvin(kelvin_from_celsius(661.5)) - 661.5).abs() < 1e-12);
        // Source: 1 kbar = 1000 bar by definition of the prefix.
        assert!((bar_from_kbar(1.0) - 1000.0).abs() < 1e-12);
        assert!((kbar_from_bar(bar_from_kbar(2.5)) - 2.5).abs() < 1e-12);
    }
}
