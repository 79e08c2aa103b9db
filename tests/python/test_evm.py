"""qamsight EVM bindings: measurement, limits of open standards, line-up budgets and simulation.

Statistical checks use fixed seeds; their tolerances are 99.9 % intervals (false-alarm rate
1e-3 per check at most) computed beside each check.
"""
import json
import math
import os

import numpy as np
import pytest

import qamsight as qs

pytestmark = pytest.mark.skipif("evm" not in qs._core._parts, reason="evm bindings not built")
needs_budget = pytest.mark.skipif("evm_budget" not in qs._core._parts, reason="evm budget bindings not built")

SRC = os.environ.get("QAMSIGHT_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))


def awgn_symbols(mod, es_n0_db, n, seed):
    c = qs.Constellation.from_name(mod)
    labels = np.random.default_rng(seed).integers(0, c.order, n).astype(np.uint32)
    s = c.map_labels(labels)
    noise = qs.RandomStream(seed, 0, qs.Substream.awgn).fill_complex_gaussian(n, 10 ** (-es_n0_db / 10))
    return c, s, s + noise


def test_data_aided_evm_in_awgn_is_one_over_root_snr():
    # evm.hpp / 3GPP TS 38.104 Annex B: data-aided RMS EVM of unit-energy symbols in AWGN is
    # sqrt(N0/Es). EVM^2 is a mean of N = 40000 exponential variables: relative standard
    # deviation 1/sqrt(N) = 0.5 %, so 99.9 % (3.3 sigma) is 1.65 % in EVM^2, 0.83 % in EVM;
    # the fitted gain takes one more complex degree of freedom (negligible at this N).
    c, s, r = awgn_symbols("16qam", 20.0, 40_000, 5)
    m = qs.measure_evm(r, s, c)
    assert m.symbols == 40_000 and m.data_aided
    assert m.rms_pct == pytest.approx(10.0, rel=0.0083 + 1e-3)
    assert m.mer_db == pytest.approx(20.0, abs=0.08)
    assert m.rms_db == pytest.approx(qs.evm_pct_to_db(m.rms_pct), abs=1e-12)
    assert qs.evm_pct_to_db(10.0) == pytest.approx(-20.0, abs=1e-12)
    np.testing.assert_allclose(qs.evm_db_to_pct(np.array([-20.0, 0.0])), [10.0, 100.0])


def test_measurement_views_do_not_copy_and_input_is_read_in_place():
    c, s, r = awgn_symbols("qpsk", 25.0, 2000, 6)
    m = qs.measure_evm(r, s, c)
    e1, e2 = m.error_vectors, m.error_vectors
    assert e1.__array_interface__["data"][0] == e2.__array_interface__["data"][0]
    assert not e1.flags.writeable and e1.dtype == np.complex64
    np.testing.assert_allclose(m.corrected - m.references, e1, atol=1e-6)


def test_fit_carrier_finds_a_frequency_and_gain():
    c, s, _ = awgn_symbols("qpsk", 60.0, 4096, 7)
    n = np.arange(len(s))
    g = 0.8 * np.exp(1j * 0.3)
    r = (g * np.exp(2j * np.pi * 0.0123 * n) * s).astype(np.complex64)
    fit = qs.fit_carrier(r, s, True)
    assert fit.frequency == pytest.approx(0.0123, abs=1e-7)
    assert fit.gain == pytest.approx(g, abs=1e-4)


def test_evm_errors_are_value_errors_naming_the_parameter():
    c, s, r = awgn_symbols("qpsk", 20.0, 100, 8)
    with pytest.raises(ValueError, match="max_frequency"):
        qs.fit_carrier(r, s, True, max_frequency=0.9)
    with pytest.raises(TypeError, match="complex64"):
        qs.measure_evm(np.array(["a", "b"]), s, c)


@needs_budget
def test_limits_of_3gpp_nr_and_user_limits():
    # 3GPP TS 38.104 Table 6.5.2.2-1 (NR BS EVM): QPSK 17.5 %, 16QAM 12.5 %, 64QAM 8 %, 256QAM 3.5 %.
    t = qs.evm_limit_table("3gpp-nr-bs")
    got = {r.modulation: r.limit_pct for r in t.rows}
    assert {k: got[k] for k in ("qpsk", "16qam", "64qam", "256qam")} == {
        "qpsk": 17.5, "16qam": 12.5, "64qam": 8.0, "256qam": 3.5}
    assert t.row("64qam").limit_db == pytest.approx(20 * math.log10(0.08), abs=1e-12)
    lim = qs.parse_evm_limit("-22 dB")
    assert lim.pct == pytest.approx(100 * 10 ** (-22 / 20), rel=1e-12)
    v = qs.evm_verdict(5.0, qs.parse_evm_limit("8%"), 1.0)
    assert v.margin_db == pytest.approx(20 * math.log10(8 / 5), abs=1e-12) and v.passed
    with pytest.raises(ValueError, match="limit"):
        qs.parse_evm_limit("8 apples")
    with pytest.raises(ValueError, match="limit table"):
        qs.evm_limit_table("no-such-table")
    assert isinstance(qs.ConfigError("a", "b", "c"), ValueError)


@needs_budget
def test_budget_of_noise_alone_and_of_iq_imbalance_alone():
    # Thermal noise alone: EVM = 1/sqrt(Es/N0) (evm_budget.hpp conventions).
    p = qs.predict_evm(qs.EvmLineup(modulation="16qam", snr_db=25.0))
    assert p.total_pct == pytest.approx(100 * 10 ** (-25 / 20), rel=1e-9)
    assert p.contributions[p.dominant].key == "awgn"
    # IQ imbalance alone: y = mu x + nu x*, EVM^2 = |nu/mu|^2 = (1 + g^2 - 2 g cos phi) /
    # (1 + g^2 + 2 g cos phi), the image-rejection ratio of a quadrature modulator with gain
    # ratio g and quadrature error phi (textbook IRR formula, e.g. Razavi, RF Microelectronics).
    gdb, phi = 0.5, 3.0
    g = 10 ** (gdb / 20)
    irr = (1 + g * g - 2 * g * math.cos(math.radians(phi))) / (1 + g * g + 2 * g * math.cos(math.radians(phi)))
    q = qs.predict_evm(qs.EvmLineup(modulation="64qam", iq_gain_db=gdb, iq_phase_deg=phi))
    assert q.contributions[q.dominant].key == "iq_imbalance"
    assert q.total_pct == pytest.approx(100 * math.sqrt(irr), rel=1e-3)


@needs_budget
def test_simulation_confirms_the_noise_prediction():
    # 8 blocks of 4096 symbols: EVM^2 from 32768 exponential terms, 99.9 % = 3.3/sqrt(32768)
    # = 1.8 % in EVM^2, 0.9 % in EVM.
    lineup = qs.EvmLineup(modulation="16qam", snr_db=22.0)
    sim = qs.simulate_evm(lineup, seed=3, frames=8)
    assert sim.frames == 8 and sim.symbols == 8 * 4096 and len(sim.frame_rms_pct) == 8
    assert sim.rms_pct == pytest.approx(100 * 10 ** (-22 / 20), rel=0.009 + 2e-3)


@needs_budget
def test_demo_lineup_file_and_its_requirement():
    f = qs.load_evm_lineup(os.path.join(SRC, "notebooks-free-examples", "demo_lineup.toml"))
    assert f.lineup.modulation == "64qam" and f.requirement.table == "3gpp-nr-bs"
    assert f.limit().pct == 8.0
    p = qs.predict_evm(f.lineup)
    assert math.isclose(sum(c.share for c in p.contributions), 1.0, rel_tol=1e-9)
    assert p.total_pct == pytest.approx(math.sqrt(sum(c.evm_pct ** 2 for c in p.contributions)), rel=1e-9)
    rep = qs.EvmBudgetReport(lineup=f.lineup, prediction=p, limit=f.limit())
    assert '"contributions"' in rep.to_json() and rep.to_svg().lstrip().startswith("<")


@needs_budget
def test_lineup_errors_name_file_and_key(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('modulation = "64qam"\nsymbol_rate_mbd = 5.0\n[adc]\nbits = 99\n')
    with pytest.raises(ValueError) as e:
        qs.load_evm_lineup(str(bad))
    assert "bad.toml" in str(e.value) and "bits" in str(e.value)
    with pytest.raises(ValueError, match="modulation"):
        qs.predict_evm(qs.EvmLineup(modulation="17qam", snr_db=20.0))
    with pytest.raises(AttributeError):
        qs.EvmLineup(no_such_field=1)


@needs_budget
def test_allowance_search_meets_the_limit():
    lineup = qs.EvmLineup(modulation="64qam", snr_db=30.0, iq_gain_db=0.1, iq_phase_deg=1.0)
    a = qs.solve_evm_allowance(lineup, qs.EvmAllowanceKind.iq_imbalance, 5.0, 1.0)
    assert a.found
    # At the solution the prediction sits on the target (limit less the margin).
    assert a.target_pct == pytest.approx(5.0 * 10 ** (-1 / 20), rel=1e-9)
    assert a.prediction.total_pct == pytest.approx(a.target_pct, rel=1e-3)


def _main_thread_keeps_running(fn):
    """Runs fn in a thread and counts this thread's loop iterations meanwhile; returns the
    elapsed time and the largest gap between iterations (a held GIL would stall this loop)."""
    import threading
    import time
    worker = threading.Thread(target=fn)
    start = time.perf_counter()
    worker.start()
    last, gap = time.perf_counter(), 0.0
    while worker.is_alive():
        now = time.perf_counter()
        gap = max(gap, now - last)
        last = now
    worker.join()
    return time.perf_counter() - start, gap


@needs_budget
def test_simulate_evm_releases_the_gil():
    lineup = qs.EvmLineup(modulation="16qam", snr_db=25.0, measurement_symbols=65536,
                          pulse=qs.PulseShapingConfig(4, 0.25, 12))
    out = {}
    elapsed, gap = _main_thread_keeps_running(lambda: out.update(s=qs.simulate_evm(lineup, frames=12)))
    assert out["s"].frames == 12
    assert elapsed > 0.2, "simulation too short to tell"
    assert gap < 0.25 * elapsed


@needs_budget
def test_demo_lineup_prediction_equals_the_cli_budget(cli, tmp_path):
    path = os.path.join(SRC, "notebooks-free-examples", "demo_lineup.toml")
    out = tmp_path / "budget.json"
    cli.run("evm", "budget", path, "--json", out)
    doc = json.load(open(out))
    p = qs.predict_evm(qs.load_evm_lineup(path).lineup)
    assert doc["total"]["evm_pct"] == p.total_pct
    assert doc["dominant"] == p.contributions[p.dominant].key
    assert [c["key"] for c in doc["contributions"]] == [c.key for c in p.contributions]
