"""Progress and cancel for long jobs: one set of types for solves, studies and the dashboard.

A long job (a solve, a trade-off curve, a sweep, the fidelity measure, an interference check) takes two optional
callables: ``progress(share, text)`` with the share done in [0, 1] and a line for the planner, and ``cancel()``,
which returns True once the job should stop. A job that stops because ``cancel()`` said so raises a
:class:`JobCancelled` (or a subclass naming the job), so that a caller catches every kind with one ``except``.
A solve that HiGHS stops at its interrupt callback returns a result with status "interrupted" instead.
"""

from __future__ import annotations

from collections.abc import Callable

Progress = Callable[[float, str], None]
"""``progress(share, text)``: share of the job done, 0 to 1 [-], and what it is doing now."""

Cancel = Callable[[], bool]
"""``cancel()``: True once the job should stop (checked between steps and by the solver's interrupt callback)."""


def no_progress(share: float, text: str) -> None:
    """A :data:`Progress` that shows nothing."""


class JobCancelled(RuntimeError):
    """A long job was stopped by its ``cancel`` callable before it finished."""


class SweepCancelled(JobCancelled):
    """A sweep stopped by its ``cancel`` callable before every run finished."""


class FidelityCancelled(JobCancelled):
    """The typical-day fidelity measurement stopped by its ``cancel`` callable."""
