#!/usr/bin/python3
"""compare_numpy: the same BER chains through vectorised NumPy/SciPy and through qamsight, one run each.

Chains (symbols/s of transmitted 64-QAM symbols, one process invocation, same machine):
  (a) symbol-rate 64-QAM AWGN BER chain, single-threaded:
      labels -> Gray table lookup -> AWGN -> per-axis slicing -> popcount of tx ^ rx (+ EVM sum)
  (b) the same with RRC pulse shaping at 4 samples/symbol (roll-off 0.25, span 12):
      map -> interpolate (scipy.signal.upfirdn) -> AWGN -> matched filter + decimate -> slice -> count
  (c) qamsight's chain (a) on 2 threads against 1 thread.
The NumPy side is what an engineer would write: numpy Generator integers and normals, table
lookup for the Gray map, np.clip/np.floor slicing, a 256-entry popcount table, upfirdn for the
filters. The qamsight side is build/bench/qamsight_bench_chain (the sweep engine itself).

  /usr/bin/python3 bench/compare_numpy.py --bench build/bench/qamsight_bench_chain [--json out.json]
"""
import argparse
import json
import os
import subprocess
import sys
import time

import numpy as np
from scipy import signal

M, K, L = 64, 6, 8


def gray_table():
    d = np.sqrt(3.0 / (2.0 * (M - 1)))
    idx = np.arange(L)
    gray = idx ^ (idx >> 1)
    amp = (2.0 * idx - (L - 1)) * d
    table = np.empty(M, np.complex64)
    for ii in range(L):
        for iq in range(L):
            table[(gray[ii] << 3) | gray[iq]] = amp[ii] + 1j * amp[iq]
    return table, gray.astype(np.uint32), d


POPCOUNT = np.array([bin(i).count("1") for i in range(256)], np.uint8)


def slice_labels(r, gray, d):
    ii = np.clip(np.floor((r.real / d + L) / 2), 0, L - 1).astype(np.intp)
    iq = np.clip(np.floor((r.imag / d + L) / 2), 0, L - 1).astype(np.intp)
    return (gray[ii] << 3) | gray[iq]


def rrc_taps(beta, span, sps):
    n = span * sps + 1
    t = (np.arange(n) - (n - 1) / 2) / sps
    with np.errstate(divide="ignore", invalid="ignore"):
        h = (np.sin(np.pi * t * (1 - beta)) + 4 * beta * t * np.cos(np.pi * t * (1 + beta))) / (
            np.pi * t * (1 - (4 * beta * t) ** 2))
    h[t == 0] = 1 - beta + 4 * beta / np.pi
    sing = np.isclose(np.abs(t), 1 / (4 * beta))
    h[sing] = beta / np.sqrt(2) * ((1 + 2 / np.pi) * np.sin(np.pi / (4 * beta)) + (1 - 2 / np.pi) * np.cos(np.pi / (4 * beta)))
    return h / np.sqrt(np.sum(h * h))


def numpy_chain(symbols, esn0_db, frame, sps=1, beta=0.25, span=12, seed=1):
    rng = np.random.default_rng(seed)
    table, gray, d = gray_table()
    sigma = np.sqrt(10 ** (-esn0_db / 10) / 2)  # per real dimension; N0 per sample (unit-energy taps)
    h = rrc_taps(beta, span, sps).astype(np.float32) if sps > 1 else None
    bit_errors = sym_errors = done = 0
    evm = 0.0
    t0 = time.perf_counter()
    while done < symbols:
        tx = rng.integers(0, M, frame, dtype=np.uint32)
        s = table[tx]
        if h is None:
            n = rng.standard_normal((2, frame))
            r = s + (sigma * n[0] + 1j * sigma * n[1]).astype(np.complex64)
            y = r
        else:
            x = signal.upfirdn(h, s, up=sps)  # frame*sps + taps - 1 samples
            n = rng.standard_normal((2, x.size))
            r = x + (sigma * n[0] + 1j * sigma * n[1]).astype(np.complex64)
            y = signal.upfirdn(h, r, down=sps)[span:span + frame]  # cascade delay: span symbols
        rx = slice_labels(y, gray, d)
        diff = (tx ^ rx).astype(np.uint8)  # 6-bit labels
        bit_errors += int(POPCOUNT[diff].sum(dtype=np.int64))
        sym_errors += int(np.count_nonzero(diff))
        evm += float(np.sum(np.abs(y - s) ** 2))
        done += frame
    seconds = time.perf_counter() - t0
    return {"symbols": done, "seconds": seconds, "symbols_per_second": done / seconds,
            "ber": bit_errors / (done * K), "evm_sum": evm}


def qamsight_chain(bench, **kw):
    args = [bench]
    for k, v in kw.items():
        args += ["--" + k.replace("_", "-"), str(v)]
    out = subprocess.run(args, capture_output=True, text=True, check=True).stdout
    return json.loads(out)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--bench", default=os.path.join("build", "bench", "qamsight_bench_chain"))
    ap.add_argument("--esn0", type=float, default=22.0)
    ap.add_argument("--numpy-symbols", type=float, default=2e6)
    ap.add_argument("--qamsight-symbols", type=float, default=4e7)
    ap.add_argument("--rrc-numpy-symbols", type=float, default=5e5)
    ap.add_argument("--rrc-qamsight-symbols", type=float, default=4e6)
    ap.add_argument("--json", help="also write the results to this file")
    a = ap.parse_args()
    res = {}
    res["a_numpy"] = numpy_chain(int(a.numpy_symbols), a.esn0, 65536)
    res["a_qamsight"] = qamsight_chain(a.bench, chain="symbol", mod="64qam", esn0=a.esn0,
                                       symbols=int(a.qamsight_symbols), threads=1)
    res["b_numpy"] = numpy_chain(int(a.rrc_numpy_symbols), a.esn0, 16384, sps=4)
    res["b_qamsight"] = qamsight_chain(a.bench, chain="rrc", mod="64qam", esn0=a.esn0,
                                       symbols=int(a.rrc_qamsight_symbols), threads=1, sps=4, roll_off=0.25,
                                       span=12)
    res["c_qamsight_2threads"] = qamsight_chain(a.bench, chain="symbol", mod="64qam", esn0=a.esn0,
                                                symbols=int(2 * a.qamsight_symbols), threads=2)
    ra = res["a_qamsight"]["symbols_per_second"] / res["a_numpy"]["symbols_per_second"]
    rb = res["b_qamsight"]["symbols_per_second"] / res["b_numpy"]["symbols_per_second"]
    rc = res["c_qamsight_2threads"]["symbols_per_second"] / res["a_qamsight"]["symbols_per_second"]
    res["ratios"] = {"a": ra, "b": rb, "c": rc}
    print(f"kernels: {res['a_qamsight']['kernels']}   load average: {os.getloadavg()[0]:.2f}")
    print(f"{'chain':44s} {'NumPy/SciPy sym/s':>18s} {'qamsight sym/s':>15s} {'ratio':>8s}")
    print(f"{'(a) 64-QAM AWGN symbol rate, 1 thread':44s} {res['a_numpy']['symbols_per_second']:18.4g} "
          f"{res['a_qamsight']['symbols_per_second']:15.4g} {ra:8.1f}")
    print(f"{'(b) 64-QAM RRC 4 sps b=0.25 span 12, 1 thread':44s} {res['b_numpy']['symbols_per_second']:18.4g} "
          f"{res['b_qamsight']['symbols_per_second']:15.4g} {rb:8.1f}")
    print(f"{'(c) qamsight (a) 2 threads vs 1 thread':44s} {'':18s} "
          f"{res['c_qamsight_2threads']['symbols_per_second']:15.4g} {rc:8.2f}")
    if a.json:
        with open(a.json, "w") as fh:
            json.dump(res, fh, indent=2)
    return 0


if __name__ == "__main__":
    sys.exit(main())
