"""Cost of a Python receiver stage: frames per second of a sweep with a trivial pass-through
stage against the same sweep without a stage, measured in one run.

    PYTHONPATH=<build>/bindings/python python3 bindings/python/scripts/stage_cost.py [--frames N]

Both sweeps simulate the same frames (same seed, same counts: the pass-through stage returns the
built-in receiver's symbols); the script checks that and prints frames per second and the ratio
for each thread count and frame size. Each configuration is timed `--repeat` times, alternating
with and without the stage, and the fastest run is kept (the least disturbed by other load).
"""
import argparse
import os
import time

import qamsight as qs


def pass_through(inp):
    return inp.symbols


def pass_through_in_place(inp):
    out = inp.output
    out[:] = inp.symbols
    return out


def timed(stage, frames, frame_symbols, threads, modulation):
    bits = frames * frame_symbols * qs.Constellation.from_name(modulation).bits_per_symbol
    start = time.perf_counter()
    res = qs.sweep(modulation, eb_n0_db=10.0, min_errors=10**12, max_bits=bits, seed=5, threads=threads,
                   frame_symbols=frame_symbols, stage=stage)
    seconds = time.perf_counter() - start
    p = res.points[0]
    return p.frames / seconds, (p.bits, p.bit_errors, p.symbol_errors)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=2000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--mod", default="qpsk")
    args = ap.parse_args()
    print(f"qamsight {qs.version()}, {args.mod}, {args.frames} frames per run, best of {args.repeat}, "
          f"{os.cpu_count()} CPUs")
    print(f"{'threads':>7} {'frame_symbols':>13} {'no stage fr/s':>14} {'stage fr/s':>11} {'ratio':>6} "
          f"{'in-place fr/s':>14} {'ratio':>6} {'us/frame extra':>14} {'ns/symbol extra':>15}")
    for threads in (1, 2):
        for frame_symbols in (256, 4096):
            best = {"none": 0.0, "stage": 0.0, "inplace": 0.0}
            counts = {}
            for _ in range(args.repeat):
                for key, stage in (("none", None), ("stage", pass_through), ("inplace", pass_through_in_place)):
                    fps, c = timed(stage, args.frames, frame_symbols, threads, args.mod)
                    best[key] = max(best[key], fps)
                    counts[key] = c
            assert counts["none"] == counts["stage"] == counts["inplace"], counts
            extra_us = (1 / best["stage"] - 1 / best["none"]) * 1e6
            print(f"{threads:>7} {frame_symbols:>13} {best['none']:>14.0f} {best['stage']:>11.0f} "
                  f"{best['stage'] / best['none']:>6.2f} {best['inplace']:>14.0f} "
                  f"{best['inplace'] / best['none']:>6.2f} {extra_us:>14.1f} {extra_us * 1e3 / frame_symbols:>15.1f}")


if __name__ == "__main__":
    main()
