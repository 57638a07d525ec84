"""Long dashboard jobs in a worker thread that the planner can cancel."""

from __future__ import annotations

import threading
from collections.abc import Callable

from engine.progress import Cancel, Progress


def run_cancellable(
    job: Callable[[Progress, Cancel], object],
    show: Progress,
    poll_s: float = 0.2,
    stop_wait_s: float = 60.0,
):
    """Run ``job(progress, cancel)`` in a worker thread while this thread shows its progress every ``poll_s``.

    ``show(share, text)`` is called from this thread only. If this thread is interrupted while it waits (any
    exception raised by ``show``, such as the dashboard's rerun when the planner presses Cancel, or a
    KeyboardInterrupt), the job's ``cancel()`` starts returning True, the worker is given up to ``stop_wait_s``
    to stop (a HiGHS solve stops at its next interrupt callback), and the exception goes on. An exception raised
    by the job is raised here. Returns the job's value.
    """
    stop = threading.Event()
    latest = [0.0, "Starting"]
    box: dict = {}

    def progress(share: float, text: str) -> None:
        latest[0], latest[1] = float(share), str(text)

    def target() -> None:
        try:
            box["value"] = job(progress, stop.is_set)
        except BaseException as error:  # handed to the waiting thread
            box["error"] = error

    worker = threading.Thread(target=target, name="heatmosaic-job", daemon=True)
    worker.start()
    try:
        while worker.is_alive():
            worker.join(poll_s)
            show(latest[0], latest[1])
    finally:
        if worker.is_alive():
            stop.set()
            worker.join(stop_wait_s)
    if "error" in box:
        raise box["error"]
    return box.get("value")
