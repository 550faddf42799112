#!/usr/bin/python3
"""Independent cross-check of `knee fit` with SciPy's least_squares (issue 16, acceptance 3).

The residual is written here from the format contract alone (shared/spec/netlist-format.md,
"Diode parameters"; docs/fit.md, "Residuals"), not from knee's code:

    r_k = sqrt(w_k) * (ln|I_model(V_k, T_k)| - ln|I_k|)
    I_model: the root of  Vj + Rs*I(Vj) = V,  found here with scipy.optimize.brentq, where
    I(Vj) = Is(T) (exp(Vj/(n Vt)) - 1) - Ibr exp(-(Vj + Vbr(T))/(nbr Vt))   [breakdown term
            only when the part has breakdown]
    Is(T) = Is (T/T0)^(sat_temp_exp/n) exp((bandgap/(n Vt0)) (1 - T0/T)),   Vt = k T / q
    Vbr(T) = breakdown_v (1 + breakdown_tc (T - T0))

with sat_current and breakdown_i as natural logarithms among the unknowns. Five data sets
are generated here from known parameters with 1 % multiplicative noise on the currents
(NumPy's default generator, fixed seeds), written as CSV, fitted by `knee fit --format json`
and by scipy.optimize.least_squares (MINPACK's Levenberg-Marquardt, method='lm', started from
the truth moved by 10 % (breakdown_v by 0.2 %), independent of knee's start), and every fitted key must agree:
|knee - scipy| <= 1e-6 |scipy|.

Usage: fit_scipy_check.py KNEE_BINARY        exit status 0 when every key agrees.
"""

import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import optimize

K_BOLTZMANN = 1.380649e-23  # J/K, CODATA 2018 (exact since the 2019 SI)
Q_ELECTRON = 1.602176634e-19  # C, CODATA 2018 (exact since the 2019 SI)
ZERO_CELSIUS = 273.15
T0 = 25.0

LOG_KEYS = ("sat_current", "breakdown_i")


def vt(celsius):
    return K_BOLTZMANN * (celsius + ZERO_CELSIUS) / Q_ELECTRON


def law(p, celsius, breakdown):
    """I(Vj) at one temperature, as a function, for the parameters p (a dict, natural units)."""
    tk, t0k = celsius + ZERO_CELSIUS, T0 + ZERO_CELSIUS
    n = p["ideality"]
    is_t = p["sat_current"] * (tk / t0k) ** (p["sat_temp_exp"] / n) * math.exp(
        p["bandgap"] / (n * vt(T0)) * (1 - t0k / tk))
    nvt = n * vt(celsius)
    if breakdown:
        vbr = p["breakdown_v"] * (1 + p["breakdown_tc"] * (celsius - T0))
        nbr_vt = p["breakdown_ideality"] * vt(celsius)

    def current(vj):
        i = is_t * math.expm1(min(vj / nvt, 700.0))
        if breakdown:
            i -= p["breakdown_i"] * math.exp(min(-(vj + vbr) / nbr_vt, 700.0))
        return i

    return current


def model_current(p, v, celsius, breakdown):
    current = law(p, celsius, breakdown)
    rs = p["series_res"]
    if rs == 0:
        return current(v)
    g = lambda vj: vj + rs * current(vj) - v
    lo, hi = min(v, 0.0), max(v, 0.0)
    step = 1.0
    while g(lo) > 0:
        lo, step = lo - step, step * 2
    step = 1.0
    while g(hi) < 0:
        hi, step = hi + step, step * 2
    vj = optimize.brentq(g, lo, hi, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=500)
    return current(vj)


def voltage_at(p, i, celsius, breakdown):
    """The generator: terminal voltage at current i (explicit in i, three settling passes)."""
    current = law(p, celsius, breakdown)
    rs = p["series_res"]
    f = lambda vj: current(vj) - i
    lo, hi = -1.0, 1.0
    while f(lo) > 0:
        lo *= 2
    while f(hi) < 0:
        hi *= 2
    vj = optimize.brentq(f, lo, hi, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=500)
    return vj + rs * i


TRUTH = {"sat_current": 2e-9, "ideality": 1.8, "series_res": 0.05, "breakdown_v": 100.0,
         "breakdown_i": 1e-3, "breakdown_ideality": 1.5, "breakdown_tc": 8e-4,
         "bandgap": 1.12, "sat_temp_exp": 3.0}

DATA_SETS = [
    # name, temperatures, breakdown currents, fitted keys, weights?, seed
    ("forward", [25.0], [], ["sat_current", "ideality", "series_res"], False, 11),
    ("forward_weighted", [25.0], [], ["sat_current", "ideality", "series_res"], True, 12),
    ("breakdown", [25.0], [1e-4, 1e-3, 1e-2, 5e-2],
     ["sat_current", "ideality", "series_res", "breakdown_v", "breakdown_ideality"], False, 13),
    ("three_temps", [-40.0, 25.0, 125.0], [],
     ["sat_current", "ideality", "series_res", "bandgap", "sat_temp_exp"], False, 14),
    ("breakdown_three_temps", [-40.0, 25.0, 125.0], [1e-4, 1e-3, 1e-2, 5e-2],
     ["sat_current", "ideality", "series_res", "breakdown_v", "breakdown_ideality",
      "breakdown_tc", "bandgap", "sat_temp_exp"], False, 15),
]


def make_points(temps, breakdown_currents, weighted, seed):
    rng = np.random.default_rng(seed)
    breakdown = bool(breakdown_currents)
    points = []
    for t in temps:
        currents = list(np.geomspace(1e-6, 3.0, 20)) + [-b for b in breakdown_currents]
        for i in currents:
            v = voltage_at(TRUTH, i, t, breakdown)
            w = float(rng.uniform(0.5, 2.0)) if weighted else 1.0
            points.append((v, i * (1 + 0.01 * rng.standard_normal()), t, w))
    return points


def scipy_fit(points, keys, breakdown):
    def unpack(x):
        p = dict(TRUTH)
        if not breakdown:
            p["breakdown_v"] = None
        for k, value in zip(keys, x):
            p[k] = math.exp(value) if k in LOG_KEYS else value
        return p

    def residuals(x):
        p = unpack(x)
        r = []
        for v, i, t, w in points:
            im = model_current(p, v, t, breakdown)
            r.append(math.sqrt(w) * (math.log(abs(im)) - math.log(abs(i))) if im * i > 0 else 1e3)
        return np.array(r)

    # 10 % off the truth, breakdown_v 0.2 % off (0.2 V is already five breakdown thermal
    # voltages: further off, the breakdown points carry no gradient toward it).
    move = {"breakdown_v": 1.002}
    x0 = [math.log(TRUTH[k] * 1.1) if k in LOG_KEYS else TRUTH[k] * move.get(k, 1.1) for k in keys]
    sol = optimize.least_squares(residuals, x0, method="lm", x_scale="jac", xtol=1e-15,
                                 ftol=1e-15, gtol=1e-15, max_nfev=20000)
    p = unpack(sol.x)
    return {k: p[k] for k in keys}, sol


def main():
    knee = sys.argv[1]
    failures = 0
    with tempfile.TemporaryDirectory() as folder:
        for name, temps, bd, keys, weighted, seed in DATA_SETS:
            points = make_points(temps, bd, weighted, seed)
            path = os.path.join(folder, name + ".csv")
            with open(path, "w") as f:
                f.write("v,i,temp,weight\n")
                for v, i, t, w in points:
                    f.write(f"{v!r},{i!r},{t!r},{w!r}\n")
            held = [f"--set={k}={TRUTH[k]!r}" for k in TRUTH if k not in keys and
                    (bd or not k.startswith("breakdown"))]
            run = subprocess.run([knee, "fit", path, "--fit", ",".join(keys), "--format", "json"]
                                 + held, capture_output=True, text=True)
            if run.returncode != 0:
                print(f"{name}: knee fit failed ({run.returncode}): {run.stderr}")
                failures += 1
                continue
            knee_keys = json.loads(run.stdout)["keys"]
            reference, sol = scipy_fit(points, keys, bool(bd))
            worst = 0.0
            for k in keys:
                a, b = knee_keys[k]["value"], reference[k]
                rel = abs(a - b) / abs(b)
                worst = max(worst, rel)
                if rel > 1e-6:
                    print(f"{name}: {k}: knee {a!r} scipy {b!r} (relative {rel:.2e})")
                    failures += 1
            print(f"{name}: {len(points)} points, {len(keys)} keys, largest relative difference "
                  f"{worst:.2e} (scipy: {sol.message})")
    print("fit_scipy_check:", "all keys agree" if failures == 0 else f"{failures} disagreements")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
