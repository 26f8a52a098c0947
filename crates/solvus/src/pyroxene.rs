//! Pyroxene thermometers: two-pyroxene (clinopyroxene + orthopyroxene) and clinopyroxene-only
//! temperatures from published empirical equations.
//!
//! Inputs are cations per 6 oxygens with all iron as Fe2+ (no normalisation to 4 cations), the
//! convention these equations were calibrated with. Component definitions (Jd, CaTs, CaTi,
//! DiHd, EnFs, Fm2Si2O6, ...) follow the scheme of Putirka (2008, Rev. Mineral. Geochem. 69:61)
//! as transcribed in the open Thermobar library (Wieser et al. 2022, Volcanica 5:349); the
//! Wells (1977) site model is Wood & Banno's (1973, Contrib. Mineral. Petrol. 42:109) with
//! Fe3+ = Na + Al(IV) - Al(VI) - 2Ti - Cr (Lindsley 1983, Am. Mineral. 68:477).

use serde::{Deserialize, Serialize};

use crate::units::{celsius_from_kelvin, kelvin_from_celsius};

/// Cations per 6 oxygens, all iron as Fe2+.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct PyroxeneCations {
    /// Si.
    pub si: f64,
    /// Ti.
    pub ti: f64,
    /// Al.
    pub al: f64,
    /// Cr.
    pub cr: f64,
    /// Total Fe.
    pub fe_total: f64,
    /// Mn.
    pub mn: f64,
    /// Mg.
    pub mg: f64,
    /// Ca.
    pub ca: f64,
    /// Na.
    pub na: f64,
    /// K.
    pub k: f64,
}

impl PyroxeneCations {
    /// Tetrahedral Al, 2 - Si (Putirka 2008 scheme; not clipped).
    fn al_iv(&self) -> f64 {
        2.0 - self.si
    }

    /// Octahedral Al, Al - Al(IV), at least zero.
    fn al_vi(&self) -> f64 {
        (self.al - self.al_iv()).max(0.0)
    }

    /// Mg / (Mg + Fe_total).
    pub fn mg_number(&self) -> f64 {
        self.mg / (self.mg + self.fe_total)
    }

    fn all_finite(&self) -> bool {
        [
            self.si,
            self.ti,
            self.al,
            self.cr,
            self.fe_total,
            self.mn,
            self.mg,
            self.ca,
            self.na,
            self.k,
        ]
        .iter()
        .all(|v| v.is_finite() && *v >= 0.0)
    }
}

/// Clinopyroxene components of the Putirka (2008) scheme.
#[derive(Debug, Clone, Copy)]
struct CpxComponents {
    cr_cats: f64,
    a_en: f64,
    en_fs: f64,
    di: f64,
}

fn cpx_components(c: &PyroxeneCations) -> CpxComponents {
    let (al_iv, al_vi) = (c.al_iv(), c.al_vi());
    let cr_cats = 0.5 * c.cr;
    let a_en = (1.0 - c.ca - c.na - c.k) * (1.0 - 0.5 * (c.al + c.cr + c.na + c.k));
    let cats = if al_vi < c.na { 0.0 } else { al_vi - c.na };
    let cati = if al_iv - cats < 0.0 {
        0.0
    } else {
        (al_iv - cats) / 2.0
    };
    let di_hd = (c.ca - cats - cati - cr_cats).max(0.0);
    CpxComponents {
        cr_cats,
        a_en,
        en_fs: (c.fe_total + c.mg - di_hd) / 2.0,
        di: di_hd * c.mg / (c.mg + c.mn + c.fe_total),
    }
}

/// Orthopyroxene components of the Putirka (2008) scheme.
#[derive(Debug, Clone, Copy)]
struct OpxComponents {
    fm_al2sio6: f64,
    fm2si2o6: f64,
    en: f64,
    di: f64,
}

fn opx_components(o: &PyroxeneCations) -> OpxComponents {
    let fm_al2sio6 = (o.al_vi() - o.na - o.cr).max(0.0);
    let fm2si2o6 = (o.fe_total + o.mg + o.mn - o.ti - fm_al2sio6 - o.ca) / 2.0;
    let mg_share = o.mg / (o.mg + o.fe_total + o.mn);
    OpxComponents {
        fm_al2sio6,
        fm2si2o6,
        en: fm2si2o6 * mg_share,
        di: o.ca * mg_share,
    }
}

/// Enstatite activity on the M1 and M2 sites and the Fe2+-based Mg number, in the site model of
/// Wood & Banno (1973) used by Wells (1977).
fn wood_banno_en(c: &PyroxeneCations) -> (f64, f64) {
    let (al_iv, al_vi) = (c.al_iv(), c.al_vi());
    let fe3 = (c.na + al_iv - al_vi - 2.0 * c.ti - c.cr).clamp(0.0, c.fe_total);
    let mg_no = c.mg / (c.mg + c.fe_total - fe3);
    let m2 = 1.0 - c.ca - c.na - c.mn;
    let m1 = 1.0 - fe3 - al_vi - c.ti - c.cr;
    let (mg_m2, fe_m2) = (m2 * mg_no, m2 * (1.0 - mg_no));
    let (mg_m1, fe_m1) = (m1 * mg_no, m1 * (1.0 - mg_no));
    let a_en = mg_m2 / (mg_m2 + fe_m2 + c.ca + c.na + c.mn)
        * (mg_m1 / (fe3 + c.ti + al_vi + c.cr + mg_m1 + fe_m1));
    (a_en, mg_no)
}

/// A published pyroxene thermometer.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum PyroxeneThermometer {
    /// Brey & Köhler (1990), two-pyroxene (enstatite-diopside solvus), P-dependent.
    BreyKohler1990,
    /// Wells (1977), two-pyroxene, P-independent.
    Wells1977,
    /// Putirka (2008) eq. 36, two-pyroxene.
    Putirka2008Eq36,
    /// Putirka (2008) eq. 37, two-pyroxene.
    Putirka2008Eq37,
    /// Putirka (2008) eq. 32d, clinopyroxene only.
    Putirka2008Eq32d,
}

impl PyroxeneThermometer {
    /// Every thermometer.
    pub const ALL: [PyroxeneThermometer; 5] = [
        PyroxeneThermometer::BreyKohler1990,
        PyroxeneThermometer::Wells1977,
        PyroxeneThermometer::Putirka2008Eq36,
        PyroxeneThermometer::Putirka2008Eq37,
        PyroxeneThermometer::Putirka2008Eq32d,
    ];

    /// Command-line id (`bk1990`, `wells1977`, `putirka2008-36`, ...).
    pub fn id(self) -> &'static str {
        match self {
            PyroxeneThermometer::BreyKohler1990 => "bk1990",
            PyroxeneThermometer::Wells1977 => "wells1977",
            PyroxeneThermometer::Putirka2008Eq36 => "putirka2008-36",
            PyroxeneThermometer::Putirka2008Eq37 => "putirka2008-37",
            PyroxeneThermometer::Putirka2008Eq32d => "putirka2008-32d",
        }
    }

    /// The thermometer with this id.
    pub fn from_id(id: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|t| t.id() == id)
    }

    /// Citation.
    pub fn citation(self) -> &'static str {
        match self {
            PyroxeneThermometer::BreyKohler1990 => {
                "Brey G.P. & Köhler T. (1990) Geothermobarometry in four-phase lherzolites II. J. Petrol. 31, 1353-1378"
            }
            PyroxeneThermometer::Wells1977 => {
                "Wells P.R.A. (1977) Pyroxene thermometry in simple and complex systems. Contrib. Mineral. Petrol. 62, 129-139"
            }
            PyroxeneThermometer::Putirka2008Eq36
            | PyroxeneThermometer::Putirka2008Eq37
            | PyroxeneThermometer::Putirka2008Eq32d => {
                "Putirka K.D. (2008) Thermometers and barometers for volcanic systems. Rev. Mineral. Geochem. 69, 61-120"
            }
        }
    }

    /// Whether it needs an orthopyroxene as well as a clinopyroxene.
    pub fn needs_pair(self) -> bool {
        self != PyroxeneThermometer::Putirka2008Eq32d
    }

    /// Published standard error of estimate, °C, over the whole calibration data set
    /// ([`Calibration::see_all_c`]).
    pub fn see_c(self) -> f64 {
        self.calibration().see_all_c
    }

    /// Standard error of estimate for a clinopyroxene of this Mg# (Mg / (Mg + ΣFe)): the smaller
    /// published value for Mg# ≥ 0.75 where there is one, else the whole-data value.
    pub fn see_for_mg_number(self, mg_number: f64) -> f64 {
        let c = self.calibration();
        match c.see_high_mg_c {
            Some(see) if mg_number >= 0.75 => see,
            _ => c.see_all_c,
        }
    }

    /// What is known of the thermometer's calibration: its standard errors and the range of
    /// temperature and pressure of the experiments it was fitted to.
    ///
    /// Standard errors of Brey & Köhler (1990), Putirka (2008) eqs 36, 37 and 32d as tested by
    /// Putirka (2008), in the form the Thermobar library documents them (version 1.0.75, the
    /// docstrings of `T_Brey1990`, `T_Put2008_eq36`, `T_Put2008_eq37`, `T_Put2008_eq32d`);
    /// Wells (1977) ±70 °C from memory. The temperature and pressure ranges are approximate and
    /// from memory: they flag a result far outside the experiments, not a fine boundary.
    pub fn calibration(self) -> Calibration {
        match self {
            PyroxeneThermometer::BreyKohler1990 => Calibration {
                see_all_c: 70.0,
                see_high_mg_c: Some(50.0),
                temperature_c: (900.0, 1400.0),
                pressure_kbar: (10.0, 60.0),
                basis: "experiments on natural lherzolite compositions; ranges from memory",
            },
            PyroxeneThermometer::Wells1977 => Calibration {
                see_all_c: 70.0,
                see_high_mg_c: None,
                temperature_c: (800.0, 1600.0),
                pressure_kbar: (0.0, 40.0),
                basis: "experiments in simple and natural systems; standard error and ranges from memory",
            },
            PyroxeneThermometer::Putirka2008Eq36 => Calibration {
                see_all_c: 56.0,
                see_high_mg_c: Some(45.0),
                temperature_c: (750.0, 1600.0),
                pressure_kbar: (0.0, 60.0),
                basis: "experimental cpx-opx pairs; ranges from memory",
            },
            PyroxeneThermometer::Putirka2008Eq37 => Calibration {
                see_all_c: 60.0,
                see_high_mg_c: Some(38.0),
                temperature_c: (750.0, 1600.0),
                pressure_kbar: (0.0, 60.0),
                basis: "experimental cpx-opx pairs, cpx Mg# > 0.75; ranges from memory",
            },
            PyroxeneThermometer::Putirka2008Eq32d => Calibration {
                see_all_c: 58.0,
                see_high_mg_c: None,
                temperature_c: (1000.0, 1700.0),
                pressure_kbar: (0.0, 40.0),
                basis: "anhydrous clinopyroxene-saturated experiments (±87 °C for hydrous ones); ranges from memory",
            },
        }
    }
}

/// A thermometer's calibration, as [`PyroxeneThermometer::calibration`] gives it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Calibration {
    /// Standard error of estimate over all the calibration data, °C.
    pub see_all_c: f64,
    /// Standard error for clinopyroxene with Mg# ≥ 0.75, °C, where published.
    pub see_high_mg_c: Option<f64>,
    /// Approximate temperature range of the experiments, °C.
    pub temperature_c: (f64, f64),
    /// Approximate pressure range of the experiments, kbar.
    pub pressure_kbar: (f64, f64),
    /// What the calibration rests on, and how sure the ranges are.
    pub basis: &'static str,
}

/// A pyroxene temperature with its standard error and warnings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PyroxeneTemperature {
    /// The thermometer.
    pub thermometer: PyroxeneThermometer,
    /// Temperature, °C.
    pub temperature_c: f64,
    /// Published standard error of estimate, °C.
    pub see_c: f64,
    /// Calibration and equilibrium warnings.
    pub warnings: Vec<String>,
}

/// Why a pyroxene temperature could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum PyroxeneError {
    /// A two-pyroxene thermometer was given no orthopyroxene.
    #[error("{0} needs an orthopyroxene analysis as well as the clinopyroxene")]
    NeedsOrthopyroxene(&'static str),
    /// Cations are negative or not numbers.
    #[error("the {0} cations are negative or not numbers")]
    BadCations(&'static str),
    /// The pressure is not a positive finite number.
    #[error("pressure {0} kbar is not usable")]
    BadPressure(f64),
    /// Neither Mg nor Fe: the Mg/Fe ratios the thermometers use have no value.
    #[error(
        "the {0} has neither Mg nor Fe: pyroxene thermometers need Mg + Fe above zero (check the analysis' MgO and FeO columns)"
    )]
    NoMgOrFe(&'static str),
    /// A logarithm or ratio in the equation has no value for this composition.
    #[error(
        "{thermometer}: {quantity} is {}, so the equation has no value for this composition",
        describe_value(*value)
    )]
    OutOfDomain {
        /// Thermometer id.
        thermometer: &'static str,
        /// The quantity.
        quantity: &'static str,
        /// Its value.
        value: f64,
    },
}

/// A value for a message: a number, or what it is when it is not one (never `NaN`).
fn describe_value(value: f64) -> String {
    if value.is_nan() {
        "undefined (a ratio of zeros)".into()
    } else if value.is_infinite() {
        "infinite (a division by zero)".into()
    } else {
        format!("{value}")
    }
}

/// Putirka (2008) equilibrium test for cpx-opx pairs: K_D(Fe-Mg) = 1.09 ± 0.14 (from memory).
const KD_CPX_OPX: (f64, f64) = (1.09, 0.14);

/// Temperature of a clinopyroxene (and orthopyroxene, for the two-pyroxene thermometers) at a
/// pressure in kbar.
///
/// # Errors
/// Missing orthopyroxene, bad cations or pressure, or a composition outside the equation's
/// domain (a logarithm of a non-positive number).
pub fn pyroxene_temperature(
    thermometer: PyroxeneThermometer,
    cpx: &PyroxeneCations,
    opx: Option<&PyroxeneCations>,
    pressure_kbar: f64,
) -> Result<PyroxeneTemperature, PyroxeneError> {
    let id = thermometer.id();
    if !(pressure_kbar.is_finite() && pressure_kbar >= 0.0) {
        return Err(PyroxeneError::BadPressure(pressure_kbar));
    }
    if !cpx.all_finite() {
        return Err(PyroxeneError::BadCations("clinopyroxene"));
    }
    let opx = match (thermometer.needs_pair(), opx) {
        (true, None) => return Err(PyroxeneError::NeedsOrthopyroxene(id)),
        (_, Some(o)) if !o.all_finite() => return Err(PyroxeneError::BadCations("orthopyroxene")),
        (_, o) => o,
    };
    if cpx.mg + cpx.fe_total <= 0.0 {
        return Err(PyroxeneError::NoMgOrFe("clinopyroxene"));
    }
    if let Some(o) = opx
        && o.mg + o.fe_total <= 0.0
    {
        return Err(PyroxeneError::NoMgOrFe("orthopyroxene"));
    }
    let positive = |quantity: &'static str, value: f64| {
        if value > 0.0 && value.is_finite() {
            Ok(value)
        } else {
            Err(PyroxeneError::OutOfDomain {
                thermometer: id,
                quantity,
                value,
            })
        }
    };
    let p = pressure_kbar;
    let c = cpx_components(cpx);
    let mut warnings = Vec::new();
    let temperature_k = match (thermometer, opx) {
        (PyroxeneThermometer::Putirka2008Eq32d, _) => {
            let ln_a = positive("a_En(cpx)", c.a_en)?.ln();
            (93_100.0 + 544.0 * p)
                / (61.1 + 36.6 * cpx.ti + 10.9 * cpx.fe_total
                    - 0.95 * (cpx.al + cpx.cr - cpx.na - cpx.k)
                    + 0.395 * ln_a * ln_a)
        }
        (PyroxeneThermometer::BreyKohler1990, Some(o)) => {
            let ca_star = |x: &PyroxeneCations| x.ca / (1.0 - x.na);
            let k = positive("1 - Ca*(cpx)", 1.0 - ca_star(cpx))?
                / positive("1 - Ca*(opx)", 1.0 - ca_star(o))?;
            let x_fe_cpx = cpx.fe_total / (cpx.fe_total + cpx.mg);
            let x_fe_opx = o.fe_total / (o.fe_total + o.mg);
            (23_664.0 + (24.9 + 126.3 * x_fe_cpx) * p) / (13.38 + k.ln().powi(2) + 11.59 * x_fe_opx)
        }
        (PyroxeneThermometer::Wells1977, Some(o)) => {
            let (a_cpx, _) = wood_banno_en(cpx);
            let (a_opx, mg_no_opx) = wood_banno_en(o);
            let k = positive("a_En(cpx)", a_cpx)? / positive("a_En(opx)", a_opx)?;
            7341.0 / (3.355 + 2.44 * (1.0 - mg_no_opx) - k.ln())
        }
        (PyroxeneThermometer::Putirka2008Eq36, Some(o)) => {
            let op = opx_components(o);
            let ratio = positive("EnFs(cpx)", c.en_fs)? / positive("Fm2Si2O6(opx)", op.fm2si2o6)?;
            kelvin_from_celsius(
                1.0e4
                    / (11.2 - 1.96 * ratio.ln() - 3.3 * cpx.ca - 25.8 * c.cr_cats + 33.2 * o.mn
                        - 23.6 * o.na
                        - 2.08 * op.en
                        - 8.33 * op.di
                        - 0.05 * p),
            )
        }
        (PyroxeneThermometer::Putirka2008Eq37, Some(o)) => {
            let op = opx_components(o);
            let ratio = positive("EnFs(cpx)", c.en_fs)? / positive("Fm2Si2O6(opx)", op.fm2si2o6)?;
            let ln_mg = positive("Mg(cpx)", cpx.mg)?.ln();
            kelvin_from_celsius(
                1.0e4
                    / (13.4 - 3.4 * ratio.ln()
                        + 5.59 * ln_mg
                        + 23.85 * o.mn
                        + 6.48 * op.fm_al2sio6
                        - 2.38 * c.di
                        - 0.044 * p
                        - 8.8 * cpx.mg / (cpx.mg + cpx.fe_total)),
            )
        }
        (_, None) => return Err(PyroxeneError::NeedsOrthopyroxene(id)),
    };
    let temperature_c = celsius_from_kelvin(temperature_k);
    if !(temperature_c.is_finite() && temperature_k > 0.0) {
        return Err(PyroxeneError::OutOfDomain {
            thermometer: id,
            quantity: "temperature",
            value: temperature_c,
        });
    }
    // Calibration and equilibrium warnings (ranges from the papers, from memory).
    if let Some(o) = opx {
        let (num, den) = (cpx.fe_total * o.mg, cpx.mg * o.fe_total);
        let kd = num / den;
        if !(den > 0.0 && kd.is_finite()) {
            warnings.push(
                "K_D(Fe-Mg) cpx-opx cannot be computed (Mg or Fe is absent from one pyroxene), so the pair's equilibrium is not checked".into(),
            );
        } else if (kd - KD_CPX_OPX.0).abs() > KD_CPX_OPX.1 {
            warnings.push(format!(
                "K_D(Fe-Mg) cpx-opx = {kd:.2}, outside 1.09 ± 0.14: the pair may not be in equilibrium (Putirka 2008)"
            ));
        }
    }
    let cal = thermometer.calibration();
    let (t_lo, t_hi) = cal.temperature_c;
    let (p_lo, p_hi) = cal.pressure_kbar;
    if !(t_lo..=t_hi).contains(&temperature_c) || !(p_lo..=p_hi).contains(&p) {
        warnings.push(format!(
            "{temperature_c:.0} C at {p} kbar is outside the approximate calibration of {id} ({t_lo:.0}-{t_hi:.0} C, {p_lo:.0}-{p_hi:.0} kbar; {})",
            cal.basis
        ));
    }
    match thermometer {
        PyroxeneThermometer::Putirka2008Eq36 | PyroxeneThermometer::Putirka2008Eq37
            if cpx.mg_number() < 0.75 =>
        {
            warnings.push(format!(
                "clinopyroxene Mg# {:.2} is below 0.75, where Putirka (2008) reports a larger error",
                cpx.mg_number()
            ));
        }
        PyroxeneThermometer::Putirka2008Eq32d => {
            warnings.push("clinopyroxene alone: a temperature for anhydrous systems; it overestimates hydrous ones (Putirka 2008)".into());
        }
        _ => {}
    }
    Ok(PyroxeneTemperature {
        thermometer,
        temperature_c,
        see_c: thermometer.see_for_mg_number(cpx.mg_number()),
        warnings,
    })
}
