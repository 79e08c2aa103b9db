"""Checks of the checked-in fec reference table: it must be what make_fec_table.py writes and
agree with REFERENCES.md section 6 (distance spectrum and union-bound crossings of the K = 7
(171, 133) code).

Run with /usr/bin/python3 -m pytest (needs SciPy).
"""
import csv
import os
import subprocess
import sys

from scipy import optimize

SOURCE_DIR = os.environ.get("QAMSIGHT_SOURCE_DIR") or os.path.dirname(
    os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
REFERENCE_DIR = os.path.join(SOURCE_DIR, "tests", "reference")
TABLE = os.path.join(REFERENCE_DIR, "fec_table.csv")
GENERATOR = os.path.join(REFERENCE_DIR, "make_fec_table.py")
sys.path.insert(0, REFERENCE_DIR)
import make_fec_table  # noqa: E402

# REFERENCES.md section 6 table [COMPUTED there; matches published values, from memory].
REFERENCE_SPECTRUM = {10: (11, 36), 12: (38, 211), 14: (193, 1404), 16: (1331, 11633),
                      18: (7275, 77433), 20: (40406, 502690), 22: (234969, 3322763)}


def read_rows(path):
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    assert rows[0] == ["kind", "a", "b", "value"]
    return rows[1:]


def test_generator_reproduces_checked_in_table(tmp_path):
    out = tmp_path / "fec_table.csv"
    subprocess.run([sys.executable, GENERATOR, str(out)], check=True, timeout=600)
    assert read_rows(out) == read_rows(TABLE)


def test_spectrum_matches_references_section_6():
    spectrum = {int(a): (int(b), int(v)) for kind, a, b, v in read_rows(TABLE) if kind == "spectrum"}
    for d, ab in REFERENCE_SPECTRUM.items():
        assert spectrum[d] == ab, d
    assert min(spectrum) == 10  # d_free = 10
    assert all(d % 2 == 0 for d in spectrum)


def test_union_bound_crossings_match_references_section_6():
    # REFERENCES.md section 6: the bound truncated at d <= 30 reaches 1e-5 at 4.17 dB and 1e-6
    # at 4.79 dB (two decimals given).
    _, b_d = make_fec_table.spectrum(30)
    for target, expected in [(1e-5, 4.17), (1e-6, 4.79)]:
        crossing = optimize.brentq(lambda x: make_fec_table.union_bound(x, b_d, 30) - target, 2.0, 8.0)
        assert abs(crossing - expected) <= 0.006, (target, crossing)


def test_punctured_free_distances():
    # Published free distances 6, 5, 4 for rates 2/3, 3/4, 5/6 (from memory: DVB-S EN 300 421
    # puncturing table; Yasuda, Kashiki, Hirata, IEEE Trans. Commun. 1984).
    dfree = {a: int(v) for kind, a, b, v in read_rows(TABLE) if kind == "punctured_dfree"}
    assert dfree == {"1/2": 10, "2/3": 6, "3/4": 5, "5/6": 4}
