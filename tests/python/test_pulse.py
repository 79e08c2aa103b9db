"""qamsight pulse bindings against closed forms and scipy.signal filtering."""
import numpy as np
import pytest
from scipy import signal

import qamsight as qs

pytestmark = pytest.mark.skipif("pulse" not in qs._core._parts, reason="pulse bindings not built")


def rrc(t, b):
    # Root-raised-cosine, unit energy, T = 1 (the closed form quoted in pulse.hpp; e.g. Proakis).
    return (np.sin(np.pi * t * (1 - b)) + 4 * b * t * np.cos(np.pi * t * (1 + b))) / (
        np.pi * t * (1 - (4 * b * t) ** 2))


def test_closed_forms():
    t = np.array([0.13, 0.5, 1.3, 2.77, -3.1])
    np.testing.assert_allclose(qs.root_raised_cosine_pulse(t, 0.35), rrc(t, 0.35), rtol=1e-12)
    assert qs.root_raised_cosine_pulse(0.0, 0.35) == pytest.approx(1 - 0.35 + 4 * 0.35 / np.pi, rel=1e-14)
    # Raised cosine: p(k) = 0 at nonzero integers, p(0) = 1; X(f) flat to (1-b)/2, zero past (1+b)/2.
    assert qs.raised_cosine_pulse(0.0, 0.25) == 1.0
    np.testing.assert_allclose(qs.raised_cosine_pulse(np.arange(1, 6), 0.25), 0.0, atol=1e-16)
    f = np.array([0.0, 0.3, 0.5, 0.7])
    b = 0.5
    ref = np.where(np.abs(f) <= (1 - b) / 2, 1.0,
                   np.where(np.abs(f) <= (1 + b) / 2, 0.5 * (1 + np.cos(np.pi / b * (np.abs(f) - (1 - b) / 2))), 0.0))
    np.testing.assert_allclose(qs.raised_cosine_spectrum(f, b), ref, atol=1e-15)


def test_taps_unit_energy_and_count():
    spec = qs.PulseSpec(roll_off=0.25, span_symbols=12, samples_per_symbol=4)
    taps = qs.pulse_taps(spec)
    assert taps.dtype == np.float64 and len(taps) == qs.pulse_tap_count(spec) == 12 * 4 + 1
    assert np.sum(taps ** 2) == pytest.approx(1.0, rel=1e-14)
    np.testing.assert_allclose(taps, taps[::-1], atol=1e-15)
    with pytest.raises(qs.ConfigError, match="span_symbols"):
        qs.check_pulse_spec(qs.PulseSpec(span_symbols=7))


def test_interpolator_decimator_and_fir_against_scipy():
    spec = qs.PulseSpec(roll_off=0.35, span_symbols=8, samples_per_symbol=4)
    taps = qs.pulse_taps(spec)
    rs = qs.RandomStream(1, 0, qs.Substream.payload)
    sym = qs.Constellation.from_name("qpsk").map_labels(rs.fill_labels(200, 2))
    tx = qs.PolyphaseInterpolator(spec).process(sym)
    ref = signal.upfirdn(taps, sym.astype(complex), up=4)[: 200 * 4]  # zero-stuff then filter
    np.testing.assert_allclose(tx, ref, atol=2e-6)
    dec = qs.MatchedDecimator(spec)
    n_out = dec.output_length(len(tx))
    rx = dec.process(tx)
    assert len(rx) == n_out
    full = np.convolve(tx.astype(complex), taps)[: len(tx)]
    np.testing.assert_allclose(rx, full[::4][:n_out], atol=2e-6)
    # The matched cascade has unit peak: output m is symbol m - span (pulse.hpp). Span 16 at
    # roll-off 0.35 leaves ISI near -53 dB (pulse.hpp), far inside the 0.01 tolerance.
    long = qs.PulseSpec(roll_off=0.35, span_symbols=16, samples_per_symbol=4)
    out = qs.MatchedDecimator(long).process(qs.PolyphaseInterpolator(long).process(sym))
    np.testing.assert_allclose(out[16:200], sym[: 200 - 16], atol=0.01)
    x = rs.fill_complex_gaussian(3000)
    for method in (qs.FirMethod.direct, qs.FirMethod.overlap_save):
        h = qs.FirFilter(taps, method)
        y1 = h.process(x[:1234])
        y2 = h.process(x[1234:])
        np.testing.assert_allclose(np.concatenate([y1, y2]), signal.lfilter(taps, 1.0, x.astype(complex)),
                                   atol=1e-5)
    xd = x.astype(np.complex128)
    yd = qs.FirFilterD(taps).process(xd)
    assert yd.dtype == np.complex128
    np.testing.assert_allclose(yd, signal.lfilter(taps, 1.0, xd), atol=1e-12)
    buf = xd.copy()
    assert qs.FirFilterD(taps).process(buf, out=buf) is buf
    np.testing.assert_allclose(buf, yd, atol=1e-12)


def test_interpolator_refuses_in_place():
    f = qs.PolyphaseInterpolator(qs.PulseSpec(samples_per_symbol=1))
    x = np.zeros(8, np.complex64)
    with pytest.raises(ValueError, match="in place"):
        f.process(x, out=x)
