"""Fixtures for end-to-end tests of the qamsight command-line program."""
import json
import os
import subprocess

import pytest


def cli_path():
    path = os.environ.get("QAMSIGHT_CLI")
    if not path:
        build = os.environ.get("QAMSIGHT_BUILD_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "build"))
        path = os.path.join(build, "qamsight")
    if not os.path.exists(path):
        pytest.fail(f"qamsight program not found at {path}; set QAMSIGHT_CLI or build first")
    return path


class Cli:
    def __init__(self, path, tmp):
        self.path = os.path.abspath(path)
        self.tmp = tmp

    def run(self, *args, check=None, timeout=600, cwd=None):
        proc = subprocess.run([self.path, *map(str, args)], capture_output=True, text=True, timeout=timeout,
                              cwd=cwd or self.tmp)
        if check is not None:
            assert proc.returncode == check, f"exit {proc.returncode}\nstdout:\n{proc.stdout}\nstderr:\n{proc.stderr}"
        return proc

    def sweep_json(self, *args, name="out.json"):
        out = os.path.join(self.tmp, name)
        self.run("sweep", *args, "--json", out, "--quiet", check=0)
        with open(out) as fh:
            return json.load(fh), out


@pytest.fixture
def cli(tmp_path):
    return Cli(cli_path(), str(tmp_path))
