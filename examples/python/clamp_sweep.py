#!/usr/bin/python3
"""The worked example of docs/python.md: the input clamp's field line swept past both
rails, the pin voltage and the clamp currents plotted with matplotlib.

    PYTHONPATH=build/python /usr/bin/python3 examples/python/clamp_sweep.py [OUT.svg]
"""

import os
import sys

import matplotlib

matplotlib.use("Agg")  # files only, no window
import matplotlib.pyplot as plt
import numpy as np

import knee

root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(root, "docs", "python-clamp-sweep.svg")

clamp = knee.load(os.path.join(root, "netlists", "input-clamp.knee"))
field = np.linspace(-24, 24, 193)
curves = {}
for r_limit in (1e3, 2.2e3, 4.7e3):
    clamp.set("Rlimit", r_limit)
    curves[r_limit] = clamp.sweep({"Vfield": field}, show=["pin.v", "Dhi.i", "Dlo.i"])

worst = max(curves[1e3]["Dhi.i"].max(), curves[1e3]["Dlo.i"].max())
print(f"largest clamp current with Rlimit = 1 kOhm: {worst * 1e3:.2f} mA")

plt.rcParams["svg.hashsalt"] = "knee"  # the same file for the same numbers
fig, (top, bottom) = plt.subplots(2, 1, sharex=True, figsize=(7, 6))
for r_limit, s in curves.items():
    label = f"Rlimit = {r_limit / 1e3:g} kΩ"
    top.plot(s["Vfield"], s["pin.v"], label=label)
    bottom.plot(s["Vfield"], (s["Dhi.i"] + s["Dlo.i"]) * 1e3, label=label)
top.axhline(3.3, color="grey", linewidth=0.8, linestyle="--")
top.axhline(0.0, color="grey", linewidth=0.8, linestyle="--")
top.set_ylabel("pin voltage [V]")
top.set_title("logic pin clamp: pin voltage and clamp current")
top.legend()
bottom.set_ylabel("Dhi.i + Dlo.i [mA]")
bottom.set_xlabel("field line Vfield [V]")
for axes in (top, bottom):
    axes.grid(True, linewidth=0.4)
fig.tight_layout()
fig.savefig(out, metadata={"Date": None})
print(f"wrote {out}")
