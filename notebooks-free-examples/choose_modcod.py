"""Choose a MODCOD for the demo link (invented Halcyra orbit, Brindle-576 terminal) over a pass.

    PYTHONPATH=<build>/bindings/python python3 notebooks-free-examples/choose_modcod.py [--quick]

Works out the link budget of notebooks-free-examples/demo_link.toml at every elevation of an
overhead pass, picks at each elevation the MODCOD of the scenario's table with the highest
throughput that keeps the required margin (qamsight.select_modcod, as `qamsight link` does), and
then answers the two questions of a pass plan:
  - fixed: the one MODCOD that delivers the most data per pass when it is used wherever it keeps
    the margin (low in the pass the terminal's array scans too far, or the margin is too thin,
    so a fixed MODCOD also fixes the elevation above which the link is used), and
  - adaptive: the MODCOD schedule over the pass, its mean throughput and data per pass.
Time at an elevation comes from the geometry of a circular orbit passing overhead, Earth
rotation ignored: t = (central angle) / (orbital angular rate), both from qamsight's geometry
functions. --quick uses the scenario's 10-degree table only.
"""
import argparse
import math
import os
import sys

import numpy as np

import qamsight as qs

HERE = os.path.dirname(os.path.abspath(__file__))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--scenario", default=os.path.join(HERE, "demo_link.toml"))
    ap.add_argument("--step-deg", type=float, default=0.5, help="elevation step of the fine pass grid")
    ap.add_argument("--quick", action="store_true", help="scenario's own elevation table only")
    args = ap.parse_args(argv)

    scenario = qs.load_link_scenario(args.scenario)
    analysis = qs.analyse_link(scenario)
    table = scenario.modcods
    rows = table.rows
    print(f"scenario: {scenario.name}")
    print(f"orbit altitude {scenario.altitude_km:.0f} km, {scenario.frequency_hz / 1e9:.2f} GHz, "
          f"{scenario.symbol_rate_bd / 1e6:.1f} MBd, {len(rows)} MODCODs ({scenario.modcod_source})")
    print(f"required margin {scenario.required_margin_db:.1f} dB, implementation margin "
          f"{scenario.implementation_margin_db:.1f} dB")

    # The scenario's own pass table, as `qamsight link` prints it.
    print("\npass table (qamsight.analyse_link):")
    print(f"{'elev deg':>8} {'range km':>9} {'Es/N0 dB':>9}  {'MODCOD':<14} {'margin dB':>9} {'Mbit/s':>8}")
    for p in analysis.pass_:
        b, c = p.budget, p.choice
        m = c.best_margin()
        name = rows[c.best].name if c.best is not None else "none"
        print(f"{b.elevation_deg:8.1f} {b.slant_range_km:9.1f} {b.es_n0_db:9.2f}  {name:<14} "
              f"{(m.margin_db if m else float('nan')):9.2f} {c.throughput_bps() / 1e6:8.1f}")

    # Fine grid over the pass: budget and choice at each elevation.
    lo = min(scenario.pass_elevations_deg)
    hi = scenario.max_elevation_deg
    if args.quick:
        elevations = np.array(sorted(scenario.pass_elevations_deg), dtype=float)
    else:
        elevations = np.arange(lo, hi + 1e-9, args.step_deg)
    es_n0 = np.empty_like(elevations)
    choice = []
    for i, e in enumerate(elevations):
        b = qs.compute_budget(scenario, float(e))
        es_n0[i] = b.es_n0_db
        c = qs.select_modcod(table, b.es_n0_db, scenario.symbol_rate_bd, scenario.implementation_margin_db,
                             scenario.required_margin_db)
        choice.append(c)

    # Time from the overhead point to each elevation: central angle over the orbital rate.
    central = np.asarray(qs.earth_central_angle_deg(elevations, scenario.altitude_km), dtype=float)
    rate = float(qs.orbital_angular_rate_rad_per_s(scenario.altitude_km))
    t = np.radians(central) / rate  # seconds from culmination (one half of the pass)

    # Each grid interval [e_i, e_i+1] is spent |t_i - t_i+1| seconds (twice per pass: rising and
    # falling); a MODCOD counts as usable there when it keeps the margin at the lower end
    # (conservative: the margin grows with elevation in this scenario).
    dt = np.abs(np.diff(t))
    half_pass_s = float(np.sum(dt))
    print(f"\npass above {lo:.0f} deg lasts {2 * half_pass_s:.0f} s (overhead, Earth rotation ignored)")

    # Fixed MODCOD: the one that delivers the most data per pass when used wherever it keeps
    # the margin (and nothing is sent elsewhere).
    data = []
    for j, row in enumerate(rows):
        usable = np.array([c.margins[j].meets_margin for c in choice[:-1]])
        seconds = 2 * float(np.sum(dt[usable]))
        data.append((2 * float(np.sum(dt[usable])) * row.spectral_efficiency * scenario.symbol_rate_bd, seconds, j))
    data.sort(reverse=True)
    print("fixed MODCOD candidates (data per pass when used wherever it keeps the margin):")
    for bits, seconds, j in data[:5]:
        ok = [e for e, c in zip(elevations, choice) if c.margins[j].meets_margin]
        above = f"above {min(ok):.1f} deg" if ok else "nowhere"
        print(f"  {rows[j].name:<14} {bits / 1e9:7.1f} Gbit  usable {seconds:5.0f} s ({above})")
    best_bits, best_s, best_j = data[0]
    if best_bits <= 0:
        print("fixed MODCOD for the pass: none keeps the margin anywhere")
        return 1
    ok = [e for e, c in zip(elevations, choice) if c.margins[best_j].meets_margin]
    print(f"fixed MODCOD for the pass: {rows[best_j].name}, above {min(ok):.1f} deg elevation, "
          f"{best_bits / 1e9:.1f} Gbit per pass")

    # Adaptive: the best MODCOD at each elevation, piecewise constant over the grid.
    tp = np.array([c.throughput_bps() for c in choice])
    adaptive_bits = 2 * float(np.sum(tp[:-1] * dt))
    mean_tp = adaptive_bits / (2 * half_pass_s) if half_pass_s > 0 else float(tp[0])
    print("adaptive schedule (rising half; the falling half mirrors it):")
    first = 0
    for i in range(1, len(choice) + 1):
        if i == len(choice) or choice[i].best != choice[first].best:
            best = choice[first].best
            name = rows[best].name if best is not None else "none"
            print(f"  {elevations[first]:5.1f} .. {elevations[i - 1]:5.1f} deg  {name:<14} "
                  f"{choice[first].throughput_bps() / 1e6:7.1f} Mbit/s")
            first = i
    print(f"adaptive mean throughput over the pass: {mean_tp / 1e6:.1f} Mbit/s, "
          f"{adaptive_bits / 1e9:.1f} Gbit per pass ({adaptive_bits / best_bits:.2f} x the fixed MODCOD)")
    for w in analysis.warnings:
        print(f"warning: {w}")
    for c in analysis.cautions:
        print(f"caution: {c}")
    return 0 if math.isfinite(mean_tp) else 1


if __name__ == "__main__":
    sys.exit(main())
