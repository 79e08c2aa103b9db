#!/usr/bin/env python3
"""Reference values for qamsight's link module, computed independently with mpmath and NumPy.

Writes link_table.csv beside this script (or to the path given as the first argument), columns
  kind, a, b, c, d, e, f, g, value
with these kinds (all angles in degrees):

  slant_range       a elevation, b altitude km -> km. Law of cosines on the triangle
                    (Earth centre, station, satellite) solved for the side by mpmath.findroot,
                    not the closed form the C++ uses.
  fspl              a frequency Hz, b distance m -> dB, 20 log10(4 pi d f / c) in mpmath (P.525).
  pass_3d           a max elevation, b altitude km, c time s -> value columns written as
                    separate kinds pass_elevation / pass_range_km / pass_range_rate_m_s. The pass
                    is built from 3-D vectors: station at Re (1, 0, 0), satellite on a great circle
                    r (cos g0 cos wt, sin wt, sin g0 cos wt); elevation from the angle between
                    the range vector and the local vertical, range rate by mpmath.diff of |rho|.
  pass_duration     a max elevation, b altitude, c min elevation -> s, from mpmath.findroot on the
                    3-D elevation.
  overhead_rate     a elevation, b altitude -> m/s, mpmath.diff of |rho(t)| at the time the
                    overhead pass (g0 = 0) reaches the elevation (found by findroot).
  directivity       a columns, b rows, c lattice (0 rect, 1 tri), d spacing (wavelengths), e q,
                    f scan, g scan azimuth -> dBi. Brute-force product
                    Gauss-Legendre integration of |AF|^2 cos^q over the half-space in (theta, phi),
                    with the array factor summed element by element (not the co-array).
  ula_sidelobe      a N -> dB, first side lobe of |sin(N x/2) / (N sin(x/2))|^2, maximised by
                    scipy.optimize.minimize_scalar between the first and second nulls.

Constants: Re = 6378.137 km, GM = 398600.4418 km^3/s^2, c = 299792458 m/s.
"""
import csv
import os
import sys

import mpmath as mp
import numpy as np
from scipy import optimize

mp.mp.dps = 40
RE = mp.mpf("6378.137")
GM = mp.mpf("398600.4418")
C = mp.mpf(299792458)


def slant_range(e_deg, h):
    # Find d with (Re + h)^2 = Re^2 + d^2 + 2 Re d sin E (law of cosines, angle 90 + E at the station).
    e = mp.radians(e_deg)
    r = RE + h
    f = lambda d: RE ** 2 + d ** 2 + 2 * RE * d * mp.sin(e) - r ** 2
    return mp.findroot(f, (mp.mpf(0), r + RE), solver="illinois")


def pass_vectors(emax_deg, h):
    r = RE + h
    w = mp.sqrt(GM / r ** 3)
    # g0 from the max elevation, by root finding on the 3-D elevation at t = 0.
    def elev(g0, t):
        sat = mp.matrix([r * mp.cos(g0) * mp.cos(w * t), r * mp.sin(w * t), r * mp.sin(g0) * mp.cos(w * t)])
        rho = sat - mp.matrix([RE, 0, 0])
        dist = mp.norm(rho)
        return mp.degrees(mp.asin(rho[0] / dist)), dist

    g0 = mp.findroot(lambda g: elev(g, 0)[0] - emax_deg, (mp.mpf("1e-30"), mp.acos(RE / r)), solver="illinois") \
        if emax_deg < 90 else mp.mpf(0)
    return r, w, g0, elev


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(os.path.abspath(__file__)),
                                                             "link_table.csv")
    rows = []
    for h in [35786, 1200, 20200, 870]:
        for e in [0, 5, 10, 20, 30, 45, 60, 90]:
            rows.append(["slant_range", e, h, "", "", "", mp.nstr(slant_range(mp.mpf(e), mp.mpf(h)), 20)])
    for f, d in [(1e9, 1e3), (2.4e9, 1e3), (12e9, 35786e3), (12e9, 41679e3), (19.7e9, 2345.6e3)]:
        rows.append(["fspl", f, d, "", "", "", mp.nstr(20 * mp.log10(4 * mp.pi * mp.mpf(d) * mp.mpf(f) / C), 20)])

    for emax, h, times in [(40, 870, [-300, -120, 0, 45, 250]), (90, 550, [-200, 0, 100]), (15, 1200, [-400, 0, 300])]:
        r, w, g0, elev = pass_vectors(mp.mpf(emax), mp.mpf(h))
        for t in times:
            e, dist = elev(g0, mp.mpf(t))
            rate = mp.diff(lambda tt: elev(g0, tt)[1], mp.mpf(t)) * 1000
            rows.append(["pass_elevation", emax, h, t, "", "", mp.nstr(e, 20)])
            rows.append(["pass_range_km", emax, h, t, "", "", mp.nstr(dist, 20)])
            rows.append(["pass_range_rate_m_s", emax, h, t, "", "", mp.nstr(rate, 20)])
        for emin in [0, 10]:
            if emin < emax:
                t1 = mp.findroot(lambda tt: elev(g0, tt)[0] - emin, (mp.mpf(0), mp.pi / (2 * w)), solver="illinois")
                rows.append(["pass_duration", emax, h, emin, "", "", mp.nstr(2 * abs(t1), 20)])

    for e, h in [(0, 870), (10, 870), (45, 870), (80, 870), (30, 35786)]:
        r, w, g0, elev = pass_vectors(mp.mpf(90), mp.mpf(h))
        # Setting half: t > 0 with elevation e.
        t1 = mp.findroot(lambda tt: elev(g0, tt)[0] - e, (mp.mpf(0), mp.pi / (2 * w)), solver="illinois") \
            if e < 90 else mp.mpf(0)
        rate = mp.diff(lambda tt: elev(g0, tt)[1], abs(t1)) * 1000
        rows.append(["overhead_rate", e, h, "", "", "", mp.nstr(rate, 20)])

    # Directivity by brute force.
    gl_t, gl_tw = np.polynomial.legendre.leggauss(400)
    gl_p, gl_pw = np.polynomial.legendre.leggauss(720)
    theta = (gl_t + 1) * np.pi / 4          # 0 .. pi/2
    wt = gl_tw * np.pi / 4
    phi = (gl_p + 1) * np.pi                # 0 .. 2 pi
    wp = gl_pw * np.pi
    T, P = np.meshgrid(theta, phi, indexing="ij")
    U, V = np.sin(T) * np.cos(P), np.sin(T) * np.sin(P)
    for nx, ny, tri, d, q, scan, az in [(4, 4, 0, 0.5, 1.0, 0.0, 0.0), (4, 4, 0, 0.5, 1.0, 50.0, 20.0),
                                        (5, 4, 1, 0.6, 1.5, 40.0, 30.0), (6, 3, 0, 0.7, 1.0, 35.0, 90.0),
                                        (8, 1, 0, 0.7, 0.0, 30.0, 0.0), (3, 5, 1, 0.5, 2.0, 60.0, 75.0)]:
        dy = d * np.sqrt(3) / 2 if tri else d
        xs, ys = [], []
        for j in range(ny):
            for i in range(nx):
                xs.append((i + (0.5 if (tri and j % 2 == 1) else 0.0)) * d)
                ys.append(j * dy)
        xs, ys = np.array(xs), np.array(ys)
        u0 = np.sin(np.radians(scan)) * np.cos(np.radians(az))
        v0 = np.sin(np.radians(scan)) * np.sin(np.radians(az))
        af = np.zeros_like(U, dtype=complex)
        for x, y in zip(xs, ys):
            af += np.exp(2j * np.pi * (x * (U - u0) + y * (V - v0)))
        power = np.abs(af) ** 2 * np.cos(T) ** q
        total = np.sum(power * np.sin(T) * wt[:, None] * wp[None, :])
        n = nx * ny
        peak = n ** 2 * np.cos(np.radians(scan)) ** q
        rows.append(["directivity", nx, ny, tri, d, q, scan, az, repr(float(10 * np.log10(4 * np.pi * peak / total)))])

    for n in [16, 64, 100]:
        f = lambda x: -(np.sin(n * x / 2) / (n * np.sin(x / 2))) ** 2
        res = optimize.minimize_scalar(f, bounds=(2 * np.pi / n, 4 * np.pi / n), method="bounded",
                                       options={"xatol": 1e-14})
        rows.append(["ula_sidelobe", n, "", "", "", "", repr(float(10 * np.log10(-res.fun)))])

    with open(out, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["kind", "a", "b", "c", "d", "e", "f", "g", "value"])
        for row in rows:
            w.writerow(row[:-1] + [""] * (9 - len(row)) + row[-1:])


if __name__ == "__main__":
    main()
