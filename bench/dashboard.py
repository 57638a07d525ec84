"""The dashboard's long actions on the demo city, timed as multiples of one solve.

Usage::

    python bench/dashboard.py              # about a minute on two idle cores
    python bench/dashboard.py --points 3   # the trade-off curve's number of points (the page's default is 6)
    python bench/dashboard.py --no-studies # solves, exports and page switches only
    python bench/dashboard.py --interference  # the interference check with and without held LPs, only

Every action is called as the pages call it (the same engine functions and arguments, ``workers=1`` where the
page passes it), in one process, after one untimed warm-up solve. ``one solve`` is
:func:`pages._support.cache.solve_with_cache` of the demo at its own resolution with an empty cache (the set-up
page's Solve button); every other figure is printed as seconds and as a ratio to it:

* ``solve again``: the same request a second time (the session cache);
* ``other cost case``: a cost case not solved yet, then back to the first one (both through the cache);
* ``interference check``: :func:`engine.studies.interference.solve_with_interference` (Groundwater page);
  ``--interference`` prints it alone, once solving every iteration from scratch (``reuse_models=False``) and
  once with the LPs held in HiGHS and changed in place (the default): seconds in all, per iteration, for the
  isotherms, and the LPs changed in place or solved from scratch;
* ``trade-off curve``: :func:`engine.studies.tradeoff.tradeoff_curve_runs` with ``--points`` points;
* ``sweep``: :func:`engine.studies.sweep.run_sweep` over the scenario's cost cases (Trade-offs page);
* ``spreadsheet`` and ``HTML summary``: :func:`engine.outputs.export.tables_xlsx` and
  :func:`engine.outputs.report.html_report` of the run (Share page), with their sizes in MB (the first summary of
  a process also packs plotly.js once);
* ``switch to <page>``: the dashboard driven by Streamlit's ``AppTest`` (no browser) on a library of the two runs
  above (saved to a temporary store): the script run of a switch from the set-up page to Compare runs,
  Groundwater or Share, on the first visit and on the second (which draws the figures and maps cached by
  :func:`pages._support.cache.cached_figure`), wall and CPU seconds of this process (on a loaded machine the
  CPU seconds compare better). The browser's drawing comes on top.

One solve is the median of three; the other actions run once (the machine is shared; compare ratios from the
same run, not seconds across runs). The 1-minute load average is printed before and after.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from engine.outputs.export import tables_xlsx  # noqa: E402
from engine.outputs.report import html_report  # noqa: E402
from engine.scenario import load_scenario, resolve_scenario_path  # noqa: E402
from engine.scenario.inputs import default_cost_case  # noqa: E402
from engine.studies.interference import solve_with_interference  # noqa: E402
from engine.studies.sweep import run_sweep, tasks_from_cost_cases  # noqa: E402
from engine.studies.tradeoff import tradeoff_curve_runs  # noqa: E402
from pages._support.cache import solve_with_cache  # noqa: E402


def _timed(action):
    started = time.perf_counter()
    value = action()
    return time.perf_counter() - started, value


def other_result(scenario, case, days):
    return solve_with_cache({}, f"{case}|cost|{days}", scenario, {}, case, case, "cost", 0.0, days)[0].result


def page_switches(scenario, first, second) -> list[tuple[str, float, str]]:
    """Seconds of the script run of each page switch, first and second visit (:mod:`streamlit.testing`)."""
    import tempfile

    from streamlit.testing.v1 import AppTest

    from engine.scenario import DEMO_DIR
    from engine.storage.store import ENV_STORE_PATH, ScenarioStore, read_scenario_files

    rows = []
    before = os.environ.get(ENV_STORE_PATH)
    with tempfile.TemporaryDirectory() as folder:
        os.environ[ENV_STORE_PATH] = str(Path(folder) / "store.sqlite")
        try:
            files = read_scenario_files(DEMO_DIR)
            with ScenarioStore(os.environ[ENV_STORE_PATH]) as store:
                for result in (first, second):
                    store.save_run(result, result.cost_case, "", inputs=files)
            at = AppTest.from_file(str(ROOT / "app.py"), default_timeout=300).run()
            for page in ("3_Compare_runs", "5_Groundwater", "4_Share"):
                for visit in ("first", "second"):
                    at.switch_page("pages/1_Plan_a_run.py").run()
                    cpu = time.process_time()
                    seconds, _ = _timed(lambda: at.switch_page(f"pages/{page}.py").run())
                    note = f"{time.process_time() - cpu:.2f} s CPU"
                    if at.exception:
                        note += "; " + "; ".join(str(e.value)[:60] for e in at.exception)
                    rows.append((f"switch to {page[2:].replace('_', ' ')}, {visit} visit", seconds, note))
        finally:
            if before is None:
                os.environ.pop(ENV_STORE_PATH, None)
            else:
                os.environ[ENV_STORE_PATH] = before
    return rows


def interference_reuse(scenario, case, days) -> None:
    """Print the interference check from scratch and with held LPs: seconds in all, per iteration, isotherms."""
    runs = {}
    for reuse in (False, True):
        seconds, checked = _timed(lambda: solve_with_interference(scenario, cost_case=case, typical_days=days,
                                                                  workers=1, reuse_models=reuse))
        runs[reuse] = (seconds, checked.extras["interference"], checked)
    print(f"interference check on the demo city ({days} typical days, cost case {case}), {os.cpu_count()} cores, "
          f"1-min load average {os.getloadavg()[0]:.1f}")
    for reuse, (seconds, info, checked) in runs.items():
        iterations = info["iterations"]
        solving = sum(it["seconds"] for it in iterations)
        label = "held LPs, changed in place" if reuse else "every LP from scratch"
        print(f"{label}: {seconds:.2f} s in all, {len(iterations)} solves ({solving:.2f} s), isotherms and notes "
              f"{seconds - solving:.2f} s, converged {info['converged']}, total cost "
              f"{checked.total_cost_eur_per_a:,.0f} EUR/a")
        held = {r["iteration"]: r for r in info["held_models"]}
        for it in iterations:
            record = held.get(it["iteration"])
            how = (f"{record['in_place']} LPs in place, {record['from_scratch']} from scratch, "
                   f"{record.get('coefficients', 0)} coefficients, {record.get('costs', 0)} costs, "
                   f"{record.get('column_bounds', 0)} column bounds handed over") if record else "from scratch"
            print(f"  iteration {it['iteration']}: {it['seconds']:6.2f} s, largest change "
                  f"{it['max_shift_k']:.3f} K, total cost {it['total_cost_eur_per_a']:,.0f} EUR/a; {how}")
    before, after = runs[False][0], runs[True][0]
    solve_before = sum(it["seconds"] for it in runs[False][1]["iterations"])
    solve_after = sum(it["seconds"] for it in runs[True][1]["iterations"])
    print(f"held LPs: {before:.2f} -> {after:.2f} s in all ({after / before:.2f}), iterations "
          f"{solve_before:.2f} -> {solve_after:.2f} s ({solve_after / solve_before:.2f})")
    shifts = [runs[reuse][1]["source_shifts_k"] for reuse in (False, True)]
    if len(shifts[0]) == len(shifts[1]):
        gap = max((abs(a - b) for x, y in zip(*shifts) for a, b in zip(x, y)), default=0.0)
        print(f"largest difference of a source shift between the two runs: {gap:.4f} K (equally cheap plans)")
    else:
        print(f"the two runs took {len(shifts[0])} and {len(shifts[1])} solves")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="the dashboard's long actions on the demo city")
    parser.add_argument("--points", type=int, default=6, help="points of the trade-off curve (the page's default)")
    parser.add_argument("--no-studies", action="store_true",
                        help="leave out the interference check, the trade-off curve and the sweep")
    parser.add_argument("--interference", action="store_true",
                        help="only the interference check, from scratch and with held LPs")
    args = parser.parse_args(argv)
    load_before = os.getloadavg()[0]
    folder = resolve_scenario_path("demo")
    scenario = load_scenario(folder)
    days = int(scenario.settings.typical_days)
    first = default_cost_case(scenario.cost_cases)
    other = next((name for name in scenario.cost_cases if name != first), first)

    def request(cache, case):
        return solve_with_cache(cache, f"{case}|cost|{days}", scenario, {}, case, case, "cost", 0.0, days)

    request({}, first)  # warm-up: imports, first HiGHS instance
    if args.interference:
        interference_reuse(scenario, first, days)
        return 0
    singles = []
    for _ in range(3):
        seconds, (run, _) = _timed(lambda: request({}, first))
        singles.append(seconds)
    one = statistics.median(singles)
    result = run.result
    cache: dict = {}
    request(cache, first)
    rows = [("one solve", one, "")]
    seconds, (_, hit) = _timed(lambda: request(cache, first))
    rows.append(("solve again", seconds, "from the session cache" if hit else "solved"))
    seconds, _ = _timed(lambda: request(cache, other))
    rows.append((f"other cost case ({other})", seconds, ""))
    seconds, (_, hit) = _timed(lambda: request(cache, first))
    rows.append(("back to the first case", seconds, "from the session cache" if hit else "solved"))
    if not args.no_studies:
        seconds, checked = _timed(lambda: solve_with_interference(scenario, cost_case=first, typical_days=days,
                                                                  workers=1))
        rows.append(("interference check", seconds, checked.status))
        seconds, (table, _) = _timed(lambda: tradeoff_curve_runs(scenario, first, args.points, days))
        rows.append((f"trade-off curve, {args.points} points", seconds, f"{int((table['status'] == 'optimal').sum())} "
                     "optimal"))
        tasks = tasks_from_cost_cases(scenario)
        seconds, _ = _timed(lambda: run_sweep(scenario, tasks, typical_days=days))
        rows.append((f"sweep, {len(tasks)} cost cases", seconds, ""))
    results = {result.cost_case: result}
    seconds, book = _timed(lambda: tables_xlsx(results))
    rows.append(("spreadsheet (.xlsx)", seconds, f"{len(book) / 2**20:.2f} MB"))
    seconds, page = _timed(lambda: html_report(results, scenario, scenario.technologies, "Demo city"))
    rows.append(("HTML summary", seconds, f"{len(page.encode()) / 2**20:.2f} MB"))
    rows += page_switches(scenario, result, other_result(scenario, other, days))
    print(f"heatmosaic dashboard actions on the demo city ({days} typical days), {os.cpu_count()} cores, "
          f"1-min load average {load_before:.1f} before / {os.getloadavg()[0]:.1f} after")
    width = max(len(r[0]) for r in rows)
    print(f"{'action'.ljust(width)} | seconds | x one solve | note")
    for name, seconds, note in rows:
        print(f"{name.ljust(width)} | {seconds:7.2f} | {seconds / one:11.2f} | {note}")
    print(f"one solve: median of {', '.join(f'{s:.2f}' for s in singles)} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
