"""Errors: knee.NetlistError carries file, line, column and message for every input knee
rejects; a bias point without a solution raises knee.SolveError; bad arguments raise the
usual Python exceptions. The line:column of each case is counted by hand in its text and
also checked against the command line's own message for the same file."""

import re
import subprocess

import pytest

import knee
from conftest import KNEE_BINARY

GOOD = ("part small diode sat_current=1n\n"
        "vsource V1 a -> gnd 5\n"
        "resistor R1 a -> b 1k\n"
        "diode D1 b -> gnd small\n")


def cli_place(path):
    """(line, column) of the first error the command line prints for `path`."""
    err = subprocess.run([KNEE_BINARY, "bias", str(path)], capture_output=True,
                         text=True).stderr
    m = re.search(re.escape(str(path)) + r":(\d+):(\d+): error:", err)
    assert m, err
    return int(m.group(1)), int(m.group(2))


@pytest.mark.parametrize("text,line,column,words", [
    # an unknown part name: line 4, the name starts at column 22 (counted by hand)
    (GOOD.replace("gnd small\n", "gnd    nosuch\n"), 4, 22, "nosuch"),
    # a malformed number on line 3: the number starts at column 20, the bad suffix 'q'
    # the caret points at is column 21
    (GOOD.replace("1k\n", "1q2\n"), 3, 21, "1q2"),
    # an unknown statement keyword on line 1, column 1
    ("resistr R1 a -> gnd 1k\n" + GOOD, 1, 1, "resistr"),
])
def test_netlist_error_place(tmp_path, text, line, column, words):
    path = tmp_path / "bad.knee"
    path.write_text(text)
    with pytest.raises(knee.NetlistError) as caught:
        knee.load(path)
    e = caught.value
    assert (e.file, e.line, e.column) == (str(path), line, column)
    assert (e.line, e.column) == cli_place(path)
    assert words in e.message or words in str(e)
    assert e.diagnostics[0] == (str(path), line, column, e.message, e.hint)
    # The message quotes the offending line, as the command line does.
    assert f"{path}:{line}:{column}: error:" in str(e)
    assert isinstance(e, ValueError)

    with pytest.raises(knee.NetlistError) as again:
        knee.parse(text, name="inline.knee")
    assert (again.value.file, again.value.line, again.value.column) == ("inline.knee", line,
                                                                        column)


def test_several_errors_all_listed():
    text = "resistor R1 a -> gnd 1q\nresistor R2 a -> gnd 2q\nvsource V a -> gnd 1\n"
    with pytest.raises(knee.NetlistError) as caught:
        knee.parse(text)
    assert [d[1] for d in caught.value.diagnostics] == [1, 2]


def test_good_input_raises_nothing():
    c = knee.parse(GOOD, name="good.knee")
    assert c.file == "good.knee" and c.nodes == ["gnd", "a", "b"] and c.parts == ["small"]
    assert c.bias()["b.v"] > 0.3


def test_topology_error():
    with pytest.raises(knee.NetlistError) as caught:
        knee.parse("resistor R1 a -> b 1k\nvsource V1 c -> gnd 1\n", name="float.knee")
    assert caught.value.file == "float.knee"
    assert "gnd" in str(caught.value)


def test_set_errors_leave_circuit_as_it_was(clamp):
    before = clamp.bias()["pin.v"]
    with pytest.raises(knee.NetlistError) as caught:
        clamp.set("Rlimitt", 1e3)
    assert caught.value.line is None  # an override has no place in the file
    assert "Rlimit" in caught.value.hint  # the near name is suggested
    with pytest.raises(knee.NetlistError):
        clamp.set("Rlimit", "4q7")
    with pytest.raises(TypeError):
        clamp.set("Rlimit", [1])
    assert clamp.overrides == []
    assert clamp.bias()["pin.v"] == before
    clamp.set("Rlimit", 4.7e3)
    assert clamp.overrides == [("Rlimit", "4700")]
    assert clamp.bias()["pin.v"] != before


def test_unknown_quantity_and_target(clamp):
    with pytest.raises(knee.NetlistError) as caught:
        clamp.bias(show=["pin.v", "pni.v"])
    assert caught.value.file == "show" and "pni" in str(caught.value)
    with pytest.raises(knee.NetlistError):
        clamp.bias()["nosuch.i"]
    with pytest.raises(knee.NetlistError) as caught:
        clamp.sweep({"Vfeild": [1, 2]})
    assert caught.value.file == "sweep" and "Vfield" in caught.value.hint
    with pytest.raises(knee.NetlistError):
        clamp.sweep({"Vfield": "1..x"})
    with pytest.raises(ValueError):
        clamp.sweep({"Vfield": []})
    with pytest.raises(TypeError):
        clamp.sweep([("Vfield", [1])])
    with pytest.raises(KeyError):
        clamp.sweep({"Vfield": [1.0]})["pin.i"]


def test_solver_options(clamp):
    assert clamp.bias(method="classic").solver == "classic"
    assert clamp.bias(method="potential").solver == "potential"
    assert clamp.bias(aids="none", max_steps=50)["pin.v"] == clamp.bias()["pin.v"]
    with pytest.raises(TypeError):
        clamp.bias(methd="classic")
    with pytest.raises(ValueError):
        clamp.bias(method="fast")
    with pytest.raises(ValueError):
        clamp.bias(rel_tol=0.5)  # outside (0, 1e-2]
    with pytest.raises(ValueError):
        clamp.bias(aids="gmin,magic")
    with pytest.raises(ValueError):
        clamp.sweep(jobs=-1)


def test_unreadable_file(tmp_path):
    with pytest.raises(OSError):
        knee.load(tmp_path / "missing.knee")
    with pytest.raises(OSError):
        knee.load(tmp_path)  # a folder


def test_bias_without_solution_raises_solve_error():
    c = knee.parse("part leak diode sat_current=1p\n"
                   "isource Ipush gnd -> a 1m\n"
                   "diode Dblock gnd -> a leak\n", name="push.knee")
    with pytest.raises(knee.SolveError) as caught:
        c.bias()
    assert caught.value.status == "no solution"
    # The message is the detail, without a lead that repeats "no solution".
    assert caught.value.detail and str(caught.value) in caught.value.detail
    assert isinstance(caught.value, RuntimeError)
    c.set("Ipush", -1e-3)  # pulled out instead: Dblock conducts, a solution exists
    assert c.bias()["a.v"] < -0.3


def test_hand_settings(clamp):
    h = clamp.hand()
    assert h.models == ["exact", "ideal", "drop", "pwl"]
    assert h.answered("drop") and h.states("drop") == {"Dhi": "on", "Dlo": "off"}
    assert h.search("drop")["status"] in ("unique", "found", "equivalent")
    assert h["drop"]["pin.v"] == h.value("drop", "pin.v")
    assert h.exact_failure == ""
    with pytest.raises(ValueError):
        clamp.hand(on_res=1.0, fit_at=1e-3)  # two piecewise-linear models at once
    with pytest.raises(ValueError):
        clamp.hand(drop=-0.1)
    with pytest.raises(ValueError):
        clamp.hand(fit_at=0.0)
    with pytest.raises(KeyError):
        h["exactly"]
    with pytest.raises(KeyError):
        h.search("exact")
