//! Small numerical tools: a bracketed scalar root finder and tiny dense linear solves.

/// Brent's method (Brent 1973, *Algorithms for Minimization without Derivatives*, ch. 4) for a
/// root of `f` in `[a, b]` where `f(a)` and `f(b)` have opposite signs (or one is zero).
///
/// Returns `None` if the end values do not bracket a root or the iteration limit is reached.
pub(crate) fn brent<F: FnMut(f64) -> f64>(
    mut f: F,
    mut a: f64,
    mut b: f64,
    xtol: f64,
    max_iter: usize,
) -> Option<f64> {
    let mut fa = f(a);
    let mut fb = f(b);
    if fa == 0.0 {
        return Some(a);
    }
    if fb == 0.0 {
        return Some(b);
    }
    if !(fa.is_finite() && fb.is_finite()) || fa.signum() == fb.signum() {
        return None;
    }
    let mut c = a;
    let mut fc = fa;
    let mut d = b - a;
    let mut e = d;
    for _ in 0..max_iter {
        if fb.signum() == fc.signum() {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * xtol;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 {
            return Some(b);
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * m * s;
                q = 1.0 - s;
            } else {
                let qa = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * m * qa * (qa - r) - (b - a) * (r - 1.0));
                q = (qa - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        } else {
            d = m;
            e = m;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol { d } else { tol * m.signum() };
        fb = f(b);
        if !fb.is_finite() {
            return None;
        }
    }
    None
}

/// Solve the 2x2 system `m x = r`; `None` if singular.
pub(crate) fn solve2(m: [[f64; 2]; 2], r: [f64; 2]) -> Option<[f64; 2]> {
    let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
    let scale = m[0][0]
        .abs()
        .max(m[1][1].abs())
        .max(m[0][1].abs())
        .max(m[1][0].abs());
    if det.abs() <= 1e-300 || det.abs() <= 1e-14 * scale * scale {
        return None;
    }
    Some([
        (r[0] * m[1][1] - m[0][1] * r[1]) / det,
        (m[0][0] * r[1] - r[0] * m[1][0]) / det,
    ])
}

/// Solve an `n x n` system by Gaussian elimination with partial pivoting; `None` if singular.
pub(crate) fn solve_n<const N: usize>(mut m: [[f64; N]; N], mut r: [f64; N]) -> Option<[f64; N]> {
    for col in 0..N {
        let pivot = (col..N).max_by(|&i, &j| m[i][col].abs().total_cmp(&m[j][col].abs()))?;
        if m[pivot][col].abs() < 1e-300 {
            return None;
        }
        m.swap(col, pivot);
        r.swap(col, pivot);
        for row in col + 1..N {
            let f = m[row][col] / m[col][col];
            for k in col..N {
                m[row][k] -= f * m[col][k];
            }
            r[row] -= f * r[col];
        }
    }
    let mut x = [0.0; N];
    for row in (0..N).rev() {
        let mut s = r[row];
        for k in row + 1..N {
            s -= m[row][k] * x[k];
        }
        x[row] = s / m[row][row];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn brent_finds_cube_root_of_two() {
        // Source: 2^(1/3) = 1.2599210498948732 (any handbook of constants).
        let r = brent(|x| x * x * x - 2.0, 0.0, 2.0, 1e-14, 100).unwrap();
        assert!((r - 1.259_921_049_894_873_2).abs() < 1e-12);
        assert!(brent(|x| x * x + 1.0, -1.0, 1.0, 1e-12, 100).is_none());
    }

    #[test]
    fn linear_solves() {
        let x = solve_n(
            [[2.0, 1.0, 0.0], [1.0, 3.0, 1.0], [0.0, 1.0, 4.0]],
            [3.0, 5.0, 5.0],
        )
        .unwrap();
        for v in x {
            assert!((v - 1.0).abs() < 1e-12);
        }
        assert!(solve2([[1.0, 2.0], [2.0, 4.0]], [1.0, 1.0]).is_none());
    }
}
