"""The module's numbers equal the command line's CSV bit for bit, on every demo netlist:
both call the same parser and engine functions, so any difference is a bug in one door."""

import csv
import io

import numpy as np
import pytest

import knee
from conftest import DEMOS, netlist, read_csv, run_cli, same_bits


def sweep_statement(path):
    """The netlist's first sweep statement as [(target, range text)]."""
    with open(path, encoding="utf-8") as f:
        for line in f:
            words = line.split("#", 1)[0].split()
            if words and words[0] == "sweep":
                return list(zip(words[1::2], words[2::2]))
    return None


def every_quantity(circuit):
    return [f"{n}.v" for n in circuit.nodes[1:]] + [f"{e}.i" for e in circuit.elements]


def assert_columns_equal(cli, names, column):
    for name in names:
        expected = cli[name]
        got = column(name)
        assert len(got) == len(expected), name
        bad = [k for k, (a, b) in enumerate(zip(got, expected)) if not same_bits(a, b)]
        assert not bad, f"{name}: first difference at point {bad[0]}: {got[bad[0]]!r} != " \
                        f"{expected[bad[0]]!r}"


@pytest.mark.parametrize("demo", DEMOS)
def test_bias_equals_cli(demo):
    c = knee.load(netlist(demo))
    for show in (None, every_quantity(c)):
        args = ["bias", netlist(demo), "--format", "csv", "--quiet"]
        if show:
            args += ["--show", ",".join(show)]
        cli = read_csv(run_cli(*args, check_status=(0, 3, 4)))
        b = c.bias(show=show)
        assert_columns_equal(cli, b.quantities, lambda q: [b[q]])


@pytest.mark.parametrize("demo", DEMOS)
def test_sweep_equals_cli(demo):
    path = netlist(demo)
    axes = sweep_statement(path)
    has_statement = axes is not None
    if not has_statement:  # a demo that asks for a bias point only: sweep its ambient
        axes = [("temp", "-40..125:5")]
    cli = read_csv(run_cli("sweep", path, *[f"{t}={r}" for t, r in axes], "--format", "csv",
                           "--quiet", check_status=(0, 3)))
    c = knee.load(path)
    from_text = c.sweep(dict(axes), jobs=2)
    # The grid values as numbers, read back from the CLI's own CSV.
    from_numbers = c.sweep({t: np.unique(np.array(cli[t])) for t, _ in axes}, jobs=1)
    sweeps = [from_text, from_numbers]
    if has_statement:
        sweeps.append(c.sweep())  # the netlist's own sweep statement
    for s in sweeps:
        assert s.columns == [t for t, _ in axes] + c.show
        assert s.failed == 0 and s.ok.all()
        assert_columns_equal(cli, s.columns, lambda q: s[q])


def test_param_sweep_and_set_equal_cli():
    path = netlist("input-clamp.knee")
    cli = read_csv(run_cli("sweep", path, "Rlimit=1k..10k:500", "Vfield=-24,0,24",
                           "--set", "Vrail=5", "--format", "csv", "--quiet"))
    c = knee.load(path)
    c.set("Vrail", 5)
    s = c.sweep({"Rlimit": "1k..10k:500", "Vfield": [-24, 0, 24]})
    assert_columns_equal(cli, s.columns, lambda q: s[q])

    c.set("Rlimit", "4k7")
    cli = read_csv(run_cli("bias", path, "--set", "Rlimit=4k7", "--set", "Vrail=5", "--format",
                           "csv", "--quiet"))
    b = c.bias()
    assert_columns_equal(cli, b.quantities, lambda q: [b[q]])


def test_failed_points_equal_cli(tmp_path):
    # A current source pushing into a reverse-biased diode without breakdown: no DC
    # solution once the current exceeds the saturation current (docs/solver.md).
    text = ("part leak diode sat_current=1p\n"
            "isource Ipush gnd -> a 1m\n"
            "diode   Dblock gnd -> a leak\n")
    path = tmp_path / "no-solution.knee"
    path.write_text(text)
    cli = read_csv(run_cli("sweep", str(path), "Ipush=-1m..1m:0.25m", "--format", "csv",
                           "--quiet", check_status=(1,)))
    s = knee.load(path).sweep({"Ipush": "-1m..1m:0.25m"})
    assert_columns_equal(cli, s.columns, lambda q: s[q])
    failed = [k for k, ok in enumerate(s.ok) if not ok]
    assert failed and [k for k, _ in s.failures] == failed
    assert s.failed == len(failed)
    assert all(np.isnan(s["a.v"][failed]))
    # Each reason says what the circuit does (a proven absence is its detail alone).
    assert all("Ipush" in why for _, why in s.failures)
    assert s.ok[0]  # pulling current out of node a forward-biases Dblock


@pytest.mark.parametrize("demo", DEMOS)
def test_hand_equals_cli(demo):
    path = netlist(demo)
    for settings, args in (({}, []), ({"drop": 0.6, "on_res": 2.0}, ["--drop", "0.6",
                                                                       "--on-res", "2"]),
                           ({"fit_at": 1e-3}, ["--fit-at", "1m"])):
        text = run_cli("hand", path, "--format", "csv", "--quiet", *args,
                       check_status=(0, 1, 3, 4))
        rows = list(csv.reader(io.StringIO(text)))
        header = [h.rsplit(" [", 1)[0] for h in rows[0]]
        h = knee.load(path).hand(**settings)
        assert h.models == [r[0] for r in rows[1:]]
        compared = 0
        for row in rows[1:]:
            model = row[0]
            for name, cell in zip(header[1:], row[1:]):
                if name.endswith(".state"):
                    assert h.states(model).get(name[:-len(".state")], "") == cell, (model, name)
                elif name.endswith((".v", ".i")) and not name.endswith(("_error",)):
                    expected = float(cell) if cell else float("nan")
                    assert same_bits(h.value(model, name), expected), (model, name)
                    compared += 1
        assert compared >= 4 * len(h.states("exact") or [None])


def test_isothermal_keyword_equals_cli():
    """isothermal=True is --isothermal; without it the heated demo's junctions are solved."""
    demo = netlist("bridge-module-heat.knee")
    c = knee.load(demo)
    show = ["D1.tj", "PKG.t", "D1.p", "out.v"]
    for extra, kwargs in (([], {}), (["--isothermal"], {"isothermal": True})):
        cli = read_csv(run_cli("bias", demo, "--format", "csv", "--quiet", "--show",
                               ",".join(show), *extra, check_status=(0, 3, 4)))
        b = c.bias(show=show, **kwargs)
        assert_columns_equal(cli, show, lambda q: [b[q]])
    assert c.bias(show=show, isothermal=True)["D1.tj"] == 25.0
    assert c.bias(show=show)["D1.tj"] > 50.0
