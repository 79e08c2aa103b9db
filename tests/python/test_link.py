"""qamsight link bindings against the textbook geometry and budget formulas in NumPy."""
import numpy as np
import pytest

import qamsight as qs

pytestmark = pytest.mark.skipif("link" not in qs._core._parts, reason="link bindings not built")

RE = 6378.137  # WGS-84 equatorial radius, km
GM = 398600.4418  # km^3/s^2 (WGS-84)
C = 299792458.0


def test_slant_range_law_of_cosines_vectorised():
    e = np.array([5.0, 30.0, 90.0])
    h = 550.0
    ref = np.sqrt((RE + h) ** 2 - (RE * np.cos(np.deg2rad(e))) ** 2) - RE * np.sin(np.deg2rad(e))
    np.testing.assert_allclose(qs.slant_range_km(e, h), ref, rtol=1e-12)
    assert qs.slant_range_km(90.0, h) == pytest.approx(h)


def test_free_space_loss_noise_and_budget_formulas():
    f, d = 12e9, 1.2e6
    assert qs.free_space_path_loss_db(f, d) == pytest.approx(20 * np.log10(4 * np.pi * d * f / C), rel=1e-12)
    assert qs.boltzmann_dbw_per_k_hz() == pytest.approx(10 * np.log10(1.380649e-23), abs=1e-10)
    assert qs.noise_temperature_from_figure_k(3.0) == pytest.approx(290 * (10 ** 0.3 - 1))
    cn0 = qs.carrier_to_noise_density_dbhz(40.0, 180.0, 10.0)
    assert cn0 == pytest.approx(40 - 180 + 10 - 10 * np.log10(1.380649e-23))
    assert qs.es_n0_db_from_c_n0(cn0, 1e6) == pytest.approx(cn0 - 60.0)


def test_orbit_and_doppler():
    assert qs.orbital_period_s(550.0) == pytest.approx(2 * np.pi * np.sqrt((RE + 550.0) ** 3 / GM), rel=1e-12)
    assert qs.doppler_shift_hz(2e9, -7000.0) == pytest.approx(2e9 * 7000.0 / C)
    p = qs.CircularPass(550.0)
    assert p.at_time(0.0).elevation_deg == pytest.approx(90.0)
    with pytest.raises(qs.ConfigError):
        qs.slant_range_km(95.0, 550.0)


def test_demo_link_pass_and_modcods_equal_the_cli(cli, tmp_path):
    import json
    import os
    src = os.environ.get("QAMSIGHT_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
    path = os.path.join(src, "notebooks-free-examples", "demo_link.toml")
    out = tmp_path / "link.json"
    cli.run("link", path, "--json", out)
    doc = json.load(open(out))
    scenario = qs.load_link_scenario(path)
    analysis = qs.analyse_link(scenario)
    rows = scenario.modcods.rows
    assert len(doc["pass"]) == len(analysis.pass_)
    for q, p in zip(doc["pass"], analysis.pass_):
        assert q["elevation_deg"] == p.budget.elevation_deg
        assert q["es_n0_db"] == (p.budget.es_n0_db if np.isfinite(p.budget.es_n0_db) else None)
        best = p.choice.best
        assert q["modcod"] == (rows[best].name if best is not None else None)
        # select_modcod on the same Es/N0 makes the same choice (the CLI's and analyse_link's rule).
        again = qs.select_modcod(scenario.modcods, p.budget.es_n0_db, scenario.symbol_rate_bd,
                                 scenario.implementation_margin_db, scenario.required_margin_db)
        assert again.best == best
