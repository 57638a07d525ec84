"""A linear program assembled from numpy arrays in bulk.

The district model has hundreds of thousands of variables that come in regular blocks (one per district, technology
and time step). Building them one pulp expression at a time costs more than solving them, and pulp's HiGHS
interface then hands them to the solver one row at a time. :class:`LinearProgram` therefore keeps variables as
index blocks and constraints as coordinate triplets, hands HiGHS the whole sparse matrix in one call, and reads the
primal and dual solution back as arrays. :meth:`LinearProgram.to_pulp` turns the same program into a
``pulp.LpProblem``, so that any solver pulp drives can solve it (:mod:`engine.model.solvers`), and
:meth:`LinearProgram.write` writes it as an LP or MPS file with named columns and rows, for inspection in any solver.
"""

from __future__ import annotations

import os
import sys
import threading
import time
from dataclasses import dataclass, field

import highspy
import numpy as np
import pulp
import scipy.sparse as sp

INF = float("inf")


@dataclass
class RowBlock:
    name: str
    start: int
    stop: int


@dataclass
class LpSolution:
    status: str
    """'optimal', 'infeasible', 'unbounded', 'time_limit', 'interrupted' or 'error'."""
    message: str
    objective: float = float("nan")
    x: np.ndarray | None = None
    row_dual: np.ndarray | None = None
    solve_s: float = 0.0
    info: dict = field(default_factory=dict)
    """Figures a staged solve adds (e.g. the CO2 optimum and the abatement cost of its last tonnes)."""
    basis: tuple | None = None
    """With ``keep_basis``: the optimal basis as (column statuses, row statuses), object arrays of
    ``highspy.HighsBasisStatus``, to start a related LP from (:meth:`LinearProgram.solve`'s ``basis``)."""


class LinearProgram:
    """Minimise c @ x subject to row_lower <= A @ x <= row_upper and col_lower <= x <= col_upper."""

    def __init__(self) -> None:
        self.n_cols = 0
        self.n_rows = 0
        self._col_lower: list[np.ndarray] = []
        self._col_upper: list[np.ndarray] = []
        self._cost = []  # (cols, coefs)
        self._triplets = []  # (rows, cols, coefs)
        self._row_lower: list[np.ndarray] = []
        self._row_upper: list[np.ndarray] = []
        self.var_blocks: dict[str, tuple[int, tuple[int, ...]]] = {}
        self.row_blocks: dict[str, RowBlock] = {}
        self._matrix = None
        self.flow_pairs: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
        """(columns x, columns w, rows r) a lean hand-off may change variables on (:func:`lean_program`)."""

    # ------------------------------------------------------------------ variables
    def add_variables(self, name: str, shape, lower=0.0, upper=INF) -> np.ndarray:
        """Add a block of variables; returns their column indices with the given shape."""
        if name in self.var_blocks:
            raise ValueError(f"variable block '{name}' exists already")
        shape = tuple(int(s) for s in np.atleast_1d(shape))
        size = int(np.prod(shape)) if shape else 1
        start = self.n_cols
        self.n_cols += size
        self._col_lower.append(np.broadcast_to(np.asarray(lower, float), shape).ravel().copy())
        self._col_upper.append(np.broadcast_to(np.asarray(upper, float), shape).ravel().copy())
        self.var_blocks[name] = (start, shape)
        self._matrix = None
        return np.arange(start, start + size).reshape(shape)

    def add_cost(self, cols, coefs) -> None:
        """Add ``coefs * x[cols]`` to the objective (arrays broadcast together)."""
        cols, coefs = np.broadcast_arrays(np.asarray(cols), np.asarray(coefs, float))
        self._cost.append((cols.ravel(), coefs.ravel()))

    def set_objective(self, cost: np.ndarray) -> None:
        """Replace the whole objective by the vector ``cost`` (one entry per column)."""
        cost = np.asarray(cost, float)
        if cost.shape != (self.n_cols,):
            raise ValueError(f"cost must have {self.n_cols} entries, got {cost.shape}")
        self._cost = [(np.arange(self.n_cols), cost.copy())]

    # ------------------------------------------------------------------ constraints
    def add_rows(self, name: str, terms, lower=-INF, upper=INF) -> np.ndarray:
        """Add a block of rows ``lower <= sum_k coef_k * x[col_k] <= upper``.

        ``terms`` is a list of ``(cols, coefs)`` pairs; every pair is broadcast to the block's row shape, so that
        row ``r`` receives ``coefs[r] * x[cols[r]]`` from each pair. Returns the row indices.
        """
        if name in self.row_blocks:
            raise ValueError(f"row block '{name}' exists already")
        arrays = [np.asarray(c) for c, _ in terms] + [np.asarray(v, float) for _, v in terms]
        shape = np.broadcast_shapes(*(a.shape for a in arrays), np.shape(lower), np.shape(upper))
        size = int(np.prod(shape)) if shape else 1
        rows = np.arange(self.n_rows, self.n_rows + size).reshape(shape)
        for cols, coefs in terms:
            c = np.broadcast_to(np.asarray(cols), shape).ravel()
            v = np.broadcast_to(np.asarray(coefs, float), shape).ravel()
            keep = v != 0.0
            self._triplets.append((rows.ravel()[keep], c[keep], v[keep]))
        self._row_lower.append(np.broadcast_to(np.asarray(lower, float), shape).ravel().copy())
        self._row_upper.append(np.broadcast_to(np.asarray(upper, float), shape).ravel().copy())
        self.row_blocks[name] = RowBlock(name, self.n_rows, self.n_rows + size)
        self.n_rows += size
        self._matrix = None
        return rows

    def add_rows_coo(self, name: str, n_rows: int, rows, cols, coefs, lower=-INF, upper=INF) -> np.ndarray:
        """Add ``n_rows`` rows given as coordinate triplets (``rows`` counted from 0 within the block)."""
        if name in self.row_blocks:
            raise ValueError(f"row block '{name}' exists already")
        rows = np.asarray(rows, np.int64).ravel()
        cols = np.asarray(cols, np.int64).ravel()
        coefs = np.asarray(coefs, float).ravel()
        if not (rows.shape == cols.shape == coefs.shape):
            raise ValueError("rows, cols and coefs must have the same length")
        keep = coefs != 0.0
        self._triplets.append((rows[keep] + self.n_rows, cols[keep], coefs[keep]))
        self._row_lower.append(np.broadcast_to(np.asarray(lower, float), (n_rows,)).copy())
        self._row_upper.append(np.broadcast_to(np.asarray(upper, float), (n_rows,)).copy())
        self.row_blocks[name] = RowBlock(name, self.n_rows, self.n_rows + n_rows)
        index = np.arange(self.n_rows, self.n_rows + n_rows)
        self.n_rows += n_rows
        self._matrix = None
        return index

    def add_flow_pairs(self, x_cols, w_cols, rows) -> None:
        """Declare that row ``rows[k]`` holds only ``x_cols[k]`` and ``w_cols[k]`` and that ``x_cols[k] >= 0`` follows
        from the other rows (given the bounds of ``w_cols[k]``): :func:`lean_program` may then hand HiGHS the
        row's activity as a column in place of ``x_cols[k]`` (the row becomes that column's bounds)."""
        x_cols, w_cols, rows = (np.asarray(a, np.int64).ravel() for a in (x_cols, w_cols, rows))
        if not (x_cols.shape == w_cols.shape == rows.shape):
            raise ValueError("x_cols, w_cols and rows must have the same length")
        self.flow_pairs.append((x_cols, w_cols, rows))

    def set_row_upper(self, name: str, upper) -> None:
        """Change the upper bounds of the row block ``name`` (e.g. to relax a stage's limit and solve again)."""
        position = list(self.row_blocks).index(name)
        block = self.row_blocks[name]
        self._row_upper[position] = np.broadcast_to(np.asarray(upper, float), (block.stop - block.start,)).copy()

    # ------------------------------------------------------------------ assembled arrays
    def _cat(self, parts, dtype=float) -> np.ndarray:
        return np.concatenate(parts).astype(dtype) if parts else np.zeros(0, dtype)

    @property
    def cost(self) -> np.ndarray:
        c = np.zeros(self.n_cols)
        for cols, coefs in self._cost:
            np.add.at(c, cols, coefs)
        return c

    @property
    def col_lower(self) -> np.ndarray:
        return self._cat(self._col_lower)

    @property
    def col_upper(self) -> np.ndarray:
        return self._cat(self._col_upper)

    @property
    def row_lower(self) -> np.ndarray:
        return self._cat(self._row_lower)

    @property
    def row_upper(self) -> np.ndarray:
        return self._cat(self._row_upper)

    def matrix(self) -> sp.csc_matrix:
        """The constraint matrix (duplicates summed), as CSC."""
        if self._matrix is None:
            rows = self._cat([t[0] for t in self._triplets], np.int64)
            cols = self._cat([t[1] for t in self._triplets], np.int64)
            vals = self._cat([t[2] for t in self._triplets])
            self._matrix = sp.csc_matrix((vals, (rows, cols)), shape=(self.n_rows, self.n_cols))
            self._matrix.sum_duplicates()
        return self._matrix

    @property
    def n_nonzeros(self) -> int:
        return int(self.matrix().nnz)

    # ------------------------------------------------------------------ solving
    def to_highs(self, time_limit_s: float | None = None, threads: int | None = None, names: bool = False):
        """A silent ``highspy.Highs`` holding this program (with :meth:`column_names` and :meth:`row_names` if
        ``names``)."""
        h = new_highs()
        if time_limit_s:
            h.setOptionValue("time_limit", float(time_limit_s))
        if threads:
            _scheduler_for(int(threads))
            h.setOptionValue("threads", int(threads))
        lp = highspy.HighsLp()
        lp.num_col_ = self.n_cols
        lp.num_row_ = self.n_rows
        lp.col_cost_ = self.cost
        lp.col_lower_ = self.col_lower
        lp.col_upper_ = np.where(np.isinf(self.col_upper), highspy.kHighsInf, self.col_upper)
        lp.row_lower_ = np.where(np.isinf(self.row_lower), -highspy.kHighsInf, self.row_lower)
        lp.row_upper_ = np.where(np.isinf(self.row_upper), highspy.kHighsInf, self.row_upper)
        a = self.matrix()
        lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
        lp.a_matrix_.start_ = a.indptr.astype(np.int32)
        lp.a_matrix_.index_ = a.indices.astype(np.int32)
        lp.a_matrix_.value_ = a.data
        if names:
            lp.col_names_ = self.column_names()
            lp.row_names_ = self.row_names()
        h.passModel(lp)
        return h

    def column_names(self) -> list[str]:
        """One name per column: the block's name and the column's index within the block (``output_kw_3_17``)."""
        names = [""] * self.n_cols
        for block, (start, shape) in self.var_blocks.items():
            for k, index in enumerate(np.ndindex(*shape) if shape else [()]):
                names[start + k] = "_".join([block, *map(str, index)])
        return names

    def row_names(self) -> list[str]:
        """One name per row: the block's name and the row's position within the block (``heat_balance_40``)."""
        names = [f"row_{i}" for i in range(self.n_rows)]
        for block in self.row_blocks.values():
            for k, i in enumerate(range(block.start, block.stop)):
                names[i] = f"{block.name}_{k}"
        return names

    def write(self, path) -> None:
        """Write the program to ``path``; HiGHS picks the format from the suffix (``.lp`` or ``.mps``)."""
        h = self.to_highs(names=True)
        status = h.writeModel(str(path))
        if status != highspy.HighsStatus.kOk:
            raise OSError(f"HiGHS could not write the model to {path}")

    def solve(self, time_limit_s: float | None = None, threads: int | None = None, cancel=None, basis=None,
              keep_basis: bool = False, fixed_start=None) -> LpSolution:
        """Solve with HiGHS. ``cancel`` is an optional callable; when it returns True the solve is interrupted.

        ``basis`` (column statuses, row statuses; see :attr:`LpSolution.basis`) starts the simplex method there
        instead of from HiGHS's own crash basis (a basis HiGHS rejects is ignored: the solve then starts cold);
        ``keep_basis`` returns the optimal basis with the solution. ``fixed_start`` ``(columns, values)`` starts
        from the optimum with those columns fixed at those values (:meth:`HighsSession.solve_from_fixed`; the
        answer is this program's optimum all the same)."""
        session = HighsSession(self, time_limit_s, threads, cancel, lean=basis is None and not keep_basis)
        if basis is not None:
            session.set_basis(basis)
        if fixed_start is not None and basis is None:
            solution = session.solve_from_fixed(*fixed_start, time_limit_s=time_limit_s)
        else:
            solution = session.solve()
        if keep_basis and solution.status == "optimal":
            solution.basis = session.basis()
        return solution

    # ------------------------------------------------------------------ pulp
    def to_pulp(self, name: str = "heatmosaic", with_row_names: bool = False):
        """The same program as a ``pulp.LpProblem``: one LpVariable per column, one constraint per row (a ranged
        row becomes two inequalities). Returns ``(problem, variables)``, and with ``with_row_names`` also, for
        every row, the names of the pulp constraints written for it."""
        prob = pulp.LpProblem(name, pulp.LpMinimize)
        lower, upper = self.col_lower, self.col_upper
        variables = [
            pulp.LpVariable(f"x{j}", None if np.isinf(lower[j]) else lower[j], None if np.isinf(upper[j]) else upper[j])
            for j in range(self.n_cols)
        ]
        cost = self.cost
        prob.setObjective(pulp.LpAffineExpression([(variables[j], cost[j]) for j in np.flatnonzero(cost)]))
        a = self.matrix().tocsr()
        rl, ru = self.row_lower, self.row_upper
        row_names: list[list[str]] = []
        for i in range(self.n_rows):
            lo, hi = a.indptr[i], a.indptr[i + 1]
            expr = pulp.LpAffineExpression([(variables[j], v) for j, v in zip(a.indices[lo:hi], a.data[lo:hi])])
            written = []
            if rl[i] == ru[i]:
                prob += pulp.LpConstraint(expr, pulp.LpConstraintEQ, f"r{i}", rl[i])
                row_names.append([f"r{i}"])
                continue
            if np.isfinite(rl[i]):
                prob += pulp.LpConstraint(expr, pulp.LpConstraintGE, f"r{i}_lo", rl[i])
                written.append(f"r{i}_lo")
            if np.isfinite(ru[i]):
                prob += pulp.LpConstraint(expr, pulp.LpConstraintLE, f"r{i}_up", ru[i])
                written.append(f"r{i}_up")
            row_names.append(written)
        return (prob, variables, row_names) if with_row_names else (prob, variables)


def _highs_bounds(lower: np.ndarray, upper: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Bounds as HiGHS takes them: infinite ones as its own infinity."""
    return np.where(np.isinf(lower), -highspy.kHighsInf, lower), np.where(np.isinf(upper), highspy.kHighsInf, upper)


class HighsSession:
    """One :class:`LinearProgram` held in a ``highspy.Highs`` over a series of solves.

    Between solves the program may gain row blocks (:meth:`LinearProgram.add_rows_coo`), a new objective
    (:meth:`LinearProgram.set_objective`) or new row bounds (:meth:`LinearProgram.set_row_upper`); :meth:`solve`
    hands HiGHS only what changed (``addRows``, ``changeColsCost``, ``changeRowsBounds``) and runs it from the
    basis of the last solve. Rows added after the first solve enter the basis as basic, so the last optimum stays
    a starting point (primal simplex after a change of objective, dual simplex after a tightened bound).
    """

    def __init__(self, lp: LinearProgram, time_limit_s: float | None = None, threads: int | None = None,
                 cancel=None, lean: bool = False):
        self.lp = lp
        self.lean = lean_program(lp) if lean else None
        """With ``lean``: the trimmed program HiGHS holds (:func:`lean_program`). Between its solves only the costs
        may change (handed over through the map, ``to_original.T @ cost``); its bases are the trimmed program's,
        for this session or another lean session of the same program only."""
        self._lean_cost = self.lean.cost.copy() if lean else None
        self.highs = self.lean.to_highs(time_limit_s, threads) if lean else lp.to_highs(time_limit_s, threads)
        self._n_rows = lp.n_rows
        self._n_triplets = len(lp._triplets)
        self._cost = lp.cost
        self._row_lower = lp.row_lower
        self._row_upper = lp.row_upper
        self._cancel = cancel
        self._cancel_checked_before = False
        if cancel is not None:
            def _callback(callback_type, message, data_out, data_in, user_data):
                if cancel():
                    data_in.user_interrupt = True

            try:
                self.highs.setCallback(_callback, None)
                self.highs.startCallback(highspy.cb.HighsCallbackType.kCallbackSimplexInterrupt)
                self.highs.startCallback(highspy.cb.HighsCallbackType.kCallbackIpmInterrupt)
            except Exception:  # older highspy without callbacks: cancel is then checked only before solving
                self._cancel_checked_before = True

    def _sync(self) -> None:
        lp, h = self.lp, self.highs
        if lp.n_rows > self._n_rows:
            new = lp._triplets[self._n_triplets:]
            rows = np.concatenate([t[0] for t in new]).astype(np.int64) - self._n_rows if new else np.zeros(0, np.int64)
            cols = np.concatenate([t[1] for t in new]).astype(np.int64) if new else np.zeros(0, np.int64)
            vals = np.concatenate([t[2] for t in new]).astype(float) if new else np.zeros(0)
            count = lp.n_rows - self._n_rows
            block = sp.csr_matrix((vals, (rows, cols)), shape=(count, lp.n_cols))
            block.sum_duplicates()
            lower = lp.row_lower[self._n_rows:]
            upper = lp.row_upper[self._n_rows:]
            h.addRows(count, np.where(np.isinf(lower), -highspy.kHighsInf, lower),
                      np.where(np.isinf(upper), highspy.kHighsInf, upper), block.nnz,
                      block.indptr[:-1].astype(np.int32), block.indices.astype(np.int32), block.data)
            self._row_lower = np.r_[self._row_lower, lower]
            self._row_upper = np.r_[self._row_upper, upper]
            self._n_rows = lp.n_rows
            self._n_triplets = len(lp._triplets)
        cost = lp.cost
        changed = np.flatnonzero(cost != self._cost).astype(np.int32)
        if len(changed):
            h.changeColsCost(len(changed), changed, cost[changed])
            self._cost = cost
        lower, upper = lp.row_lower, lp.row_upper
        changed = np.flatnonzero((lower != self._row_lower) | (upper != self._row_upper)).astype(np.int32)
        if len(changed):
            h.changeRowsBounds(len(changed), changed, np.where(np.isinf(lower[changed]), -highspy.kHighsInf,
                                                                lower[changed]),
                               np.where(np.isinf(upper[changed]), highspy.kHighsInf, upper[changed]))
            self._row_lower, self._row_upper = lower, upper

    def replace(self, lp: LinearProgram, new_entries: bool = True) -> dict | None:
        """Make HiGHS hold ``lp`` in place of the program it holds, handing it only the entries that differ.

        ``lp`` must have the held program's layout: the same numbers of columns and rows and the same variable
        and row blocks (names, positions, shapes); otherwise nothing is changed and None is returned (the caller
        builds a new session). Matrix entries whose value differs go to HiGHS one by one (``changeCoeff``);
        an entry the new matrix lacks is set to zero, which HiGHS drops from its matrix, and an entry only the new
        matrix has is inserted, so that HiGHS then holds exactly ``lp`` (with ``new_entries=False`` a changed
        sparsity pattern returns None instead). Costs, column bounds and row bounds that differ go in one call
        each (``changeColsCost``, ``changeColsBounds``, ``changeRowsBounds``). The basis of the last solve stays;
        :meth:`solve` starts from it. Returns the counts handed over: ``coefficients``, ``new_entries`` (inserted
        or dropped), ``costs``, ``column_bounds``, ``row_bounds``.
        """
        old = self.lp
        if self._n_rows != old.n_rows or self._n_triplets != len(old._triplets):
            self._sync()  # rows added to the held program and not handed over yet
        if ((lp.n_cols, lp.n_rows) != (old.n_cols, old.n_rows) or lp.var_blocks != old.var_blocks
                or [(k, b.start, b.stop) for k, b in lp.row_blocks.items()]
                != [(k, b.start, b.stop) for k, b in old.row_blocks.items()]):
            return None
        held, new = old.matrix(), lp.matrix()
        if np.array_equal(held.indptr, new.indptr) and np.array_equal(held.indices, new.indices):
            at = np.flatnonzero(held.data != new.data)
            rows = new.indices[at]
            cols = np.repeat(np.arange(lp.n_cols), np.diff(new.indptr))[at]
            values = new.data[at]
            inserted = 0
        else:
            if not new_entries:
                return None
            step = (new - held).tocoo()  # exact: a - b == 0 only where a == b
            step.eliminate_zeros()
            rows, cols = step.row.astype(np.int64), step.col.astype(np.int64)
            values = np.asarray(new.tocsr()[rows, cols]).ravel() if len(rows) else np.zeros(0)
            inserted = int(np.sum(np.asarray(held.tocsr()[rows, cols]).ravel() == 0.0) + np.sum(values == 0.0))
        h = self.highs
        for r, c, v in zip(rows.tolist(), cols.tolist(), values.tolist()):
            h.changeCoeff(r, c, v)
        cost = lp.cost
        changed_cost = np.flatnonzero(cost != self._cost).astype(np.int32)
        if len(changed_cost):
            h.changeColsCost(len(changed_cost), changed_cost, cost[changed_cost])
        lower, upper = lp.col_lower, lp.col_upper
        changed_cols = np.flatnonzero((lower != old.col_lower) | (upper != old.col_upper)).astype(np.int32)
        if len(changed_cols):
            h.changeColsBounds(len(changed_cols), changed_cols, *_highs_bounds(lower[changed_cols], upper[changed_cols]))
        row_lower, row_upper = lp.row_lower, lp.row_upper
        changed_rows = np.flatnonzero((row_lower != self._row_lower) | (row_upper != self._row_upper)).astype(np.int32)
        if len(changed_rows):
            h.changeRowsBounds(len(changed_rows), changed_rows,
                               *_highs_bounds(row_lower[changed_rows], row_upper[changed_rows]))
        self.lp = lp
        self._n_rows = lp.n_rows
        self._n_triplets = len(lp._triplets)
        self._cost, self._row_lower, self._row_upper = cost, row_lower, row_upper
        return {"coefficients": int(len(rows)), "new_entries": inserted, "costs": int(len(changed_cost)),
                "column_bounds": int(len(changed_cols)), "row_bounds": int(len(changed_rows))}

    def set_basis(self, basis) -> bool:
        """Start the next solve from ``basis`` (column statuses, row statuses); False (and a cold start) when HiGHS
        refuses it."""
        start = highspy.HighsBasis()
        start.col_status = list(basis[0])
        start.row_status = list(basis[1])
        start.valid = True
        if self.highs.setBasis(start) != highspy.HighsStatus.kOk:
            self.highs.clearSolver()
            return False
        return True

    def solve_from_fixed(self, cols, values, time_limit_s: float | None = None) -> LpSolution:
        """The program's optimum, reached from the optimum with columns ``cols`` fixed at ``values``.

        Two runs of HiGHS on the held program (docs/model.md section 9, "The plan start"): first with the bounds of
        ``cols`` set to ``values`` (clipped into their bounds; presolve and dual simplex as usual), then, from that
        optimum's basis, with their own bounds back, by the primal simplex method: the first optimum is a vertex of
        the program, so the second run starts primal feasible and ends at the program's optimum. Where the first
        run ends without an optimum (the fixed values leave no feasible point), the program is solved from
        scratch. ``solve_s`` is the time of both runs; ``info["fixed_start"]`` the runs' seconds and simplex
        iterations and whether the start was used. The program must not have changed since it was handed over.
        """
        h = self.highs
        strategy = h.getOptionValue("simplex_strategy")
        strategy = int(strategy[1] if isinstance(strategy, tuple) else strategy)  # highspy versions differ
        cols = np.asarray(cols, np.int64).ravel()
        values = np.asarray(values, float).ravel()
        if self.lean is not None:
            cols, values = self.lean.held_columns(cols, values)
        lower, upper = (np.asarray(v, float)[cols] for v in
                        ((self.lean.col_lower, self.lean.col_upper) if self.lean is not None
                         else (self.lp.col_lower, self.lp.col_upper)))
        fixed = np.clip(values, lower, upper)
        cols32 = cols.astype(np.int32)
        h.changeColsBounds(len(cols32), cols32, fixed, fixed)
        first = self.solve()
        first_iterations = int(h.getInfo().simplex_iteration_count)
        h.changeColsBounds(len(cols32), cols32, *_highs_bounds(lower, upper))
        info = {"used": first.status == "optimal", "fixed_columns": int(len(cols)),
                "first_s": round(first.solve_s, 4), "first_iterations": first_iterations}
        if first.status in ("interrupted", "time_limit"):
            first.info["fixed_start"] = info
            return first
        if first.status == "optimal":
            h.setOptionValue("simplex_strategy", 4)  # primal: the fixed optimum is a feasible vertex
        else:
            h.clearSolver()
        if time_limit_s:
            h.setOptionValue("time_limit", max(float(time_limit_s) - first.solve_s, 1.0))
        second = self.solve()
        h.setOptionValue("simplex_strategy", strategy)
        if time_limit_s:
            h.setOptionValue("time_limit", float(time_limit_s))
        info["second_iterations"] = int(h.getInfo().simplex_iteration_count)
        info["second_s"] = round(second.solve_s, 4)
        second.solve_s += first.solve_s
        second.info["fixed_start"] = info
        return second

    def basis(self) -> tuple[np.ndarray, np.ndarray]:
        """The basis HiGHS holds now (column statuses, row statuses; of the trimmed program in a lean session)."""
        found = self.highs.getBasis()
        return np.array(found.col_status, dtype=object), np.array(found.row_status, dtype=object)

    def solve(self) -> LpSolution:
        """Hand HiGHS what changed in the program since the last solve and solve it from the last basis."""
        if self._cancel_checked_before and self._cancel():
            return LpSolution("interrupted", "The solve was cancelled.")
        if self.lean is not None:
            lp = self.lp
            if (lp.n_rows != self._n_rows or len(lp._triplets) != self._n_triplets
                    or np.any(lp.row_lower != self._row_lower) or np.any(lp.row_upper != self._row_upper)):
                raise ValueError("a lean session takes new costs only, not rows or row bounds")
            cost = lp.cost
            if np.any(cost != self._cost):
                lean_cost = self.lean.to_original.T @ cost
                changed = np.flatnonzero(lean_cost != self._lean_cost).astype(np.int32)
                if len(changed):
                    self.highs.changeColsCost(len(changed), changed, lean_cost[changed])
                self._cost, self._lean_cost = cost, lean_cost
        else:
            self._sync()
        started = time.perf_counter()
        self.highs.run()
        elapsed = time.perf_counter() - started
        solution = read_highs_solution(self.highs, elapsed)
        if self.lean is not None and solution.status == "optimal":
            solution = self.lean.original_solution(self.highs, solution)
        return solution


@dataclass
class LeanProgram:
    """A :class:`LinearProgram` trimmed for HiGHS and the map back: x = ``to_original`` @ y.

    See :func:`lean_program`; ``cols`` and ``rows`` name the program's columns and rows the trimmed one keeps (in
    its order), ``flow_rows`` the rows turned into bounds of the trimmed columns ``flow_cols``.
    """

    source: LinearProgram
    cost: np.ndarray
    matrix: sp.csc_matrix
    col_lower: np.ndarray
    col_upper: np.ndarray
    row_lower: np.ndarray
    row_upper: np.ndarray
    rows: np.ndarray
    to_original: sp.csr_matrix
    flow_rows: np.ndarray
    flow_cols: np.ndarray

    @property
    def n_cols(self) -> int:
        return self.matrix.shape[1]

    @property
    def n_rows(self) -> int:
        return self.matrix.shape[0]

    def held_columns(self, cols: np.ndarray, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The trimmed program's columns that are the program's columns ``cols`` as they are (x = y), and the
        entries of ``values`` for them; a column dropped (fixed at zero) or changed by a flow pair is left out."""
        t = self.to_original.tocsr()
        entries_of_row = np.diff(t.indptr)
        entries_of_column = np.diff(t.tocsc().indptr)
        keep = np.zeros(len(cols), bool)
        held = np.full(len(cols), -1, np.int64)
        for k, c in enumerate(cols):
            if entries_of_row[c] == 1:
                j = t.indices[t.indptr[c]]
                if t.data[t.indptr[c]] == 1.0 and entries_of_column[j] == 1:
                    keep[k], held[k] = True, j
        return held[keep], values[keep]

    def to_highs(self, time_limit_s: float | None = None, threads: int | None = None):
        h = new_highs()
        if time_limit_s:
            h.setOptionValue("time_limit", float(time_limit_s))
        if threads:
            _scheduler_for(int(threads))
            h.setOptionValue("threads", int(threads))
        pass_arrays(h, self.cost, self.matrix, self.col_lower, self.col_upper, self.row_lower, self.row_upper)
        return h

    def original_solution(self, h, solution: LpSolution) -> LpSolution:
        """``solution`` of the trimmed program as one of the program: its columns, and a dual for every row (a
        row turned into a column's bounds gets that column's reduced cost, a dropped empty row 0)."""
        y = np.asarray(solution.x, float)
        dual = np.zeros(self.source.n_rows)
        dual[self.rows] = solution.row_dual
        if len(self.flow_rows):
            dual[self.flow_rows] = np.asarray(h.getSolution().col_dual)[self.flow_cols]
        solution.x = self.to_original @ y
        solution.row_dual = dual
        return solution


def pass_arrays(h, cost, a, col_lower, col_upper, row_lower, row_upper) -> None:
    """Hand ``h`` the program min cost @ x, row_lower <= a @ x <= row_upper, col_lower <= x <= col_upper (CSC)."""
    lp = highspy.HighsLp()
    lp.num_col_ = a.shape[1]
    lp.num_row_ = a.shape[0]
    lp.col_cost_ = np.asarray(cost, float)
    lp.col_lower_ = np.where(np.isinf(col_lower), -highspy.kHighsInf, col_lower)
    lp.col_upper_ = np.where(np.isinf(col_upper), highspy.kHighsInf, col_upper)
    lp.row_lower_ = np.where(np.isinf(row_lower), -highspy.kHighsInf, row_lower)
    lp.row_upper_ = np.where(np.isinf(row_upper), highspy.kHighsInf, row_upper)
    lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
    lp.a_matrix_.start_ = a.indptr.astype(np.int32)
    lp.a_matrix_.index_ = a.indices.astype(np.int32)
    lp.a_matrix_.value_ = a.data
    h.passModel(lp)


def lean_program(lp: LinearProgram) -> LeanProgram:
    """The program without what carries nothing, and with its declared flow rows as column bounds.

    Three exact steps (docs/model.md section 9, "What the hand-off to HiGHS trims"):

    1. Rows with neither bound (no limit on anything) are dropped.
    2. A pair declared with :meth:`LinearProgram.add_flow_pairs` (row r holds only c_x x + c_w w, c_x > 0; x has the
       bounds [0, inf) and x >= 0 follows from other rows) changes variables: the column F = c_x x + c_w w takes
       x's place, x = (F - c_w w) / c_x in every other row and in the cost, and row r becomes the bounds of F.
       The map between (x, w) and (F, w) is one to one, so both programs have the same feasible points and
       optimum. A pair whose row holds anything else, or whose x has other bounds, is left as it is.
    3. Columns fixed at zero (lower = upper = 0) are dropped (their value is 0), then rows left without an entry
       whose bounds admit 0.
    """
    a = lp.matrix().tocsc()
    n, m = lp.n_cols, lp.n_rows
    cost, cl, cu, rl, ru = lp.cost, lp.col_lower, lp.col_upper, lp.row_lower, lp.row_upper
    keep_row = ~(np.isneginf(rl) & np.isposinf(ru))
    # ---- flow pairs
    if lp.flow_pairs:
        xs, ws, rs = (np.concatenate([p[k] for p in lp.flow_pairs]) for k in range(3))
    else:
        xs = ws = rs = np.zeros(0, np.int64)
    flow_rows, flow_cols = np.zeros(0, np.int64), np.zeros(0, np.int64)
    t_rows, t_cols, t_vals = [np.arange(n)], [np.arange(n)], [np.ones(n)]
    if len(xs):
        ar = a.tocsr()
        counts = np.diff(ar.indptr)[rs]
        cx = np.asarray(ar[rs, xs]).ravel()
        cw = np.asarray(ar[rs, ws]).ravel()
        ok = (keep_row[rs] & (counts == np.where(cw != 0, 2, 1)) & (cx > 0) & (cl[xs] == 0.0) & np.isposinf(cu[xs])
              & (xs != ws))
        ok &= np.bincount(xs[ok], minlength=n)[xs] == 1  # one pair per column
        ok &= np.bincount(rs[ok], minlength=m)[rs] == 1  # one pair per row
        ok &= ~np.isin(xs, ws[ok])  # a replaced column is nobody's partner
        xs, ws, rs, cx, cw = xs[ok], ws[ok], rs[ok], cx[ok], cw[ok]
        t_vals[0][xs] = 1.0 / cx
        t_rows.append(xs)
        t_cols.append(ws)
        t_vals.append(-cw / cx)
        cl, cu = cl.copy(), cu.copy()
        cl[xs], cu[xs] = rl[rs], ru[rs]
        keep_row[rs] = False
        flow_rows = rs
    t = sp.csr_matrix((np.concatenate(t_vals), (np.concatenate(t_rows), np.concatenate(t_cols))), shape=(n, n))
    if len(xs):
        a = (a @ t).tocsc()
        cost = t.T @ cost
    # ---- columns fixed at zero, then rows without entries
    keep_col = ~((cl == 0.0) & (cu == 0.0))
    a = a[:, keep_col]
    t = t[:, keep_col].tocsr()
    empty = np.diff(a.tocsr().indptr) == 0
    keep_row &= ~(empty & (rl <= 0.0) & (ru >= 0.0))
    rows = np.flatnonzero(keep_row)
    a = a[rows].tocsc()
    a.sort_indices()
    if len(flow_rows):
        position = np.cumsum(keep_col) - 1
        flow_cols = position[xs]
    return LeanProgram(lp, cost[keep_col], a, cl[keep_col], cu[keep_col], rl[rows], ru[rows], rows, t, flow_rows,
                       flow_cols)


_SCHEDULER_THREADS: int | None = None
_SCHEDULER_LOCK = threading.Lock()


def _scheduler_for(threads: int) -> None:
    """HiGHS keeps one task scheduler per process, started with the thread count of the first solve; a solve that
    asks for another count then fails with status "Not Set". Restart the scheduler when the count asked for
    differs from the one it runs with (blocking: it waits for running tasks)."""
    global _SCHEDULER_THREADS
    with _SCHEDULER_LOCK:
        if _SCHEDULER_THREADS != threads:
            highspy.Highs.resetGlobalScheduler(True)
            _SCHEDULER_THREADS = threads


_BANNER_SILENCED = False


def new_highs():
    """A silent ``highspy.Highs`` instance.

    HiGHS writes a banner to the C-level standard output when the first instance of a process is made, before any
    option can switch it off; the command line's output (and a Streamlit log) should not carry it.
    """
    global _BANNER_SILENCED
    if _BANNER_SILENCED:
        h = highspy.Highs()
    else:
        sys.stdout.flush()
        saved = os.dup(1)
        devnull = os.open(os.devnull, os.O_WRONLY)
        try:
            os.dup2(devnull, 1)
            h = highspy.Highs()
        finally:
            os.dup2(saved, 1)
            os.close(saved)
            os.close(devnull)
        _BANNER_SILENCED = True
    h.setOptionValue("output_flag", False)
    return h


def read_highs_solution(h, solve_s: float) -> LpSolution:
    status = h.getModelStatus()
    ms = highspy.HighsModelStatus
    text = h.modelStatusToString(status)
    if status == ms.kOptimal:
        sol = h.getSolution()
        return LpSolution(
            "optimal",
            "Optimal solution found.",
            objective=float(h.getInfo().objective_function_value),
            x=np.asarray(sol.col_value),
            row_dual=np.asarray(sol.row_dual),
            solve_s=solve_s,
        )
    mapping = {
        ms.kInfeasible: "infeasible",
        ms.kUnbounded: "unbounded",
        ms.kUnboundedOrInfeasible: "infeasible",
        ms.kTimeLimit: "time_limit",
        ms.kIterationLimit: "time_limit",
        ms.kInterrupt: "interrupted",
    }
    return LpSolution(mapping.get(status, "error"), f"HiGHS: {text}", solve_s=solve_s)
