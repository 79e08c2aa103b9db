"""qamsight.sweep: the same points and counts as `qamsight sweep`, arguments, GIL release."""
import math
import signal
import threading
import time

import numpy as np
import pytest
from scipy import stats

import qamsight as qs
from conftest import counts_of


def test_counts_equal_the_cli_for_the_same_seed(cli):
    doc, _ = cli.sweep_json("--mod", "qpsk,16qam", "--ebn0", "4,8", "--min-errors", "50", "--max-bits", "1e6",
                            "--seed", "17")
    res = qs.sweep(["qpsk", "16qam"], eb_n0_db=[4, 8], min_errors=50, max_bits=1e6, seed=17)
    assert counts_of(res.to_dict()["points"]) == counts_of(doc["points"])
    assert counts_of(res.points) == counts_of(doc["points"])
    mine = res.to_dict()
    for key in ("program", "seed", "confidence", "snr_kind", "stop_rule", "link", "complete"):
        assert mine[key] == doc[key], key
    for p, q in zip(mine["points"], doc["points"]):
        for key in ("ber", "ber_low", "ber_high", "ser", "fer", "ber_theory", "evm_rms_pct", "mer_db"):
            assert p[key] == q[key], key


def test_points_of_the_documented_call_equal_the_cli_json(cli):
    # The call of the package docstring: keyword names are the CLI's options.
    doc, _ = cli.sweep_json("--mod", "16qam", "--ebn0", "9", "--min-errors", "200", "--seed", "21")
    res = qs.sweep(modulations=["16qam"], eb_n0_db=[9.0], min_errors=200, seed=21)
    mine = res.to_dict()["points"]
    assert len(mine) == len(doc["points"]) == 1
    # Every field but the wall time is identical (counts, rates, intervals, theory, EVM sums).
    for p, q in zip(mine, doc["points"]):
        assert set(p) == set(q)
        assert {k: v for k, v in p.items() if k != "seconds"} == {k: v for k, v in q.items() if k != "seconds"}
    assert mine[0]["bit_errors"] >= 200


def test_es_n0_frame_symbols_impl_loss_and_relative_width_match_the_cli(cli):
    args = ["--mod", "64qam", "--esn0", "16,18", "--frame-symbols", "1000", "--impl-loss-db", "0.5",
            "--max-rel-width", "0.3", "--confidence", "0.9", "--seed", "5", "--max-bits", "2e6"]
    doc, _ = cli.sweep_json(*args)
    res = qs.sweep("64qam", es_n0_db=[16, 18], frame_symbols=1000, impl_loss_db=0.5, max_rel_width=0.3,
                   confidence=0.9, seed=5, max_bits=2_000_000)
    assert counts_of(res.points) == counts_of(doc["points"])
    assert res.to_dict()["snr_kind"] == "es_n0" and res.config.snr_kind == qs.SnrKind.es_n0


def test_defaults_are_the_cli_defaults(cli):
    doc, _ = cli.sweep_json("--ebn0", "7")
    res = qs.sweep(eb_n0_db=7)
    assert counts_of(res.points) == counts_of(doc["points"])
    assert res.to_dict()["stop_rule"] == doc["stop_rule"] and res.config.seed == 1


def test_counts_do_not_depend_on_threads():
    kw = dict(eb_n0_db=[10, 14], max_bits=3e6, seed=8)
    a = qs.sweep("64qam", threads=1, **kw)
    b = qs.sweep("64qam", threads=2, **kw)
    assert counts_of(a.points) == counts_of(b.points)
    assert [p.evm_rms_pct for p in a.points] == [p.evm_rms_pct for p in b.points]


def test_point_objects_and_the_zero_error_upper_bound():
    res = qs.sweep("qpsk", eb_n0_db=[2.0, 25.0], max_bits=1e5, seed=2)
    assert len(res) == 2 and res.complete
    hi = res.points[1]
    assert hi.bit_errors == 0 and hi.stop_reason == "max_bits" and hi.ber == 0.0
    # Zero errors in n bits: exact upper limit from scipy.stats.beta.ppf(0.975, 1, n).
    assert hi.ber_high == pytest.approx(stats.beta.ppf(0.975, 1, hi.bits), rel=1e-8)
    lo = res.points[0]
    assert lo.ber_low <= lo.ber <= lo.ber_high and lo.modulation == "qpsk" and lo.spec.eb_n0_db == 2.0
    assert lo.counts.bits == lo.bits and lo.symbols == lo.bits // 2
    assert lo.ber_theory == pytest.approx(qs.theory.ber_for("qpsk", 2.0))
    assert lo.evm_rms_pct == pytest.approx(lo.evm.rms_percent())


BAD = [
    (dict(modulations="17qam", eb_n0_db=4), qs.ConfigError, "modulation = '17qam'"),
    (dict(eb_n0_db=math.nan), qs.ConfigError, "eb_n0_db = nan"),
    (dict(eb_n0_db=500), qs.ConfigError, "eb_n0_db = 500"),
    (dict(es_n0_db=[]), qs.ConfigError, "es_n0_db"),
    (dict(eb_n0_db=4, min_errors=0), qs.ConfigError, "min_errors = 0"),
    (dict(eb_n0_db=4, max_bits=1.5), qs.ConfigError, "max_bits = 1.5"),
    (dict(eb_n0_db=4, max_bits=-5), qs.ConfigError, "max_bits = -5"),
    (dict(eb_n0_db=4, max_rel_width=-1), qs.ConfigError, "max_rel_width = -1"),
    (dict(eb_n0_db=4, confidence=1.5), qs.ConfigError, "confidence = 1.5"),
    (dict(eb_n0_db=4, frame_symbols=3), qs.ConfigError, "frame_symbols = 3"),
    (dict(eb_n0_db=4, threads=5000), qs.ConfigError, "threads = 5000"),
    (dict(eb_n0_db=4, impl_loss_db=-1), qs.ConfigError, "impl_loss_db = -1"),
    (dict(eb_n0_db=4, stage_output="soft"), qs.ConfigError, "stage_output = 'soft'"),
    (dict(), ValueError, "no SNR given"),
    (dict(eb_n0_db=4, es_n0_db=4), ValueError, "contradictory"),
    (dict(eb_n0_db="x"), TypeError, "eb_n0_db"),
    (dict(eb_n0_db=4, max_bits="many"), TypeError, "max_bits"),
]


@pytest.mark.parametrize("kwargs,exc,needle", BAD, ids=[str(k) for k, _, _ in BAD])
def test_bad_arguments_name_the_keyword(kwargs, exc, needle):
    with pytest.raises(exc) as info:
        qs.sweep(**kwargs)
    assert needle in str(info.value)


def test_sweep_config_and_run_sweep():
    c = qs.SweepConfig()
    c.modulations = ["bpsk"]
    c.snr_db = [3.0]
    c.stop.max_bits = 200_000
    c.seed = 4
    res = qs.run_sweep(c)
    ref = qs.sweep("bpsk", eb_n0_db=3.0, max_bits=200_000, seed=4)
    assert counts_of(res.points) == counts_of(ref.points)
    pts = qs.sweep_points(c)
    assert pts[0].modulation == "bpsk"
    assert pts[0].stream_key == qs.point_stream_key("bpsk", qs.SnrKind.eb_n0, 3.0)
    assert [qs.batch_frames(b) for b in range(9)] == [4, 8, 16, 32, 64, 128, 256, 256, 256]
    assert qs.frame_stream(7, 3) == (7 << 32) | 3
    c.confidence = 2.0
    with pytest.raises(qs.ConfigError, match="confidence"):
        qs.validate(c)


def test_sweep_releases_the_gil():
    # A stage-free sweep runs in a second thread while this thread keeps counting; with the
    # GIL held for the whole sweep, this thread would stall for the sweep's duration.
    res = {}
    worker = threading.Thread(target=lambda: res.update(r=qs.sweep("qpsk", eb_n0_db=12.0, max_bits=6e7,
                                                                   min_errors=10**9, threads=1, seed=3)))
    start = time.perf_counter()
    worker.start()
    last, gaps, ticks = time.perf_counter(), [], 0
    while worker.is_alive():
        now = time.perf_counter()
        gaps.append(now - last)
        last = now
        ticks += 1
    worker.join()
    elapsed = time.perf_counter() - start
    assert res["r"].points[0].bits >= 6e7
    assert elapsed > 0.3, "sweep too short to tell"
    # Python switches threads every 5 ms by default; allow generous scheduling noise.
    assert max(gaps) < 0.25 * elapsed and ticks > 100


def test_a_signal_handler_interrupts_a_sweep():
    # Ctrl-C works the same way: the sweep checks for Python signals at batch boundaries and
    # re-raises what the handler raised.
    class Stop(Exception):
        pass

    def handler(signum, frame):
        raise Stop()

    previous = signal.signal(signal.SIGALRM, handler)
    try:
        signal.setitimer(signal.ITIMER_REAL, 0.3)
        start = time.perf_counter()
        with pytest.raises(Stop):
            qs.sweep("qpsk", eb_n0_db=12.0, max_bits=1e10, min_errors=10**9, threads=1)
        assert time.perf_counter() - start < 10.0
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
