"""BER waterfalls of a sweep, plotted with matplotlib (Agg backend, PNG files).

    PYTHONPATH=<build>/bindings/python python3 notebooks-free-examples/waterfall_plots.py [--out DIR] [--quick]

Runs qamsight.sweep over QPSK, 16-QAM and 64-QAM, then draws
  waterfall.png      measured BER with its exact (Clopper-Pearson) interval as error bars, over
                     the exact AWGN theory curves (qamsight.theory.ber_for);
  ratio.png          measured BER / theory BER with the interval, which should straddle 1;
  constellation.png  received 16-QAM symbols at one point (qamsight.capture_symbols).
The files go to --out (default: a new temporary directory, printed).
"""
import argparse
import os
import sys
import tempfile

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

import qamsight as qs  # noqa: E402

MODS = ["qpsk", "16qam", "64qam"]


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", help="output directory (default: a new temporary directory)")
    ap.add_argument("--seed", type=int, default=11)
    ap.add_argument("--quick", action="store_true", help="coarse grid, few errors per point")
    args = ap.parse_args(argv)
    out = args.out or tempfile.mkdtemp(prefix="qamsight-waterfall-")
    os.makedirs(out, exist_ok=True)

    step = 4.0 if args.quick else 1.0
    grid = np.arange(0.0, 16.0 + 1e-9, step)
    res = qs.sweep(MODS, eb_n0_db=grid, min_errors=50 if args.quick else 400,
                   max_bits=2e5 if args.quick else 2e7, seed=args.seed)
    doc = res.to_dict()
    print(f"sweep: {len(res.points)} points, seed {args.seed}, complete {res.complete}")

    fine = np.linspace(0.0, 16.0, 161)
    fig, ax = plt.subplots(figsize=(7, 5))
    fig_r, ax_r = plt.subplots(figsize=(7, 4))
    for i, mod in enumerate(MODS):
        pts = [p for p in res.points if p.modulation == mod and p.bit_errors > 0]
        if not pts:
            continue
        x = np.array([p.eb_n0_db for p in pts])
        ber = np.array([p.ber for p in pts])
        lo = np.array([p.ber_low for p in pts])
        hi = np.array([p.ber_high for p in pts])
        color = f"C{i}"
        name = qs.modulation_display_name(mod)
        ax.errorbar(x, ber, yerr=[ber - lo, hi - ber], fmt="o", color=color, capsize=3, label=f"{name} measured")
        ax.semilogy(fine, qs.theory.ber_for(mod, fine), "-", color=color, lw=1, label=f"{name} theory")
        th = np.array([p.ber_theory for p in pts])
        ax_r.errorbar(x + 0.08 * (i - 1), ber / th, yerr=[(ber - lo) / th, (hi - ber) / th], fmt="o",
                      color=color, capsize=3, label=name)
        worst = max(abs(np.log10(b / t)) for b, t in zip(ber, th))
        print(f"{name}: {len(pts)} points with errors, largest |log10(BER/theory)| = {worst:.3f}")
    ax.set_yscale("log")
    ax.set_ylim(1e-7, 1)
    ax.set_xlabel("Eb/N0 (dB)")
    ax.set_ylabel("bit error rate")
    ax.set_title("AWGN waterfalls (qamsight sweep)")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    files = [os.path.join(out, "waterfall.png"), os.path.join(out, "ratio.png"), os.path.join(out, "constellation.png")]
    fig.savefig(files[0], dpi=110)
    ax_r.axhline(1.0, color="k", lw=0.8)
    ax_r.set_xlabel("Eb/N0 (dB)")
    ax_r.set_ylabel("measured / theory BER")
    ax_r.grid(True, alpha=0.3)
    ax_r.legend(fontsize=8)
    fig_r.tight_layout()
    fig_r.savefig(files[1], dpi=110)

    point = qs.sweep_points(res.config)[MODS.index("16qam") * len(grid) + len(grid) // 2]
    cap = qs.capture_symbols(res.config.link, point, args.seed, 1)
    fig_c, ax_c = plt.subplots(figsize=(5, 5))
    rx = np.asarray(cap.received)
    ax_c.plot(rx.real, rx.imag, ".", ms=1, alpha=0.4)
    ref = np.asarray(qs.Constellation.from_name("16qam").points)
    ax_c.plot(ref.real, ref.imag, "r+", ms=10)
    ax_c.set_aspect("equal")
    ax_c.set_title(f"16-QAM at Eb/N0 = {point.eb_n0_db:g} dB ({len(rx)} symbols)")
    fig_c.tight_layout()
    fig_c.savefig(files[2], dpi=110)
    plt.close("all")
    for f in files:
        print(f"wrote {f} ({os.path.getsize(f)} bytes)")
    print(f"JSON points: {len(doc['points'])}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
