"""A linear or integer program in arrays -> HiGHS's float answer: status, point, duals and basis.

The one door to HiGHS for every LP/MILP caller. It drives the HiGHS binding
that scipy ships (`scipy.optimize._highspy._core`) directly, loading that
extension from its file so that the `scipy.optimize` package, whose import
costs most of a second, is never imported; when the file cannot be found
(another scipy layout) the ordinary import is used instead.

Everything returned is a float guide: callers verify exactly whatever they
decide from it.
"""

from __future__ import annotations

import importlib.util
import os
import sys
from dataclasses import dataclass
from typing import Sequence

import numpy as np

_CORE_NAME = "scipy.optimize._highspy._core"
_core = None


def core():
    """The HiGHS binding module (cached); raises ImportError when scipy has none."""
    global _core
    if _core is not None:
        return _core
    got = sys.modules.get(_CORE_NAME)
    if got is None:
        got = _load_direct()
    if got is None:
        import importlib

        got = importlib.import_module(_CORE_NAME)
    _core = got
    return got


def _load_direct():
    """The extension loaded from its file without importing its parent packages, or None."""
    try:
        spec = importlib.util.find_spec("scipy")
        if spec is None or spec.origin is None:
            return None
        folder = os.path.join(os.path.dirname(spec.origin), "optimize", "_highspy")
        names = [f for f in os.listdir(folder) if f.startswith("_core.") and f.endswith((".so", ".pyd"))]
        if len(names) != 1:
            return None
        ext = importlib.util.spec_from_file_location(_CORE_NAME, os.path.join(folder, names[0]))
        if ext is None or ext.loader is None:
            return None
        mod = importlib.util.module_from_spec(ext)
        ext.loader.exec_module(mod)
    except (ImportError, OSError):
        return None
    # Registered so that a later ordinary import (scipy's own linprog) reuses it
    # instead of loading the extension a second time.
    sys.modules.setdefault(_CORE_NAME, mod)
    return sys.modules[_CORE_NAME]


@dataclass
class Answer:
    """HiGHS's answer in floats.

    `status` is "optimal", "infeasible", "unbounded", "time limit" or "error"
    (then `message` says what HiGHS said). On "optimal" (and a MILP's time
    limit with a point): `x`, `row_value`, `objective`; for an LP also
    `col_dual`, `row_dual` (HiGHS's sign convention: d objective / d bound)
    and `col_basic`, `row_basic` (booleans: in the final simplex basis).
    """

    status: str
    message: str
    x: np.ndarray | None = None
    objective: float | None = None
    row_value: np.ndarray | None = None
    col_dual: np.ndarray | None = None
    row_dual: np.ndarray | None = None
    col_basic: np.ndarray | None = None
    row_basic: np.ndarray | None = None


def _csc(a, nrow: int, ncol: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Column-wise arrays (start, index, value) from a dense array, anything with
    `tocsc()` (scipy sparse) or a triplet `(values, (rows, cols))`."""
    if hasattr(a, "tocsc"):
        m = a.tocsc()
        m.sort_indices()
        return (np.asarray(m.indptr, dtype=np.int32), np.asarray(m.indices, dtype=np.int32),
                np.asarray(m.data, dtype=np.float64))
    if isinstance(a, tuple):
        vals, (rows, cols) = a
        rows, cols = np.asarray(rows, dtype=np.int64), np.asarray(cols, dtype=np.int64)
        vals = np.asarray(vals, dtype=np.float64)
    else:
        dense = np.asarray(a, dtype=np.float64).reshape(nrow, ncol)
        rows, cols = np.nonzero(dense)
        vals = dense[rows, cols]
    order = np.lexsort((rows, cols))
    rows, cols, vals = rows[order], cols[order], vals[order]
    start = np.zeros(ncol + 1, dtype=np.int32)
    np.cumsum(np.bincount(cols, minlength=ncol), out=start[1:])
    return start, rows.astype(np.int32), vals


def _bounds(v, size: int, default: float) -> np.ndarray:
    if v is None:
        return np.full(size, default)
    out = np.array(v, dtype=np.float64).reshape(-1)
    if out.size == 1 and size != 1:
        out = np.full(size, out[0])
    return np.nan_to_num(out, nan=default, posinf=np.inf, neginf=-np.inf)


def solve(c: Sequence[float], a, row_lower=None, row_upper=None, col_lower=0.0, col_upper=None, *,
          integrality: Sequence[int] | None = None, time_limit: float | None = None,
          options: dict | None = None) -> Answer:
    """Minimise c.x subject to row_lower <= A x <= row_upper, col_lower <= x <= col_upper.

    `a` is a dense array, a scipy sparse matrix or a triplet; bounds default to
    free rows and x >= 0 (pass None for free columns); +-inf means no bound.
    `integrality` (1 = integer) makes it a MILP. HiGHS prints nothing.
    `options` are HiGHS option names and values (e.g. {"mip_rel_gap": 0.0}).
    """
    h = core()
    c = np.asarray(c, dtype=np.float64).reshape(-1)
    ncol = c.size
    nrow = len(row_lower) if row_lower is not None else len(row_upper) if row_upper is not None else 0
    start, index, value = _csc(a, nrow, ncol)
    lp = h.HighsLp()
    lp.num_col_ = ncol
    lp.num_row_ = nrow
    lp.col_cost_ = c
    lp.col_lower_ = _bounds(col_lower, ncol, -np.inf)
    lp.col_upper_ = _bounds(col_upper, ncol, np.inf)
    lp.row_lower_ = _bounds(row_lower, nrow, -np.inf)
    lp.row_upper_ = _bounds(row_upper, nrow, np.inf)
    lp.a_matrix_.format_ = h.MatrixFormat.kColwise
    lp.a_matrix_.num_col_ = ncol
    lp.a_matrix_.num_row_ = nrow
    lp.a_matrix_.start_ = start
    lp.a_matrix_.index_ = index
    lp.a_matrix_.value_ = value
    mip = integrality is not None and any(int(v) for v in integrality)
    if mip:
        lp.integrality_ = [h.HighsVarType(int(v)) for v in integrality]
    solver = h._Highs()
    solver.setOptionValue("output_flag", False)
    if time_limit is not None:
        solver.setOptionValue("time_limit", float(max(time_limit, 0.01)))
    for key, val in (options or {}).items():
        if solver.setOptionValue(key, val) == h.HighsStatus.kError:
            raise ValueError(f"HiGHS rejects option `{key}` = `{val}`")
    if solver.passModel(lp) == h.HighsStatus.kError:
        return Answer("error", "HiGHS rejected the model")
    if solver.run() == h.HighsStatus.kError:
        return Answer("error", solver.modelStatusToString(solver.getModelStatus()))
    status = solver.getModelStatus()
    msg = solver.modelStatusToString(status)
    ms = h.HighsModelStatus
    if status == ms.kInfeasible:
        return Answer("infeasible", msg)
    if status in (ms.kUnbounded, ms.kUnboundedOrInfeasible):
        # HiGHS may not tell the two apart without a second solve; callers treat both as "no optimum".
        return Answer("unbounded" if status == ms.kUnbounded else "infeasible or unbounded", msg)
    sol = solver.getSolution()
    if status == ms.kOptimal:
        name = "optimal"
    elif status == ms.kTimeLimit:
        name = "time limit"
    else:
        return Answer("error", msg)
    if not sol.value_valid:
        return Answer(name if name != "optimal" else "error", msg)
    out = Answer(name, msg, np.array(sol.col_value), solver.getInfo().objective_function_value,
                 np.array(sol.row_value))
    if not mip and sol.dual_valid:
        out.col_dual = np.array(sol.col_dual)
        out.row_dual = np.array(sol.row_dual)
        basis = solver.getBasis()
        if basis.valid:
            basic = h.HighsBasisStatus.kBasic
            out.col_basic = np.array([s == basic for s in basis.col_status], dtype=bool)
            out.row_basic = np.array([s == basic for s in basis.row_status], dtype=bool)
    return out
