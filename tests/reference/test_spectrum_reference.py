"""The checked-in Welch reference tables reproduce from make_welch_table.py with this SciPy."""
import csv
import math
import os
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))


def read(path):
    with open(path, newline="") as fh:
        return list(csv.reader(fh))


def same_cell(a, b):
    if a == b:
        return True
    try:
        x, y = float(a), float(b)
    except ValueError:
        return False
    # Different SciPy/NumPy builds may round the last digits of an FFT differently.
    return math.isclose(x, y, rel_tol=1e-10, abs_tol=1e-300)


def test_welch_tables_reproduce(tmp_path):
    subprocess.run([sys.executable, os.path.join(HERE, "make_welch_table.py"), str(tmp_path)], check=True)
    for name in ["welch_signal.csv", "welch_table.csv"]:
        fresh = read(tmp_path / name)
        stored = read(os.path.join(HERE, name))
        assert len(fresh) == len(stored), name
        for i, (r1, r2) in enumerate(zip(fresh, stored)):
            assert len(r1) == len(r2), (name, i)
            for a, b in zip(r1, r2):
                assert same_cell(a, b), (name, i, a, b)
