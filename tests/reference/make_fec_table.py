#!/usr/bin/env python3
"""Reference values for qamsight's fec tests, computed independently of the library.

Writes fec_table.csv beside this script (or to the path given as the first argument):
  spectrum rows:        d -> A_d, B_d     distance spectrum of the K = 7 (171, 133) octal
      rate-1/2 convolutional code (paths leaving state 0 and first returning to it, by output
      weight d; B_d sums their input weights), by transfer-function enumeration on a trellis
      built here from the generators, d <= 30
  union_bound_r12 rows: Eb/N0 dB -> P_b bound  sum_{d <= 22} B_d Q(sqrt(2 R d Eb/N0)), R = 1/2
      (scipy.special.erfc), the truncation the C++ test uses
  punctured_dfree rows: rate -> d_free   free distance of the punctured code with the keep
      patterns A (171): 1 0 / 1 0 1 / 1 0 1 0 1 and B (133): 1 1 / 1 1 0 / 1 1 0 1 0
      (Dijkstra over (state, puncturing phase))
"""
import csv
import heapq
import math
import os
import sys

from scipy import special

G_A, G_B = 0o171, 0o133
MAX_D = 30
PATTERNS = {"1/2": ([1], [1]), "2/3": ([1, 0], [1, 1]), "3/4": ([1, 0, 1], [1, 1, 0]),
            "5/6": ([1, 0, 1, 0, 1], [1, 1, 0, 1, 0])}
UB_POINTS = [3.0, 3.5, 4.0, 4.17, 4.4, 4.6, 5.0]


def branch(state, u):
    reg = (u << 6) | state  # bit 6: current input, bit 0: input six steps back
    return (state >> 1) | (u << 5), bin(reg & G_A).count("1") & 1, bin(reg & G_B).count("1") & 1


def spectrum(max_d=MAX_D):
    a_d = [0] * (max_d + 1)
    b_d = [0] * (max_d + 1)
    nxt, x, y = branch(0, 1)
    live = {(nxt, x + y): (1, 1)}  # (state, weight) -> (paths, summed input weight)
    for _ in range(1000):
        if not live:
            break
        new = {}
        for (s, w), (c, iw) in live.items():
            for u in (0, 1):
                s2, x, y = branch(s, u)
                w2 = w + x + y
                if w2 > max_d:
                    continue
                c2, iw2 = c, iw + u * c
                if s2 == 0:
                    a_d[w2] += c2
                    b_d[w2] += iw2
                else:
                    pc, piw = new.get((s2, w2), (0, 0))
                    new[(s2, w2)] = (pc + c2, piw + iw2)
        live = new
    assert not live
    return a_d, b_d


def qfunc(x):
    return 0.5 * special.erfc(x / math.sqrt(2.0))


def union_bound(eb_n0_db, b_d, max_d):
    g = 10.0 ** (eb_n0_db / 10.0)
    return sum(b_d[d] * qfunc(math.sqrt(2 * 0.5 * d * g)) for d in range(1, max_d + 1) if b_d[d])


def punctured_dfree(keep_a, keep_b):
    period = len(keep_a)
    best = 10 ** 9
    for phase0 in range(period):
        s, x, y = branch(0, 1)
        heap = [(x * keep_a[phase0] + y * keep_b[phase0], s, (phase0 + 1) % period)]
        done = set()
        while heap:
            w, s, ph = heapq.heappop(heap)
            if s == 0:
                best = min(best, w)
                break
            if (s, ph) in done:
                continue
            done.add((s, ph))
            for u in (0, 1):
                s2, x, y = branch(s, u)
                heapq.heappush(heap, (w + x * keep_a[ph] + y * keep_b[ph], s2, (ph + 1) % period))
    return best


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "fec_table.csv")
    a_d, b_d = spectrum()
    rows = []
    for d in range(MAX_D + 1):
        if a_d[d]:
            rows.append(["spectrum", d, a_d[d], b_d[d]])
    for eb in UB_POINTS:
        rows.append(["union_bound_r12", eb, "", repr(union_bound(eb, b_d, 22))])
    for rate, (ka, kb) in PATTERNS.items():
        rows.append(["punctured_dfree", rate, "", punctured_dfree(ka, kb)])
    with open(out, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["kind", "a", "b", "value"])
        w.writerows(rows)


if __name__ == "__main__":
    main()
