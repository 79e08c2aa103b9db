"""End-to-end tests of coded sweeps (`qamsight sweep --code`) and `qamsight modcod`."""
import csv
import json
import math
import os
import re

import pytest

SOURCE = os.environ.get("QAMSIGHT_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
DEMO = os.path.join(SOURCE, "notebooks-free-examples", "demo_link.toml")

# The built-in codes (fec.hpp): K=7 convolutional at four rates, IEEE 802.11n/ac LDPC at three
# lengths and four rates, and alist files.
CODES = [f"conv-k7-r{r}" for r in ("1/2", "2/3", "3/4", "5/6")] + \
        [f"ldpc-{n}-r{r}" for n in (648, 1296, 1944) for r in ("1/2", "2/3", "3/4", "5/6")] + ["ldpc-alist:PATH"]


def test_sweep_help_lists_every_code(cli):
    out = cli.run("sweep", "--help", check=0).stdout
    flat = " ".join(out.split())
    for name in CODES:
        assert name in flat, name
    assert "--llr" in out and "--min-frame-errors" in out


def test_unknown_code_exits_2_naming_the_option_and_the_names(cli):
    res = cli.run("sweep", "--ebn0", "4", "--code", "conv-k7-r7/8")
    assert res.returncode == 2
    line = res.stderr.strip()
    assert "--code" in line and "conv-k7-r7/8" in line
    assert "conv-k7-r1/2" in line and "ldpc-1944-r5/6" in line


def test_eb_n0_bookkeeping_and_point_keys(cli):
    # Eb counts information bits: es_n0_db = eb_n0_db + 10 log10(bits per symbol x rate).
    doc, _ = cli.sweep_json("--mod", "qpsk", "--code", "ldpc-648-r1/2", "--ebn0", "2,3", "--max-bits", "2e4",
                            name="ldpc.json")
    assert doc["link"]["code"] == "ldpc-648-r1/2"
    for p in doc["points"]:
        assert p["code"] == "ldpc-648-r1/2" and p["code_rate"] == 0.5
        assert p["es_n0_db"] == pytest.approx(p["eb_n0_db"] + 10 * math.log10(2 * 0.5), abs=1e-12)
        for k in ("frames", "frame_errors", "fer", "fer_low", "fer_high"):
            assert k in p
        assert p["fer_low"] <= p["fer"] <= p["fer_high"]
        assert p["ber_theory"] is None  # no uncoded reference for a coded point
        assert p["bits"] == 324 * p["frames"]  # k = 324 information bits per codeword
    # The convolutional code's zero tail: rate 1024 / (2 (1024 + 6)).
    doc, _ = cli.sweep_json("--mod", "qpsk", "--code", "conv-k7-r1/2", "--ebn0", "3", "--max-bits", "2e4",
                            name="conv.json")
    p = doc["points"][0]
    assert p["code_rate"] == pytest.approx(1024 / 2060, rel=1e-15)
    assert p["es_n0_db"] == pytest.approx(3 + 10 * math.log10(2 * 1024 / 2060), abs=1e-12)


def test_uncoded_output_has_no_code_keys(cli):
    doc, _ = cli.sweep_json("--mod", "qpsk", "--ebn0", "4", "--max-bits", "1e5")
    assert "code" not in doc["link"] and "code" not in doc["points"][0]
    assert "min_frame_errors" not in doc["stop_rule"]


def test_coded_counts_identical_for_one_and_two_threads(cli):
    args = ["--mod", "8psk,16qam", "--code", "conv-k7-r3/4", "--ebn0", "5,7", "--max-bits", "3e5"]
    a, _ = cli.sweep_json(*args, "--threads", "1", name="a.json")
    b, _ = cli.sweep_json(*args, "--threads", "2", name="b.json")
    keys = ["bits", "bit_errors", "symbols", "symbol_errors", "frames", "frame_errors"]
    assert [[p[k] for k in keys] for p in a["points"]] == [[p[k] for k in keys] for p in b["points"]]


def test_frame_error_stop_rule_and_table_columns(cli):
    res = cli.run("sweep", "--mod", "qpsk", "--code", "ldpc-648-r1/2", "--ebn0", "1", "--min-errors", "1e9",
                  "--min-frame-errors", "20", "--llr", "max-log", "--no-progress", check=0)
    header = res.stdout.splitlines()[0]
    assert "FER" in header and "frames" in header and "code" in header
    row = res.stdout.splitlines()[2].split()
    assert row[-1] == "min_frame_errors"
    frames = int(row[row.index("ldpc-648-r1/2") + 8])
    frame_errors = int(row[row.index("ldpc-648-r1/2") + 9])
    # The rule is evaluated at batch boundaries (batches of 4, 8, ..., 256, 256, ... frames:
    # sim.hpp batch_frames), so the run ends at a boundary, with at least 20 frame errors, and had
    # fewer than 20 at the boundary before: at most the last batch's frames more than 20.
    boundaries, total, size = [], 0, 4
    while total < 10**5:
        total += size
        boundaries.append(total)
        size = min(2 * size, 256)
    assert frames in boundaries
    previous = ([0] + boundaries)[boundaries.index(frames)]
    assert 20 <= frame_errors < 20 + (frames - previous)


def test_resume_refuses_a_different_code(cli):
    ck = os.path.join(cli.tmp, "c.ckpt")
    base = ["--mod", "qpsk", "--ebn0", "3", "--max-bits", "5e4", "--checkpoint", ck, "--quiet"]
    cli.run("sweep", *base, "--code", "conv-k7-r1/2", check=0)
    res = cli.run("sweep", *base, "--code", "conv-k7-r2/3", "--resume")
    assert res.returncode == 2
    assert "link.code" in res.stderr and ck in res.stderr
    res = cli.run("sweep", *base, "--resume")  # uncoded against a coded checkpoint
    assert res.returncode == 2 and "link.code" in res.stderr


def test_modcod_table_is_read_by_link(cli):
    out = os.path.join(cli.tmp, "modcods.csv")
    res = cli.run("modcod", "--mod", "qpsk,8psk", "--code", "conv-k7-r1/2,conv-k7-r3/4", "--target-fer", "1e-1",
                  "--esn0-range", "0,12,1", "--min-errors", "30", "--csv", out, check=0)
    rows = list(csv.DictReader(open(out)))
    # The header that ModcodTable::from_csv reads (docs/link-scenario.md).
    assert list(rows[0]) == ["name", "modulation", "code", "rate", "bits_per_symbol_info", "required_es_n0_db",
                             "source"]
    assert [r["name"] for r in rows] == ["QPSK conv-k7-r1/2", "QPSK conv-k7-r3/4", "8PSK conv-k7-r1/2",
                                         "8PSK conv-k7-r3/4"]
    es = {r["name"]: float(r["required_es_n0_db"]) for r in rows}
    # More bits per symbol or a higher rate needs more Es/N0 (and every threshold is above the
    # Shannon bound 10 log10(2^eta - 1), which the table reader enforces).
    assert es["QPSK conv-k7-r1/2"] < es["QPSK conv-k7-r3/4"] < es["8PSK conv-k7-r3/4"]
    assert es["QPSK conv-k7-r1/2"] < es["8PSK conv-k7-r1/2"] < es["8PSK conv-k7-r3/4"]
    for r in rows:
        eta = float(r["bits_per_symbol_info"])
        assert float(r["required_es_n0_db"]) > 10 * math.log10(2 ** eta - 1)
        assert "interval" in r["source"]
    assert "required Es/N0 dB" in res.stdout
    # A scenario naming the generated file as its MODCOD table.
    text = open(DEMO).read()
    text = re.sub(r'(?m)^source = "dvb-s2".*$', 'source = "file"\npath = "modcods.csv"', text)
    scenario = os.path.join(cli.tmp, "scenario.toml")
    with open(scenario, "w") as fh:
        fh.write(text)
    res = cli.run("link", scenario)
    assert res.returncode in (0, 1), res.stderr  # 1 = no MODCOD keeps the margin anywhere
    assert "modcods.csv" in res.stdout and "conv-k7-r1/2" in res.stdout


def test_modcod_outside_the_grid_writes_nothing(cli):
    out = os.path.join(cli.tmp, "t.csv")
    res = cli.run("modcod", "--code", "conv-k7-r1/2", "--target-fer", "1e-1", "--esn0-range", "10,12,1",
                  "--min-errors", "10", "--csv", out)
    assert res.returncode == 1
    assert "start the grid lower" in res.stdout
    assert not os.path.exists(out)


def test_modcod_takes_the_sweep_link_options(cli):
    # The same link options as `sweep`: with RRC shaping at 4 samples per symbol and a long span
    # (negligible ISI) the noise is calibrated at the matched-filter output, so the threshold
    # agrees with the symbol-rate one (95% intervals overlap); a 20-degree quadrature error (no
    # power change at equal branch gains, channel.hpp) costs Es/N0: its interval lies above.
    def threshold(*extra):
        out = os.path.join(cli.tmp, "m.json")
        cli.run("modcod", "--code", "conv-k7-r1/2", "--target-fer", "1e-1", "--esn0-range", "0,8,0.5",
                "--min-errors", "50", "--json", out, "--quiet", *extra)
        row = json.load(open(out))["modcods"][0]
        lo, hi = map(float, re.search(r"interval ([-\d.]+) to ([-\d.]+) dB", row["source"]).groups())
        return row["required_es_n0_db"], lo, hi

    plain = threshold()
    shaped = threshold("--sps", "4", "--span", "32")
    skewed = threshold("--iq-phase-deg", "20")
    assert shaped[1] <= plain[2] and plain[1] <= shaped[2], (plain, shaped)
    assert skewed[1] > plain[2], (plain, skewed)
