"""qamsight sync bindings: loop gains against the published design equations, tracker behaviour."""
import math

import numpy as np
import pytest

import qamsight as qs

pytestmark = pytest.mark.skipif("sync" not in qs._core._parts, reason="sync bindings not built")


def noise_bandwidth(kp, ki, n=200_000):
    """B_L T = (1/2) sum h[n]^2 of the closed loop (phase-in -> estimate-out impulse response),
    the discrete-time noise bandwidth definition, by running the loop recurrence in Python:
    e = phi - theta, omega += ki e, theta += kp e + omega."""
    theta = omega = 0.0
    h = np.empty(n)
    for i in range(n):
        h[i] = theta
        e = (1.0 if i == 0 else 0.0) - theta
        omega += ki * e
        theta += kp * e + omega
    return 0.5 * float(np.sum(h * h))


def test_second_order_gains_match_the_bilinear_design():
    # M. Rice, Digital Communications: A Discrete-Time Approach (2009), appendix C:
    # theta = b / (zeta + 1/(4 zeta)), D = 1 + 2 zeta theta + theta^2, kp = 4 zeta theta / D,
    # ki = 4 theta^2 / D (with unit detector and NCO gains).
    for b, z in [(0.01, 0.7071), (0.002, 1.0), (0.05, 0.5)]:
        th = b / (z + 1 / (4 * z))
        d = 1 + 2 * z * th + th * th
        g = qs.phase_loop_gains(b, z, 2)
        assert g.kp == pytest.approx(4 * z * th / d, rel=1e-12)
        assert g.ki == pytest.approx(4 * th * th / d, rel=1e-12)


def test_gains_give_the_requested_noise_bandwidth():
    # sync.hpp claims the closed loop's noise bandwidth is within 1 % of b for b <= 0.01 and
    # exact for the first-order loop; checked with the recurrence above (independent code).
    g = qs.phase_loop_gains(0.01, 0.7071, 2)
    assert noise_bandwidth(g.kp, g.ki, 20_000) == pytest.approx(0.01, rel=0.01)
    g1 = qs.phase_loop_gains(0.02, 0.7071, 1)
    assert g1.kp == pytest.approx(4 * 0.02 / 1.04, rel=1e-12) and g1.ki == 0.0
    assert noise_bandwidth(g1.kp, 0.0, 5_000) == pytest.approx(0.02, rel=1e-6)


def test_tracker_removes_a_phase_and_frequency_offset():
    c = qs.Constellation.from_name("qpsk")
    n = 20_000
    labels = np.random.default_rng(4).integers(0, 4, n).astype(np.uint32)
    s = c.map_labels(labels)
    k = np.arange(n)
    w = 2e-3  # rad per symbol
    r = (s * np.exp(1j * (0.35 + w * k))).astype(np.complex64)
    r += qs.RandomStream(4, 0, qs.Substream.awgn).fill_complex_gaussian(n, 10 ** (-25 / 10))
    t = qs.PhaseTracker(qs.PhaseTrackerConfig(loop_bandwidth=0.01), c)
    y, theta = t.process(r, phase_estimate=True)
    assert y.dtype == np.complex64 and theta.dtype == np.float64 and len(theta) == n
    # A second-order loop tracks a frequency ramp with zero steady-state phase error.
    err = np.angle(y[-5000:] * np.conj(s[-5000:]))
    assert abs(np.mean(err)) < math.radians(0.5)
    assert t.frequency_rad == pytest.approx(w, rel=0.05)


def test_tracker_in_place_and_errors():
    c = qs.Constellation.from_name("qpsk")
    x = c.map_labels(np.arange(64, dtype=np.uint32) % 4)
    t = qs.PhaseTracker(qs.PhaseTrackerConfig(), c)
    out = t.process(x, out=x)
    assert out.__array_interface__["data"][0] == x.__array_interface__["data"][0]
    with pytest.raises(ValueError, match="loop_bandwidth"):
        qs.PhaseTracker(qs.PhaseTrackerConfig(loop_bandwidth=0.5), c)
    with pytest.raises(ValueError, match="reference"):
        qs.PhaseTracker(qs.PhaseTrackerConfig(pilot_period=4), c).process(x)
    with pytest.raises(TypeError):
        t.process(np.array(["x"]))


def test_soft_symbol_is_the_posterior_mean():
    # QPSK per axis: tanh(sqrt(2) y / n0) / sqrt(2) (two-point posterior); 16-QAM: the definition
    # summed over every point in NumPy.
    qpsk = qs.Constellation.from_name("qpsk")
    for y in (0.3 - 1.1j, -0.05 + 0.4j):
        s = qs.soft_symbol(qpsk, y, 0.5)
        assert s.real == pytest.approx(np.tanh(np.sqrt(2) * y.real / 0.5) / np.sqrt(2), rel=1e-12)
        assert s.imag == pytest.approx(np.tanh(np.sqrt(2) * y.imag / 0.5) / np.sqrt(2), rel=1e-12)
    c = qs.Constellation.from_name("16qam")
    p = np.asarray(c.points)
    y, n0 = 0.2 + 0.7j, 0.3
    w = np.exp(-np.abs(y - p) ** 2 / n0)
    assert qs.soft_symbol(c, y, n0) == pytest.approx(complex((w * p).sum() / w.sum()), rel=1e-10)
    with pytest.raises(ValueError, match="n0"):
        qs.soft_symbol(c, y, 0.0)


def test_soft_detector_in_a_sweep_beats_the_arg_detector_at_low_es_n0():
    # QPSK at Es/N0 3 dB, tracked 20-degree rotation: the soft detector stays within 10 % of the
    # exact BER Q(sqrt(Es/N0)) (math.erfc), the arg detector slips.
    theory = 0.5 * math.erfc(math.sqrt(10 ** 0.3 / 2))
    res = {}
    for det in (qs.PhaseDetector.soft, qs.PhaseDetector.arg):
        im = qs.ImpairmentConfig(symbol_rate_hz=1e6, phase_deg=20.0, tracker_detector=det)
        r = qs.sweep("qpsk", es_n0_db=3.0, max_bits=1e6, min_errors=10**9, seed=3,
                     pulse=qs.PulseShapingConfig(4, 0.25, 12), impairments=im)
        res[det] = r.points[0].ber
    assert res[qs.PhaseDetector.soft] < 1.1 * theory
    assert res[qs.PhaseDetector.arg] > 1.5 * theory
    cfg = qs.PhaseTrackerConfig(detector=qs.PhaseDetector.soft, noise_variance=0.5)
    t = qs.PhaseTracker(cfg, qs.Constellation.from_name("qpsk"))
    with pytest.raises(ValueError, match="noise_variance"):
        t.set_noise_variance(-1.0)
