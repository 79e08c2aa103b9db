#!/usr/bin/env python3
"""Reference EVM values of square QAM in AWGN: data-aided and decision-directed (non-data-aided).

Writes evm_table.csv beside this script (or to the path given as the first argument), columns
  modulation, es_n0_db, da_evm_pct, dd_evm_pct, dd_rail_m2, dd_rail_m4

Model: r = s + n, s uniform over square M-QAM of unit average energy, n circular Gaussian with
total variance N0 = 1 / (Es/N0) (N0/2 per rail). No gain, phase or frequency fit.
  data-aided:         EVM^2 = E|r - s|^2 / P0 = N0            (P0 = 1, the constellation's
                                                                average power)
  decision-directed:  EVM^2 = E|r - d(r)|^2 / P0, d(r) the nearest constellation point.
Square M-QAM with Gray or any labelling is a product of two sqrt(M)-level PAM rails, levels
(2i - (L - 1)) a, i = 0..L-1, a = sqrt(3 / (2 (M - 1))), and the nearest-point decision is the
per-rail nearest level, so with e = x - dec(x) on one rail (x = level + noise)
  E|r - d(r)|^2 = 2 m2,   m2 = E[e^2],   m4 = E[e^4]
where each moment is the average over the levels of the integrals, over every decision interval
[b_j, b_{j+1}) (midpoints between levels), of (level + n - level_j)^k times the Gaussian density
of n. Each piece is one scipy.integrate.quad call (split at n = 0 where the interval contains it;
the Gaussian is cut 40 sigma out, beyond which it is below e^-800). m4 serves the statistical
tests: |e|^2 = e_I^2 + e_Q^2 with independent rails has variance 2 m4 + 2 m2^2 - (2 m2)^2
= 2 (m4 - m2^2).

This uses nothing of qamsight's code.
"""
import csv
import math
import os
import sys

from scipy import integrate

MODULATIONS = {"qpsk": 2, "16qam": 4, "64qam": 8, "256qam": 16, "1024qam": 32}
SNR_DB = [0.0, 5.0, 10.0, 15.0, 20.0, 25.0, 30.0]


def rail_moments(levels_per_rail, es_n0_db):
    m = levels_per_rail * levels_per_rail
    a = math.sqrt(3.0 / (2.0 * (m - 1)))
    levels = [(2 * i - (levels_per_rail - 1)) * a for i in range(levels_per_rail)]
    var = 0.5 * 10.0 ** (-es_n0_db / 10.0)
    sigma = math.sqrt(var)
    norm = 1.0 / math.sqrt(2.0 * math.pi * var)
    bounds = [-math.inf] + [0.5 * (levels[i] + levels[i + 1]) for i in range(levels_per_rail - 1)] + [math.inf]
    cut = 40.0 * sigma
    m2 = m4 = 0.0
    for x0 in levels:
        for j, c in enumerate(levels):
            lo = max(bounds[j] - x0, -cut)
            hi = min(bounds[j + 1] - x0, cut)
            if lo >= hi:
                continue
            pieces = [(lo, 0.0), (0.0, hi)] if lo < 0.0 < hi else [(lo, hi)]
            for k, acc in ((2, "m2"), (4, "m4")):
                total = 0.0
                for p, q in pieces:
                    val, _ = integrate.quad(lambda n: (x0 + n - c) ** k * norm * math.exp(-n * n / (2.0 * var)),
                                            p, q, epsabs=0.0, epsrel=1e-13, limit=400)
                    total += val
                if acc == "m2":
                    m2 += total / levels_per_rail
                else:
                    m4 += total / levels_per_rail
    return m2, m4


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(os.path.abspath(__file__)),
                                                            "evm_table.csv")
    rows = []
    for name, levels in MODULATIONS.items():
        for snr in SNR_DB:
            m2, m4 = rail_moments(levels, snr)
            da = 100.0 * 10.0 ** (-snr / 20.0)
            dd = 100.0 * math.sqrt(2.0 * m2)
            rows.append([name, f"{snr:g}", f"{da:.15g}", f"{dd:.15g}", f"{m2:.15g}", f"{m4:.15g}"])
    with open(out, "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["modulation", "es_n0_db", "da_evm_pct", "dd_evm_pct", "dd_rail_m2", "dd_rail_m4"])
        w.writerows(rows)


if __name__ == "__main__":
    main()
