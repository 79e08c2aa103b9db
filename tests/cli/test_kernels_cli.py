"""The vectorised kernels and the portable reference give identical sweeps (counts and EVM)."""
import json
import os
import subprocess

KEYS = ["bits", "bit_errors", "symbols", "symbol_errors", "frames", "frame_errors", "evm_rms_pct"]


def sweep(cli, name, kernels, *extra):
    out = os.path.join(cli.tmp, name)
    env = dict(os.environ)
    env.pop("QAMSIGHT_KERNELS", None)
    if kernels:
        env["QAMSIGHT_KERNELS"] = kernels
    proc = subprocess.run([cli.path, "sweep", "--mod", "qpsk,64qam,256qam", "--ebn0", "6,12", "--min-errors", "200",
                           "--max-bits", "3e6", "--frame-symbols", "999", "--json", out, "--quiet", "--no-progress",
                           *extra], capture_output=True, text=True, timeout=600, env=env, cwd=cli.tmp)
    assert proc.returncode == 0, proc.stderr
    with open(out) as fh:
        return [[p[k] for k in KEYS] for p in json.load(fh)["points"]]


def test_portable_and_dispatched_kernels_agree(cli):
    # QAMSIGHT_KERNELS=portable forces the reference path; the default takes AVX2 where the CPU has it.
    assert sweep(cli, "auto.json", None, "--threads", "2") == sweep(cli, "portable.json", "portable", "--threads", "1")


def test_rrc_chain_portable_and_dispatched_agree(cli):
    extra = ["--sps", "4"]
    help_text = subprocess.run([cli.path, "sweep", "--help"], capture_output=True, text=True).stdout
    if "--sps" not in help_text:
        extra = []
    assert sweep(cli, "a.json", None, *extra) == sweep(cli, "p.json", "portable", *extra)
