"""A starting basis for the stacked pathway LP, put together from the years (and districts) solved on their own.

The stacked LP of :mod:`engine.model.multiperiod` is the milestone years' LPs side by side, tied only by the build
columns and one coupling row per capacity column and year. HiGHS's dual simplex method from its own crash basis
needs far more than the summed effort of the years alone (the demo's districts: 2 to 15 times as long as their
four years solved one by one), because the work per iteration grows with the size of the LP as well as the
number of iterations. Starting the simplex method from an *advanced basis* of a closely related problem instead is
the usual remedy (Bixby 1992, "Implementing the simplex method: the initial basis", ORSA Journal on Computing 4(3),
267-284; Maros 2003, "Computational Techniques of the Simplex Method", Kluwer, ch. 9; both cited from memory):

* :func:`year_chain_basis`: each year's LP is solved alone with its single-year costs, each from the optimal basis
  of the year before (the years differ only in demand, prices and limits, so a few hundred iterations move one
  optimum to the next). The stacked basis takes every year's basis as it is, the build columns basic and the
  coupling rows non-basic. It is a basis: its matrix is block triangular, the years' bases on the diagonal and the
  build columns' lower-triangular coupling block (-1 on its diagonal) below.
* :func:`city_from_districts`: with a city-wide CO2 cap (or network plant limit) the city's stacked LP is the
  districts' stacked LPs side by side plus the city-wide rows. Each district's pathway is solved without the
  city-wide rows (from its own year chain), their optimal bases are placed into the city's columns and rows, and
  the city-wide rows start basic (their slacks in the basis). That basis is dual feasible for the city LP (adding
  rows with basic slacks keeps every reduced cost), so the dual simplex method only has to bring the caps in.

The warm start changes where the simplex method starts, not the LP it solves: the optimum is HiGHS's optimum of
the same stacked LP (to its tolerances). A basis HiGHS does not accept is dropped and the solve starts cold.
"""

from __future__ import annotations

import dataclasses

import highspy
import numpy as np

from engine.model.multiperiod import MultiPeriodModel, build_multiperiod

BASIC = highspy.HighsBasisStatus.kBasic
LOWER = highspy.HighsBasisStatus.kLower


def _same_shape(a, b) -> bool:
    return ({n: s for n, (_, s) in a.var_blocks.items()} == {n: s for n, (_, s) in b.var_blocks.items()}
            and {n: r.stop - r.start for n, r in a.row_blocks.items()}
            == {n: r.stop - r.start for n, r in b.row_blocks.items()})


def year_chain_basis(mp: MultiPeriodModel, time_limit_s=None, cancel=None):
    """Solve each year of ``mp`` alone, each from the year before's basis; returns ``(basis or None, seconds)``.

    None when some year has no optimum of its own (the stacked LP then has none either; it is solved cold so
    that its own status and message come back)."""
    col = np.full(mp.lp.n_cols, LOWER, dtype=object)
    row = np.full(mp.lp.n_rows, LOWER, dtype=object)
    previous, previous_lp, spent = None, None, 0.0
    for block in mp.blocks:
        lp = block.model.lp
        start = previous if previous_lp is not None and _same_shape(previous_lp, lp) else None
        solution = lp.solve(time_limit_s, cancel=cancel, basis=start, keep_basis=True)
        spent += solution.solve_s
        if solution.status != "optimal":
            return None, spent
        col[block.col0:block.col0 + lp.n_cols] = solution.basis[0]
        row[block.row0:block.row0 + lp.n_rows] = solution.basis[1]
        previous, previous_lp = solution.basis, lp
    col[list(mp.build_col.values())] = BASIC
    return (col, row), spent


def _column_pairs(city_lp, district_lps):
    """For each district LP, the city column of each of its columns: every variable block of the city is the
    districts' blocks of the same name stacked along the first axis, in district order (as
    :func:`engine.model.solve.stitched_solution` reads them). None when the sizes do not add up."""
    to_city = [np.full(lp.n_cols, -1, dtype=np.int64) for lp in district_lps]
    for name, (start, shape) in city_lp.var_blocks.items():
        at = start
        for k, lp in enumerate(district_lps):
            if name not in lp.var_blocks:
                continue  # e.g. no hot-water columns in this district
            d_start, d_shape = lp.var_blocks[name]
            size = int(np.prod(d_shape))
            if d_shape[1:] != shape[1:]:
                return None
            to_city[k][d_start:d_start + size] = np.arange(at, at + size)
            at += size
        if at != start + int(np.prod(shape)):
            return None
    if any((m < 0).any() for m in to_city):
        return None
    return to_city


def _row_signatures(lp, column_map=None):
    """(row block, first column, last column, entries) of every row of ``lp``, columns through ``column_map``:
    rows of one LP differ in it (each row is one balance or limit of its own unit, district or well and step)."""
    a = lp.matrix().tocsr()
    names = np.empty(lp.n_rows, dtype=object)
    for name, block in lp.row_blocks.items():
        names[block.start:block.stop] = name
    counts = np.diff(a.indptr)
    cols = a.indices if column_map is None else column_map[a.indices]
    first = np.full(a.shape[0], -1, dtype=np.int64)
    last = np.full(a.shape[0], -1, dtype=np.int64)
    filled = counts > 0
    if cols.size:
        first[filled] = np.minimum.reduceat(cols, a.indptr[:-1][filled])
        last[filled] = np.maximum.reduceat(cols, a.indptr[:-1][filled])
    return list(zip(names.tolist(), first.tolist(), last.tolist(), counts.tolist()))


def city_from_districts(city: MultiPeriodModel, districts: list[MultiPeriodModel], bases: list[tuple]):
    """The bases of the districts' stacked LPs placed into the city's stacked LP ``city`` (city-wide rows basic),
    or None when the blocks do not line up.

    Columns are placed by block (:func:`_column_pairs`); rows by what they contain (their first and last column
    and number of entries within their row block, the columns placed first), because some row blocks list a district's rows in groups
    (a well's own rows, then its hot-water rows) that do not stack district by district."""
    col = np.full(city.lp.n_cols, LOWER, dtype=object)
    row = np.full(city.lp.n_rows, BASIC, dtype=object)
    filled_cols = np.zeros(city.lp.n_cols, bool)
    for k, block in enumerate(city.blocks):
        lps = [d.blocks[k].model.lp for d in districts]
        to_city = _column_pairs(block.model.lp, lps)
        if to_city is None:
            return None
        city_rows = _row_signatures(block.model.lp)
        where = dict(zip(city_rows, range(len(city_rows))))
        if len(where) != len(city_rows):
            return None
        for d, (mp, lp, mapping) in enumerate(zip(districts, lps, to_city)):
            c0, r0 = mp.blocks[k].col0, mp.blocks[k].row0
            col[block.col0 + mapping] = bases[d][0][c0:c0 + lp.n_cols]
            filled_cols[block.col0 + mapping] = True
            try:
                rows = np.array([where[sig] for sig in _row_signatures(lp, mapping)], dtype=np.int64)
            except KeyError:
                return None
            row[block.row0 + rows] = bases[d][1][r0:r0 + lp.n_rows]
    for d, mp in enumerate(districts):
        for kb, c in mp.build_col.items():
            if kb not in city.build_col:
                return None
            col[city.build_col[kb]] = bases[d][0][c]
            filled_cols[city.build_col[kb]] = True
        for kb, r in mp.coupling_row.items():
            row[city.coupling_row[kb]] = bases[d][1][r]
    if not filled_cols.all() or int((col == BASIC).sum() + (row == BASIC).sum()) != city.lp.n_rows:
        return None
    return col, row


def warm_basis(mp: MultiPeriodModel, prepared_years, years, base_year, horizon_end, districts, coupled: bool,
               time_limit_s=None, cancel=None):
    """A starting basis for ``mp`` (the stacked LP of ``districts`` over ``years``) and the seconds spent on it.

    ``coupled``: the years carry a city-wide CO2 cap or network plant limit (then, for several districts, from the
    districts' own pathways, else from the year chain)."""
    districts = np.asarray(districts, dtype=int)
    if not coupled or len(districts) < 2:
        return year_chain_basis(mp, time_limit_s, cancel)
    free = [dataclasses.replace(p, settings=dataclasses.replace(p.settings, co2_cap_t_per_a=None,
                                                                 network_plant_limit_kw=None))
            for p in prepared_years]
    parts, bases, spent = [], [], 0.0
    for d in districts:
        part = build_multiperiod(free, years, base_year, horizon_end, [int(d)])
        start, seconds = year_chain_basis(part, time_limit_s, cancel)
        solution = part.lp.solve(time_limit_s, cancel=cancel, basis=start, keep_basis=True)
        spent += seconds + solution.solve_s
        if solution.status != "optimal":
            return year_chain_basis(mp, time_limit_s, cancel)
        parts.append(part)
        bases.append(solution.basis)
    basis = city_from_districts(mp, parts, bases)
    if basis is None:
        more, seconds = year_chain_basis(mp, time_limit_s, cancel)
        return more, spent + seconds
    return basis, spent


__all__ = ["city_from_districts", "warm_basis", "year_chain_basis"]
