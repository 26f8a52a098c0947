//! Pyroxene thermometry on spot analyses: the bridge from `mineral`'s formulae to `solvus`'s
//! pyroxene thermometers.

use mineral::{Analysis, Cation, pyroxene_cations_total_iron};
use solvus::pyroxene::PyroxeneCations;

/// Cations per 6 oxygens (all iron as Fe2+) of an analysis, as the thermometers take them.
/// `None` when the analysis has no usable oxide.
pub fn thermometry_cations(analysis: &Analysis) -> Option<PyroxeneCations> {
    let c = pyroxene_cations_total_iron(analysis)?;
    let get = |x: Cation| c.get(&x).copied().unwrap_or(0.0);
    Some(PyroxeneCations {
        si: get(Cation::Si),
        ti: get(Cation::Ti),
        al: get(Cation::Al),
        cr: get(Cation::Cr),
        fe_total: get(Cation::Fe2) + get(Cation::Fe3),
        mn: get(Cation::Mn),
        mg: get(Cation::Mg),
        ca: get(Cation::Ca),
        na: get(Cation::Na),
        k: get(Cation::K),
    })
}

/// The minimum crystallisation temperature of a reintegrated pyroxene, from a clinopyroxene-only
/// thermometer, for the Monte Carlo loop.
///
/// Each draw gives the bulk over Di, Hd, En, Fs (formula units M2M1Si2O6): Ca = Di + Hd,
/// Mg = Di + 2 En, Fe = Hd + 2 Fs. These are scaled to the Ca + Mg + Fe of the deterministic
/// bulk analysis, whose minor cations (Si, Ti, Al, Cr, Mn, Na, K) are kept as they are: the
/// draws vary the quadrilateral components, which carry the uncertainty of the reintegration.
#[derive(Debug, Clone)]
pub struct PyroxeneBulkThermometer {
    /// The thermometer (clinopyroxene alone).
    pub thermometer: solvus::pyroxene::PyroxeneThermometer,
    /// Cations of the deterministic reintegrated bulk analysis.
    pub reference: PyroxeneCations,
}

impl reintegration::BulkThermometer for PyroxeneBulkThermometer {
    fn min_temperature(
        &self,
        bulk: &[f64],
        pressure_kbar: f64,
    ) -> reintegration::TemperatureOutcome {
        use reintegration::TemperatureOutcome;
        let [di, hd, en, fs] = bulk else {
            return TemperatureOutcome::Refused {
                reason: format!("expected Di, Hd, En, Fs fractions, got {}", bulk.len()),
            };
        };
        let (ca, mg, fe) = (di + hd, di + 2.0 * en, hd + 2.0 * fs);
        let r = &self.reference;
        let scale = (r.ca + r.mg + r.fe_total) / (ca + mg + fe);
        let cations = PyroxeneCations {
            ca: ca * scale,
            mg: mg * scale,
            fe_total: fe * scale,
            ..*r
        };
        match solvus::pyroxene::pyroxene_temperature(
            self.thermometer,
            &cations,
            None,
            pressure_kbar,
        ) {
            Ok(t) => TemperatureOutcome::Value {
                temperature_c: t.temperature_c,
            },
            Err(e) => TemperatureOutcome::Refused {
                reason: e.to_string(),
            },
        }
    }

    fn describe(&self) -> String {
        format!(
            "{} on the reintegrated clinopyroxene",
            self.thermometer.id()
        )
    }
}
