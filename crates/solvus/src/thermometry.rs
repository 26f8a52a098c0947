//! Two-feldspar thermometry (Fuhrman & Lindsley 1988, Am. Mineral. 73:201): for a coexisting
//! pair, each component `i` gives the temperature `T_i` at which `a_i` is equal in both phases.
//!
//! With `W = WH - T WS + P WV`, `mu_i = RT ln a_i^ideal + h_i(X) - T s_i(X)` where `h_i` and
//! `s_i` are the partial molar excess terms built from `WH + P WV` and `WS`. The ideal
//! activities do not depend on T, so the equality is linear in T and solved exactly:
//! `T_i = (h_i(2) - h_i(1)) / (R ln(a_i(1)/a_i(2)) - s_i(1) + s_i(2))`.
//!
//! The optional adjustment moves both compositions within stated analytical uncertainties to
//! bring the three temperatures together, choosing the smallest move (a Levenberg-Marquardt
//! least-squares fit of the temperature differences, with a small penalty on the move and a
//! stiff penalty on leaving the uncertainty box), in the spirit of Fuhrman & Lindsley (1988).

use serde::Serialize;

use crate::SolvusError;
use crate::model::{Composition, ModelKind, SolutionModel, ideal_activities, mu_excess};
use crate::numeric::solve_n;
use crate::units::GAS_CONSTANT;

/// The temperature from one component.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "outcome", rename_all = "snake_case")]
#[non_exhaustive]
pub enum ComponentTemperature {
    /// Activities equal at this temperature.
    Root {
        /// Temperature, K.
        temperature_k: f64,
    },
    /// No temperature in the model's range makes the activities equal.
    NoRootInRange {
        /// Why, in words a user can act on.
        reason: String,
    },
}

impl ComponentTemperature {
    /// The temperature if there is one, K.
    #[must_use]
    pub fn temperature_k(&self) -> Option<f64> {
        match self {
            ComponentTemperature::Root { temperature_k } => Some(*temperature_k),
            ComponentTemperature::NoRootInRange { .. } => None,
        }
    }
}

/// Temperatures from a coexisting pair.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PairTemperatures {
    /// Model id.
    pub model: String,
    /// Pressure, bar.
    pub pressure_bar: f64,
    /// True if a binary model projected compositions containing An.
    pub projected: bool,
    /// From the Ab activity.
    pub ab: ComponentTemperature,
    /// From the Or activity.
    pub or: ComponentTemperature,
    /// From the An activity.
    pub an: ComponentTemperature,
    /// Largest minus smallest of the temperatures found, K (`None` with fewer than two).
    pub spread_k: Option<f64>,
}

impl PairTemperatures {
    /// `[ab, or, an]`.
    #[must_use]
    pub fn components(&self) -> [&ComponentTemperature; 3] {
        [&self.ab, &self.or, &self.an]
    }
}

/// A pair moved within analytical uncertainty to bring its temperatures together.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PairAdjustment {
    /// Adjusted first phase.
    pub phase1: Composition,
    /// Adjusted second phase.
    pub phase2: Composition,
    /// Temperatures of the adjusted pair.
    pub temperatures: PairTemperatures,
    /// Mean of the adjusted temperatures, K.
    pub temperature_k: f64,
    /// Spread of the adjusted temperatures, K.
    pub spread_k: f64,
    /// The uncertainty allowed on each mole fraction.
    pub uncertainty: f64,
    /// Largest change made to any mole fraction.
    pub max_change: f64,
    /// True if the temperatures were brought within 1 C of each other without moving any mole
    /// fraction by more than the uncertainty.
    pub concordant_within_uncertainty: bool,
}

/// Outcome of the adjustment.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "outcome", rename_all = "snake_case")]
#[non_exhaustive]
pub enum AdjustmentOutcome {
    /// Adjusted (see `concordant_within_uncertainty` for whether it fully succeeded).
    Adjusted(Box<PairAdjustment>),
    /// Fewer than two component temperatures exist, so there is nothing to bring together.
    TooFewTemperatures {
        /// How many exist.
        available: usize,
    },
}

/// Default analytical uncertainty on each mole fraction (design §3.4; issue 3).
pub const DEFAULT_UNCERTAINTY: f64 = 0.02;

/// Precomputed pieces for fast repeated evaluation.
struct Thermometer<'a> {
    model: &'a SolutionModel,
    w_h: [f64; 7],
    w_s: [f64; 7],
    t_range: (f64, f64),
}

impl<'a> Thermometer<'a> {
    fn new(model: &'a SolutionModel, pressure_bar: f64) -> Self {
        let w0 = model.at_unchecked(0.0, pressure_bar).w;
        let w1 = model.at_unchecked(1.0, pressure_bar).w;
        let mut w_s = [0.0; 7];
        for k in 0..7 {
            w_s[k] = w0[k] - w1[k];
        }
        Self {
            model,
            w_h: w0,
            w_s,
            t_range: model.temperature_interval_k(),
        }
    }

    fn component_temperatures(&self, x1: &[f64; 3], x2: &[f64; 3]) -> [ComponentTemperature; 3] {
        let a1 = ideal_activities(self.model.ideal_mixing, x1);
        let a2 = ideal_activities(self.model.ideal_mixing, x2);
        let h1 = mu_excess(&self.w_h, x1);
        let h2 = mu_excess(&self.w_h, x2);
        let s1 = mu_excess(&self.w_s, x1);
        let s2 = mu_excess(&self.w_s, x2);
        let names = ["Ab", "Or", "An"];
        std::array::from_fn(|i| {
            if i == 2 && self.model.kind == ModelKind::Binary {
                return ComponentTemperature::NoRootInRange {
                    reason: format!("model `{}` is binary: it has no An terms", self.model.id),
                };
            }
            if a1[i] <= 0.0 || a2[i] <= 0.0 {
                let which = if a1[i] <= 0.0 { 1 } else { 2 };
                return ComponentTemperature::NoRootInRange {
                    reason: format!("{} is absent from phase {which}", names[i]),
                };
            }
            let den = GAS_CONSTANT * (a1[i] / a2[i]).ln() - s1[i] + s2[i];
            let num = h2[i] - h1[i];
            let t = num / den;
            let (lo, hi) = self.t_range;
            if !t.is_finite() || den.abs() < 1e-12 {
                ComponentTemperature::NoRootInRange {
                    reason: format!(
                        "the {} activities of the two phases are equal or parallel at every temperature",
                        names[i]
                    ),
                }
            } else if t < lo || t > hi {
                ComponentTemperature::NoRootInRange {
                    reason: if t > 0.0 {
                        format!(
                            "{} activities become equal at {:.0} C, outside the model's range {:.0}-{:.0} C",
                            names[i],
                            crate::units::celsius_from_kelvin(t),
                            crate::units::celsius_from_kelvin(lo),
                            crate::units::celsius_from_kelvin(hi)
                        )
                    } else {
                        format!(
                            "{} activities never become equal above absolute zero",
                            names[i]
                        )
                    },
                }
            } else {
                ComponentTemperature::Root { temperature_k: t }
            }
        })
    }
}

fn spread(ts: &[ComponentTemperature; 3]) -> Option<f64> {
    let v: Vec<f64> = ts
        .iter()
        .filter_map(ComponentTemperature::temperature_k)
        .collect();
    if v.len() < 2 {
        return None;
    }
    let max = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let min = v.iter().copied().fold(f64::INFINITY, f64::min);
    Some(max - min)
}

/// Two-feldspar temperatures `T_Ab`, `T_Or`, `T_An` of a coexisting pair at P (bar).
///
/// # Errors
/// Invalid pressure or compositions outside the model's range.
pub fn pair_temperatures(
    model: &SolutionModel,
    phase1: &Composition,
    phase2: &Composition,
    pressure_bar: f64,
) -> Result<PairTemperatures, SolvusError> {
    model.check_pressure_in_range(pressure_bar)?;
    let (x1, p1) = model.working_composition(phase1)?;
    let (x2, p2) = model.working_composition(phase2)?;
    let th = Thermometer::new(model, pressure_bar);
    let [ab, or, an] = th.component_temperatures(&x1.as_array(), &x2.as_array());
    let spread_k = spread(&[ab.clone(), or.clone(), an.clone()]);
    Ok(PairTemperatures {
        model: model.id.clone(),
        pressure_bar,
        projected: p1 || p2,
        ab,
        or,
        an,
        spread_k,
    })
}

/// Move both compositions within `uncertainty` (mole fraction, on each of Ab, Or, An) to bring
/// their component temperatures together, with the smallest move (Fuhrman & Lindsley 1988
/// approach). Binary models move only Ab and Or.
///
/// # Errors
/// Invalid pressure or compositions, or an uncertainty that is not in (0, 0.2].
pub fn adjust_pair(
    model: &SolutionModel,
    phase1: &Composition,
    phase2: &Composition,
    pressure_bar: f64,
    uncertainty: f64,
) -> Result<AdjustmentOutcome, SolvusError> {
    if !(uncertainty > 0.0 && uncertainty <= 0.2) {
        return Err(SolvusError::InvalidCondition {
            quantity: "uncertainty",
            value: uncertainty,
            reason: "the analytical uncertainty must be a mole fraction between 0 and 0.2".into(),
        });
    }
    let start = pair_temperatures(model, phase1, phase2, pressure_bar)?;
    let available: Vec<usize> = (0..3)
        .filter(|&i| start.components()[i].temperature_k().is_some())
        .collect();
    if available.len() < 2 {
        return Ok(AdjustmentOutcome::TooFewTemperatures {
            available: available.len(),
        });
    }
    let (x1, _) = model.working_composition(phase1)?;
    let (x2, _) = model.working_composition(phase2)?;
    let (x1, x2) = (x1.as_array(), x2.as_array());
    let th = Thermometer::new(model, pressure_bar);
    let binary = model.kind == ModelKind::Binary;
    let sigma = uncertainty;
    // u = [dOr1, dAn1, dOr2, dAn2] / sigma; dAb = -(dOr + dAn)
    let apply = |u: &[f64; 4]| -> ([f64; 3], [f64; 3]) {
        let (a1, a2) = if binary { (0.0, 0.0) } else { (u[1], u[3]) };
        let d1 = [-(u[0] + a1) * sigma, u[0] * sigma, a1 * sigma];
        let d2 = [-(u[2] + a2) * sigma, u[2] * sigma, a2 * sigma];
        (
            [x1[0] + d1[0], x1[1] + d1[1], x1[2] + d1[2]],
            [x2[0] + d2[0], x2[1] + d2[1], x2[2] + d2[2]],
        )
    };
    const REG: f64 = 1e-3; // selects the smallest move among equally good ones
    const STIFF: f64 = 1e4; // penalty weight for leaving the box or the triangle
    let residuals = |u: &[f64; 4]| -> Vec<f64> {
        let (y1, y2) = apply(u);
        let mut r = Vec::with_capacity(13);
        let ts = th.component_temperatures(&y1, &y2);
        let t: Vec<Option<f64>> = available.iter().map(|&i| ts[i].temperature_k()).collect();
        for a in 0..t.len() {
            for b in a + 1..t.len() {
                r.push(match (t[a], t[b]) {
                    (Some(ta), Some(tb)) => ta - tb,
                    _ => 1e4,
                });
            }
        }
        for v in u {
            r.push(REG * v);
        }
        for (x, x0) in [(y1, x1), (y2, x2)] {
            for c in 0..3 {
                let change = ((x[c] - x0[c]).abs() / sigma - 1.0).max(0.0);
                let floor = if x0[c] > 0.0 {
                    ((1e-6 - x[c]) / sigma).max(0.0)
                } else {
                    0.0
                };
                r.push(STIFF * (change + floor));
            }
        }
        r
    };
    let cost = |r: &[f64]| r.iter().map(|v| v * v).sum::<f64>();
    let mut u = [0.0; 4];
    let mut r = residuals(&u);
    let mut c = cost(&r);
    let mut lambda = 1e-3;
    let n_free = if binary {
        [true, false, true, false]
    } else {
        [true; 4]
    };
    for _ in 0..200 {
        // finite-difference Jacobian
        let h = 1e-6;
        let mut jac = vec![[0.0; 4]; r.len()];
        for k in 0..4 {
            if !n_free[k] {
                continue;
            }
            let mut up = u;
            let mut um = u;
            up[k] += h;
            um[k] -= h;
            let rp = residuals(&up);
            let rm = residuals(&um);
            for (row, (a, b)) in jac.iter_mut().zip(rp.iter().zip(rm.iter())) {
                row[k] = (a - b) / (2.0 * h);
            }
        }
        let mut jtj = [[0.0; 4]; 4];
        let mut jtr = [0.0; 4];
        for (row, rv) in jac.iter().zip(r.iter()) {
            for a in 0..4 {
                jtr[a] += row[a] * rv;
                for b in 0..4 {
                    jtj[a][b] += row[a] * row[b];
                }
            }
        }
        let mut improved = false;
        for _ in 0..30 {
            let mut m = jtj;
            for a in 0..4 {
                m[a][a] += lambda * (jtj[a][a] + 1e-12) + if n_free[a] { 0.0 } else { 1.0 };
            }
            let Some(step) = solve_n(m, jtr.map(|v| -v)) else {
                lambda *= 10.0;
                continue;
            };
            let un = [
                u[0] + step[0],
                u[1] + step[1],
                u[2] + step[2],
                u[3] + step[3],
            ];
            let rn = residuals(&un);
            let cn = cost(&rn);
            if cn < c {
                let rel = (c - cn) / c.max(1e-300);
                u = un;
                r = rn;
                c = cn;
                lambda = (lambda * 0.3).max(1e-12);
                improved = rel > 1e-12;
                break;
            }
            lambda *= 10.0;
            if lambda > 1e12 {
                break;
            }
        }
        if !improved {
            break;
        }
    }
    let (y1, y2) = apply(&u);
    let c1 = Composition::new(y1[0].max(0.0), y1[1].max(0.0), y1[2].max(0.0))?;
    let c2 = Composition::new(y2[0].max(0.0), y2[1].max(0.0), y2[2].max(0.0))?;
    let temps = pair_temperatures(model, &c1, &c2, pressure_bar)?;
    let ts: Vec<f64> = available
        .iter()
        .filter_map(|&i| temps.components()[i].temperature_k())
        .collect();
    let mean = ts.iter().sum::<f64>() / ts.len().max(1) as f64;
    let spread_k = temps.spread_k.unwrap_or(f64::INFINITY);
    let max_change = (0..3)
        .map(|c| (y1[c] - x1[c]).abs().max((y2[c] - x2[c]).abs()))
        .fold(0.0, f64::max);
    Ok(AdjustmentOutcome::Adjusted(Box::new(PairAdjustment {
        phase1: c1,
        phase2: c2,
        temperature_k: mean,
        spread_k,
        uncertainty,
        max_change,
        concordant_within_uncertainty: spread_k <= 1.0 && max_change <= sigma * (1.0 + 1e-6),
        temperatures: temps,
    })))
}
