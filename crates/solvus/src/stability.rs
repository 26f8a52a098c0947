//! Stability of a composition by tangent-plane distance, and the minimum crystallisation
//! temperature of a bulk composition.
//!
//! Tangent-plane criterion (Michelsen 1982, *Fluid Phase Equilib.* 9:1-19): a composition `X0`
//! is stable as one phase at (T, P) if and only if the tangent-plane distance
//! `TPD(X) = sum_i X_i (mu_i(X) - mu_i(X0)) = G(X) - G(X0) - grad G(X0) . (X - X0)` is
//! non-negative for every `X`. The minimum is found from the lowest points of a triangular grid
//! (or a grid on the join), each refined by a damped Newton method on `grad G(X) = grad G(X0)`.
//!
//! The minimum crystallisation temperature (design §3.4) is the highest T at which the bulk is
//! not stable as one phase. On the Ab-Or join it is the temperature at which the bulk lies on a
//! solvus limb (Brent's method on the limb position); in the ternary it is found by bisection on
//! T with the tangent-plane test.

use serde::Serialize;

use crate::SolvusError;
use crate::binary::limb_temperature;
use std::sync::OnceLock;

use crate::model::{
    Composition, EdgeJoin, IdealMixing, Join, ModelAt, ModelKind, SolutionModel, excess_basis,
    ideal_entropy_term,
};
use crate::numeric::solve2;

/// Result of a tangent-plane stability test.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct StabilityTest {
    /// True if no composition lies below the tangent plane.
    pub stable: bool,
    /// Smallest tangent-plane distance found, J/mol (zero at the composition itself).
    pub min_distance_j: f64,
    /// Where that minimum was found (the incipient phase when unstable).
    pub trial: Composition,
}

/// Minimum crystallisation temperature of a bulk composition: the outcome.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "outcome", rename_all = "snake_case")]
#[non_exhaustive]
pub enum MinTemperature {
    /// One phase above this temperature, two (or more) below.
    Found {
        /// Temperature, K.
        temperature_k: f64,
        /// The phase that first appears on cooling (the other end of the tie-line).
        conjugate: Composition,
    },
    /// Stable as one phase at every temperature of the model's range.
    StableInRange {
        /// Bottom of the range searched, K.
        t_min_k: f64,
        /// Top of the range searched, K.
        t_max_k: f64,
    },
    /// Not stable as one phase even at the top of the model's range.
    UnstableAtRangeTop {
        /// Top of the range searched, K.
        t_max_k: f64,
    },
    /// The composition is outside what the model accepts.
    OutsideCompositionRange {
        /// Why.
        reason: String,
    },
}

/// Minimum crystallisation temperature with the context it was computed in.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MinTemperatureResult {
    /// Model id.
    pub model: String,
    /// Pressure, bar.
    pub pressure_bar: f64,
    /// True if a binary model was given An and used `X_Or / (X_Ab + X_Or)`.
    pub projected: bool,
    /// The composition actually used.
    pub composition: Composition,
    /// What was found.
    pub outcome: MinTemperature,
}

/// Which solver a composition needs.
enum Geometry {
    /// A pure end member: always stable.
    Vertex,
    /// On the Ab-Or join (X_Or given), closed form.
    AbOr(f64),
    /// On another edge of a ternary model: (from, to, t).
    Edge(usize, usize, f64),
    /// Inside the triangle: reduced coordinates (X_Or, X_An).
    Interior([f64; 2]),
}

fn geometry(model: &SolutionModel, x: &Composition) -> Geometry {
    let a = x.as_array();
    let zeros = a.iter().filter(|&&v| v <= 0.0).count();
    if zeros >= 2 {
        return Geometry::Vertex;
    }
    if model.kind == ModelKind::Binary || a[2] <= 0.0 {
        return Geometry::AbOr(a[1]);
    }
    if a[0] <= 0.0 {
        return Geometry::Edge(1, 2, a[2]);
    }
    if a[1] <= 0.0 {
        return Geometry::Edge(0, 2, a[2]);
    }
    Geometry::Interior([a[1], a[2]])
}

/// Relative threshold below which a tangent-plane distance counts as negative (times RT).
pub(crate) const TPD_TOLERANCE: f64 = 1e-9;

/// Tangent-plane stability test (Michelsen 1982) of a composition at T (K) and P (bar).
///
/// # Errors
/// Invalid conditions, or a composition outside the model's range.
pub fn tangent_plane_stability(
    model: &SolutionModel,
    x0: &Composition,
    temperature_k: f64,
    pressure_bar: f64,
) -> Result<StabilityTest, SolvusError> {
    let at = model.at(temperature_k, pressure_bar)?;
    let (x, _) = model.working_composition(x0)?;
    Ok(stability_at(model, &at, &x, None))
}

fn stability_at(
    model: &SolutionModel,
    at: &ModelAt,
    x: &Composition,
    warm: Option<[f64; 2]>,
) -> StabilityTest {
    let tol = TPD_TOLERANCE * at.rt;
    let (min, trial) = match geometry(model, x) {
        Geometry::Vertex => (0.0, *x),
        Geometry::AbOr(x_or) => {
            let join = at.ab_or_join();
            let (d, t) = tpd_min_join(&join, x_or);
            (d, Composition::from_array([1.0 - t, t, 0.0]))
        }
        Geometry::Edge(from, to, t0) => {
            let join = EdgeJoin { at: *at, from, to };
            let (d, t) = tpd_min_join(&join, t0);
            (d, Composition::from_array(join.point(t)))
        }
        Geometry::Interior(y0) => {
            // a negative distance from the previous incipient phase already proves instability
            let quick = warm.map(|w| {
                let (g0, r0, _) = at.reduced(y0);
                local_min_2d(at, y0, g0, r0, w)
            });
            let (d, y) = match quick {
                Some((d, y)) if d < -tol => (d, y),
                _ => tpd_min_2d(at, y0, warm),
            };
            (d, Composition::from_array([1.0 - y[0] - y[1], y[0], y[1]]))
        }
    };
    StabilityTest {
        stable: min >= -tol,
        min_distance_j: min,
        trial,
    }
}

/// Minimum over a join of `G(x) - G(x0) - G'(x0)(x - x0)`: grid, then Newton in the logit.
fn tpd_min_join<J: Join>(j: &J, x0: f64) -> (f64, f64) {
    let (g0, g10, _) = j.g012(x0);
    let tpd = |x: f64| j.g012(x).0 - g0 - g10 * (x - x0);
    const N: usize = 120;
    let mut best = (0.0, x0);
    for i in 0..N {
        let x = (i as f64 + 0.5) / N as f64;
        let d = tpd(x);
        if d < best.0 {
            best = (d, x);
        }
    }
    // refine: Newton on G'(x) = G'(x0) in u = logit(x)
    let mut u = (best.1 / (1.0 - best.1)).ln();
    for _ in 0..60 {
        let x = 1.0 / (1.0 + (-u).exp());
        let (g1, g2) = j.g12(x);
        let df = g2 * x * (1.0 - x);
        if df <= 0.0 {
            break;
        }
        let step = ((g1 - g10) / df).clamp(-2.0, 2.0);
        u -= step;
        if step.abs() < 1e-13 {
            break;
        }
    }
    let x = 1.0 / (1.0 + (-u).exp());
    let d = tpd(x);
    if d < best.0 { (d, x) } else { best }
}

/// Grid subdivisions for the ternary stability test.
const GRID_N: usize = 24;

/// The triangular grid with the parts of G that do not depend on T or P.
struct GridTable {
    y: Vec<[f64; 2]>,
    index: Vec<(usize, usize)>,
    position: Vec<Vec<usize>>,
    ideal: Vec<f64>,
    basis: Vec<[f64; 7]>,
}

fn build_grid_table(ideal: IdealMixing) -> GridTable {
    let denom = (GRID_N + 1) as f64;
    let mut t = GridTable {
        y: Vec::new(),
        index: Vec::new(),
        position: vec![vec![0; GRID_N + 1]; GRID_N + 1],
        ideal: Vec::new(),
        basis: Vec::new(),
    };
    for i in 0..=GRID_N {
        for k in 0..=(GRID_N - i) {
            let y = [
                (i as f64 + 1.0 / 3.0) / denom,
                (k as f64 + 1.0 / 3.0) / denom,
            ];
            let x = [1.0 - y[0] - y[1], y[0], y[1]];
            t.position[i][k] = t.y.len();
            t.y.push(y);
            t.index.push((i, k));
            t.ideal.push(ideal_entropy_term(ideal, &x));
            t.basis.push(excess_basis(&x));
        }
    }
    t
}

fn grid_table(ideal: IdealMixing) -> &'static GridTable {
    static MOLECULAR: OnceLock<GridTable> = OnceLock::new();
    static AL_AVOIDANCE: OnceLock<GridTable> = OnceLock::new();
    match ideal {
        IdealMixing::Molecular => MOLECULAR.get_or_init(|| build_grid_table(ideal)),
        IdealMixing::AlAvoidance => AL_AVOIDANCE.get_or_init(|| build_grid_table(ideal)),
    }
}

/// Minimum of the tangent-plane distance over the triangle, from interior point `y0`.
pub(crate) fn tpd_min_2d(at: &ModelAt, y0: [f64; 2], warm: Option<[f64; 2]>) -> (f64, [f64; 2]) {
    let (g0, r0, _) = at.reduced(y0);
    // G on the grid from a table of the temperature-independent parts (ideal term and the
    // seven excess polynomials), built once per ideal-mixing choice
    let table = grid_table(at.ideal);
    let mut values = [[f64::INFINITY; GRID_N + 1]; GRID_N + 1];
    for (n, &(i, k)) in table.index.iter().enumerate() {
        let y = table.y[n];
        let b = &table.basis[n];
        let mut g = at.rt * table.ideal[n];
        for (wk, bk) in at.w.iter().zip(b.iter()) {
            g += wk * bk;
        }
        values[i][k] = g - g0 - r0[0] * (y[0] - y0[0]) - r0[1] * (y[1] - y0[1]);
    }
    let point = |i: usize, k: usize| table.y[table.position[i][k]];
    let value = |i: isize, k: isize| -> f64 {
        if i < 0 || k < 0 || (i + k) as usize > GRID_N {
            f64::INFINITY
        } else {
            values[i as usize][k as usize]
        }
    };
    // every local minimum of the grid is a start (each basin of the tangent-plane distance)
    let mut minima: Vec<(f64, [f64; 2])> = Vec::new();
    for i in 0..=GRID_N {
        for k in 0..=(GRID_N - i) {
            let v = values[i][k];
            let (ii, kk) = (i as isize, k as isize);
            let neighbours = [
                (ii + 1, kk),
                (ii - 1, kk),
                (ii, kk + 1),
                (ii, kk - 1),
                (ii + 1, kk - 1),
                (ii - 1, kk + 1),
            ];
            if neighbours.iter().all(|&(a, b)| v <= value(a, b)) {
                minima.push((v, point(i, k)));
            }
        }
    }
    minima.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut starts: Vec<[f64; 2]> = minima.iter().take(6).map(|m| m.1).collect();
    // the corners, where a basin can be narrower than the grid spacing
    starts.extend([[0.002, 0.002], [0.996, 0.002], [0.002, 0.996]]);
    if let Some(w) = warm {
        starts.push(w);
    }
    let mut result = (0.0, y0);
    for s in starts {
        let (d, y) = local_min_2d(at, y0, g0, r0, s);
        if d < result.0 {
            result = (d, y);
        }
    }
    result
}

/// Damped Newton minimisation of the tangent-plane distance from `start`.
fn local_min_2d(
    at: &ModelAt,
    y0: [f64; 2],
    g0: f64,
    r0: [f64; 2],
    start: [f64; 2],
) -> (f64, [f64; 2]) {
    let tpd_of = |g: f64, y: [f64; 2]| g - g0 - r0[0] * (y[0] - y0[0]) - r0[1] * (y[1] - y0[1]);
    let mut y = start;
    let (mut g, mut grad, mut h) = at.reduced(y);
    let mut f = tpd_of(g, y);
    for _ in 0..80 {
        let d = [grad[0] - r0[0], grad[1] - r0[1]];
        // shift the Hessian to positive definite if needed (Levenberg)
        let tr = h[0][0] + h[1][1];
        let det = h[0][0] * h[1][1] - h[0][1] * h[1][0];
        let disc = ((h[0][0] - h[1][1]).powi(2) + 4.0 * h[0][1] * h[1][0])
            .max(0.0)
            .sqrt();
        let lam_min = 0.5 * (tr - disc);
        let shift = if lam_min > 1e-9 * tr.abs() && det > 0.0 {
            0.0
        } else {
            -lam_min + 1e-3 * tr.abs().max(at.rt)
        };
        let hm = [[h[0][0] + shift, h[0][1]], [h[1][0], h[1][1] + shift]];
        let Some(p) = solve2(hm, [-d[0], -d[1]]) else {
            break;
        };
        // stay inside the triangle
        let x = [1.0 - y[0] - y[1], y[0], y[1]];
        let dx = [-p[0] - p[1], p[0], p[1]];
        let mut alpha: f64 = 1.0;
        for c in 0..3 {
            if dx[c] < 0.0 {
                alpha = alpha.min(0.9 * x[c] / -dx[c]);
            }
        }
        let slope = d[0] * p[0] + d[1] * p[1];
        let mut accepted = false;
        for _ in 0..40 {
            let yn = [y[0] + alpha * p[0], y[1] + alpha * p[1]];
            let (gn, gradn, hn) = at.reduced(yn);
            let fnew = tpd_of(gn, yn);
            if fnew <= f + 1e-4 * alpha * slope.min(0.0) + 1e-12 * at.rt {
                let moved = (alpha * p[0]).abs().max((alpha * p[1]).abs());
                y = yn;
                g = gn;
                grad = gradn;
                h = hn;
                f = fnew;
                accepted = moved > 1e-14;
                break;
            }
            alpha *= 0.5;
        }
        if !accepted {
            break;
        }
    }
    let _ = g;
    (f, y)
}

/// Minimum crystallisation temperature of a bulk composition at a pressure (bar): the highest
/// temperature at which it is not stable as one phase (design §3.4).
///
/// # Errors
/// Invalid pressure; a solver that did not converge.
pub fn min_crystallisation_temperature(
    model: &SolutionModel,
    bulk: &Composition,
    pressure_bar: f64,
) -> Result<MinTemperatureResult, SolvusError> {
    model.check_pressure_in_range(pressure_bar)?;
    let (t_lo, t_hi) = model.temperature_interval_k();
    let (x, projected) = match model.working_composition(bulk) {
        Ok(v) => v,
        Err(e) => {
            return Ok(MinTemperatureResult {
                model: model.id.clone(),
                pressure_bar,
                projected: model.kind == ModelKind::Binary && bulk.x_an > 0.0,
                composition: *bulk,
                outcome: MinTemperature::OutsideCompositionRange {
                    reason: e.to_string(),
                },
            });
        }
    };
    let outcome = match geometry(model, &x) {
        Geometry::Vertex => MinTemperature::StableInRange {
            t_min_k: t_lo,
            t_max_k: t_hi,
        },
        Geometry::AbOr(x_or) => match limb_temperature(model, x_or, pressure_bar, t_lo) {
            Ok(Some((t, conj))) if t <= t_hi => MinTemperature::Found {
                temperature_k: t,
                conjugate: Composition::from_array([1.0 - conj, conj, 0.0]),
            },
            Ok(Some(_)) => MinTemperature::UnstableAtRangeTop { t_max_k: t_hi },
            Ok(None) | Err(SolvusError::NoMiscibilityGap { .. }) => MinTemperature::StableInRange {
                t_min_k: t_lo,
                t_max_k: t_hi,
            },
            Err(e) => return Err(e),
        },
        Geometry::Edge(..) | Geometry::Interior(_) => {
            bisect_temperature(model, &x, pressure_bar, t_lo, t_hi)
        }
    };
    Ok(MinTemperatureResult {
        model: model.id.clone(),
        pressure_bar,
        projected,
        composition: x,
        outcome,
    })
}

/// Bisection on T with the tangent-plane test; assumes the gap grows as T falls.
fn bisect_temperature(
    model: &SolutionModel,
    x: &Composition,
    pressure_bar: f64,
    t_lo: f64,
    t_hi: f64,
) -> MinTemperature {
    let test = |t: f64, warm: Option<[f64; 2]>| {
        let at = model.at_unchecked(t, pressure_bar);
        stability_at(model, &at, x, warm)
    };
    if !test(t_hi, None).stable {
        return MinTemperature::UnstableAtRangeTop { t_max_k: t_hi };
    }
    let bottom = test(t_lo, None);
    if bottom.stable {
        return MinTemperature::StableInRange {
            t_min_k: t_lo,
            t_max_k: t_hi,
        };
    }
    let (mut lo, mut hi) = (t_lo, t_hi);
    let mut conjugate = bottom.trial;
    while hi - lo > 1e-3 {
        let mid = 0.5 * (lo + hi);
        let warm = Some([conjugate.x_or, conjugate.x_an]);
        let r = test(mid, warm);
        if r.stable {
            hi = mid;
        } else {
            lo = mid;
            conjugate = r.trial;
        }
    }
    MinTemperature::Found {
        temperature_k: 0.5 * (lo + hi),
        conjugate,
    }
}
