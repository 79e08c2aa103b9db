"""A custom demapper written in Python as a receiver stage, regressed with qamsight's gate.

    PYTHONPATH=<build>/bindings/python python3 notebooks-free-examples/regress_equaliser.py [--quick]

The stage is a max-log bit-LLR demapper in NumPy: for each received symbol y and bit j,
    LLR_j = (min_{s: b_j(s)=1} |y - s|^2 - min_{s: b_j(s)=0} |y - s|^2) / N0,
positive favouring bit 0 (the library's convention, llr.hpp), from the constellation's points
and labels (label bits most significant first). qamsight.sweep(stage=..., stage_output="llrs")
calls it once per frame; its LLR signs are the hard decisions that get counted.

Regression, as a CI job would run it:
  1. against theory: every point's exact interval (Holm across points) must contain the exact
     AWGN BER of Gray 16-QAM (qamsight.check_against_theory, the gate of `qamsight check`);
  2. against a baseline: the built-in receiver's sweep with the same seed
     (qamsight.check_against_baseline: no point may be significantly worse);
  3. the gate must be able to fail: the same demapper with a deliberate 15 % scale error in its
     constellation (a gain-control fault) must be flagged by both checks.
With --json DIR the stage's and the baseline's results are written as the CLI's JSON, so that
`qamsight check DIR/stage.json --baseline DIR/baseline.json` runs the same gate from the shell.
"""
import argparse
import os
import sys
import time

import numpy as np

import qamsight as qs


class MaxLogDemapper:
    """Bit LLRs of a constellation in complex AWGN, max-log approximation, NumPy only."""

    def __init__(self, constellation, scale=1.0):
        k = constellation.bits_per_symbol
        labels = np.arange(constellation.order)
        self.points = np.asarray(constellation.points) * scale          # points[label]
        bits = (labels[:, None] >> np.arange(k - 1, -1, -1)[None, :]) & 1  # MSB first
        self.zero = [np.flatnonzero(bits[:, j] == 0) for j in range(k)]
        self.one = [np.flatnonzero(bits[:, j] == 1) for j in range(k)]
        self.k = k
        self.calls = 0
        self.seconds = 0.0

    def __call__(self, inp):
        t0 = time.perf_counter()
        y = inp.symbols                                            # read-only complex64 view
        d2 = np.abs(y[:, None] - self.points[None, :]) ** 2        # (symbols, M)
        out = inp.output.reshape(-1, self.k)                       # the engine's float32 buffer
        for j in range(self.k):
            out[:, j] = (d2[:, self.one[j]].min(axis=1) - d2[:, self.zero[j]].min(axis=1)) / inp.noise_variance
        self.calls += 1
        self.seconds += time.perf_counter() - t0
        return inp.output                                          # filled in place: no copy


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--mod", default="16qam")
    ap.add_argument("--seed", type=int, default=2024)
    ap.add_argument("--json", metavar="DIR", help="write stage.json and baseline.json for `qamsight check`")
    ap.add_argument("--quick", action="store_true", help="fewer errors per point, two points")
    args = ap.parse_args(argv)
    grid = [6.0, 9.0] if args.quick else [4.0, 6.0, 8.0, 10.0]
    kw = dict(eb_n0_db=grid, min_errors=200 if args.quick else 1000, max_bits=2e7, seed=args.seed,
              frame_symbols=4096)
    constellation = qs.Constellation.from_name(args.mod)

    stage = MaxLogDemapper(constellation)
    t0 = time.perf_counter()
    res = qs.sweep(args.mod, stage=stage, stage_output="llrs", **kw)
    wall = time.perf_counter() - t0
    base = qs.sweep(args.mod, **kw)
    symbols = sum(p.symbols for p in res.points)
    print(f"stage: {type(stage).__name__} on {args.mod}, {stage.calls} frames of {kw['frame_symbols']} symbols, "
          f"{stage.seconds / stage.calls * 1e3:.2f} ms per frame in Python "
          f"({stage.seconds / symbols * 1e9:.0f} ns per symbol); sweep {wall:.2f} s")
    print(f"{'Eb/N0 dB':>8} {'bits':>10} {'errors':>7} {'BER':>10} {'theory':>10} {'baseline BER':>12}")
    for p, b in zip(res.points, base.points):
        print(f"{p.eb_n0_db:8.1f} {p.bits:10d} {p.bit_errors:7d} {p.ber:10.3e} {p.ber_theory:10.3e} {b.ber:12.3e}")

    theory = qs.check_against_theory(res)
    baseline = qs.check_against_baseline(res, base)
    print(f"gate against theory: {'PASS' if theory.passed else 'FAIL'}")
    print(f"gate against the built-in receiver: {'PASS' if baseline.passed else 'FAIL'}")
    same = [(p.bits, p.bit_errors) for p in res.points] == [(p.bits, p.bit_errors) for p in base.points]
    print(f"counts identical to the built-in slicer: {same}")

    broken = MaxLogDemapper(constellation, scale=1.15)
    bad = qs.sweep(args.mod, stage=broken, stage_output="llrs", **kw)
    bad_theory = qs.check_against_theory(bad, target_ber=1e-2)  # loss reported where the curve brackets it
    bad_base = qs.check_against_baseline(bad, base)
    flagged = sum(r.failed for r in bad_theory.rows)
    print(f"broken demapper (15 % scale error): theory gate {'PASS' if bad_theory.passed else 'FAIL'} "
          f"({flagged} of {len(bad_theory.rows)} points flagged), baseline gate "
          f"{'PASS' if bad_base.passed else 'FAIL'}")
    for loss in bad_theory.losses:
        if loss.available:
            print(f"  implementation loss of the broken demapper at BER {loss.target_ber:g}: {loss.loss_db:.2f} dB")

    if args.json:
        os.makedirs(args.json, exist_ok=True)
        for name, r in (("stage", res), ("baseline", base), ("broken", bad)):
            with open(os.path.join(args.json, f"{name}.json"), "w") as fh:
                fh.write(r.to_json())
        print(f"wrote {args.json}/stage.json, baseline.json, broken.json")

    ok = theory.passed and baseline.passed and not bad_theory.passed and not bad_base.passed
    print("regression: OK" if ok else "regression: FAILED")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
