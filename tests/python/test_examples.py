"""Smoke tests of the runnable examples in notebooks-free-examples/ (each with --quick)."""
import os
import subprocess
import sys

import pytest

import qamsight as qs

SRC = os.environ.get("QAMSIGHT_SOURCE_DIR") or os.path.normpath(os.path.join(os.path.dirname(__file__), "..", ".."))
EXAMPLES = os.path.join(SRC, "notebooks-free-examples")


def run(script, *args, tmp_path=None):
    env = dict(os.environ)
    # The package the tests import is the one the examples must use.
    pkg_dir = os.path.dirname(os.path.dirname(qs.__file__))
    env["PYTHONPATH"] = os.pathsep.join(p for p in (pkg_dir, env.get("PYTHONPATH", "")) if p)
    env["MPLBACKEND"] = "Agg"
    proc = subprocess.run([sys.executable, os.path.join(EXAMPLES, script), "--quick", *map(str, args)],
                          capture_output=True, text=True, timeout=300, env=env, cwd=tmp_path)
    assert proc.returncode == 0, f"{script} exited {proc.returncode}\n{proc.stdout}\n{proc.stderr}"
    return proc.stdout


def test_choose_modcod(tmp_path):
    out = run("choose_modcod.py", tmp_path=tmp_path)
    assert "Halcyra" in out and "pass table" in out
    assert "fixed MODCOD for the pass: " in out and "Gbit per pass" in out
    assert "adaptive mean throughput over the pass" in out
    # An overhead pass of an 870 km circular orbit above 10 degrees (Earth rotation ignored):
    # central angle 90 - E - asin(R cos E / (R + h)) = 19.93 deg, period 2 pi sqrt(a^3 / mu) =
    # 6141 s (Kepler; WGS-84 R = 6378.137 km, mu = 398600.4418 km^3/s^2): 2 x 339.9 s = 680 s.
    assert "pass above 10 deg lasts 680 s" in out


def test_verify_lineup(tmp_path):
    out = run("verify_lineup.py", tmp_path=tmp_path)
    assert "Corvane-7" in out and "predicted verdict:" in out and "simulated verdict:" in out
    assert "dominant impairment:" in out
    assert "dominant impairment confirmed by simulation: yes" in out


def test_regress_equaliser(tmp_path, cli):
    out = run("regress_equaliser.py", "--json", tmp_path, tmp_path=tmp_path)
    assert "gate against theory: PASS" in out and "gate against the built-in receiver: PASS" in out
    assert "broken demapper (15 % scale error): theory gate FAIL" in out and "baseline gate FAIL" in out
    assert "regression: OK" in out
    # The CLI's gate reads the stage's results: `qamsight check` passes it and flags the broken one.
    cli.run("check", tmp_path / "stage.json", "--baseline", tmp_path / "baseline.json", check=0)
    bad = cli.run("check", tmp_path / "broken.json", "--baseline", tmp_path / "baseline.json", check=None)
    assert bad.returncode != 0


def test_waterfall_plots(tmp_path):
    out = run("waterfall_plots.py", "--out", tmp_path, tmp_path=tmp_path)
    for name in ("waterfall.png", "ratio.png", "constellation.png"):
        path = tmp_path / name
        assert f"wrote {path}" in out
        assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
