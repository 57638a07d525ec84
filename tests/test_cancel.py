"""Long jobs stop when the planner cancels them: the worker-thread runner, a solve, a sweep, the fidelity measure.

The dashboard runs each long job in a worker thread (:func:`pages._support.jobs.run_cancellable`) while the page
thread shows progress; pressing Cancel reruns the page, which raises in the page thread. These tests raise there
the same way and check that the job itself saw the cancel and stopped (the solver reports "interrupted"), rather
than running on in the background. No timing is asserted.
"""

from __future__ import annotations

import threading

import pytest

from bench.synthetic_city import synthetic_city
from engine.studies.fidelity import typical_day_fidelity
from engine.model.solve import solve_scenario
from engine.progress import FidelityCancelled, JobCancelled, SweepCancelled
from engine.studies.sweep import default_ranges, random_samples, run_sweep, tasks_from_samples
from pages._support.jobs import run_cancellable


class PageRerun(Exception):
    """Stands in for the dashboard's rerun raised in the page thread."""


def test_runner_returns_the_jobs_value_and_shows_its_progress():
    shown = []

    def job(progress, cancel):
        for k in range(3):
            progress((k + 1) / 3, f"step {k + 1}")
            threading.Event().wait(0.05)
        return "finished", cancel()

    assert run_cancellable(job, lambda share, text: shown.append((share, text)), poll_s=0.01) == ("finished", False)
    assert shown and shown[-1] == (1.0, "step 3")


def test_runner_raises_the_jobs_own_error():
    def job(progress, cancel):
        raise ValueError("bad input in technologies.csv, row 3")

    with pytest.raises(ValueError, match="row 3"):
        run_cancellable(job, lambda share, text: None, poll_s=0.01)


def test_interrupted_page_cancels_the_job_and_waits_for_it():
    seen = {}

    def job(progress, cancel):
        while not cancel():
            threading.Event().wait(0.01)
        seen["stopped"] = True

    calls = []

    def show(share, text):
        calls.append(share)
        if len(calls) == 3:
            raise PageRerun

    with pytest.raises(PageRerun):
        run_cancellable(job, show, poll_s=0.01, stop_wait_s=30)
    assert seen == {"stopped": True}  # the job ended before run_cancellable passed the rerun on


@pytest.mark.slow
def test_cancel_reaches_the_solver_in_a_full_year_solve():
    """A full-year solve of an invented three-district city is cancelled while HiGHS runs: the run ends as
    "interrupted" (the solver's interrupt callback), not optimal."""
    city = synthetic_city(3, seed=1)
    outcome = {}

    def job(progress, cancel):
        outcome["result"] = solve_scenario(city, typical_days=0, workers=1, progress=progress, cancel=cancel)

    started = threading.Event()

    def show(share, text):
        if share >= 0.1:  # building and solving has begun
            if started.is_set():
                raise PageRerun
            started.set()

    with pytest.raises(PageRerun):
        run_cancellable(job, show, poll_s=0.3, stop_wait_s=120)
    result = outcome["result"]
    assert result.status == "interrupted", result.message
    assert not result.solved and "cancel" in result.message.lower()


@pytest.mark.slow
def test_sweep_stops_at_cancel_serially_and_on_processes():
    city = synthetic_city(2, n_hours=336, typical_days=4, seed=2)
    tasks = tasks_from_samples(city, random_samples(default_ranges(["co2_price_factor", "gas_price_factor"]), 6, seed=1))
    for workers in (1, 2):
        finished = []
        with pytest.raises(SweepCancelled, match=r"after 1 of 6 runs") as caught:
            run_sweep(city, tasks, workers=workers, progress=lambda share, text: finished.append(text),
                      cancel=lambda: len(finished) >= 1)
        assert isinstance(caught.value, JobCancelled)  # one except clause catches every cancelled job
        assert len(finished) == 1


def test_fidelity_measure_stops_at_cancel():
    city = synthetic_city(2, n_hours=336, typical_days=4, seed=2)
    calls = []
    with pytest.raises(FidelityCancelled, match="cancelled") as caught:
        typical_day_fidelity(city, day_counts=(2, 4), progress=lambda share, text: calls.append(text),
                             cancel=lambda: len(calls) >= 2)
    assert len(calls) == 2  # the first resolution ran, the second was never started
    assert isinstance(caught.value, JobCancelled)
