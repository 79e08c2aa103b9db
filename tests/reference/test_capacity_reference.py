"""The checked-in capacity table reproduces from make_capacity_table.py, and agrees with
independent forms of the same quantities computed here with SciPy.

Run with /usr/bin/python3 -m pytest (needs SciPy). QAMSIGHT_SOURCE_DIR may point to the
repository root; by default it is found from this file's location.
"""
import csv
import math
import os
import subprocess
import sys

import pytest
from scipy import integrate, optimize

SOURCE_DIR = os.environ.get("QAMSIGHT_SOURCE_DIR") or os.path.dirname(
    os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
REFERENCE_DIR = os.path.join(SOURCE_DIR, "tests", "reference")
TABLE = os.path.join(REFERENCE_DIR, "capacity_table.csv")
GENERATOR = os.path.join(REFERENCE_DIR, "make_capacity_table.py")
HALF_DB = 10.0 * math.log10(2.0)


def read_table(path):
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    assert rows[0] == ["kind", "constellation", "es_n0_db", "value"]
    table = {}
    for kind, name, db, value in rows[1:]:
        key = (kind, name, float(db))
        assert key not in table, key
        table[key] = float(value)
    return table


@pytest.fixture(scope="module")
def table():
    return read_table(TABLE)


def test_generator_reproduces_checked_in_table(tmp_path, table):
    out = tmp_path / "capacity_table.csv"
    subprocess.run([sys.executable, GENERATOR, str(out)], check=True, timeout=1100)
    fresh = read_table(out)
    assert fresh.keys() == table.keys()
    for key, value in table.items():
        # quad results may differ in the last digits between SciPy builds.
        assert abs(fresh[key] - value) <= 1e-12, (key, fresh[key], value)


def bpsk_capacity_textbook(es_n0_db):
    """Binary-input AWGN capacity in the form C = 1 - E[log2(1 + exp(-2 y / sigma^2))], y ~ N(1,
    sigma^2), sigma^2 = N0/2 (the expectation of log2 of the posterior of the sent bit; e.g.
    W. E. Ryan & S. Lin, Channel Codes, 2009, for the binary-input AWGN channel, from memory
    for the section), with scipy.integrate.quad: a different integral from the table's entropies."""
    sigma2 = 0.5 * 10.0 ** (-es_n0_db / 10.0)
    s = math.sqrt(sigma2)

    def f(y):
        x = -2.0 * y / sigma2
        softplus = max(x, 0.0) + math.log1p(math.exp(-abs(x)))
        return math.exp(-(y - 1.0) ** 2 / (2.0 * sigma2)) / math.sqrt(2.0 * math.pi * sigma2) * softplus / math.log(2.0)

    parts = [integrate.quad(f, a, b, epsabs=1e-14, epsrel=1e-13, limit=400)[0]
             for a, b in [(1.0 - 14 * s, 0.0), (0.0, 1.0), (1.0, 1.0 + 14 * s)] if b > a]
    return 1.0 - math.fsum(parts)


def test_bpsk_rows_match_the_textbook_integral(table):
    n = 0
    for (kind, name, db), value in table.items():
        if name == "bpsk":
            assert abs(bpsk_capacity_textbook(db) - value) <= 1e-10, (kind, db)
            n += 1
    assert n >= 16


def test_qpsk_rows_are_twice_bpsk_three_db_lower(table):
    # The 2-D integrals of QPSK against the 1-D textbook form for BPSK at Es/N0 - 10 log10 2
    # (two independent BPSK axes, each with half the energy; CM = BICM for Gray QPSK).
    n = 0
    for (kind, name, db), value in table.items():
        if name == "qpsk":
            assert abs(value - 2.0 * bpsk_capacity_textbook(db - HALF_DB)) <= 1e-9, (kind, db)
            n += 1
    assert n >= 8


def test_16qam_rows_are_twice_gray_4pam(table):
    # The generator's plane integrals of 16-QAM against its own line integrals of Gray 4-PAM at
    # Es/N0 - 3.01 dB: the two methods of the script must agree where the per-axis identity holds.
    sys.path.insert(0, REFERENCE_DIR)
    import make_capacity_table as gen
    pts, labels, bits = gen.pam(4)
    n = 0
    for (kind, name, db), value in table.items():
        if name == "16qam" and db in (0.0, 12.0):
            cm, bicm = gen.capacities(pts, labels, bits, db - HALF_DB, True)
            assert abs(value - 2.0 * (cm if kind == "cm" else bicm)) <= 1e-9, (kind, db)
            n += 1
    assert n == 4


def test_rows_respect_the_information_bounds(table):
    # 0 < BICM <= CM <= min(log2 M, log2(1 + Es/N0)) (chain rule, alphabet size, Shannon 1948).
    bits = {"bpsk": 1, "pam4": 2, "pam8": 3, "pam32": 5, "qpsk": 2, "16qam": 4, "8psk": 3}
    real_axis = {"bpsk", "pam4", "pam8", "pam32"}
    for (kind, name, db), value in table.items():
        snr = 10.0 ** (db / 10.0)
        # Real-axis inputs use one real dimension at SNR 2 Es/N0: 0.5 log2(1 + 2 Es/N0).
        shannon = 0.5 * math.log2(1.0 + 2.0 * snr) if name in real_axis else math.log2(1.0 + snr)
        assert 0.0 < value <= bits[name] + 1e-12, (kind, name, db)
        assert value < shannon, (kind, name, db)
        if kind == "bicm":
            assert value <= table[("cm", name, db)] + 1e-12, (name, db)


def test_bpsk_rate_half_threshold():
    # Rate 1/2 binary-input AWGN limit: Eb/N0 = 0.187 dB (widely quoted value, from memory),
    # i.e. Es/N0 = 0.187 - 3.01 dB; here by brentq on the textbook integral.
    es = optimize.brentq(lambda db: bpsk_capacity_textbook(db) - 0.5, -6.0, 0.0, xtol=1e-12)
    assert abs(es + HALF_DB - 0.187) < 0.01
