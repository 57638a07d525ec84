"""Soak test of the dashboard's solve path: many solves in a row in one process, with the process memory after each.

Usage::

    python bench/soak.py                 # 50 solves through the set-up page (Streamlit AppTest), about 2 minutes
    python bench/soak.py --engine        # the same requests through the helpers the page calls, no Streamlit
    python bench/soak.py --solves 100 --trace   # more solves, and the allocations that grew most (tracemalloc)

What one solve is
-----------------
The default drives ``pages/1_Plan_a_run.py`` as a planner does, inside one Streamlit session: the cost case
select box alternates between ``reference`` and ``high_co2``, the typical-days box steps through 3 to 9, and the
Solve button is pressed. Two cost cases times seven day counts repeat every 14 solves, more than the session's
solve cache keeps (:data:`pages._support.cache.SOLVE_CACHE_SIZE`), so every press is a real solve while the cache is
full and dropping its oldest run, which is the state a long working session ends up in.

``--engine`` makes the same requests without Streamlit, calling what the page calls: the request key, the edits
applied to the scenario and written into its files, :func:`pages._support.cache.solve_with_cache` with a dict in
place of ``st.session_state["hm_solved"]``, the key figures and the district table.

What is printed
---------------
After every fifth solve: the solve count, the resident set size of the process [MB] (psutil, after a full garbage
collection), the mean wall time per solve of the last five [s] and the runs in the session's cache. Then the
growth of the resident set from solve 10 to the last solve, which leaves out the first solves' imports and
caches, and the growth once the cache holds its full number of runs. The last line is ``rss_growth_mb=X``
(solve 10 to the last solve).
"""

from __future__ import annotations

import argparse
import gc
import logging
import os
import statistics
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

# Imported after the project root is on the path (the benchmark runs as a plain script).
from pages._support.cache import SOLVE_CACHE_SIZE, request_key, solve_with_cache  # noqa: E402
from pages._support.edits import apply_edits, initial_setup, scenario_files_with_edits  # noqa: E402
from pages._support.inputs import demo_input_set  # noqa: E402
from pages._support.describe import run_kpis  # noqa: E402
from pages._support.tables import district_results_table  # noqa: E402

COST_CASES = ("reference", "high_co2")
TYPICAL_DAYS = tuple(range(3, 10))
REPORT_EVERY = 5
BASE_SOLVE = 10
APP = ROOT / "app.py"
PLAN_PAGE = "pages/1_Plan_a_run.py"
TIMEOUT_S = 300


def request(k: int) -> tuple[str, int]:
    """Cost case and typical days of solve ``k`` (counting from 0)."""
    return COST_CASES[k % len(COST_CASES)], TYPICAL_DAYS[k % len(TYPICAL_DAYS)]


def rss_mb() -> float:
    """Resident set size of this process after a full garbage collection [MB]."""
    import psutil

    gc.collect()
    return psutil.Process().memory_info().rss / 2**20


class PageSession:
    """The set-up page in one Streamlit session, driven through its widgets with AppTest."""

    def __init__(self):
        from streamlit.testing.v1 import AppTest

        # outside a server Streamlit warns on every thread without a script context; nothing is wrong
        logging.getLogger("streamlit.runtime.scriptrunner_utils.script_run_context").setLevel(logging.ERROR)
        self.at = AppTest.from_file(str(APP), default_timeout=TIMEOUT_S).run()
        self.at.switch_page(PLAN_PAGE).run()
        self._check("opening the set-up page")

    def _check(self, what: str) -> None:
        if self.at.exception:
            raise SystemExit(f"{what} raised: {self.at.exception[0].message}")

    def cache(self) -> dict:
        return self.at.session_state["hm_solved"]

    def solve(self, cost_case: str, typical_days: int) -> bool:
        """Choose, press Solve; returns whether the page solved afresh (not from its cache)."""
        before = set(self.cache())
        if self.at.selectbox(key="setup_cost_case").value != cost_case:
            self.at.selectbox(key="setup_cost_case").select(cost_case).run()
        if self.at.number_input(key="setup_typical_days").value != typical_days:
            self.at.number_input(key="setup_typical_days").set_value(typical_days).run()
        self.at.button(key="setup_solve").click().run()
        self._check(f"solving {cost_case} with {typical_days} typical days")
        current = self.at.session_state["hm_current"]
        run = self.cache()[current]
        if not run.result.solved:
            raise SystemExit(f"{cost_case}, {typical_days} typical days did not solve: {run.result.message}")
        if len(self.at.metric) != 4:
            raise SystemExit("the page did not show the run's key figures")
        return current not in before


class EngineSession:
    """The same requests through the helpers the set-up page calls, with a dict as the session's cache."""

    def __init__(self):
        self.inputs = demo_input_set()
        self.setup = initial_setup(self.inputs)
        self.solved: dict = {}

    def cache(self) -> dict:
        return self.solved

    def solve(self, cost_case: str, typical_days: int) -> bool:
        inputs, setup = self.inputs, self.setup
        technology_table, well_table = setup["technology_table"], setup["well_table"]
        key = request_key(inputs.digest, technology_table, well_table, cost_case, "cost", 0.0, typical_days)
        edited, problems = apply_edits(inputs.scenario, technology_table, well_table)
        if edited is None:
            raise SystemExit(f"the set-up tables do not apply: {problems}")
        files = scenario_files_with_edits(inputs.files, technology_table, well_table, inputs.scenario)
        run, from_cache = solve_with_cache(self.solved, key, edited, files, inputs.label, cost_case, "cost", 0.0,
                                              typical_days, progress=lambda share, text: None)
        if not run.result.solved:
            raise SystemExit(f"{cost_case}, {typical_days} typical days did not solve: {run.result.message}")
        run_kpis(run.result)
        district_results_table(run.result, inputs.scenario.technologies)
        return not from_cache


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--solves", type=int, default=50, help="number of solves (default 50)")
    parser.add_argument("--engine", action="store_true", help="call the page's helpers instead of the page")
    parser.add_argument("--trace", action="store_true",
                        help="track Python allocations and print those that grew most from solve 10 on")
    args = parser.parse_args(argv)
    if args.solves < BASE_SOLVE + REPORT_EVERY:
        parser.error(f"--solves must be at least {BASE_SOLVE + REPORT_EVERY}")

    with tempfile.TemporaryDirectory(prefix="heatmosaic-soak-") as folder:
        os.environ["HEATMOSAIC_STORE"] = str(Path(folder) / "store.sqlite")  # never the planner's own library
        if args.trace:
            tracemalloc.start(12)
        started = time.perf_counter()
        session = EngineSession() if args.engine else PageSession()
        mode = "engine helpers" if args.engine else "set-up page (AppTest)"
        print(f"soak: {args.solves} solves of the demo city through the {mode}; "
              f"cost cases {', '.join(COST_CASES)} alternating, typical days {TYPICAL_DAYS[0]}-{TYPICAL_DAYS[-1]}")
        print(f"opened in {time.perf_counter() - started:.1f} s, rss {rss_mb():.1f} MB")
        print(f"{'solves':>6}  {'rss MB':>8}  {'s/solve':>8}  {'cached':>6}  {'fresh':>5}")
        times: list[float] = []
        fresh = 0
        rss_at: dict[int, float] = {}
        full_at = None  # the first report with the session's cache full
        snapshot = None
        for k in range(args.solves):
            cost_case, days = request(k)
            began = time.perf_counter()
            fresh += bool(session.solve(cost_case, days))
            times.append(time.perf_counter() - began)
            done = k + 1
            if done % REPORT_EVERY == 0:
                rss_at[done] = rss_mb()
                if full_at is None and len(session.cache()) >= SOLVE_CACHE_SIZE:
                    full_at = done
                window = times[-REPORT_EVERY:]
                print(f"{done:>6}  {rss_at[done]:>8.1f}  {statistics.mean(window):>8.2f}  {len(session.cache()):>6}"
                      f"  {fresh:>5}", flush=True)
            if args.trace and done == BASE_SOLVE:
                snapshot = tracemalloc.take_snapshot()
        last = max(rss_at)
        growth = rss_at[last] - rss_at[BASE_SOLVE]
        print(f"time per solve: mean {statistics.mean(times):.2f} s, median {statistics.median(times):.2f} s, "
              f"max {max(times):.2f} s, first {times[0]:.2f} s; {fresh} of {len(times)} solved afresh")
        print(f"rss after solve {BASE_SOLVE}: {rss_at[BASE_SOLVE]:.1f} MB, after solve {last}: {rss_at[last]:.1f} MB, "
              f"growth {growth:+.1f} MB ({growth / (last - BASE_SOLVE):+.2f} MB per solve)")
        if full_at is not None and full_at < last:
            print(f"with the cache full ({SOLVE_CACHE_SIZE} runs) from solve {full_at}: rss {rss_at[full_at]:.1f} MB "
                  f"-> {rss_at[last]:.1f} MB, growth {rss_at[last] - rss_at[full_at]:+.1f} MB")
        if args.trace and snapshot is not None:
            print("allocations that grew most from solve 10:")
            for stat in tracemalloc.take_snapshot().compare_to(snapshot, "traceback")[:8]:
                frame = stat.traceback[0]
                print(f"  {stat.size_diff / 2**20:+8.2f} MB  {stat.count_diff:+7d} blocks  {frame.filename}:{frame.lineno}")
        print(f"rss_growth_mb={growth:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
