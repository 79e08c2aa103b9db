"""End-to-end tests of `qamsight sweep`, `theory` and `check`."""
import json
import math
import os
import xml.etree.ElementTree as ET

import pytest
from scipy import special, stats

POINT_KEYS = {"modulation", "eb_n0_db", "es_n0_db", "bits", "bit_errors", "ber", "ber_low", "ber_high", "symbols",
              "symbol_errors", "ser", "ber_theory", "ser_theory", "evm_rms_pct"}


def test_sweep_json_records_points_seed_rule_and_version(cli):
    doc, _ = cli.sweep_json("--mod", "qpsk,16qam", "--ebn0", "4,8", "--min-errors", "50", "--max-bits", "1e6",
                            "--seed", "17")
    assert doc["seed"] == 17
    assert doc["stop_rule"]["min_errors"] == 50 and doc["stop_rule"]["max_bits"] == 1000000
    assert doc["version"] and doc["program"] == "qamsight"
    assert len(doc["points"]) == 4
    for p in doc["points"]:
        assert POINT_KEYS <= set(p)
        assert p["ber_low"] <= p["ber"] <= p["ber_high"]
    # QPSK theory at Eb/N0 = 4 dB: Q(sqrt(2 Eb/N0)) = erfc(sqrt(Eb/N0)) / 2 (scipy.special).
    qpsk4 = doc["points"][0]
    assert qpsk4["ber_theory"] == pytest.approx(0.5 * special.erfc((10 ** 0.4) ** 0.5), rel=1e-9)


def test_counts_identical_for_one_and_two_threads(cli):
    a, _ = cli.sweep_json("--mod", "64qam", "--ebn0", "10,14", "--threads", "1", "--max-bits", "3e6", name="a.json")
    b, _ = cli.sweep_json("--mod", "64qam", "--ebn0", "10,14", "--threads", "2", "--max-bits", "3e6", name="b.json")
    keys = ["bits", "bit_errors", "symbols", "symbol_errors", "frames", "frame_errors", "evm_rms_pct"]
    assert [[p[k] for k in keys] for p in a["points"]] == [[p[k] for k in keys] for p in b["points"]]


def test_full_sweep_qpsk_to_1024qam_inside_intervals_around_theory(cli):
    # Each point's 99% Holm-corrected exact interval must contain exact theory (the gate).
    _, path = cli.sweep_json("--mod", "qpsk,16qam,64qam,256qam,1024qam", "--ebn0-range", "4,20,4",
                             "--min-errors", "200", "--max-bits", "2e7", "--seed", "3")
    res = cli.run("check", path, check=0)
    assert "PASS" in res.stdout


def test_check_catches_half_db_degradation_against_theory_and_baseline(cli):
    grid = ["--mod", "qpsk,16qam", "--ebn0", "4,5,6,7,8,9,10"]
    _, good = cli.sweep_json(*grid, "--seed", "11", name="good.json")
    _, bad = cli.sweep_json(*grid, "--seed", "12", "--impl-loss-db", "0.5", name="bad.json")
    res = cli.run("check", bad, "--junit", os.path.join(cli.tmp, "j.xml"), check=1)
    assert "FAIL" in res.stdout
    suite = ET.parse(os.path.join(cli.tmp, "j.xml")).getroot()
    assert int(suite.get("failures")) >= 1
    cli.run("check", bad, "--baseline", good, check=1)
    _, good2 = cli.sweep_json(*grid, "--seed", "13", name="good2.json")
    cli.run("check", good2, "--baseline", good, check=0)


def test_stopping_rule_upper_bound_at_high_snr(cli):
    doc, _ = cli.sweep_json("--mod", "qpsk", "--ebn0", "25", "--max-bits", "1e5")
    p = doc["points"][0]
    assert p["bit_errors"] == 0 and p["stop_reason"] == "max_bits"
    # Zero errors in n bits: exact upper limit 1 - (alpha/2)^(1/n) (scipy.stats.beta.ppf).
    assert p["ber_high"] == pytest.approx(stats.beta.ppf(0.975, 1, p["bits"]), rel=1e-8)


def test_outputs_csv_svg_and_table(cli):
    csv, svg = os.path.join(cli.tmp, "t.csv"), os.path.join(cli.tmp, "t.svg")
    res = cli.run("sweep", "--mod", "16qam", "--esn0", "10,14", "--max-bits", "1e6", "--csv", csv, "--svg", svg,
                  check=0)
    assert "16qam" in res.stdout and "BER" in res.stdout
    lines = open(csv).read().strip().splitlines()
    assert lines[0].startswith("modulation,eb_n0_db,es_n0_db,bits,bit_errors,ber")
    assert len(lines) == 3
    root = ET.parse(svg).getroot()
    assert root.tag.endswith("svg")
    text = open(svg).read()
    assert "16-QAM" in text and "theory" in text


def test_progress_line_on_request(cli):
    res = cli.run("sweep", "--mod", "qpsk", "--ebn0", "2", "--progress", "--quiet", check=0)
    assert "[1/1] qpsk" in res.stderr and "errors" in res.stderr


def test_theory_command_required_snr(cli):
    res = cli.run("theory", "--mod", "qpsk,16qam", "--target-ber", "1e-5", check=0)
    # QPSK reaches BER 1e-5 at Eb/N0 = 9.5879 dB (exact, REFERENCES 1.6; the textbook "9.6 dB"
    # figure is from memory); 16-QAM at 13.4345 dB (REFERENCES 1.5, computed with mpmath).
    rows = {ln.split()[0]: float(ln.split()[2]) for ln in res.stdout.splitlines() if "1.0e-05" in ln}
    assert rows["qpsk"] == pytest.approx(9.5879, abs=6e-4)
    assert rows["16qam"] == pytest.approx(13.4345, abs=6e-4)


BAD = [
    (["sweep", "--mod", "17qam", "--ebn0", "4"], "--mod"),
    (["sweep", "--mod", "qpsk", "--ebn0", "nan"], "--ebn0"),
    (["sweep", "--mod", "qpsk", "--ebn0", "500"], "--ebn0"),
    (["sweep", "--mod", "qpsk", "--ebn0", "4", "--min-errors", "0"], "--min-errors"),
    (["sweep", "--mod", "qpsk", "--ebn0", "4", "--max-bits", "-5"], "--max-bits"),
    (["sweep", "--mod", "qpsk", "--ebn0", "4", "--max-bits", "1.5"], "--max-bits"),
    (["sweep", "--mod", "qpsk", "--ebn0", "4", "--esn0", "4"], "--esn0"),
    (["sweep", "--mod", "qpsk"], "--ebn0"),
    (["sweep", "--mod", "qpsk", "--ebn0-range", "10,0,1"], "--ebn0-range"),
    (["sweep", "--mod", "qpsk", "--ebn0", "4", "--confidence", "1.5"], "--confidence"),
    (["sweep", "--mod", "qpsk", "--ebn0", "4", "--frame-symbols", "3"], "--frame-symbols"),
    (["sweep", "--mod", "qpsk", "--ebn0", "4", "--bogus"], "--bogus"),
    (["check", "/nonexistent/base.json"], "nonexistent"),
    (["theory", "--target-ber", "0"], "--target-ber"),
]


@pytest.mark.parametrize("args,needle", BAD, ids=[" ".join(a) for a, _ in BAD])
def test_bad_input_exits_2_with_one_line_naming_the_parameter(cli, args, needle):
    res = cli.run(*args)
    assert res.returncode == 2, res.stderr
    msg = res.stderr.strip()
    assert len(msg.splitlines()) == 1, msg
    assert needle in msg
    assert res.stdout == ""


def test_check_rejects_bad_baselines(cli):
    _, good = cli.sweep_json("--mod", "qpsk", "--ebn0", "4", "--max-bits", "1e5")
    bad = os.path.join(cli.tmp, "bad.json")
    for content, needle in [("{not json", "not valid JSON"), ('{"points": 3}', "'points'"),
                            ('{"points": [{"modulation": "qpsk"}]}', "eb_n0_db"),
                            (json.dumps({"points": [{"modulation": "qpsk", "eb_n0_db": 4, "es_n0_db": 7, "bits": 10,
                                                     "bit_errors": 11, "symbols": 5, "symbol_errors": 1}]}),
                             "bit_errors")]:
        open(bad, "w").write(content)
        res = cli.run("check", good, "--baseline", bad)
        assert res.returncode == 2 and needle in res.stderr, res.stderr


def test_oversampled_sweep_follows_theory_and_reports_isi_loss(cli):
    doc, path = cli.sweep_json("--mod", "qpsk,16qam", "--ebn0", "4,8", "--sps", "4", "--rolloff", "0.25",
                               "--span", "24", "--min-errors", "200", "--seed", "5")
    assert doc["link"]["samples_per_symbol"] == 4 and doc["link"]["span_symbols"] == 24
    cli.run("check", path, check=0)
    short, _ = cli.sweep_json("--mod", "16qam", "--esn0", "20", "--sps", "4", "--rolloff", "0.25", "--span", "4",
                              "--max-bits", "2e5", name="short.json")
    assert short["points"][0]["isi_loss_db"] > 0.05


def test_impairments_are_recorded_in_the_json(cli, tmp_path):
    mask = tmp_path / "mask.csv"
    mask.write_text("# offset_hz,dbc_hz\n1e3,-80\n1e4,-90\n1e5,-110\n")
    doc, _ = cli.sweep_json("--mod", "16qam", "--esn0", "18", "--sps", "4", "--symbol-rate", "1e6",
                            "--phase-noise-mask", str(mask), "--cfo-hz", "50", "--iq-gain-db", "0.2",
                            "--iq-phase-deg", "1", "--amp", "rapp", "--input-backoff-db", "8", "--adc-bits", "10",
                            "--max-bits", "2e5")
    im = doc["link"]["impairments"]
    assert im["amplifier"] == "rapp" and im["input_backoff_db"] == 8 and im["adc_bits"] == 10
    assert im["cfo_hz"] == 50 and im["phase_tracker"] is True
    assert [p[0] for p in im["phase_noise_mask"]] == [1e3, 1e4, 1e5]


def test_soft_phase_detector_keeps_lock_at_low_es_n0(cli):
    # QPSK at Es/N0 3 dB with a tracked 20-degree rotation: the arg detector slips (measured BER
    # 0.14), the soft detector stays near the exact Gray BER Q(sqrt(Es/N0)) = 0.0789 (textbook;
    # Q from math.erfc), its loop jitter costing a few per cent at B_L T 0.01.
    common = ["--mod", "qpsk", "--esn0", "3", "--sps", "4", "--phase-deg", "20", "--max-bits", "1e6",
              "--min-errors", "1e9"]
    soft, _ = cli.sweep_json(*common, "--tracker-detector", "soft", name="soft.json")
    arg, _ = cli.sweep_json(*common, name="arg.json")
    assert soft["link"]["impairments"]["tracker_detector"] == "soft"
    assert "tracker_detector" not in arg["link"]["impairments"]  # the default is not echoed
    theory = 0.5 * math.erfc(math.sqrt(10 ** 0.3) / math.sqrt(2.0))
    assert soft["points"][0]["ber_theory"] == pytest.approx(theory, rel=1e-3)
    assert soft["points"][0]["ber"] < 1.1 * theory < 1.1 * arg["points"][0]["ber"] / 1.5


WAVEFORM_BAD = [
    (["--sps", "4", "--rolloff", "1.5"], "--rolloff"),
    (["--sps", "4", "--rolloff", "0"], "--rolloff"),
    (["--sps", "4", "--span", "2"], "--span"),
    (["--sps", "4", "--rolloff", "0.1", "--span", "6"], "--span"),
    (["--sps", "4", "--phase-noise-linewidth", "-1"], "--phase-noise-linewidth"),
    (["--sps", "4", "--input-backoff-db", "100", "--amp", "saleh"], "--input-backoff-db"),
    (["--sps", "4", "--adc-bits", "0"], "--adc-bits"),
    (["--sps", "4", "--amp", "tube"], "--amp"),
    (["--sps", "4", "--multipath", "0:1"], "--multipath"),
    (["--sps", "4", "--symbol-rate", "0", "--cfo-hz", "10"], "--symbol-rate"),
]


@pytest.mark.parametrize("extra,needle", WAVEFORM_BAD, ids=[" ".join(a) for a, _ in WAVEFORM_BAD])
def test_bad_waveform_options_exit_2(cli, extra, needle):
    res = cli.run("sweep", "--mod", "qpsk", "--ebn0", "4", *extra)
    assert res.returncode == 2, res.stdout + res.stderr
    assert len(res.stderr.strip().splitlines()) == 1 and needle in res.stderr, res.stderr


@pytest.mark.parametrize("content,needle", [("1e3,-80\n", "at least 2"),
                                           ("1e4,-80\n1e3,-90\n", "greater than the previous"),
                                           ("1e3,abc\n1e4,-90\n", "m.csv:1")])
def test_bad_phase_noise_masks_exit_2(cli, tmp_path, content, needle):
    mask = tmp_path / "m.csv"
    mask.write_text(content)
    res = cli.run("sweep", "--mod", "qpsk", "--ebn0", "4", "--sps", "4", "--phase-noise-mask", str(mask))
    assert res.returncode == 2
    assert "m.csv" in res.stderr or "mask" in res.stderr, res.stderr
    assert needle in res.stderr.lower(), res.stderr
