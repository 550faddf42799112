"""The GIL is released while the engine solves, a sweep runs on several threads, and
results live on their own: they outlive their Circuit and are not changed by it."""

import gc
import os
import sys
import threading
import time

import numpy as np
import pytest

import knee
from conftest import netlist

BRIDGE_AXIS = {"Vin": "-20..20:0.0005"}  # 80,001 points: long enough to watch


def threads_now():
    return len(os.listdir("/proc/self/task"))


def test_sweep_runs_on_several_threads_without_the_gil():
    c = knee.load(netlist("bridge-rectifier.knee"))
    base = threads_now()
    seen = []
    stop = threading.Event()

    def watch():  # runs only while the sweep has let go of the GIL
        while not stop.is_set():
            seen.append(threads_now())
            time.sleep(0.002)

    watcher = threading.Thread(target=watch)
    watcher.start()
    started = len(seen)
    try:
        s = c.sweep(BRIDGE_AXIS, jobs=2)
    finally:
        stop.set()
        watcher.join()
    assert s.points == 80001 and s.failed == 0
    # The watcher ran during the sweep (the GIL was free) and saw the main thread, itself
    # and at least two workers of the sweep.
    assert len(seen) - started >= 3
    assert max(seen) >= base + 1 + 2
    # Threads change nothing in the numbers.
    one = c.sweep(BRIDGE_AXIS, jobs=1)
    for name in s.columns:
        assert np.array_equal(s[name], one[name])


def test_two_python_threads_sweep_at_once():
    c = knee.load(netlist("input-clamp.knee"))
    reference = c.sweep({"Vfield": "-24..24:0.01"}, jobs=1)["pin.v"]
    results = [None, None]

    def run(k):
        results[k] = c.sweep({"Vfield": "-24..24:0.01"}, jobs=1)["pin.v"]

    workers = [threading.Thread(target=run, args=(k,)) for k in range(2)]
    for w in workers:
        w.start()
    for w in workers:
        w.join()
    for r in results:
        assert np.array_equal(r, reference)


def test_results_outlive_their_circuit():
    c = knee.load(netlist("input-clamp.knee"))
    b = c.bias()
    s = c.sweep({"Vfield": [-24.0, 0.0, 24.0]}, show="pin.v,Dhi.i")
    pin = s["pin.v"]
    expected_pin = pin.copy()
    expected_bias = b["pin.v"]
    del c
    gc.collect()
    assert b["pin.v"] == expected_bias
    # Quantities not asked for are still evaluated on the kept solution and design.
    assert b["(pin.v - rail.v)"] == b["pin.v"] - b["rail.v"]
    del s
    gc.collect()
    assert np.array_equal(pin, expected_pin)


def test_reference_counts():
    c = knee.load(netlist("input-clamp.knee"))
    s = c.sweep({"Vfield": [-24.0, 0.0, 24.0]})
    a = s["pin.v"]
    assert s["pin.v"] is a  # one array per column, not a copy per access
    held = sys.getrefcount(a)  # a, the Sweep's own reference, getrefcount's argument
    assert held == 3
    del s
    gc.collect()
    assert sys.getrefcount(a) == held - 1
    ok = c.sweep({"Vfield": [1.0]}).ok  # the Sweep is gone at once; its array stays valid
    assert sys.getrefcount(ok) == 2 and ok.tolist() == [True]


def test_results_are_read_only_and_unchanged_by_set():
    c = knee.load(netlist("input-clamp.knee"))
    b = c.bias()
    s = c.sweep({"Vfield": [5.0]})
    with pytest.raises(ValueError):
        s["pin.v"][0] = 0.0
    before = (b["pin.v"], s["pin.v"][0])
    c.set("Rlimit", 1e3)
    assert (b["pin.v"], s["pin.v"][0]) == before
    assert c.bias()["pin.v"] != before[0]


def test_columns_units_pandas():
    c = knee.load(netlist("input-clamp.knee"))
    s = c.sweep({"Vfield": np.linspace(-24, 24, 193)}, show=["pin.v", "Dhi.i"], jobs=2)
    assert len(s) == 193 and s.columns == ["Vfield", "pin.v", "Dhi.i"]
    assert s.axes == ["Vfield"] and s.quantities == ["pin.v", "Dhi.i"]
    assert s.units == {"Vfield": "V", "pin.v": "V", "Dhi.i": "A"}
    assert s["Vfield"].dtype == np.float64
    assert np.array_equal(s["Vfield"], np.linspace(-24, 24, 193))
    assert s.unique and s.residual <= 1e-9 and set(s.solver) <= {"potential", "classic"}
    pd = pytest.importorskip("pandas")
    frame = s.to_pandas()
    assert isinstance(frame, pd.DataFrame) and list(frame.columns) == s.columns
    assert np.array_equal(frame["Dhi.i"].to_numpy(), s["Dhi.i"])
