"""qamsight LLR bindings against log-sum-exp over the constellation in NumPy/SciPy."""
import numpy as np
import pytest
from scipy.special import logsumexp

import qamsight as qs

pytestmark = pytest.mark.skipif("llr" not in qs._core._parts, reason="llr bindings not built")


def reference_llrs(c, y, n0, max_log=False):
    # Definition (llr.hpp): LLR_i = ln sum_{x: b_i = 0} exp(-|y-x|^2/N0) - ln sum_{x: b_i = 1} ...,
    # max-log keeps the largest term of each sum. Labels' bits MSB first.
    k = c.bits_per_symbol
    labels = np.arange(c.order)
    bits = (labels[:, None] >> np.arange(k - 1, -1, -1)) & 1
    metric = -np.abs(y[:, None] - c.points[None, :]) ** 2 / n0
    out = np.empty((len(y), k))
    for i in range(k):
        zero, one = metric[:, bits[:, i] == 0], metric[:, bits[:, i] == 1]
        if max_log:
            out[:, i] = zero.max(axis=1) - one.max(axis=1)
        else:
            out[:, i] = logsumexp(zero, axis=1) - logsumexp(one, axis=1)
    return out.ravel()


@pytest.mark.parametrize("name", ["bpsk", "qpsk", "8psk", "16qam", "64qam"])
@pytest.mark.parametrize("method", ["exact", "max_log"])
def test_llrs_against_the_definition(name, method):
    c = qs.Constellation.from_name(name)
    rs = qs.RandomStream(3, 1, qs.Substream.awgn)
    n0 = 0.1
    y = c.map_labels(rs.fill_labels(500, c.bits_per_symbol)) + rs.fill_complex_gaussian(500, n0)
    dem = qs.LlrDemapper(c, getattr(qs.LlrMethod, method))
    got = dem.process(y, n0)
    assert got.dtype == np.float32 and got.shape == (500 * c.bits_per_symbol,)
    ref = reference_llrs(c, y.astype(complex), n0, max_log=(method == "max_log"))
    np.testing.assert_allclose(got, ref, rtol=2e-4, atol=2e-3)
    np.testing.assert_allclose(qs.llr_exhaustive(c, complex(y[0]), n0, dem.method), ref[:c.bits_per_symbol],
                               rtol=1e-9, atol=1e-9)


def test_bpsk_closed_form_and_in_place_output():
    # llr.hpp: BPSK (label 0 at -1) LLR = -4 Re(y) / N0.
    c = qs.Constellation.bpsk()
    y = np.array([0.3 + 0.1j, -1.2, 0.05j], np.complex64)
    out = np.empty(3, np.float32)
    assert qs.LlrDemapper(c).process(y, 0.5, out=out) is out
    np.testing.assert_allclose(out, -4 * y.real / 0.5, rtol=1e-6)


def test_bad_noise_variance_is_a_config_error():
    with pytest.raises(qs.ConfigError, match="n0"):
        qs.LlrDemapper(qs.Constellation.bpsk()).process([1.0], 0.0)
