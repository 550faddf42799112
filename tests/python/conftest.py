"""Shared pieces of the Python module's tests. ctest runs them with PYTHONPATH set to the
build's python/ folder and KNEE_BINARY / KNEE_SOURCE_DIR naming the command line and the
sources (tests/python/CMakeLists.txt)."""

import csv
import io
import math
import os
import subprocess

import pytest

SOURCE_DIR = os.environ.get(
    "KNEE_SOURCE_DIR", os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))))
KNEE_BINARY = os.environ.get("KNEE_BINARY", os.path.join(SOURCE_DIR, "build", "cli", "knee"))
NETLISTS = os.path.join(SOURCE_DIR, "netlists")
DEMOS = sorted(f for f in os.listdir(NETLISTS) if f.endswith(".knee"))


def netlist(name):
    return os.path.join(NETLISTS, name)


def run_cli(*args, check_status=(0,)):
    """Runs the knee command line; returns its standard output."""
    proc = subprocess.run([KNEE_BINARY, *args], capture_output=True, text=True)
    assert proc.returncode in check_status, proc.stderr
    return proc.stdout


def read_csv(text):
    """The CLI's CSV as {column name without unit: list of floats}, in column order.
    float() reads the CLI's shortest round-trip text back to exactly the double."""
    rows = list(csv.reader(io.StringIO(text)))
    names = [h.rsplit(" [", 1)[0] if h.endswith("]") else h for h in rows[0]]
    columns = {n: [] for n in names}
    for row in rows[1:]:
        for n, cell in zip(names, row):
            columns[n].append(float(cell))
    return columns


def same_bits(a, b):
    """Equal as doubles, bit for bit (NaN equal to NaN, 0.0 apart from -0.0)."""
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    return a == b and math.copysign(1.0, a) == math.copysign(1.0, b)


@pytest.fixture
def clamp():
    import knee
    return knee.load(netlist("input-clamp.knee"))
