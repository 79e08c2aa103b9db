"""Verify the demo receiver line-up (invented Corvane-7 receiver) against its EVM limit.

    PYTHONPATH=<build>/bindings/python python3 notebooks-free-examples/verify_lineup.py [--quick]

Reads notebooks-free-examples/demo_lineup.toml (qamsight.load_evm_lineup), predicts every
impairment's EVM contribution and the root-sum-square composite (qamsight.predict_evm), checks
the composite against the file's requirement (a table limit with a margin), and names the
dominant impairment. Then it confirms both by simulation of the waveform link
(qamsight.simulate_evm): the simulated composite against the limit, and the dominant impairment
by simulating the line-up once more with that impairment removed: the simulated EVM^2 must drop
by about the predicted share (and by more than removing any other single impairment would,
according to the prediction).
"""
import argparse
import copy
import math
import os
import sys

import qamsight as qs

HERE = os.path.dirname(os.path.abspath(__file__))


def without(lineup, key):
    """The line-up with the impairment of one contribution key switched off (None if unknown)."""
    l2 = copy.copy(lineup)
    if key == "awgn":
        l2.snr_db = None
        l2.noise = None
    elif key == "phase_noise":
        l2.phase_noise_mask = None
        l2.phase_noise_linewidth_hz = 0.0
    elif key == "iq_imbalance":
        l2.iq_gain_db = 0.0
        l2.iq_phase_deg = 0.0
    elif key == "dc_offset":
        l2.dc_offset = 0j
    elif key == "amplifier":
        l2.amplifier = qs.AmplifierKind.none
    elif key in ("adc_quantisation", "adc_clipping"):
        l2.adc_bits = 0
    elif key == "frequency_offset":
        l2.cfo_hz = 0.0
    else:
        return None
    return l2


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--lineup", default=os.path.join(HERE, "demo_lineup.toml"))
    ap.add_argument("--frames", type=int, default=16, help="simulated blocks per run")
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--quick", action="store_true", help="4 simulated blocks per run")
    args = ap.parse_args(argv)
    frames = 4 if args.quick else args.frames

    f = qs.load_evm_lineup(args.lineup)
    lineup = f.lineup
    limit = f.limit()
    if limit is None:
        print("the line-up file states no requirement")
        return 2
    margin = f.requirement.margin_db
    pred = qs.predict_evm(lineup)
    print(f"line-up: {lineup.name}")
    print(f"limit: {limit.pct:.2f} % ({limit.db:.2f} dB), {limit.source}; required margin {margin:.1f} dB")
    print(f"\n{'contribution':<62} {'part':<26} {'EVM %':>7} {'share':>6}")
    for c in sorted(pred.contributions, key=lambda c: -c.share):
        print(f"{c.name:<62.62} {c.part:<26.26} {c.evm_pct:7.3f} {c.share:6.1%}")
    verdict = qs.evm_verdict(pred.total_pct, limit, margin)
    dom = pred.contributions[pred.dominant]
    print(f"\npredicted composite EVM: {pred.total_pct:.3f} % ({pred.total_db:.2f} dB)")
    print(f"predicted verdict: {'PASS' if verdict.passed else 'FAIL'} (margin {verdict.margin_db:.2f} dB, "
          f"required {margin:.1f} dB)")
    print(f"dominant impairment: {dom.key} ({dom.name}; {dom.part or 'no part named'}), "
          f"{dom.share:.1%} of EVM^2")

    sim = qs.simulate_evm(lineup, seed=args.seed, frames=frames)
    sverdict = qs.evm_verdict(sim.rms_pct, limit, margin)
    print(f"\nsimulated composite EVM: {sim.rms_pct:.3f} % over {sim.symbols} symbols "
          f"({sim.frames} blocks); prediction {pred.total_pct:.3f} %")
    print(f"simulated verdict: {'PASS' if sverdict.passed else 'FAIL'} (margin {sverdict.margin_db:.2f} dB)")

    reduced = without(lineup, dom.key)
    if reduced is None:
        print(f"cannot switch off '{dom.key}' on its own; dominant impairment not confirmed by simulation")
        return 1
    pred2 = qs.predict_evm(reduced)
    sim2 = qs.simulate_evm(reduced, seed=args.seed, frames=frames)
    drop_sim = 1.0 - (sim2.rms_pct / sim.rms_pct) ** 2
    drop_pred = 1.0 - (pred2.total_pct / pred.total_pct) ** 2
    print(f"\nwithout {dom.key}: simulated {sim2.rms_pct:.3f} %, predicted {pred2.total_pct:.3f} %")
    print(f"EVM^2 drop: simulated {drop_sim:.1%}, predicted {drop_pred:.1%} (predicted share {dom.share:.1%})")
    # The runner-up: the largest share among the others; the dominant one must drop EVM^2 more.
    others = sorted((c for i, c in enumerate(pred.contributions) if i != pred.dominant), key=lambda c: -c.share)
    runner = others[0] if others else None
    confirmed = drop_sim > (runner.share if runner else 0.0)
    if runner is not None:
        print(f"runner-up: {runner.key} ({runner.share:.1%} of EVM^2)")
    print(f"dominant impairment confirmed by simulation: {'yes' if confirmed else 'no'}")
    agree = abs(sim.rms_pct - pred.total_pct) / pred.total_pct
    print(f"prediction and simulation agree within {agree:.1%}")
    if not (math.isfinite(sim.rms_pct) and confirmed):
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
