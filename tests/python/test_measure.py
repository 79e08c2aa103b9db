"""qamsight measure bindings: exact intervals and tests against SciPy, EVM against NumPy."""
import numpy as np
import pytest
from scipy import stats

import qamsight as qs


@pytest.mark.parametrize("k,n,conf", [(0, 1000, 0.95), (1, 10, 0.99), (37, 5000, 0.95), (500, 1000, 0.999),
                                      (10, 10, 0.9)])
def test_clopper_pearson_against_beta_quantiles(k, n, conf):
    # Clopper-Pearson: low = B^-1(a/2; k, n-k+1), high = B^-1(1-a/2; k+1, n-k) (scipy.stats.beta).
    a = 1 - conf
    lo = 0.0 if k == 0 else stats.beta.ppf(a / 2, k, n - k + 1)
    hi = 1.0 if k == n else stats.beta.ppf(1 - a / 2, k + 1, n - k)
    iv = qs.clopper_pearson(k, n, conf)
    assert iv.low == pytest.approx(lo, rel=1e-9, abs=1e-300)
    assert iv.high == pytest.approx(hi, rel=1e-9)
    low, high = iv
    assert (low, high) == (iv.low, iv.high)


def test_clopper_pearson_misuse():
    with pytest.raises(qs.ConfigError, match="successes"):
        qs.clopper_pearson(11, 10, 0.95)
    with pytest.raises(ValueError, match="confidence"):
        qs.clopper_pearson(1, 10, 1.5)


def test_binomial_and_rate_increase_p_values():
    # Two-sided exact test, outcomes no more likely than k (scipy.stats.binomtest's definition).
    for k, n, p0 in [(3, 100, 0.01), (12, 1000, 0.02), (0, 50, 0.1)]:
        assert qs.binomial_test_p_value(k, n, p0) == pytest.approx(stats.binomtest(k, n, p0).pvalue, rel=1e-9)
    # Conditional test: k1 ~ Binomial(k0 + k1, n1 / (n0 + n1)), one-sided P(X >= k1).
    k1, n1, k0, n0 = 60, 10**6, 40, 10**6
    ref = stats.binom.sf(k1 - 1, k0 + k1, n1 / (n0 + n1))
    assert qs.rate_increase_p_value(k1, n1, k0, n0) == pytest.approx(ref, rel=1e-9)


def test_error_counts_merge_by_addition():
    a = qs.ErrorCounts(bits=100, bit_errors=3, symbols=50, symbol_errors=2, frames=1, frame_errors=1)
    b = qs.ErrorCounts(bits=10, bit_errors=1)
    c = a + b
    assert (c.bits, c.bit_errors, c.symbols, c.frames) == (110, 4, 50, 1)
    a += b
    assert a == c and "bits=110" in repr(a)


def test_evm_accumulator_against_the_definition():
    # RMS EVM = sqrt(sum |r - s|^2 / sum |s|^2); MER = 10 log10(sum |s|^2 / sum |r - s|^2).
    c = qs.Constellation.from_name("16qam")
    rs = qs.RandomStream(4, 0, qs.Substream.awgn)
    s = c.map_labels(rs.fill_labels(10_000, 4))
    r = s + rs.fill_complex_gaussian(10_000, 0.01)
    acc = qs.EvmAccumulator()
    acc.add(r[:4000], s[:4000])
    acc.add(r[4000:], s[4000:])
    e = np.sum(np.abs(r.astype(complex) - s) ** 2)
    p = np.sum(np.abs(s.astype(complex)) ** 2)
    assert acc.count == 10_000
    assert acc.rms() == pytest.approx(np.sqrt(e / p), rel=1e-6)
    assert acc.rms_percent() == pytest.approx(100 * np.sqrt(e / p), rel=1e-6)
    assert acc.mer_db() == pytest.approx(10 * np.log10(p / e), rel=1e-6)
    assert acc.rms_db() == pytest.approx(20 * np.log10(np.sqrt(e / p)), rel=1e-6)
    other = qs.EvmAccumulator()
    other.add(r, s)
    total = qs.EvmAccumulator()
    total += other
    assert total.error_power == pytest.approx(other.error_power)
    with pytest.raises(ValueError, match="lengths differ"):
        acc.add(r[:3], s[:4])
    assert np.isnan(qs.EvmAccumulator().rms())
