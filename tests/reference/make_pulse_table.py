#!/usr/bin/env python3
"""Reference values for qamsight's raised-cosine pulses, by numerical inverse Fourier transform.

Writes pulse_table.csv beside this script (or to the path given as the first argument), rows
  kind, beta, tau, value
with kind
  rrc: g(tau) = integral of sqrt(X(f)) exp(2 pi i f tau) df
  rc:  p(tau) = integral of X(f) exp(2 pi i f tau) df
where X is the raised-cosine spectrum with unit passband and symbol period T = 1 (Proakis,
Digital Communications, eq. 9-2-26): X = 1 for |f| <= (1-beta)/2, (1 + cos(pi/beta (|f| -
(1-beta)/2)))/2 up to (1+beta)/2, 0 beyond. Neither closed form is used: the integrals are
evaluated with mpmath at 40 digits (the flat part analytically, the transition band by
Gauss-Legendre quadrature on sub-intervals short against the oscillation 1/tau), and each
value is recomputed with twice as many sub-intervals; the script stops if the two differ by
more than 1e-25. tau values are the doubles written to the file (repr round-trips), so the
special points 1/(4 beta) and 1/(2 beta) are the doubles a C++ program computes as
1.0 / (4.0 * beta) and 1.0 / (2.0 * beta).
"""
import csv
import os
import sys

import mpmath as mp

mp.mp.dps = 40


def transform(beta, tau, root, pieces):
    b = mp.mpf(beta)
    t = mp.mpf(tau)
    f1 = (1 - b) / 2
    f2 = (1 + b) / 2
    # Flat part: 2 * integral_0^f1 cos(2 pi f t) df.
    flat = 2 * f1 if t == 0 else mp.sin(2 * mp.pi * f1 * t) / (mp.pi * t)
    if root:
        shape = lambda f: mp.cos(mp.pi / (2 * b) * (f - f1))  # sqrt((1 + cos(2u)) / 2) = cos(u)
    else:
        shape = lambda f: (1 + mp.cos(mp.pi / b * (f - f1))) / 2
    edges = [f1 + (f2 - f1) * k / pieces for k in range(pieces + 1)]
    band = mp.quad(lambda f: 2 * shape(f) * mp.cos(2 * mp.pi * f * t), edges, method="gauss-legendre")
    return flat + band


def value(beta, tau, root):
    pieces = max(4, int(8 * abs(tau) * beta) + 4)
    a = transform(beta, tau, root, pieces)
    b = transform(beta, tau, root, 2 * pieces)
    if abs(a - b) > mp.mpf("1e-25"):
        raise SystemExit(f"quadrature did not settle at beta={beta} tau={tau}: {a} vs {b}")
    return b


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(os.path.abspath(__file__)),
                                                             "pulse_table.csv")
    rows = []
    for beta in [0.05, 0.2, 0.22, 0.25, 0.35, 0.5, 0.75, 1.0]:
        q = 1.0 / (4.0 * beta)  # RRC special point (double, as C++ computes it)
        h = 1.0 / (2.0 * beta)  # RC special point
        taus = [0.0, 0.1, 0.25, 0.5, 1.0, 1.3, 2.0, 3.7, 10.25, 40.5, q, h]
        for eps in [1e-9, 1e-6, 1e-3]:
            taus += [q - eps, q + eps, h - eps, h + eps]
        for tau in sorted(set(taus)):
            rows.append(["rrc", repr(beta), repr(tau), mp.nstr(value(beta, tau, True), 25)])
            rows.append(["rc", repr(beta), repr(tau), mp.nstr(value(beta, tau, False), 25)])
    with open(out, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["kind", "beta", "tau", "value"])
        w.writerows(rows)


if __name__ == "__main__":
    main()
