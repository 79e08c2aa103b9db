"""qamsight spectrum bindings against scipy.signal (windows, Welch)."""
import numpy as np
import pytest
from scipy import signal

import qamsight as qs

pytestmark = pytest.mark.skipif("spectrum" not in qs._core._parts, reason="spectrum bindings not built")


@pytest.mark.parametrize("kind,scipy_name", [("hann", "hann"), ("blackman_harris4", "blackmanharris"),
                                             ("flat_top", "flattop"), ("rectangular", "boxcar")])
def test_windows_equal_scipy_periodic_windows(kind, scipy_name):
    w = qs.window_coefficients(getattr(qs.WindowKind, kind), 64)
    np.testing.assert_allclose(w, signal.get_window(scipy_name, 64, fftbins=True), atol=1e-12)


def test_welch_density_equals_scipy():
    fs = 2e6
    x = qs.RandomStream(2, 0, qs.Substream.awgn).fill_complex_gaussian(40_000, 1.0)
    est = qs.WelchEstimator(qs.WelchConfig(fft_size=256, overlap=0.5, window=qs.WindowKind.hann, sample_rate_hz=fs))
    est.add(x[:10_001])
    est.add(x[10_001:])
    psd = est.psd()
    f, p = signal.welch(x.astype(complex), fs=fs, window="hann", nperseg=256, noverlap=128, detrend=False,
                        return_onesided=False, scaling="density")
    order = np.argsort(f)
    np.testing.assert_allclose(psd.frequency_hz, f[order], rtol=1e-12, atol=1e-6)
    np.testing.assert_allclose(psd.values, p[order], rtol=1e-9)
    assert not psd.values.flags.writeable and len(psd) == 256
    # White noise of unit variance: total power 1 within the estimate's spread.
    assert qs.total_power(psd) == pytest.approx(np.mean(np.abs(x[: psd.segments * 128 + 128]) ** 2), rel=0.05)
    peak = qs.spectral_peak(psd)
    assert psd.values[peak.bin] == peak.value


def test_single_segment_periodogram_equals_numpy_fft():
    # One rectangular-window segment: the two-sided density is |X[k]|^2 / (fs N) with X the DFT
    # (numpy.fft.fft), ordered by frequency (numpy.fft.fftshift of numpy.fft.fftfreq).
    fs, n = 1e6, 128
    k = np.arange(n)
    x = (np.exp(2j * np.pi * 0.1 * k) + 0.3 * np.exp(-2j * np.pi * 0.27 * k)).astype(np.complex64)
    est = qs.WelchEstimator(qs.WelchConfig(fft_size=n, overlap=0.0, window=qs.WindowKind.rectangular,
                                           sample_rate_hz=fs))
    est.add(x)
    psd = est.psd()
    assert psd.segments == 1
    ref = np.fft.fftshift(np.abs(np.fft.fft(x.astype(complex))) ** 2 / (fs * n))
    np.testing.assert_allclose(psd.frequency_hz, np.fft.fftshift(np.fft.fftfreq(n, 1 / fs)), atol=1e-6)
    np.testing.assert_allclose(psd.values, ref, rtol=1e-5, atol=1e-12 * ref.max())
