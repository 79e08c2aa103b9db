"""The regression gate from Python: same verdicts as `qamsight check`, Holm against a reference."""
import math
import os
import xml.etree.ElementTree as ET

import numpy as np
import pytest

import qamsight as qs

GRID = dict(modulations=["qpsk", "16qam"], eb_n0_db=[4, 6, 8, 10], min_errors=200, max_bits=5e6)


def test_good_sweep_passes_and_a_degraded_one_fails(cli, tmp_path):
    good = qs.sweep(seed=11, **GRID)
    rep = qs.check_against_theory(good)
    assert rep.kind == "theory" and rep.passed and rep.pass_ and bool(rep)
    assert len(rep.rows) == 8 and all(r.tested for r in rep.rows)
    assert {l.modulation for l in rep.losses} == {"qpsk", "16qam"}
    bad = qs.sweep(seed=12, impl_loss_db=1.0, **GRID)
    rep_bad = qs.check_against_theory(bad)
    assert not rep_bad.passed and any(r.failed for r in rep_bad.rows)
    suite = ET.fromstring(rep_bad.junit_xml().split("?>", 1)[-1])
    assert int(suite.get("failures")) == sum(r.failed for r in rep_bad.rows)
    assert rep_bad.junit_xml() == qs.gate_junit_xml(rep_bad)
    # The CLI's verdicts on the same results (exit 0 pass, 1 regression).
    gpath, bpath = tmp_path / "good.json", tmp_path / "bad.json"
    gpath.write_text(good.to_json())
    bpath.write_text(bad.to_json())
    cli.run("check", gpath, check=0)
    cli.run("check", bpath, check=1)
    base = qs.check_against_baseline(bad, qs.load_sweep_json(str(gpath)))
    assert base.kind == "baseline" and not base.passed
    cli.run("check", bpath, "--baseline", gpath, check=1)
    # 1 dB of extra noise shows as about 1 dB of implementation loss at the target BER.
    loss = [l for l in qs.check_against_theory(bad, target_ber=1e-3).losses if l.modulation == "qpsk"][0]
    assert loss.available and loss.loss_db == pytest.approx(1.0, abs=0.35)


def test_gate_settings_are_validated():
    res = qs.sweep("qpsk", eb_n0_db=5, max_bits=1e5)
    with pytest.raises(qs.ConfigError, match="confidence"):
        qs.check_against_theory(res, confidence=1.0)
    with pytest.raises(qs.ConfigError, match="target_ber"):
        qs.check_against_theory(res, target_ber=0.7)


def holm_reference(p, alpha):
    # S. Holm, Scand. J. Statist. 6 (1979): sort ascending and reject H_(i) while
    # p_(i) <= alpha / (m - i + 1); stop at the first p-value above its threshold.
    order = np.argsort(p, kind="stable")
    reject = [False] * len(p)
    for rank, idx in enumerate(order):
        if p[idx] <= alpha / (len(p) - rank):
            reject[idx] = True
        else:
            break
    return reject


@pytest.mark.parametrize("p", [[0.001, 0.04, 0.03, 0.5], [0.2, 0.001, 0.0125, 0.013], [0.0125, 0.5, 0.6, 0.7],
                               [0.9], []])
def test_holm_against_the_published_procedure(p):
    assert qs.holm_reject(p, 0.05) == holm_reference(p, 0.05)


def test_eb_n0_at_ber_interpolates_log_linearly():
    res = qs.sweep("qpsk", eb_n0_db=[4.0, 6.0], min_errors=500, seed=4)
    a, b = res.points
    target = math.sqrt(a.ber * b.ber)  # the geometric mean lies half way in log BER
    assert qs.eb_n0_at_ber(res.points, target) == pytest.approx(5.0, abs=1e-9)
    assert math.isnan(qs.eb_n0_at_ber(res.points, 1e-9))
