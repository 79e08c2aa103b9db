"""qamsight information bindings against NumPy's Gauss-Hermite rule and SciPy quadrature."""
import numpy as np
import pytest
from scipy import integrate

import qamsight as qs

pytestmark = pytest.mark.skipif("information" not in qs._core._parts, reason="information bindings not built")


def test_gauss_hermite_rule_equals_numpy_hermgauss():
    rule = qs.gauss_hermite_rule(20)
    x, w = np.polynomial.hermite.hermgauss(20)
    np.testing.assert_allclose(rule.nodes, x, atol=1e-12)
    # information.hpp: small Golub-Welsch weights are accurate in absolute terms (~1e-16 of the
    # total sqrt(pi)), so the comparison is absolute.
    np.testing.assert_allclose(rule.weights, w, rtol=1e-10, atol=1e-14)


def test_bpsk_capacity_against_direct_integration():
    # BPSK in AWGN (real noise variance N0/2, x = +-1): C = 1 - E[log2(1 + exp(-4 y / N0))] with
    # y ~ N(1, N0/2), integrated with scipy.integrate.quad; CM and BICM coincide for one bit.
    c = qs.Constellation.bpsk()
    for es_n0_db in (-3.0, 0.0, 4.0):
        n0 = 10 ** (-es_n0_db / 10)
        s = np.sqrt(n0 / 2)
        pdf = lambda y: np.exp(-(y - 1) ** 2 / (2 * s * s)) / np.sqrt(2 * np.pi * s * s)
        f = lambda y: pdf(y) * np.logaddexp(0, -4 * y / n0) / np.log(2)
        ref = 1 - integrate.quad(f, 1 - 40 * s, 1 + 40 * s, epsabs=1e-14, limit=200)[0]
        rates = qs.information_rates(c, es_n0_db)
        assert rates.cm == pytest.approx(ref, abs=1e-9) and rates.bicm == pytest.approx(ref, abs=1e-9)
    got = qs.bicm_capacity(c, np.array([-3.0, 0.0]))
    assert got.shape == (2,)


def test_gmi_monte_carlo_brackets_the_bicm_capacity():
    # The exact-LLR GMI estimate is unbiased for the BICM capacity (information.hpp); its 99.9%
    # normal interval contains it except with probability 0.1% (fixed seed).
    c = qs.Constellation.from_name("16qam")
    est = qs.gmi_monte_carlo(c, 8.0, 200_000, 5, qs.LlrMethod.exact, 0.999)
    assert est.low <= qs.bicm_capacity(c, 8.0) <= est.high
    acc = qs.GmiAccumulator(4)
    with pytest.raises(ValueError, match="same length"):
        acc.add(np.zeros(8, np.float32), np.zeros(4, np.uint8))
