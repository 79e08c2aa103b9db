"""qamsight modem bindings: constellations against independent NumPy constructions."""
import numpy as np
import pytest

import qamsight as qs


def gray(i):
    return i ^ (i >> 1)


def square_qam_reference(order):
    """Square M-QAM built from the rule of modem.hpp, independently of the library: per axis the
    level index i (0 = most negative amplitude) carries the Gray code gray(i); the in-phase
    level gives the high k/2 label bits. Unit average energy: levels +-1, +-3, ... have mean
    energy 2 (M - 1) / 3 per symbol (Proakis, Digital Communications, square QAM)."""
    L = int(round(np.sqrt(order)))
    half = int(np.log2(order)) // 2
    amp = 2 * np.arange(L) - (L - 1)
    pts = np.empty(order, complex)
    for ii in range(L):
        for iq in range(L):
            pts[(gray(ii) << half) | gray(iq)] = amp[ii] + 1j * amp[iq]
    return pts / np.sqrt(2 * (order - 1) / 3)


def test_builtin_names():
    assert qs.Constellation.builtin_names() == ["bpsk", "qpsk", "8psk", "16qam", "64qam", "256qam", "1024qam"]


@pytest.mark.parametrize("name,order", [("qpsk", 4), ("16qam", 16), ("64qam", 64), ("256qam", 256)])
def test_square_qam_points_follow_the_gray_rule(name, order):
    c = qs.Constellation.from_name(name)
    assert c.order == order and c.bits_per_symbol == int(np.log2(order))
    assert c.family == qs.ConstellationFamily.square_qam
    assert c.points.dtype == np.complex128 and c.points_f.dtype == np.complex64
    np.testing.assert_allclose(c.points, square_qam_reference(order), atol=1e-12)
    assert np.mean(np.abs(c.points) ** 2) == pytest.approx(1.0, abs=1e-12)
    assert c.average_energy() == pytest.approx(1.0, abs=1e-12)


def test_qpsk_and_bpsk_and_8psk_by_hand():
    d = 1 / np.sqrt(2)
    # QPSK label = (I bit, Q bit), bit 0 at the negative level.
    np.testing.assert_allclose(qs.Constellation.from_name("qpsk").points,
                               [-d - 1j * d, -d + 1j * d, d - 1j * d, d + 1j * d], atol=1e-15)
    np.testing.assert_allclose(qs.Constellation.bpsk().points, [-1, 1], atol=0)
    # M-PSK: label gray(i) at angle 2 pi i / M.
    ref = np.empty(8, complex)
    for i in range(8):
        ref[gray(i)] = np.exp(2j * np.pi * i / 8)
    np.testing.assert_allclose(qs.Constellation.from_name("8psk").points, ref, atol=1e-12)
    assert qs.Constellation.from_name("4qam").name == "qpsk"


def test_points_are_read_only_views():
    c = qs.Constellation.from_name("16qam")
    p = c.points
    assert not p.flags.writeable and not p.flags.owndata and p.base is not None
    with pytest.raises(ValueError):
        p[0] = 0
    # Two reads see the same C++ table (no copy per access).
    assert c.points.__array_interface__["data"][0] == p.__array_interface__["data"][0]


def test_mapping_labels_bits_and_slicing():
    c = qs.Constellation.from_name("64qam")
    labels = qs.RandomStream(1, 0, qs.Substream.payload).fill_labels(5000, 6)
    syms = c.map_labels(labels)
    assert syms.dtype == np.complex64
    np.testing.assert_array_equal(syms, c.points_f[labels])
    # MSB-first bits, computed independently with NumPy shifts.
    bits = ((labels[:, None] >> np.arange(5, -1, -1)) & 1).astype(np.uint8).ravel()
    np.testing.assert_array_equal(c.labels_to_bits(labels), bits)
    np.testing.assert_array_equal(c.bits_to_labels(bits), labels)
    np.testing.assert_array_equal(c.map_bits(bits), syms)
    np.testing.assert_array_equal(c.slice(syms), labels)


@pytest.mark.parametrize("name", ["bpsk", "qpsk", "8psk", "16qam", "64qam"])
def test_slicer_equals_brute_force_nearest_point(name):
    c = qs.Constellation.from_name(name)
    rs = qs.RandomStream(2, 0, qs.Substream.awgn)
    y = (c.map_labels(rs.fill_labels(4000, c.bits_per_symbol)) + rs.fill_complex_gaussian(4000, 0.2))
    nearest = np.argmin(np.abs(y[:, None] - c.points[None, :]), axis=1)
    np.testing.assert_array_equal(c.slice(y), nearest)
    assert c.slice_exhaustive(complex(y[0])) == nearest[0]
    np.testing.assert_array_equal(c.slice_points(y), c.points_f[nearest])


def test_elementwise_calls_keep_the_shape():
    c = qs.Constellation.from_name("qpsk")
    labels = np.arange(12, dtype=np.uint32).reshape(3, 4) % 4
    assert c.map_labels(labels).shape == (3, 4)
    assert c.slice(c.map_labels(labels)).shape == (3, 4)


def test_out_arrays_are_filled_in_place():
    c = qs.Constellation.from_name("16qam")
    labels = np.arange(16, dtype=np.uint32)
    out = np.zeros(16, np.complex64)
    address = out.__array_interface__["data"][0]
    got = c.map_labels(labels, out=out)
    assert got is out and out.__array_interface__["data"][0] == address
    np.testing.assert_array_equal(out, c.points_f)
    lab = np.zeros(16, np.uint32)
    assert c.slice(out, out=lab) is lab and np.array_equal(lab, labels)


def test_conversions_and_their_errors():
    c = qs.Constellation.from_name("16qam")
    # Acceptable kinds are converted (a copy): a list, int64 labels, complex128 samples.
    np.testing.assert_array_equal(c.map_labels([0, 1, 2]), c.points_f[:3])
    np.testing.assert_array_equal(c.map_labels(np.array([0, 1, 2], np.int64)), c.points_f[:3])
    np.testing.assert_array_equal(c.slice(c.points), np.arange(16))
    with pytest.raises(TypeError, match="labels: expected a uint32 array, got float64"):
        c.map_labels(np.array([0.0, 1.0]))
    with pytest.raises(TypeError, match="complex64"):
        c.map_labels(np.arange(4, dtype=np.uint32), out=np.zeros(4, np.complex128))
    with pytest.raises(ValueError, match=r"expected shape \(4,\)"):
        c.map_labels(np.arange(4, dtype=np.uint32), out=np.zeros(5, np.complex64))
    with pytest.raises(ValueError, match="not a multiple of bits_per_symbol"):
        c.map_bits(np.zeros(6, np.uint8))
    with pytest.raises(ValueError, match="one-dimensional"):
        c.map_bits(np.zeros((2, 4), np.uint8))
    with pytest.raises(TypeError, match="samples"):
        c.slice("abc")
    ro = np.zeros(16, np.complex64)
    ro.setflags(write=False)
    with pytest.raises(TypeError, match="read-only"):
        c.map_labels(np.arange(16, dtype=np.uint32), out=ro)


def test_custom_constellation_normalised_and_validated():
    pts = np.array([1 + 1j, -1 + 1j, -1 - 1j, 1 - 1j]) * 3
    c = qs.Constellation.custom("rotated", pts, [0, 1, 3, 2])
    assert c.family == qs.ConstellationFamily.custom
    assert np.mean(np.abs(c.points) ** 2) == pytest.approx(1.0)
    raw = qs.Constellation.custom("raw", pts, [0, 1, 3, 2], normalise=False)
    by_label = np.empty(4, complex)
    by_label[[0, 1, 3, 2]] = pts  # point i carries label labels[i]; points are indexed by label
    np.testing.assert_allclose(raw.points, by_label)
    with pytest.raises(qs.ConfigError, match="labels"):
        qs.Constellation.custom("bad", pts, [0, 1, 1, 2])
    with pytest.raises(ValueError, match="points"):
        qs.Constellation.custom("bad", pts[:3], [0, 1, 2])


def test_gray_helpers_vectorised():
    i = np.arange(64, dtype=np.uint32)
    np.testing.assert_array_equal(qs.gray_encode(i), i ^ (i >> 1))
    np.testing.assert_array_equal(qs.gray_decode(qs.gray_encode(i)), i)
    assert qs.gray_encode(5) == 7
