"""Benchmark of the engine on synthetic cities: model size, time per stage, peak memory, overhead over HiGHS.

Usage::

    python bench/run.py --quick      # 3-4 minutes: 10 districts, one monolithic LP of >= 100 000 variables
    python bench/run.py --ratios     # only the demo's interactive_ratio and study_ratio (about a minute)
    python bench/run.py              # 10, 50 and 200 districts, 12 typical days and the full year
    python bench/run.py --profile 10:0:decomposed   # cProfile of one case (districts:typical days:path)

Each case runs in a fresh child process so that its peak memory is its own. Within the child:

* ``total s`` is the wall time of :func:`engine.model.solve.solve_scenario` (prepare, build, solve, extract, merge);
  ``build``, ``solve`` and ``extract`` are the sums over the case's linear programs as the run reports them
  (CPU seconds summed over the worker processes when the districts are solved in parallel).
* ``peak MB`` is the resident set size of the child plus all its worker processes, summed and sampled every
  20 ms with psutil (the sum of concurrent processes, which ``getrusage`` cannot give).
* ``HiGHS s`` is the reference: every linear program of the run is built again (untimed), written to MPS with
  ``Highs.writeModel`` and read back and solved by a fresh ``highspy.Highs()`` (``readModel`` + ``run``, output
  off, default options as in the engine). For a decomposed run the per-district files are solved by a process
  pool of the same number of workers as the run and the wall time is taken; when a run has more than
  ``--sample`` districts, a systematic sample of them (over the districts ordered by LP size) is solved and the
  wall time scaled by districts / sample
  (marked ``~``). ``ratio`` = ``total s`` / ``HiGHS s``.
* ``mono HiGHS s``: for decomposed runs on typical days, the monolithic LP of the whole city (the same
  optimisation problem in one piece) solved by HiGHS alone, for comparison.

In quick mode two lines before it give the demo city's interactive figures (:func:`run_ratios`):
``interactive_ratio=R`` (read and solve the demo end to end, over HiGHS alone on the same LPs) and
``study_ratio=R`` (a seven-point trade-off curve over seven single solves).

Before them, the demo at its default resolution against the full year (cached in the temporary folder): the cost
error of the typical days (``fidelity_cost_error_pct=E``, printed just before the last line), the largest error of a
technology's heat (``fidelity_heat_error_max_pct=E``) and the cost of the typical-day plan run over the full year
with its capacities fixed against the full year's optimum (``fidelity_checked_plan_cost_pct=E``,
:mod:`engine.studies.year_check`), and for how many technologies the typical days' near-optimal ranges within
+0.01 % of the least cost hold the full year's heat (``fidelity_full_year_within_ranges=K/N``, docs/model.md
section 8).

The last line of the output is ``overhead_ratio=R``: the ratio of the largest monolithic case run (in quick mode
a full-year city of at least 100 000 variables).
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import threading
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
FIRMNESS_CHECK_SLACK_PCT = 0.01
"""Cost slack of the fidelity's near-optimal ranges [%] (docs/model.md section 8: 2,962 EUR/a on the demo)."""
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

QUICK_CASES = [
    # (districts, typical days, path, workers)
    (10, 12, "decomposed", 2),
    (10, 12, "monolithic", 1),
    (10, 0, "decomposed", 2),
    (3, 0, "monolithic", 1),
]
FULL_CASES = [
    (10, 12, "decomposed", 2),
    (10, 12, "monolithic", 1),
    (10, 0, "decomposed", 2),
    (3, 0, "monolithic", 1),
    (50, 12, "decomposed", 2),
    (50, 12, "monolithic", 1),
    (50, 0, "decomposed", 2),
    (200, 12, "decomposed", 2),
    (200, 0, "decomposed", 2),
]


# ------------------------------------------------------------------------------------------ memory sampling
class PeakMemory:
    """Peak of the summed RSS of this process and its descendants, sampled in a background thread."""

    def __init__(self, interval_s: float = 0.02):
        import psutil

        self._process = psutil.Process()
        self._interval = interval_s
        self.peak_bytes = 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def _sample(self) -> int:
        total = 0
        try:
            total += self._process.memory_info().rss
            for child in self._process.children(recursive=True):
                try:
                    total += child.memory_info().rss
                except Exception:
                    pass
        except Exception:
            pass
        return total

    def _run(self) -> None:
        while not self._stop.is_set():
            self.peak_bytes = max(self.peak_bytes, self._sample())
            self._stop.wait(self._interval)

    def __enter__(self):
        self.peak_bytes = self._sample()
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()
        self.peak_bytes = max(self.peak_bytes, self._sample())


# ------------------------------------------------------------------------------------------ HiGHS alone
def highs_alone(path: str) -> float:
    """Seconds for a fresh HiGHS to read the MPS file and solve it."""
    import highspy

    h = highspy.Highs()
    h.setOptionValue("output_flag", False)
    started = time.perf_counter()
    h.readModel(path)
    h.run()
    elapsed = time.perf_counter() - started
    if h.getModelStatus() != highspy.HighsModelStatus.kOptimal:
        raise RuntimeError(f"HiGHS did not solve {path}: {h.modelStatusToString(h.getModelStatus())}")
    return elapsed


def _write_mps(prepared, districts, folder: str, tag: str) -> str:
    from engine.model.formulation import build_model

    model = build_model(prepared, districts)
    path = os.path.join(folder, f"{tag}.mps")
    h = model.lp.to_highs()
    h.writeModel(path)
    return path


def _highs_reference(prepared, parts, workers: int, sample: int, seed: int = 1) -> tuple[float, bool]:
    """Wall time of HiGHS alone over the run's LPs; True when estimated from a sample."""
    import numpy as np

    estimated = len(parts) > sample
    chosen = parts
    if estimated:
        # a systematic sample over the districts ordered by LP size, so that the few large LPs (districts with
        # a heat store) are represented in proportion
        from engine.model.formulation import build_model

        sizes = [build_model(prepared, p).lp.n_cols for p in parts]
        order = np.argsort(sizes, kind="stable")
        offset = np.random.default_rng(seed).uniform(0, len(parts) / sample)
        pick = order[(offset + np.arange(sample) * len(parts) / sample).astype(int)]
        chosen = [parts[i] for i in sorted(pick)]
    with tempfile.TemporaryDirectory(prefix="heatmosaic-bench-") as folder:
        paths = [_write_mps(prepared, p, folder, f"lp{k}") for k, p in enumerate(chosen)]
        started = time.perf_counter()
        if workers > 1 and len(paths) > 1:
            with ProcessPoolExecutor(max_workers=workers) as pool:
                list(pool.map(highs_alone, paths))
            wall = time.perf_counter() - started
            # the pool's start-up is part of the wall time, as it is in the engine's run
        else:
            wall = sum(highs_alone(p) for p in paths)
    if estimated:
        wall *= len(parts) / len(chosen)
    return wall, estimated


# ------------------------------------------------------------------------------------------ one case
def run_case(n_districts: int, typical_days: int, path: str, workers: int, sample: int) -> dict:
    """Run one case in this process and return its figures."""
    import gc

    from bench.synthetic_city import synthetic_city
    from engine.model.prepare import prepare_run
    from engine.model.solve import run_settings, solve_scenario

    scenario = synthetic_city(n_districts, typical_days=typical_days)
    decompose = path == "decomposed"
    with PeakMemory() as memory:
        result = solve_scenario(scenario, decompose=decompose, workers=workers)
    if not result.solved:
        raise RuntimeError(f"case {n_districts}/{typical_days}/{path}: {result.status}: {result.message}")
    record = {
        "districts": n_districts,
        "typical_days": typical_days,
        "path": path,
        "workers": workers,
        "linear_programs": result.model_size["linear_programs"],
        "variables": result.model_size["variables"],
        "constraints": result.model_size["constraints"],
        "nonzeros": result.model_size["nonzeros"],
        **{f"{k}_s": v for k, v in result.timings_s.items()},
        "peak_mb": memory.peak_bytes / 2**20,
        "total_cost_eur_per_a": result.total_cost_eur_per_a,
    }
    del result
    gc.collect()
    prepared = prepare_run(scenario, "reference", run_settings(scenario))
    n = len(prepared.district_ids)
    parts = [[i] for i in range(n)] if decompose else [list(range(n))]
    record["highs_s"], record["highs_estimated"] = _highs_reference(prepared, parts, workers if decompose else 1, sample)
    record["mono_highs_s"] = None
    if decompose and typical_days > 0:
        record["mono_highs_s"], _ = _highs_reference(prepared, [list(range(n))], 1, sample)
    return record


def run_demo() -> dict:
    """Demo city end to end (read the folder and solve at 12 typical days), default workers and one worker."""
    from engine.scenario import load_scenario, resolve_scenario_path
    from engine.model.solve import solve_scenario

    out = {}
    for label, workers in (("default", None), ("one_worker", 1)):
        started = time.perf_counter()
        scenario = load_scenario(resolve_scenario_path("demo"))
        loaded = time.perf_counter()
        result = solve_scenario(scenario, typical_days=12, workers=workers)
        done = time.perf_counter()
        out[label] = {
            "load_s": loaded - started,
            "solve_s": done - loaded,
            "end_to_end_s": done - started,
            "status": result.status,
            "timings": result.timings_s,
            "linear_programs": result.model_size.get("linear_programs"),
        }
    started = time.perf_counter()
    with tempfile.TemporaryDirectory() as folder:
        proc = subprocess.run(
            [sys.executable, "-m", "engine", "solve", "demo", "--typical-days", "12", "--out", folder, "--quiet"],
            cwd=ROOT, capture_output=True, text=True,
        )
    out["command_line_s"] = time.perf_counter() - started
    out["command_line_ok"] = proc.returncode == 0
    return out


def run_ratios(repeats: int = 3, curve_repeats: int = 3) -> dict:
    """The two interactive figures of the demo city, each timed back to back in this process (medians).

    ``interactive``: reading the demo folder and solving it at its own resolution with the default workers
    (end to end), over HiGHS alone on the same LPs (written to MPS, read and solved by a fresh ``highspy.Highs``
    one after the other, as the engine solves them for a city of this size).
    ``study``: a seven-point trade-off curve (:func:`engine.studies.tradeoff.tradeoff_curve_runs`) over seven
    times one solve of the demo (the scenario read already; the median of ``repeats`` solves; the curve the
    median of ``curve_repeats``). The memo of typical-day grids is emptied before each
    timed solve, so that every figure is that of a first solve.
    """
    import statistics

    from engine.model.prepare import clear_grid_memo, prepare_run
    from engine.model.results import SOLVED_STATUSES
    from engine.model.solve import choose_workers, plan_parts, run_settings, solve_scenario
    from engine.scenario import load_scenario, resolve_scenario_path
    from engine.studies.tradeoff import tradeoff_curve_runs

    folder = resolve_scenario_path("demo")
    scenario = load_scenario(folder)
    settings = run_settings(scenario)
    prepared = prepare_run(scenario, "reference", settings)
    _, parts = plan_parts(prepared, settings)
    workers = choose_workers(prepared, parts)
    end_to_end, alone, single = [], [], []
    for _ in range(repeats):
        clear_grid_memo()  # a first solve: the typical days are chosen again
        started = time.perf_counter()
        result = solve_scenario(load_scenario(folder))
        end_to_end.append(time.perf_counter() - started)
        if not result.solved:
            raise RuntimeError(f"demo: {result.status}: {result.message}")
        alone.append(_highs_reference(prepared, parts, workers, sample=len(parts) + 1)[0])
    curve = []
    for _ in range(repeats):  # the single solve as often as the end-to-end one: its median is the ratio's unit
        clear_grid_memo()
        started = time.perf_counter()
        solve_scenario(scenario)
        single.append(time.perf_counter() - started)
    for _ in range(curve_repeats):
        clear_grid_memo()
        started = time.perf_counter()
        table, _ = tradeoff_curve_runs(scenario, n_points=7)
        curve.append(time.perf_counter() - started)
        # a point near the least-CO2 end may leave a little heat unserved (cheaper than the last tonnes): solved
        if not table["status"].isin(SOLVED_STATUSES).all():
            raise RuntimeError("demo trade-off curve: a point did not solve")
    e2e, ref = statistics.median(end_to_end), statistics.median(alone)
    one, whole = statistics.median(single), statistics.median(curve)
    return {"end_to_end_s": e2e, "highs_alone_s": ref, "workers": workers, "linear_programs": len(parts),
            "interactive_ratio": e2e / ref, "one_solve_s": one, "curve_s": whole, "study_ratio": whole / (7 * one),
            "repeats": repeats, "curve_repeats": curve_repeats}


def _child(spec: dict) -> None:
    if spec["kind"] == "demo":
        record = run_demo()
    elif spec["kind"] == "ratios":
        record = run_ratios()
    elif spec["kind"] == "fidelity":
        from bench.typical_days import demo_fidelity

        record = demo_fidelity(firmness_slacks=(FIRMNESS_CHECK_SLACK_PCT,))
    else:
        record = run_case(spec["districts"], spec["typical_days"], spec["path"], spec["workers"], spec["sample"])
    print("BENCH-JSON " + json.dumps(record), flush=True)


def _spawn(spec: dict, timeout_s: float) -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    proc = subprocess.run(
        [sys.executable, str(Path(__file__).resolve()), "--child", json.dumps(spec)],
        cwd=ROOT, capture_output=True, text=True, timeout=timeout_s, env=env,
    )
    for line in proc.stdout.splitlines():
        if line.startswith("BENCH-JSON "):
            return json.loads(line[len("BENCH-JSON "):])
    raise RuntimeError(f"benchmark case {spec} failed:\n{proc.stderr[-3000:]}")


# ------------------------------------------------------------------------------------------ table
def _fmt(value, digits=2) -> str:
    if value is None:
        return "-"
    if isinstance(value, float):
        return f"{value:.{digits}f}"
    return str(value)


def format_table(records: list[dict]) -> str:
    header = [
        "districts", "days", "path", "LPs", "variables", "constraints", "build s", "solve s", "extract s",
        "total s", "peak MB", "HiGHS s", "ratio", "total/solve", "mono HiGHS s",
    ]
    rows = []
    for r in records:
        highs = ("~" if r["highs_estimated"] else "") + _fmt(r["highs_s"])
        rows.append([
            str(r["districts"]), "year" if r["typical_days"] == 0 else str(r["typical_days"]),
            f"{r['path']}/{r['workers']}w", str(r["linear_programs"]), f"{r['variables']:,}", f"{r['constraints']:,}",
            _fmt(r["build_s"]), _fmt(r["solve_s"]), _fmt(r["extract_s"]), _fmt(r["total_s"]), _fmt(r["peak_mb"], 0),
            highs, _fmt(r["total_s"] / r["highs_s"]),
            _fmt(r["total_s"] / r["solve_s"]) if r["path"] == "monolithic" else "-", _fmt(r["mono_highs_s"]),
        ])
    widths = [max(len(h), *(len(row[k]) for row in rows)) for k, h in enumerate(header)]
    lines = [" | ".join(h.rjust(w) for h, w in zip(header, widths))]
    lines.append("-+-".join("-" * w for w in widths))
    lines += [" | ".join(c.rjust(w) for c, w in zip(row, widths)) for row in rows]
    return "\n".join(lines)


def _profile(spec_text: str) -> None:
    import cProfile
    import pstats

    from bench.synthetic_city import synthetic_city
    from engine.model.solve import solve_scenario

    n, days, path = spec_text.split(":")
    scenario = synthetic_city(int(n), typical_days=int(days))
    profiler = cProfile.Profile()
    profiler.enable()
    result = solve_scenario(scenario, decompose=path == "decomposed", workers=1)
    profiler.disable()
    print(result.status, result.timings_s)
    pstats.Stats(profiler).sort_stats("cumulative").print_stats(30)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="heatmosaic engine benchmark on synthetic cities")
    parser.add_argument("--quick", action="store_true", help="the small set (about two minutes)")
    parser.add_argument("--sample", type=int, default=None,
                        help="districts solved by HiGHS alone per large run (default 20; 10 with --quick)")
    parser.add_argument("--json", default=None, help="also write the records to this JSON file")
    parser.add_argument("--child", default=None, help=argparse.SUPPRESS)
    parser.add_argument("--profile", default=None, metavar="N:DAYS:PATH", help="cProfile one case, one worker")
    parser.add_argument("--case", action="append", default=None, metavar="N:DAYS:PATH:WORKERS",
                        help="run only this case (repeatable), e.g. 200:0:decomposed:2")
    parser.add_argument("--ratios", action="store_true", help="only interactive_ratio and study_ratio of the demo")
    args = parser.parse_args(argv)
    if args.ratios:
        ratios = _spawn({"kind": "ratios"}, timeout_s=900)
        print(json.dumps(ratios, indent=2))
        print(f"interactive_ratio={ratios['interactive_ratio']:.3f}")
        print(f"study_ratio={ratios['study_ratio']:.3f}")
        return 0
    if args.child:
        _child(json.loads(args.child))
        return 0
    if args.profile:
        _profile(args.profile)
        return 0
    started = time.perf_counter()
    load_before = os.getloadavg()[0]
    cases = QUICK_CASES if args.quick else FULL_CASES
    if args.case:
        cases = []
        for text in args.case:
            try:
                n, days, path, workers = text.split(":")
                cases.append((int(n), int(days), path, int(workers)))
            except ValueError:
                parser.error(f"--case must look like 200:0:decomposed:2, got '{text}'")
            if path not in ("decomposed", "monolithic"):
                parser.error(f"--case: the path is 'decomposed' or 'monolithic', got '{path}'")
    if args.sample is None:
        args.sample = 10 if args.quick else 20
    records = []
    for n, days, path, workers in cases:
        spec = dict(kind="case", districts=n, typical_days=days, path=path, workers=workers, sample=args.sample)
        print(f"running {n} districts, {'full year' if days == 0 else f'{days} typical days'}, {path} ...",
              file=sys.stderr, flush=True)
        records.append(_spawn(spec, timeout_s=3600))
    demo = _spawn({"kind": "demo"}, timeout_s=600)
    ratios = _spawn({"kind": "ratios"}, timeout_s=900) if args.quick else None
    print(f"heatmosaic benchmark ({'quick' if args.quick else 'full'}), {os.cpu_count()} cores, "
          f"1-min load average {load_before:.1f} before / {os.getloadavg()[0]:.1f} after")
    print(format_table(records))
    print("build, solve, extract: summed over the LPs (CPU s over workers); total: wall s of solve_scenario; "
          "peak MB: RSS of the run and its workers, summed (psutil, 20 ms samples); HiGHS s: fresh highspy "
          "readModel+run of the same LPs from MPS with the same number of workers (~ = scaled from a "
          f"{args.sample}-district sample); ratio = total / HiGHS; total/solve = total over the engine's own "
          "HiGHS run time (monolithic).")
    d, one = demo["default"], demo["one_worker"]
    print(f"demo city, 12 typical days, end to end (load + solve): {d['end_to_end_s']:.2f} s "
          f"(load {d['load_s']:.2f} s, {d['linear_programs']} LPs, default workers); "
          f"{one['end_to_end_s']:.2f} s with one worker; command line incl. interpreter start "
          f"{demo['command_line_s']:.2f} s")
    fidelity = _spawn({"kind": "fidelity"}, timeout_s=3600)
    own = fidelity["own"]
    print(f"demo city, {fidelity['typical_days']} typical days + extreme days against the full year "
          f"(solved in {fidelity['full_year_s']:.0f} s): total cost {own['cost_error_pct']:+.3f} %, CO2 "
          f"{own['co2_error_pct']:+.3f} %, largest error of a technology's heat {own['heat_error_max_pct']:.2f} % "
          f"({own['heat_error_worst_technology']}: {own['heat_error_worst_mwh_per_a']:+,.0f} MWh/a, "
          f"{own['heat_error_worst_pct_of_heat']:+.3f} % of the city's heat, its share "
          f"{own['heat_share_worst_pct']:.2f} %; technologies above 100 MWh/a)")
    checked = fidelity["checked"]
    print(f"demo city, the {fidelity['typical_days']}-day plan run over the full year with its capacities fixed "
          f"(engine.studies.year_check, {checked['solve_s']:.1f} s): total cost {checked['cost_error_pct']:+.3f} % "
          f"against the full year's optimum ({checked['against_estimate_pct']:+.3f} % against its typical-day "
          f"estimate), unserved heat {checked['unserved_heat_mwh_per_a']:,.1f} MWh/a, largest difference of a "
          f"technology's heat {checked['heat_error_max_pct']:.2f} % ({checked['heat_error_worst_technology']})")
    for row in fidelity.get("firmness", []):
        print(f"demo city, the {fidelity['typical_days']} typical days' near-optimal ranges within "
              f"+{row['slack_pct']:g} % of the least cost ({row['seconds']:.1f} s; docs/model.md section 8) hold the "
              f"full year's heat of {row['inside']} of {row['technologies']} technologies")
        print(f"fidelity_full_year_within_ranges={row['inside']}/{row['technologies']}")
    print(f"fidelity_checked_plan_cost_pct={checked['cost_error_pct']:.3f}")
    print(f"fidelity_heat_error_max_pct={own['heat_error_max_pct']:.3f}")
    print(f"benchmark wall time {time.perf_counter() - started:.0f} s")
    if args.json:
        Path(args.json).write_text(json.dumps({"cases": records, "demo": demo}, indent=2))
    if ratios is not None:
        print(f"demo interactive: end to end {ratios['end_to_end_s']:.2f} s ({ratios['linear_programs']} LPs, "
              f"{ratios['workers']} worker(s)) over HiGHS alone {ratios['highs_alone_s']:.2f} s, median of "
              f"{ratios['repeats']}; seven-point trade-off curve {ratios['curve_s']:.2f} s (median of "
              f"{ratios['curve_repeats']}) over seven solves of "
              f"{ratios['one_solve_s']:.2f} s")
        print(f"interactive_ratio={ratios['interactive_ratio']:.3f}")
        print(f"study_ratio={ratios['study_ratio']:.3f}")
    mono = [r for r in records if r["path"] == "monolithic"] or records
    largest = max(mono, key=lambda r: r["variables"])
    print(f"fidelity_cost_error_pct={own['cost_error_pct']:.3f}")
    print(f"overhead_ratio={largest['total_s'] / largest['highs_s']:.3f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
