//! Solution models: Margules parameters, ideal-mixing choice, and the thermodynamic functions
//! they define (Gibbs energy of mixing, chemical potentials, activities, activity coefficients,
//! excess volume).
//!
//! A Margules parameter is `W = WH - T WS + P WV` (J/mol with T in K and P in bar). `W_ij` is the
//! coefficient of `X_i X_j^2` (component `i` dilute in `j`). The ternary excess Gibbs energy is the
//! form used by Fuhrman & Lindsley (1988, Am. Mineral. 73:201) and Elkins & Grove (1990, Am.
//! Mineral. 75:544):
//!
//! ```text
//! G_ex = W_AbOr Ab Or (Or + An/2) + W_OrAb Ab Or (Ab + An/2) + W_AbAn Ab An (An + Or/2)
//!      + W_AnAb Ab An (Ab + Or/2) + W_OrAn Or An (An + Ab/2) + W_AnOr Or An (Or + Ab/2)
//!      + W_OrAbAn Ab Or An
//! ```
//!
//! On the Ab-Or join it reduces to `G_ex = X_Ab X_Or (W_AbOr X_Or + W_OrAb X_Ab)`, the
//! two-parameter Margules model of Thompson & Waldbaum (1969, Am. Mineral. 54:811).
//!
//! Activity coefficients are the analytic partial molar derivatives of `n G_ex`:
//! `RT ln gamma_i = G_ex + dG_ex/dX_i - sum_j X_j dG_ex/dX_j` (any smooth extension of `G_ex` off
//! the simplex gives the same result). They are checked against finite differences of `n G_ex`
//! and against the Gibbs-Duhem relation in the tests.

use serde::{Deserialize, Serialize};

use crate::error::SolvusError;
use crate::units::{GAS_CONSTANT, celsius_from_kelvin};

/// The three feldspar end members, in the fixed order used by every array in this crate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum Component {
    /// Albite, NaAlSi3O8.
    Ab,
    /// Orthoclase (K-feldspar), KAlSi3O8.
    Or,
    /// Anorthite, CaAl2Si2O8.
    An,
}

impl Component {
    /// All components in array order.
    pub const ALL: [Component; 3] = [Component::Ab, Component::Or, Component::An];

    /// Position of this component in `[Ab, Or, An]` arrays.
    #[must_use]
    pub fn index(self) -> usize {
        match self {
            Component::Ab => 0,
            Component::Or => 1,
            Component::An => 2,
        }
    }

    /// Short label, `Ab`, `Or` or `An`.
    #[must_use]
    pub fn label(self) -> &'static str {
        match self {
            Component::Ab => "Ab",
            Component::Or => "Or",
            Component::An => "An",
        }
    }
}

/// Mole fractions of Ab, Or and An, validated (finite, non-negative, summing to one).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Composition {
    /// Mole fraction of albite.
    pub x_ab: f64,
    /// Mole fraction of orthoclase.
    pub x_or: f64,
    /// Mole fraction of anorthite.
    pub x_an: f64,
}

impl Composition {
    /// How far the given fractions may sum from one before they are refused (they are then
    /// normalised). Allows analyses rounded to two or three decimals (common practice).
    pub const SUM_TOLERANCE: f64 = 0.01;

    /// A composition from mole fractions; they are normalised to sum exactly to one.
    ///
    /// # Errors
    /// [`SolvusError::InvalidComposition`] if a fraction is not finite, is negative, or the
    /// sum is further than [`Self::SUM_TOLERANCE`] from one.
    pub fn new(x_ab: f64, x_or: f64, x_an: f64) -> Result<Self, SolvusError> {
        let refuse = |reason: String| SolvusError::InvalidComposition {
            x_ab,
            x_or,
            x_an,
            reason,
        };
        if !(x_ab.is_finite() && x_or.is_finite() && x_an.is_finite()) {
            return Err(refuse("every mole fraction must be a finite number".into()));
        }
        if x_ab < 0.0 || x_or < 0.0 || x_an < 0.0 {
            return Err(refuse("mole fractions cannot be negative".into()));
        }
        let sum = x_ab + x_or + x_an;
        if (sum - 1.0).abs() > Self::SUM_TOLERANCE {
            return Err(refuse(format!(
                "mole fractions sum to {sum:.4}, not 1 (tolerance {})",
                Self::SUM_TOLERANCE
            )));
        }
        if (sum - 1.0).abs() < 1e-12 {
            return Ok(Self { x_ab, x_or, x_an });
        }
        Ok(Self {
            x_ab: x_ab / sum,
            x_or: x_or / sum,
            x_an: x_an / sum,
        })
    }

    /// A composition on the Ab-Or join.
    ///
    /// # Errors
    /// [`SolvusError::InvalidComposition`] unless `0 <= x_or <= 1`.
    pub fn ab_or(x_or: f64) -> Result<Self, SolvusError> {
        if !(0.0..=1.0).contains(&x_or) {
            return Err(SolvusError::InvalidComposition {
                x_ab: 1.0 - x_or,
                x_or,
                x_an: 0.0,
                reason: "X_Or on the Ab-Or join must lie between 0 and 1".into(),
            });
        }
        Ok(Self {
            x_ab: 1.0 - x_or,
            x_or,
            x_an: 0.0,
        })
    }

    /// `[x_ab, x_or, x_an]`.
    #[must_use]
    pub fn as_array(&self) -> [f64; 3] {
        [self.x_ab, self.x_or, self.x_an]
    }

    /// Internal: from an array already known to be a valid composition.
    pub(crate) fn from_array(x: [f64; 3]) -> Self {
        Self {
            x_ab: x[0],
            x_or: x[1],
            x_an: x[2],
        }
    }

    /// `X_Or / (X_Ab + X_Or)`: the projection onto the Ab-Or join used when a binary model is
    /// given a composition containing An. `None` for pure anorthite.
    #[must_use]
    pub fn projected_x_or(&self) -> Option<f64> {
        let alkali = self.x_ab + self.x_or;
        (alkali > 0.0).then(|| self.x_or / alkali)
    }
}

/// One Margules parameter `W = WH - T WS + P WV`.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Margules {
    /// Enthalpy term, J/mol.
    pub wh: f64,
    /// Entropy term, J/(mol K).
    #[serde(default)]
    pub ws: f64,
    /// Volume term, J/(mol bar).
    #[serde(default)]
    pub wv: f64,
}

impl Margules {
    /// A parameter from its enthalpy, entropy and volume terms.
    #[must_use]
    pub const fn new(wh: f64, ws: f64, wv: f64) -> Self {
        Self { wh, ws, wv }
    }

    /// The value `WH - T WS + P WV` in J/mol.
    #[must_use]
    pub fn at(&self, temperature_k: f64, pressure_bar: f64) -> f64 {
        self.wh - temperature_k * self.ws + pressure_bar * self.wv
    }
}

/// The seven Margules parameters of the ternary model (binary models leave the An terms zero).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct MargulesSet {
    /// `W_AbOr`: Ab dilute in Or.
    pub ab_or: Margules,
    /// `W_OrAb`: Or dilute in Ab.
    pub or_ab: Margules,
    /// `W_AbAn`.
    pub ab_an: Margules,
    /// `W_AnAb`.
    pub an_ab: Margules,
    /// `W_OrAn`.
    pub or_an: Margules,
    /// `W_AnOr`.
    pub an_or: Margules,
    /// `W_OrAbAn`, the ternary term.
    pub or_ab_an: Margules,
}

impl MargulesSet {
    /// The parameters in the internal order `[AbOr, OrAb, AbAn, AnAb, OrAn, AnOr, OrAbAn]`.
    #[must_use]
    pub fn as_array(&self) -> [Margules; 7] {
        [
            self.ab_or,
            self.or_ab,
            self.ab_an,
            self.an_ab,
            self.or_an,
            self.an_or,
            self.or_ab_an,
        ]
    }

    /// Whether any parameter involving An is non-zero.
    #[must_use]
    pub fn has_an_terms(&self) -> bool {
        self.as_array()[2..]
            .iter()
            .any(|m| m.wh != 0.0 || m.ws != 0.0 || m.wv != 0.0)
    }
}

/// `(i, j, k)` for the six binary terms in internal order: `W_ij X_i X_j (X_j + X_k / 2)`.
const PAIRS: [(usize, usize, usize); 6] = [
    (0, 1, 2), // AbOr
    (1, 0, 2), // OrAb
    (0, 2, 1), // AbAn
    (2, 0, 1), // AnAb
    (1, 2, 0), // OrAn
    (2, 1, 0), // AnOr
];

/// The ideal (configurational) part of a model. Never mix a parameter set with another set's
/// ideal part.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IdealMixing {
    /// Molecular mixing, `a_i = X_i`.
    Molecular,
    /// Al-avoidance (Fuhrman & Lindsley 1988): `a_Ab = X_Ab (1 - X_An^2)`,
    /// `a_Or = X_Or (1 - X_An^2)`, `a_An = X_An (1 + X_An)^2 / 4`. Identical to molecular mixing
    /// on the Ab-Or join.
    AlAvoidance,
}

impl IdealMixing {
    /// Short description for listings.
    #[must_use]
    pub fn label(self) -> &'static str {
        match self {
            IdealMixing::Molecular => "molecular",
            IdealMixing::AlAvoidance => "al_avoidance",
        }
    }
}

/// Whether a model covers the Ab-Or join only or the whole Ab-Or-An triangle.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ModelKind {
    /// Ab-Or only; compositions with An are projected (`X_Or / (X_Ab + X_Or)`).
    Binary,
    /// Ab-Or-An.
    Ternary,
}

/// Where a model may be used.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelRange {
    /// Temperature interval searched by the solvers, Celsius.
    pub temperature_c: [f64; 2],
    /// Pressure interval accepted, kbar.
    pub pressure_kbar: [f64; 2],
    /// Largest X_An accepted (a binary model projects up to this much An).
    pub max_x_an: f64,
}

impl ModelRange {
    /// Working range of the built-in binary models: 200-1200 C, 0-10 kbar, X_An up to 0.10.
    /// These are working limits (common practice), not the authors' calibration ranges.
    pub const BINARY: ModelRange = ModelRange {
        temperature_c: [200.0, 1200.0],
        pressure_kbar: [0.0, 10.0],
        max_x_an: 0.10,
    };
    /// Working range of the built-in ternary models: 200-1500 C, 0-10 kbar, whole triangle
    /// (common practice working limits).
    pub const TERNARY: ModelRange = ModelRange {
        temperature_c: [200.0, 1500.0],
        pressure_kbar: [0.0, 10.0],
        max_x_an: 1.0,
    };
}

/// Elastic strain term for a coherent solvus, Cahn (1962) form `eta^2 Y V (X - X0)^2`
/// (from memory; design §3.3).
///
/// The quadratic in `X_Or` equals a linear term (which does not move any equilibrium) minus
/// `K X_Ab X_Or` with `K = eta^2 Y V`, so it is applied by lowering `W_AbOr` and `W_OrAb` by
/// `K`. It is independent of the bulk composition `X0`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CoherentStrain {
    /// `eta = (1/a) da/dX`, lattice misfit per unit composition (dimensionless).
    pub eta: f64,
    /// Effective elastic modulus `Y`, GPa.
    pub modulus_gpa: f64,
    /// Molar volume, J/bar (10 cm3 per J/bar).
    pub molar_volume_j_per_bar: f64,
}

impl Default for CoherentStrain {
    /// `eta = 0.054` from the a-axis lengths of albite (8.14 A) and sanidine (8.59 A), both from
    /// memory; molar volume 10.5 J/bar, between high albite 10.105 and sanidine 10.871 (Holland
    /// & Powell 2011, design §3.1); modulus 9.5 GPa is an effective value chosen so that the
    /// strain energy lowers the critical temperature by roughly the 100 C quoted for the coherent
    /// solvus (design §3.3), not a measured modulus.
    fn default() -> Self {
        Self {
            eta: 0.054,
            modulus_gpa: 9.5,
            molar_volume_j_per_bar: 10.5,
        }
    }
}

impl CoherentStrain {
    /// `K = eta^2 Y V` in J/mol (1 J/bar = 1e-5 m3, 1 GPa = 1e9 Pa).
    #[must_use]
    pub fn energy_j(&self) -> f64 {
        self.eta * self.eta * self.modulus_gpa * 1e9 * self.molar_volume_j_per_bar * 1e-5
    }
}

/// A solution model: parameters, ideal part, citation and range.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SolutionModel {
    /// Short id, e.g. `haselton1983`.
    pub id: String,
    /// Full citation of the parameter set.
    pub citation: String,
    /// Binary (Ab-Or) or ternary (Ab-Or-An).
    pub kind: ModelKind,
    /// The model's own ideal-mixing choice.
    pub ideal_mixing: IdealMixing,
    /// Margules parameters.
    pub margules: MargulesSet,
    /// Where the model may be used.
    pub range: ModelRange,
    /// Optional elastic strain term for a coherent solvus (off by default).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub coherent: Option<CoherentStrain>,
}

/// Ids of the built-in models, binary first.
pub const BUILTIN_IDS: [&str; 5] = ["tw1969", "haselton1983", "th1979", "fl1988", "eg1990"];

impl SolutionModel {
    /// A built-in model by id (`tw1969`, `haselton1983`, `th1979`, `fl1988`, `eg1990`).
    ///
    /// Parameters are those of design §3.3 (confirmed against the published tables).
    ///
    /// # Errors
    /// [`SolvusError::UnknownModel`] for any other id.
    pub fn builtin(id: &str) -> Result<Self, SolvusError> {
        let m = Margules::new;
        let binary = |id: &str, citation: &str, ab_or: Margules, or_ab: Margules| SolutionModel {
            id: id.into(),
            citation: citation.into(),
            kind: ModelKind::Binary,
            ideal_mixing: IdealMixing::Molecular,
            margules: MargulesSet {
                ab_or,
                or_ab,
                ..MargulesSet::default()
            },
            range: ModelRange::BINARY,
            coherent: None,
        };
        let ternary =
            |id: &str, citation: &str, ideal: IdealMixing, w: [Margules; 7]| SolutionModel {
                id: id.into(),
                citation: citation.into(),
                kind: ModelKind::Ternary,
                ideal_mixing: ideal,
                margules: MargulesSet {
                    ab_or: w[0],
                    or_ab: w[1],
                    ab_an: w[2],
                    an_ab: w[3],
                    or_an: w[4],
                    an_or: w[5],
                    or_ab_an: w[6],
                },
                range: ModelRange::TERNARY,
                coherent: None,
            };
        match id {
            "tw1969" => Ok(binary(
                id,
                "Thompson, J.B. & Waldbaum, D.R. (1969) Mixing properties of sanidine crystalline \
                 solutions: III. Calculations based on two-phase data. American Mineralogist 54, 811-838",
                m(26470.0, 19.3810, 0.387020),
                m(32098.0, 16.1356, 0.469020),
            )),
            "haselton1983" => Ok(binary(
                id,
                "Haselton, H.T., Hovis, G.L., Hemingway, B.S. & Robie, R.A. (1983) Calorimetric \
                 investigation of the excess entropy of mixing in analbite-sanidine solid solutions. \
                 American Mineralogist 68, 398-413 (parameters as used by Fuhrman & Lindsley 1988)",
                m(18810.0, 10.3, 0.394),
                m(27320.0, 10.3, 0.394),
            )),
            "th1979" => Ok(binary(
                id,
                "Thompson, J.B. & Hovis, G.L. (1979) Entropy of mixing in sanidine. American \
                 Mineralogist 64, 57-65",
                m(30978.3, 21.7568, 0.360661),
                m(17062.4, 0.0, 0.360661),
            )),
            "fl1988" => Ok(ternary(
                id,
                "Fuhrman, M.L. & Lindsley, D.H. (1988) Ternary-feldspar modeling and thermometry. \
                 American Mineralogist 73, 201-215",
                IdealMixing::AlAvoidance,
                [
                    m(18810.0, 10.3, 0.394),
                    m(27320.0, 10.3, 0.394),
                    m(28226.0, 0.0, 0.0),
                    m(8471.0, 0.0, 0.0),
                    m(52468.0, 0.0, 0.0),
                    m(47396.0, 0.0, -0.120),
                    m(8700.0, 0.0, -1.094),
                ],
            )),
            "eg1990" => Ok(ternary(
                id,
                "Elkins, L.T. & Grove, T.L. (1990) Ternary feldspar experiments and thermodynamic \
                 models. American Mineralogist 75, 544-559",
                IdealMixing::Molecular,
                [
                    m(18810.0, 10.3, 0.4602),
                    m(27320.0, 10.3, 0.3264),
                    m(7924.0, 0.0, 0.0),
                    m(0.0, 0.0, 0.0),
                    m(40317.0, 0.0, 0.0),
                    m(38974.0, 0.0, -0.1037),
                    m(12545.0, 0.0, -1.095),
                ],
            )),
            _ => Err(SolvusError::UnknownModel {
                id: id.into(),
                known: BUILTIN_IDS.join(", "),
            }),
        }
    }

    /// Every built-in model, binary first.
    #[must_use]
    pub fn builtins() -> Vec<SolutionModel> {
        BUILTIN_IDS
            .iter()
            .filter_map(|id| Self::builtin(id).ok())
            .collect()
    }

    /// The same model with the coherent strain term switched on.
    #[must_use]
    pub fn with_coherent_strain(mut self, strain: CoherentStrain) -> Self {
        self.coherent = Some(strain);
        self
    }

    /// The model evaluated at a temperature and pressure (the Margules values computed once).
    ///
    /// # Errors
    /// [`SolvusError::InvalidCondition`] for a non-finite or non-positive temperature or a
    /// non-finite pressure.
    pub fn at(&self, temperature_k: f64, pressure_bar: f64) -> Result<ModelAt, SolvusError> {
        check_temperature(temperature_k)?;
        check_pressure(pressure_bar)?;
        Ok(self.at_unchecked(temperature_k, pressure_bar))
    }

    pub(crate) fn at_unchecked(&self, temperature_k: f64, pressure_bar: f64) -> ModelAt {
        let mut w = self
            .margules
            .as_array()
            .map(|m| m.at(temperature_k, pressure_bar));
        if let Some(strain) = self.coherent {
            let k = strain.energy_j();
            w[0] -= k;
            w[1] -= k;
        }
        ModelAt {
            w,
            rt: GAS_CONSTANT * temperature_k,
            temperature_k,
            ideal: self.ideal_mixing,
        }
    }

    /// Excess molar volume `V_ex` (J/bar; x10 for cm3/mol) from the `WV` terms: the excess
    /// Gibbs polynomial evaluated with `W = WV` (`V_ex = dG_ex/dP`).
    #[must_use]
    pub fn excess_volume_j_per_bar(&self, x: &Composition) -> f64 {
        let wv = self.margules.as_array().map(|m| m.wv);
        excess_value(&wv, &x.as_array())
    }

    /// The Ab-Or part of the model as `(W_AbOr, W_OrAb)` at T and P, including the coherent
    /// strain term if switched on.
    pub(crate) fn ab_or_join(&self, temperature_k: f64, pressure_bar: f64) -> AbOrJoin {
        self.at_unchecked(temperature_k, pressure_bar).ab_or_join()
    }

    /// Composition the model works with: binary models project onto the Ab-Or join. Returns
    /// the composition used and whether it was projected.
    pub(crate) fn working_composition(
        &self,
        x: &Composition,
    ) -> Result<(Composition, bool), SolvusError> {
        if x.x_an > self.range.max_x_an + 1e-12 {
            return Err(SolvusError::InvalidComposition {
                x_ab: x.x_ab,
                x_or: x.x_or,
                x_an: x.x_an,
                reason: format!(
                    "X_An {:.3} is above the {:.2} that model `{}` accepts",
                    x.x_an, self.range.max_x_an, self.id
                ),
            });
        }
        match self.kind {
            ModelKind::Ternary => Ok((*x, false)),
            ModelKind::Binary => {
                let x_or = x
                    .projected_x_or()
                    .ok_or_else(|| SolvusError::InvalidComposition {
                        x_ab: x.x_ab,
                        x_or: x.x_or,
                        x_an: x.x_an,
                        reason: "no Ab or Or to project onto the Ab-Or join".into(),
                    })?;
                Ok((Composition::ab_or(x_or)?, x.x_an > 0.0))
            }
        }
    }

    /// Check a pressure against the model's range.
    pub(crate) fn check_pressure_in_range(&self, pressure_bar: f64) -> Result<(), SolvusError> {
        check_pressure(pressure_bar)?;
        let p_kbar = crate::units::kbar_from_bar(pressure_bar);
        let [lo, hi] = self.range.pressure_kbar;
        if p_kbar < lo - 1e-9 || p_kbar > hi + 1e-9 {
            return Err(SolvusError::InvalidCondition {
                quantity: "pressure_kbar",
                value: p_kbar,
                reason: format!("model `{}` is used between {lo} and {hi} kbar", self.id),
            });
        }
        Ok(())
    }

    /// Temperature search interval, K.
    pub(crate) fn temperature_interval_k(&self) -> (f64, f64) {
        let [lo, hi] = self.range.temperature_c;
        (
            crate::units::kelvin_from_celsius(lo),
            crate::units::kelvin_from_celsius(hi),
        )
    }

    /// Gibbs energy of mixing, J/mol, at a composition, T (K) and P (bar).
    ///
    /// # Errors
    /// As [`SolutionModel::at`].
    pub fn gibbs_mixing(
        &self,
        x: &Composition,
        temperature_k: f64,
        pressure_bar: f64,
    ) -> Result<f64, SolvusError> {
        Ok(self.at(temperature_k, pressure_bar)?.gibbs_mixing(x))
    }
}

pub(crate) fn check_temperature(temperature_k: f64) -> Result<(), SolvusError> {
    if !temperature_k.is_finite() || temperature_k <= 0.0 {
        return Err(SolvusError::InvalidCondition {
            quantity: "temperature",
            value: celsius_from_kelvin(temperature_k),
            reason: "must be a finite temperature above absolute zero (value shown in C)".into(),
        });
    }
    Ok(())
}

pub(crate) fn check_pressure(pressure_bar: f64) -> Result<(), SolvusError> {
    if !pressure_bar.is_finite() || pressure_bar < 0.0 {
        return Err(SolvusError::InvalidCondition {
            quantity: "pressure_bar",
            value: pressure_bar,
            reason: "must be a finite, non-negative pressure".into(),
        });
    }
    Ok(())
}

/// The seven polynomials multiplying the Margules parameters in `G_ex`, at `x`.
pub(crate) fn excess_basis(x: &[f64; 3]) -> [f64; 7] {
    let mut b = [0.0; 7];
    for (bk, &(i, j, k)) in b.iter_mut().zip(PAIRS.iter()) {
        *bk = x[i] * x[j] * (x[j] + 0.5 * x[k]);
    }
    b[6] = x[0] * x[1] * x[2];
    b
}

/// `sum_i X_i ln a_i^ideal` (dimensionless), zero terms for absent components.
pub(crate) fn ideal_entropy_term(ideal: IdealMixing, x: &[f64; 3]) -> f64 {
    let a = ideal_activities(ideal, x);
    x_ln(x[0], a[0]) + x_ln(x[1], a[1]) + x_ln(x[2], a[2])
}

/// Excess polynomial value for Margules values `w` (internal order).
fn excess_value(w: &[f64; 7], x: &[f64; 3]) -> f64 {
    let mut g = 0.0;
    for (wk, &(i, j, k)) in w.iter().zip(PAIRS.iter()) {
        g += wk * x[i] * x[j] * (x[j] + 0.5 * x[k]);
    }
    g + w[6] * x[0] * x[1] * x[2]
}

/// Value, gradient and Hessian of the excess polynomial (as a function of three independent
/// variables).
fn excess_derivatives(w: &[f64; 7], x: &[f64; 3]) -> (f64, [f64; 3], [[f64; 3]; 3]) {
    let mut g = 0.0;
    let mut d = [0.0; 3];
    let mut h = [[0.0; 3]; 3];
    for (wk, &(i, j, k)) in w.iter().zip(PAIRS.iter()) {
        let wk = *wk;
        if wk == 0.0 {
            continue;
        }
        let (xi, xj, xk) = (x[i], x[j], x[k]);
        g += wk * xi * xj * (xj + 0.5 * xk);
        d[i] += wk * xj * (xj + 0.5 * xk);
        d[j] += wk * xi * (2.0 * xj + 0.5 * xk);
        d[k] += 0.5 * wk * xi * xj;
        let hij = wk * (2.0 * xj + 0.5 * xk);
        h[i][j] += hij;
        h[j][i] += hij;
        let hik = 0.5 * wk * xj;
        h[i][k] += hik;
        h[k][i] += hik;
        h[j][j] += 2.0 * wk * xi;
        let hjk = 0.5 * wk * xi;
        h[j][k] += hjk;
        h[k][j] += hjk;
    }
    let wt = w[6];
    if wt != 0.0 {
        g += wt * x[0] * x[1] * x[2];
        d[0] += wt * x[1] * x[2];
        d[1] += wt * x[0] * x[2];
        d[2] += wt * x[0] * x[1];
        h[0][1] += wt * x[2];
        h[1][0] += wt * x[2];
        h[0][2] += wt * x[1];
        h[2][0] += wt * x[1];
        h[1][2] += wt * x[0];
        h[2][1] += wt * x[0];
    }
    (g, d, h)
}

/// `x ln a` with the limit 0 at `x = 0`.
fn x_ln(x: f64, a: f64) -> f64 {
    if x > 0.0 { x * a.ln() } else { 0.0 }
}

/// A model evaluated at one temperature and pressure: the fast path used by the solvers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModelAt {
    pub(crate) w: [f64; 7],
    pub(crate) rt: f64,
    pub(crate) temperature_k: f64,
    pub(crate) ideal: IdealMixing,
}

impl ModelAt {
    /// Temperature, K.
    #[must_use]
    pub fn temperature_k(&self) -> f64 {
        self.temperature_k
    }

    /// Ideal activities `a_i^ideal` of Ab, Or, An.
    #[must_use]
    pub fn ideal_activities(&self, x: &Composition) -> [f64; 3] {
        ideal_activities(self.ideal, &x.as_array())
    }

    /// Excess Gibbs energy, J/mol.
    #[must_use]
    pub fn excess_gibbs(&self, x: &Composition) -> f64 {
        excess_value(&self.w, &x.as_array())
    }

    /// `RT ln gamma_i` of Ab, Or, An, J/mol (analytic partial molar excess Gibbs energies).
    #[must_use]
    pub fn rt_ln_gamma(&self, x: &Composition) -> [f64; 3] {
        mu_excess(&self.w, &x.as_array())
    }

    /// Activity coefficients `gamma_i` of Ab, Or, An.
    #[must_use]
    pub fn activity_coefficients(&self, x: &Composition) -> [f64; 3] {
        self.rt_ln_gamma(x).map(|v| (v / self.rt).exp())
    }

    /// Activities `a_i = a_i^ideal gamma_i` of Ab, Or, An.
    #[must_use]
    pub fn activities(&self, x: &Composition) -> [f64; 3] {
        let a = self.ideal_activities(x);
        let g = self.activity_coefficients(x);
        [a[0] * g[0], a[1] * g[1], a[2] * g[2]]
    }

    /// Chemical potentials relative to the pure end members, `mu_i - mu_i° = RT ln a_i`, J/mol.
    /// A component absent from the composition has `-inf` (its activity is zero).
    #[must_use]
    pub fn chemical_potentials(&self, x: &Composition) -> [f64; 3] {
        self.mu(&x.as_array())
    }

    /// Gibbs energy of mixing `RT sum X_i ln a_i^ideal + G_ex`, J/mol.
    #[must_use]
    pub fn gibbs_mixing(&self, x: &Composition) -> f64 {
        self.g(&x.as_array())
    }

    pub(crate) fn g(&self, x: &[f64; 3]) -> f64 {
        let a = ideal_activities(self.ideal, x);
        self.rt * (x_ln(x[0], a[0]) + x_ln(x[1], a[1]) + x_ln(x[2], a[2]))
            + excess_value(&self.w, x)
    }

    pub(crate) fn mu(&self, x: &[f64; 3]) -> [f64; 3] {
        let a = ideal_activities(self.ideal, x);
        let e = mu_excess(&self.w, x);
        [
            self.rt * a[0].ln() + e[0],
            self.rt * a[1].ln() + e[1],
            self.rt * a[2].ln() + e[2],
        ]
    }

    /// Value, gradient and Hessian of G as a function of three independent mole fractions
    /// (an extension off the simplex; only derivatives along the simplex are meaningful).
    /// Terms of absent components are left out, so directions must not move them.
    pub(crate) fn derivatives3(&self, x: &[f64; 3]) -> (f64, [f64; 3], [[f64; 3]; 3]) {
        let (ge, mut d, mut h) = excess_derivatives(&self.w, x);
        let rt = self.rt;
        let lnp = |v: f64| if v > 0.0 { v.ln() } else { 0.0 };
        let inv = |v: f64| if v > 0.0 { 1.0 / v } else { 0.0 };
        let a = ideal_activities(self.ideal, x);
        let gid = x_ln(x[0], a[0]) + x_ln(x[1], a[1]) + x_ln(x[2], a[2]);
        match self.ideal {
            IdealMixing::Molecular => {
                for i in 0..3 {
                    d[i] += rt * (lnp(x[i]) + 1.0);
                    h[i][i] += rt * inv(x[i]);
                }
            }
            IdealMixing::AlAvoidance => {
                let (xa, xo, xn) = (x[0], x[1], x[2]);
                let s = xa + xo;
                let q = 1.0 - xn * xn;
                let lq = q.ln();
                d[0] += rt * (lnp(xa) + 1.0 + lq);
                d[1] += rt * (lnp(xo) + 1.0 + lq);
                d[2] += rt
                    * (-2.0 * s * xn / q
                        + lnp(xn)
                        + 1.0
                        + 2.0 * (1.0 + xn).ln()
                        + 2.0 * xn / (1.0 + xn)
                        - 4f64.ln());
                h[0][0] += rt * inv(xa);
                h[1][1] += rt * inv(xo);
                let han = rt * (-2.0 * xn / q);
                h[0][2] += han;
                h[2][0] += han;
                h[1][2] += han;
                h[2][1] += han;
                h[2][2] += rt
                    * (-2.0 * s * (1.0 + xn * xn) / (q * q)
                        + inv(xn)
                        + 2.0 / (1.0 + xn)
                        + 2.0 / ((1.0 + xn) * (1.0 + xn)));
            }
        }
        (rt * gid + ge, d, h)
    }

    /// G, gradient and Hessian in the reduced coordinates `y = (x_or, x_an)` (x_ab dependent).
    pub(crate) fn reduced(&self, y: [f64; 2]) -> (f64, [f64; 2], [[f64; 2]; 2]) {
        let x = [1.0 - y[0] - y[1], y[0], y[1]];
        let (g, d, h) = self.derivatives3(&x);
        let grad = [d[1] - d[0], d[2] - d[0]];
        // e1 = (-1, 1, 0), e2 = (-1, 0, 1)
        let h11 = h[1][1] - 2.0 * h[0][1] + h[0][0];
        let h22 = h[2][2] - 2.0 * h[0][2] + h[0][0];
        let h12 = h[1][2] - h[0][1] - h[0][2] + h[0][0];
        (g, grad, [[h11, h12], [h12, h22]])
    }

    /// The Ab-Or join of this evaluated model in closed form.
    pub(crate) fn ab_or_join(&self) -> AbOrJoin {
        AbOrJoin {
            rt: self.rt,
            wa: self.w[0],
            wb: self.w[1],
        }
    }

    /// G only, reduced coordinates.
    #[cfg(test)]
    pub(crate) fn g_reduced(&self, y: [f64; 2]) -> f64 {
        self.g(&[1.0 - y[0] - y[1], y[0], y[1]])
    }
}

pub(crate) fn ideal_activities(ideal: IdealMixing, x: &[f64; 3]) -> [f64; 3] {
    match ideal {
        IdealMixing::Molecular => *x,
        IdealMixing::AlAvoidance => {
            let q = 1.0 - x[2] * x[2];
            [x[0] * q, x[1] * q, x[2] * (1.0 + x[2]) * (1.0 + x[2]) / 4.0]
        }
    }
}

/// `RT ln gamma_i = G + dG/dx_i - sum_j x_j dG/dx_j` for the excess polynomial.
pub(crate) fn mu_excess(w: &[f64; 7], x: &[f64; 3]) -> [f64; 3] {
    let (g, d, _) = excess_derivatives(w, x);
    let s = x[0] * d[0] + x[1] * d[1] + x[2] * d[2];
    [g + d[0] - s, g + d[1] - s, g + d[2] - s]
}

/// The Ab-Or join in closed form (`x` = X_Or), with `wa = W_AbOr`, `wb = W_OrAb` in J/mol.
#[derive(Debug, Clone, Copy)]
pub(crate) struct AbOrJoin {
    pub rt: f64,
    pub wa: f64,
    pub wb: f64,
}

/// A path through composition space along which G can be differentiated: `x` in (0, 1).
pub(crate) trait Join {
    /// G, dG/dx, d2G/dx2.
    fn g012(&self, x: f64) -> (f64, f64, f64);
    /// dG/dx, d2G/dx2 (cheaper when G itself is not needed).
    fn g12(&self, x: f64) -> (f64, f64) {
        let (_, g1, g2) = self.g012(x);
        (g1, g2)
    }
}

impl Join for AbOrJoin {
    fn g012(&self, x: f64) -> (f64, f64, f64) {
        let y = 1.0 - x;
        let (wa, wb) = (self.wa, self.wb);
        let g = self.rt * (x_ln(x, x) + x_ln(y, y)) + x * y * (wa * x + wb * y);
        let (g1, g2) = self.g12(x);
        (g, g1, g2)
    }

    fn g12(&self, x: f64) -> (f64, f64) {
        let y = 1.0 - x;
        let (wa, wb) = (self.wa, self.wb);
        let g1 = self.rt * (x / y).ln()
            + wa * (2.0 * x - 3.0 * x * x)
            + wb * (1.0 - 4.0 * x + 3.0 * x * x);
        let g2 = self.rt / (x * y) + wa * (2.0 - 6.0 * x) + wb * (6.0 * x - 4.0);
        (g1, g2)
    }
}

impl AbOrJoin {
    /// Third derivative d3G/dx3.
    pub fn g3(&self, x: f64) -> f64 {
        let y = 1.0 - x;
        self.rt * (1.0 / (y * y) - 1.0 / (x * x)) + 6.0 * (self.wb - self.wa)
    }
}

/// A straight edge of the triangle from end member `from` to end member `to`, in a ternary
/// model evaluated at (T, P).
#[derive(Debug, Clone, Copy)]
pub(crate) struct EdgeJoin {
    pub at: ModelAt,
    pub from: usize,
    pub to: usize,
}

impl EdgeJoin {
    pub fn point(&self, t: f64) -> [f64; 3] {
        let mut x = [0.0; 3];
        x[self.from] = 1.0 - t;
        x[self.to] = t;
        x
    }
}

impl Join for EdgeJoin {
    fn g012(&self, t: f64) -> (f64, f64, f64) {
        let x = self.point(t);
        let (g, d, h) = self.at.derivatives3(&x);
        let (a, b) = (self.from, self.to);
        let g1 = d[b] - d[a];
        let g2 = h[b][b] - 2.0 * h[a][b] + h[a][a];
        (g, g1, g2)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn comps() -> Vec<[f64; 3]> {
        vec![
            [0.483, 0.492, 0.025],
            [0.732, 0.153, 0.115],
            [0.2, 0.3, 0.5],
            [0.05, 0.9, 0.05],
            [0.6, 0.1, 0.3],
            [0.34, 0.33, 0.33],
        ]
    }

    /// `n G_ex(n/N)` for mole numbers.
    fn n_gex(w: &[f64; 7], n: [f64; 3]) -> f64 {
        let total = n[0] + n[1] + n[2];
        total * excess_value(w, &[n[0] / total, n[1] / total, n[2] / total])
    }

    #[test]
    fn rt_ln_gamma_matches_finite_differences_of_n_gex() {
        // Source: definition of the partial molar quantity, RT ln gamma_i = d(n G_ex)/dn_i
        // (any thermodynamics text); checked for every built-in model at 1 kbar, 800 C.
        // Tolerance: central differences with h = 1e-5 mol have truncation error ~h^2 G''' ~ 1e-6 J.
        for model in SolutionModel::builtins() {
            let at = model.at(1073.15, 1000.0).unwrap();
            for x in comps() {
                let mu = mu_excess(&at.w, &x);
                for i in 0..3 {
                    let h = 1e-5;
                    let mut np = x;
                    let mut nm = x;
                    np[i] += h;
                    nm[i] -= h;
                    let fd = (n_gex(&at.w, np) - n_gex(&at.w, nm)) / (2.0 * h);
                    assert!(
                        (fd - mu[i]).abs() < 1e-4,
                        "{} x={x:?} i={i}: analytic {} fd {fd}",
                        model.id,
                        mu[i]
                    );
                }
            }
        }
    }

    #[test]
    fn gibbs_duhem_and_sum_rule_hold() {
        // Source: Gibbs-Duhem relation at constant T, P: sum_i X_i d(RT ln gamma_i) = 0, and
        // G_ex = sum_i X_i RT ln gamma_i (Euler). Tolerance: round-off on values ~1e4 J.
        for model in SolutionModel::builtins() {
            let at = model.at(973.15, 2000.0).unwrap();
            for x in comps() {
                let mu = mu_excess(&at.w, &x);
                let gex = excess_value(&at.w, &x);
                let euler: f64 = (0..3).map(|i| x[i] * mu[i]).sum();
                assert!((euler - gex).abs() < 1e-8, "{}: Euler", model.id);
                // directional derivative along two directions within the simplex
                for dir in [[-1.0, 1.0, 0.0], [-1.0, 0.0, 1.0], [0.0, -1.0, 1.0]] {
                    let h = 1e-6;
                    let xp = [x[0] + h * dir[0], x[1] + h * dir[1], x[2] + h * dir[2]];
                    let xm = [x[0] - h * dir[0], x[1] - h * dir[1], x[2] - h * dir[2]];
                    let mp = mu_excess(&at.w, &xp);
                    let mm = mu_excess(&at.w, &xm);
                    let gd: f64 = (0..3).map(|i| x[i] * (mp[i] - mm[i]) / (2.0 * h)).sum();
                    assert!(gd.abs() < 1e-4, "{}: Gibbs-Duhem residual {gd}", model.id);
                }
            }
        }
    }

    #[test]
    fn ideal_parts_satisfy_gibbs_duhem() {
        // Source: design §3.3 (the Al-avoidance activities of Fuhrman & Lindsley 1988 satisfy
        // Gibbs-Duhem): sum_i X_i d ln a_i = 0 along the simplex. Tolerance: FD error ~1e-9.
        for ideal in [IdealMixing::Molecular, IdealMixing::AlAvoidance] {
            for x in comps() {
                for dir in [[-1.0, 1.0, 0.0], [-1.0, 0.0, 1.0]] {
                    let h = 1e-6;
                    let xp = [x[0] + h * dir[0], x[1] + h * dir[1], x[2] + h * dir[2]];
                    let xm = [x[0] - h * dir[0], x[1] - h * dir[1], x[2] - h * dir[2]];
                    let ap = ideal_activities(ideal, &xp);
                    let am = ideal_activities(ideal, &xm);
                    let s: f64 = (0..3)
                        .map(|i| x[i] * (ap[i].ln() - am[i].ln()) / (2.0 * h))
                        .sum();
                    assert!(s.abs() < 1e-7, "{ideal:?} {x:?}: {s}");
                }
            }
        }
    }

    #[test]
    fn reduced_derivatives_match_finite_differences() {
        // Source: definition of the derivative; checks the analytic gradient and Hessian of G
        // (ideal + excess) used by every solver. Tolerance: central differences, h = 1e-6.
        for model in SolutionModel::builtins() {
            let at = model.at(1073.15, 1000.0).unwrap();
            for x in comps() {
                let y = [x[1], x[2]];
                let (_, grad, hess) = at.reduced(y);
                for p in 0..2 {
                    let h = 1e-6;
                    let mut yp = y;
                    let mut ym = y;
                    yp[p] += h;
                    ym[p] -= h;
                    let fd = (at.g_reduced(yp) - at.g_reduced(ym)) / (2.0 * h);
                    assert!((fd - grad[p]).abs() < 1e-3, "{} grad", model.id);
                    let (_, gp, _) = at.reduced(yp);
                    let (_, gm, _) = at.reduced(ym);
                    for q in 0..2 {
                        let fdh = (gp[q] - gm[q]) / (2.0 * h);
                        assert!(
                            (fdh - hess[p][q]).abs() < 1e-3 * (1.0 + hess[p][q].abs()),
                            "{} hess {p}{q}: {fdh} vs {}",
                            model.id,
                            hess[p][q]
                        );
                    }
                }
                // the reduced gradient is the chemical potential difference mu_Or - mu_Ab etc.
                let mu = at.mu(&x);
                assert!((grad[0] - (mu[1] - mu[0])).abs() < 1e-6);
                assert!((grad[1] - (mu[2] - mu[0])).abs() < 1e-6);
            }
        }
    }

    #[test]
    fn ab_or_closed_form_matches_ternary_evaluation() {
        // Source: design §3.3 (the ternary excess reduces to X_Ab X_Or (W_AbOr X_Or + W_OrAb X_Ab)
        // on the Ab-Or join). Tolerance: round-off.
        for model in SolutionModel::builtins() {
            let at = model.at(900.0, 1500.0).unwrap();
            let join = model.ab_or_join(900.0, 1500.0);
            let edge = EdgeJoin { at, from: 0, to: 1 };
            for x in [0.05, 0.3, 0.5, 0.77, 0.95] {
                let (g, g1, g2) = join.g012(x);
                let (eg, eg1, eg2) = edge.g012(x);
                assert!((g - eg).abs() < 1e-8);
                assert!((g1 - eg1).abs() < 1e-7);
                assert!((g2 - eg2).abs() < 1e-6);
                let h = 1e-5;
                let g3 = (join.g12(x + h).1 - join.g12(x - h).1) / (2.0 * h);
                assert!((g3 - join.g3(x)).abs() < 1e-3 * (1.0 + g3.abs()));
            }
        }
    }

    #[test]
    fn binary_activity_coefficients_follow_two_parameter_margules() {
        // Source: Thompson & Waldbaum (1969): RT ln gamma_Ab = X_Or^2 [W_AbOr + 2 (W_OrAb - W_AbOr) X_Ab].
        let model = SolutionModel::builtin("tw1969").unwrap();
        let at = model.at(1000.0, 1000.0).unwrap();
        let x = Composition::ab_or(0.3).unwrap();
        let (wa, wb) = (at.w[0], at.w[1]);
        let expect_ab = 0.3f64.powi(2) * (wa + 2.0 * (wb - wa) * 0.7);
        let expect_or = 0.7f64.powi(2) * (wb + 2.0 * (wa - wb) * 0.3);
        let got = at.rt_ln_gamma(&x);
        assert!((got[0] - expect_ab).abs() < 1e-8);
        assert!((got[1] - expect_or).abs() < 1e-8);
    }

    #[test]
    fn excess_volume_of_symmetric_wv() {
        // Source: design §3.2 worked example uses a symmetric excess volume 0.394 J/bar:
        // V_ex = 0.394 X_Ab X_Or on the join (Haselton et al. 1983 WV). Tolerance: round-off.
        let model = SolutionModel::builtin("haselton1983").unwrap();
        let x = Composition::ab_or(0.4).unwrap();
        let v = model.excess_volume_j_per_bar(&x);
        assert!((v - 0.394 * 0.6 * 0.4).abs() < 1e-12);
    }

    #[test]
    fn composition_validation() {
        assert!(Composition::new(0.5, 0.5, 0.1).is_err());
        assert!(Composition::new(-0.1, 1.0, 0.1).is_err());
        assert!(Composition::new(f64::NAN, 0.5, 0.5).is_err());
        let c = Composition::new(0.483, 0.492, 0.025).unwrap();
        assert!((c.x_ab + c.x_or + c.x_an - 1.0).abs() < 1e-15);
        assert!(SolutionModel::builtin("nope").is_err());
    }
}
