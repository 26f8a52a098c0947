//! The ternary (Ab-Or-An) binodal at one temperature and pressure: tie-lines and the critical
//! point of the isotherm.
//!
//! Method:
//! 1. Each edge of the triangle is a binary join; where it has a miscibility gap, its tie-line
//!    is found by the common-tangent solver of [`crate::binary`] (spinodal-bracketed Newton on
//!    the tangent slope).
//! 2. From an edge tie-line the family of ternary tie-lines is followed into the triangle by
//!    numerical continuation (Allgower & Georg 1990, *Numerical Continuation Methods*, ch. 2, with
//!    Rheinboldt's local parametrisation): the unknowns are both ends of the tie-line, the
//!    equations are equal chemical potentials of Ab, Or and An, each step predicts along the
//!    tangent of the solution curve and corrects by Newton's method with the fastest-changing
//!    unknown held fixed. Every accepted tie-line satisfies the equilibrium to 1e-7 J/mol.
//! 3. The trace ends where the two limbs meet (the tie-line shrinks to a point: the critical
//!    point of the isotherm, located exactly from Gibbs' criteria `det H = 0` and
//!    `grad(det H) . v = 0` with `v` the null vector of the Hessian `H`), or where it reaches
//!    another edge (then the edge tie-line closes it).
//!
//! Limitation: a gap that touches no edge (a closed loop inside the triangle) is not traced.
//! Feldspar models always have the Or-An gap at geologic temperatures.

use serde::Serialize;

use crate::SolvusError;
use crate::binary::{binodal_on_join, spinodal_ab_or, spinodal_scan};
use crate::model::{Composition, EdgeJoin, ModelAt, ModelKind, SolutionModel};
use crate::numeric::{solve_n, solve2};
use crate::stability::{TPD_TOLERANCE, tpd_min_2d};

/// One tie-line of a ternary isotherm.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TieLine {
    /// Which two-phase band it belongs to (bands are traced one after another).
    pub band: usize,
    /// The end with the lower X_Or (plagioclase or Na-rich alkali feldspar).
    pub na_rich: Composition,
    /// The end with the higher X_Or (K-rich alkali feldspar).
    pub k_rich: Composition,
}

/// The ternary binodal at one temperature and pressure.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TernaryIsotherm {
    /// Model id.
    pub model: String,
    /// Temperature, K.
    pub temperature_k: f64,
    /// Pressure, bar.
    pub pressure_bar: f64,
    /// Tie-lines in the order traced (from an edge towards the critical point or another edge).
    pub tie_lines: Vec<TieLine>,
    /// Where the two limbs meet, if they do at this temperature.
    pub critical_point: Option<Composition>,
    /// Three coexisting phases, if the isotherm has a three-phase triangle (the tie-lines that
    /// would cross it are metastable and left out).
    pub three_phase: Option<[Composition; 3]>,
    /// True if a band was followed until the solver could go no further without reaching an
    /// edge or locating a critical point (its tie-lines are still valid equilibria).
    pub unresolved_band: bool,
}

fn to_x(y: [f64; 2]) -> [f64; 3] {
    [1.0 - y[0] - y[1], y[0], y[1]]
}

/// Equations (equal mu of Ab, Or, An) and their Jacobian for z = [y1, y2].
fn system(at: &ModelAt, z: &[f64; 4]) -> ([f64; 3], [[f64; 4]; 3]) {
    let y1 = [z[0], z[1]];
    let y2 = [z[2], z[3]];
    let (g1, r1, h1) = at.reduced(y1);
    let (g2, r2, h2) = at.reduced(y2);
    let mu_ab1 = g1 - y1[0] * r1[0] - y1[1] * r1[1];
    let mu_ab2 = g2 - y2[0] * r2[0] - y2[1] * r2[1];
    let f = [r1[0] - r2[0], r1[1] - r2[1], mu_ab1 - mu_ab2];
    let hy1 = [
        h1[0][0] * y1[0] + h1[0][1] * y1[1],
        h1[1][0] * y1[0] + h1[1][1] * y1[1],
    ];
    let hy2 = [
        h2[0][0] * y2[0] + h2[0][1] * y2[1],
        h2[1][0] * y2[0] + h2[1][1] * y2[1],
    ];
    let j = [
        [h1[0][0], h1[0][1], -h2[0][0], -h2[0][1]],
        [h1[1][0], h1[1][1], -h2[1][0], -h2[1][1]],
        [-hy1[0], -hy1[1], hy2[0], hy2[1]],
    ];
    (f, j)
}

fn det3(m: [[f64; 3]; 3]) -> f64 {
    m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
        - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
        + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
}

/// Unit null vector of a 3x4 matrix by cofactors.
fn null_vector(j: &[[f64; 4]; 3]) -> Option<[f64; 4]> {
    let mut t = [0.0; 4];
    for (k, tk) in t.iter_mut().enumerate() {
        let mut m = [[0.0; 3]; 3];
        for r in 0..3 {
            let mut c = 0;
            for col in 0..4 {
                if col != k {
                    m[r][c] = j[r][col];
                    c += 1;
                }
            }
        }
        let sign = if k % 2 == 0 { 1.0 } else { -1.0 };
        *tk = sign * det3(m);
    }
    let n = t.iter().map(|v| v * v).sum::<f64>().sqrt();
    (n > 0.0 && n.is_finite()).then(|| t.map(|v| v / n))
}

/// Distance between the two ends of a tie-line in (X_Or, X_An).
fn tie_length(z: &[f64; 4]) -> f64 {
    ((z[0] - z[2]).powi(2) + (z[1] - z[3]).powi(2)).sqrt()
}

fn inside(z: &[f64; 4]) -> bool {
    to_x([z[0], z[1]]).iter().all(|&v| v > 0.0) && to_x([z[2], z[3]]).iter().all(|&v| v > 0.0)
}

/// Newton correction with one extra linear equation `row . z = value`.
fn correct(
    at: &ModelAt,
    mut z: [f64; 4],
    row: [f64; 4],
    value: f64,
    max_iter: usize,
) -> Option<([f64; 4], usize)> {
    for it in 1..=max_iter {
        let (f, j) = system(at, &z);
        let c = row.iter().zip(z.iter()).map(|(a, b)| a * b).sum::<f64>() - value;
        let m = [j[0], j[1], j[2], row];
        let dz = solve_n(m, [-f[0], -f[1], -f[2], -c])?;
        let mut alpha: f64 = 1.0;
        // keep both ends inside the triangle
        for _ in 0..30 {
            let trial = [
                z[0] + alpha * dz[0],
                z[1] + alpha * dz[1],
                z[2] + alpha * dz[2],
                z[3] + alpha * dz[3],
            ];
            if inside(&trial) {
                break;
            }
            alpha *= 0.5;
        }
        for k in 0..4 {
            z[k] += alpha * dz[k];
        }
        if !inside(&z) {
            return None;
        }
        let size = dz.iter().map(|v| v.abs()).fold(0.0, f64::max) * alpha;
        if size < 1e-9 {
            // equal potentials to 1e-10 RT (about 1e-6 J/mol); near an edge round-off in
            // RT ln X keeps the last Newton steps from shrinking further
            let (f, _) = system(at, &z);
            let balanced = f.iter().all(|v| v.abs() < 1e-10 * at.rt);
            if balanced || size < 1e-13 {
                return balanced.then_some((z, it));
            }
        }
    }
    None
}

/// Critical point of the isotherm from a starting guess (reduced coordinates).
fn critical_point_2d(at: &ModelAt, start: [f64; 2]) -> Option<[f64; 2]> {
    let det = |y: [f64; 2]| {
        let (_, _, h) = at.reduced(y);
        h[0][0] * h[1][1] - h[0][1] * h[1][0]
    };
    let inside = |y: [f64; 2]| to_x(y).iter().all(|&v| v > 0.0);
    // Gibbs' criteria, each divided by a scale of its terms so that both are O(1)
    let eqs = |y: [f64; 2]| -> Option<[f64; 2]> {
        let (_, _, h) = at.reduced(y);
        let d = h[0][0] * h[1][1] - h[0][1] * h[1][0];
        // difference steps shrink with the distance to an edge (ln X is singular there)
        let e = 1e-6f64.min(0.01 * to_x(y).iter().copied().fold(1.0, f64::min));
        let d1 = (det([y[0] + e, y[1]]) - det([y[0] - e, y[1]])) / (2.0 * e);
        let d2 = (det([y[0], y[1] + e]) - det([y[0], y[1] - e])) / (2.0 * e);
        let m = h[0][0] * d2 - h[0][1] * d1;
        let m_scale = (h[0][0] * d2).abs() + (h[0][1] * d1).abs();
        let d_scale = (h[0][0] * h[1][1]).abs() + (h[0][1] * h[1][0]).abs();
        let f = [d / d_scale, m / m_scale];
        (f[0].is_finite() && f[1].is_finite()).then_some(f)
    };
    let norm = |f: [f64; 2]| f[0].abs().max(f[1].abs());
    let mut y = start;
    let mut f = eqs(y)?;
    for _ in 0..60 {
        if norm(f) < 1e-10 {
            return Some(y);
        }
        let e = 1e-5f64.min(0.05 * to_x(y).iter().copied().fold(1.0, f64::min));
        let fa = eqs([y[0] + e, y[1]])?;
        let fb = eqs([y[0] - e, y[1]])?;
        let fc = eqs([y[0], y[1] + e])?;
        let fd = eqs([y[0], y[1] - e])?;
        let jac = [
            [(fa[0] - fb[0]) / (2.0 * e), (fc[0] - fd[0]) / (2.0 * e)],
            [(fa[1] - fb[1]) / (2.0 * e), (fc[1] - fd[1]) / (2.0 * e)],
        ];
        let Some(step) = solve2(jac, [-f[0], -f[1]]) else {
            return (norm(f) < 1e-6).then_some(y);
        };
        let size = step[0].abs().max(step[1].abs());
        // at most 0.02 per step, inside the triangle, and the residual must go down
        let mut scale = (0.02 / size).min(1.0);
        let mut accepted = None;
        while scale > 1e-10 {
            let next = [y[0] + scale * step[0], y[1] + scale * step[1]];
            if inside(next)
                && let Some(fnext) = eqs(next)
                && norm(fnext) < norm(f)
            {
                accepted = Some((next, fnext));
                break;
            }
            scale *= 0.5;
        }
        let Some((next, fnext)) = accepted else {
            // no further decrease: finite-difference noise has been reached
            return (norm(f) < 1e-6).then_some(y);
        };
        let moved = size * scale;
        y = next;
        f = fnext;
        if moved < 1e-13 {
            break;
        }
    }
    (norm(f) < 1e-6).then_some(y)
}

/// Which edge a composition (both tie-line ends) sits on, by the missing component.
const EDGES: [(usize, usize, usize); 3] = [
    (1, 2, 0), // Or-An edge, Ab missing
    (0, 1, 2), // Ab-Or edge, An missing
    (0, 2, 1), // Ab-An edge, Or missing
];

/// Below this mole fraction at both ends a trace is taken to have reached an edge.
const EDGE_EPS: f64 = 2e-5;

/// Two compositions as `[x_ab, x_or, x_an]` arrays.
type EdgePair = ([f64; 3], [f64; 3]);

/// Tie-line ends on an edge, as full compositions.
fn edge_tie_line(at: &ModelAt, from: usize, to: usize) -> Result<Option<EdgePair>, SolvusError> {
    let join = EdgeJoin { at: *at, from, to };
    if (from, to) == (0, 1) {
        // the Ab-Or edge in closed form: its gap can be far narrower than any scan near the
        // binary critical temperature
        let ab_or = at.ab_or_join();
        let Some(sp) = spinodal_ab_or(&ab_or) else {
            return Ok(None);
        };
        let (t1, t2, _) = binodal_on_join(&ab_or, sp, None)?;
        return Ok(Some((join.point(t1), join.point(t2))));
    }
    let Some(sp) = spinodal_scan(&join) else {
        return Ok(None);
    };
    let (t1, t2, _) = binodal_on_join(&join, sp, None)?;
    Ok(Some((join.point(t1), join.point(t2))))
}

/// Trace from an edge tie-line into the triangle. Returns the tie-lines (as reduced pairs), the
/// critical point if reached, and the edge index reached otherwise.
fn trace(
    at: &ModelAt,
    start: ([f64; 3], [f64; 3]),
    missing: usize,
) -> (Vec<[f64; 4]>, Option<[f64; 2]>, Option<usize>) {
    let mut lines = Vec::new();
    // step onto the interior: hold the missing component of end 1 at a small value
    let eps = 1e-4;
    let lift = |x: [f64; 3]| {
        let mut v = x;
        v[missing] = eps;
        let s: f64 = v.iter().sum();
        [v[1] / s, v[2] / s]
    };
    // the second end gets the amount that equalises the missing component's potential in the
    // dilute limit (Henry's law partitioning), so Newton starts next to the solution
    let mu_missing = |x: [f64; 3]| {
        let mut v = x;
        v[missing] = eps;
        let s: f64 = v.iter().sum();
        at.mu(&v.map(|c| c / s))[missing]
    };
    let ratio = ((mu_missing(start.0) - mu_missing(start.1)) / at.rt).exp();
    let lift2 = |x: [f64; 3]| {
        let mut v = x;
        v[missing] = (eps * ratio).clamp(1e-9, 0.1);
        let s: f64 = v.iter().sum();
        [v[1] / s, v[2] / s]
    };
    let (a, b) = (lift(start.0), lift2(start.1));
    let z0 = [a[0], a[1], b[0], b[1]];
    // row for x_missing of end 1 (in reduced coordinates)
    let row = match missing {
        0 => [-1.0, -1.0, 0.0, 0.0],
        1 => [1.0, 0.0, 0.0, 0.0],
        _ => [0.0, 1.0, 0.0, 0.0],
    };
    let value = if missing == 0 { eps - 1.0 } else { eps };
    let Some((mut z, _)) = correct(at, z0, row, value, 40) else {
        return (lines, None, None);
    };
    lines.push(z);
    let missing_of =
        |z: &[f64; 4], m: usize| -> f64 { to_x([z[0], z[1]])[m].max(to_x([z[2], z[3]])[m]) };
    let mut h = 0.005;
    let mut prev_t: Option<[f64; 4]> = None;
    for _ in 0..4000 {
        let (_, j) = system(at, &z);
        let Some(mut t) = null_vector(&j) else { break };
        let dir_sign = match prev_t {
            Some(p) => (0..4).map(|k| t[k] * p[k]).sum::<f64>(),
            None => (0..4).map(|k| t[k] * row[k]).sum::<f64>(),
        };
        if dir_sign < 0.0 {
            t = t.map(|v| -v);
        }
        let k = (0..4)
            .max_by(|&p, &q| t[p].abs().total_cmp(&t[q].abs()))
            .unwrap_or(0);
        let mut accepted = None;
        while h > 1e-9 {
            let zp = [
                z[0] + h * t[0],
                z[1] + h * t[1],
                z[2] + h * t[2],
                z[3] + h * t[3],
            ];
            let mut row_k = [0.0; 4];
            row_k[k] = 1.0;
            if inside(&zp)
                && let Some((zn, iters)) = correct(at, zp, row_k, zp[k], 12)
            {
                let moved = (0..4).map(|q| (zn[q] - z[q]).powi(2)).sum::<f64>().sqrt();
                // never accept a collapse onto the trivial solution (both ends equal)
                let collapsed = tie_length(&zn) < 1e-4 || tie_length(&zn) < 0.25 * tie_length(&z);
                if moved < 3.0 * h && !collapsed {
                    accepted = Some((zn, iters));
                    break;
                }
            }
            h *= 0.5;
        }
        let Some((zn, iters)) = accepted else {
            // Stalled: close to the critical point the trivial solution (equal ends) makes the
            // equations singular; finish with the critical-point solve if the tie-line is short.
            let len = tie_length(&z);
            if len < 0.1 {
                let mid = [0.5 * (z[0] + z[2]), 0.5 * (z[1] + z[3])];
                let cp = critical_point_2d(at, mid)
                    .filter(|c| ((c[0] - mid[0]).powi(2) + (c[1] - mid[1]).powi(2)).sqrt() < 0.1);
                return (lines, cp, None);
            }
            break;
        };
        prev_t = Some(t);
        z = zn;
        lines.push(z);
        if iters <= 3 {
            h = (h * 1.6).min(0.03);
        }
        for (e, &(_, _, m)) in EDGES.iter().enumerate() {
            if m != missing && missing_of(&z, m) < EDGE_EPS {
                return (lines, None, Some(e));
            }
        }
        let len = tie_length(&z);
        if len < 0.03 {
            let mid = [0.5 * (z[0] + z[2]), 0.5 * (z[1] + z[3])];
            let cp = critical_point_2d(at, mid)
                .filter(|c| ((c[0] - mid[0]).powi(2) + (c[1] - mid[1]).powi(2)).sqrt() < 0.05);
            return (lines, cp, None);
        }
    }
    (lines, None, None)
}

/// The ternary binodal of a ternary model at T (K) and P (bar).
///
/// # Errors
/// [`SolvusError::NeedsTernaryModel`] for a binary model; invalid conditions; a binary edge
/// solve that did not converge.
pub fn ternary_isotherm(
    model: &SolutionModel,
    temperature_k: f64,
    pressure_bar: f64,
) -> Result<TernaryIsotherm, SolvusError> {
    if model.kind != ModelKind::Ternary {
        return Err(SolvusError::NeedsTernaryModel {
            id: model.id.clone(),
            what: "a ternary isotherm",
        });
    }
    let at = model.at(temperature_k, pressure_bar)?;
    let tol = TPD_TOLERANCE * at.rt;
    let mut tie_lines = Vec::new();
    let mut critical_point = None;
    let mut three_phase = None;
    // unstable tie-lines next to stable ones: their ends are close to two phases of a
    // three-phase triangle and their tangent-plane test finds the third
    let mut candidates: Vec<(f64, [[f64; 2]; 3])> = Vec::new();
    let mut done = [false; 3];
    let mut band_index = 0;
    let mut unresolved_band = false;
    for e in 0..3 {
        if done[e] {
            continue;
        }
        done[e] = true;
        let (from, to, missing) = EDGES[e];
        let Some(edge) = edge_tie_line(&at, from, to)? else {
            continue;
        };
        let (lines, cp, mut reached) = trace(&at, edge, missing);
        // A band that shrinks next to an edge which has its own gap at this temperature ends on
        // that edge (below the edge's critical temperature the limbs do not meet).
        let mut cp = cp;
        if reached.is_none()
            && let Some(z) = lines.last()
        {
            let (a, b) = (to_x([z[0], z[1]]), to_x([z[2], z[3]]));
            for (r, &(f2, t2, m)) in EDGES.iter().enumerate() {
                if r != e && a[m].max(b[m]) < 1e-3 && edge_tie_line(&at, f2, t2)?.is_some() {
                    cp = None;
                    reached = Some(r);
                }
            }
        }
        // stability of each traced (interior) tie-line by the tangent-plane test at one end
        let mut stable: Vec<bool> = Vec::with_capacity(lines.len());
        let mut tests = Vec::with_capacity(lines.len());
        for z in &lines {
            let (d, trial) = tpd_min_2d(&at, [z[0], z[1]], None);
            stable.push(d >= -tol);
            tests.push((d, trial));
        }
        for i in 0..lines.len() {
            let boundary = (i > 0 && stable[i - 1]) || (i + 1 < lines.len() && stable[i + 1]);
            if !stable[i] && boundary {
                let z = lines[i];
                candidates.push((tests[i].0, [[z[0], z[1]], [z[2], z[3]], tests[i].1]));
            }
        }
        let mut band: Vec<EdgePair> = Vec::new();
        if stable.first().copied().unwrap_or(true) {
            band.push(edge);
        }
        for (z, ok) in lines.iter().zip(stable.iter()) {
            if *ok {
                band.push((to_x([z[0], z[1]]), to_x([z[2], z[3]])));
            }
        }
        if let Some(r) = reached {
            done[r] = true;
            let (f2, t2, _) = EDGES[r];
            if stable.last().copied().unwrap_or(true)
                && let Some(end) = edge_tie_line(&at, f2, t2)?
            {
                band.push(end);
            }
        }
        if let Some(c) = cp
            && stable.last().copied().unwrap_or(false)
        {
            critical_point = Some(Composition::from_array(to_x(c)));
        }
        if cp.is_none() && reached.is_none() {
            unresolved_band = true;
        }
        for (a, b) in band {
            let (na, k) = if a[1] <= b[1] { (a, b) } else { (b, a) };
            tie_lines.push(TieLine {
                band: band_index,
                na_rich: Composition::from_array(na),
                k_rich: Composition::from_array(k),
            });
        }
        band_index += 1;
    }
    candidates.sort_by(|a, b| b.0.total_cmp(&a.0));
    for (_, start) in candidates {
        if let Some(ys) = three_phase_triangle(&at, start) {
            three_phase = Some(ys.map(|y| Composition::from_array(to_x(y))));
            break;
        }
    }
    Ok(TernaryIsotherm {
        model: model.id.clone(),
        temperature_k,
        pressure_bar,
        tie_lines,
        critical_point,
        three_phase,
        unresolved_band,
    })
}

/// Three coexisting phases (equal mu of Ab, Or, An in all three) by Newton's method from a
/// metastable tie-line and the phase that its tangent-plane test found below it.
fn three_phase_triangle(at: &ModelAt, start: [[f64; 2]; 3]) -> Option<[[f64; 2]; 3]> {
    let mut y = start;
    for _ in 0..60 {
        let d: Vec<(f64, [f64; 2], [[f64; 2]; 2])> = y.iter().map(|&p| at.reduced(p)).collect();
        let mu_ab = |i: usize| d[i].0 - y[i][0] * d[i].1[0] - y[i][1] * d[i].1[1];
        let mut f = [0.0; 6];
        let mut j = [[0.0; 6]; 6];
        for (row, other) in [(0usize, 1usize), (1, 2)] {
            // phase 0 vs `other`: rows 3*row .. 3*row + 2
            let base = 3 * row;
            f[base] = d[0].1[0] - d[other].1[0];
            f[base + 1] = d[0].1[1] - d[other].1[1];
            f[base + 2] = mu_ab(0) - mu_ab(other);
            for q in 0..2 {
                j[base][q] = d[0].2[0][q];
                j[base + 1][q] = d[0].2[1][q];
                j[base + 2][q] = -(d[0].2[q][0] * y[0][0] + d[0].2[q][1] * y[0][1]);
                j[base][2 * other + q] = -d[other].2[0][q];
                j[base + 1][2 * other + q] = -d[other].2[1][q];
                j[base + 2][2 * other + q] =
                    d[other].2[q][0] * y[other][0] + d[other].2[q][1] * y[other][1];
            }
        }
        let step = solve_n(j, f.map(|v| -v))?;
        let mut alpha: f64 = 1.0;
        let apply = |alpha: f64| -> [[f64; 2]; 3] {
            std::array::from_fn(|i| {
                [
                    y[i][0] + alpha * step[2 * i],
                    y[i][1] + alpha * step[2 * i + 1],
                ]
            })
        };
        let mut next = apply(alpha);
        while !next.iter().all(|&p| to_x(p).iter().all(|&v| v > 0.0)) {
            alpha *= 0.5;
            if alpha < 1e-6 {
                return None;
            }
            next = apply(alpha);
        }
        y = next;
        let size = step.iter().map(|v| v.abs()).fold(0.0, f64::max) * alpha;
        if size < 1e-12 {
            // the three phases must be distinct
            let dist =
                |a: [f64; 2], b: [f64; 2]| ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2)).sqrt();
            let distinct =
                dist(y[0], y[1]) > 1e-3 && dist(y[1], y[2]) > 1e-3 && dist(y[0], y[2]) > 1e-3;
            return distinct.then_some(y);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::kelvin_from_celsius;

    #[test]
    fn tie_lines_satisfy_equal_chemical_potentials() {
        // Source: phase equilibrium condition mu_i(1) = mu_i(2) for Ab, Or, An (any
        // thermodynamics text). Tolerance 1e-6 J/mol on potentials of ~1e4 J/mol.
        for id in ["eg1990", "fl1988"] {
            let m = SolutionModel::builtin(id).unwrap();
            for t_c in [600.0, 750.0, 900.0] {
                let t = kelvin_from_celsius(t_c);
                let iso = ternary_isotherm(&m, t, 1000.0).unwrap();
                assert!(
                    iso.tie_lines.len() > 5,
                    "{id} {t_c}: {}",
                    iso.tie_lines.len()
                );
                let at = m.at(t, 1000.0).unwrap();
                for tl in &iso.tie_lines {
                    let a = tl.na_rich.as_array();
                    let b = tl.k_rich.as_array();
                    let (ma, mb) = (at.mu(&a), at.mu(&b));
                    for i in 0..3 {
                        if a[i] > 0.0 && b[i] > 0.0 {
                            assert!((ma[i] - mb[i]).abs() < 1e-6, "{id} {t_c}: {tl:?}");
                        }
                    }
                }
            }
        }
    }

    #[test]
    fn ab_or_edge_tie_line_matches_the_binary_binodal() {
        // Source: design §3.3 (a ternary model restricted to X_An = 0 is a binary model): the
        // isotherm's Ab-Or end equals the closed-form binary binodal. Tolerance 1e-8.
        let m = SolutionModel::builtin("eg1990").unwrap();
        let t = kelvin_from_celsius(600.0);
        let iso = ternary_isotherm(&m, t, 1000.0).unwrap();
        let edge = iso
            .tie_lines
            .iter()
            .find(|tl| tl.na_rich.x_an == 0.0 && tl.k_rich.x_an == 0.0)
            .unwrap();
        let crate::binary::BinodalOutcome::Gap(p) = crate::binary::binodal(&m, t, 1000.0).unwrap()
        else {
            panic!()
        };
        assert!((edge.na_rich.x_or - p.x_or_na_limb).abs() < 1e-8);
        assert!((edge.k_rich.x_or - p.x_or_k_limb).abs() < 1e-8);
    }

    #[test]
    fn isotherm_critical_point_is_where_the_limbs_meet() {
        // Source: Gibbs' criteria for a critical point (det H = 0 and the derivative of det H
        // along the null vector vanishes); the shortest tie-line must lie next to it.
        // Tolerances: |det H| below 1e-6 of H11 H22; last tie-line midpoint within 0.03.
        for id in ["eg1990", "fl1988"] {
            let m = SolutionModel::builtin(id).unwrap();
            let t = kelvin_from_celsius(850.0);
            let iso = ternary_isotherm(&m, t, 1000.0).unwrap();
            let c = iso.critical_point.unwrap();
            let at = m.at(t, 1000.0).unwrap();
            let (_, _, h) = at.reduced([c.x_or, c.x_an]);
            let det = h[0][0] * h[1][1] - h[0][1] * h[1][0];
            assert!(
                det.abs() < 1e-6 * (h[0][0] * h[1][1]).abs(),
                "{id}: det {det}"
            );
            let last = iso.tie_lines.last().unwrap();
            let mid = [
                0.5 * (last.na_rich.x_or + last.k_rich.x_or),
                0.5 * (last.na_rich.x_an + last.k_rich.x_an),
            ];
            assert!(
                (mid[0] - c.x_or).abs() < 0.03 && (mid[1] - c.x_an).abs() < 0.03,
                "{id}"
            );
        }
    }

    #[test]
    fn min_temperature_of_a_ternary_tie_line_end() {
        // Source: issue 3 check (a bulk exactly on a computed binodal returns that binodal's
        // temperature within 0.05 C), here for the ternary binodal.
        for id in ["eg1990", "fl1988"] {
            let m = SolutionModel::builtin(id).unwrap();
            let t = kelvin_from_celsius(800.0);
            let iso = ternary_isotherm(&m, t, 1000.0).unwrap();
            let n = iso.tie_lines.len();
            for tl in [iso.tie_lines[n / 3], iso.tie_lines[2 * n / 3]] {
                for end in [tl.na_rich, tl.k_rich] {
                    if end.x_an < 1e-6 || end.x_ab < 1e-6 {
                        continue;
                    }
                    let r = crate::stability::min_crystallisation_temperature(&m, &end, 1000.0)
                        .unwrap();
                    let crate::stability::MinTemperature::Found { temperature_k, .. } = r.outcome
                    else {
                        panic!("{id}: {:?}", r.outcome)
                    };
                    assert!(
                        (temperature_k - t).abs() < 0.05,
                        "{id} {end:?}: {temperature_k}"
                    );
                }
            }
        }
    }

    #[test]
    fn isotherm_near_the_binary_critical_temperature() {
        // Source: continuity with the Ab-Or binary (design §3.3): 0.01 K below the binary
        // critical temperature the gap reaches the Ab-Or join and the limbs do not meet inside
        // the triangle; 0.1 K above it they meet at a critical point within 1e-3 of the join,
        // close to the binary critical composition (tolerance 0.01 in X_Or).
        let m = SolutionModel::builtin("eg1990").unwrap();
        let c = crate::binary::critical_point(&m, 1000.0).unwrap();
        let below = ternary_isotherm(&m, c.temperature_k - 0.01, 1000.0).unwrap();
        assert!(below.critical_point.is_none() && !below.unresolved_band);
        assert!(
            below
                .tie_lines
                .iter()
                .any(|t| t.na_rich.x_an == 0.0 && t.k_rich.x_an == 0.0)
        );
        let above = ternary_isotherm(&m, c.temperature_k + 0.1, 1000.0).unwrap();
        let cp = above.critical_point.unwrap();
        assert!(cp.x_an > 0.0 && cp.x_an < 1e-3, "{cp:?}");
        assert!((cp.x_or - c.x_or).abs() < 0.01);
    }

    #[test]
    fn three_phase_triangle_is_an_equilibrium() {
        // Source: phase rule and equilibrium condition: three phases with equal mu of every
        // component, each stable by the tangent-plane test (Michelsen 1982).
        // Tolerance: 1e-6 J/mol.
        let m = SolutionModel::builtin("fl1988").unwrap();
        let t = kelvin_from_celsius(500.0);
        let iso = ternary_isotherm(&m, t, 1000.0).unwrap();
        let tri = iso.three_phase.unwrap();
        let at = m.at(t, 1000.0).unwrap();
        let mu: Vec<[f64; 3]> = tri.iter().map(|c| at.mu(&c.as_array())).collect();
        for i in 0..3 {
            assert!((mu[0][i] - mu[1][i]).abs() < 1e-6 && (mu[0][i] - mu[2][i]).abs() < 1e-6);
        }
        let (d, _) = tpd_min_2d(&at, [tri[0].x_or, tri[0].x_an], None);
        assert!(d >= -TPD_TOLERANCE * at.rt);
        // every reported tie-line is stable
        for tl in &iso.tie_lines {
            if tl.na_rich.x_an > 0.0 && tl.na_rich.x_or > 0.0 && tl.na_rich.x_ab > 0.0 {
                let (d, _) = tpd_min_2d(&at, [tl.na_rich.x_or, tl.na_rich.x_an], None);
                assert!(d >= -TPD_TOLERANCE * at.rt, "{tl:?}");
            }
        }
    }
}
