"""Rational matrices -> exact solutions, spans, null spaces and LP optima (pure Fractions).

Everything here is exact and small: systems of at most a few dozen unknowns.
Floats never enter; the LP solver is a dense tableau simplex with Bland's
rule (no cycling), used when a floating-point optimum cannot be confirmed.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from math import gcd, lcm
from typing import Sequence

Vector = list[Fraction]


def solve(matrix: Sequence[Sequence], rhs: Sequence) -> Vector | None:
    """The unique solution of a square system, or None when it is singular.

    Fraction-free (Bareiss) elimination on rows scaled to integers: every
    division is exact, and integers are far cheaper than Fractions; only the
    back substitution uses Fractions.
    """
    size = len(matrix)
    rows = []
    for row, b in zip(matrix, rhs):
        vals = [Fraction(v) for v in row] + [Fraction(b)]
        den = lcm(*(v.denominator for v in vals))
        rows.append([v.numerator * (den // v.denominator) for v in vals])
    prev = 1
    for col in range(size):
        piv = next((r for r in range(col, size) if rows[r][col] != 0), None)
        if piv is None:
            return None
        rows[col], rows[piv] = rows[piv], rows[col]
        p = rows[col]
        pc = p[col]
        for r in range(col + 1, size):
            row = rows[r]
            f = row[col]
            if f:
                row[col:] = [(pc * a - f * b) // prev for a, b in zip(row[col:], p[col:])]
            elif pc != prev:
                row[col:] = [pc * a // prev for a in row[col:]]
        prev = pc
    x: Vector = [Fraction(0)] * size
    for i in range(size - 1, -1, -1):
        row = rows[i]
        acc = Fraction(row[size]) - sum((row[j] * x[j] for j in range(i + 1, size) if row[j]), Fraction(0))
        x[i] = acc / row[i]
    return x


def _primitive(vec: list[int]) -> list[int]:
    g = 0
    for v in vec:
        g = gcd(g, v)
    return [v // g for v in vec] if g > 1 else vec


class Span:
    """The row span of integer vectors, grown one vector at a time (fraction-free)."""

    def __init__(self, size: int):
        self.size = size
        self._rows: list[tuple[int, list[int]]] = []  # (pivot column, reduced row)
        self._kernel: list[list[int]] | None = None  # cached until the next add

    @property
    def rank(self) -> int:
        return len(self._rows)

    def _reduce(self, vec: Sequence[int]) -> list[int]:
        v = [int(a) for a in vec]
        for col, row in self._rows:
            if v[col]:
                a, b = row[col], v[col]
                v = _primitive([a * x - b * y for x, y in zip(v, row)])
        return v

    def contains(self, vec: Sequence[int]) -> bool:
        """Whether `vec` lies in the span."""
        return not any(self._reduce(vec))

    def add(self, vec: Sequence[int]) -> bool:
        """Add `vec`; False (and no change) when it already lies in the span."""
        v = self._reduce(vec)
        col = next((k for k, a in enumerate(v) if a), None)
        if col is None:
            return False
        self._rows.append((col, v))
        self._kernel = None
        return True

    def kernel(self) -> list[list[int]]:
        """An integer basis of the vectors orthogonal to the span (a fresh list each call)."""
        if self._kernel is None:
            self._kernel = null_space([row for _, row in self._rows], self.size)
        return [list(v) for v in self._kernel]


def null_space(rows: Sequence[Sequence], size: int) -> list[list[int]]:
    """An integer basis of {z : row . z = 0 for every row}.

    Reduced row echelon form kept in integers (each row primitive), so no
    Fraction arithmetic: the kernel vector of a free column f has L at f and
    -row[f] * L / row[pivot] at each pivot, L the lcm of those pivots.
    """
    mat: list[list[int]] = []
    for row in rows:
        vals = [Fraction(v) for v in row]
        den = lcm(*(v.denominator for v in vals)) if vals else 1
        mat.append([v.numerator * (den // v.denominator) for v in vals])
    pivots: list[int] = []
    r = 0
    for col in range(size):
        piv = next((i for i in range(r, len(mat)) if mat[i][col] != 0), None)
        if piv is None:
            continue
        mat[r], mat[piv] = mat[piv], mat[r]
        p = mat[r] = _primitive(mat[r])
        a = p[col]
        for i in range(len(mat)):
            if i != r and mat[i][col] != 0:
                b = mat[i][col]
                mat[i] = _primitive([a * x - b * y for x, y in zip(mat[i], p)])
        pivots.append(col)
        r += 1
    basis = []
    pivot_set = set(pivots)
    for free in (c for c in range(size) if c not in pivot_set):
        used = [(i, col) for i, col in enumerate(pivots) if mat[i][free]]
        big = lcm(*(abs(mat[i][col]) for i, col in used)) if used else 1
        vec = [0] * size
        vec[free] = big
        for i, col in used:
            vec[col] = -mat[i][free] * (big // mat[i][col])
        basis.append(_primitive(vec))
    return basis


@dataclass(frozen=True)
class SimplexResult:
    """`status` is "optimal", "infeasible" or "unbounded"; x and basis when optimal."""

    status: str
    x: Vector | None = None
    basis: tuple[int, ...] | None = None
    value: Fraction | None = None


def simplex(a: Sequence[Sequence], b: Sequence, c: Sequence, max_pivots: int = 20000) -> SimplexResult:
    """Minimise c.x subject to a x = b, x >= 0, exactly (two phases, Bland's rule)."""
    m, k = len(a), len(c)
    rows: list[list[Fraction]] = []
    for i in range(m):
        row = [Fraction(v) for v in a[i]]
        rhs = Fraction(b[i])
        if rhs < 0:
            row, rhs = [-v for v in row], -rhs
        rows.append(row + [Fraction(int(j == i)) for j in range(m)] + [rhs])
    basis = [k + i for i in range(m)]
    cost1 = [Fraction(0)] * k + [Fraction(1)] * m
    obj = _reduced(rows, basis, cost1)
    if _run(rows, basis, obj, k + m, max_pivots) != "optimal":  # phase 1 is bounded below by 0
        raise ArithmeticError("phase 1 did not finish")
    if -obj[-1] > 0:
        return SimplexResult("infeasible")
    # Drive artificial variables out of the basis; a row with no real entry is redundant.
    keep = []
    for i in range(len(rows)):
        if basis[i] >= k:
            j = next((j for j in range(k) if rows[i][j] != 0), None)
            if j is None:
                continue
            _pivot(rows, basis, obj, i, j)
        keep.append(i)
    rows = [rows[i][:k] + [rows[i][-1]] for i in keep]
    basis = [basis[i] for i in keep]
    cost = [Fraction(v) for v in c]
    obj = _reduced(rows, basis, cost)
    status = _run(rows, basis, obj, k, max_pivots)
    if status != "optimal":
        return SimplexResult(status)
    x = [Fraction(0)] * k
    for i, j in enumerate(basis):
        x[j] = rows[i][-1]
    return SimplexResult("optimal", x, tuple(basis), sum((ci * xi for ci, xi in zip(cost, x)), Fraction(0)))


def _reduced(rows, basis, cost) -> list[Fraction]:
    width = len(rows[0]) - 1 if rows else len(cost)
    obj = list(cost[:width]) + [Fraction(0)]
    for i, j in enumerate(basis):
        cj = cost[j]
        if cj:
            obj = [o - cj * r for o, r in zip(obj, rows[i])]
    return obj


def _pivot(rows, basis, obj, i: int, j: int) -> None:
    p = rows[i]
    inv = 1 / p[j]
    rows[i] = p = [v * inv for v in p]
    nz = [k for k, v in enumerate(p) if v]
    for r, row in enumerate(rows):
        if r != i and row[j]:
            f = row[j]
            for k in nz:
                row[k] -= f * p[k]
    if obj[j]:
        f = obj[j]
        for k in nz:
            obj[k] -= f * p[k]
    basis[i] = j


def _run(rows, basis, obj, width: int, max_pivots: int) -> str:
    for _ in range(max_pivots):
        j = next((j for j in range(width) if obj[j] < 0), None)
        if j is None:
            return "optimal"
        best = None
        for i, row in enumerate(rows):
            if row[j] > 0:
                ratio = row[-1] / row[j]
                if best is None or ratio < best[0] or (ratio == best[0] and basis[i] < basis[best[1]]):
                    best = (ratio, i)
        if best is None:
            return "unbounded"
        _pivot(rows, basis, obj, best[1], j)
    raise ArithmeticError("simplex pivot limit reached")


def exact_lp(objective: Sequence, rows: Sequence[tuple[Sequence, Fraction, bool]]):
    """Minimise objective.z over free z subject to rows (coeffs, rhs, is_equality; else <=).

    Solved through its dual in standard form. Returns `(z, multipliers)` with
    one multiplier per row (>= 0 for inequalities) such that
    objective + sum multiplier * coeffs = 0 and every row with a nonzero
    multiplier is tight, or None when the dual has no optimum (the primal is
    infeasible or unbounded).
    """
    nvar = len(objective)
    cols: list[list[Fraction]] = []
    costs: list[Fraction] = []
    owner: list[tuple[int, int]] = []  # (row index, sign)
    for r, (coeffs, rhs, eq) in enumerate(rows):
        cols.append([Fraction(v) for v in coeffs])
        costs.append(Fraction(rhs))
        owner.append((r, 1))
        if eq:
            cols.append([-Fraction(v) for v in coeffs])
            costs.append(-Fraction(rhs))
            owner.append((r, -1))
    a = [[col[i] for col in cols] for i in range(nvar)]
    b = [-Fraction(v) for v in objective]
    res = simplex(a, b, costs)
    if res.status != "optimal" or len(res.basis) != nvar:
        return None
    mult = [Fraction(0)] * len(rows)
    for j, val in enumerate(res.x):
        if val:
            r, sign = owner[j]
            mult[r] += sign * val
    basic_rows = [owner[j][0] for j in res.basis]
    z = solve([rows[r][0] for r in basic_rows], [rows[r][1] for r in basic_rows])
    if z is None:
        return None
    return z, mult
