#!/usr/bin/env python3
"""Reference values for qamsight's theory module, computed independently with mpmath.

Writes theory_table.csv beside this script (or to the path given as the first argument),
columns  function, modulation, snr_kind, snr_db, value.  The `snr_db` column holds the
argument of the row; `snr_kind` says what it is:

  ber / ser, snr_kind eb_n0 or es_n0   error rate at that Eb/N0 or Es/N0 in dB
  required_eb_n0_db, target_ber        Eb/N0 (dB) where the BER curve reaches the target
  required_eb_n0_db_for_ser, target_ser  the same for the SER curve
  q_function, x / q_inverse, p         Gaussian tail and its inverse
  shannon_min_eb_n0_db, spectral_efficiency   minimum Eb/N0 (dB) at eta bit/s/Hz
  shannon_capacity, snr                log2(1 + SNR), SNR in dB

None of this uses qamsight's code, and where a second method exists it is not the one the
C++ uses:
  * square M-QAM BER: exact enumeration of per-rail sqrt(M)-PAM decision-region
    probabilities times the Hamming distance of binary-reflected Gray labels (the C++ uses
    the Cho & Yoon closed sum). The constellation energy is computed from the level
    positions, not from the 2(M-1)/3 formula.
  * square M-QAM SER: the Proakis closed form 2P - P^2, P = 2(1 - 1/sqrt M) Q(sqrt(3 Es/N0 /
    (M - 1))) (Digital Communications, 4th ed., sec. 5.2-9), cross-checked here against the
    same per-rail enumeration.
  * M-PSK SER and Gray BER: numerical integration of the phase pdf of Proakis (4th ed.,
    eqs. 5.2-56/57) over every decision sector, with Hamming distances averaged over all sent
    symbols (the C++ uses the Craig / Pawula wedge integrals). The SER is cross-checked against
    the Craig integral, and 4-PSK against square 4-QAM.
  * required Eb/N0: mpmath root finding on log(rate) of the curves above.
  * Shannon minimum Eb/N0: root of log2(1 + eta Eb/N0) = eta, cross-checked against the closed
    form (2^eta - 1) / eta; eta = 0 is the limit ln 2.
  * q_inverse: root of Q(x) = p with Q from mpmath's erfc.
Precision: 40 significant digits; values are written with 20. Rows below 1e-300 are skipped.
"""
import csv
import math
import os
import sys

import mpmath as mp

mp.mp.dps = 40

SMALLEST = mp.mpf("1e-300")


def db(x):
    return mp.mpf(10) ** (mp.mpf(x) / 10)


def q(x):
    return mp.erfc(x / mp.sqrt(2)) / 2


def gray(i):
    return i ^ (i >> 1)


def hamming(a, b):
    return bin(a ^ b).count("1")


# ---- square M-QAM by per-rail enumeration --------------------------------------------------

def _rail_bookkeeping(levels):
    """Integer weights of the per-rail error events, grouped by what their probability depends on.

    Sending level l and deciding level m != l happens with probability
        Q((2|m-l| - 1) d/sigma) - Q((2|m-l| + 1) d/sigma)   if m is an inner level,
        Q((2|m-l| - 1) d/sigma)                             if m is an edge level (0 or L-1),
    so the error sums only need, per offset n = |m - l|, the number of such (l, m) pairs and
    the sum of their Gray Hamming distances."""
    inner_bits = [0] * levels
    edge_bits = [0] * levels
    inner_count = [0] * levels
    edge_count = [0] * levels
    g = [gray(i) for i in range(levels)]
    for sent in range(levels):
        for decided in range(levels):
            if decided == sent:
                continue
            n = abs(decided - sent)
            d = hamming(g[sent], g[decided])
            if decided in (0, levels - 1):
                edge_bits[n] += d
                edge_count[n] += 1
            else:
                inner_bits[n] += d
                inner_count[n] += 1
    return inner_bits, edge_bits, inner_count, edge_count


_RAIL_CACHE = {}


def square_qam_rail(order, es_n0_db):
    """(bit error rate, per-rail symbol error rate) of square M-QAM at Es/N0 in dB."""
    levels = math.isqrt(order)
    assert levels * levels == order
    rail_bits = levels.bit_length() - 1
    if levels not in _RAIL_CACHE:
        _RAIL_CACHE[levels] = _rail_bookkeeping(levels)
    inner_bits, edge_bits, inner_count, edge_count = _RAIL_CACHE[levels]
    # Levels at odd multiples of d = 1; Es is the mean of I^2 + Q^2 over the grid.
    positions = [mp.mpf(2 * i - levels + 1) for i in range(levels)]
    es = 2 * mp.fsum(p * p for p in positions) / levels
    gamma = db(es_n0_db)
    sigma = mp.sqrt(es / (2 * gamma))  # per-dimension noise, N0 / 2 = Es / (2 Es/N0)
    tail = [q((2 * n - 1) / sigma) for n in range(levels)] + [q((2 * levels - 1) / sigma)]
    bit_errors = mp.mpf(0)
    symbol_errors = mp.mpf(0)
    for n in range(1, levels):
        inner_p = tail[n] - tail[n + 1]
        edge_p = tail[n]
        bit_errors += inner_bits[n] * inner_p + edge_bits[n] * edge_p
        symbol_errors += inner_count[n] * inner_p + edge_count[n] * edge_p
    return bit_errors / (levels * rail_bits), symbol_errors / levels


def ber_square_qam(order, eb_n0_db):
    bits = order.bit_length() - 1
    es_db = mp.mpf(eb_n0_db) + 10 * mp.log10(bits)
    return square_qam_rail(order, es_db)[0]


def ser_square_qam(order, es_n0_db):
    m = mp.mpf(order)
    p = 2 * (1 - 1 / mp.sqrt(m)) * q(mp.sqrt(3 * db(es_n0_db) / (m - 1)))
    closed = 2 * p - p * p
    rail = square_qam_rail(order, es_n0_db)[1]
    enumerated = 2 * rail - rail * rail
    assert abs(closed - enumerated) <= mp.mpf("1e-30") * closed, (order, es_n0_db)
    return closed


def ber_bpsk(eb_n0_db):
    return q(mp.sqrt(2 * db(eb_n0_db)))


# ---- M-PSK by integrating the phase pdf ----------------------------------------------------

def phase_pdf(theta, gamma):
    """pdf of the received phase for a symbol sent at phase 0, Es/N0 = gamma (Proakis)."""
    c = mp.cos(theta)
    not_tail = mp.erfc(-mp.sqrt(gamma) * c) / 2  # 1 - Q(sqrt(2 gamma) cos theta), no cancellation
    return (mp.exp(-gamma) + mp.sqrt(4 * mp.pi * gamma) * c * mp.exp(-gamma * mp.sin(theta) ** 2)
            * not_tail) / (2 * mp.pi)


_PSK_CACHE = {}


def psk_sectors(order, es_n0_db):
    """P(decision sector d | phase 0 sent) for d = 1..M-1 by integrating the pdf over it."""
    key = (order, mp.mpf(es_n0_db))
    if key in _PSK_CACHE:
        return _PSK_CACHE[key]
    gamma = db(es_n0_db)
    sectors = [None] * order
    for d in range(1, order // 2 + 1):
        a = (2 * d - 1) * mp.pi / order
        b = (2 * d + 1) * mp.pi / order
        # mp.quad stops on an absolute error of about 10^-dps, so the integrand is scaled by its
        # largest value in the sector (the pdf falls with |phase|, so that is at an end) first.
        # At high SNR the mass sits in a thin layer at that end, where tanh-sinh nodes cluster.
        scale = max(phase_pdf(a, gamma), phase_pdf(b, gamma))
        val, err = mp.quad(lambda t: phase_pdf(t, gamma) / scale, [a, (a + b) / 2, b], error=True)
        assert err <= mp.mpf("1e-25") * val, (order, es_n0_db, d, val, err)
        sectors[d] = val * scale
        sectors[order - d] = sectors[d]  # the pdf is even in the phase
    _PSK_CACHE[key] = sectors
    return sectors


def ser_psk(order, es_n0_db, cross_check=True):
    sectors = psk_sectors(order, es_n0_db)
    ser = mp.fsum(sectors[1:])
    if not cross_check:
        return ser
    # Cross-check with the Craig integral (a different method; only as a sanity check here).
    gamma = db(es_n0_db)
    s2 = mp.sin(mp.pi / order) ** 2
    craig = mp.quad(lambda t: mp.exp(-gamma * s2 * (1 / mp.sin(t) ** 2 - 1)),
                    [0, (order - 1) * mp.pi / (2 * order), mp.pi / 2, (order - 1) * mp.pi / order])
    craig *= mp.exp(-gamma * s2) / mp.pi  # scaled by the peak value, as in psk_sectors
    assert abs(craig - ser) <= mp.mpf("1e-20") * ser, (order, es_n0_db, ser, craig)
    return ser


def ber_psk_gray(order, es_n0_db):
    sectors = psk_sectors(order, es_n0_db)
    bits = order.bit_length() - 1
    total = mp.mpf(0)
    for sent in range(order):
        for decided in range(order):
            if decided != sent:
                total += sectors[(decided - sent) % order] * hamming(gray(sent), gray(decided))
    return total / (order * bits)


# ---- name dispatch, inverses ---------------------------------------------------------------

BITS = {"bpsk": 1, "qpsk": 2, "4qam": 2, "8psk": 3, "16qam": 4, "64qam": 6, "256qam": 8,
        "1024qam": 10}


def rate_for(kind, name, eb_n0_db, cross_check=True):
    """BER or SER of a named modulation at Eb/N0 in dB."""
    bits = BITS[name]
    es_db = mp.mpf(eb_n0_db) + 10 * mp.log10(bits)
    if name == "bpsk":
        return ber_bpsk(eb_n0_db)
    if name == "8psk":
        order = 8
        return ber_psk_gray(order, es_db) if kind == "ber" else ser_psk(order, es_db, cross_check)
    order = 4 if name in ("qpsk", "4qam") else int(name[:-3])
    return ber_square_qam(order, eb_n0_db) if kind == "ber" else ser_square_qam(order, es_db)


def solve_decreasing(f, lo, hi):
    """Root of a decreasing f with f(lo) > 0 > f(hi): bisection to a 0.5 bracket, then
    mpmath's Anderson-Bjorck solver to 30 digits."""
    assert f(lo) > 0 > f(hi), (lo, hi)
    while hi - lo > mp.mpf("0.5"):
        mid = (lo + hi) / 2
        if f(mid) > 0:
            lo = mid
        else:
            hi = mid
    return mp.findroot(f, (lo, hi), solver="anderson", tol=mp.mpf("1e-30"))


def required(kind, name, target):
    """Eb/N0 (dB) where the curve reaches `target`: bracket on a 4 dB grid, then solve."""
    target = mp.mpf(float(target))  # the double that the C++ sees
    f = lambda x: mp.log(rate_for(kind, name, x, cross_check=False)) - mp.log(target)
    lo, hi = mp.mpf(-30), mp.mpf(0)
    assert f(lo) > 0
    while f(hi) > 0:
        lo, hi = hi, hi + 4
    return solve_decreasing(f, lo, hi)


def q_inverse(p):
    p = mp.mpf(p)
    return solve_decreasing(lambda x: mp.log(q(x)) - mp.log(p), mp.mpf(-40), mp.mpf(40))


def shannon_min_eb_n0_db(eta):
    eta = mp.mpf(eta)
    if eta == 0:
        return 10 * mp.log10(mp.log(2))
    # Eb/N0 = x solves capacity(eta x) = eta, i.e. log2(1 + eta x) = eta.
    x = mp.exp(solve_decreasing(lambda u: eta - mp.log(1 + eta * mp.exp(u)) / mp.log(2),
                                mp.mpf(-10), mp.mpf(40)))
    closed = (mp.mpf(2) ** eta - 1) / eta
    assert abs(x - closed) <= mp.mpf("1e-28") * closed, (eta, x, closed)
    return 10 * mp.log10(x)


def shannon_capacity(snr_db):
    return mp.log(1 + db(snr_db)) / mp.log(2)


# ---- the table -----------------------------------------------------------------------------

def fmt(v):
    return mp.nstr(mp.mpf(v), 20, min_fixed=-5, max_fixed=6)


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "theory_table.csv")
    rows = []

    def add(function, modulation, kind, arg, value, probability=True):
        if probability and not value >= SMALLEST:
            return
        if not probability:
            value = mp.chop(value, tol=mp.mpf("1e-25"))  # dB values: no rounding noise around 0
        rows.append([function, modulation, kind, repr(float(arg)), fmt(value)])

    # Named curves against Eb/N0: the 0..20 dB grid, a few low-SNR points and deep tails.
    grid = [float(x) for x in range(0, 21, 2)]
    extra = {
        "bpsk": [-30.0, -10.0, 9.6, 24.0, 28.0],
        "qpsk": [-30.0, -10.0, 24.0, 26.0, 28.0],
        "16qam": [-30.0, -10.0, 24.0, 28.0, 32.0],
        "64qam": [-30.0, -10.0, 30.0, 34.0, 36.0],
        "256qam": [-30.0, -10.0, 30.0, 36.0, 40.0],
        "1024qam": [-30.0, -10.0, 30.0, 40.0, 44.0],
    }
    for name in ["bpsk", "qpsk", "16qam", "64qam", "256qam", "1024qam"]:
        for eb in grid + extra[name]:
            add("ber", name, "eb_n0", eb, rate_for("ber", name, eb))
            add("ser", name, "eb_n0", eb, rate_for("ser", name, eb))
    for eb in [4.0, 10.0]:
        add("ber", "4qam", "eb_n0", eb, rate_for("ber", "4qam", eb))
        add("ser", "4qam", "eb_n0", eb, rate_for("ser", "4qam", eb))
    for eb in [-30.0, 0.0, 4.0, 8.0, 10.0, 12.0, 16.0, 20.0]:
        add("ber", "8psk", "eb_n0", eb, rate_for("ber", "8psk", eb))
        add("ser", "8psk", "eb_n0", eb, rate_for("ser", "8psk", eb))

    # PSK against Es/N0: 8-PSK on 0..20 dB in 2.5 dB steps, plus other orders.
    for es in [0.0, 2.5, 5.0, 7.5, 10.0, 12.0, 12.5, 15.0, 17.5, 20.0, 25.0, 30.0, 36.0]:
        add("ber", "8psk", "es_n0", es, ber_psk_gray(8, es))
        add("ser", "8psk", "es_n0", es, ser_psk(8, es))
    for order, points in [(2, [0.0, 10.0]), (4, [0.0, 10.0, 20.0]), (16, [0.0, 10.0, 20.0, 30.0]),
                          (32, [10.0, 25.0])]:
        for es in points:
            add("ber", f"{order}psk", "es_n0", es, ber_psk_gray(order, es))
            add("ser", f"{order}psk", "es_n0", es, ser_psk(order, es))

    # Square QAM beyond the named ones (any 4^n up to 2^20), against Eb/N0 and Es/N0.
    for order, points in [(4096, [20.0, 30.0, 40.0]), (1048576, [30.0, 50.0, 60.0, 64.0])]:
        for eb in points:
            add("ber", f"{order}qam", "eb_n0", eb, ber_square_qam(order, eb))
    for order, points in [(16, [10.0, 20.0]), (1024, [30.0, 40.0])]:
        for es in points:
            add("ser", f"{order}qam", "es_n0", es, ser_square_qam(order, es))

    # Required Eb/N0.
    targets = ["1e-3", "1e-5", "1e-6"]
    deep = {"bpsk": ["1e-12", "1e-100", "1e-300"], "16qam": ["1e-12", "1e-300"],
            "8psk": ["1e-12"], "1024qam": ["1e-12"]}
    for name in ["bpsk", "qpsk", "16qam", "64qam", "256qam", "1024qam", "8psk"]:
        for t in targets + deep.get(name, []):
            add("required_eb_n0_db", name, "target_ber", float(t), required("ber", name, t), False)
            add("required_eb_n0_db_for_ser", name, "target_ser", float(t), required("ser", name, t),
                False)

    for x in [-3.0, -1.0, 0.0, 0.5, 1.0, 2.0, 3.0, 5.0, 8.0, 10.0, 20.0, 30.0, 37.0]:
        add("q_function", "-", "x", x, q(mp.mpf(x)))
    for p in [0.9, 0.5, 0.1, 1e-3, 1e-5, 1e-9, 1e-15, 1e-50, 1e-100, 1e-200, 1e-300]:
        add("q_inverse", "-", "p", p, q_inverse(p), False)
    for eta in [0.0, 1e-3, 0.5, 1.0, 2.0, 4.0, 6.0, 8.0, 10.0, 20.0]:
        add("shannon_min_eb_n0_db", "-", "spectral_efficiency", eta, shannon_min_eb_n0_db(eta),
            False)
    for snr in [-10.0, 0.0, 10.0 * math.log10(3.0), 10.0, 20.0, 30.0]:
        add("shannon_capacity", "-", "snr", snr, shannon_capacity(snr), False)

    with open(out, "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["function", "modulation", "snr_kind", "snr_db", "value"])
        w.writerows(rows)


if __name__ == "__main__":
    main()
