"""qamsight core: version, exception types, dB helpers and the counter-based random stream."""
import numpy as np
import pytest
from scipy import stats

import qamsight as qs


def test_version_matches_the_cli(cli):
    assert qs.version() == qs.__version__
    # an MPI build of the program adds "(MPI)"
    assert cli.run("--version").stdout.split()[:2] == ["qamsight", qs.version()]


def test_exception_types_are_value_errors_with_the_cpp_message():
    assert issubclass(qs.ConfigError, ValueError) and issubclass(qs.InputError, ValueError)
    with pytest.raises(qs.ConfigError) as info:
        qs.Constellation.from_name("17qam")
    # The C++ format, core.hpp: "<parameter> = <value> is not allowed; allowed: <allowed>".
    assert str(info.value).startswith("modulation = '17qam' is not allowed; allowed: bpsk, qpsk")
    assert info.value.parameter == "modulation" and info.value.value == "'17qam'"
    assert "1024qam" in info.value.allowed


def test_db_helpers_vectorised():
    # Definition of the decibel for power ratios.
    x = np.array([-10.0, 0.0, 3.0, 20.0])
    np.testing.assert_allclose(qs.db_to_linear(x), 10 ** (x / 10), rtol=1e-15)
    np.testing.assert_allclose(qs.linear_to_db(10 ** (x / 10)), x, atol=1e-12)
    assert isinstance(qs.db_to_linear(10.0), float) and qs.db_to_linear(10.0) == pytest.approx(10.0)


def test_philox_known_answers():
    # Random123 kat_vectors, philox4x32 with 10 rounds (from memory; the same vectors are
    # checked in tests/cpp/test_core.cpp).
    assert qs.philox4x32([0, 0, 0, 0], [0, 0]) == [0x6627E8D5, 0xE169C58D, 0xBC57AC4C, 0x9B00DBD8]
    ones = 0xFFFFFFFF
    assert qs.philox4x32([ones] * 4, [ones] * 2) == [0x408F276D, 0x41C83B0E, 0xA20BC7C6, 0x6D5451FD]


def test_random_stream_is_a_pure_function_of_its_key():
    a = qs.RandomStream(7, 3, qs.Substream.awgn).fill_gaussian(1000)
    b = qs.RandomStream(7, 3, qs.Substream.awgn).fill_gaussian(1000)
    c = qs.RandomStream(7, 3, qs.Substream.payload).fill_gaussian(1000)
    assert a.dtype == np.float32 and np.array_equal(a, b) and not np.array_equal(a, c)
    # An integer substream is the same as the enum's value (core.hpp: awgn = 2).
    assert np.array_equal(qs.RandomStream(7, 3, 2).fill_gaussian(1000), a)


def test_gaussian_fill_moments_within_999_intervals():
    # Statistical check, fixed seed; each bound is a 99.9% interval (false-alarm rate 0.1%
    # per bound for a correct generator): the mean by the normal law, the variance by the
    # chi-square law of the sample variance (n - 1) s^2 ~ chi2(n - 1).
    n = 400_000
    x = qs.RandomStream(11, 0, qs.Substream.user).fill_gaussian(n, dtype=np.float64)
    assert x.dtype == np.float64
    z = stats.norm.ppf(0.9995)
    assert abs(x.mean()) < z / np.sqrt(n)
    lo, hi = stats.chi2.ppf([0.0005, 0.9995], n - 1) / (n - 1)
    assert lo < x.var(ddof=1) < hi


def test_complex_gaussian_variance_and_fill_in_place():
    n = 200_000
    out = np.empty(n, np.complex64)
    address = out.__array_interface__["data"][0]
    got = qs.RandomStream(5, 1, qs.Substream.awgn).fill_complex_gaussian(out, 0.5)
    assert got is out and out.__array_interface__["data"][0] == address
    # Total variance 0.5: 2 |x|^2 / 0.5 ~ chi2(2) per sample, so sum ~ chi2(2n) (99.9% interval).
    s = 2 * np.sum(np.abs(out.astype(np.complex128)) ** 2) / 0.5
    lo, hi = stats.chi2.ppf([0.0005, 0.9995], 2 * n)
    assert lo < s < hi


def test_bits_labels_and_uniforms_ranges():
    rs = qs.RandomStream(1, 2, qs.Substream.payload)
    bits = rs.fill_bits(100_000)
    assert bits.dtype == np.uint8 and set(np.unique(bits)) <= {0, 1}
    # Binomial 99.9% interval for the number of ones (normal approximation, n large).
    assert abs(bits.sum() - 50_000) < stats.norm.ppf(0.9995) * np.sqrt(25_000)
    labels = rs.fill_labels(10_000, 6)
    assert labels.dtype == np.uint32 and labels.max() < 64
    packed = rs.fill_packed_labels(10_000, 6)
    assert packed.dtype == np.uint32 and packed.max() < 64
    # Pearson chi-square of the 64 labels against scipy's 99.9% quantile (63 degrees of freedom).
    counts = np.bincount(packed, minlength=64)
    assert ((counts - 10_000 / 64) ** 2 / (10_000 / 64)).sum() < stats.chi2.ppf(0.999, 63)
    u = rs.fill_uniform(10_000)
    assert u.dtype == np.float32 and u.min() >= 0.0 and u.max() < 1.0
    with pytest.raises(ValueError, match="bits = 33"):
        rs.fill_labels(4, 33)
    with pytest.raises(ValueError, match="bits = 0"):
        rs.fill_packed_labels(4, 0)


def test_fill_checks_out_arrays():
    rs = qs.RandomStream(1, 2, qs.Substream.payload)
    with pytest.raises(TypeError, match="complex64"):
        rs.fill_complex_gaussian(np.empty(8, np.complex128))
    with pytest.raises(TypeError, match="C-contiguous"):
        rs.fill_bits(np.empty(16, np.uint8)[::2])
    with pytest.raises(ValueError, match="size_or_out"):
        rs.fill_bits(-1)


def test_seek_block_gives_random_access():
    a = qs.RandomStream(3, 4, qs.Substream.user)
    blocks = [a.next_block() for _ in range(5)]
    b = qs.RandomStream(3, 4, qs.Substream.user)
    b.seek_block(3)
    assert b.block_index == 3 and b.next_block() == blocks[3]


def test_box_muller_f32_matches_the_double_formula_in_numpy():
    # Box-Muller on u = (x + 1/2) 2^-64 with x = (a0 << 32) | a1 and t = (b0 >> 8) / 2^24 turns,
    # evaluated in float64 NumPy; the float32 pair must agree to a few float ulps of the radius.
    rng = np.random.default_rng(7)
    words = rng.integers(0, 2**32, size=(2000, 3), dtype=np.uint64)
    words[:20, 0] = 0  # tail: x < 2^32, radius above 6.66 sigma
    words[:5, 1] = rng.integers(0, 1000, size=5)  # radius near 9.4 sigma
    for a0, a1, b0 in words.tolist():
        g = np.array(qs.box_muller_f32(a0, a1, b0, 0))
        u = (float(a0) * 2.0**32 + float(a1) + 0.5) * 2.0**-64
        r = np.sqrt(-2.0 * np.log(u))
        theta = 2.0 * np.pi * (b0 >> 8) * 2.0**-24
        ref = r * np.array([np.cos(theta), np.sin(theta)])
        # below radius 1 the float u (spacing 2^-24 just below 1) leaves a grain of r^2 = -2 ln u
        assert abs(g @ g - r * r) <= 6.0 * 2.0**-23 * max(r * r, 1.0), (a0, a1, b0)
        if r >= 1.0:
            assert np.max(np.abs(g - ref)) <= 4.0 * r * 2.0**-23, (a0, a1, b0)
    # the double generator differs in its arithmetic, not in its distribution
    assert qs.box_muller_f32(0, 0, 0, 0)[0] == pytest.approx(np.sqrt(130.0 * np.log(2.0)), rel=1e-6)
