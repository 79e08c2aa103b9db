"""MPI sweeps: `mpirun -np 2 qamsight sweep` must give exactly the counts of a single-process run."""
import json
import os
import shutil
import subprocess

import pytest

KEYS = ["modulation", "eb_n0_db", "bits", "bit_errors", "symbols", "symbol_errors", "frames", "frame_errors",
        "evm_rms_pct", "stop_reason"]
GRID = ["sweep", "--mod", "16qam,64qam", "--ebn0", "8,12", "--min-errors", "300", "--max-bits", "4e6",
        "--frame-symbols", "1000", "--seed", "21", "--quiet", "--no-progress"]


def has_mpi(cli):
    return "(MPI)" in cli.run("--version", check=0).stdout


def rows(path):
    with open(path) as fh:
        return [[p[k] for k in KEYS] for p in json.load(fh)["points"]]


def test_two_ranks_match_single_process(cli):
    if not has_mpi(cli):
        pytest.skip("this qamsight build has no MPI support (configure with -DQAMSIGHT_MPI=ON)")
    mpirun = shutil.which("mpirun")
    assert mpirun, "qamsight was built with MPI but mpirun is not on PATH (Debian package openmpi-bin)"
    single = os.path.join(cli.tmp, "single.json")
    cli.run(*GRID, "--threads", "1", "--json", single, check=0)
    multi = os.path.join(cli.tmp, "mpi.json")
    proc = subprocess.run([mpirun, "--allow-run-as-root", "--oversubscribe", "-np", "2", cli.path, *GRID,
                           "--threads", "1", "--json", multi], capture_output=True, text=True, timeout=600,
                          cwd=cli.tmp)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert rows(multi) == rows(single)
    # Threads inside ranks: 2 ranks x 2 threads, still identical.
    multi2 = os.path.join(cli.tmp, "mpi2.json")
    proc = subprocess.run([mpirun, "--allow-run-as-root", "--oversubscribe", "-np", "2", cli.path, *GRID,
                           "--threads", "2", "--json", multi2], capture_output=True, text=True, timeout=600,
                          cwd=cli.tmp)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert rows(multi2) == rows(single)


def test_only_rank_zero_prints(cli):
    if not has_mpi(cli):
        pytest.skip("this qamsight build has no MPI support (configure with -DQAMSIGHT_MPI=ON)")
    proc = subprocess.run([shutil.which("mpirun") or "mpirun", "--allow-run-as-root", "--oversubscribe", "-np", "2",
                           cli.path, "sweep", "--mod", "qpsk", "--ebn0", "4", "--max-bits", "2e5", "--no-progress"],
                          capture_output=True, text=True, timeout=600, cwd=cli.tmp)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    # One table: the header line (it names the modulation column) appears once.
    header = [line for line in proc.stdout.splitlines() if "ber" in line.lower() and "mod" in line.lower()]
    assert len(header) == 1, proc.stdout
