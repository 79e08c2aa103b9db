#!/usr/bin/env python3
"""Reference values for qamsight's interval and test statistics, computed with SciPy.

Writes stats_table.csv beside this script (or to the path given as the first argument):
  clopper_pearson rows: k, n, confidence -> low, high  (scipy.stats.beta.ppf, the exact
      Clopper-Pearson construction)
  binom_two_sided rows: k, n, p0 -> p-value            (scipy.stats.binomtest, two-sided)
  rate_increase rows:   k1, n1, k0, n0 -> p-value      (scipy.stats.binom.sf for the
      conditional test X ~ Binomial(k0 + k1, n1 / (n0 + n1)), P(X >= k1))
  normal_cdf rows:      x -> Phi(x)                    (scipy.special.ndtr)
"""
import csv
import os
import sys

from scipy import special, stats


def clopper_pearson(k, n, conf):
    a = 1.0 - conf
    lo = 0.0 if k == 0 else stats.beta.ppf(a / 2, k, n - k + 1)
    hi = 1.0 if k == n else stats.beta.ppf(1 - a / 2, k + 1, n - k)
    return lo, hi


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(os.path.abspath(__file__)),
                                                             "stats_table.csv")
    rows = []
    for k, n, conf in [(0, 10, 0.95), (1, 10, 0.95), (5, 10, 0.95), (10, 10, 0.95), (0, 1000000, 0.95),
                       (100, 1000000, 0.95), (100, 100000000, 0.99), (7, 30, 0.9), (250, 2000, 0.999),
                       (3, 1000000000, 0.95), (1000, 10000000000, 0.95)]:
        lo, hi = clopper_pearson(k, n, conf)
        rows.append(["clopper_pearson", k, n, conf, "", repr(lo), repr(hi)])
    for k, n, p0 in [(3, 10, 0.5), (0, 20, 0.1), (12, 100, 0.05), (100, 1000000, 1e-4), (130, 1000000, 1e-4),
                     (70, 1000000, 1e-4), (50, 100, 0.5), (1, 1000, 0.01)]:
        rows.append(["binom_two_sided", k, n, p0, "", repr(stats.binomtest(k, n, p0).pvalue), ""])
    for k1, n1, k0, n0 in [(120, 1000000, 100, 1000000), (200, 1000000, 100, 1000000), (5, 1000, 0, 1000),
                           (100, 2000000, 100, 1000000), (150, 1000000, 100, 2000000)]:
        p = stats.binom.sf(k1 - 1, k0 + k1, n1 / (n0 + n1))
        rows.append(["rate_increase", k1, n1, k0, n0, repr(p), ""])
    for x in [-7.0, -5.0, -3.0, -1.0, 0.0, 0.5, 2.0, 4.0]:
        rows.append(["normal_cdf", x, "", "", "", repr(special.ndtr(x)), ""])
    with open(out, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["kind", "a", "b", "c", "d", "value1", "value2"])
        w.writerows(rows)


if __name__ == "__main__":
    main()
