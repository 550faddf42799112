#!/usr/bin/python3
"""Self-heating (docs/thermal.md) against SciPy, from the contract's law written out here.

The diode law of the format contract (shared/spec/netlist-format.md, "Diode parameters"),
with k and q the CODATA 2018 values (exact in the 2019 SI):

    junction   I = A Is(T) (exp(Vj/(n Vt)) - 1)
    series     V = Vj + I Rs / A
    Is(T)      = Is (T/T0)^(temp_exp/n) exp((Eg/(n Vt0)) (1 - T0/T)),   Vt = k T / q

and the thermal model of the contract ("Self-heating"): Tj = T_sink + thermal_res P,
T_sink = T_ambient + R_sink sum P (T_sink is the ambient without a sink).

1. One diode at a forced current I: Tj is the fixed point Tj = Ta + Rth I V(I, Tj), found
   by scipy.optimize.brentq; knee's D.tj must agree to 1e-9 relative (in kelvin and in
   degrees Celsius) at five currents and three ambients.
2. A bridge on one heatsink: HS.t = Ta + R_sink sum P (energy balance) and each
   D.tj = HS.t + Rth P, to 1e-9 relative, with knee's own dissipations.
3. A reverse-biased diode across a source, heated by its leakage: the tangency of the
   fixed point, R P'(T) = 1 with T - Ta = R P(T), is solved by brentq on
   P(T) - (T - Ta) P'(T) = 0 (P' analytic); R_crit = 1 / P'(T). knee must solve at
   0.9 R_crit (the lower balance, checked by brentq), exit 1 with "thermal runaway" at
   1.1 R_crit, and report a critical thermal_res within 1e-3 of R_crit.

Usage: thermal_scipy_check.py KNEE_BINARY      exit status 0 when everything agrees.
"""

import json
import math
import os
import re
import subprocess
import sys
import tempfile

from scipy import optimize

K_BOLTZMANN = 1.380649e-23  # J/K, CODATA 2018 (exact since the 2019 SI)
Q_ELECTRON = 1.602176634e-19  # C, CODATA 2018 (exact since the 2019 SI)
ZERO_CELSIUS = 273.15  # K, SI definition of the degree Celsius


def vt(temp_c):
    return K_BOLTZMANN * (temp_c + ZERO_CELSIUS) / Q_ELECTRON


def sat_current(isat, n, eg, temp_exp, ref_c, temp_c):
    t, t0 = temp_c + ZERO_CELSIUS, ref_c + ZERO_CELSIUS
    return isat * (t / t0) ** (temp_exp / n) * math.exp((eg / (n * vt(ref_c))) * (1 - t0 / t))


def dlog_sat_dt(n, eg, temp_exp, ref_c, temp_c):
    t, t0 = temp_c + ZERO_CELSIUS, ref_c + ZERO_CELSIUS
    return (temp_exp / n) / t + (eg / (n * vt(ref_c))) * t0 / (t * t)


FAILURES = []


def check(label, got, want, rel):
    err = abs(got - want) / abs(want)
    status = "ok" if err <= rel else "FAIL"
    print(f"{status}: {label}: knee {got!r} reference {want!r} (relative {err:.2e})")
    if err > rel:
        FAILURES.append(label)


def run(knee, text, *args):
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "c.knee")
        with open(path, "w") as f:
            f.write(text)
        r = subprocess.run([knee, "bias", path, "--format", "json", *args],
                           capture_output=True, text=True)
    return r


def values(result):
    doc = json.loads(result.stdout)
    return {c["name"]: v for c, v in zip(doc["columns"], doc["rows"][0])}, doc


def solved(knee, text, label):
    """The shown values of a bias point knee must solve, or None with the failure recorded."""
    r = run(knee, text)
    if r.returncode != 0:
        FAILURES.append(f"{label}: exit {r.returncode}")
        print(r.stdout, r.stderr)
        return None
    return values(r)[0]


# Acceptance 1 ----------------------------------------------------------------------------
def forced_current(knee):
    isat, n, rs, rth = 10e-9, 1.75, 0.05, 60.0  # an invented rectifier part
    eg, temp_exp, ref = 1.12, 3.0, 25.0
    for ambient in (-20.0, 25.0, 85.0):
        for current in (0.01, 0.1, 0.5, 1.0, 2.0):
            def volts(t):
                return n * vt(t) * math.log1p(current / sat_current(isat, n, eg, temp_exp, ref, t)) \
                    + current * rs

            def g(t):
                return t - ambient - rth * current * volts(t)

            tj = optimize.brentq(g, ambient, ambient + 500, xtol=1e-14, rtol=1e-15, maxiter=500)
            text = (f"part rect diode sat_current={isat!r} ideality={n!r} series_res={rs!r} "
                    f"thermal_res={rth!r}\n"
                    f"temp {ambient!r}\n"
                    f"isource I1 gnd -> a {current!r}\n"
                    f"diode D1 a -> gnd rect\nshow D1.tj a.v\nbias\n")
            got = solved(knee, text, f"forced current {current} A at {ambient} C")
            if got is None:
                continue
            label = f"tj at {current} A, ambient {ambient} C"
            check(label + " (C)", got["D1.tj"], tj, 1e-9)
            check(label + " (K)", got["D1.tj"] + ZERO_CELSIUS, tj + ZERO_CELSIUS, 1e-9)
            check(label + " terminal voltage", got["a.v"], volts(tj), 1e-9)


# Acceptance 2 ----------------------------------------------------------------------------
def bridge(knee):
    rth, rsink, ambient = 12.0, 6.5, 40.0
    text = (f"temp {ambient}\n"
            f"part cell diode sat_current=20n ideality=1.6 series_res=0.04 thermal_res={rth}\n"
            f"heatsink HS thermal_res={rsink}\n"
            "vsource Vin p -> m 14\n"
            "diode D1 p -> pos cell sink=HS\n"
            "diode D2 m -> pos cell sink=HS\n"
            "diode D3 neg -> p cell sink=HS\n"
            "diode D4 neg -> m cell sink=HS\n"
            "resistor Rload pos -> neg 4.7\n"
            "vsource Vref neg -> gnd 0\n"
            "show HS.t D1.tj D2.tj D3.tj D4.tj D1.p D2.p D3.p D4.p\nbias\n")
    got = solved(knee, text, "bridge")
    if got is None:
        return
    powers = [got[f"D{k}.p"] for k in range(1, 5)]
    # Energy balance of the sink (the contract's T_sink = T_ambient + R_sink sum P).
    sink = ambient + rsink * sum(powers)
    check("bridge sink temperature", got["HS.t"], sink, 1e-9)
    for k in range(1, 5):
        check(f"bridge D{k}.tj", got[f"D{k}.tj"], got["HS.t"] + rth * powers[k - 1], 1e-9)
    if not sum(powers) > 1.0:
        FAILURES.append("bridge: the load does not heat the sink")


# Acceptance 3 ----------------------------------------------------------------------------
def runaway(knee):
    # An invented leaky low-barrier part, 1 mA at 25 C, reverse-biased by 40 V.
    isat, n, eg, temp_exp, ref, volts, ambient = 1e-3, 1.05, 0.69, 3.0, 25.0, 40.0, 25.0

    def power(t):
        x = volts / (n * vt(t))
        return volts * sat_current(isat, n, eg, temp_exp, ref, t) * -math.expm1(-x)

    def dpower(t):
        x = volts / (n * vt(t))
        i_s = sat_current(isat, n, eg, temp_exp, ref, t)
        factor = -math.expm1(-x)
        dfactor = -math.exp(-x) * x / (t + ZERO_CELSIUS)  # d(1 - e^-x)/dT, x ~ 1/T
        return volts * i_s * (dlog_sat_dt(n, eg, temp_exp, ref, t) * factor + dfactor)

    t_fold = optimize.brentq(lambda t: power(t) - (t - ambient) * dpower(t), ambient + 1e-6,
                             ambient + 200, xtol=1e-13, rtol=1e-15, maxiter=500)
    r_crit = 1.0 / dpower(t_fold)
    print(f"reference: fold at Tj = {t_fold:.6f} C, critical thermal_res {r_crit:.8g} K/W")

    def netlist(rth):
        return (f"temp {ambient}\n"
                f"part leaky diode sat_current={isat} ideality={n} bandgap={eg} "
                f"thermal_res={rth!r}\n"
                f"vsource V1 k -> gnd {volts}\n"
                "diode D1 gnd -> k leaky\nshow D1.tj D1.p\nbias\n")

    below = 0.9 * r_crit
    got = solved(knee, netlist(below), "runaway: below the critical value")
    if got is not None:
        lower = optimize.brentq(lambda t: t - ambient - below * power(t), ambient, t_fold,
                                xtol=1e-13, rtol=1e-15, maxiter=500)
        check("runaway: the balance below the critical value", got["D1.tj"], lower, 1e-9)
    r = run(knee, netlist(1.1 * r_crit))
    text = r.stdout + r.stderr
    if r.returncode != 1 or "thermal runaway" not in text:
        FAILURES.append(f"runaway: above the critical value exit {r.returncode}, no message")
        print(text)
        return
    m = re.search(r"critical thermal_res is ([0-9.eE+-]+) K/W", text)
    t = re.search(r"at Tj = ([0-9.eE+-]+) C", text)
    if not m or not t:
        FAILURES.append("runaway: no critical value or temperature in the message")
        print(text)
        return
    check("runaway: critical thermal_res", float(m.group(1)), r_crit, 1e-3)
    # The temperature is printed to 4 digits; the fold's is flat in s, so a looser check.
    check("runaway: temperature where the balance is lost", float(t.group(1)), t_fold, 2e-2)


def main():
    knee = sys.argv[1]
    forced_current(knee)
    bridge(knee)
    runaway(knee)
    if FAILURES:
        print(f"{len(FAILURES)} failures: {FAILURES}")
        return 1
    print("every self-heating check agrees")
    return 0


if __name__ == "__main__":
    sys.exit(main())
