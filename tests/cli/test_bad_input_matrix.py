"""The bad-input matrix: every subcommand and every file reader, fed bad input.

Each case must end with exit status 2 and one line on stderr that names the parameter, key or
file (the `names` column), within a time limit; never a crash (a signal or a status of 128 and
up), a hang, NaN in the output, or an output file (whole, partial or temporary) left behind.
The table in docs/bad-input-matrix.md is generated from CASES by make_bad_input_doc.py; a test
below keeps it current. Add a row: one `Case(...)` line (files it needs go in `files`).

Rows marked `probe` read a file with a library reader through the test program
qamsight_reader_probe (tests/fuzz/reader_probe.cpp), for readers that no subcommand reaches yet.
"""
import os
import re
import shlex
import subprocess
from dataclasses import dataclass, field

import pytest

HERE = os.path.dirname(os.path.abspath(__file__))
SOURCE = os.environ.get("QAMSIGHT_SOURCE_DIR", os.path.join(HERE, "..", ".."))
DOC = os.path.join(SOURCE, "docs", "bad-input-matrix.md")
# Slower builds (sanitizers) get more time per case; a hang is far beyond either limit.
TIME_LIMIT_S = 60 * float(os.environ.get("QAMSIGHT_TEST_TIME_SCALE", "1"))


@dataclass
class Case:
    area: str                 # subcommand, or "probe <reader>"
    what: str                 # what is wrong, in words (the doc's first column)
    args: str                 # command line after the program name (shlex syntax)
    names: str                # the message must contain this (parameter, key or file)
    files: dict = field(default_factory=dict)  # name -> text (None: a directory)
    setup: tuple = ()         # commands run first (must succeed), e.g. to make a checkpoint


SCENARIO = """\
[link]
name = "matrix link"
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


def scen(old, new):
    assert old in SCENARIO, old
    return {"s.toml": SCENARIO.replace(old, new, 1)}


RESULT = ('{"points": [{"modulation": "qpsk", "eb_n0_db": 4, "es_n0_db": 7.0103, "bits": 100000, '
          '"bit_errors": 1250, "symbols": 50000, "symbol_errors": 2480}]}')


def result(old, new):
    assert old in RESULT, old
    return {"r.json": RESULT.replace(old, new, 1)}


SWEEP = "sweep --mod qpsk --ebn0 4 --max-bits 1e5 --quiet"
CKPT_SETUP = (SWEEP + " --checkpoint c.ckpt",)
CSV = "name,modulation,rate,bits_per_symbol_info,required_es_n0_db\n"
ALIST = "7 3\n3 4\n1 1 1 2 2 2 3\n4 4 4\n1 0 0\n2 0 0\n3 0 0\n1 2 0\n1 3 0\n2 3 0\n1 2 3\n1 4 5 7\n2 4 6 7\n3 5 6 7\n"


SIGMF = '{"global": {"core:datatype": "cf32_le", "core:sample_rate": 1e6, "core:version": "1.0.0"}}'
LINEUP = 'modulation = "qpsk"\nsymbol_rate_hz = 2e6\n'


def alist(old, new):
    assert old in ALIST, old
    return {"h.alist": ALIST.replace(old, new, 1)}


CASES = [
    # --- sweep options ---------------------------------------------------------------------------
    Case("sweep", "unknown modulation", "sweep --mod 17qam --ebn0 4 --json o.json", "--mod"),
    Case("sweep", "empty modulation list", "sweep --mod , --ebn0 4", "--mod"),
    Case("sweep", "Eb/N0 not a number", "sweep --ebn0 nan --json o.json", "--ebn0"),
    Case("sweep", "Eb/N0 infinite", "sweep --ebn0 inf", "--ebn0"),
    Case("sweep", "Eb/N0 above 100 dB", "sweep --ebn0 500", "--ebn0"),
    Case("sweep", "Eb/N0 list with a bad item", "sweep --ebn0 4,x,6", "--ebn0"),
    Case("sweep", "Es/N0 below -30 dB", "sweep --esn0 -31", "--esn0"),
    Case("sweep", "range MAX below MIN", "sweep --ebn0-range 10,0,1", "--ebn0-range"),
    Case("sweep", "range with zero step", "sweep --ebn0-range 0,10,0", "--ebn0-range"),
    Case("sweep", "range of two numbers", "sweep --esn0-range 0,10", "--esn0-range"),
    Case("sweep", "range of too many values", "sweep --ebn0-range 0,100,1e-3", "--ebn0-range"),
    Case("sweep", "two SNR options", "sweep --ebn0 4 --esn0 4", "--esn0"),
    Case("sweep", "no SNR option", "sweep --mod qpsk --json o.json", "--ebn0"),
    Case("sweep", "zero minimum errors", "sweep --ebn0 4 --min-errors 0", "--min-errors"),
    Case("sweep", "negative minimum errors", "sweep --ebn0 4 --min-errors -1", "--min-errors"),
    Case("sweep", "minimum errors too large", "sweep --ebn0 4 --min-errors 1e30", "--min-errors"),
    Case("sweep", "zero bits", "sweep --ebn0 4 --max-bits 0", "--max-bits"),
    Case("sweep", "fractional bits", "sweep --ebn0 4 --max-bits 1.5", "--max-bits"),
    Case("sweep", "bits not a number", "sweep --ebn0 4 --max-bits lots", "--max-bits"),
    Case("sweep", "negative relative width", "sweep --ebn0 4 --max-rel-width -1", "--max-rel-width"),
    Case("sweep", "relative width not a number", "sweep --ebn0 4 --max-rel-width nan", "--max-rel-width"),
    Case("sweep", "confidence 1", "sweep --ebn0 4 --confidence 1", "--confidence"),
    Case("sweep", "confidence 0", "sweep --ebn0 4 --confidence 0", "--confidence"),
    Case("sweep", "confidence not a number", "sweep --ebn0 4 --confidence high", "--confidence"),
    Case("sweep", "negative seed", "sweep --ebn0 4 --seed -1", "--seed"),
    Case("sweep", "seed beyond 63 bits", "sweep --ebn0 4 --seed 1e20", "--seed"),
    Case("sweep", "too many threads", "sweep --ebn0 4 --threads 5000", "--threads"),
    Case("sweep", "negative threads", "sweep --ebn0 4 --threads -1", "--threads"),
    Case("sweep", "frame of 3 symbols", "sweep --ebn0 4 --frame-symbols 3", "--frame-symbols"),
    Case("sweep", "frame of 1e9 symbols", "sweep --ebn0 4 --frame-symbols 1e9", "--frame-symbols"),
    Case("sweep", "unknown code", "sweep --ebn0 4 --code conv-k9-r1/2 --json o.json", "--code"),
    Case("sweep", "code alist without a path", "sweep --ebn0 4 --code ldpc-alist:", "--code"),
    Case("sweep", "code alist file missing", "sweep --ebn0 4 --code ldpc-alist:none.alist", "none.alist"),
    Case("sweep", "unknown LLR method", "sweep --ebn0 4 --code conv-k7-r1/2 --llr soft", "--llr"),
    Case("sweep", "LLR method without a code", "sweep --ebn0 4 --llr exact", "--llr"),
    Case("sweep", "frame errors not a number", "sweep --ebn0 4 --code conv-k7-r1/2 --min-frame-errors x",
         "--min-frame-errors"),
    Case("sweep", "negative frame errors", "sweep --ebn0 4 --code conv-k7-r1/2 --min-frame-errors -3",
         "--min-frame-errors"),
    Case("sweep", "frame errors without a code", "sweep --ebn0 4 --min-frame-errors 10", "--min-frame-errors"),
    Case("sweep", "unknown phase detector", "sweep --ebn0 4 --phase-deg 5 --tracker-detector ml",
         "--tracker-detector"),
    Case("sweep", "negative implementation loss", "sweep --ebn0 4 --impl-loss-db -1", "--impl-loss-db"),
    Case("sweep", "implementation loss not finite", "sweep --ebn0 4 --impl-loss-db inf", "--impl-loss-db"),
    Case("sweep", "progress on and off", "sweep --ebn0 4 --progress --no-progress", "--progress"),
    Case("sweep", "unknown option", "sweep --ebn0 4 --bogus", "--bogus"),
    Case("sweep", "option without its value", "sweep --ebn0", "--ebn0"),
    Case("sweep", "JSON output is a directory", SWEEP + " --json outdir", "--json", {"outdir": None}),
    Case("sweep", "CSV output under a regular file", SWEEP + " --csv plain/o.csv", "--csv",
         {"plain": "x"}),
    Case("sweep", "SVG output in a missing folder", SWEEP + " --svg nodir/o.svg", "--svg"),
    Case("sweep", "resume without a checkpoint", SWEEP + " --resume", "--checkpoint"),
    Case("sweep", "checkpoint exists, no --resume", SWEEP + " --checkpoint c.ckpt", "c.ckpt",
         setup=CKPT_SETUP),
    Case("sweep", "checkpoint of another sweep", SWEEP + " --seed 5 --checkpoint c.ckpt --resume", "seed",
         setup=CKPT_SETUP),
    Case("sweep", "checkpoint is random bytes", SWEEP + " --checkpoint c.ckpt --resume", "c.ckpt",
         {"c.ckpt": "\x00\x17garbage\nmore garbage\n"}),
    Case("sweep", "checkpoint is empty", SWEEP + " --checkpoint c.ckpt --resume", "c.ckpt", {"c.ckpt": ""}),
    Case("sweep", "checkpoint is a directory", SWEEP + " --checkpoint cdir --resume", "cdir", {"cdir": None}),
    Case("sweep", "checkpoint under a regular file", SWEEP + " --checkpoint plain/c.ckpt", "plain/c.ckpt",
         {"plain": "x"}),
    # --- theory ----------------------------------------------------------------------------------
    Case("theory", "unknown modulation", "theory --mod 12qam --csv o.csv", "--mod"),
    Case("theory", "Eb/N0 not a number", "theory --ebn0 4,abc", "--ebn0"),
    Case("theory", "Eb/N0 above 100 dB", "theory --ebn0 200 --svg o.svg", "--ebn0"),
    Case("theory", "range with negative step", "theory --ebn0-range 0,10,-1", "--ebn0-range"),
    Case("theory", "target BER 0", "theory --target-ber 0", "--target-ber"),
    Case("theory", "target BER 0.5", "theory --target-ber 0.5", "--target-ber"),
    Case("theory", "target BER not a number", "theory --target-ber small", "--target-ber"),
    Case("theory", "CSV output is a directory", "theory --csv outdir", "--csv", {"outdir": None}),
    Case("theory", "SVG output under a regular file", "theory --svg plain/o.svg", "--svg", {"plain": "x"}),
    Case("theory", "good CSV path, bad SVG path", "theory --csv ok.csv --svg plain/o.svg", "--svg", {"plain": "x"}),
    # --- check (sweep results and baselines: sweep_from_json) -------------------------------------
    Case("check", "missing result file", "check none.json", "none.json"),
    Case("check", "result is a directory", "check rdir", "rdir", {"rdir": None}),
    Case("check", "result is empty", "check r.json", "r.json", {"r.json": ""}),
    Case("check", "result is not JSON", "check r.json", "not valid JSON", {"r.json": "{points: ["}),
    Case("check", "top level is an array", "check r.json", "top level", {"r.json": "[1, 2]"}),
    Case("check", "no points key", "check r.json", "'points'", {"r.json": '{"seed": 1}'}),
    Case("check", "points not an array", "check r.json", "'points'", {"r.json": '{"points": 3}'}),
    Case("check", "points empty", "check r.json", "'points'", {"r.json": '{"points": []}'}),
    Case("check", "point without eb_n0_db", "check r.json", "points[0].eb_n0_db", result('"eb_n0_db": 4, ', "")),
    Case("check", "modulation not a string", "check r.json", "points[0].modulation",
         result('"qpsk"', "7")),
    Case("check", "unknown modulation", "check r.json", "points[0].modulation", result('"qpsk"', '"9qam"')),
    Case("check", "Eb/N0 a string", "check r.json", "points[0].eb_n0_db", result('"eb_n0_db": 4', '"eb_n0_db": "4"')),
    Case("check", "Eb/N0 overflowing", "check r.json", "r.json", result('"eb_n0_db": 4', '"eb_n0_db": 1e999')),
    Case("check", "zero bits", "check r.json", "points[0].bits", result('"bits": 100000', '"bits": 0')),
    Case("check", "negative bits", "check r.json", "points[0].bits", result('"bits": 100000', '"bits": -5')),
    Case("check", "fractional bits", "check r.json", "points[0].bits", result('"bits": 100000', '"bits": 1.5')),
    Case("check", "more bit errors than bits", "check r.json", "points[0].bit_errors",
         result('"bit_errors": 1250', '"bit_errors": 200000')),
    Case("check", "more symbol errors than symbols", "check r.json", "points[0].symbol_errors",
         result('"symbol_errors": 2480', '"symbol_errors": 60000')),
    Case("check", "confidence in the file is 2", "check r.json", "confidence",
         result('{"points"', '{"confidence": 2, "points"')),
    Case("check", "confidence option 1.5", "check r.json --confidence 1.5", "--confidence", {"r.json": RESULT}),
    Case("check", "target BER option 0", "check r.json --target-ber 0", "--target-ber", {"r.json": RESULT}),
    Case("check", "baseline not JSON", "check r.json --baseline b.json", "b.json",
         {"r.json": RESULT, "b.json": "{"}),
    Case("check", "baseline missing", "check r.json --baseline none.json", "none.json", {"r.json": RESULT}),
    Case("check", "no result argument", "check", "result"),
    Case("check", "JUnit output is a directory", "check r.json --junit jdir", "--junit",
         {"r.json": RESULT, "jdir": None}),
    # --- demo ------------------------------------------------------------------------------------
    Case("demo", "output folder under a regular file", "demo --quick --out plain/out", "plain/out",
         {"plain": "x"}),
    Case("demo", "too many threads", "demo --quick --threads 5000 --out d", "--threads"),
    Case("demo", "unknown option", "demo --fast", "--fast"),
    # --- link (TOML scenarios, MODCOD files) --------------------------------------------------------
    Case("link", "missing scenario file", "link none.toml", "none.toml"),
    Case("link", "scenario is a directory", "link sdir", "sdir", {"sdir": None}),
    Case("link", "scenario is empty", "link s.toml", "s.toml", {"s.toml": ""}),
    Case("link", "TOML syntax error", "link s.toml", "TOML syntax error", scen("[losses]", "[losses")),
    Case("link", "binary garbage", "link s.toml", "s.toml", {"s.toml": "\x01\x02\xff\xfe[[[\n"}),
    Case("link", "negative altitude", "link s.toml --json o.json", "orbit.altitude_km",
         scen("altitude_km = 35786", "altitude_km = -870")),
    Case("link", "altitude as a string", "link s.toml", "orbit.altitude_km",
         scen("altitude_km = 35786", 'altitude_km = "high"')),
    Case("link", "altitude not finite", "link s.toml", "orbit.altitude_km",
         scen("altitude_km = 35786", "altitude_km = nan")),
    Case("link", "elevation above 90", "link s.toml", "pass.elevations_deg[2]",
         scen("[10, 30, 60]", "[10, 30, 95]")),
    Case("link", "zero symbol rate", "link s.toml", "link.symbol_rate_mbd",
         scen("symbol_rate_mbd = 30", "symbol_rate_mbd = 0")),
    Case("link", "huge frequency", "link s.toml", "link.frequency_ghz",
         scen("frequency_ghz = 12.0", "frequency_ghz = 1e308")),
    Case("link", "unknown key", "link s.toml", "link.colour", scen("roll_off = 0.25", 'roll_off = 0.25\ncolour = 1')),
    Case("link", "missing required key", "link s.toml", "link.roll_off", scen("roll_off = 0.25\n", "")),
    Case("link", "negative loss", "link s.toml", "losses.atmospheric_db",
         scen("atmospheric_db = 1.0", "atmospheric_db = -1.0")),
    Case("link", "unknown MODCOD source", "link s.toml", "modcods.source",
         scen('source = "dvb-s2"', 'source = "dvb-s9"')),
    Case("link", "missing MODCOD file", "link s.toml", "nope.csv",
         scen('source = "dvb-s2"', 'source = "file"\npath = "nope.csv"')),
    Case("link", "MODCOD CSV rate not a number", "link s.toml", "m.csv",
         {**scen('source = "dvb-s2"', 'source = "file"\npath = "m.csv"'), "m.csv": CSV + "A,qpsk,half,1.0,2.5\n"}),
    Case("link", "MODCOD CSV below Shannon", "link s.toml", "Shannon",
         {**scen('source = "dvb-s2"', 'source = "file"\npath = "m.csv"'), "m.csv": CSV + "A,16qam,3/4,3.0,8.0\n"}),
    Case("link", "elevation option 95", "link s.toml --elevation 95", "--elevation", {"s.toml": SCENARIO}),
    Case("link", "elevation option not a number", "link s.toml --elevation up", "--elevation",
         {"s.toml": SCENARIO}),
    Case("link", "JSON output under a regular file", "link s.toml --json plain/o.json", "--json",
         {"s.toml": SCENARIO, "plain": "x"}),
    Case("link", "good JSON path, SVG path a folder", "link s.toml --json o.json --svg sdir", "--svg",
         {"s.toml": SCENARIO, "sdir": None}),
    # --- modcod (MODCOD tables from coded sweeps) ---------------------------------------------------
    Case("modcod", "no code", "modcod --target-fer 1e-2 --esn0-range 0,4,1 --csv o.csv", "--code"),
    Case("modcod", "unknown code", "modcod --code turbo --target-fer 1e-2 --esn0-range 0,4,1", "--code"),
    Case("modcod", "unknown modulation", "modcod --mod 12qam --code conv-k7-r1/2 --target-fer 1e-2 "
         "--esn0-range 0,4,1", "--mod"),
    Case("modcod", "no target", "modcod --code conv-k7-r1/2 --esn0-range 0,4,1", "--target-ber"),
    Case("modcod", "two targets", "modcod --code conv-k7-r1/2 --target-ber 1e-5 --target-fer 1e-2 "
         "--esn0-range 0,4,1", "--target-fer"),
    Case("modcod", "target FER of 1", "modcod --code conv-k7-r1/2 --target-fer 1 --esn0-range 0,4,1",
         "--target-fer"),
    Case("modcod", "target BER not a number", "modcod --code conv-k7-r1/2 --target-ber low --esn0-range 0,4,1",
         "--target-ber"),
    Case("modcod", "no Es/N0 grid", "modcod --code conv-k7-r1/2 --target-fer 1e-2", "--esn0-range"),
    Case("modcod", "grid of one value", "modcod --code conv-k7-r1/2 --target-fer 1e-2 --esn0-range 3,3,1",
         "--esn0-range"),
    Case("modcod", "grid with zero step", "modcod --code conv-k7-r1/2 --target-fer 1e-2 --esn0-range 0,4,0",
         "--esn0-range"),
    Case("modcod", "zero minimum errors", "modcod --code conv-k7-r1/2 --target-fer 1e-2 --esn0-range 0,4,1 "
         "--min-errors 0", "--min-errors"),
    Case("modcod", "unknown LLR method", "modcod --code conv-k7-r1/2 --target-fer 1e-2 --esn0-range 0,4,1 "
         "--llr fast", "--llr"),
    Case("modcod", "link option: zero samples per symbol", "modcod --code conv-k7-r1/2 --target-fer 1e-2 "
         "--esn0-range 0,4,1 --sps 0", "--sps"),
    Case("modcod", "link option: missing phase-noise mask", "modcod --code conv-k7-r1/2 --target-fer 1e-2 "
         "--esn0-range 0,4,1 --sps 4 --phase-noise-mask nofile.csv", "--phase-noise-mask"),
    Case("modcod", "CSV output is a directory", "modcod --code conv-k7-r1/2 --target-fer 1e-2 "
         "--esn0-range 0,4,1 --csv outdir", "--csv", {"outdir": None}),
    Case("modcod", "JSON output in a missing folder", "modcod --code conv-k7-r1/2 --target-fer 1e-2 "
         "--esn0-range 0,4,1 --json nodir/t.json", "--json"),
    # --- evm budget (options, line-up files, limits) -------------------------------------------------
    Case("evm", "budget: limit without a unit", "evm budget --snr-db 20 --limit 8", "--limit"),
    Case("evm", "budget: soft phase detector", "evm budget --snr-db 20 --phase-deg 5 --tracker-detector soft",
         "--tracker-detector"),
    Case("evm", "budget: limit above 100 %", "evm budget --snr-db 20 --limit 150% --json o.json", "--limit"),
    Case("evm", "budget: limit and limit table", "evm budget --snr-db 20 --limit 8% --limit-table 3gpp-nr-bs",
         "--limit-table"),
    Case("evm", "budget: unknown limit table", "evm budget --snr-db 20 --limit-table 3gpp-xx", "--limit-table"),
    Case("evm", "budget: table without the modulation", "evm budget --mod 8psk --snr-db 20 --limit-table 3gpp-nr-bs",
         "--mod"),
    Case("evm", "budget: rate without a table", "evm budget --snr-db 20 --limit 8% --rate 1/2", "--rate"),
    Case("evm", "budget: unknown modulation", "evm budget --mod 12qam --snr-db 20", "--mod"),
    Case("evm", "budget: SNR not a number", "evm budget --snr-db high", "--snr-db"),
    Case("evm", "budget: SNR above 150 dB", "evm budget --snr-db 500 --svg o.svg", "--snr-db"),
    Case("evm", "budget: SNR and a noise figure", "evm budget --snr-db 20 --signal-dbm -70 --noise-figure-db 3",
         "--snr-db"),
    Case("evm", "budget: noise figure without a signal level", "evm budget --noise-figure-db 3", "--signal-dbm"),
    Case("evm", "budget: IQ gain 20 dB", "evm budget --snr-db 20 --iq-gain-db 20", "--iq-gain-db"),
    Case("evm", "budget: multipath (no equaliser modelled)", "evm budget --snr-db 20 --multipath 0:1:0,2:0.1:0",
         "--multipath"),
    Case("evm", "budget: carrier offset beyond fs/2", "evm budget --snr-db 20 --cfo-hz 2e6", "--cfo-hz"),
    Case("evm", "budget: unknown allowance", "evm budget --snr-db 20 --limit 8% --solve noise", "--solve"),
    Case("evm", "budget: allowance without a limit", "evm budget --snr-db 20 --solve iq", "--solve"),
    Case("evm", "budget: back-off allowance without amplifier", "evm budget --snr-db 20 --limit 8% --solve backoff",
         "--solve"),
    Case("evm", "budget: zero simulated frames", "evm budget --snr-db 20 --simulate --frames 0", "--frames"),
    Case("evm", "budget: margin 100 dB", "evm budget --snr-db 20 --limit 8% --margin-db 100", "--margin-db"),
    Case("evm", "budget: missing line-up file", "evm budget --lineup none.toml", "none.toml"),
    Case("evm", "budget: line-up with an unknown key", "evm budget l.toml --json o.json", "colour",
         {"l.toml": LINEUP + "colour = 1\n"}),
    Case("evm", "budget: line-up and a link option", "evm budget --lineup l.toml --sps 4", "--sps",
         {"l.toml": LINEUP}),
    Case("evm", "budget: line-up given twice", "evm budget l.toml --lineup l.toml", "l.toml", {"l.toml": LINEUP}),
    Case("evm", "budget: JSON output in a missing folder", "evm budget --snr-db 20 --json nodir/o.json", "--json"),
    Case("evm", "no evm subcommand", "evm", "subcommand"),
    # --- evm measure (recordings) -----------------------------------------------------------------
    Case("evm", "measure: no recording", "evm measure --mod qpsk", "--raw"),
    Case("evm", "measure: missing metadata file", "evm measure none.sigmf-meta --mod qpsk --symbol-rate 1e6",
         "none.sigmf-meta"),
    Case("evm", "measure: missing data file", "evm measure r.sigmf-meta --mod qpsk --symbol-rate 1e6",
         "r.sigmf-data", {"r.sigmf-meta": SIGMF}),
    Case("evm", "measure: unknown datatype", "evm measure r --mod qpsk --symbol-rate 1e5", "core:datatype",
         {"r.sigmf-meta": SIGMF.replace("cf32_le", "cq16"), "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: data not whole samples", "evm measure r --mod qpsk --symbol-rate 1e5", "r.sigmf-data",
         {"r.sigmf-meta": SIGMF, "r.sigmf-data": "\0" * 63}),
    Case("evm", "measure: metadata not JSON", "evm measure r --mod qpsk --symbol-rate 1e5 --json o.json",
         "r.sigmf-meta", {"r.sigmf-meta": '{"global": ', "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: absurd sample rate", "evm measure r --mod qpsk --symbol-rate 1e5", "core:sample_rate",
         {"r.sigmf-meta": SIGMF.replace("1e6", "1e15"), "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: symbol rate too high for the sample rate", "evm measure r --mod qpsk --symbol-rate 9e5",
         "--symbol-rate", {"r.sigmf-meta": SIGMF, "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: no description, no modulation", "evm measure r", "--mod",
         {"r.sigmf-meta": SIGMF, "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: bad value in the description", "evm measure r", "qamsight:symbol_rate_hz",
         {"r.sigmf-meta": SIGMF.replace('"1.0.0"', '"1.0.0", "qamsight:modulation": "qpsk", '
                                        '"qamsight:symbol_rate_hz": -5'), "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: raw without a sample rate", "evm measure --raw x.iq --mod qpsk --symbol-rate 1e5",
         "--sample-rate", {"x.iq": "\0" * 64}),
    Case("evm", "measure: raw datatype unknown",
         "evm measure --raw x.iq --raw-datatype ci12 --sample-rate 1e6 --mod qpsk --symbol-rate 1e5",
         "--raw-datatype", {"x.iq": "\0" * 64}),
    Case("evm", "measure: raw sample rate 0",
         "evm measure --raw x.iq --sample-rate 0 --mod qpsk --symbol-rate 1e5", "--sample-rate", {"x.iq": "\0" * 64}),
    Case("evm", "measure: raw data not whole samples",
         "evm measure --raw x.iq --sample-rate 1e6 --mod qpsk --symbol-rate 1e5", "x.iq", {"x.iq": "\0" * 63}),
    Case("evm", "measure: even equaliser taps", "evm measure r --mod qpsk --symbol-rate 1e5 --equaliser-taps 4",
         "--equaliser-taps", {"r.sigmf-meta": SIGMF, "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: roll-off 0", "evm measure r --mod qpsk --symbol-rate 1e5 --rolloff 0 --blind",
         "--rolloff", {"r.sigmf-meta": SIGMF, "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: limit in positive dB", "evm measure r --mod qpsk --symbol-rate 1e5 --limit 3dB",
         "--limit", {"r.sigmf-meta": SIGMF, "r.sigmf-data": "\0" * 64}),
    Case("evm", "measure: SVG output is a folder", "evm measure r --mod qpsk --symbol-rate 1e5 --svg-evm sdir",
         "--svg-evm", {"r.sigmf-meta": SIGMF, "r.sigmf-data": "\0" * 64, "sdir": None}),
    # --- waveform (test recordings) -----------------------------------------------------------------
    Case("waveform", "no output name", "waveform --mod qpsk", "--out"),
    Case("waveform", "one sample per symbol", "waveform --sps 1 --out w", "--sps"),
    Case("waveform", "receiver tracker setting", "waveform --tracker on --out w", "--tracker"),
    Case("waveform", "receiver phase detector", "waveform --tracker-detector soft --out w", "--tracker-detector"),
    Case("waveform", "unknown datatype", "waveform --datatype cq16 --out w", "--datatype"),
    Case("waveform", "unknown modulation", "waveform --mod 3qam --out w", "--mod"),
    Case("waveform", "too few symbols", "waveform --symbols 100 --out w", "--symbols"),
    Case("waveform", "Es/N0 not a number", "waveform --esn0 nan --out w", "--esn0"),
    Case("waveform", "Es/N0 above 150 dB", "waveform --esn0 400 --out w", "--esn0"),
    Case("waveform", "PRBS of degree 16", "waveform --prbs 16 --out w", "--prbs"),
    Case("waveform", "payload of 8 symbols", "waveform --payload-symbols 8 --out w", "--payload-symbols"),
    Case("waveform", "integer headroom 50 dB", "waveform --datatype ci16_le --headroom-db 50 --out w",
         "--headroom-db"),
    Case("waveform", "multipath tap without a gain", "waveform --multipath 0:1 --out w", "--multipath"),
    Case("waveform", "missing phase-noise mask", "waveform --phase-noise-mask none.csv --out w", "none.csv"),
    Case("waveform", "output in a missing folder", "waveform --out nodir/w", "--out"),
    Case("waveform", "output under a regular file", "waveform --out plain/w", "--out", {"plain": "x"}),
    # --- report ------------------------------------------------------------------------------------
    Case("report", "folder missing", "report nowhere", "nowhere"),
    Case("report", "folder without results", "report empty", "none of waterfall.json", {"empty": None}),
    Case("report", "malformed EVM budget JSON", "report run", "evm-budget.json", {"run/evm-budget.json": "{\"lineup\": "}),
    Case("report", "contributions not an array", "report run", "contributions",
         {"run/evm-budget.json": "{\"lineup\": {}, \"contributions\": 3}"}),
    Case("report", "figure not SVG", "report run", "eye.svg", {"run/eye.svg": "<html></html>"}),
    Case("report", "malformed sweep JSON", "report run", "waterfall.json", {"run/waterfall.json": "[1, 2"}),
    Case("report", "output under a regular file", "report run --out plain/r.html", "--out",
         {"run/eye.svg": "<svg xmlns='http://www.w3.org/2000/svg'></svg>", "plain": ""}),
    # --- no subcommand ---------------------------------------------------------------------------
    Case("qamsight", "no subcommand", "", "subcommand"),
    Case("qamsight", "unknown subcommand", "simulate", "simulate"),
    # --- library readers without a subcommand yet (through qamsight_reader_probe) ----------------
    Case("probe phase_noise_mask", "missing file", "probe phase_noise_mask none.csv", "none.csv"),
    Case("probe phase_noise_mask", "offset not a number", "probe phase_noise_mask m.csv", "offset_hz",
         {"m.csv": "offset_hz,dbc_hz\n1e3,-80\nten,-90\n"}),
    Case("probe phase_noise_mask", "level not finite", "probe phase_noise_mask m.csv", "dbc_hz",
         {"m.csv": "1e3,-80\n1e4,nan\n"}),
    Case("probe phase_noise_mask", "offsets not increasing", "probe phase_noise_mask m.csv", "offset_hz",
         {"m.csv": "1e4,-80\n1e3,-90\n"}),
    Case("probe phase_noise_mask", "negative offset", "probe phase_noise_mask m.csv", "offset_hz",
         {"m.csv": "-1,-80\n1e3,-90\n"}),
    Case("probe phase_noise_mask", "three fields", "probe phase_noise_mask m.csv", "offset_hz,dbc_hz",
         {"m.csv": "1e3,-80,5\n1e4,-90\n"}),
    Case("probe phase_noise_mask", "one point", "probe phase_noise_mask m.csv", "m.csv", {"m.csv": "1e3,-80\n"}),
    Case("probe phase_noise_mask", "empty file", "probe phase_noise_mask m.csv", "m.csv", {"m.csv": ""}),
    Case("probe evm_limit", "no unit", "probe evm_limit l.txt", "limit = 8", {"l.txt": "8"}),
    Case("probe evm_limit", "negative percent", "probe evm_limit l.txt", "limit = -5%", {"l.txt": "-5%"}),
    Case("probe evm_limit", "above 100 %", "probe evm_limit l.txt", "limit = 200%", {"l.txt": "200%"}),
    Case("probe evm_limit", "positive dB", "probe evm_limit l.txt", "limit = 5dB", {"l.txt": "5dB"}),
    Case("probe evm_limit", "not a number", "probe evm_limit l.txt", "limit = nan%", {"l.txt": "nan%"}),
    Case("probe alist", "missing file", "probe alist none.alist", "none.alist"),
    Case("probe alist", "empty file", "probe alist h.alist", "h.alist", {"h.alist": ""}),
    Case("probe alist", "index out of range", "probe alist h.alist", "out of range", alist("1 2 3\n1 4", "1 2 9\n1 4")),
    Case("probe alist", "token not a number", "probe alist h.alist", "'x'", alist("7 3\n", "7 x\n")),
    Case("probe alist", "huge dimensions", "probe alist h.alist", "h.alist", alist("7 3\n", "4000000000 3000000000\n")),
    Case("probe alist", "rows and columns disagree", "probe alist h.alist", "disagree",
         alist("3 5 6 7\n", "3 4 6 7\n")),
    Case("probe alist", "truncated", "probe alist h.alist", "h.alist", {"h.alist": ALIST[:40]}),
    Case("probe modcod_json", "not JSON", "probe modcod_json m.json", "m.json", {"m.json": "{"}),
    Case("probe modcod_json", "rows not an array", "probe modcod_json m.json", "modcods",
         {"m.json": '{"modcods": 1}'}),
    Case("probe modcod_csv", "header only", "probe modcod_csv m.csv", "m.csv", {"m.csv": CSV}),
    Case("probe modcod_csv", "missing column", "probe modcod_csv m.csv", "required_es_n0_db",
         {"m.csv": "name,modulation,rate,bits_per_symbol_info\nA,qpsk,1/2,1.0\n"}),
    Case("probe checkpoint", "header with a wrong checksum", "probe checkpoint c.ckpt", "not a qamsight checkpoint",
         {"c.ckpt": '00000000 {"record":"header"}\n'}),
    Case("probe sigmf_meta", "missing metadata file", "probe sigmf_meta none.sigmf-meta", "none.sigmf-meta"),
    Case("probe sigmf_meta", "metadata not JSON", "probe sigmf_meta r.sigmf-meta", "r.sigmf-meta",
         {"r.sigmf-meta": "{", "r.sigmf-data": "\0" * 64}),
    Case("probe sigmf_meta", "unknown datatype", "probe sigmf_meta r.sigmf-meta", "core:datatype",
         {"r.sigmf-meta": SIGMF.replace("cf32_le", "cq16"), "r.sigmf-data": "\0" * 64}),
    Case("probe sigmf_meta", "sample rate 0", "probe sigmf_meta r.sigmf-meta", "core:sample_rate",
         {"r.sigmf-meta": SIGMF.replace("1e6", "0"), "r.sigmf-data": "\0" * 64}),
    Case("probe sigmf_meta", "data not whole samples", "probe sigmf_meta r.sigmf-meta", "r.sigmf-data",
         {"r.sigmf-meta": SIGMF, "r.sigmf-data": "\0" * 63}),
    Case("probe sigmf_meta", "missing data file", "probe sigmf_meta r.sigmf-meta", "r.sigmf-data",
         {"r.sigmf-meta": SIGMF}),
    Case("probe evm_lineup", "unknown key", "probe evm_lineup l.toml", "colour",
         {"l.toml": LINEUP + "colour = 1\n"}),
    Case("probe evm_lineup", "unknown modulation", "probe evm_lineup l.toml", "modulation",
         {"l.toml": LINEUP.replace('"qpsk"', '"5qam"')}),
    Case("probe evm_lineup", "TOML syntax error", "probe evm_lineup l.toml", "l.toml", {"l.toml": LINEUP + "[noise\n"}),
    Case("probe sweep_json", "count is a string", "probe sweep_json r.json", "points[0].bits",
         result('"bits": 100000', '"bits": "many"')),
    Case("probe link_scenario", "array where a table belongs", "probe link_scenario s.toml", "orbit",
         scen("[orbit]\naltitude_km = 35786", "orbit = [1, 2]")),
]

PROBE = os.environ.get("QAMSIGHT_READER_PROBE") and os.path.abspath(os.environ["QAMSIGHT_READER_PROBE"])


def snapshot(root):
    out = set()
    for dirpath, dirnames, filenames in os.walk(root):
        for n in dirnames + filenames:
            out.add(os.path.relpath(os.path.join(dirpath, n), root))
    return out


def run_args(cli, args, timeout):
    argv = shlex.split(args)
    if argv and argv[0] == "probe":
        if not PROBE:
            pytest.fail("QAMSIGHT_READER_PROBE is not set (ctest sets it to qamsight_reader_probe)")
        cmd = [PROBE, *argv[1:]]
    else:
        cmd = [cli.path, *argv]
    return subprocess.run(cmd, capture_output=True, timeout=timeout, cwd=cli.tmp)


@pytest.mark.parametrize("case", CASES, ids=[f"{c.area}: {c.what}" for c in CASES])
def test_bad_input_exits_2_with_one_line_and_leaves_nothing(cli, case):
    for name, text in case.files.items():
        path = os.path.join(cli.tmp, name)
        if text is None:
            os.makedirs(path)
        else:
            os.makedirs(os.path.dirname(path), exist_ok=True)
            with open(path, "w", encoding="utf-8", errors="surrogateescape") as fh:
                fh.write(text)
    for cmd in case.setup:
        res = run_args(cli, cmd, TIME_LIMIT_S)
        assert res.returncode == 0, res.stderr
    before = snapshot(cli.tmp)
    try:
        res = run_args(cli, case.args, TIME_LIMIT_S)
    except subprocess.TimeoutExpired:
        pytest.fail(f"hang: no answer within {TIME_LIMIT_S:.0f} s")
    stderr = res.stderr.decode("utf-8", "replace")
    stdout = res.stdout.decode("utf-8", "replace")
    assert res.returncode >= 0, f"killed by signal {-res.returncode}: {stderr}"
    assert res.returncode == 2, f"exit {res.returncode}\nstdout:\n{stdout}\nstderr:\n{stderr}"
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, stderr
    assert case.names in lines[0], f"{case.names!r} not named in {lines[0]!r}"
    assert not re.search(r"\bnan\b", stdout, re.IGNORECASE), stdout
    after = snapshot(cli.tmp)
    assert after == before, f"left behind: {sorted(after - before)}; removed: {sorted(before - after)}"


def test_every_subcommand_and_reader_has_rows(cli):
    out = subprocess.run([cli.path, "--help"], capture_output=True, text=True, check=True).stdout
    commands = re.findall(r"^  (\w+)\s{2,}", out.split("Subcommands:")[1], re.MULTILINE)
    assert len(commands) >= 5, out
    areas = {c.area for c in CASES}
    assert set(commands) <= areas, f"subcommands without bad-input rows: {set(commands) - areas}"
    if PROBE:
        usage = subprocess.run([PROBE], capture_output=True, text=True).stderr
        readers = re.search(r"READER: ([^)]*)\)", usage).group(1).split(", ")
        covered = {c.area.split()[1] for c in CASES if c.area.startswith("probe ")}
        # A reader is covered by a probe row or through a subcommand that reads its files.
        through_cli = {"sweep_json": "check", "link_scenario": "link", "modcod_csv": "link", "checkpoint": "sweep"}
        missing = [r for r in readers if r not in covered and through_cli.get(r) not in areas]
        assert not missing, f"readers without bad-input rows: {missing}"


def test_matrix_document_is_current():
    import make_bad_input_doc
    fresh = make_bad_input_doc.render(CASES)
    with open(DOC, encoding="utf-8") as fh:
        kept = fh.read()
    assert kept == fresh, ("docs/bad-input-matrix.md is out of date: run "
                           "/usr/bin/python3 tests/cli/make_bad_input_doc.py")
