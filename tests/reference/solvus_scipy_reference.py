#!/usr/bin/env python3
"""Reference values and speed comparison for crates/solvus, computed with SciPy.

The script implements the same equations as the Rust crate (design §3.3-3.4: Margules
W = WH - T WS + P WV, the ternary excess of Fuhrman & Lindsley 1988 / Elkins & Grove 1990,
molecular or Al-avoidance ideal mixing) with NumPy and scipy.optimize (brentq, fsolve,
minimize), on the same inputs as the criterion benches in crates/solvus/benches/solvus.rs:

  binary_solvus     haselton1983, 1 kbar: critical point + 200 temperatures down to 200 C
  ternary_isotherm  eg1990, 800 C, 1 kbar: Or-An edge tie-line, 56 tie-lines towards the
                    critical point (K-rich end X_Ab stepped from 0 to 0.63; each tie-line
                    checked by a tangent-plane test), the critical point
  min_temp_binary   haselton1983, 1 kbar, bulk X_Or 0.45
  min_temp_ternary  eg1990, 1 kbar, bulk Ab 0.45 Or 0.50 An 0.05 (bisection on T, 1e-3 K)
  pair_temperatures eg1990, 1 kbar, Elkins & Grove (1990) Table 5 G4 pair

It writes tests/reference/solvus_scipy_reference.json with the values (checked by
crates/solvus/tests/scipy_reference.rs), the median wall time of each task, and the Python,
NumPy and SciPy versions. CI does not run this script; the JSON is committed.

    python3 tests/reference/solvus_scipy_reference.py
"""

import json
import warnings
import math
import platform
import statistics
import sys
import time
from pathlib import Path

import numpy as np
import scipy
from scipy.optimize import brentq, fsolve, minimize

R = 8.314462618  # J/(mol K), as crates/solvus/src/units.rs

# [AbOr, OrAb, AbAn, AnAb, OrAn, AnOr, OrAbAn] as (WH, WS, WV); design §3.3
MODELS = {
    "haselton1983": ("molecular", [(18810, 10.3, 0.394), (27320, 10.3, 0.394)] + [(0, 0, 0)] * 5),
    "tw1969": ("molecular", [(26470, 19.3810, 0.387020), (32098, 16.1356, 0.469020)] + [(0, 0, 0)] * 5),
    "eg1990": (
        "molecular",
        [(18810, 10.3, 0.4602), (27320, 10.3, 0.3264), (7924, 0, 0), (0, 0, 0),
         (40317, 0, 0), (38974, 0, -0.1037), (12545, 0, -1.095)],
    ),
    "fl1988": (
        "al_avoidance",
        [(18810, 10.3, 0.394), (27320, 10.3, 0.394), (28226, 0, 0), (8471, 0, 0),
         (52468, 0, 0), (47396, 0, -0.120), (8700, 0, -1.094)],
    ),
}
PAIRS = [(0, 1, 2), (1, 0, 2), (0, 2, 1), (2, 0, 1), (1, 2, 0), (2, 1, 0)]
T_LO, T_HI = 473.15, 1773.15


def check(residuals, tol, what):
    """fsolve may stop early with only a warning; refuse any result whose residual is large."""
    worst = float(np.max(np.abs(residuals)))
    if not worst < tol:
        raise RuntimeError(f"{what}: residual {worst:.3g} above {tol:.3g}")


def w_at(model, t, p):
    return np.array([wh - t * ws + p * wv for (wh, ws, wv) in MODELS[model][1]])


def gex_grad(w, x):
    g = 0.0
    d = np.zeros(3)
    for wk, (i, j, k) in zip(w[:6], PAIRS):
        g += wk * x[i] * x[j] * (x[j] + 0.5 * x[k])
        d[i] += wk * x[j] * (x[j] + 0.5 * x[k])
        d[j] += wk * x[i] * (2 * x[j] + 0.5 * x[k])
        d[k] += 0.5 * wk * x[i] * x[j]
    g += w[6] * x[0] * x[1] * x[2]
    d += w[6] * np.array([x[1] * x[2], x[0] * x[2], x[0] * x[1]])
    return g, d


def ideal_act(ideal, x):
    if ideal == "molecular":
        return np.array(x, dtype=float)
    q = 1 - x[2] ** 2
    return np.array([x[0] * q, x[1] * q, x[2] * (1 + x[2]) ** 2 / 4])


def mu(model, w, t, x):
    g, d = gex_grad(w, x)
    mu_ex = g + d - np.dot(x, d)
    return R * t * np.log(ideal_act(MODELS[model][0], x)) + mu_ex


def gibbs(model, w, t, x):
    a = ideal_act(MODELS[model][0], x)
    ideal = sum(xi * math.log(ai) for xi, ai in zip(x, a) if xi > 0)
    return R * t * ideal + gex_grad(w, x)[0]


# ---------- binary Ab-Or join (closed forms) ----------

def join(model, t, p):
    w = w_at(model, t, p)
    return R * t, w[0], w[1]


def g2(j, x):
    rt, wa, wb = j
    return rt / (x * (1 - x)) + wa * (2 - 6 * x) + wb * (6 * x - 4)


def g3(j, x):
    rt, wa, wb = j
    return rt * (1 / (1 - x) ** 2 - 1 / x ** 2) + 6 * (wb - wa)


def mu_binary(j, x):
    rt, wa, wb = j
    xab = 1 - x
    return (rt * math.log(xab) + x * x * (wa + 2 * (wb - wa) * xab),
            rt * math.log(x) + xab * xab * (wb + 2 * (wa - wb) * x))


def t_spinodal(model, p, x):
    (ha, sa, va), (hb, sb, vb) = MODELS[model][1][:2]
    ca, cb = 2 - 6 * x, 6 * x - 4
    xy = x * (1 - x)
    den = R - xy * (ca * sa + cb * sb)
    num = -xy * (ca * (ha + p * va) + cb * (hb + p * vb))
    return num / den


def critical_point(model, p):
    xs = (np.arange(201) + 0.5) / 202
    ts = t_spinodal(model, p, xs)
    k = int(np.argmax(ts))
    xc = brentq(lambda x: g3(join(model, t_spinodal(model, p, x), p), x), xs[k - 1], xs[k + 1], xtol=1e-15)
    return t_spinodal(model, p, xc), xc


def spinodal(j):
    rt, wa, wb = j
    a, b = 2 * wa - 4 * wb, 6 * (wb - wa)
    # p(x) = RT + x(1-x)(a + b x) = -b x^3 + (b - a) x^2 + a x + RT
    roots = np.roots([-b, b - a, a, rt])
    real = sorted(r.real for r in roots if abs(r.imag) < 1e-12 and 0 < r.real < 1)
    return (real[0], real[-1]) if len(real) >= 2 else None


def binodal(j, start=None):
    sp = spinodal(j)
    if sp is None:
        return None
    if start is None:
        m, h = 0.5 * (sp[0] + sp[1]), 0.5 * (sp[1] - sp[0]) * math.sqrt(3)
        start = (max(m - h, 0.5 * sp[0]), min(m + h, 0.5 * (1 + sp[1])))

    # solved in the logit u = ln(x/(1-x)) so that every trial stays inside (0, 1)
    def eqs(u):
        x = 1 / (1 + np.exp(-np.asarray(u)))
        a1, o1 = mu_binary(j, x[0])
        a2, o2 = mu_binary(j, x[1])
        return [a1 - a2, o1 - o2]

    u0 = [math.log(v / (1 - v)) for v in start]
    u, info, _, _ = fsolve(eqs, u0, xtol=1e-13, full_output=True)
    check(info["fvec"], 1e-7, "binary binodal")
    sol = sorted(1 / (1 + np.exp(-u)))
    if not sol[1] - sol[0] > 1e-9:
        raise RuntimeError("binary binodal collapsed onto the trivial solution")
    return float(sol[0]), float(sol[1])


def binary_solvus(model="haselton1983", p=1000.0, n=200, t_min=473.15):
    tc, xc = critical_point(model, p)
    out = []
    prev = None
    for k in range(1, n + 1):
        f = k / n
        t = tc - (tc - t_min) * f * f
        pair = binodal(join(model, t, p), prev)
        prev = pair
        out.append((t, pair[0], pair[1]))
    return (tc, xc), out


def min_temp_binary(model="haselton1983", p=1000.0, x0=0.45):
    tc, xc = critical_point(model, p)

    def f(t):
        if t >= tc:
            return abs(xc - x0)
        x1, x2 = binodal(join(model, t, p))
        return x1 - x0 if x0 < xc else x0 - x2

    return brentq(f, T_LO, tc, xtol=1e-7)


# ---------- ternary ----------

def reduced(model, w, t, y):
    x = np.array([1 - y[0] - y[1], y[0], y[1]])
    m = mu(model, w, t, x)
    return gibbs(model, w, t, x), np.array([m[1] - m[0], m[2] - m[0]]), m


GRID_N = 24
_g = [((i + 1 / 3) / (GRID_N + 1), (k + 1 / 3) / (GRID_N + 1)) for i in range(GRID_N + 1) for k in range(GRID_N + 1 - i)]
GRID = np.array(_g)


def gibbs_grid(model, w, t):
    y = GRID
    x = np.stack([1 - y[:, 0] - y[:, 1], y[:, 0], y[:, 1]], axis=1)
    a = x if MODELS[model][0] == "molecular" else np.stack(
        [x[:, 0] * (1 - x[:, 2] ** 2), x[:, 1] * (1 - x[:, 2] ** 2), x[:, 2] * (1 + x[:, 2]) ** 2 / 4], axis=1)
    g = R * t * np.sum(x * np.log(a), axis=1)
    for wk, (i, j, k) in zip(w[:6], PAIRS):
        g += wk * x[:, i] * x[:, j] * (x[:, j] + 0.5 * x[:, k])
    g += w[6] * x[:, 0] * x[:, 1] * x[:, 2]
    return g


def tpd_min(model, w, t, y0, warm=None):
    g0, r0, _ = reduced(model, w, t, y0)
    tpd = gibbs_grid(model, w, t) - g0 - (GRID - y0) @ r0
    far = np.max(np.abs(np.stack([GRID[:, 0] - y0[0], GRID[:, 1] - y0[1],
                                  (GRID[:, 0] + GRID[:, 1]) - (y0[0] + y0[1])], axis=1)), axis=1) > 0.05
    starts = [GRID[int(np.argmin(tpd))]]
    if far.any():
        starts.append(GRID[far][int(np.argmin(tpd[far]))])
    if warm is not None:
        starts.append(np.array(warm))
    best = (0.0, np.array(y0))

    def fun(y):
        g, r, _ = reduced(model, w, t, y)
        return g - g0 - np.dot(r0, y - y0), r - r0

    cons = {"type": "ineq", "fun": lambda y: 1 - y[0] - y[1] - 1e-12}
    for s in starts:
        res = minimize(fun, s, jac=True, method="SLSQP", bounds=[(1e-12, 1), (1e-12, 1)],
                       constraints=[cons], options={"ftol": 1e-14, "maxiter": 200})
        if res.fun < best[0]:
            best = (float(res.fun), res.x)
    return best


def min_temp_ternary(model="eg1990", p=1000.0, bulk=(0.45, 0.50, 0.05)):
    y0 = np.array([bulk[1], bulk[2]])

    def unstable(t, warm=None):
        w = w_at(model, t, p)
        d, y = tpd_min(model, w, t, y0, warm)
        return d < -1e-9 * R * t, y

    if unstable(T_HI)[0]:
        return None
    bad, trial = unstable(T_LO)
    if not bad:
        return None
    lo, hi = T_LO, T_HI
    while hi - lo > 1e-3:
        mid = 0.5 * (lo + hi)
        bad, y = unstable(mid, trial)
        if bad:
            lo, trial = mid, y
        else:
            hi = mid
    return 0.5 * (lo + hi)


def edge_tie_line(model, w, t, frm, to):
    def point(s):
        x = np.zeros(3)
        x[frm], x[to] = 1 - s, s
        return x

    def eqs(v):
        m1, m2 = mu(model, w, t, point(v[0])), mu(model, w, t, point(v[1]))
        return [m1[frm] - m2[frm], m1[to] - m2[to]]

    sol = fsolve(eqs, [0.02, 0.98], xtol=1e-13)
    return point(sol[0]), point(sol[1])


def ternary_isotherm(model="eg1990", t=1073.15, p=1000.0, n=56, s_max=0.63):
    w = w_at(model, t, p)
    a, b = edge_tie_line(model, w, t, 1, 2)  # Or-An edge: a Or-rich? order by X_Or below
    plag, kfs = (a, b) if a[1] < b[1] else (b, a)

    # each end is written as a softmax of (0, v_or, v_an) so every trial stays in the triangle
    def to_y(v):
        e = np.exp(np.concatenate([[0.0], v]))
        x = e / e.sum()
        return x[1:]

    def to_v(x):
        x = np.array(x, dtype=float)
        x[0] = max(x[0], 1e-5)
        x = x / x.sum()
        return np.log(x[1:] / x[0])

    z = np.concatenate([to_v(plag), to_v(kfs)])
    lines = []
    stable = []
    for s in np.linspace(1e-5, s_max, n):
        def eqs(v):
            y1, y2 = to_y(v[:2]), to_y(v[2:])
            _, _, m1 = reduced(model, w, t, y1)
            _, _, m2 = reduced(model, w, t, y2)
            return [m1[0] - m2[0], m1[1] - m2[1], m1[2] - m2[2],
                    1e3 * (-math.log1p(math.exp(v[2]) + math.exp(v[3])) - math.log(s))]
        z, info, _, _ = fsolve(eqs, z, xtol=1e-13, full_output=True)
        check(info["fvec"], 1e-6, f"tie-line at s = {s}")
        yy = np.concatenate([to_y(z[:2]), to_y(z[2:])])
        lines.append(yy)
        d, _ = tpd_min(model, w, t, yy[:2])
        stable.append(d >= -1e-9 * R * t)

    def det(y):
        h = 1e-6
        grad = lambda yy: reduced(model, w, t, yy)[1]
        c0 = (grad(y + [h, 0]) - grad(y - [h, 0])) / (2 * h)
        c1 = (grad(y + [0, h]) - grad(y - [0, h])) / (2 * h)
        return c0[0] * c1[1] - c0[1] * c1[0], c0, c1

    def crit(y):
        # Gibbs' criteria, each made dimensionless: det H = 0 and grad(det H) . v = 0
        d, c0, c1 = det(y)
        e = 1e-5
        d1 = (det(y + [e, 0])[0] - det(y - [e, 0])[0]) / (2 * e)
        d2 = (det(y + [0, e])[0] - det(y - [0, e])[0]) / (2 * e)
        return [d / (c0[0] * c1[1]), (c0[0] * d2 - c0[1] * d1) / (abs(c0[0] * d2) + abs(c0[1] * d1))]

    mid = 0.5 * (lines[-1][:2] + lines[-1][2:])
    yc, info, _, _ = fsolve(crit, mid, xtol=1e-12, full_output=True)
    check(info["fvec"], 1e-6, "isotherm critical point")
    return (plag, kfs), lines, stable, yc


def pair_temperatures(model="eg1990", p=1000.0, x1=(0.483, 0.492, 0.025), x2=(0.732, 0.153, 0.115)):
    x1, x2 = np.array(x1) / sum(x1), np.array(x2) / sum(x2)
    w0, w1 = w_at(model, 0.0, p), w_at(model, 1.0, p)
    ws = w0 - w1

    def mex(w, x):
        g, d = gex_grad(w, x)
        return g + d - np.dot(x, d)

    a1, a2 = ideal_act(MODELS[model][0], x1), ideal_act(MODELS[model][0], x2)
    h1, h2, s1, s2 = mex(w0, x1), mex(w0, x2), mex(ws, x1), mex(ws, x2)
    return (h2 - h1) / (R * np.log(a1 / a2) - s1 + s2)


def timed(fn, repeats):
    times = []
    result = None
    for _ in range(repeats):
        t0 = time.perf_counter()
        result = fn()
        times.append(time.perf_counter() - t0)
    return result, statistics.median(times)


def main():
    # fsolve's "not making good progress" warnings are expected at xtol = 1e-13; every result
    # is checked by its residual instead (see `check`).
    warnings.simplefilter("ignore", RuntimeWarning)
    out_path = Path(__file__).with_suffix(".json")
    crit = {f"{m}@{p}": critical_point(m, p) for m in ("tw1969", "haselton1983") for p in (1.0, 1000.0, 2000.0)}
    limbs = {f"{t_c}": binodal(join("haselton1983", t_c + 273.15, 1000.0)) for t_c in (500.0, 600.0)}

    (c, curve), t_solvus = timed(binary_solvus, 20)
    t_min_bin, t_mtb = timed(min_temp_binary, 50)
    t_min_ter, t_mtt = timed(min_temp_ternary, 3)
    (edge, lines, stable, yc), t_iso = timed(ternary_isotherm, 3)
    pair, t_pair = timed(pair_temperatures, 2000)

    data = {
        "generated_by": "tests/reference/solvus_scipy_reference.py",
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "machine": platform.machine(),
        "values": {
            "critical_points": {k: {"temperature_k": v[0], "x_or": v[1]} for k, v in crit.items()},
            "haselton1983_limbs_1kbar": {k: {"x_or_na_limb": v[0], "x_or_k_limb": v[1]} for k, v in limbs.items()},
            "binary_solvus_haselton1983_1kbar": {
                "critical": {"temperature_k": c[0], "x_or": c[1]},
                "points": [{"temperature_k": t, "x_or_na_limb": a, "x_or_k_limb": b} for (t, a, b) in curve[::20]],
            },
            "min_temp_binary_haselton1983_1kbar_xor0.45_k": t_min_bin,
            "min_temp_ternary_eg1990_1kbar_ab0.45_or0.50_an0.05_k": t_min_ter,
            "isotherm_eg1990_800c_1kbar": {
                "or_an_edge": {"plag": list(edge[0]), "kfs": list(edge[1])},
                "critical_point": {"x_or": yc[0], "x_an": yc[1]},
                "tie_lines": len(lines),
                "tie_line_at_kfs_x_ab_0.315": {"plag": list(lines[28][:2]), "kfs": list(lines[28][2:])},
                "all_stable": bool(all(stable)),
            },
            "pair_eg1990_g4_1kbar_k": {"ab": pair[0], "or": pair[1], "an": pair[2]},
        },
        "seconds_median": {
            "binary_solvus": t_solvus,
            "ternary_isotherm": t_iso,
            "min_temp_binary": t_mtb,
            "min_temp_ternary": t_mtt,
            "pair_temperatures": t_pair,
        },
    }
    out_path.write_text(json.dumps(data, indent=2) + "\n")
    print(f"SciPy {scipy.__version__}, NumPy {np.__version__}, Python {platform.python_version()}")
    for k, v in data["seconds_median"].items():
        print(f"  {k:<18} {v * 1e3:10.3f} ms")
    print(f"wrote {out_path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
