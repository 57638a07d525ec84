"""Interference between neighbouring well doublets: re-solve until the source temperatures settle.

A doublet's reinjection well leaves a thermal plume down-gradient; an extraction well in a neighbour's plume draws
colder (or warmer) water, which lowers (raises) its heat pump's COP and shrinks (widens) the spread the
reinjection window leaves it. The plume in turn depends on how the doublets run, which the LP decides. So
:func:`solve_with_interference` iterates:

1. solve the scenario with source temperature shifts ``s_k`` (zero at first) in ``wells.source_temp_shift_k``,
   which :func:`engine.model.prepare.groundwater_year_c` adds to every well's groundwater temperature;
2. from the run, each doublet's annual net injection (:func:`engine.studies.permits.net_injection`);
3. the temperature change ``F(s_k)`` that all other doublets' plumes cause at each extraction well, by the
   transient line-source model (:mod:`engine.physics.plume`) after ``horizon_years`` of operation;
4. stop when ``max |F(s_k) - s_k| < tolerance_k``; else ``s_{k+1} = s_k + r (F(s_k) - s_k)`` with the
   relaxation ``r``, halved whenever the largest change grows (a sign of oscillation), and repeat.

Fixed-point iteration with under-relaxation (successive substitution; e.g. Press, Teukolsky, Vetterling and
Flannery 2007, Numerical Recipes, 3rd ed., Cambridge University Press, section 9.7 on relaxation of fixed-point
iterations; the damping of Picard iterations is textbook practice).

Choices, and why
----------------
* **Transient, not steady, plume.** The steady line source has no heat loss to the confining layers and no
  seasonal reversal; for the demo aquifer its 1 K isotherm of a 10 L/s, -4 K doublet reaches about 29 km, while
  after one year of continuous operation it reaches about 340 m. The screening horizon ``horizon_years``
  (default 1 year) is the operating time the plume has had to grow: one year matches the annual balance the LP
  plans, and is the shortest horizon a permit discussion would look at. Longer horizons give longer plumes
  (check the sensitivity); no horizon makes the screening conservative for every case.
* **Annual net injection.** Heating reinjects cold water, cooling warm; the aquifer integrates both. Each
  doublet enters as one continuous source with its mean volume flow and flow-weighted mean temperature change.
  Seasonal swings around that mean are not resolved.
* **Own recirculation excluded.** The diagonal of the interference matrix (a doublet's reinjection plume at its
  own extraction well) is left out of the shift. The line source ignores the extraction well's drawdown cone,
  which is what really governs a doublet's own thermal breakthrough, so the diagonal is no useful estimate; it
  is usually negligible anyway as reinjection wells sit down-gradient. The value is reported per well as
  ``own_recirculation_k`` for information only.
* **Held LPs.** A shift changes only some entries of each LP (COPs in the heat pumps' costs, the flow per kW
  in the well rows, output bounds where the reinjection window closes), never its layout, so the LPs of the
  first solve stay in HiGHS and each later solve hands over only the entries that differ and starts from the last
  basis (``reuse_models``; docs/model.md section 10). The LP solved is the one a solve from scratch would build.
* **Clipping.** Each neighbour's contribution is clipped to its injected temperature change and the sum to the
  range spanned by zero and the reinjection temperatures of the contributing doublets relative to the
  undisturbed aquifer (a cascade of doublets can cool water further than any single one). See
  :func:`superposed_shift_k`.

Everything here is a screening estimate from an analytic plume model in a uniform, homogeneous aquifer; it does
not replace the numerical groundwater model and the permit procedure the water authority requires.

References
----------
.. [1] Kinzelbach, W. (1987). Numerische Methoden zur Modellierung des Transports von Schadstoffen im
   Grundwasser. Oldenbourg, Munich.
.. [2] Pophillat, W., Attard, G., Bayer, P., Hecht-Mendez, J. and Blum, P. (2020). Analytical solutions for
   predicting thermal plumes of groundwater heat pump systems. Renewable Energy 147, 2696-2707.
.. [3] Press, W. H., Teukolsky, S. A., Vetterling, W. T. and Flannery, B. P. (2007). Numerical Recipes: The Art
   of Scientific Computing, 3rd ed. Cambridge University Press.
"""

from __future__ import annotations

import dataclasses
import json
import os
import time
from concurrent.futures import ProcessPoolExecutor

import numpy as np
import pandas as pd

from engine import cautions
from engine.physics import coords, plume, plume_field
from engine.studies.permits import add_well_status, net_injection
from engine.scenario.inputs import Scenario
from engine.model.results import RunResult
from engine.model.solve import HeldModels, solve_scenario
from engine.model.solvers import DIRECT
from engine.progress import Cancel, Progress, no_progress

SECONDS_PER_YEAR = 365.25 * plume.SECONDS_PER_DAY

CONTRIBUTION_FLOOR_K = 1e-3
"""A neighbour whose plume changes an extraction well's temperature by less than this counts as not reaching it
(for the clipping bound and the notes) [K]."""

MIN_RELAXATION = 1.0 / 16.0
"""Under-relaxation is halved on oscillation, but not below this factor."""

DEFAULT_PLUME_LEVELS_K = (1.0, 3.0)

# ----------------------------------------------------------------------------- physics
def superposed_shift_k(interference_matrix, injection_rate_m3_per_s, injection_temp_change_k,
                       reinjection_offset_k=None):
    """Temperature shift at each extraction well from the plumes of all OTHER doublets.

    ``shift_j = clip(sum_{i != j} sign(dT_i) min(M[i, j] Q_i |dT_i|, |dT_i|), lo_j, hi_j)``. Each term is the
    line-source plume of reinjection well ``i`` at extraction well ``j`` (linear superposition, Kinzelbach 1987),
    clipped to the injected temperature change as the near-well clipping of
    :func:`engine.physics.plume.plume_temperature_change_k` does. ``lo_j``/``hi_j`` span zero and ``offset_i + dT_i``
    of the doublets that reach ``j`` by more than :data:`CONTRIBUTION_FLOOR_K`: no mix of their waters is
    colder or warmer than the coldest or warmest water they reinject (relative to the undisturbed aquifer).
    The diagonal (own recirculation) is ignored.

    Parameters
    ----------
    interference_matrix : array_like, shape (n, n)
        ``M[i, j]`` from :func:`engine.physics.plume_field.interference_matrix_k_per_unit`. [K / (m³/s K)] Not negative.
    injection_rate_m3_per_s : array_like, shape (n,)
        Mean reinjected volume flow of each doublet. [m³/s] Not negative.
    injection_temp_change_k : array_like, shape (n,)
        Mean reinjection minus extraction temperature of each doublet. [K] Negative for net heating.
    reinjection_offset_k : array_like, shape (n,), optional
        Shift of each doublet's extracted water against the undisturbed aquifer [K], so that
        ``offset + dT`` is its reinjected water against the undisturbed aquifer. Zero by default.

    Returns
    -------
    numpy.ndarray, shape (n,)
        Shift of the water reaching each extraction well. [K]

    Raises
    ------
    ValueError
        Naming the argument with the wrong shape, a NaN, a negative rate or a negative matrix entry.

    References
    ----------
    Kinzelbach (1987); Pophillat et al. (2020), full citations in the module docstring.
    """
    matrix = np.array(interference_matrix, dtype=float)
    if matrix.ndim != 2 or matrix.shape[0] != matrix.shape[1]:
        raise ValueError(f"interference_matrix must be square; got shape {matrix.shape}")
    n = matrix.shape[0]
    arrays = {}
    offset_in = np.zeros(n) if reinjection_offset_k is None else reinjection_offset_k
    for name, value in (("injection_rate_m3_per_s", injection_rate_m3_per_s),
                        ("injection_temp_change_k", injection_temp_change_k),
                        ("reinjection_offset_k", offset_in)):
        array = np.atleast_1d(np.asarray(value, dtype=float))
        if array.shape != (n,):
            raise ValueError(f"{name} must have {n} values; got shape {array.shape}")
        if not np.all(np.isfinite(array)):
            raise ValueError(f"{name} must be finite; got a NaN or infinite value")
        arrays[name] = array
    rate, delta, offset = arrays.values()
    if np.any(rate < 0.0):
        raise ValueError(f"injection_rate_m3_per_s must not be negative; got {float(rate.min()):g}")
    np.fill_diagonal(matrix, 0.0)
    if np.any(np.isnan(matrix)) or np.any(matrix < 0.0):
        raise ValueError("interference_matrix must hold non-negative numbers (NaN or negative found)")
    strength = rate * np.abs(delta)
    with np.errstate(invalid="ignore"):
        magnitude = np.where(strength[:, None] > 0.0, matrix * strength[:, None], 0.0)
    magnitude = np.minimum(magnitude, np.abs(delta)[:, None])
    terms = np.sign(delta)[:, None] * magnitude
    reaches = magnitude > CONTRIBUTION_FLOOR_K
    absolute = (offset + delta)[:, None]
    low = np.minimum(0.0, np.where(reaches, absolute, 0.0).min(axis=0, initial=0.0))
    high = np.maximum(0.0, np.where(reaches, absolute, 0.0).max(axis=0, initial=0.0))
    return np.clip(terms.sum(axis=0), low, high)


# ----------------------------------------------------------------------------- pieces of the loop
def _check_arguments(max_iterations, tolerance_k, relaxation, horizon_years):
    try:
        iterations = int(max_iterations)
    except (TypeError, ValueError):
        raise ValueError(f"max_iterations must be a whole number; got {max_iterations!r}") from None
    if iterations < 1 or iterations != max_iterations:
        raise ValueError(f"max_iterations must be a whole number of at least 1; got {max_iterations!r}")
    values = {}
    for name, value in (("tolerance_k", tolerance_k), ("relaxation", relaxation), ("horizon_years", horizon_years)):
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise ValueError(f"{name} must be a number; got {value!r}") from None
        if not np.isfinite(number) or number <= 0.0:
            raise ValueError(f"{name} must be a positive number; got {value!r}")
        values[name] = number
    if values["relaxation"] > 1.0:
        raise ValueError(f"relaxation must lie in (0, 1]; got {relaxation!r}")
    return iterations, values["tolerance_k"], values["relaxation"], values["horizon_years"]


def interference_matrix_for(scenario: Scenario, horizon_years: float = 1.0) -> np.ndarray:
    """Unit plume response of every reinjection well at every extraction well of ``scenario`` [s/m³].

    The transient line source after ``horizon_years`` of operation, with the scenario's ``[aquifer]``
    (:func:`engine.physics.plume_field.interference_matrix_k_per_unit`); rows are reinjection wells, columns extraction wells,
    both in the order of ``scenario.wells``.
    """
    wells = scenario.wells
    params = plume.plume_parameters_from_aquifer(scenario.aquifer)
    return plume_field.interference_matrix_k_per_unit(
        wells["reinjection_lon"].to_numpy(float),
        wells["reinjection_lat"].to_numpy(float),
        wells["lon"].to_numpy(float),
        wells["lat"].to_numpy(float),
        time_s=float(horizon_years) * SECONDS_PER_YEAR,
        **params,
    )


def _injection_arrays(result: RunResult, well_ids) -> tuple[np.ndarray, np.ndarray]:
    table = net_injection(result).set_index("well_id").reindex(list(well_ids))
    rate = table["mean_flow_m3_per_s"].fillna(0.0).to_numpy(float)
    delta = table["mean_injection_temp_change_k"].fillna(0.0).to_numpy(float)
    return rate, delta


def _with_shift(scenario: Scenario, shift_k: np.ndarray) -> Scenario:
    wells = scenario.wells.copy()
    wells["source_temp_shift_k"] = np.asarray(shift_k, dtype=float)
    return dataclasses.replace(scenario, wells=wells)


def _isotherm_job(job: tuple) -> list:
    level, lon, lat, rate, delta, params, time_s, ray_count = job
    return plume_field.isotherm_polygon_lonlat(level, lon, lat, rate, delta, time_s=time_s, ray_count=ray_count, **params)


def plume_outlines(scenario: Scenario, result: RunResult, levels_k=DEFAULT_PLUME_LEVELS_K, horizon_years=1.0,
                   ray_count: int = 49, workers: int | None = None) -> pd.DataFrame:
    """Isotherms of every doublet's reinjection plume after ``horizon_years``, from a run's net injection.

    Each outline takes a fraction of a second (:func:`engine.physics.plume_field.isotherm_polygon_lonlat` bisects along every
    ray), so more than a handful are drawn in parallel processes (``workers``, default: the CPU count, at most 4).

    Returns
    -------
    pandas.DataFrame
        One row per reinjection well and level that the plume reaches: ``well_id``, ``level_k`` [K] (magnitude),
        ``sign`` (-1 cold plume, +1 warm), ``coordinates_json`` (a closed ring ``[[lon, lat], ...]`` [° WGS 84]).
    """
    wells = scenario.wells
    params = plume.plume_parameters_from_aquifer(scenario.aquifer)
    time_s = float(horizon_years) * SECONDS_PER_YEAR
    rate, delta = _injection_arrays(result, wells["well_id"])
    keys, jobs = [], []
    for k, row in enumerate(wells.itertuples(index=False)):
        for level in levels_k:
            if rate[k] <= 0.0 or abs(delta[k]) <= float(level):
                continue
            keys.append((row.well_id, float(level), int(np.sign(delta[k]))))
            jobs.append((float(level), float(row.reinjection_lon), float(row.reinjection_lat), float(rate[k]),
                         float(delta[k]), params, time_s, int(ray_count)))
    if workers is None:
        workers = min(4, os.cpu_count() or 1)
    if workers > 1 and len(jobs) > 4:
        with ProcessPoolExecutor(max_workers=workers) as pool:
            rings = list(pool.map(_isotherm_job, jobs, chunksize=max(1, len(jobs) // (2 * workers))))
    else:
        rings = [_isotherm_job(job) for job in jobs]
    rows = [
        {"well_id": well_id, "level_k": level, "sign": sign,
         "coordinates_json": json.dumps([[round(a, 7), round(b, 7)] for a, b in ring])}
        for (well_id, level, sign), ring in zip(keys, rings) if ring
    ]
    return pd.DataFrame(rows, columns=["well_id", "level_k", "sign", "coordinates_json"])


def plume_polygons(result: RunResult) -> list[dict]:
    """The ``plumes`` table of a run as ``[{well_id, level_k, sign, coordinates: [(lon, lat), ...]}, ...]``
    (the form :func:`engine.outputs.maps.district_map` takes as ``plume_polygons``)."""
    table = result.tables.get("plumes")
    if table is None or table.empty:
        return []
    return [
        {"well_id": str(r.well_id), "level_k": float(r.level_k), "sign": int(r.sign),
         "coordinates": [tuple(p) for p in json.loads(r.coordinates_json)]}
        for r in table.itertuples(index=False)
    ]


def _notes(scenario: Scenario, matrix: np.ndarray, rate: np.ndarray, delta: np.ndarray, shift: np.ndarray,
           horizon_years: float) -> list[str]:
    """Validity notes of the plume model for this aquifer and the doublet pairs that interfere."""
    aquifer = scenario.aquifer
    wells = scenario.wells
    time_s = horizon_years * SECONDS_PER_YEAR
    notes = plume.validity_notes(
        aquifer.darcy_velocity_m_per_d, effective_porosity=aquifer.effective_porosity, time_s=time_s
    )
    notes.append(
        f"Horizon {horizon_years:g} year(s) of continuous operation at each doublet's annual net injection; a "
        "longer horizon gives longer plumes. A doublet's own recirculation is not included in its shift."
    )
    ids = wells["well_id"].tolist()
    strength = rate * np.abs(delta)
    reach = np.where(strength[:, None] > 0, np.minimum(matrix * strength[:, None], np.abs(delta)[:, None]), 0.0)
    np.fill_diagonal(reach, 0.0)
    east, north = coords.lonlat_to_local_m(
        np.concatenate([wells["reinjection_lon"].to_numpy(float), wells["lon"].to_numpy(float)]),
        np.concatenate([wells["reinjection_lat"].to_numpy(float), wells["lat"].to_numpy(float)]),
        float(wells["lon"].mean()), float(wells["lat"].mean()),
    )
    n = len(ids)
    for i, j in zip(*np.nonzero(reach > CONTRIBUTION_FLOOR_K)):
        distance = float(np.hypot(east[n + j] - east[i], north[n + j] - north[i]))
        pair = plume.validity_notes(
            aquifer.darcy_velocity_m_per_d,
            injection_rate_m3_per_s=rate[i],
            saturated_thickness_m=aquifer.saturated_thickness_m,
            distance_m=distance,
            time_s=time_s,
            longitudinal_dispersivity_m=aquifer.longitudinal_dispersivity_m,
            aquifer_heat_capacity_j_per_m3_k=aquifer.aquifer_heat_capacity_mj_per_m3_k * 1e6,
            water_heat_capacity_j_per_m3_k=aquifer.water_heat_capacity_mj_per_m3_k * 1e6,
        )
        for note in pair:
            if note.code in plume.POINT_NOTES:  # the aquifer-wide notes are already in the list
                notes.append(plume.ValidityNote(note.code, f"{ids[i]} -> {ids[j]}: {note}"))
    with np.errstate(invalid="ignore"):
        clipped = (strength[:, None] > 0) & (matrix * strength[:, None] >= np.abs(delta)[:, None])
    np.fill_diagonal(clipped, False)
    for i, j in zip(*np.nonzero(clipped)):
        notes.append(
            f"{ids[i]} -> {ids[j]}: the line source predicts more than the injected temperature change at "
            f"{ids[j]}'s extraction well, so its contribution is clipped to {delta[i]:+.2f} K: the well draws "
            f"essentially {ids[i]}'s reinjected water. So close to a reinjection well the line source is only a "
            "rough estimate; the spacing of these doublets needs a numerical model."
        )
    return notes


def _wells_detail(scenario, rate, delta, shift, matrix) -> list[dict]:
    own = np.where(rate * np.abs(delta) > 0, np.diag(matrix) * rate * np.abs(delta), 0.0)
    own = np.sign(delta) * np.minimum(own, np.abs(delta))
    return [
        {
            "well_id": wid,
            "mean_flow_m3_per_s": float(rate[k]),
            "mean_injection_temp_change_k": float(delta[k]),
            "source_temp_shift_k": float(shift[k]),
            "own_recirculation_k": float(own[k]),
        }
        for k, wid in enumerate(scenario.wells["well_id"])
    ]


def _baseline(result: RunResult) -> dict:
    wells = result.tables.get("wells", pd.DataFrame())
    keep = [c for c in ("well_id", "heat_mwh_per_a", "cooling_mwh_per_a", "extracted_mwh_per_a",
                        "rejected_mwh_per_a", "heat_pump_kw", "min_reinjection_temp_c") if c in wells.columns]
    supply = result.tables.get("supply")
    cop = {}
    if supply is not None and not supply.empty:
        hp = supply[supply["kind"] == "groundwater_heat_pump"].groupby("well_id")[
            ["heat_mwh_per_a", "electricity_mwh_per_a"]].sum()
        cop = {w: (float(r.heat_mwh_per_a / r.electricity_mwh_per_a) if r.electricity_mwh_per_a > 1e-9 else None)
               for w, r in hp.iterrows()}
    records = []
    for record in wells[keep].to_dict(orient="records"):
        record = {k: (float(v) if isinstance(v, (int, float, np.floating)) else v) for k, v in record.items()}
        record["seasonal_cop"] = cop.get(record["well_id"])
        records.append(record)
    return {
        "total_cost_eur_per_a": result.total_cost_eur_per_a,
        "co2_t_per_a": result.co2_t_per_a,
        "unserved_heat_mwh_per_a": result.unserved_heat_mwh_per_a,
        "wells": records,
    }


# ----------------------------------------------------------------------------- the loop
def solve_with_interference(
    scenario: Scenario,
    cost_case: str | None = None,
    objective: str | None = None,
    co2_cap_t_per_a: float | None = None,
    typical_days: int | None = None,
    progress: Progress | None = None,
    time_limit_s: float | None = None,
    max_iterations: int = 10,
    tolerance_k: float = 0.05,
    relaxation: float = 1.0,
    horizon_years: float = 1.0,
    plume_levels_k=DEFAULT_PLUME_LEVELS_K,
    cancel: Cancel | None = None,
    workers: int | None = None,
    solver: str = DIRECT,
    reuse_models: bool = True,
) -> RunResult:
    """Solve ``scenario`` again and again with the source temperature shifts neighbouring plumes cause.

    See the module docstring for the method and its choices. The first solve is the run without interference.

    Parameters
    ----------
    scenario : Scenario
        Validated inputs; any ``wells.source_temp_shift_k`` column is replaced by the computed shifts.
    cost_case, objective, co2_cap_t_per_a, typical_days, time_limit_s, solver
        As in :func:`engine.model.solve.solve_scenario` (the time limit applies to each solve).
    progress : callable, optional
        ``progress(share, text)`` with share in [0, 1]; called once or twice per iteration.
    max_iterations : int, default 10
        Largest number of solves.
    tolerance_k : float, default 0.05
        Converged when the largest change of any well's shift between iterations is below this. [K]
    relaxation : float, default 1.0
        Initial relaxation factor in (0, 1]; halved (down to 1/16) whenever the largest change grows.
    horizon_years : float, default 1.0
        Operating time of the transient plume. [a] The steady plume overstates reach (no vertical heat loss,
        no seasonal reversal), so a finite horizon is used; one year matches the annual plan.
    plume_levels_k : sequence of float, default (1.0, 3.0)
        Isotherms drawn into ``tables["plumes"]`` [K]; empty to skip (they take a fraction of a second each).
    cancel : callable, optional
        Returns True to stop after the current solve (the last solved run is returned, not converged).
    workers : int, optional
        Processes for the district solves and the isotherms; None lets :func:`engine.model.solve.solve_scenario`
        choose. Pass 1 inside a threaded server (a dashboard), where forking a process pool is unsafe. With
        ``reuse_models`` the LPs are solved in this process (they are held here) and ``workers`` applies to the
        isotherms only.
    reuse_models : bool, default True
        Keep the LPs in HiGHS from one iteration to the next (:class:`engine.model.solve.HeldModels` with
        ``coefficients=True``): a new source temperature changes only some entries of each LP (the COPs in the
        costs of the heat pumps' output and hot water, the water flow per kW in the well flow and volume rows,
        the hours a well cannot serve in the output bounds); HiGHS is handed those and solves from the last
        basis. The LP solved is the one a solve from scratch would build; only the start differs. Used with the
        cost objective and HiGHS directly; other runs solve from scratch.

    Returns
    -------
    RunResult
        The last solve. ``extras["interference"]`` holds ``converged``, ``iterations`` (one dict per solve:
        iteration, max_shift_k = largest ``|F(s) - s|`` [K], largest_source_shift_k = largest ``|s|`` the solve
        used [K], relaxation, status, total_cost_eur_per_a, co2_t_per_a, unserved_heat_mwh_per_a, seconds),
        ``horizon_years``, ``tolerance_k``, ``max_iterations``, ``notes`` (validity notes), ``wells`` (net
        injection, shift and own recirculation per doublet), ``baseline`` (figures of the first solve,
        without interference), ``source_shifts_k`` (per solve, the shift of every well it used [K], in the order
        of ``scenario.wells``) and ``held_models`` (with ``reuse_models``: per solve the LPs changed in place,
        those solved from scratch and the entries handed to HiGHS; empty otherwise). ``tables["wells"]`` gains ``source_temp_shift_k`` and ``status``;
        ``tables["plumes"]`` holds the isotherms. When a solve fails its result is returned with the
        iterations so far.

    Raises
    ------
    ValueError
        Naming the argument that is out of range.
    """
    max_iterations, tolerance_k, relaxation, horizon_years = _check_arguments(
        max_iterations, tolerance_k, relaxation, horizon_years
    )
    levels = [float(level) for level in plume_levels_k]
    if any(not np.isfinite(level) or level <= 0 for level in levels):
        raise ValueError(f"plume_levels_k must hold positive numbers [K]; got {plume_levels_k!r}")
    report = progress or no_progress
    started = time.perf_counter()
    ids = scenario.wells["well_id"].tolist()
    n = len(ids)
    matrix = interference_matrix_for(scenario, horizon_years) if n else np.zeros((0, 0))
    shift = np.zeros(n)
    iterations: list[dict] = []
    previous_change = np.inf
    converged = False
    baseline = None
    result = None
    rate = delta = np.zeros(n)
    held = None
    if reuse_models and solver == DIRECT and (objective or scenario.settings.objective) == "cost":
        held = HeldModels(coefficients=True)
    held_log: list[dict] = []
    shifts_used: list[list[float]] = []
    for k in range(max_iterations):
        report(min(0.95, k / max_iterations), f"Interference iteration {k + 1}: solving with the current source "
               f"temperatures (largest shift {float(np.abs(shift).max(initial=0.0)):.2f} K)")
        solve_started = time.perf_counter()
        before = (held.reused, held.fresh, dict(held.handed)) if held is not None else None
        result = solve_scenario(
            _with_shift(scenario, shift), cost_case=cost_case, objective=objective,
            co2_cap_t_per_a=co2_cap_t_per_a, typical_days=typical_days, time_limit_s=time_limit_s, cancel=cancel,
            workers=1 if held is not None else workers, solver=solver, held=held,
        )
        if held is not None:
            held_log.append({"iteration": k + 1, "in_place": held.reused - before[0],
                             "from_scratch": held.fresh - before[1],
                             **{name: count - before[2].get(name, 0) for name, count in held.handed.items()}})
        shifts_used.append([float(v) for v in shift])
        record = {
            "iteration": k + 1,
            "max_shift_k": float("nan"),
            "largest_source_shift_k": float(np.abs(shift).max(initial=0.0)),
            "relaxation": relaxation,
            "status": result.status,
            "total_cost_eur_per_a": result.total_cost_eur_per_a,
            "co2_t_per_a": result.co2_t_per_a,
            "unserved_heat_mwh_per_a": result.unserved_heat_mwh_per_a,
            "seconds": 0.0,
        }
        if not result.solved:
            record["seconds"] = round(time.perf_counter() - solve_started, 3)
            iterations.append(record)
            report(1.0, f"Interference iteration {k + 1}: the solve failed ({result.status})")
            break
        if baseline is None:
            baseline = _baseline(result)
        rate, delta = _injection_arrays(result, ids)
        target = superposed_shift_k(matrix, rate, delta, shift) if n else np.zeros(0)
        change = target - shift
        largest = float(np.abs(change).max(initial=0.0))
        record["max_shift_k"] = largest
        record["seconds"] = round(time.perf_counter() - solve_started, 3)
        iterations.append(record)
        report(min(0.97, (k + 1) / max_iterations),
               f"Interference iteration {k + 1}: largest change of a source temperature {largest:.3f} K")
        if largest < tolerance_k:
            converged = True
            break
        if cancel is not None and cancel():
            break
        if largest > previous_change and relaxation > MIN_RELAXATION:
            relaxation = max(MIN_RELAXATION, relaxation / 2.0)
        previous_change = largest
        if k + 1 < max_iterations:
            shift = shift + relaxation * change

    extras = {
        "converged": converged,
        "iterations": iterations,
        "horizon_years": horizon_years,
        "tolerance_k": tolerance_k,
        "max_iterations": max_iterations,
        "method": "fixed-point iteration with under-relaxation; transient line-source plumes of each doublet's "
                  "annual net injection; own recirculation excluded",
        "notes": _notes(scenario, matrix, rate, delta, shift, horizon_years) if n else [plume.ValidityNote(plume.NoteCode.CAUTION, cautions.PLUME)],
        "wells": _wells_detail(scenario, rate, delta, shift, matrix) if n else [],
        "baseline": baseline,
        "held_models": held_log,
        "source_shifts_k": shifts_used,
        "seconds": 0.0,
    }
    if result is not None and result.solved:
        shifted = _with_shift(scenario, shift)
        add_well_status(result, shifted)
        if levels and n:
            report(0.98, "Drawing plume isotherms")
            result.tables["plumes"] = plume_outlines(shifted, result, levels, horizon_years, workers=workers)
        else:
            result.tables["plumes"] = pd.DataFrame(columns=["well_id", "level_k", "sign", "coordinates_json"])
    extras["seconds"] = round(time.perf_counter() - started, 3)
    result.extras["interference"] = extras
    report(1.0, "Interference check converged" if converged else "Interference check stopped without converging")
    return result


def interference_comparison(result: RunResult) -> pd.DataFrame:
    """Per well, the run without interference (first solve) beside the converged run.

    Returns
    -------
    pandas.DataFrame
        ``well_id``, ``source_temp_shift_k`` [K], ``heat_mwh_per_a_without`` / ``heat_mwh_per_a_with`` [MWh/a],
        ``seasonal_cop_without`` / ``seasonal_cop_with`` [-], ``min_reinjection_temp_c_without`` / ``_with``
        [°C]. Empty when the run has no interference record.
    """
    info = result.extras.get("interference") or {}
    base = (info.get("baseline") or {}).get("wells") or []
    if not base or "wells" not in result.tables:
        return pd.DataFrame()
    before = pd.DataFrame(base).set_index("well_id")
    after = result.tables["wells"].set_index("well_id")
    supply = result.tables.get("supply")
    cop_after = pd.Series(dtype=float)
    if supply is not None and not supply.empty:
        hp = supply[supply["kind"] == "groundwater_heat_pump"].groupby("well_id")[
            ["heat_mwh_per_a", "electricity_mwh_per_a"]].sum()
        cop_after = (hp["heat_mwh_per_a"] / hp["electricity_mwh_per_a"].where(hp["electricity_mwh_per_a"] > 1e-9))
    frame = pd.DataFrame(index=after.index)
    def number(table, column):
        if column not in table.columns:
            return pd.Series(np.nan, index=frame.index)
        return pd.to_numeric(table[column], errors="coerce").reindex(frame.index)

    frame["source_temp_shift_k"] = number(after, "source_temp_shift_k").fillna(0.0)
    frame["heat_mwh_per_a_without"] = number(before, "heat_mwh_per_a")
    frame["heat_mwh_per_a_with"] = number(after, "heat_mwh_per_a")
    frame["seasonal_cop_without"] = number(before, "seasonal_cop")
    frame["seasonal_cop_with"] = pd.to_numeric(cop_after, errors="coerce").reindex(frame.index)
    frame["min_reinjection_temp_c_without"] = number(before, "min_reinjection_temp_c")
    frame["min_reinjection_temp_c_with"] = number(after, "min_reinjection_temp_c")
    return frame.reset_index()


__all__ = [
    "DEFAULT_PLUME_LEVELS_K",
    "interference_comparison",
    "interference_matrix_for",
    "plume_outlines",
    "plume_polygons",
    "solve_with_interference",
    "superposed_shift_k",
]
