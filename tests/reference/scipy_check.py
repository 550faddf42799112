#!/usr/bin/python3
"""Independent cross-check of knee's bias points and sweeps with NumPy and SciPy.

Each circuit of tests/reference/circuits/ is described a second time below, in Python,
and solved here from its own nodal equations: Kirchhoff's current law at every node (and
at the internal node of every diode with series resistance) plus one equation per voltage
source, with the diode model of the format contract (shared/spec/netlist-format.md,
"Diode parameters"), written out from that contract alone:

    junction   I = A Is(T) (exp(Vj/(n Vt)) - 1)  [- A Ibr exp(-(Vj + Vbr(T))/(nbr Vt))]
    series     V = Vj + I Rs / A
    Is(T)      = Is (T/T0)^(temp_exp/n) exp((Eg/(n Vt0)) (1 - T0/T)),   Vt = k T / q
    Vbr(T)     = breakdown_v (1 + breakdown_tc (T - T0))

with k and q the CODATA 2018 values (exact in the 2019 SI). The equations are solved by
a damped Newton iteration in NumPy (each step shortened so that no junction in its
exponential region moves by more than a few n Vt) and then polished with
scipy.optimize.root (MINPACK's hybrid method with the analytic Jacobian); the KCL residual
of every answer is checked here. Sweeps are followed point by point from the previous
answer, with source stepping as the fallback.

knee is then run as a user would (`knee bias|sweep FILE ... --format json`) and every
reported quantity is compared:  |knee - reference| <= 1e-6 |reference| + floor,
floor = 1e-12 A for currents and 1e-9 V for voltages (values crossing zero, and
reverse currents of the order of Is, have no meaningful relative error).

Usage: scipy_check.py KNEE_BINARY SOURCE_DIR      exit status 0 when everything agrees.
"""

import json
import math
import subprocess
import sys

import numpy as np
from scipy import optimize

K_BOLTZMANN = 1.380649e-23  # J/K, CODATA 2018 (exact since the 2019 SI)
Q_ELECTRON = 1.602176634e-19  # C, CODATA 2018 (exact since the 2019 SI)
ZERO_CELSIUS = 273.15  # K

REL_TOL = 1e-6
FLOOR = {"V": 1e-9, "A": 1e-12}


def thermal_voltage(temp_c):
    return K_BOLTZMANN * (temp_c + ZERO_CELSIUS) / Q_ELECTRON


# ---------------------------------------------------------------------------------------
# Circuit description


class Part:
    def __init__(self, name, **params):
        self.name = name
        self.sat_current = 1e-14
        self.ideality = 1.0
        self.series_res = 0.0
        self.breakdown_v = None
        self.breakdown_i = 1e-3
        self.breakdown_ideality = 1.0
        self.breakdown_tc = 0.0
        self.bandgap = 1.12  # knee's default: silicon at 300 K (Sze & Ng, 3rd ed., 2007)
        self.sat_temp_exp = 3.0
        self.ref_temp = 25.0
        for key, value in params.items():
            if not hasattr(self, key):
                raise KeyError(key)
            setattr(self, key, value)


class Element:
    def __init__(self, kind, name, a, b, value=0.0, part=None, area=1.0, temp=None):
        self.kind, self.name, self.a, self.b = kind, name, a, b
        self.value, self.part, self.area, self.temp = value, part, area, temp


class Circuit:
    def __init__(self, file_name, temp=25.0):
        self.file_name = file_name
        self.temp = temp
        self.elements = []
        self.parts = {}
        self.params = {}  # name -> function(circuit, value)

    def part(self, name, **params):
        self.parts[name] = Part(name, **params)
        return self.parts[name]

    def R(self, name, a, b, ohms):
        self.elements.append(Element("R", name, a, b, ohms))

    def V(self, name, p, n, volts):
        self.elements.append(Element("V", name, p, n, volts))

    def I(self, name, a, b, amps):
        self.elements.append(Element("I", name, a, b, amps))

    def D(self, name, anode, cathode, part, area=1.0, temp=None):
        self.elements.append(Element("D", name, anode, cathode, part=self.parts[part],
                                     area=area, temp=temp))

    def element(self, name):
        return next(e for e in self.elements if e.name == name)

    def nodes(self):
        seen = []
        for e in self.elements:
            for node in (e.a, e.b):
                if node != "gnd" and node not in seen:
                    seen.append(node)
        return seen

    def set(self, target, value):
        """Applies one sweep value: temp, a param, PART.key or an element's value."""
        if target == "temp":
            self.temp = value
        elif target in self.params:
            self.params[target](self, value)
        elif "." in target:
            part, key = target.split(".")
            setattr(self.parts[part], key, value)
        else:
            self.element(target).value = value


# ---------------------------------------------------------------------------------------
# Nodal equations


class Junction:
    """Temperature-adjusted constants of one diode element (area applied)."""

    def __init__(self, element, circuit_temp):
        p = element.part
        temp = element.temp if element.temp is not None else circuit_temp
        t, t0 = temp + ZERO_CELSIUS, p.ref_temp + ZERO_CELSIUS
        vt0 = K_BOLTZMANN * t0 / Q_ELECTRON
        is_t = p.sat_current * (t / t0) ** (p.sat_temp_exp / p.ideality) * math.exp(
            p.bandgap / (p.ideality * vt0) * (1.0 - t0 / t))
        self.is_a = element.area * is_t
        self.n_vt = p.ideality * thermal_voltage(temp)
        self.rs = p.series_res / element.area
        self.breakdown = p.breakdown_v is not None
        if self.breakdown:
            self.ibr_a = element.area * p.breakdown_i
            self.nbr_vt = p.breakdown_ideality * thermal_voltage(temp)
            self.vbr = p.breakdown_v * (1.0 + p.breakdown_tc * (temp - p.ref_temp))

    def current(self, vj):
        """Junction current and dI/dVj."""
        x = min(vj / self.n_vt, 700.0)
        i = self.is_a * math.expm1(x)
        g = self.is_a * math.exp(x) / self.n_vt
        if self.breakdown:
            y = min(-(vj + self.vbr) / self.nbr_vt, 700.0)
            e = self.ibr_a * math.exp(y)
            i -= e
            g += e / self.nbr_vt
        return i, g

    def steep(self, vj):
        """Whether vj lies where the current grows exponentially (Newton must go slowly)."""
        if vj / self.n_vt > 10.0:
            return self.n_vt
        if self.breakdown and -(vj + self.vbr) / self.nbr_vt > -10.0:
            return self.nbr_vt
        return None


class System:
    """Unknowns: node voltages, diode internal nodes, voltage-source currents."""

    def __init__(self, circuit):
        self.circuit = circuit
        self.index = {}
        for node in circuit.nodes():
            self.index[node] = len(self.index)
        self.internal = {}
        for e in circuit.elements:
            if e.kind == "D" and e.part.series_res > 0:
                self.internal[e.name] = len(self.index) + len(self.internal)
        count = len(self.index) + len(self.internal)
        self.branch = {}
        for e in circuit.elements:
            if e.kind == "V":
                self.branch[e.name] = count + len(self.branch)
        self.size = count + len(self.branch)

    def junctions(self):
        return {e.name: Junction(e, self.circuit.temp)
                for e in self.circuit.elements if e.kind == "D"}

    def v(self, x, node):
        return 0.0 if node == "gnd" else x[self.index[node]]

    def junction_nodes(self, e):
        """(node index or None for gnd) of the junction's anode side, and the cathode."""
        if e.name in self.internal:
            return self.internal[e.name], self.index.get(e.b)
        return self.index.get(e.a), self.index.get(e.b)

    def junction_voltage(self, x, e):
        a, b = self.junction_nodes(e)
        return (x[a] if a is not None else 0.0) - (x[b] if b is not None else 0.0)

    def equations(self, x, junctions, source_scale=1.0):
        """Residual F (currents leaving each node; source constraints), Jacobian J and,
        per row, the sum of the magnitudes of its terms (for the residual check)."""
        f = np.zeros(self.size)
        jac = np.zeros((self.size, self.size))
        mag = np.zeros(self.size)

        def flow(a, b, i, g):
            # current i leaves node a and enters node b; g = di/d(va - vb)
            for row, sign in ((a, 1.0), (b, -1.0)):
                if row is None:
                    continue
                f[row] += sign * i
                mag[row] += abs(i)
                for col, s2 in ((a, 1.0), (b, -1.0)):
                    if col is not None:
                        jac[row, col] += sign * s2 * g

        for e in self.circuit.elements:
            a, b = self.index.get(e.a), self.index.get(e.b)
            if e.kind == "R":
                flow(a, b, (self.v(x, e.a) - self.v(x, e.b)) / e.value, 1.0 / e.value)
            elif e.kind == "I":
                # the source draws its current out of node a and delivers it into node b
                flow(a, b, source_scale * e.value, 0.0)
            elif e.kind == "V":
                k = self.branch[e.name]
                ib = x[k]
                for row, sign in ((a, 1.0), (b, -1.0)):
                    if row is not None:
                        f[row] += sign * ib
                        mag[row] += abs(ib)
                        jac[row, k] += sign
                f[k] = self.v(x, e.a) - self.v(x, e.b) - source_scale * e.value
                mag[k] = abs(self.v(x, e.a)) + abs(self.v(x, e.b)) + abs(e.value)
                if a is not None:
                    jac[k, a] += 1.0
                if b is not None:
                    jac[k, b] -= 1.0
            else:
                d = junctions[e.name]
                ja, jb = self.junction_nodes(e)
                if e.name in self.internal:
                    j = self.internal[e.name]
                    flow(a, j, (self.v(x, e.a) - x[j]) / d.rs, 1.0 / d.rs)
                i, g = d.current(self.junction_voltage(x, e))
                flow(ja, jb, i, g)
        return f, jac, mag

    def damped_newton(self, x, junctions, source_scale=1.0, max_steps=400):
        diodes = [e for e in self.circuit.elements if e.kind == "D"]
        for _ in range(max_steps):
            f, jac, _ = self.equations(x, junctions, source_scale)
            try:
                dx = np.linalg.solve(jac, -f)
            except np.linalg.LinAlgError:
                return None
            alpha = 1.0
            for e in diodes:
                d = junctions[e.name]
                old = self.junction_voltage(x, e)
                change = self.junction_voltage(x + dx, e) - old
                width = d.steep(old + change)
                if width is not None and abs(change) > 3.0 * width:
                    alpha = min(alpha, 3.0 * width / abs(change))
            x = x + alpha * dx
            if alpha == 1.0 and self.converged(dx, x):
                return x
        return None

    @staticmethod
    def converged(dx, x):
        # 1e-11 relative (1e-20 absolute for unknowns at zero): round-off alone moves
        # the unknowns by about 1e-13 relative, knee is compared at 1e-6.
        return bool(np.all(np.abs(dx) <= 1e-11 * np.abs(x) + 1e-20))

    def correction(self, x, junctions):
        """The Newton update still due at x: an estimate of the error left in x."""
        f, jac, _ = self.equations(x, junctions)
        return np.linalg.solve(jac, -f)

    def solve(self, start=None):
        junctions = self.junctions()
        x = np.zeros(self.size) if start is None else np.array(start)
        result = self.damped_newton(x, junctions)
        if result is None:  # source stepping from a cold start
            result = np.zeros(self.size)
            for s in np.linspace(0.0, 1.0, 41)[1:]:
                result = self.damped_newton(result, junctions, s)
                if result is None:
                    raise RuntimeError(f"{self.circuit.file_name}: no reference solution")
        # Polish with MINPACK's hybrid method (SciPy); keep whichever answer has the
        # smaller remaining Newton correction, and require that correction to be tiny.
        polished = optimize.root(lambda y: self.equations(y, junctions)[:2], result, jac=True,
                                 method="hybr", options={"xtol": 1e-13})
        x = result
        left = self.correction(result, junctions)
        if polished.success:
            left_polished = self.correction(polished.x, junctions)
            if np.max(np.abs(left_polished)) < np.max(np.abs(left)):
                x, left = polished.x, left_polished
        if not np.all(np.abs(left) <= 1e-10 * np.abs(x) + 1e-18):
            raise RuntimeError(f"{self.circuit.file_name}: reference not converged, "
                               f"remaining correction {np.max(np.abs(left)):.3g}")
        return x

    def quantities(self, x, names):
        junctions = self.junctions()
        values = {}
        for node in self.index:
            values[node + ".v"] = x[self.index[node]]
        for e in self.circuit.elements:
            voltage = self.v(x, e.a) - self.v(x, e.b)
            if e.kind == "R":
                current = voltage / e.value
            elif e.kind == "I":
                current = e.value
            elif e.kind == "V":
                current = x[self.branch[e.name]]
            else:
                vj = self.junction_voltage(x, e)
                current = junctions[e.name].current(vj)[0]
                values[e.name + ".vj"] = vj
            values[e.name + ".v"] = voltage
            values[e.name + ".i"] = current
            values[e.name + ".p"] = voltage * current
        return [values[n] for n in names]


# ---------------------------------------------------------------------------------------
# The circuits (the same as the .knee files of circuits/, described independently)


def linear(a, b, step):
    count = int(round((b - a) / step)) + 1
    return [a + k * step for k in range(count)]


def points(a, b, count):
    return [a + (b - a) * k / (count - 1) for k in range(count)]


def per_decade(a, b, n):
    decades = math.log10(b / a)
    count = int(round(decades * n)) + 1
    return [a * 10.0 ** (k / n) for k in range(count)]


def bridge():
    c = Circuit("bridge.knee")
    c.part("br", sat_current=8e-9, ideality=1.7, series_res=0.08, breakdown_v=200,
           breakdown_i=10e-6)
    c.V("Vin", "ac1", "ac2", 10)
    c.R("Rtie", "ac2", "gnd", 100e3)
    c.D("D1", "ac1", "pos", "br")
    c.D("D2", "ac2", "pos", "br")
    c.D("D3", "neg", "ac1", "br")
    c.D("D4", "neg", "ac2", "br")
    c.R("Rload", "pos", "neg", 100)
    c.R("Rret", "neg", "gnd", 100e3)
    return c, [[], [("Vin", "-24..24:0.5", linear(-24, 24, 0.5))]]


def clamp():
    c = Circuit("clamp.knee")
    c.part("cl", sat_current=1e-9, ideality=1.9, series_res=1.5)
    c.V("Vsup", "sup", "gnd", 5)
    c.R("Rsup", "sup", "vdd", 10)
    c.R("Rrail", "vdd", "gnd", 500)
    c.V("Vin", "src", "gnd", 0)
    c.R("Rs", "src", "pin", 1e3)
    c.D("Dup", "pin", "vdd", "cl")
    c.D("Ddn", "gnd", "pin", "cl")
    c.R("Rin", "pin", "gnd", 100e3)
    return c, [[("Vin", "-15..20:0.25", linear(-15, 20, 0.25))]]


def regulator():
    c = Circuit("regulator.knee")
    c.part("ref6v2", sat_current=0.3e-12, ideality=1.15, series_res=6, breakdown_v=6.2,
           breakdown_i=2e-3, breakdown_ideality=1.3, breakdown_tc=4e-4, bandgap=1.12,
           sat_temp_exp=3)
    c.V("Vraw", "raw", "gnd", 12)
    c.R("Rser", "raw", "ref", 270)
    c.D("Dz", "gnd", "ref", "ref6v2")
    c.R("Rload", "ref", "gnd", 2.2e3)
    c.params["Rs"] = lambda circuit, v: setattr(circuit.element("Rser"), "value", v)
    return c, [[], [("Vraw", "6..18:0.5", linear(6, 18, 0.5)),
                    ("temp", "-40,0,25,85,125", [-40.0, 0.0, 25.0, 85.0, 125.0])],
               [("Rs", "100..1k:dec10", per_decade(100, 1000, 10))]]


def diode_or():
    c = Circuit("diode_or.knee")
    c.part("sch", sat_current=20e-6, ideality=1.05, series_res=0.03)
    c.V("Va", "a", "gnd", 12)
    c.V("Vb", "b", "gnd", 11.5)
    c.D("Da", "a", "bus", "sch")
    c.D("Db", "b", "bus", "sch")
    c.R("Rload", "bus", "gnd", 24)
    return c, [[("Vb", "9..15:0.1", linear(9, 15, 0.1))]]


def mesh():
    c = Circuit("mesh3x3.knee")
    c.part("sig", sat_current=4e-9, ideality=1.9, series_res=0.6, breakdown_v=75,
           breakdown_i=1e-6)
    c.part("zen", sat_current=2e-15, ideality=1.05, series_res=5, breakdown_v=2.2,
           breakdown_i=1e-3, breakdown_ideality=1.6, breakdown_tc=-3e-4)
    c.V("Vdrv", "top", "gnd", 6)
    c.R("Rt", "top", "n11", 100)
    c.R("R1112", "n11", "n12", 220)
    c.R("R1213", "n12", "n13", 330)
    c.D("D2122", "n21", "n22", "sig")
    c.R("R2223", "n22", "n23", 470)
    c.R("R3132", "n31", "n32", 150)
    c.D("D3233", "n32", "n33", "sig", area=2)
    c.D("D1121", "n11", "n21", "sig")
    c.D("Z1222", "n22", "n12", "zen")
    c.R("R1323", "n13", "n23", 1e3)
    c.R("R2131", "n21", "n31", 680)
    c.D("D2232", "n22", "n32", "sig", area=0.5)
    c.D("Z2333", "n33", "n23", "zen", temp=60)
    c.I("Iinj", "gnd", "n22", 1e-3)
    c.R("R31g", "n31", "gnd", 1e3)
    c.R("R33g", "n33", "gnd", 50)
    return c, [[], [("Vdrv", "-40..40:0.5", linear(-40, 40, 0.5))]]


def breakdown_string():
    c = Circuit("breakdown_string.knee")
    c.part("za", sat_current=1e-15, ideality=1.1, series_res=3, breakdown_v=4.7,
           breakdown_i=5e-3, breakdown_ideality=1.2)
    c.part("zb", sat_current=5e-15, ideality=1.2, series_res=1, breakdown_v=8.2,
           breakdown_i=2e-3, breakdown_ideality=1.8, breakdown_tc=6e-4)
    c.V("Vhv", "hv", "gnd", 40)
    c.R("Rfeed", "hv", "top", 1e3)
    c.D("Z1", "n1", "top", "za")
    c.D("Z2", "n2", "n1", "zb", area=2)
    c.D("Z3", "n3", "n2", "za")
    c.D("Z4", "gnd", "n3", "zb", temp=70)
    c.R("Rtap", "n2", "gnd", 47e3)
    return c, [[("Vhv", "0..60:1", linear(0, 60, 1))]]


def log_current():
    c = Circuit("log_current.knee")
    c.part("pd", sat_current=40e-12, ideality=1.45, series_res=0.9)
    c.I("Ibias", "gnd", "a", 1e-3)
    c.D("D1", "a", "gnd", "pd", area=2)
    c.R("Rsh", "a", "gnd", 1e6)
    c.D("D2", "a", "b", "pd", temp=50)
    c.R("Rb", "b", "gnd", 10)
    return c, [[("Ibias", "1n..100m:dec10", per_decade(1e-9, 0.1, 10))]]


def temp_sensor():
    c = Circuit("temp_sensor.knee")
    c.part("ts", sat_current=2e-15, ideality=1.02, bandgap=1.12, sat_temp_exp=3.5, ref_temp=27)
    c.I("I1", "gnd", "a", 10e-6)
    c.I("I2", "gnd", "b", 100e-6)
    c.D("D1", "a", "gnd", "ts")
    c.D("D2", "b", "gnd", "ts", area=8)
    c.R("Rab", "a", "b", 1e6)
    return c, [[("temp", "-55..150:5", linear(-55, 150, 5))]]


def limiter():
    c = Circuit("limiter.knee")
    c.part("fa", sat_current=15e-9, ideality=1.6, series_res=0.5)
    c.part("fb", sat_current=80e-12, ideality=1.3, series_res=2)
    c.V("Vin", "in", "gnd", 0)
    c.R("Rs", "in", "out", 330)
    c.D("Dp", "out", "mid", "fa")
    c.D("Dn", "mid", "out", "fb")
    c.V("Vref", "mid", "gnd", 0.5)
    c.R("Rl", "out", "gnd", 10e3)
    return c, [[("Vin", "-5..5:0.1", linear(-5, 5, 0.1))]]


def and_gate():
    c = Circuit("and_gate.knee")
    c.part("sw", sat_current=3e-9, ideality=1.85, series_res=0.8, breakdown_v=90,
           breakdown_i=5e-6)
    c.V("Vcc", "vcc", "gnd", 5)
    c.R("Rpu", "vcc", "y", 4.7e3)
    c.V("Va", "xa", "gnd", 0)
    c.R("Ra", "xa", "ia", 50)
    c.V("Vb", "xb", "gnd", 0)
    c.R("Rb", "xb", "ib", 50)
    c.D("Da", "y", "ia", "sw")
    c.D("Db", "y", "ib", "sw")
    c.R("Ry", "y", "gnd", 100e3)
    return c, [[("Va", "0..5:11pts", points(0, 5, 11)), ("Vb", "0,2.5,5", [0.0, 2.5, 5.0])]]


def divider():
    c = Circuit("divider.knee")
    c.part("pk", sat_current=1e-9, ideality=1.5, series_res=0.2)
    c.V("V1", "in", "gnd", 3.3)
    c.R("R1", "in", "a", 10e3)
    c.R("R2", "a", "gnd", 20e3)
    c.D("D1", "a", "b", "pk")
    c.R("R3", "b", "gnd", 150)

    def set_rbias(circuit, value):
        circuit.element("R1").value = value
        circuit.element("R2").value = 2 * value

    c.params["Rbias"] = set_rbias
    return c, [[("Rbias", "100..100k:dec5", per_decade(100, 100e3, 5))],
               [("pk.ideality", "1..2:0.1", linear(1, 2, 0.1))],
               [("pk.sat_current", "1p..1u:dec2", per_decade(1e-12, 1e-6, 2))]]


def steering():
    c = Circuit("steering.knee")
    c.part("g", sat_current=0.2e-9, ideality=1.3, series_res=0.25, breakdown_v=15,
           breakdown_i=100e-6, breakdown_ideality=2)
    c.I("Isrc", "p", "q", 5e-3)
    c.D("D1", "q", "r", "g")
    c.D("D2", "r", "p", "g", area=3)
    c.R("Rp", "p", "gnd", 220)
    c.R("Rq", "q", "gnd", 1.5e3)
    c.R("Rr", "r", "gnd", 680)
    c.V("Voff", "s", "p", 2)
    c.R("Rs", "s", "r", 3.3e3)
    return c, [[], [("Isrc", "-30m..30m:1m", linear(-30e-3, 30e-3, 1e-3))]]


CIRCUITS = [bridge, clamp, regulator, diode_or, mesh, breakdown_string, log_current,
            temp_sensor, limiter, and_gate, divider, steering]


# ---------------------------------------------------------------------------------------
# Comparison with knee


def show_list(circuit):
    names = [node + ".v" for node in circuit.nodes()]
    for e in circuit.elements:
        names.append(e.name + ".i")
        if e.kind == "D":
            names += [e.name + ".v", e.name + ".vj"]
    return names


def run_knee(knee, path, circuit, axes):
    names = show_list(circuit)
    args = [knee, "sweep" if axes else "bias", path]
    args += [f"{target}={text}" for target, text, _ in axes]
    args += ["--format", "json", "--quiet", "--jobs", "1", "--show", ",".join(names)]
    done = subprocess.run(args, capture_output=True, text=True, check=False)
    if done.returncode != 0:
        raise RuntimeError(f"{' '.join(args)}: exit {done.returncode}\n{done.stderr}")
    return names, json.loads(done.stdout)


def check(knee, source_dir, make):
    """Returns (points, values compared, failures, worst error/bound ratio)."""
    circuit, runs = make()
    path = f"{source_dir}/tests/reference/circuits/{circuit.file_name}"
    failures = []
    compared = 0
    count = 0
    worst = (0.0, "")
    for axes in runs:
        names, report = run_knee(knee, path, circuit, axes)
        sweep_columns = report["sweep_columns"]
        if sweep_columns != len(axes):
            failures.append(f"sweep_columns {sweep_columns}, expected {len(axes)}")
            continue
        units = [col["unit"] for col in report["columns"][sweep_columns:]]
        grid = [[]]
        for _, _, values in reversed(axes):  # outer axis first
            grid = [g + [v] for g in grid for v in values]
        grid = [list(reversed(g)) for g in grid]  # back to axis 0 first
        if len(report["rows"]) != len(grid):
            failures.append(f"{len(report['rows'])} rows, expected {len(grid)}")
            continue
        system = System(circuit)
        x = None
        previous_outer = None
        spans = [max(abs(v) for v in values) for _, _, values in axes]
        for row, point in zip(report["rows"], grid):
            for k, value in enumerate(point):
                # sweep values: 1e-12 of the largest value of the axis (a value computed
                # as start + k * step need not be exactly zero where the range crosses it)
                if abs(row[k] - value) > 1e-12 * spans[k]:
                    failures.append(f"sweep value {row[k]} where {value} was expected")
                circuit.set(axes[k][0], value)
            if point[1:] != previous_outer:  # a new outer value: start cold
                x = None
                previous_outer = point[1:]
            x = system.solve(x)
            reference = system.quantities(x, names)
            for name, unit, got, want in zip(names, units, row[sweep_columns:], reference):
                bound = REL_TOL * abs(want) + FLOOR[unit]
                error = abs(got - want)
                if error / bound > worst[0]:
                    where = ", ".join(f"{a[0]}={v:g}" for a, v in zip(axes, point)) or "bias"
                    worst = (error / bound, f"{name} at {where}")
                compared += 1
                if not error <= bound:
                    where = ", ".join(f"{a[0]}={v:g}" for a, v in zip(axes, point)) or "bias"
                    failures.append(f"{where}: {name} knee {got!r} reference {want!r} "
                                    f"(error {error:.3g} > bound {bound:.3g})")
            count += 1
        # put the circuit back for the next run
        circuit, _ = make()
    return count, compared, failures, worst


def main():
    if len(sys.argv) != 3:
        print(__doc__)
        return 2
    knee, source_dir = sys.argv[1], sys.argv[2]
    total_failures = 0
    total_points = 0
    total_values = 0
    for make in CIRCUITS:
        try:
            count, compared, failures, worst = check(knee, source_dir, make)
        except (RuntimeError, TypeError, json.JSONDecodeError, OSError) as error:
            print(f"FAIL {make.__name__}: {error}")
            total_failures += 1
            continue
        total_points += count
        total_values += compared
        status = "ok  " if not failures else "FAIL"
        print(f"{status} {make.__name__:17s} {count:4d} points, {compared:5d} values, "
              f"largest error {worst[0]:.2e} of the bound ({worst[1]})")
        for failure in failures[:10]:
            print("     " + failure)
        total_failures += len(failures)
    print(f"{len(CIRCUITS)} circuits, {total_points} points, {total_values} values compared")
    print("scipy cross-check:", "PASSED" if total_failures == 0 else
          f"FAILED ({total_failures} disagreements)")
    return 0 if total_failures == 0 else 1


if __name__ == "__main__":
    sys.exit(main())
