"""End-to-end tests of `qamsight link`: tables, JSON, SVG, exit codes and scenario errors."""
import csv
import json
import math
import os
import re
import subprocess
import sys
import xml.etree.ElementTree as ET

import pytest

SOURCE = os.environ.get("QAMSIGHT_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
DEMO = os.path.join(SOURCE, "notebooks-free-examples", "demo_link.toml")

# Constants of the independent checks below: CODATA/SI 2019 exact k and c; R_e (WGS-84).
K_BOLTZMANN = 1.380649e-23
C_LIGHT = 299792458.0
R_E = 6378.137

BASE = """\
[link]
name = "test link"
frequency_ghz = 12.0
symbol_rate_mbd = 30
roll_off = 0.25
required_margin_db = 2.0
implementation_margin_db = 0.5

[orbit]
altitude_km = 35786

[pass]
elevations_deg = [10, 30, 60]

[losses]
atmospheric_db = 1.0
rain_db = 2.0
pointing_db = 0.5

[transmitter]
platform = "satellite"
eirp_dbw = 50.0

[receiver]
platform = "ground"
antenna_temperature_k = 60
noise_figure_db = 1.0
[receiver.antenna]
type = "fixed"
gain_dbi = 38.0

[modcods]
source = "dvb-s2"
"""


def write(cli, text, name="s.toml"):
    path = os.path.join(cli.tmp, name)
    with open(path, "w") as fh:
        fh.write(text)
    return path


def edit(old, new, text=BASE):
    assert old in text, old
    return text.replace(old, new, 1)


def run_json(cli, path, *args, check=0):
    out = os.path.join(cli.tmp, "out.json")
    res = cli.run("link", path, "--json", out, *args, check=check)
    with open(out) as fh:
        return json.load(fh), res


def line_of(text, needle):
    return text.splitlines().index(needle) + 1


# ---------------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------------

def test_demo_scenario_tables_json_svg_and_caution(cli):
    svg = os.path.join(cli.tmp, "pass.svg")
    svg2 = os.path.join(cli.tmp, "esn0.svg")
    out = os.path.join(cli.tmp, "demo.json")
    res = cli.run("link", DEMO, "--json", out, "--svg", svg, "--svg-esn0", svg2, check=0)
    for heading in ["Link budget at 30 deg elevation", "MODCOD margins at 30 deg", "Over the pass"]:
        assert heading in res.stdout
    for item in ["free-space path loss (ITU-R P.525)", "G/T", "C/N0", "Es/N0", "EIRP", "receive scan loss"]:
        assert item in res.stdout
    # Transmit power is given, so the licensing / RF-exposure caution is printed and recorded.
    assert "requires a licence" in res.stdout and "RF-exposure" in res.stdout
    doc = json.load(open(out))
    assert doc["cautions"] and "licence" in doc["cautions"][0]
    assert [p["elevation_deg"] for p in doc["pass"]] == [10, 20, 30, 40, 50, 60, 70, 80, 90]
    # 10 deg needs an 80-degree scan, beyond max_scan_deg = 70: no link there.
    assert doc["pass"][0]["available"] is False and doc["pass"][0]["modcod"] is None
    for path in (svg, svg2):
        root = ET.parse(path).getroot()
        assert root.tag.endswith("svg")
    text = open(svg).read()
    for p in doc["pass"]:
        if p["modcod"]:
            assert p["modcod"] in text


def test_budget_matches_textbook_formulas(cli):
    # Everything recomputed here from the published formulas: slant range (Pratt & Bostian, law of
    # cosines), ITU-R P.525 free-space loss, T_sys = T_ant + 290 (F - 1), C/N0 = EIRP - L + G/T - k.
    doc, _ = run_json(cli, write(cli, BASE), "--elevation", "30")
    lines = {l["key"]: l["value"] for l in doc["reference"]["budget"]}
    e, h = math.radians(30.0), 35786.0
    d = math.sqrt((R_E + h) ** 2 - (R_E * math.cos(e)) ** 2) - R_E * math.sin(e)
    assert lines["slant_range_km"] == pytest.approx(d, rel=1e-12)
    fsl = 20 * math.log10(4 * math.pi * d * 1e3 * 12e9 / C_LIGHT)
    assert lines["free_space_loss_db"] == pytest.approx(fsl, abs=1e-9)
    tsys = 60 + 290 * (10 ** 0.1 - 1)
    gt = 38 - 10 * math.log10(tsys)
    cn0 = 50 - (fsl + 1.0 + 2.0 + 0.5) + gt - 10 * math.log10(K_BOLTZMANN)
    assert lines["g_over_t_db_k"] == pytest.approx(gt, abs=1e-9)
    assert lines["c_over_n0_dbhz"] == pytest.approx(cn0, abs=1e-9)
    esn0 = cn0 - 10 * math.log10(30e6)
    assert lines["es_n0_db"] == pytest.approx(esn0, abs=1e-9)
    assert lines["c_over_n_db"] == pytest.approx(cn0 - 10 * math.log10(30e6 * 1.25), abs=1e-9)
    assert lines["delay_ms"] == pytest.approx(d * 1e3 / C_LIGHT * 1e3, rel=1e-12)
    # The best MODCOD: highest Rs * eta among rows with Es/N0 - required - 0.5 >= 2.
    rows = doc["reference"]["modcods"]
    ok = [r for r in rows if esn0 - r["required_es_n0_db"] - 0.5 >= 2.0]
    best = max(ok, key=lambda r: (r["bits_per_symbol_info"], esn0 - r["required_es_n0_db"]))
    assert doc["reference"]["best"]["name"] == best["name"]
    assert doc["reference"]["best"]["throughput_bps"] == pytest.approx(30e6 * best["bits_per_symbol_info"])
    for r in rows:
        assert r["margin_db"] == pytest.approx(esn0 - r["required_es_n0_db"] - 0.5, abs=1e-9)
    # EIRP only: no transmit power, so no caution.
    assert doc["cautions"] == []


def test_pass_doppler_follows_the_overhead_pass(cli):
    # Overhead circular pass: dr/dt = R_e r omega sin(gamma) / d (derived here from the geometry),
    # Doppler -f dr/dt / c on the rising half (positive).
    text = edit("altitude_km = 35786", "altitude_km = 870")
    doc, _ = run_json(cli, write(cli, text))
    gm = 398600.4418
    r = R_E + 870.0
    w = math.sqrt(gm / r ** 3)
    for p in doc["pass"]:
        e = math.radians(p["elevation_deg"])
        gamma = math.acos(R_E * math.cos(e) / r) - e
        d = math.sqrt(R_E ** 2 + r ** 2 - 2 * R_E * r * math.cos(gamma))
        rate = -1e3 * R_E * r * w * math.sin(gamma) / d
        assert p["range_rate_m_s"] == pytest.approx(rate, rel=1e-9)
        assert p["doppler_hz"] == pytest.approx(-12e9 * rate / C_LIGHT, rel=1e-9)
    # Throughput never falls as the satellite climbs (fixed antennas, fixed losses).
    tp = [p["throughput_bps"] for p in doc["pass"]]
    assert tp == sorted(tp)


def test_elevation_option_and_its_errors(cli):
    path = write(cli, BASE)
    doc, _ = run_json(cli, path, "--elevation", "60")
    assert doc["reference"]["elevation_deg"] == 60
    for bad in ["95", "-1", "abc"]:
        res = cli.run("link", path, "--elevation", bad, check=2)
        assert "--elevation" in res.stderr and len(res.stderr.strip().splitlines()) == 1


def test_exit_1_when_no_modcod_closes_anywhere(cli):
    res = cli.run("link", write(cli, edit("eirp_dbw = 50.0", "eirp_dbw = 0.0")), check=1)
    assert "no MODCOD keeps the required margin" in res.stdout


def test_power_given_prints_caution_and_array_eirp(cli):
    text = edit('platform = "satellite"\neirp_dbw = 50.0', 'platform = "ground"\nelement_power_dbw = -10.0\n'
                '[transmitter.antenna]\ntype = "array"\nmodel = "scan-loss"\nelements = 256\nelement_gain_dbi = 5.0\n'
                'scan_loss_exponent = 1.5')
    text = edit('platform = "ground"\nantenna_temperature_k', 'platform = "satellite"\nantenna_temperature_k', text)
    doc, res = run_json(cli, write(cli, text), "--elevation", "40")
    assert "requires a licence" in res.stdout
    lines = {l["key"]: l["value"] for l in doc["reference"]["budget"]}
    # EIRP = P_el + 20 log10 N + G_el - 1.5 * 10 log10(1 / cos(scan)), scan = 90 - 40 (zenith-facing).
    eirp = -10 + 20 * math.log10(256) + 5 + 1.5 * 10 * math.log10(math.cos(math.radians(50)))
    assert lines["eirp_dbw"] == pytest.approx(eirp, abs=1e-9)


def test_modcod_file_relative_to_scenario_and_shannon_rejection(cli):
    with open(os.path.join(cli.tmp, "mc.csv"), "w") as fh:
        fh.write("name,modulation,code,rate,bits_per_symbol_info,required_es_n0_db,source\n"
                 "QPSK r1/2,qpsk,conv,1/2,1.0,2.5,sweep\n16QAM r3/4,16qam,LDPC,3/4,3.0,10.0,sweep\n")
    text = edit('source = "dvb-s2"', 'source = "file"\npath = "mc.csv"')
    doc, _ = run_json(cli, write(cli, text))
    assert [r["name"] for r in doc["reference"]["modcods"]] == ["QPSK r1/2", "16QAM r3/4"]
    # eta = 3 needs at least 10 log10(7) = 8.45 dB (Shannon); 8.0 is rejected with file and line.
    with open(os.path.join(cli.tmp, "mc.csv"), "w") as fh:
        fh.write("name,modulation,rate,bits_per_symbol_info,required_es_n0_db\nQPSK r1/2,qpsk,1/2,1.0,2.5\n"
                 "16QAM r3/4,16qam,3/4,3.0,8.0\n")
    res = cli.run("link", write(cli, text), check=2)
    assert "mc.csv:3" in res.stderr and "Shannon" in res.stderr


def test_gmi_and_inline_tables(cli):
    text = edit('source = "dvb-s2"', 'source = "gmi"\nmodulations = ["qpsk", "16qam"]\ncode_rates = [0.5, "3/4"]\n'
                'gap_db = 1.5')
    doc, _ = run_json(cli, write(cli, text))
    names = [r["name"] for r in doc["reference"]["modcods"]]
    assert len(names) == 4
    # QPSK at 1 bit/symbol: the binary-input AWGN rate-1/2 limit Eb/N0 = 0.187 dB (from memory)
    # plus the 1.5 dB gap.
    assert doc["reference"]["modcods"][0]["required_es_n0_db"] == pytest.approx(0.187 + 1.5, abs=0.01)
    inline = ('source = "table"\n[[modcods.row]]\nname = "A"\nmodulation = "qpsk"\nrate = "1/2"\n'
              'bits_per_symbol_info = 1.0\nrequired_es_n0_db = 1.0\n')
    doc, _ = run_json(cli, write(cli, edit('source = "dvb-s2"', inline)))
    assert doc["reference"]["modcods"][0]["name"] == "A"


# ---------------------------------------------------------------------------------------------
# Bad scenarios: exit 2 with one line naming the key (and line)
# ---------------------------------------------------------------------------------------------

BAD = [
    # (description, old, new, expected fragments of the message)
    ("negative altitude", "altitude_km = 35786", "altitude_km = -870",
     ["orbit.altitude_km = -870", "s.toml:10"]),
    ("zero altitude", "altitude_km = 35786", "altitude_km = 0", ["orbit.altitude_km"]),
    ("pass elevation above 90", "elevations_deg = [10, 30, 60]", "elevations_deg = [10, 30, 95]",
     ["pass.elevations_deg[2] = 95", "s.toml:13"]),
    ("negative pass elevation", "elevations_deg = [10, 30, 60]", "elevations_deg = [-5, 30]",
     ["pass.elevations_deg[0] = -5"]),
    ("reference elevation above 90", "implementation_margin_db = 0.5",
     "implementation_margin_db = 0.5\nelevation_deg = 91", ["link.elevation_deg = 91", "s.toml:8"]),
    ("max elevation 0", "elevations_deg", "max_elevation_deg = 0\nelevations_deg", ["pass.max_elevation_deg"]),
    ("zero symbol rate", "symbol_rate_mbd = 30", "symbol_rate_mbd = 0", ["link.symbol_rate_mbd = 0", "s.toml:4"]),
    ("negative symbol rate in Bd", "symbol_rate_mbd = 30", "symbol_rate_bd = -1", ["link.symbol_rate_bd"]),
    ("unknown key in a table", "roll_off = 0.25", "roll_off = 0.25\ncolour = \"blue\"",
     ["unknown key 'link.colour'", "s.toml:6"]),
    ("typo of a required key", "altitude_km = 35786", "altitud_km = 35786",
     ["unknown key 'orbit.altitud_km'", "did you mean 'orbit.altitude_km'"]),
    ("unknown top-level table", "[modcods]", "[extras]\nx = 1\n\n[modcods]", ["unknown key 'extras'"]),
    ("unknown antenna key", "gain_dbi = 38.0", "gain_dbi = 38.0\nbeamwidth_deg = 2", ["receiver.antenna.beamwidth_deg"]),
    ("array key on a fixed antenna", "gain_dbi = 38.0", "gain_dbi = 38.0\nelements = 4",
     ["receiver.antenna.elements is not used with type = 'fixed'"]),
    ("missing required key", "roll_off = 0.25\n", "", ["missing required key 'link.roll_off'"]),
    ("missing required table", "[orbit]\naltitude_km = 35786\n", "", ["missing required table [orbit]"]),
    ("missing platform", 'platform = "satellite"\n', "", ["missing required key 'transmitter.platform'"]),
    ("missing frequency", "frequency_ghz = 12.0\n", "", ["give one of link.frequency_ghz, link.frequency_hz"]),
    ("missing noise", "antenna_temperature_k = 60\nnoise_figure_db = 1.0\n", "",
     ["receiver.g_over_t_db_k", "receiver.system_temperature_k"]),
    ("half the noise pair", "noise_figure_db = 1.0\n", "", ["missing required key 'receiver.noise_figure_db'"]),
    ("conflicting keys", "frequency_ghz = 12.0", "frequency_ghz = 12.0\nfrequency_hz = 12e9",
     ["link.frequency_ghz and link.frequency_hz conflict"]),
    ("string for a number", "altitude_km = 35786", 'altitude_km = "35786"',
     ["orbit.altitude_km must be a number, not a string", "s.toml:10"]),
    ("boolean for a number", "roll_off = 0.25", "roll_off = true", ["link.roll_off must be a number, not a boolean"]),
    ("number for a string", 'platform = "satellite"', "platform = 1",
     ["transmitter.platform must be a string, not an integer"]),
    ("bad choice", 'platform = "satellite"', 'platform = "balloon"',
     ["transmitter.platform = 'balloon' is not allowed", "'satellite', 'ground'"]),
    ("both ends on the ground", 'platform = "satellite"', 'platform = "ground"', ["one end must be 'satellite'"]),
    ("table where a number belongs", "altitude_km = 35786", "altitude_km = { km = 5 }",
     ["orbit.altitude_km must be a number, not a table"]),
    ("float where an integer belongs", 'type = "fixed"\ngain_dbi = 38.0',
     'type = "array"\nmodel = "scan-loss"\nelements = 16.5\nelement_gain_dbi = 5', ["receiver.antenna.elements must be an integer"]),
    ("antenna with EIRP", "eirp_dbw = 50.0", 'eirp_dbw = 50.0\n[transmitter.antenna]\ntype = "fixed"\ngain_dbi = 30',
     ["transmitter.antenna is not used with transmitter.eirp_dbw"]),
    ("too many array elements", 'type = "fixed"\ngain_dbi = 38.0',
     'type = "array"\nmodel = "lattice"\nlattice = "rectangular"\ncolumns = 200\nrows = 200\nspacing_wavelengths = 0.5',
     ["receiver.antenna.columns x receiver.antenna.rows = 40000"]),
    ("inline row below Shannon", 'source = "dvb-s2"',
     'source = "table"\n[[modcods.row]]\nname = "fast"\nmodulation = "16qam"\nrate = 0.75\n'
     'bits_per_symbol_info = 3.0\nrequired_es_n0_db = 7.0', ["modcods.row[0].required_es_n0_db", "Shannon"]),
    ("gmi rate 1", 'source = "dvb-s2"', 'source = "gmi"\nmodulations = ["qpsk"]\ncode_rates = [1.0]\ngap_db = 1',
     ["modcods.code_rates[0] = 1"]),
    ("unknown modulation for gmi", 'source = "dvb-s2"',
     'source = "gmi"\nmodulations = ["7qam"]\ncode_rates = [0.5]\ngap_db = 1', ["modcods.modulations"]),
    ("missing MODCOD file", 'source = "dvb-s2"', 'source = "file"\npath = "nope.csv"', ["nope.csv"]),
    ("negative loss", "rain_db = 2.0", "rain_db = -2.0", ["losses.rain_db = -2"]),
    ("TOML syntax error", "[losses]", "[losses", ["TOML syntax error", "s.toml:15"]),
]


@pytest.mark.parametrize("what,old,new,fragments", BAD, ids=[b[0] for b in BAD])
def test_bad_scenarios_exit_2_naming_the_key(cli, what, old, new, fragments):
    res = cli.run("link", write(cli, edit(old, new)), check=2)
    msg = res.stderr.strip()
    assert len(msg.splitlines()) == 1, msg
    for f in fragments:
        assert f in msg, f"{what}: {f!r} not in {msg!r}"
    assert res.stdout == ""


def test_missing_scenario_file_and_no_argument(cli):
    res = cli.run("link", os.path.join(cli.tmp, "none.toml"), check=2)
    assert "none.toml" in res.stderr
    cli.run("link", check=2)


def test_line_numbers_point_at_the_offending_key(cli):
    text = edit("altitude_km = 35786", "altitude_km = -1")
    res = cli.run("link", write(cli, text), check=2)
    assert f"s.toml:{line_of(text, 'altitude_km = -1')}:" in res.stderr


# ---------------------------------------------------------------------------------------------
# The reference table of the C++ tests regenerates
# ---------------------------------------------------------------------------------------------

def test_link_reference_table_regenerates(tmp_path):
    script = os.path.join(SOURCE, "tests", "reference", "make_link_table.py")
    out = tmp_path / "link_table.csv"
    subprocess.run([sys.executable, script, str(out)], check=True, timeout=600)
    fresh = list(csv.reader(open(out)))
    kept = list(csv.reader(open(os.path.join(SOURCE, "tests", "reference", "link_table.csv"))))
    assert len(fresh) == len(kept)
    for a, b in zip(fresh, kept):
        assert a[:-1] == b[:-1]
        if a[-1] and re.match(r"^-?[0-9.eE+-]+$", a[-1]):
            assert float(a[-1]) == pytest.approx(float(b[-1]), rel=1e-12, abs=1e-12)
