"""``python -m benchmarks`` (``make bench``): the verdicts of its table, and a benchmark module
that raises. (A broken module once ended the whole run in a traceback: bench_graph read its legs
as dicts after they became objects.)"""

import types

import pytest

import benchmarks.__main__ as bench


@pytest.mark.parametrize("sec, base, target, verdict", [
    (1.0, 60.0, ">= 50x", "MET"),
    (1.0, 40.0, ">= 50x", "NOT MET"),
    (1.0, 0.9, "no slower than the baseline", "NOT MET"),
    (1.0, 1.0, "no slower than the baseline", "MET"),
    (0.4, None, "< 0.5 s", "MET"),
    (0.6, None, "< 0.5 s", "NOT MET"),
    (None, None, "skipped: no heyoka", "skipped"),
    (None, None, bench.FAILED, "FAILED"),
    (1.0, 2.0, "information", "-"),
])
def test_verdicts(sec, base, target, verdict):
    assert bench.judge(sec, base, target)[1] == verdict


def test_a_raising_module_is_a_failed_row_and_the_exit_code(monkeypatch, capsys):
    good = types.SimpleNamespace(run=lambda: [("fast thing", 0.1, "slow thing", 1.0, ">= 5x")])

    def broken():
        raise TypeError("'Leg' object is not subscriptable")
    bad = types.SimpleNamespace(run=broken)
    mods = {"benchmarks.bench_a": bad, "benchmarks.bench_b": good}
    monkeypatch.setattr(bench.pkgutil, "iter_modules",
                        lambda paths: [types.SimpleNamespace(name="bench_a"), types.SimpleNamespace(name="bench_b")])
    monkeypatch.setattr(bench.importlib, "import_module", lambda name: mods[name])
    assert bench.main([]) == 1
    out, err = capsys.readouterr()
    assert "bench_a FAILED: TypeError" in err
    lines = out.splitlines()
    (row_a,) = [ln for ln in lines if ln.startswith("bench_a:")]
    (row_b,) = [ln for ln in lines if ln.startswith("fast thing")]
    assert "FAILED" in row_a and "MET" in row_b and "NOT MET" not in row_b
    monkeypatch.setitem(mods, "benchmarks.bench_a", good)
    assert bench.main([]) == 0
