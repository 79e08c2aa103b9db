"""qamsight channel bindings: the AWGN block and its Es/N0 convention."""
import numpy as np
import pytest
from scipy import stats

import qamsight as qs


def test_noise_variance_follows_es_n0():
    # channel.hpp convention: N0 = symbol_energy / (Es/N0), linear.
    ch = qs.AwgnChannel(qs.AwgnConfig(es_n0_db=7.0, symbol_energy=2.0))
    assert ch.noise_variance == pytest.approx(2.0 / 10 ** 0.7, rel=1e-14)
    assert ch.config.es_n0_db == 7.0


def test_measured_noise_power_in_a_999_interval():
    # Zero input: 2 |n|^2 / N0 ~ chi2(2) per sample, the sum over n samples ~ chi2(2n); the
    # 99.9% interval makes a false alarm 0.1% likely for a correct block (fixed seed).
    n = 200_000
    ch = qs.AwgnChannel(qs.AwgnConfig(es_n0_db=3.0))
    y = ch.process(qs.RandomStream(9, 0, qs.Substream.awgn), np.zeros(n, np.complex64))
    s = 2 * np.sum(np.abs(y.astype(np.complex128)) ** 2) / ch.noise_variance
    lo, hi = stats.chi2.ppf([0.0005, 0.9995], 2 * n)
    assert lo < s < hi


def test_in_place_and_reproducible():
    ch = qs.AwgnChannel(qs.AwgnConfig(es_n0_db=10.0))
    x = qs.Constellation.from_name("qpsk").map_labels(np.arange(1000, dtype=np.uint32) % 4)
    ref = ch.process(qs.RandomStream(1, 5, qs.Substream.awgn), x)
    address = x.__array_interface__["data"][0]
    got = ch.process(qs.RandomStream(1, 5, qs.Substream.awgn), x, out=x)
    assert got is x and x.__array_interface__["data"][0] == address
    np.testing.assert_array_equal(x, ref)
    with pytest.raises(ValueError, match="overlaps"):
        ch.process(qs.RandomStream(1, 5, qs.Substream.awgn), x[:-1], out=x[1:])


def test_bad_config_raises_config_error():
    with pytest.raises(qs.ConfigError, match="es_n0_db"):
        qs.AwgnChannel(qs.AwgnConfig(es_n0_db=500.0))
