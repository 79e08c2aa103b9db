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
