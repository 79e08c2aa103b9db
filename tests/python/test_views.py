"""qamsight views bindings: constellation density against numpy.histogram2d, eye weights."""
import numpy as np
import pytest

import qamsight as qs

pytestmark = pytest.mark.skipif("views" not in qs._core._parts, reason="views bindings not built")


def test_constellation_density_equals_histogram2d():
    rs = qs.RandomStream(1, 0, qs.Substream.awgn)
    y = qs.Constellation.from_name("16qam").map_labels(rs.fill_labels(20_000, 4)) + rs.fill_complex_gaussian(
        20_000, 0.02)
    d = qs.ConstellationDensity(qs.ConstellationDensityConfig(bins=64, extent=1.5))
    d.add(y)
    counts = d.counts()
    assert counts.shape == (64, 64) and counts.dtype == np.uint64 and not counts.flags.writeable
    # Row = quadrature bin, column = in-phase bin, half-open cells over [-1.5, 1.5).
    ref, _, _ = np.histogram2d(y.imag, y.real, bins=64, range=[[-1.5, 1.5], [-1.5, 1.5]])
    inside = (np.abs(y.real) < 1.5) & (np.abs(y.imag) < 1.5)
    assert d.inside == inside.sum() and d.outside == len(y) - inside.sum()
    assert np.abs(counts.astype(np.int64) - ref.astype(np.int64)).sum() <= 2  # float edge rounding


def test_eye_weights_add_up():
    # views.hpp: each column of each trace adds exactly 1, so cells plus outside = traces x time_bins.
    x = qs.RandomStream(2, 0, qs.Substream.awgn).fill_complex_gaussian(8000, 0.5)
    eye = qs.EyeDiagram(qs.EyeConfig(samples_per_symbol=8.0, time_bins=64, amplitude_bins=32))
    eye.add(x)
    for comp in (qs.EyeComponent.in_phase, qs.EyeComponent.quadrature):
        h = eye.histogram(comp)
        assert h.shape == (32, 64)
        assert h.sum() + eye.outside(comp) == pytest.approx(eye.traces * 64, rel=1e-9)
