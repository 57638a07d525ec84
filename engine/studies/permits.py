"""Permit screening of groundwater well doublets in a solved run.

A doublet's permit limits its pumping rate [m³/h] and often its annual volume [m³/a]; the water authority also
expects the reinjected water to stay within a temperature window (4.5 °C to 20 °C by default: common practice for
open-loop systems, no source; always editable). The LP keeps every well inside the limits it was solved with, so a
fresh run is at most *at* a limit. A *breach* shows when the limits are checked against inputs that changed after
the solve (a lowered permit, a narrower window) or against source temperatures shifted by a neighbour's plume.

:func:`screen_wells` gives one row per doublet with the figures a planner takes to the permit discussion,
:func:`well_year_profiles` the hourly flow share and reinjection temperature rebuilt to the calendar year,
:func:`net_injection` each doublet's annual net injection (the input of the plume model in
:mod:`engine.studies.interference`), and :func:`add_well_status` writes ``status`` and ``source_temp_shift_k`` into a
result's ``wells`` table. :func:`screening_display_table` turns the screening into a table for reading; its figures
and map layer are in :mod:`engine.outputs.groundwater_maps`.

Everything here is a screening estimate: the permit itself rests on the numerical groundwater model and the
procedure the water authority requires, and on licensed engineers.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.physics import water
from engine.scenario.inputs import Scenario
from engine.model.results import RunResult
from engine.units import KWH_PER_MWH, SECONDS_PER_HOUR


FLOW_LIMIT_SHARE = 0.999
"""A step counts as *at the permitted flow* from this share of the permit on (the LP's optimum sits exactly on
the limit; the margin absorbs solver tolerances)."""

WINDOW_EDGE_K = 0.05
"""A reinjection temperature within this distance of the window's edge counts as at the edge [K]."""

BREACH_TOLERANCE = 1e-3
"""Relative excess over a permitted flow or volume that counts as a breach (solver tolerances stay below)."""

BREACH_TOLERANCE_K = 0.01
"""Excess beyond the reinjection window that counts as a breach [K]."""

STATUSES = ("ok", "at_limit", "breach")

_SEASONS = {12: "winter", 1: "winter", 2: "winter", 3: "spring", 4: "spring", 5: "spring", 6: "summer",
            7: "summer", 8: "summer", 9: "autumn", 10: "autumn", 11: "autumn"}
_SEASON_ORDER = ("winter", "spring", "summer", "autumn")

SCREENING_COLUMNS = [
    "well_id", "district_id", "status", "binding_limits",
    "permit_flow_m3_per_h", "peak_flow_m3_per_h", "peak_flow_share", "hours_at_flow_limit",
    "reinjection_min_temp_c", "reinjection_max_temp_c", "min_reinjection_temp_c", "max_reinjection_temp_c",
    "hours_at_window_min", "hours_at_window_max",
    "extracted_mwh_per_a", "rejected_mwh_per_a", "aquifer_heat_balance_mwh_per_a",
    "annual_volume_m3", "permit_annual_volume_m3", "annual_volume_share",
    "heat_mwh_per_a", "cooling_mwh_per_a", "seasonal_cop", "source_temp_shift_k",
]
"""Columns of :func:`screen_wells`, in order."""


# ----------------------------------------------------------------------------- helpers
def _check_result(result: RunResult, what: str) -> None:
    if not isinstance(result, RunResult):
        raise ValueError(f"result must be a RunResult; got {type(result).__name__}")
    missing = [name for name in ("well_steps", "steps", "wells") if name not in result.tables]
    if missing:
        raise ValueError(
            f"result has no table(s) {', '.join(missing)} (status {result.status!r}): {what} needs a solved run"
        )


def _window(scenario: Scenario, low, high) -> tuple[float, float]:
    low = scenario.settings.reinjection_min_temp_c if low is None else low
    high = scenario.settings.reinjection_max_temp_c if high is None else high
    try:
        low, high = float(low), float(high)
    except (TypeError, ValueError):
        raise ValueError(f"reinjection_min_temp_c and reinjection_max_temp_c must be numbers; got {low!r}, {high!r}")
    if not (np.isfinite(low) and np.isfinite(high)):
        raise ValueError("reinjection_min_temp_c and reinjection_max_temp_c must be finite")
    if high <= low:
        raise ValueError(
            f"reinjection_max_temp_c ({high:g} °C) must be above reinjection_min_temp_c ({low:g} °C)"
        )
    return low, high


def _shift_map(source_temp_shift_k, well_ids) -> np.ndarray:
    if source_temp_shift_k is None:
        return np.zeros(len(well_ids))
    mapping = pd.Series(source_temp_shift_k, dtype=float) if not isinstance(source_temp_shift_k, pd.Series) else (
        source_temp_shift_k.astype(float)
    )
    values = mapping.reindex(list(well_ids)).fillna(0.0).to_numpy(float)
    if not np.all(np.isfinite(values)):
        raise ValueError("source_temp_shift_k must hold finite numbers [K]")
    return values


def _step_weights(result: RunResult) -> pd.Series:
    steps = result.tables["steps"]
    return pd.Series(steps["weight_h"].to_numpy(float), index=steps["step"].to_numpy())


def _hour_seasons(result: RunResult) -> tuple[np.ndarray, np.ndarray]:
    """Model step and season name of every hour of the calendar year."""
    order = result.year_step_index()
    year = 2000 if len(order) > 8760 else 2001  # a leap year when the series has 8784 hours
    hours = np.datetime64(f"{year}-01-01T00") + np.arange(len(order)).astype("timedelta64[h]")
    months = (hours.astype("datetime64[M]").astype(int) % 12) + 1
    return order, np.array([_SEASONS[m] for m in months], dtype=object)


def _seasons_of(steps_hit: np.ndarray, order: np.ndarray, seasons: np.ndarray) -> str:
    """Seasons (in calendar words) that hold at least a fifth of the calendar hours of the given steps."""
    if steps_hit.size == 0:
        return ""
    hit = np.isin(order, steps_hit)
    if not hit.any():
        return ""
    names, counts = np.unique(seasons[hit], return_counts=True)
    share = dict(zip(names, counts / counts.sum()))
    chosen = [s for s in _SEASON_ORDER if share.get(s, 0.0) >= 0.2]
    if len(chosen) == 4:
        return "all year"
    if not chosen:
        return ""
    return "in " + (chosen[0] if len(chosen) == 1 else ", ".join(chosen[:-1]) + " and " + chosen[-1])


def _hours_text(hours: float) -> str:
    return f"{hours:,.0f}".replace(",", " ") + " h"


def _well_supply(result: RunResult) -> pd.DataFrame:
    """Heat, cooling and electricity of the heat pumps and coolers on each well [MWh/a]."""
    supply = result.tables.get("supply")
    if supply is None or supply.empty:
        return pd.DataFrame(columns=["heat_mwh_per_a", "hp_electricity_mwh_per_a"])
    on_well = supply[supply["well_id"].astype(str) != ""]
    heat_pumps = on_well[on_well["kind"] == "groundwater_heat_pump"]
    return pd.DataFrame(
        {
            "hp_heat_mwh_per_a": heat_pumps.groupby("well_id")["heat_mwh_per_a"].sum(),
            "hp_electricity_mwh_per_a": heat_pumps.groupby("well_id")["electricity_mwh_per_a"].sum(),
        }
    )


# ----------------------------------------------------------------------------- per-step data
def well_step_frame(result: RunResult, scenario: Scenario | None = None, source_temp_shift_k=None) -> pd.DataFrame:
    """The run's ``well_steps`` with step weights, volume flow and the share of the (current) permit.

    Parameters
    ----------
    result : RunResult
        A solved run.
    scenario : Scenario, optional
        Current inputs: when given, ``flow_share`` is recomputed against its permitted flow (which may have been
        edited after the solve). The well's water density at its mean groundwater temperature converts the
        permit from m³/h to kg/s, as the model does.
    source_temp_shift_k : mapping or pandas.Series, optional
        Extra shift of each well's source temperature [K] by well id, applied to the groundwater and the
        reinjection temperature (the heat pump keeps its spread): a what-if for a run solved without it.

    Returns
    -------
    pandas.DataFrame
        The ``well_steps`` columns plus ``weight_h`` [h], ``flow_m3_per_s`` [m³/s] and
        ``injection_temp_change_k`` (reinjection minus extraction temperature [K], 0 while idle).
    """
    _check_result(result, "the well screening")
    frame = result.tables["well_steps"].copy()
    frame["weight_h"] = frame["step"].map(_step_weights(result)).to_numpy(float)
    ids = pd.unique(frame["well_id"])
    if source_temp_shift_k is not None:
        shift = pd.Series(_shift_map(source_temp_shift_k, ids), index=ids)
        extra = frame["well_id"].map(shift).to_numpy(float)
        frame["groundwater_temp_c"] = frame["groundwater_temp_c"].to_numpy(float) + extra
        frame["reinjection_temp_c"] = frame["reinjection_temp_c"].to_numpy(float) + extra
    gw = np.clip(frame["groundwater_temp_c"].to_numpy(float), 0.5, 99.0)
    frame["flow_m3_per_s"] = frame["flow_kg_s"].to_numpy(float) / water.water_density_kg_per_m3(gw)
    delta = frame["reinjection_temp_c"].to_numpy(float) - frame["groundwater_temp_c"].to_numpy(float)
    frame["injection_temp_change_k"] = np.where(frame["flow_kg_s"].to_numpy(float) > 1e-9, delta, 0.0)
    frame["injection_temp_change_k"] = frame["injection_temp_change_k"].fillna(0.0)
    if scenario is not None:
        permit = _permit_flow_kg_s(scenario)
        limit = frame["well_id"].map(permit).to_numpy(float)
        flow = frame["flow_kg_s"].to_numpy(float)
        with np.errstate(divide="ignore", invalid="ignore"):
            share = np.where(limit > 0, flow / limit, np.where(flow > 1e-9, np.inf, 0.0))
        frame["flow_share"] = np.where(np.isnan(limit), frame["flow_share"].to_numpy(float), share)
    return frame


def _permit_flow_kg_s(scenario: Scenario) -> pd.Series:
    wells = scenario.wells
    rho = water.water_density_kg_per_m3(np.clip(wells["groundwater_temp_c"].to_numpy(float), 0.5, 99.0))
    kg_s = wells["permit_flow_m3_per_h"].to_numpy(float) * rho / SECONDS_PER_HOUR
    return pd.Series(kg_s, index=wells["well_id"].to_numpy())


def well_year_profiles(result: RunResult, scenario: Scenario | None = None, well_ids=None,
                       source_temp_shift_k=None) -> pd.DataFrame:
    """Flow share, reinjection and groundwater temperature of each doublet in every hour of the year.

    With typical days each calendar day takes the values of the typical day standing for it
    (:meth:`RunResult.year_step_index`).

    Parameters
    ----------
    result : RunResult
        A solved run.
    scenario : Scenario, optional
        Current inputs, to measure the flow share against an edited permit (see :func:`well_step_frame`).
    well_ids : list of str, optional
        Wells to include; all wells of the run by default.
    source_temp_shift_k : mapping, optional
        As in :func:`well_step_frame`.

    Returns
    -------
    pandas.DataFrame
        Long table: ``hour`` (0 .. n-1), ``well_id``, ``flow_share`` [-], ``flow_m3_per_h`` [m³/h],
        ``reinjection_temp_c`` [°C] (NaN while idle), ``groundwater_temp_c`` [°C], ``extracted_kw`` and
        ``rejected_kw`` [kW].
    """
    frame = well_step_frame(result, scenario, source_temp_shift_k)
    if well_ids is not None:
        wanted = [str(w) for w in well_ids]
        unknown = sorted(set(wanted) - set(frame["well_id"]))
        if unknown:
            raise ValueError(f"well_ids holds wells the run does not have: {', '.join(unknown)}")
        frame = frame[frame["well_id"].isin(wanted)]
    order = result.year_step_index()
    parts = []
    for well_id, rows in frame.groupby("well_id", sort=False):
        by_step = rows.set_index("step")
        year = by_step.reindex(order)
        parts.append(
            pd.DataFrame(
                {
                    "hour": np.arange(len(order)),
                    "well_id": well_id,
                    "flow_share": year["flow_share"].to_numpy(float),
                    "flow_m3_per_h": year["flow_m3_per_s"].to_numpy(float) * SECONDS_PER_HOUR,
                    "reinjection_temp_c": year["reinjection_temp_c"].to_numpy(float),
                    "groundwater_temp_c": year["groundwater_temp_c"].to_numpy(float),
                    "extracted_kw": year["extracted_kw"].to_numpy(float),
                    "rejected_kw": year["rejected_kw"].to_numpy(float),
                }
            )
        )
    if not parts:
        return pd.DataFrame(columns=["hour", "well_id", "flow_share", "flow_m3_per_h", "reinjection_temp_c",
                                     "groundwater_temp_c", "extracted_kw", "rejected_kw"])
    return pd.concat(parts, ignore_index=True)


# ----------------------------------------------------------------------------- annual net injection
def net_injection(result: RunResult) -> pd.DataFrame:
    """Each doublet's annual net injection: mean volume flow and flow-weighted mean temperature change.

    Over the year a doublet reinjects cold water while heating and warm water while cooling; in the aquifer the
    two partly cancel. With step weights ``w_t`` [h], volume flow ``Q_t`` [m³/s] and reinjection minus
    extraction temperature ``dT_t`` [K]::

        Q_mean  = sum_t w_t Q_t / sum_t w_t
        dT_mean = sum_t w_t Q_t dT_t / sum_t w_t Q_t

    so that ``Q_mean * dT_mean`` is the annual mean of ``Q_t dT_t``, the source strength of the linear plume
    model. ``dT_t`` is taken against the water the doublet itself extracts (the source temperature the solve
    saw, shifts included): what the doublet takes from the aquifer at one well it returns at the other, so
    ``C_w Q_mean dT_mean`` equals the net heat it exchanges, and a neighbour's plume is not counted twice.

    Parameters
    ----------
    result : RunResult
        A solved run.

    Returns
    -------
    pandas.DataFrame
        ``well_id``, ``mean_flow_m3_per_s`` [m³/s], ``mean_injection_temp_change_k`` [K] (0 for an idle
        well), ``source_strength_m3_k_per_s`` [m³ K/s] (their product), ``annual_volume_m3`` [m³/a].
    """
    frame = well_step_frame(result)
    frame["weighted_flow"] = frame["weight_h"] * frame["flow_m3_per_s"]
    frame["weighted_strength"] = frame["weighted_flow"] * frame["injection_temp_change_k"]
    total_h = float(_step_weights(result).sum())
    grouped = frame.groupby("well_id", sort=False)[["weighted_flow", "weighted_strength"]].sum()
    flow = grouped["weighted_flow"].to_numpy(float)
    strength = grouped["weighted_strength"].to_numpy(float)
    delta = np.divide(strength, flow, out=np.zeros_like(flow), where=flow > 0)
    return pd.DataFrame(
        {
            "well_id": grouped.index.to_numpy(),
            "mean_flow_m3_per_s": flow / total_h,
            "mean_injection_temp_change_k": delta,
            "source_strength_m3_k_per_s": strength / total_h,
            "annual_volume_m3": flow * SECONDS_PER_HOUR,
        }
    )


# ----------------------------------------------------------------------------- screening
def screen_wells(
    result: RunResult,
    scenario: Scenario,
    reinjection_min_temp_c: float | None = None,
    reinjection_max_temp_c: float | None = None,
    source_temp_shift_k=None,
) -> pd.DataFrame:
    """Permit screening of every doublet of a solved run against the current inputs.

    Status, per doublet:

    ``breach``
        some step exceeds the permitted flow, the annual volume exceeds its permit, or a reinjection
        temperature lies outside the window (by more than :data:`BREACH_TOLERANCE` /
        :data:`BREACH_TOLERANCE_K`). A run checked against the inputs it was solved with never breaches; a
        breach means the inputs changed after solving (pass the edited scenario or window) or the source
        temperature shifted (``source_temp_shift_k``).
    ``at_limit``
        no breach, but the flow reaches :data:`FLOW_LIMIT_SHARE` of the permit in some step, the annual volume
        reaches that share of its permit, or the reinjection temperature comes within :data:`WINDOW_EDGE_K`
        of an edge of the window.
    ``ok``
        otherwise.

    Parameters
    ----------
    result : RunResult
        A solved run.
    scenario : Scenario
        The inputs to check against: permits from ``scenario.wells``, the window from ``scenario.settings``.
        Wells of the run the scenario no longer holds keep the permit of the run.
    reinjection_min_temp_c, reinjection_max_temp_c : float, optional
        Reinjection window [°C]; None takes the scenario's (default 4.5 °C to 20 °C, common practice, no source).
    source_temp_shift_k : mapping or pandas.Series, optional
        Extra source temperature shift per well id [K] (what-if, see :func:`well_step_frame`).

    Returns
    -------
    pandas.DataFrame
        One row per doublet with the columns :data:`SCREENING_COLUMNS`: permit and peak flow [m³/h], peak share
        of the permit [-], hours at the permitted flow [h/a], the window and the lowest/highest reinjection
        temperature [°C], hours at each window edge [h/a], heat extracted from and rejected into the aquifer and
        their balance (rejected minus extracted: negative cools the aquifer) [MWh/a], annual volume and its
        permit [m³/a] and share [-], heat and cooling supplied [MWh/a], seasonal COP of the well's heat pump
        (heat / electricity, NaN when it does not run) [-], the source temperature shift the run was solved
        with plus any what-if shift [K], ``binding_limits`` in words and ``status``.

    Raises
    ------
    ValueError
        If ``result`` is not a solved run or the window is not a valid range.
    """
    _check_result(result, "the well screening")
    low, high = _window(scenario, reinjection_min_temp_c, reinjection_max_temp_c)
    frame = well_step_frame(result, scenario, source_temp_shift_k)
    wells_run = result.tables["wells"].set_index("well_id")
    inputs = scenario.wells.set_index("well_id")
    supply = _well_supply(result)
    order, seasons = _hour_seasons(result)
    solved_shift = (
        inputs["source_temp_shift_k"].astype(float) if "source_temp_shift_k" in inputs.columns else None
    )
    extra_shift = None if source_temp_shift_k is None else pd.Series(
        _shift_map(source_temp_shift_k, wells_run.index), index=wells_run.index
    )
    if "source_temp_shift_k" in wells_run.columns:
        solved_shift = wells_run["source_temp_shift_k"].astype(float)

    rows = []
    for well_id, s in frame.groupby("well_id", sort=False):
        w = s["weight_h"].to_numpy(float)
        flow_kg_s = s["flow_kg_s"].to_numpy(float)
        share = s["flow_share"].to_numpy(float)
        q_m3_h = s["flow_m3_per_s"].to_numpy(float) * SECONDS_PER_HOUR
        running = flow_kg_s > 1e-9
        reinj = s["reinjection_temp_c"].to_numpy(float)
        reinj_run = reinj[running & np.isfinite(reinj)]
        in_inputs = well_id in inputs.index
        permit_m3_h = float(inputs.loc[well_id, "permit_flow_m3_per_h"]) if in_inputs else float("nan")
        permit_volume = float(inputs.loc[well_id, "permit_annual_volume_m3"]) if in_inputs else float("nan")
        volume = float((q_m3_h * w).sum())
        if not np.isfinite(permit_volume):  # blank (or infinite): no annual limit
            permit_volume, volume_share = float("nan"), float("nan")
        elif permit_volume > 0:
            volume_share = volume / permit_volume
        else:
            volume_share = np.inf if volume > 1e-6 else 0.0
        steps = s["step"].to_numpy()
        at_flow = running & (share >= FLOW_LIMIT_SHARE)
        at_min = running & np.isfinite(reinj) & (reinj <= low + WINDOW_EDGE_K)
        at_max = running & np.isfinite(reinj) & (reinj >= high - WINDOW_EDGE_K)
        hours_flow = float(w[at_flow].sum())
        hours_min = float(w[at_min].sum())
        hours_max = float(w[at_max].sum())
        extracted = float((s["extracted_kw"].to_numpy(float) * w).sum() / KWH_PER_MWH)
        rejected = float((s["rejected_kw"].to_numpy(float) * w).sum() / KWH_PER_MWH)
        peak_share = float(share.max()) if len(share) else 0.0
        min_reinj = float(reinj_run.min()) if reinj_run.size else float("nan")
        max_reinj = float(reinj_run.max()) if reinj_run.size else float("nan")

        breaches, limits = [], []
        if peak_share > 1.0 + BREACH_TOLERANCE:
            over = float(w[share > 1.0 + BREACH_TOLERANCE].sum())
            breaches.append(f"permitted flow exceeded in {_hours_text(over)} (peak {peak_share:.0%})")
        elif hours_flow > 0:
            text = f"permitted flow in {_hours_text(hours_flow)}"
            limits.append(text)
        if np.isfinite(volume_share) and volume_share > 1.0 + BREACH_TOLERANCE:
            breaches.append(f"annual volume {volume_share:.0%} of its permit")
        elif np.isfinite(volume_share) and volume_share >= FLOW_LIMIT_SHARE:
            limits.append("annual volume")
        if reinj_run.size and min_reinj < low - BREACH_TOLERANCE_K:
            below = running & np.isfinite(reinj) & (reinj < low - BREACH_TOLERANCE_K)
            when = _seasons_of(steps[below], order, seasons)
            breaches.append(f"reinjection below {low:g} °C (down to {min_reinj:.1f} °C) {when}".strip())
        elif hours_min > 0:
            when = _seasons_of(steps[at_min], order, seasons)
            limits.append(f"reinjection window ({low:g} °C) {when}".strip())
        if reinj_run.size and max_reinj > high + BREACH_TOLERANCE_K:
            above = running & np.isfinite(reinj) & (reinj > high + BREACH_TOLERANCE_K)
            when = _seasons_of(steps[above], order, seasons)
            breaches.append(f"reinjection above {high:g} °C (up to {max_reinj:.1f} °C) {when}".strip())
        elif hours_max > 0:
            when = _seasons_of(steps[at_max], order, seasons)
            limits.append(f"reinjection window ({high:g} °C) {when}".strip())
        status = "breach" if breaches else ("at_limit" if limits else "ok")

        run_row = wells_run.loc[well_id] if well_id in wells_run.index else None
        heat = float(run_row["heat_mwh_per_a"]) if run_row is not None else float("nan")
        cooling = float(run_row["cooling_mwh_per_a"]) if run_row is not None else float("nan")
        hp_heat = float(supply["hp_heat_mwh_per_a"].get(well_id, 0.0)) if len(supply) else 0.0
        hp_elec = float(supply["hp_electricity_mwh_per_a"].get(well_id, 0.0)) if len(supply) else 0.0
        shift = 0.0
        if solved_shift is not None and well_id in solved_shift.index:
            shift = float(solved_shift.loc[well_id])
        if extra_shift is not None:
            shift += float(extra_shift.get(well_id, 0.0))
        rows.append(
            {
                "well_id": well_id,
                "district_id": str(run_row["district_id"]) if run_row is not None else "",
                "status": status,
                "binding_limits": "; ".join(breaches + limits) if (breaches or limits) else "none",
                "permit_flow_m3_per_h": permit_m3_h,
                "peak_flow_m3_per_h": float(q_m3_h.max()) if len(q_m3_h) else 0.0,
                "peak_flow_share": peak_share,
                "hours_at_flow_limit": hours_flow,
                "reinjection_min_temp_c": low,
                "reinjection_max_temp_c": high,
                "min_reinjection_temp_c": min_reinj,
                "max_reinjection_temp_c": max_reinj,
                "hours_at_window_min": hours_min,
                "hours_at_window_max": hours_max,
                "extracted_mwh_per_a": extracted,
                "rejected_mwh_per_a": rejected,
                "aquifer_heat_balance_mwh_per_a": rejected - extracted,
                "annual_volume_m3": volume,
                "permit_annual_volume_m3": permit_volume,
                "annual_volume_share": volume_share,
                "heat_mwh_per_a": heat,
                "cooling_mwh_per_a": cooling,
                "seasonal_cop": hp_heat / hp_elec if hp_elec > 1e-9 else float("nan"),
                "source_temp_shift_k": shift,
            }
        )
    return pd.DataFrame(rows, columns=SCREENING_COLUMNS)


def add_well_status(result: RunResult, scenario: Scenario, source_temp_shift_k=None) -> RunResult:
    """Write ``source_temp_shift_k`` and ``status`` into ``result.tables["wells"]`` (in place; returns it).

    ``source_temp_shift_k`` is the shift of each well's source temperature the run was solved with (the
    scenario's ``wells.source_temp_shift_k`` column, 0 without it) [K] unless given; ``status`` is ``ok``,
    ``at_limit`` or ``breach`` from :func:`screen_wells` against ``scenario``. A run that is not solved or has
    no wells is returned unchanged.
    """
    wells = result.tables.get("wells")
    if not result.solved or wells is None or "well_steps" not in result.tables:
        return result
    if source_temp_shift_k is None:
        if "source_temp_shift_k" in scenario.wells.columns:
            source_temp_shift_k = pd.Series(
                scenario.wells["source_temp_shift_k"].to_numpy(float), index=scenario.wells["well_id"].to_numpy()
            )
        else:
            source_temp_shift_k = {}
    shift = pd.Series(_shift_map(source_temp_shift_k, wells["well_id"]), index=wells.index)
    # a run merged from per-district parts can carry object columns (parts without wells); restore the dtypes
    table = wells.drop(columns=[c for c in ("source_temp_shift_k", "status") if c in wells.columns]).infer_objects()
    table["source_temp_shift_k"] = shift.to_numpy(float)
    screening = screen_wells(result, scenario).set_index("well_id")["status"]
    table["status"] = table["well_id"].map(screening).fillna("ok").astype(str).to_numpy()
    result.tables["wells"] = table
    return result


# ----------------------------------------------------------------------------- display table
STATUS_LABELS = {"ok": "ok", "at_limit": "at a limit", "breach": "breach"}


DISPLAY_HEADERS = {
    "well_id": "doublet",
    "district": "district",
    "status": "status",
    "binding_limits": "binding limits",
    "permit_flow_m3_per_h": "permitted flow [m³/h]",
    "peak_flow_share": "peak flow [% of permit]",
    "hours_at_flow_limit": "hours at permitted flow [h/a]",
    "min_reinjection_temp_c": "lowest reinjection [°C]",
    "max_reinjection_temp_c": "highest reinjection [°C]",
    "hours_at_window_min": "hours at lower window edge [h/a]",
    "hours_at_window_max": "hours at upper window edge [h/a]",
    "extracted_mwh_per_a": "heat extracted [MWh/a]",
    "rejected_mwh_per_a": "heat rejected [MWh/a]",
    "aquifer_heat_balance_mwh_per_a": "aquifer balance [MWh/a]",
    "annual_volume_m3": "annual volume [m³/a]",
    "permit_annual_volume_m3": "permitted volume [m³/a]",
    "annual_volume_share": "annual volume [% of permit]",
    "seasonal_cop": "seasonal COP [-]",
    "source_temp_shift_k": "source shift [K]",
}
"""Column headers of :func:`screening_display_table`, in order."""


def screening_display_table(screening: pd.DataFrame, district_names: dict | None = None) -> pd.DataFrame:
    """The screening table for reading: headers in words with units, shares in %, statuses in words, rounded."""
    names = district_names or {}
    table = screening.copy()
    table["district"] = [names.get(str(d), str(d)) for d in table["district_id"]]
    table["status"] = table["status"].map(STATUS_LABELS).fillna(table["status"])
    for column in ("peak_flow_share", "annual_volume_share"):
        table[column] = 100.0 * pd.to_numeric(table[column], errors="coerce")
    out = table[list(DISPLAY_HEADERS)].rename(columns=DISPLAY_HEADERS)
    for column in out.columns:
        if out[column].dtype.kind == "f":
            fine = any(word in column for word in ("°C", "%", "[K]", "COP"))
            out[column] = out[column].round(2 if "[K]" in column or "COP" in column else (1 if fine else 0))
    return out


__all__ = [
    "FLOW_LIMIT_SHARE",
    "SCREENING_COLUMNS",
    "STATUSES",
    "STATUS_LABELS",
    "DISPLAY_HEADERS",
    "add_well_status",
    "screening_display_table",
    "net_injection",
    "screen_wells",
    "well_step_frame",
    "well_year_profiles",
]
