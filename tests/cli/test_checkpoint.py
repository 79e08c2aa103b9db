"""End-to-end tests of `qamsight sweep --checkpoint/--resume`: kills, Ctrl-C, damaged files.

The reference for every resumed sweep is an uninterrupted run with the same seed: the design
promises bit-identical counts (frames keyed by seed, point and frame; stopping rule only at
batch boundaries). The file format is checked with independent implementations of its two
checksums: zlib.crc32 (CRC-32 of IEEE 802.3) and FNV-1a 64 written out below from its
published constants (offset basis 0xcbf29ce484222325, prime 0x100000001b3).
"""
import json
import os
import random
import signal
import subprocess
import time
import zlib

import pytest

# A sweep of a second or two on one core of the build machine with many batches per point
# (small frames, many errors wanted), so that the kills below land while it works.
SWEEP = ["--mod", "qpsk,16qam", "--ebn0", "3,6,9", "--min-errors", "100000", "--max-bits", "5e8",
         "--frame-symbols", "512", "--seed", "29"]
KEYS = ["modulation", "eb_n0_db", "bits", "bit_errors", "symbols", "symbol_errors", "frames", "frame_errors",
        "evm_rms_pct", "mer_db", "stop_reason"]


def fnv1a64(data):
    h = 0xcbf29ce484222325
    for b in data:
        h = ((h ^ b) * 0x100000001b3) & 0xFFFFFFFFFFFFFFFF
    return h


def read_records(path):
    """Parses a checkpoint independently of the program; returns (records, torn_tail)."""
    data = open(path, "rb").read()
    lines = data.split(b"\n")
    torn = lines[-1] != b""
    records = []
    for i, line in enumerate(lines[:-1]):
        crc, body = line[:8], line[9:]
        assert line[8:9] == b" ", f"line {i + 1} framing"
        assert int(crc, 16) == zlib.crc32(body), f"line {i + 1} checksum"
        records.append(json.loads(body))
    return records, torn


def counts(doc):
    return [[p[k] for k in KEYS] for p in doc["points"]]


def start(cli, *args):
    return subprocess.Popen([cli.path, "sweep", *SWEEP, "--quiet", "--no-progress", *map(str, args)],
                            cwd=cli.tmp, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


@pytest.fixture
def reference(cli):
    t0 = time.monotonic()
    doc, _ = cli.sweep_json(*SWEEP, "--threads", "1", name="reference.json")
    return doc, time.monotonic() - t0


def test_sigkill_at_random_moments_then_resume_gives_identical_counts(cli, reference):
    ref, seconds = reference
    ck = os.path.join(cli.tmp, "run.ckpt")
    out = os.path.join(cli.tmp, "out.json")
    rng = random.Random(20240607)  # fixed seed: the kill moments are reproducible
    seen_records = []
    for _ in range(5):
        proc = start(cli, "--checkpoint", ck, "--resume", "--json", out, "--threads", "2")
        time.sleep(rng.uniform(0.02, 0.5) * seconds)
        proc.send_signal(signal.SIGKILL)
        proc.communicate(timeout=60)
        if proc.returncode == 0:
            break  # finished before the kill: nothing left to interrupt
        assert proc.returncode == -signal.SIGKILL
        if os.path.exists(out):
            # The kill came after the sweep had completed (the JSON is renamed into place only
            # then) but before the process had exited: the file must be whole and final.
            assert counts(json.load(open(out))) == counts(ref), "a JSON appeared before the sweep completed"
            break
        if os.path.exists(ck):
            records, _ = read_records(ck)
            seen_records.append(len(records))
    # At least one kill landed after some batches were recorded (so resumption was exercised).
    assert any(n > 1 for n in seen_records), seen_records
    res = cli.run("sweep", *SWEEP, "--checkpoint", ck, "--resume", "--json", out, "--quiet", "--threads", "2",
                  check=0)
    assert "resuming from checkpoint" in res.stderr or "starting a new one" in res.stderr
    doc = json.load(open(out))
    assert counts(doc) == counts(ref)
    # The finished checkpoint: header fingerprint is FNV-1a 64 of the settings text, and the last
    # record of every point is finished with the counts of the JSON.
    records, torn = read_records(ck)
    assert not torn
    header = records[0]
    settings = json.dumps(header["settings"], separators=(",", ":"), ensure_ascii=False)
    assert int(header["fingerprint"], 16) == fnv1a64(settings.encode())
    last = {}
    for r in records[1:]:
        last[r["point"]] = r
    assert sorted(last) == list(range(len(ref["points"])))
    for i, p in enumerate(ref["points"]):
        assert last[i]["done"] and last[i]["bits"] == p["bits"] and last[i]["bit_errors"] == p["bit_errors"]
        # EVM sums are stored exactly as hexadecimal floats.
        e, r0 = float.fromhex(last[i]["evm_error_power"]), float.fromhex(last[i]["evm_reference_power"])
        assert 100 * (e / r0) ** 0.5 == pytest.approx(p["evm_rms_pct"], rel=1e-12)


def wait_for_records(path, n, proc, timeout=120):
    t0 = time.monotonic()
    while time.monotonic() - t0 < timeout:
        if os.path.exists(path) and len(read_records(path)[0]) > n:
            return
        if proc.poll() is not None:
            pytest.fail("sweep ended before it could be interrupted")
        time.sleep(0.01)
    pytest.fail("no checkpoint records appeared")


@pytest.mark.parametrize("sig,status", [(signal.SIGINT, 130), (signal.SIGTERM, 143)], ids=["SIGINT", "SIGTERM"])
def test_interrupt_stops_at_batch_boundary_keeps_checkpoint_and_resumes(cli, reference, sig, status):
    ref, _ = reference
    ck = os.path.join(cli.tmp, "int.ckpt")
    out = os.path.join(cli.tmp, "int.json")
    proc = subprocess.Popen([cli.path, "sweep", *SWEEP, "--no-progress", "--checkpoint", ck, "--json", out],
                            cwd=cli.tmp, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    wait_for_records(ck, 3, proc)
    proc.send_signal(sig)
    stdout, stderr = proc.communicate(timeout=60)
    assert proc.returncode == status, stderr
    assert "--resume" in stderr and ck in stderr and "interrupted" in stderr
    assert not os.path.exists(out)
    # The checkpoint is complete: every line whole and checked, no torn tail.
    records, torn = read_records(ck)
    assert not torn and len(records) >= 4
    finished = [r["point"] for r in records[1:] if r["done"]]
    # The table shows the finished points (and the one that was cut short, marked cancelled).
    table_rows = [ln for ln in stdout.splitlines() if ln.startswith(("qpsk", "16qam"))]
    assert len(table_rows) >= len(finished)
    res = cli.run("sweep", *SWEEP, "--checkpoint", ck, "--resume", "--json", out, "--quiet", check=0)
    assert f"{len(finished)} of 6 points finished" in res.stderr
    assert counts(json.load(open(out))) == counts(ref)


def test_resuming_a_finished_checkpoint_recomputes_nothing(cli):
    ck = os.path.join(cli.tmp, "f.ckpt")
    args = ["--mod", "qpsk", "--ebn0", "4", "--max-bits", "1e5", "--checkpoint", ck]
    a, _ = cli.sweep_json(*args, name="a.json")
    n = len(read_records(ck)[0])
    b, _ = cli.sweep_json(*args, "--resume", name="b.json")
    assert counts(a) == counts(b)
    assert len(read_records(ck)[0]) == n  # nothing appended


def test_torn_last_record_is_ignored(cli, reference):
    ref, _ = reference
    ck = os.path.join(cli.tmp, "t.ckpt")
    proc = start(cli, "--checkpoint", ck)
    wait_for_records(ck, 3, proc)
    proc.send_signal(signal.SIGKILL)
    proc.communicate(timeout=60)
    records, _ = read_records(ck)
    with open(ck, "ab") as fh:  # a record cut short by a crash: no newline
        fh.write(b'0badc0de {"record":"batch","point":0,"next_fr')
    out = os.path.join(cli.tmp, "t.json")
    res = cli.run("sweep", *SWEEP, "--checkpoint", ck, "--resume", "--json", out, "--quiet", check=0)
    assert "torn last record was dropped" in res.stderr
    assert counts(json.load(open(out))) == counts(ref)
    assert not read_records(ck)[1]


def test_whole_last_line_with_bad_checksum_is_a_torn_record(cli):
    ck = os.path.join(cli.tmp, "c.ckpt")
    args = ["--mod", "qpsk", "--ebn0", "4", "--max-bits", "1e5", "--checkpoint", ck]
    a, _ = cli.sweep_json(*args, name="a.json")
    lines = open(ck, "rb").read().split(b"\n")
    lines[-2] = lines[-2].replace(b'"done":true', b'"done":fals')  # checksum no longer matches
    open(ck, "wb").write(b"\n".join(lines))
    b, _ = cli.sweep_json(*args, "--resume", name="b.json")
    assert counts(a) == counts(b)


def one_line_error(res, *needles):
    assert res.returncode == 2, res.stderr
    msg = res.stderr.strip()
    assert len(msg.splitlines()) == 1, msg
    for n in needles:
        assert n in msg, f"{n!r} not in {msg!r}"


def test_mismatching_fingerprint_is_an_input_error_naming_file_and_setting(cli):
    ck = os.path.join(cli.tmp, "m.ckpt")
    base = ["--mod", "qpsk", "--ebn0", "4", "--max-bits", "1e5", "--checkpoint", ck, "--quiet"]
    cli.run("sweep", *base, check=0)
    for extra, needle in [(["--min-errors", "50"], "stop_rule.min_errors"), (["--seed", "2"], "seed"),
                          (["--frame-symbols", "1024"], "link.frame_symbols"),
                          (["--impl-loss-db", "0.5"], "link.impl_loss_db")]:
        res = cli.run("sweep", *base, "--resume", *extra)
        one_line_error(res, ck, needle, "different sweep")
    res = cli.run("sweep", "--mod", "qpsk", "--ebn0", "4,5", "--max-bits", "1e5", "--checkpoint", ck, "--resume")
    one_line_error(res, ck, "snr_db")


@pytest.mark.parametrize("content,needle", [
    (b"", "empty file"),
    (bytes(random.Random(5).randrange(256) for _ in range(300)), "not a qamsight checkpoint"),
    (b'{"record":"header"}\n', "not a qamsight checkpoint"),
], ids=["empty", "random-bytes", "unframed"])
def test_garbage_checkpoint_is_an_input_error(cli, content, needle):
    ck = os.path.join(cli.tmp, "g.ckpt")
    open(ck, "wb").write(content)
    res = cli.run("sweep", "--mod", "qpsk", "--ebn0", "4", "--checkpoint", ck, "--resume")
    one_line_error(res, ck, needle)
    assert open(ck, "rb").read() == content  # left as it was


def test_damaged_middle_record_is_an_input_error(cli):
    ck = os.path.join(cli.tmp, "d.ckpt")
    args = ["--mod", "qpsk,16qam", "--ebn0", "4", "--max-bits", "2e5", "--checkpoint", ck, "--quiet"]
    cli.run("sweep", *args, check=0)
    lines = open(ck, "rb").read().split(b"\n")
    assert len(lines) >= 4
    lines[1] = lines[1].replace(b'"bits":', b'"bitz":')
    open(ck, "wb").write(b"\n".join(lines))
    one_line_error(cli.run("sweep", *args, "--resume"), ck, "line 2", "damaged")


def test_existing_checkpoint_without_resume_and_resume_without_checkpoint(cli):
    ck = os.path.join(cli.tmp, "e.ckpt")
    args = ["sweep", "--mod", "qpsk", "--ebn0", "4", "--max-bits", "1e5", "--quiet"]
    cli.run(*args, "--checkpoint", ck, check=0)
    before = open(ck, "rb").read()
    one_line_error(cli.run(*args, "--checkpoint", ck), ck, "already exists", "--resume")
    assert open(ck, "rb").read() == before
    one_line_error(cli.run(*args, "--resume"), "--resume", "--checkpoint")
    one_line_error(cli.run(*args, "--checkpoint", cli.tmp, "--resume"), "is a directory")


def test_second_sweep_on_a_checkpoint_in_use_is_refused(cli):
    ck = os.path.join(cli.tmp, "u.ckpt")
    proc = start(cli, "--checkpoint", ck)
    try:
        wait_for_records(ck, 1, proc)
        res = cli.run("sweep", *SWEEP, "--checkpoint", ck, "--resume", "--quiet")
        one_line_error(res, ck, "in use")
    finally:
        proc.kill()
        proc.communicate(timeout=60)
