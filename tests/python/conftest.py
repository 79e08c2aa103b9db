"""Fixtures for the tests of the Python module: the package, and the CLI to compare with."""
import json
import os
import subprocess

import pytest

try:
    import qamsight
except ImportError as exc:  # pragma: no cover - a set-up problem, reported once
    raise pytest.UsageError(
        f"cannot import qamsight ({exc}); run with PYTHONPATH=<build>/bindings/python "
        "after building with -DQAMSIGHT_PYTHON=ON") from exc


def cli_path():
    path = os.environ.get("QAMSIGHT_CLI")
    if not path:
        # The package lives in <build>/bindings/python/qamsight; the program in <build>.
        build = os.environ.get("QAMSIGHT_BUILD_DIR") or os.path.normpath(
            os.path.join(os.path.dirname(qamsight.__file__), "..", "..", ".."))
        path = os.path.join(build, "qamsight")
    if not os.path.exists(path):
        pytest.fail(f"qamsight program not found at {path}; set QAMSIGHT_CLI or build qamsight_cli")
    return path


class Cli:
    """Runs the qamsight program and reads the JSON it writes."""

    def __init__(self, path, tmp):
        self.path = path
        self.tmp = tmp

    def run(self, *args, check=0):
        proc = subprocess.run([self.path, *map(str, args)], capture_output=True, text=True, timeout=600,
                              cwd=self.tmp)
        if check is not None:
            assert proc.returncode == check, f"exit {proc.returncode}\n{proc.stdout}\n{proc.stderr}"
        return proc

    def sweep_json(self, *args, name="cli.json"):
        out = os.path.join(self.tmp, name)
        self.run("sweep", *args, "--json", out, "--quiet")
        with open(out) as fh:
            return json.load(fh), out


@pytest.fixture
def cli(tmp_path):
    return Cli(cli_path(), str(tmp_path))


# The integer fields of a JSON point that must agree exactly between two runs of one seed.
COUNT_KEYS = ("modulation", "eb_n0_db", "es_n0_db", "bits", "bit_errors", "symbols", "symbol_errors", "frames",
              "frame_errors", "stop_reason")


def counts_of(points):
    """The count fields of JSON points (dicts) or PointResult objects, for equality checks."""
    out = []
    for p in points:
        get = p.get if isinstance(p, dict) else lambda k, p=p: getattr(p, k)
        out.append(tuple(get(k) for k in COUNT_KEYS))
    return out
