"""Full-year district LPs handed to HiGHS as built and trimmed (:func:`engine.model.lp.lean_program`).

Usage::

    python bench/lean_lp.py                                   # districts 0,1,6,7,8 of the 10-district city
    python bench/lean_lp.py --districts 200 --sample 8        # every 25th district of the 200-district city
    python bench/lean_lp.py --districts 200 --per-class 2     # two districts of each class, weighted estimate
    python bench/lean_lp.py --pick 1,7 --steps                # also each trimming step on its own

For each district of the full-year synthetic city (:mod:`bench.synthetic_city`, ``typical_days=0``) the district
LP (cost objective) is solved by HiGHS's default algorithm twice from the same build: as built ("before") and as
:meth:`engine.model.lp.LinearProgram.solve` hands it over now ("after": rows without bounds and columns fixed at
zero dropped, a well's flow row with one heat pump and its hot water turned into the bounds of a column). Printed
per district: its units, whether it has a store, columns, rows and nonzeros before and after, HiGHS seconds and
simplex iterations before and after, and the relative difference of the optima. An LP the trimming leaves as it
is (same size, no flow row turned into bounds) is not solved again: its "after" is its "before" (a second solve
of the same LP measures only the machine's load, which moved identical solves by a factor of two). With
``--steps`` the LP is also solved with only the dropping (no change of variables).

The estimate for the whole city is the sample's summed seconds scaled by (districts / sample size), before and
after; the sample is every k-th district (k = districts // sample). With ``--per-class n`` the sample is n
districts of each class (with or without a store, with or without a well-flow row the trimming turns into
bounds: the four differ by tens of seconds) and each class's mean is weighted by its number of districts, so a
small sample does not miss the rare slow class. The machine's 1-minute load average is printed before and after: compare the two solves of
one district, not seconds across runs.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

import highspy  # noqa: E402
import numpy as np  # noqa: E402

from bench.synthetic_city import synthetic_city  # noqa: E402
from engine.model.formulation import build_model  # noqa: E402
from engine.model.lp import lean_program  # noqa: E402
from engine.model.prepare import prepare_run  # noqa: E402
from engine.model.solve import run_settings  # noqa: E402


def run(h) -> tuple[float, int, float, str]:
    started = time.perf_counter()
    h.run()
    seconds = time.perf_counter() - started
    info = h.getInfo()
    status = h.getModelStatus()
    text = "optimal" if status == highspy.HighsModelStatus.kOptimal else h.modelStatusToString(status)
    return seconds, int(info.simplex_iteration_count), float(info.objective_function_value), text


def measure(prepared, district: int, time_limit_s: float, steps: bool) -> dict:
    model = build_model(prepared, [district])
    lp = model.lp
    lp.set_objective(model.money)
    lean = lean_program(lp)
    s0, it0, obj0, st0 = run(lp.to_highs(time_limit_s))
    same = (lean.n_cols, lean.n_rows, lean.matrix.nnz) == (lp.n_cols, lp.n_rows, lp.n_nonzeros) and not len(lean.flow_rows)
    # the same LP again would measure only the machine's load: its "after" is its "before"
    s1, it1, obj1, st1 = (s0, it0, obj0, st0) if same else run(lean.to_highs(time_limit_s))
    row = {
        "units": ",".join(model.units.kind),
        "store": len(model.stores.technology_id) > 0,
        "size before": f"{lp.n_cols} x {lp.n_rows}, {lp.n_nonzeros} nz",
        "size after": f"{lean.n_cols} x {lean.n_rows}, {lean.matrix.nnz} nz",
        "flow rows as bounds": len(lean.flow_rows),
        "trimmed": "no (same LP, not solved again)" if same else "yes",
        "seconds before": round(s0, 2),
        "seconds after": round(s1, 2),
        "iterations before": it0,
        "iterations after": it1,
        "status": st0 if st0 == st1 else f"{st0} / {st1}",
        "objective": round(obj0, 2),
        "relative difference": f"{abs(obj1 - obj0) / max(abs(obj0), 1.0):.1e}",
    }
    if steps:
        pairs, lp.flow_pairs = lp.flow_pairs, []
        dropped = lean_program(lp)
        lp.flow_pairs = pairs
        s2, it2, obj2, _ = run(dropped.to_highs(time_limit_s))
        row["dropping only"] = f"{dropped.n_cols} x {dropped.n_rows}, {round(s2, 2)} s, {it2} iterations, " \
                               f"relative difference {abs(obj2 - obj0) / max(abs(obj0), 1.0):.1e}"
    return row


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="full-year district LPs as built and trimmed for HiGHS")
    parser.add_argument("--districts", type=int, default=10, help="size of the synthetic city")
    parser.add_argument("--pick", default="", help="comma-separated district indices (default: 0,1,6,7,8 of a "
                                                   "10-district city, else the sample)")
    parser.add_argument("--sample", type=int, default=8, help="sample size when --pick is not given")
    parser.add_argument("--time-limit", type=float, default=300.0, help="seconds per solve")
    parser.add_argument("--steps", action="store_true", help="also solve with the dropping alone")
    parser.add_argument("--per-class", type=int, default=0,
                        help="instead of every k-th district: this many districts of each class (with or without a "
                             "store, with or without a well-flow row turned into bounds), the estimate weighted by "
                             "the classes' sizes")
    args = parser.parse_args(argv)
    print(f"load average before: {os.getloadavg()[0]:.2f}", flush=True)
    scenario = synthetic_city(args.districts, typical_days=0)
    prepared = prepare_run(scenario, "reference", run_settings(scenario, "cost", 0.0, 0))
    weights = {}
    if args.per_class:
        classes = {}
        for i in range(args.districts):
            model = build_model(prepared, [i])
            key = (len(model.stores.technology_id) > 0, len(model.lp.flow_pairs) > 0)
            classes.setdefault(key, []).append(i)
        picks = []
        for (store, pairs), members in sorted(classes.items()):
            chosen = [members[int(k)] for k in np.linspace(0, len(members) - 1, min(args.per_class, len(members)))]
            picks += chosen
            weights.update({i: len(members) / len(chosen) for i in chosen})
            print(f"class store {store}, well-flow rows as bounds {pairs}: {len(members)} districts, sampled "
                  f"{chosen}", flush=True)
    elif args.pick:
        picks = [int(x) for x in args.pick.split(",") if x.strip()]
    elif args.districts == 10:
        picks = [0, 1, 6, 7, 8]
    else:
        k = max(args.districts // max(args.sample, 1), 1)
        picks = list(range(0, args.districts, k))[: args.sample]
    before = after = 0.0
    city_before = city_after = 0.0
    scale = args.districts / len(picks)
    for i in picks:
        row = measure(prepared, i, args.time_limit, args.steps)
        before += row["seconds before"]
        after += row["seconds after"]
        weight = weights.get(i, scale)
        city_before += weight * row["seconds before"]
        city_after += weight * row["seconds after"]
        print(f"district {i} | " + " | ".join(f"{k} {v}" for k, v in row.items()), flush=True)
    how = "weighted by class" if weights else "scaled"
    print(f"sample of {len(picks)} of {args.districts} districts: {before:.1f} s before, {after:.1f} s after; "
          f"{how} to the city: {city_before:.0f} s before, {city_after:.0f} s after (HiGHS seconds, one solve at a "
          f"time)")
    print(f"load average after: {os.getloadavg()[0]:.2f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
