"""qamsight impairment bindings against the closed forms quoted in channel.hpp."""
import numpy as np
import pytest
from scipy import stats

import qamsight as qs

pytestmark = pytest.mark.skipif("impairments" not in qs._core._parts, reason="impairment bindings not built")


def signal_(n=1000, seed=1):
    rs = qs.RandomStream(seed, 0, qs.Substream.payload)
    return qs.Constellation.from_name("16qam").map_labels(rs.fill_labels(n, 4))


def test_frequency_offset_and_rotation():
    x = signal_()
    cfo = qs.FrequencyOffset(qs.FrequencyOffsetConfig(offset_hz=1250.0, sample_rate_hz=1e5, initial_phase_deg=30.0))
    y = np.concatenate([cfo.process(x[:333]), cfo.process(x[333:])])  # phase continuous across calls
    n = np.arange(len(x))
    ref = x * np.exp(1j * (np.deg2rad(30.0) + 2 * np.pi * 1250.0 * n / 1e5))
    np.testing.assert_allclose(y, ref, atol=2e-6)
    rot = qs.PhaseRotation(qs.PhaseRotationConfig(rotation_deg=-45.0))
    np.testing.assert_allclose(rot.process(x), x * np.exp(-1j * np.pi / 4), atol=1e-6)
    buf = x.copy()
    assert rot.process(buf, out=buf) is buf


def test_iq_imbalance_formula_and_image_rejection():
    g_db, phi_deg = 0.5, 3.0
    iq = qs.IqImbalance(qs.IqImbalanceConfig(gain_db=g_db, phase_deg=phi_deg))
    x = signal_().astype(complex)
    g, phi = 10 ** (g_db / 20), np.deg2rad(phi_deg)
    ref = x.real + 1j * g * (np.sin(phi) * x.real + np.cos(phi) * x.imag)
    np.testing.assert_allclose(iq.process(x), ref, atol=2e-6)
    irr = (1 + 2 * g * np.cos(phi) + g * g) / (1 - 2 * g * np.cos(phi) + g * g)
    assert iq.image_rejection_ratio_db() == pytest.approx(10 * np.log10(irr), rel=1e-12)


def test_dc_offset_and_multipath():
    x = signal_()
    dc = qs.DcOffset(qs.DcOffsetConfig(offset=0.01 - 0.02j, signal_rms=2.0))
    np.testing.assert_allclose(dc.process(x), x + (0.01 - 0.02j) * 2.0, atol=1e-6)
    taps = [qs.MultipathTap(0, 1.0), qs.MultipathTap(3, 0.5j), qs.MultipathTap(7, -0.25)]
    mp = qs.MultipathChannel(qs.MultipathConfig(taps))
    y = np.concatenate([mp.process(x[:100]), mp.process(x[100:])])
    h = np.zeros(8, complex)
    h[[0, 3, 7]] = [1.0, 0.5j, -0.25]
    np.testing.assert_allclose(y, np.convolve(x.astype(complex), h)[: len(x)], atol=1e-6)
    assert mp.max_delay == 7 and len(mp.taps) == 3


def test_quantiser_mid_rise_levels():
    q = qs.Quantiser(qs.QuantiserConfig(bits=3, clip_mode=qs.ClipMode.full_scale, full_scale=1.0))
    # Step D = 2 FS / 2^bits; levels (k + 1/2) D for k = -4..3, clipped to the outer levels.
    d = 2.0 / 8
    x = np.array([0.01 + 0.3j, -0.99 + 2.0j, 0.6 - 0.13j], np.complex64)
    ref = lambda v: np.clip((np.floor(v / d) + 0.5) * d, -3.5 * d, 3.5 * d)
    np.testing.assert_allclose(q.process(x), ref(x.real) + 1j * ref(x.imag), atol=1e-7)
    assert q.step == pytest.approx(d) and q.clipped_rails == 1


def test_amplifier_models():
    # Saleh 1981: A(r) = a r / (1 + b r^2), Phi(r) = a_phi r^2 / (1 + b_phi r^2).
    s = qs.SalehAmplifier(qs.SalehConfig())
    c = s.config
    r = np.array([0.1, 0.5, 1.0, 2.0])
    np.testing.assert_allclose(s.am_am(r), c.alpha_a * r / (1 + c.beta_a * r * r), rtol=1e-12)
    np.testing.assert_allclose(s.am_pm_rad(r), c.alpha_phi * r * r / (1 + c.beta_phi * r * r), rtol=1e-12)
    # Rapp 1991: A(r) = G r / (1 + (G r / A_sat)^(2p))^(1/(2p)).
    ra = qs.RappAmplifier(qs.RappConfig(smoothness=3.0, saturation_amplitude=1.2, gain=2.0))
    ref = 2.0 * r / (1 + (2.0 * r / 1.2) ** 6) ** (1 / 6)
    np.testing.assert_allclose(ra.am_am(r), ref, rtol=1e-12)
    y = ra.process(signal_())
    assert np.isfinite(ra.measured_output_backoff_db()) and ra.meter.count == len(y)


def test_wiener_increments_have_the_configured_variance():
    # Increments N(0, 2 pi linewidth / fs): the sum of squares / variance ~ chi2(n) (99.9% interval).
    cfg = qs.WienerPhaseNoiseConfig(linewidth_hz=500.0, sample_rate_hz=1e6)
    pn = qs.WienerPhaseNoise(cfg)
    phase = pn.generate(qs.RandomStream(4, 0, qs.Substream.phase_noise), 200_001)
    d = np.angle(np.exp(1j * np.diff(phase)))
    var = 2 * np.pi * 500.0 / 1e6
    assert pn.increment_variance() == pytest.approx(var)
    lo, hi = stats.chi2.ppf([0.0005, 0.9995], len(d))
    assert lo < np.sum(d ** 2) / var < hi


def test_phase_noise_mask_integral_of_a_flat_segment():
    # A flat segment of L dBc/Hz from f1 to f2 integrates to 10^(L/10) (f2 - f1); sigma^2 = 2 x that.
    mask = qs.PhaseNoiseMask([qs.PhaseNoisePoint(1e3, -80.0), qs.PhaseNoisePoint(1e5, -80.0)])
    assert mask.integral(1e3, 1e5) == pytest.approx(1e-8 * (1e5 - 1e3), rel=1e-12)
    assert mask.phase_variance() == pytest.approx(2e-8 * (1e5 - 1e3), rel=1e-12)
    np.testing.assert_allclose(mask.level_dbc_hz(np.array([2e3, 5e4])), -80.0)
    with pytest.raises(qs.ConfigError):
        qs.PhaseNoiseMask([qs.PhaseNoisePoint(1e3, -80.0)])
