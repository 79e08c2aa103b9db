#!/usr/bin/env python3
"""Reference AWGN capacities (coded modulation and BICM) by direct numerical integration with SciPy.

Writes capacity_table.csv beside this script (or to the path given as the first argument),
columns  kind, constellation, es_n0_db, value  with kind "cm" or "bicm" and value in bit/symbol.

Channel: y = x + n, x uniform over a constellation of unit average energy, n Gaussian with total
variance N0 = 1 / (Es/N0) for complex constellations (N0/2 per real dimension). Constellations on the
real axis (BPSK, PAM) use y = Re(x + n): the imaginary part of y carries noise only, independent of
x, so it adds nothing to any mutual information.

Definitions integrated (C. E. Shannon 1948; the BICM rate is the sum over the label bits of
the mutual information I(b_i; Y) of each equiprobable bit):
  cm   = h(Y) - h(Y|X),  h(Y) = -int p(y) log2 p(y) dy,  h(Y|X) = (D/2) log2(2 pi e sigma^2)
  bicm = sum_i int sum_b (1/2) p(y|b_i=b) log2( p(y|b_i=b) / p(y) ) dy
for D real dimensions and noise variance sigma^2 = N0/2 per dimension, p(y) and p(y|b) being
equal-weight Gaussian mixtures over all points and over the points with that bit value. Each
integral is taken with scipy.integrate.quad over the real line (nested quad over the plane for
complex constellations), split at the component means and truncated 12 sigma beyond the outermost
ones (the Gaussian tail there is below e^-72). Where the integrand is even in y_r or y_i (the point
set maps onto itself under the reflection and each bit subset onto itself or onto the other
value's subset), only the half-line is integrated and doubled.

Constellations and labels, built here from their textbook definitions:
  bpsk     points -1 (label 0), +1 (label 1)
  pamL     L-level PAM, level i (ascending) at 2i - (L - 1), labelled with the binary-reflected
           Gray code i ^ (i >> 1), scaled to unit energy
  qpsk, 16qam  square QAM, in-phase level ii and quadrature level iq (each ascending) labelled
           gray(ii) * sqrt(M) + gray(iq), i.e. the in-phase Gray bits are the high label bits
  8psk     label gray(i) at angle 2 pi i / 8
This uses nothing of qamsight's code and none of its method (the C++ uses Gauss-Hermite
quadrature of the noise expectation and a per-axis reduction for square QAM); the pam8 and pam32
rows are for checking 64- and 1024-QAM through that reduction, so they are listed at
Es/N0 - 10 log10 2 of the square-QAM grids.
"""
import csv
import math
import os
import sys

from scipy import integrate

LN2 = math.log(2.0)
EPS_INNER = 1e-12
EPS_OUTER = 1e-11


def gray(i):
    return i ^ (i >> 1)


def pam(levels):
    pts = [2.0 * i - (levels - 1) for i in range(levels)]
    scale = 1.0 / math.sqrt(sum(p * p for p in pts) / levels)
    return [complex(p * scale, 0.0) for p in pts], [gray(i) for i in range(levels)], levels.bit_length() - 1


def square_qam(order):
    levels = math.isqrt(order)
    half = levels.bit_length() - 1
    pts, labels = [], []
    for ii in range(levels):
        for iq in range(levels):
            pts.append(complex(2.0 * ii - (levels - 1), 2.0 * iq - (levels - 1)))
            labels.append((gray(ii) << half) | gray(iq))
    scale = 1.0 / math.sqrt(sum(abs(p) ** 2 for p in pts) / order)
    return [p * scale for p in pts], labels, 2 * half


def psk(order):
    pts = [complex(math.cos(2 * math.pi * i / order), math.sin(2 * math.pi * i / order)) for i in range(order)]
    return pts, [gray(i) for i in range(order)], order.bit_length() - 1


def log_mixture(points, yr, yi, sigma2, dims):
    """ln p(y) of the equal-weight Gaussian mixture over `points` (variance sigma2 per dimension)."""
    d2s = [(yr - p.real) ** 2 + (yi - p.imag) ** 2 for p in points]
    m = min(d2s)
    c = -0.5 / sigma2
    s = sum([math.exp(c * (d2 - m)) for d2 in d2s])
    return c * m + math.log(s / len(points)) - 0.5 * dims * math.log(2.0 * math.pi * sigma2)


def entropy_integrand(points, sigma2, dims):
    def f(yr, yi):
        lp = log_mixture(points, yr, yi, sigma2, dims)
        return -math.exp(lp) * lp / LN2 if lp > -745.0 else 0.0
    return f


def bit_information_integrand(sub0, sub1, sigma2, dims):
    """sum_b (1/2) p(y|b) log2(p(y|b) / p(y)) with p(y) = (p(y|0) + p(y|1)) / 2."""
    def f(yr, yi):
        l0 = log_mixture(sub0, yr, yi, sigma2, dims)
        l1 = log_mixture(sub1, yr, yi, sigma2, dims)
        hi = max(l0, l1)
        lp = hi + math.log(0.5 * (math.exp(l0 - hi) + math.exp(l1 - hi)))
        return sum(0.5 * math.exp(l) * (l - lp) / LN2 for l in (l0, l1) if l > -745.0)
    return f


def segments(coords, sigma, half):
    cuts = []
    for c in sorted(coords):
        if not cuts or c - cuts[-1] > 1e-9:  # one cut per distinct coordinate (cos/sin rounding)
            cuts.append(c)
    edges = [cuts[0] - 12.0 * sigma] + cuts + [cuts[-1] + 12.0 * sigma]
    segs = list(zip(edges[:-1], edges[1:]))
    if not half:
        return segs
    # Even integrand: integrate over y >= 0 only.
    return [(max(a, 0.0), b) for a, b in segs if b > 0.0]


def quad_over(f, segs, eps):
    total = []
    for a, b in segs:
        v, _ = integrate.quad(f, a, b, epsabs=eps, epsrel=eps, limit=400)
        total.append(v)
    return math.fsum(total)


def integrate_plane(f, points, sigma2, real_axis, even_r, even_i):
    """int f over the line (real_axis) or the plane, using the stated evenness."""
    sigma = math.sqrt(sigma2)
    segs_r = segments([p.real for p in points], sigma, even_r)
    factor_r = 2.0 if even_r else 1.0
    if real_axis:
        return factor_r * quad_over(lambda yr: f(yr, 0.0), segs_r, EPS_OUTER)
    segs_i = segments([p.imag for p in points], sigma, even_i)
    factor_i = 2.0 if even_i else 1.0
    inner = lambda yr: quad_over(lambda yi: f(yr, yi), segs_i, EPS_INNER)
    return factor_r * factor_i * quad_over(inner, segs_r, EPS_OUTER)


def same_set(a, b):
    key = lambda z: (round(z.real, 12), round(z.imag, 12))
    return sorted(map(key, a)) == sorted(map(key, b))


def even_under(reflect, subsets):
    """True if the reflection maps every subset onto itself or all onto the other subset, and
    so leaves the integrand unchanged (the integrands are symmetric in the two bit values)."""
    mapped = [[reflect(p) for p in s] for s in subsets]
    if all(same_set(m, s) for m, s in zip(mapped, subsets)):
        return True
    return len(subsets) == 2 and same_set(mapped[0], subsets[1]) and same_set(mapped[1], subsets[0])


def capacities(points, labels, bits, es_n0_db, real_axis):
    n0 = 10.0 ** (-es_n0_db / 10.0)
    sigma2 = n0 / 2.0
    dims = 1 if real_axis else 2
    flip_r = lambda z: complex(-z.real, z.imag)
    flip_i = lambda z: complex(z.real, -z.imag)
    h_y = integrate_plane(entropy_integrand(points, sigma2, dims), points, sigma2, real_axis,
                          even_under(flip_r, [points]), even_under(flip_i, [points]))
    cm = h_y - 0.5 * dims * math.log2(2.0 * math.pi * math.e * sigma2)
    bicm = []
    for i in range(bits):
        sub = [[p for p, l in zip(points, labels) if ((l >> (bits - 1 - i)) & 1) == b] for b in (0, 1)]
        f = bit_information_integrand(sub[0], sub[1], sigma2, dims)
        bicm.append(integrate_plane(f, points, sigma2, real_axis, even_under(flip_r, sub), even_under(flip_i, sub)))
    return cm, math.fsum(bicm)


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(os.path.abspath(__file__)),
                                                             "capacity_table.csv")
    half_db = 10.0 * math.log10(2.0)
    bpsk = ([complex(-1.0, 0.0), complex(1.0, 0.0)], [0, 1], 1)
    cases = [
        ("bpsk", bpsk, True, [-10.0, -5.0, -2.0, 0.0, 2.0, 5.0, 8.0, 10.0, 15.0]),
        ("pam4", pam(4), True, [-10.0, -5.0, 0.0, 5.0, 10.0, 15.0, 20.0]),
        ("pam8", pam(8), True, [s - half_db for s in [0.0, 10.0, 15.0, 20.0, 25.0, 30.0]]),
        ("pam32", pam(32), True, [s - half_db for s in [10.0, 20.0, 25.0, 30.0, 35.0, 40.0]]),
        ("qpsk", square_qam(4), False, [-10.0, 0.0, 5.0, 10.0]),
        ("16qam", square_qam(16), False, [-10.0, 0.0, 6.0, 12.0, 18.0]),
        ("8psk", psk(8), False, [-10.0, 0.0, 5.0, 10.0, 15.0]),
    ]
    rows = []
    for name, (points, labels, bits), real_axis, grid in cases:
        for db in grid:
            cm, bicm = capacities(points, labels, bits, db, real_axis)
            rows.append(["cm", name, repr(db), repr(cm)])
            rows.append(["bicm", name, repr(db), repr(bicm)])
    with open(out, "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["kind", "constellation", "es_n0_db", "value"])
        w.writerows(rows)


if __name__ == "__main__":
    main()
