"""qamsight.theory bindings against SciPy evaluations of the textbook formulas."""
import numpy as np
import pytest
from scipy import integrate, optimize, special, stats

import qamsight as qs
from qamsight import theory


def Q(x):
    return 0.5 * special.erfc(np.asarray(x) / np.sqrt(2))


def test_q_function_and_inverse_against_scipy_norm():
    x = np.array([-3.0, 0.0, 1.0, 5.0, 12.0, 30.0])
    np.testing.assert_allclose(theory.q_function(x), stats.norm.sf(x), rtol=1e-12)
    p = np.array([0.4, 1e-3, 1e-9, 1e-30])
    np.testing.assert_allclose(theory.q_inverse(p), stats.norm.isf(p), rtol=1e-10)


def test_bpsk_and_qpsk_ber_vectorised_against_erfc():
    # BER = Q(sqrt(2 Eb/N0)) = erfc(sqrt(Eb/N0)) / 2 for BPSK and Gray QPSK (Proakis).
    eb = np.linspace(-4.0, 14.0, 37)
    ref = 0.5 * special.erfc(np.sqrt(10 ** (eb / 10)))
    for name in ("bpsk", "qpsk"):
        got = theory.ber_for(name, eb)
        assert isinstance(got, np.ndarray) and got.shape == eb.shape
        np.testing.assert_allclose(got, ref, rtol=1e-12)
    np.testing.assert_allclose(theory.ber_bpsk(eb), ref, rtol=1e-12)
    assert isinstance(theory.ber_for("qpsk", 6.0), float)


def test_16qam_ber_against_the_per_bit_gray_pam_derivation():
    # 4-PAM Gray per axis (levels -3a..3a, labels 00 01 11 10): MSB errors (Q(u) + Q(3u))/2,
    # LSB errors (2 Q(u) + Q(3u) - Q(5u))/2, with u = a/sigma = sqrt(4 Eb / (5 N0)) at unit
    # energy, so BER = (3 Q(u) + 2 Q(3u) - Q(5u)) / 4 (derived from Gaussian tails).
    eb = np.linspace(0.0, 16.0, 17)
    u = np.sqrt(0.8 * 10 ** (eb / 10))
    ref = (3 * Q(u) + 2 * Q(3 * u) - Q(5 * u)) / 4
    np.testing.assert_allclose(theory.ber_for("16qam", eb), ref, rtol=1e-12)
    np.testing.assert_allclose(theory.ber_square_qam(16, eb), ref, rtol=1e-12)


def test_square_qam_ser_against_proakis():
    # P = 2 (1 - 1/sqrt M) Q(sqrt(3 Es/N0 / (M - 1))), Ps = 2P - P^2 (Proakis, square QAM).
    es = np.array([5.0, 10.0, 15.0, 20.0])
    for m in (16, 64):
        p = 2 * (1 - 1 / np.sqrt(m)) * Q(np.sqrt(3 * 10 ** (es / 10) / (m - 1)))
        np.testing.assert_allclose(theory.ser_square_qam(m, es), 2 * p - p * p, rtol=1e-12)


def test_8psk_ser_against_the_craig_integral_by_quadrature():
    # Craig (MILCOM 1991): Ps = (1/pi) int_0^{(M-1) pi/M} exp(-Es/N0 sin^2(pi/M) / sin^2 t) dt,
    # integrated here independently with scipy.integrate.quad.
    for es in (4.0, 10.0, 16.0):
        g = 10 ** (es / 10)
        ref, _ = integrate.quad(lambda t: np.exp(-g * np.sin(np.pi / 8) ** 2 / np.sin(t) ** 2), 0, 7 * np.pi / 8,
                                epsabs=0, epsrel=1e-13)
        assert theory.ser_psk(8, es) == pytest.approx(ref / np.pi, rel=1e-9)


def test_snr_conversions_and_capacity():
    assert theory.es_n0_db_from_eb_n0_db(4.0, 4) == pytest.approx(4.0 + 10 * np.log10(4))
    assert theory.eb_n0_db_from_es_n0_db(10.0, 6, 0.5) == pytest.approx(10.0 - 10 * np.log10(3))
    np.testing.assert_allclose(theory.shannon_capacity(np.array([0.0, 10.0])), np.log2(1 + np.array([1.0, 10.0])))
    # Shannon's limit: (2^eta - 1)/eta; at eta = 1 it is 0 dB, towards eta -> 0 it is ln 2.
    assert theory.shannon_min_eb_n0_db(1.0) == pytest.approx(0.0, abs=1e-12)
    assert theory.shannon_min_eb_n0_db(1e-9) == pytest.approx(10 * np.log10(np.log(2)), abs=1e-6)


def test_required_eb_n0_against_brentq():
    ref = optimize.brentq(lambda eb: 0.5 * special.erfc(np.sqrt(10 ** (eb / 10))) - 1e-5, 0, 20, xtol=1e-12)
    assert theory.required_eb_n0_db("qpsk", 1e-5) == pytest.approx(ref, abs=1e-7)
    # 9.5879 dB: REFERENCES 1.6 (the value tests/cli checks through `qamsight theory`).
    assert ref == pytest.approx(9.5879, abs=6e-5)
    got = theory.required_eb_n0_db("qpsk", np.array([1e-3, 1e-5]))
    assert got.shape == (2,)


def test_errors_carry_the_cpp_message():
    assert theory.has_reference("16qam") and not theory.has_reference("17qam")
    with pytest.raises(ValueError, match="modulation = '17qam' is not allowed"):
        theory.ber_for("17qam", 4.0)
    with pytest.raises(qs.ConfigError, match="order"):
        theory.ber_square_qam(8, 4.0)
