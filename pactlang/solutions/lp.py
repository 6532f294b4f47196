"""A linear program over payouts plus one row per coalition -> its exact, proved optimum.

The programs of this package share one shape: a few explicit rows over the
variables z (the payout x is z[0:n]) and the *coalition rows*
`v(S) - x(S) <= t` for every coalition S of a family (all proper non-empty
coalitions, minus a `skip` set), where t is one variable (`level`) or 0.

`solve` works in three steps:
1. Row generation with HiGHS (scipy `linprog`, dual simplex, silent): solve
   with a small working set of coalitions, find the most violated coalitions
   over all masks with array operations, add them, repeat.
2. Exact recovery: choose as many linearly independent tight rows as there
   are variables (largest dual first; unit rows complete a basis that HiGHS
   left short), solve that square system and its transpose in Fractions. A
   wrong-signed multiplier or a working row violated exactly sends the
   working rows to the pure-Fraction simplex instead.
3. Proof: the multipliers satisfy stationarity and sign exactly, and the
   primal point satisfies every explicit row and every coalition row of the
   family exactly (all 2**n masks). Together they prove optimality; anything
   else raises `SolverError`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from typing import Sequence

import numpy as np
from scipy.optimize import linprog
from scipy.sparse import csr_matrix

from ..game import Game
from . import exact
from .errors import SolverError
from .excess import ExcessTable, game_bounds
from .masks import ChunkedSums, member_matrix

ADD_PER_ROUND = 300
MAX_ROUNDS = 400


class Infeasible(SolverError):
    """The program has no feasible point: HiGHS says so and the exact simplex,
    run on the working rows alone, finds no optimum either."""


@dataclass(frozen=True)
class Row:
    """An explicit row: coeffs . z <= rhs (or == rhs when `eq`)."""

    coeffs: tuple[Fraction, ...]
    rhs: Fraction
    eq: bool = False


@dataclass
class Program:
    """Minimise objective . z over explicit rows and the coalition rows of `game`.

    Coalition row S reads v(S) - x(S) <= z[level] (or <= 0 when level is
    None), x = z[0:n]. `skip[mask]` True leaves mask out of the family.
    """

    game: Game
    nvar: int
    objective: list[Fraction]
    rows: list[Row]
    level: int | None
    skip: np.ndarray | None = None
    start: list[int] = field(default_factory=list)


@dataclass(frozen=True)
class Optimum:
    """A proved optimum: z, its value, and the multipliers proving it.

    `row_duals[k]` belongs to `program.rows[k]`; `coalition_duals` maps a mask
    to its multiplier (only masks with a nonzero one). Stationarity:
    objective + sum dual * (row coefficients) = 0, duals of <= rows >= 0, and
    every row with a nonzero dual is tight.
    """

    z: list[Fraction]
    value: Fraction
    row_duals: list[Fraction]
    coalition_duals: dict[int, Fraction]
    working: list[int]


def coalition_coeffs(program: Program, mask: int) -> tuple[Fraction, ...]:
    """Coefficients of coalition row S written as -x(S) - t <= -v(S)."""
    out = [Fraction(0)] * program.nvar
    for i in range(program.game.n):
        if mask >> i & 1:
            out[i] = Fraction(-1)
    if program.level is not None:
        out[program.level] = Fraction(-1)
    return tuple(out)


class _Solver:
    def __init__(self, program: Program):
        self.p = program
        self.game = program.game
        self.n = program.game.n
        self.floats = np.asarray(self.game.floats, dtype=np.float64)
        _, fmax = game_bounds(self.game)
        self.scale = 1.0 + fmax
        self.tol = 1e-9 * self.scale
        size = 1 << self.n
        self.in_work = np.zeros(size, dtype=bool)
        self.work: list[int] = []
        self._worths: dict[int, Fraction] = {}
        self.add(program.start)

    def add(self, masks) -> int:
        full, skip = self.game.full, self.p.skip
        added = 0
        for m in masks:
            m = int(m)
            if 0 < m < full and not self.in_work[m] and (skip is None or not skip[m]):
                self.in_work[m] = True
                self.work.append(m)
                added += 1
        return added

    # -- step 1: floats -----------------------------------------------------
    def float_solve(self):
        p, n = self.p, self.n
        ub = [r for r in p.rows if not r.eq]
        eq = [r for r in p.rows if r.eq]
        fam = member_matrix(self.work, n)
        a_fam = np.zeros((len(self.work), p.nvar))
        a_fam[:, :n] = -fam
        if p.level is not None:
            a_fam[:, p.level] = -1.0
        a_ub = np.vstack([np.array([[float(c) for c in r.coeffs] for r in ub]).reshape(len(ub), p.nvar), a_fam])
        b_ub = np.concatenate([[float(r.rhs) for r in ub], -self.floats[self.work]])
        kw = {}
        if eq:
            kw["A_eq"] = csr_matrix(np.array([[float(c) for c in r.coeffs] for r in eq]))
            kw["b_eq"] = np.array([float(r.rhs) for r in eq])
        # Every variable and right-hand side is an amount of money, so scaling all
        # right-hand sides by a power of two scales the solution alike and keeps
        # HiGHS away from its "infinite" threshold (1e20) on huge worths.
        unit = 2.0 ** -np.round(np.log2(self.scale))
        if eq:
            kw["b_eq"] = kw["b_eq"] * unit
        res = linprog([float(c) for c in p.objective], A_ub=csr_matrix(a_ub), b_ub=b_ub * unit,
                      bounds=(None, None), method="highs-ds", **kw)
        if res.status == 2:
            return None
        if res.status != 0:
            raise SolverError(f"HiGHS stopped: {res.message}")
        duals_ub = -np.asarray(res.ineqlin.marginals)
        duals_eq = -np.asarray(res.eqlin.marginals) if eq else np.zeros(0)
        slack = np.asarray(res.ineqlin.residual) / unit
        return np.asarray(res.x) / unit, duals_ub, duals_eq, slack

    def separate(self, xf: np.ndarray, level: float) -> list[int]:
        """The most violated coalitions outside the working set (floats guide only)."""
        full, skip = self.game.full, self.p.skip
        best_m, best_v = [], []
        for start, xs in ChunkedSums(list(xf[: self.n])).chunks():
            stop = start + len(xs)
            viol = self.floats[start:stop] - xs - level
            out = self.in_work[start:stop].copy()
            if skip is not None:
                out |= skip[start:stop]
            if start == 0:
                out[0] = True
            if stop == full + 1:
                out[-1] = True
            viol[out] = -np.inf
            idx = np.flatnonzero(viol > self.tol)
            if len(idx) > ADD_PER_ROUND:
                idx = idx[np.argpartition(viol[idx], -ADD_PER_ROUND)[-ADD_PER_ROUND:]]
            best_m.append(idx + start)
            best_v.append(viol[idx])
        masks, vals = np.concatenate(best_m), np.concatenate(best_v)
        if len(masks) > ADD_PER_ROUND:
            masks = masks[np.argpartition(vals, -ADD_PER_ROUND)[-ADD_PER_ROUND:]]
        return masks.tolist()

    # -- step 2: exact recovery --------------------------------------------
    def worth(self, mask: int) -> Fraction:
        got = self._worths.get(mask)
        if got is None:
            got = self._worths[mask] = Fraction(self.game.exact(mask))
        return got

    def all_rows(self) -> list[Row]:
        """Explicit rows first, then the working coalition rows (in `self.work` order)."""
        fam = [Row(coalition_coeffs(self.p, m), -self.worth(m)) for m in self.work]
        return list(self.p.rows) + fam

    def recover(self, zf, duals_ub, duals_eq, slack) -> tuple[list[Fraction], list[Fraction]] | None:
        """Exact (z, multipliers for explicit + working rows) from the float basis, or None.

        HiGHS may leave a free variable nonbasic at zero when the optimum is
        not unique, so the tight rows can fall short of a basis; unit rows
        z_j = value (zero first) complete it, and their multipliers must come
        out exactly zero, so they take no part in the proof.
        """
        p = self.p
        nrows = len(p.rows)
        ub_idx = [k for k, r in enumerate(p.rows) if not r.eq]
        eq_idx = [k for k, r in enumerate(p.rows) if r.eq]
        n_ub = len(ub_idx)
        act = 1e-7 * self.scale * max(1.0, float(np.abs(zf).max()))
        cand = []
        for pos, s in enumerate(slack):
            if s <= act:
                k = ub_idx[pos] if pos < n_ub else nrows + (pos - n_ub)
                cand.append((-duals_ub[pos], s, k))
        cand.sort()
        order = eq_idx + [k for _, _, k in cand]
        units = sorted(range(p.nvar), key=lambda j: (zf[j] != 0.0, abs(zf[j])))
        dense = np.vstack([self._dense_rows(order), np.eye(p.nvar)[units]])
        chosen = _independent(dense, p.nvar, must=len(eq_idx))
        if chosen is None:
            return None
        rows, where = [], []
        for c in chosen:
            if c < len(order):
                rows += self._rows_by_index([order[c]])
                where.append(order[c])
            else:
                j = units[c - len(order)]
                val = Fraction(float(zf[j])).limit_denominator(10**6)
                rows.append(Row(tuple(Fraction(int(i == j)) for i in range(p.nvar)), val, eq=True))
                where.append(None)
        z = exact.solve([r.coeffs for r in rows], [r.rhs for r in rows])
        if z is None:
            return None
        mult = self._dual_from_basis(rows, where)
        if mult is None:
            # Degenerate optimum: HiGHS's multipliers may sit on rows that are
            # dependent with the equalities, so the basis above cannot carry them.
            # Find multipliers on those rows directly (exact phase-1 simplex).
            mult = self._dual_on(z, eq_idx + [k for d, _, k in cand if d < 0])
            if mult is None:
                return None
        return z, mult

    def _dual_from_basis(self, rows: list[Row], where: list[int | None]) -> list[Fraction] | None:
        """The multipliers of a square basis (transposed system), if their signs are right
        and the unit rows get none."""
        p = self.p
        transposed = [[r.coeffs[i] for r in rows] for i in range(p.nvar)]
        lam = exact.solve(transposed, [-c for c in p.objective])
        if lam is None:
            return None
        mult = [Fraction(0)] * (len(p.rows) + len(self.work))
        for k, l, r in zip(where, lam, rows):
            if (k is None and l != 0) or (k is not None and l < 0 and not r.eq):
                return None
            if k is not None:
                mult[k] = l
        return mult

    def _dual_on(self, z, support: list[int]) -> list[Fraction] | None:
        """Multipliers >= 0 (free on equalities) on the rows `support` that are tight at z
        and satisfy stationarity exactly, or None."""
        p = self.p
        rows = self._rows_by_index(support)
        keep = [(k, r) for k, r in zip(support, rows) if _dot(r.coeffs, z) == r.rhs]
        cols, owner = [], []
        for k, r in keep:
            cols.append(r.coeffs)
            owner.append((k, 1))
            if r.eq:
                cols.append(tuple(-c for c in r.coeffs))
                owner.append((k, -1))
        if not cols:
            return None
        a = [[c[i] for c in cols] for i in range(p.nvar)]
        res = exact.simplex(a, [-c for c in p.objective], [0] * len(cols))
        if res.status != "optimal":
            return None
        mult = [Fraction(0)] * (len(p.rows) + len(self.work))
        for (k, sign), val in zip(owner, res.x):
            mult[k] += sign * val
        return mult

    def _dense_rows(self, order: list[int]) -> np.ndarray:
        p, n = self.p, self.n
        out = np.zeros((len(order), p.nvar))
        for r, k in enumerate(order):
            if k < len(p.rows):
                out[r] = [float(c) for c in p.rows[k].coeffs]
            else:
                m = self.work[k - len(p.rows)]
                out[r, :n] = -member_matrix([m], n)[0]
                if p.level is not None:
                    out[r, p.level] = -1.0
        return out

    def _rows_by_index(self, idx: list[int]) -> list[Row]:
        p = self.p
        out = []
        for k in idx:
            if k < len(p.rows):
                out.append(p.rows[k])
            else:
                m = self.work[k - len(p.rows)]
                out.append(Row(coalition_coeffs(p, m), -self.worth(m)))
        return out

    def exact_fallback(self, zf, duals_ub, slack, rows_all: list[Row]) -> tuple[list[Fraction], list[Fraction]]:
        """Pure-Fraction simplex on the explicit rows plus a few working rows, grown as needed.

        It starts from the rows with a positive float dual, the singletons
        (which keep the small program bounded) and the tightest few others,
        and adds the working rows the exact optimum violates, a few at a time,
        until none is; the answer is then optimal over the explicit and all
        working rows.
        """
        p = self.p
        nexp = len(p.rows)
        n_ub = sum(1 for r in p.rows if not r.eq)
        pick = {nexp + (pos - n_ub) for pos, d in enumerate(duals_ub) if pos >= n_ub and d > 0}
        pick |= {nexp + k for k, m in enumerate(self.work) if m & (m - 1) == 0}
        loose = 1e-5 * self.scale * max(1.0, float(np.abs(zf).max()))
        near = sorted((s, pos) for pos, s in enumerate(slack) if pos >= n_ub and s <= loose)
        pick |= {nexp + (pos - n_ub) for _, pos in near[: 4 * p.nvar]}
        for _ in range(len(self.work) + 2):
            idx = list(range(nexp)) + sorted(pick)
            got = exact.exact_lp(p.objective, [(rows_all[k].coeffs, rows_all[k].rhs, rows_all[k].eq) for k in idx])
            if got is None:
                raise SolverError("the exact simplex found no optimum of the working program")
            z, lam = got
            gaps = [(_dot(rows_all[k].coeffs, z) - rows_all[k].rhs, k) for k in range(nexp, len(rows_all))
                    if k not in pick]
            bad = sorted((g, k) for g, k in gaps if g > 0)[-2 * p.nvar:]
            if not bad:
                mult = [Fraction(0)] * len(rows_all)
                for k, l in zip(idx, lam):
                    mult[k] = l
                return z, mult
            pick.update(k for _, k in bad)
        raise SolverError("the exact simplex did not settle on the working rows")

    # -- step 3: proof --------------------------------------------------------
    def pair_ok(self, rows: list[Row], z, mult) -> bool:
        """Exact check of everything but the coalition rows' feasibility."""
        p = self.p
        nexp = len(p.rows)
        for k, (r, l) in enumerate(zip(rows, mult)):
            if k >= nexp and not l:
                continue  # coalition rows without multiplier: checked over all masks
            lhs = _dot(r.coeffs, z)
            if r.eq:
                if lhs != r.rhs:
                    return False
            elif lhs > r.rhs or l < 0 or (l and lhs != r.rhs):
                return False
        for i in range(p.nvar):
            if p.objective[i] + sum((l * r.coeffs[i] for r, l in zip(rows, mult) if l), Fraction(0)) != 0:
                return False
        return True

    def violated(self, z) -> list[int]:
        """Coalitions of the family whose row fails exactly at z (over all masks)."""
        p = self.p
        level = z[p.level] if p.level is not None else Fraction(0)
        table = ExcessTable(self.game, z[: self.n], extra=(level,))
        return [m for m, _ in table.above(level, strict=True, skip=p.skip, limit=ADD_PER_ROUND)]

    def run(self) -> Optimum:
        p = self.p
        for _ in range(MAX_ROUNDS):
            got = self.float_solve()
            if got is None:
                # Floats say infeasible: confirm with the exact simplex on the working rows.
                rows = self.all_rows()
                if exact.exact_lp(p.objective, [(r.coeffs, r.rhs, r.eq) for r in rows]) is None:
                    raise Infeasible("the program has no feasible point")
                raise SolverError("HiGHS reported infeasible but the exact simplex found an optimum")
            zf, duals_ub, duals_eq, slack = got
            level = float(zf[p.level]) if p.level is not None else 0.0
            new = self.separate(zf, level)
            if new:
                self.add(new)
                continue
            rows = self.all_rows()
            rec = self.recover(zf, duals_ub, duals_eq, slack)
            bad: list[int] = []
            if rec is not None:
                bad = self.violated(rec[0])
                if not self.pair_ok(rows, *rec) or any(self.in_work[m] for m in bad):
                    rec = None
            if rec is None:
                rec = self.exact_fallback(zf, duals_ub, slack, rows)
                bad = self.violated(rec[0])
                if not self.pair_ok(rows, *rec) or any(self.in_work[m] for m in bad):
                    raise SolverError("the exact optimum of the working rows failed its own check")
            if bad:
                self.add(bad)
                continue
            z, mult = rec
            nexp = len(p.rows)
            duals = {m: l for m, l in zip(self.work, mult[nexp:]) if l}
            return Optimum(z, _dot(p.objective, z), mult[:nexp], duals, list(self.work))
        raise SolverError(f"row generation did not converge in {MAX_ROUNDS} rounds")


def _dot(a: Sequence[Fraction], b: Sequence[Fraction]) -> Fraction:
    return sum((x * y for x, y in zip(a, b) if x), Fraction(0))


def _independent(dense: np.ndarray, nvar: int, must: int) -> list[int] | None:
    """Greedy: the first `must` rows, then rows in order that add rank, up to nvar rows."""
    basis = np.zeros((0, nvar))
    chosen = []
    for k, row in enumerate(dense):
        norm = np.linalg.norm(row)
        if norm == 0:
            continue
        v = row / norm
        for _ in range(2):  # re-orthogonalise once for stability
            v = v - basis.T @ (basis @ v)
        res = np.linalg.norm(v)
        if res > 1e-9:
            basis = np.vstack([basis, v / res])
            chosen.append(k)
        elif k < must:
            return None
        if len(chosen) == nvar:
            return chosen
    return None


def solve(program: Program) -> Optimum:
    """The exact optimum of `program`, proved over every coalition (see module docs).

    Raises `Infeasible` when no point satisfies the rows, `SolverError` when
    the optimum cannot be found or proved.
    """
    return _Solver(program).run()
