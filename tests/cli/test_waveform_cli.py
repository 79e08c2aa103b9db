"""End-to-end tests of `qamsight waveform`: the SigMF test recording, its metadata and file sizes."""
import json
import os

import pytest


def meta(path):
    with open(path + ".sigmf-meta") as fh:
        return json.load(fh)


def test_metadata_records_rate_datatype_and_every_impairment(cli):
    out = os.path.join(cli.tmp, "imp")
    res = cli.run("waveform", "--mod", "16qam", "--sps", "4", "--rolloff", "0.35", "--span", "24",
                  "--symbol-rate", "2.5e6", "--esn0", "25", "--symbols", "5000", "--prbs", "23",
                  "--cfo-hz", "1250", "--phase-deg", "7.5", "--iq-gain-db", "0.3", "--iq-phase-deg", "1.5",
                  "--dc-offset", "0.01,-0.02", "--amp", "rapp", "--input-backoff-db", "8",
                  "--rapp-smoothness", "3", "--phase-noise-linewidth", "50", "--adc-bits", "10",
                  "--adc-loading-db", "11", "--seed", "9", "--datatype", "ci16_le", "--out", out, check=0)
    m = meta(out)
    g = m["global"]
    # Sample rate = symbol rate x samples per symbol (definition of samples per symbol).
    assert g["core:sample_rate"] == pytest.approx(2.5e6 * 4, rel=1e-12)
    assert g["core:datatype"] == "ci16_le"
    assert g["qamsight:modulation"] == "16qam"
    assert g["qamsight:roll_off"] == pytest.approx(0.35)
    assert g["qamsight:span_symbols"] == 24
    assert g["qamsight:es_n0_db"] == pytest.approx(25)
    assert g["qamsight:seed"] == 9
    assert g["qamsight:payload"]["prbs"] == "PRBS-23"
    im = g["qamsight:impairments"]
    expected = {"cfo_hz": 1250, "phase_deg": 7.5, "iq_gain_db": 0.3, "iq_phase_deg": 1.5,
                "input_backoff_db": 8, "rapp_smoothness": 3, "phase_noise_linewidth_hz": 50,
                "adc_bits": 10, "adc_loading_db": 11}
    for key, value in expected.items():
        assert im[key] == pytest.approx(value), key
    assert im["amplifier"] == "rapp"
    assert im["dc_offset"] == pytest.approx([0.01, -0.02])
    # The summary and the RF caution (a test vector is not for radiating without a licence).
    assert "PRBS-23" in res.stdout
    assert "licence" in res.stdout and "regulations" in res.stdout


def test_ci16_file_is_4_bytes_per_sample_and_cf32_8(cli):
    # Samples: (symbols + span) x sps (waveform.hpp, total_samples, no lead); ci16 = 2 x 16 bit,
    # cf32 = 2 x 32 bit per complex sample (SigMF datatype names).
    symbols, span, sps = 3000, 24, 4
    for dtype, size in (("ci16_le", 4), ("cf32_le", 8)):
        out = os.path.join(cli.tmp, dtype)
        cli.run("waveform", "--symbols", symbols, "--span", span, "--sps", sps, "--datatype", dtype,
                "--out", out, "--quiet", check=0)
        assert os.path.getsize(out + ".sigmf-data") == size * (symbols + span) * sps


def test_recording_round_trips_through_the_reader(cli):
    # `evm measure` reads the recording with the library's SigMF reader and takes modulation,
    # symbol rate and roll-off from the metadata: they must come back as written.
    out = os.path.join(cli.tmp, "rt")
    cli.run("waveform", "--mod", "8psk", "--symbol-rate", "3e5", "--rolloff", "0.3", "--sps", "5",
            "--symbols", "4000", "--esn0", "30", "--datatype", "ci16_le", "--out", out, "--quiet", check=0)
    js = os.path.join(cli.tmp, "rt.json")
    res = cli.run("evm", "measure", out + ".sigmf-meta", "--json", js, check=0)
    assert "from the recording" in res.stdout
    with open(js) as fh:
        j = json.load(fh)
    assert j["modulation"] == "8psk"
    assert j["symbol_rate_hz"] == pytest.approx(3e5)
    assert j["roll_off"] == pytest.approx(0.3)
    assert j["sample_rate_hz"] == pytest.approx(1.5e6)
    assert j["samples"] == (4000 + 24) * 5
    assert j["status"] == "measured"
    assert j["prbs"]["locked"] and j["prbs"]["errors"] == 0  # 8PSK at 30 dB: SER ~ 2Q(sqrt(2000) sin(pi/8)) < 1e-60


def test_waveform_refuses_receiver_settings_and_bad_values(cli):
    out = os.path.join(cli.tmp, "bad")
    for args, name in ((["--tracker", "on"], "--tracker"), (["--sps", "1"], "--sps"),
                       (["--datatype", "cq16"], "--datatype"), (["--symbols", "100"], "--symbols"),
                       (["--prbs", "16"], "--prbs"), (["--esn0", "200"], "--esn0")):
        res = cli.run("waveform", *args, "--out", out, check=2)
        assert name in res.stderr, res.stderr
        assert not os.path.exists(out + ".sigmf-meta") and not os.path.exists(out + ".sigmf-data")
