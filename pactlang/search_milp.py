"""Worth formula + exact payouts -> the worst coalitions, found by integer programming (HiGHS) and re-checked in Fractions.

For agreements too large to enumerate. One binary x_i per party; the worth
formula is rewritten as linear rows over x and auxiliary columns, exactly
(not a relaxation): sums, counts and membership are linear; `max`/`min` of
an attribute over S are a staircase over its distinct values; comparisons,
`if`, `and`/`or`/`not`, general `max`/`min`, and products with a 0/1 factor
use big-M rows whose constants come from exact interval bounds. Comparisons
are exact because every quantity lives on a known grid: q * value is an
integer for every coalition, so `a > b` is `a - b >= 1/q`.

The solver works in floats, so it only proposes coalitions. Every proposal
is evaluated again in Fractions from the model (`Worths.exact`), and the
worst excess B is proved optimal by asking for a coalition with excess at
least B + 1/(2q) (half a grid step: a true improvement clears it by half a
step, B itself misses it by half a step, both far beyond the solver's
tolerances) until the solver reports that none exists. Tolerances can only
make the solver accept more, never report a feasible program infeasible, so
this last answer is the proof. The top-K violators are collected a chunk of
coalitions per solve (`Harvest`); the status comes from the exact worst
excess (`verdict_rules.status_of`).

A value times an `if` (tiered prices) is distributed over the branches, one
product per step. Formula shapes outside this list (division by a value that
depends on the coalition, a product of two other coalition-dependent values)
raise `Unsupported`.
"""

from __future__ import annotations

import ctypes
import os
import sys
import time
from contextlib import contextmanager
from dataclasses import dataclass, field
from fractions import Fraction
from math import lcm

import numpy as np

from . import ast
from .formula import Env, EvaluationError, depends_on_coalition, evaluate, is_aggregate
from .model import Model
from .results import UNKNOWN
from .verdict_rules import allowed_excess, bound_ratio, excess_sign, first_grid_point_above, is_relative

MAX_PROOF_ROUNDS = 60
DEFAULT_TIME_LIMIT = 300.0  # seconds for one search when --time-limit is not given


class Unsupported(Exception):
    """The worth formula has a shape the integer program cannot express exactly."""


class Limit(Exception):
    """The solver stopped before an answer (time limit or failure)."""


@dataclass
class Lin:
    """An affine expression over program columns; `binary` when its value is
    0 or 1 at every integral point."""

    coef: dict[int, Fraction] = field(default_factory=dict)
    const: Fraction = Fraction(0)
    binary: bool = False

    @staticmethod
    def constant(value: Fraction) -> "Lin":
        return Lin({}, Fraction(value), value in (0, 1))

    @property
    def is_constant(self) -> bool:
        return not self.coef

    def plus(self, other: "Lin", k: Fraction = Fraction(1)) -> "Lin":
        coef = dict(self.coef)
        for col, c in other.coef.items():
            v = coef.get(col, Fraction(0)) + k * c
            if v:
                coef[col] = v
            else:
                coef.pop(col, None)
        return Lin(coef, self.const + k * other.const)

    def times(self, k: Fraction) -> "Lin":
        if k == 0:
            return Lin.constant(Fraction(0))
        return Lin({c: v * k for c, v in self.coef.items()}, self.const * k, self.binary and k == 1)


def _one_minus(a: Lin) -> Lin:
    out = Lin.constant(Fraction(1)).plus(a, Fraction(-1))
    out.binary = a.binary
    return out


class Program:
    """Columns with exact bounds and grids, and rows lo <= lin <= hi."""

    def __init__(self, n: int):
        self.n = n
        self.lo: list[Fraction] = []
        self.hi: list[Fraction] = []
        self.integer: list[bool] = []
        self.grids: list[int] = []
        self.rows: list[tuple[dict[int, Fraction], Fraction | None, Fraction | None]] = []
        for _ in range(n):
            self.column(Fraction(0), Fraction(1), True, 1)

    def column(self, lo: Fraction, hi: Fraction, integer: bool, grid: int) -> int:
        self.lo.append(Fraction(lo))
        self.hi.append(Fraction(hi))
        self.integer.append(integer)
        self.grids.append(grid)
        return len(self.lo) - 1

    def x(self, i: int) -> Lin:
        return Lin({i: Fraction(1)}, Fraction(0), True)

    def var(self, lo, hi, integer=False, grid=1, binary=False) -> Lin:
        return Lin({self.column(lo, hi, integer, grid): Fraction(1)}, Fraction(0), binary)

    def bounds(self, lin: Lin) -> tuple[Fraction, Fraction]:
        lo = hi = lin.const
        for col, c in lin.coef.items():
            if c > 0:
                lo, hi = lo + c * self.lo[col], hi + c * self.hi[col]
            else:
                lo, hi = lo + c * self.hi[col], hi + c * self.lo[col]
        return lo, hi

    def grid(self, lin: Lin) -> int:
        """q with q * value an integer at every integral point."""
        return lcm(lin.const.denominator, *(c.denominator * self.grids[col] for col, c in lin.coef.items()))

    def row(self, lin: Lin, lo: Fraction | None = None, hi: Fraction | None = None) -> None:
        """lo <= lin <= hi (either end may be None)."""
        shift = lin.const
        self.rows.append((dict(lin.coef), None if lo is None else lo - shift, None if hi is None else hi - shift))


class Linearizer:
    """Worth formula of a model -> a `Lin` over the program's columns."""

    def __init__(self, model: Model, program: Program):
        self.model = model
        self.p = program
        self.env = Env(model.params, model.attributes)

    # ------------------------------------------------------------ building blocks
    def indicator_le(self, diff: Lin) -> Lin:
        """1 when diff <= 0, else 0 (exact on the grid of diff)."""
        lo, hi = self.p.bounds(diff)
        step = Fraction(1, self.p.grid(diff))
        if hi <= 0:
            return Lin.constant(Fraction(1))
        if lo >= step:
            return Lin.constant(Fraction(0))
        d = self.p.var(0, 1, integer=True, binary=True)
        self.p.row(diff.plus(d, hi), hi=hi)  # d = 1 -> diff <= 0
        self.p.row(diff.plus(d, step - lo), lo=step)  # d = 0 -> diff >= step
        return d

    def both(self, a: Lin, b: Lin) -> Lin:
        if a.is_constant:
            return b if a.const else Lin.constant(Fraction(0))
        if b.is_constant:
            return a if b.const else Lin.constant(Fraction(0))
        d = self.p.var(0, 1, binary=True)
        self.p.row(d.plus(a, Fraction(-1)), hi=Fraction(0))
        self.p.row(d.plus(b, Fraction(-1)), hi=Fraction(0))
        self.p.row(d.plus(a, Fraction(-1)).plus(b, Fraction(-1)), lo=Fraction(-1))
        return d

    def either(self, a: Lin, b: Lin) -> Lin:
        return _one_minus(self.both(_one_minus(a), _one_minus(b)))

    def truth(self, a: Lin) -> Lin:
        """The 0/1 truth of a value (non-zero is true)."""
        if a.binary:
            return a
        if a.is_constant:
            return Lin.constant(Fraction(int(a.const != 0)))
        zero = self.both(self.indicator_le(a), self.indicator_le(a.times(Fraction(-1))))
        return _one_minus(zero)

    def product_with_binary(self, b: Lin, a: Lin) -> Lin:
        """b * a for a 0/1 value b (exact: four rows)."""
        if a.is_constant:
            return b.times(a.const) if not b.is_constant else Lin.constant(b.const * a.const)
        if b.is_constant:
            return a if b.const else Lin.constant(Fraction(0))
        lo, hi = self.p.bounds(a)
        y = self.p.var(min(lo, 0), max(hi, 0), grid=self.p.grid(a))
        self.p.row(y.plus(b, -hi), hi=Fraction(0))
        self.p.row(y.plus(b, -lo), lo=Fraction(0))
        self.p.row(y.plus(a, Fraction(-1)).plus(b, -hi), lo=-hi)
        self.p.row(y.plus(a, Fraction(-1)).plus(b, -lo), hi=-lo)
        return y

    def extreme(self, parts: list[Lin], func: str) -> Lin:
        """max or min of several values: one selector per part."""
        if func == "min":
            return self.extreme([p.times(Fraction(-1)) for p in parts], "max").times(Fraction(-1))
        if all(p.is_constant for p in parts):
            return Lin.constant(max(p.const for p in parts))
        bounds = [self.p.bounds(p) for p in parts]
        lo = max(b[0] for b in bounds)
        hi = max(b[1] for b in bounds)
        keep = [(p, b) for p, b in zip(parts, bounds) if b[1] >= lo]  # parts that can never be the max drop out
        if len(keep) == 1:
            return keep[0][0]
        m = self.p.var(lo, hi, grid=lcm(*(self.p.grid(p) for p, _ in keep)))
        selectors = Lin()
        for p, (plo, _) in keep:
            s = self.p.var(0, 1, integer=True, binary=True)
            selectors = selectors.plus(s)
            self.p.row(m.plus(p, Fraction(-1)), lo=Fraction(0))
            big = hi - plo
            self.p.row(m.plus(p, Fraction(-1)).plus(s, big), hi=big)
        self.p.row(selectors, lo=Fraction(1), hi=Fraction(1))
        return m

    def staircase(self, attr: str, func: str) -> Lin:
        """max or min of an attribute over the members: u_1 + sum of steps z_k,
        z_k = [some member has a value >= u_k] (continuous but forced to 0/1)."""
        values = self.model.attribute_vector(attr)
        sign = Fraction(1) if func == "max" else Fraction(-1)
        vals = [v * sign for v in values]
        levels = sorted(set(vals))
        result = Lin.constant(levels[0])
        previous: Lin | None = None
        for k in range(len(levels) - 1, 0, -1):  # from the top level down
            at_level = Lin()
            for i, v in enumerate(vals):
                if v == levels[k]:
                    at_level = at_level.plus(self.p.x(i))
            z = self.p.var(0, 1, binary=True)
            for i, v in enumerate(vals):
                if v == levels[k]:
                    self.p.row(z.plus(self.p.x(i), Fraction(-1)), lo=Fraction(0))
            upper = at_level if previous is None else at_level.plus(previous)
            self.p.row(z.plus(upper, Fraction(-1)), hi=Fraction(0))
            if previous is not None:
                self.p.row(z.plus(previous, Fraction(-1)), lo=Fraction(0))
            result = result.plus(z, levels[k] - levels[k - 1])
            previous = z
        return result.times(sign)

    # ------------------------------------------------------------ expressions
    def node(self, e: ast.Expr) -> Lin:
        if not depends_on_coalition(e):
            try:
                return Lin.constant(evaluate(e, self.env))
            except EvaluationError as exc:
                raise Unsupported(exc.message) from None
        match e:
            case ast.Member(item=item):
                return self.p.x(self.model.index(item))
            case ast.Call(func="count"):
                out = Lin()
                for i in range(self.model.n):
                    out = out.plus(self.p.x(i))
                return out
            case ast.Call(func="sum", args=args) if is_aggregate(e):
                values = self.model.attribute_vector(args[0].item)
                return Lin({i: v for i, v in enumerate(values) if v}, Fraction(0))
            case ast.Call(func=func, args=args) if is_aggregate(e):
                return self.staircase(args[0].item, func)
            case ast.Call(func=func, args=args):
                return self.extreme([self.node(a) for a in args], func)
            case ast.Neg(operand=o):
                return self.node(o).times(Fraction(-1))
            case ast.Not(operand=o):
                return _one_minus(self.truth(self.node(o)))
            case ast.If(cond=c, then=t, otherwise=o):
                cond = self.truth(self.node(c))
                a, b = self.node(t), self.node(o)
                return b.plus(self.product_with_binary(cond, a.plus(b, Fraction(-1))))
            case ast.Chain(first=first, rest=rest):
                acc = self.node(first)
                for k, (op, operand) in enumerate(rest):
                    if op == "*" and isinstance(operand, ast.If) and depends_on_coalition(operand):
                        so_far = first if k == 0 else ast.Chain(first, rest[:k], span=e.span)
                        if depends_on_coalition(so_far):
                            acc = self.node(_distribute(so_far, operand, e.span))
                            continue
                    if op == "*" and k == 0 and isinstance(first, ast.If) and depends_on_coalition(first) \
                            and depends_on_coalition(operand):
                        acc = self.node(_distribute(operand, first, e.span))
                        continue
                    acc = self.combine(op, acc, self.node(operand), e)
                return acc
            case ast.Binary(op=op, left=l, right=r):
                return self.compare(op, self.node(l), self.node(r))
        raise Unsupported(f"`{type(e).__name__}` in a worth formula")

    def combine(self, op: str, a: Lin, b: Lin, e: ast.Chain) -> Lin:
        """One step of the chain `e`: `a op b`."""
        if op == "and":
            return self.both(self.truth(a), self.truth(b))
        if op == "or":
            return self.either(self.truth(a), self.truth(b))
        if op == "+":
            return a.plus(b)
        if op == "-":
            return a.plus(b, Fraction(-1))
        if op == "*":
            if a.is_constant:
                return b.times(a.const)
            if b.is_constant:
                return a.times(b.const)
            if a.binary:
                return self.product_with_binary(a, b)
            if b.binary:
                return self.product_with_binary(b, a)
            raise Unsupported(f"a product of two values that depend on the coalition (line {_line(e)})")
        if b.is_constant:
            if b.const == 0:
                raise Unsupported(f"division by zero (line {_line(e)})")
            return a.times(1 / b.const)
        raise Unsupported(f"division by a value that depends on the coalition (line {_line(e)})")

    def compare(self, op: str, a: Lin, b: Lin) -> Lin:
        diff = a.plus(b, Fraction(-1))
        step = Fraction(1, self.p.grid(diff))
        if op == "<=":
            return self.indicator_le(diff)
        if op == ">=":
            return self.indicator_le(diff.times(Fraction(-1)))
        if op == "<":
            return self.indicator_le(diff.plus(Lin.constant(step)))
        if op == ">":
            return self.indicator_le(diff.times(Fraction(-1)).plus(Lin.constant(step)))
        eq = self.both(self.indicator_le(diff), self.indicator_le(diff.times(Fraction(-1))))
        return eq if op == "==" else _one_minus(eq)

    def worth(self, worths) -> Lin:
        """The worth of S over x: the formula (or `worth otherwise`) corrected by
        an exact indicator for each listed coalition other than `all`."""
        model = self.model
        if model.formula is not None:
            base = self.node(model.formula.expr)
            var = model.formula.var.name
        elif model.otherwise is not None:
            base = Lin.constant(model.otherwise)
            var = None
        else:
            raise Unsupported("the agreement lists worths coalition by coalition; there is no formula to search")
        for mask, value in worths.constants.items():
            if mask == model.full or mask == 0:
                continue
            if var is not None:
                members = tuple(model.names_of(mask))
                try:
                    f = evaluate(model.formula.expr, Env(model.params, model.attributes, members, var))
                except EvaluationError as exc:
                    raise Unsupported(exc.message) from None
            else:
                f = model.otherwise
            if value == f:
                continue
            base = base.plus(self.is_coalition(mask), value - f)
        return base

    def is_coalition(self, mask: int) -> Lin:
        t = self.p.var(0, 1, binary=True)
        size = bin(mask).count("1")
        total = Lin()
        for i in range(self.model.n):
            xi = self.p.x(i)
            if mask >> i & 1:
                self.p.row(t.plus(xi, Fraction(-1)), hi=Fraction(0))
                total = total.plus(xi)
            else:
                self.p.row(t.plus(xi), hi=Fraction(1))
                total = total.plus(xi, Fraction(-1))
        self.p.row(t.plus(total, Fraction(-1)), lo=Fraction(1 - size))
        return t


def _distribute(value: ast.Expr, step: ast.If, span) -> ast.If:
    """value * (if c then a else b) as if c then value * a else value * b: a
    value times a step function (tiered prices) becomes one product per step,
    each linear when the step's amount is a constant, and exact either way."""
    return ast.If(step.cond, ast.Chain(value, (("*", step.then),), span=span),
                  ast.Chain(value, (("*", step.otherwise),), span=span), span=span)


def _line(e) -> str:
    return str(e.span.line) if getattr(e, "span", None) else "?"


# ---------------------------------------------------------------- the search


class Search:
    """The integer program of one model with fixed payouts, and the queries on it."""

    def __init__(self, model: Model, worths, payouts: list[Fraction], deadline: float):
        self.model = model
        self.payouts = payouts
        self.deadline = deadline
        self.program = Program(model.n)
        lin = Linearizer(model, self.program)
        self.worth = lin.worth(worths)
        paid = Lin({i: p for i, p in enumerate(payouts) if p}, Fraction(0))
        diff = self.worth.plus(paid, Fraction(-1))
        self.excess = diff.times(Fraction(excess_sign(model.kind)))
        self.grid = self.program.grid(self.excess)
        lo, hi = self.program.bounds(self.excess)
        scale = self.grid * (max(abs(lo), abs(hi)) + sum(abs(c) for c in self.excess.coef.values()))
        if scale > 2**50:
            # rows scaled to integers must stay exact in floats for the half-step proof
            raise Unsupported("the numbers are too fine-grained for the integer program to separate exactly")
        n = model.n
        sizes = Lin({i: Fraction(1) for i in range(n)})
        self.program.row(sizes, lo=Fraction(1), hi=Fraction(n - 1))  # non-empty and not everyone
        self.sizes = sizes
        # free unless a tie row uses it: 1 lets a coalition tie the cut-off excess if it is no larger
        self.tie = self.program.var(0, 1, integer=True, binary=True)
        self.solves = 0

    # ------------------------------------------------------------ solver
    def solve(self, extra_rows) -> int | None:
        """The best coalition (mask) under extra rows, or None when there is none."""
        from scipy.optimize import Bounds, LinearConstraint, milp
        from scipy.sparse import csr_matrix

        left = self.deadline - time.monotonic()
        if left <= 0:
            raise Limit("the time limit was reached")
        p = self.program
        rows = p.rows + list(extra_rows)
        ncol = len(p.lo)
        data, ri, ci = [], [], []
        lb = np.full(len(rows), -np.inf)
        ub = np.full(len(rows), np.inf)
        for r, (coef, lo, hi) in enumerate(rows):
            for col, c in coef.items():
                data.append(float(c))
                ri.append(r)
                ci.append(col)
            if lo is not None:
                lb[r] = _down(lo)
            if hi is not None:
                ub[r] = _up(hi)
        a = csr_matrix((data, (ri, ci)), shape=(len(rows), ncol))
        c = np.zeros(ncol)
        for col, v in self.excess.coef.items():
            c[col] = -float(v * self.grid)
        bounds = Bounds([_down(v) for v in p.lo], [_up(v) for v in p.hi])
        self.solves += 1
        with _quiet_stdout():
            res = milp(c, integrality=np.array(p.integer, dtype=np.uint8), bounds=bounds,
                       constraints=LinearConstraint(a, lb, ub),
                       options={"time_limit": max(left, 0.01), "mip_rel_gap": 0.0, "disp": False})
        if res.status == 2:
            return None
        if res.status == 0 and res.x is not None:
            return sum(1 << i for i in range(self.model.n) if res.x[i] > 0.5)
        if res.status == 1:
            raise Limit("the time limit was reached")
        raise Limit(f"the integer program solver stopped: {res.message}")

    def at_least(self, lin: Lin, value: Fraction) -> tuple:
        """A row lin >= value - 1/(2q) scaled to integers (value on lin's grid)."""
        q = self.program.grid(lin)
        scaled = lin.times(Fraction(q))
        return (dict(scaled.coef), value * q - scaled.const - Fraction(1, 2), None)

    @staticmethod
    def no_good(mask: int, n: int) -> tuple:
        coef = {i: Fraction(-1) if mask >> i & 1 else Fraction(1) for i in range(n)}
        return (coef, Fraction(1 - bin(mask).count("1")), None)

    # ------------------------------------------------------------ queries
    def worst(self, exact_excess) -> tuple[Fraction, int]:
        """The exact largest excess over proper coalitions and one coalition
        attaining it, proved by an infeasible `excess >= best + half a step`."""
        cuts = []
        mask = self.solve([])
        if mask is None:
            raise Limit("the integer program has no coalition at all")
        best, best_mask = exact_excess(mask), mask
        for _ in range(MAX_PROOF_ROUNDS):
            mask = self.solve([self.at_least(self.excess, best + Fraction(1, self.grid)), *cuts])
            if mask is None:
                return best, best_mask
            value = exact_excess(mask)
            if value > best:
                best, best_mask = value, mask
            else:  # a float artefact: this coalition is no better, rule it out
                cuts.append(self.no_good(mask, self.model.n))
        raise Limit("the solver's proposals kept failing the exact re-check")

    def prefix_cut(self, high: int, low_bits: int) -> tuple:
        """A row ruling out every coalition whose members among the parties
        from `low_bits` on are those of `high` (one swept chunk)."""
        coef = {low_bits + j: Fraction(-1) if high >> j & 1 else Fraction(1) for j in range(self.model.n - low_bits)}
        return (coef, Fraction(1 - high.bit_count()), None)

    def ranked_after(self, excess: Fraction, size: int, with_ties: bool) -> list[tuple]:
        """Rows keeping the coalitions that may rank before one of this excess
        and size: a larger excess, or (`with_ties`) the same excess and no
        more members."""
        step = Fraction(1, self.grid)
        if not with_ties:
            return [self.at_least(self.excess, excess + step)]
        n = self.model.n
        # tie = 0: excess >= excess + step; tie = 1: excess >= excess and size <= size
        return [self.at_least(self.excess.plus(self.tie, step), excess + step),
                (dict(self.sizes.plus(self.tie, Fraction(n - size)).coef), None, Fraction(n))]


@contextmanager
def _quiet_stdout():
    """Keep the solver library's own prints (it writes some debug lines with
    C printf even when asked to be quiet) off stdout, where reports go."""
    try:
        libc = ctypes.CDLL(None)
        sys.stdout.flush()
        libc.fflush(None)
        saved = os.dup(1)
    except (OSError, AttributeError, ValueError):
        yield
        return
    devnull = os.open(os.devnull, os.O_WRONLY)
    os.dup2(devnull, 1)
    try:
        yield
    finally:
        libc.fflush(None)
        os.dup2(saved, 1)
        os.close(saved)
        os.close(devnull)


def _down(v: Fraction) -> float:
    f = float(v)
    return f if Fraction(f) <= v else float(np.nextafter(f, -np.inf))


def _up(v: Fraction) -> float:
    f = float(v)
    return f if Fraction(f) >= v else float(np.nextafter(f, np.inf))


def unsupported_reason(model: Model) -> str | None:
    """Why the integer program cannot express this agreement's worths, or None."""
    try:
        Linearizer(model, Program(model.n)).worth(_NoConstants())
    except Unsupported as exc:
        return str(exc)
    return None


class _NoConstants:
    constants: dict = {}


HARVEST_BITS = 16  # each integer-program answer is widened to the 2**16 coalitions sharing its other members


def search(checker, reqs, time_limit: float | None) -> dict[int, object]:
    """Results of the coalition requirements `reqs` for a `Checker` that has
    its exact worths and payouts, found by integer programming."""
    model = checker.model
    limit = DEFAULT_TIME_LIMIT if time_limit is None else time_limit
    start = time.monotonic()
    method = "milp"
    try:
        s = Search(model, checker.worths, checker.payouts, start + limit)
    except Unsupported as exc:
        reason = f"{model.n} parties is too many to enumerate and the integer program cannot express the worth: {exc}"
        return {id(r): checker._result(r, UNKNOWN, None, method, reason=reason) for r in reqs}
    exact = lambda mask: checker.exact_excess(mask)[0]  # noqa: E731
    try:
        worst, worst_mask = s.worst(exact)
    except Limit as exc:
        return {id(r): checker._result(r, UNKNOWN, None, method, reason=str(exc)) for r in reqs}
    out = {}
    for req in reqs:
        s.deadline = time.monotonic() + limit
        harvest = Harvest(s, checker, req)
        note = None
        try:
            if is_relative(req) or worst > bound_ratio(req):
                harvest.run([worst_mask])
            found = harvest.found()
        except Limit as exc:
            found = harvest.found()
            if not found and not is_relative(req):
                found = [worst_mask]  # the worst excess is above the bound: its coalition violates
            if not found:
                out[id(req)] = checker._result(req, UNKNOWN, worst, method, reason=str(exc), worst_mask=worst_mask)
                continue
            # the verdict stands on the violators in hand; only the list may miss some
            note = f" (counterexample list may be incomplete: {exc})"
        out[id(req)] = checker.coalition_result(req, worst, worst_mask, found, method, note)
    return out


class _Feed:
    """An endless iterator yielding whatever `next` was last set to: feeds
    `excess_chunks` the chunk prefixes one at a time, as they are found."""

    def __init__(self):
        self.next = 0

    def __iter__(self):
        return self

    def __next__(self) -> int:
        return self.next


class Harvest:
    """The worst violators of one requirement, collected many at a time.

    Every coalition the integer program proposes is widened to its chunk:
    all coalitions that agree with it on the parties from `bits` on, swept
    exactly by the checker's vectorised sweep (`_Tracker`). The next query
    asks for a violator outside every swept chunk (one prefix row per chunk)
    that could still enter the list: once `top` violators are in hand, one
    with a larger excess than the last of them, or (up to MAX_ENUMERATED
    parties) the same excess and no more members, so that ties at the
    cut-off come out in `rank` order. Above that, tied coalitions can be so
    many that the list takes the tied ones from the chunks it swept. An
    infeasible query proves the list complete."""

    def __init__(self, s: Search, checker, req):
        from .check import MAX_ENUMERATED, _Tracker
        from .sweep import excess_chunks

        self.s = s
        self.checker = checker
        self.req = req
        n = checker.model.n
        low_bits = checker.options.low_bits
        self.bits = min(n, low_bits if low_bits is not None else HARVEST_BITS)
        self.with_ties = n <= MAX_ENUMERATED
        self.tracker = _Tracker(req, checker.options.top)
        self.feed = _Feed()
        self.chunks = excess_chunks(checker.worths, checker.payouts, self.bits, highs=self.feed)
        self.swept: set[int] = set()

    def found(self) -> list[int]:
        return [mask for _, _, mask in self.tracker.violators]

    def violation_rows(self) -> list[tuple]:
        """Rows satisfied exactly by the coalitions that violate the requirement."""
        s, req = self.s, self.req
        if is_relative(req):
            # e > P |w|  <=>  e - P w > 0 and e + P w > 0, each on its own grid
            rows = []
            for k in (-req.bound.value, req.bound.value):
                lin = s.excess.plus(s.worth, k)
                rows.append(s.at_least(lin, Fraction(1, s.program.grid(lin))))
            return rows
        return [s.at_least(s.excess, first_grid_point_above(allowed_excess(req, Fraction(0)), s.grid))]

    def run(self, seeds: list[int]) -> None:
        s, tracker, top = self.s, self.tracker, self.checker.options.top
        n, full = self.checker.model.n, self.checker.model.full
        base_rows = self.violation_rows()
        cuts: list[tuple] = []
        pending = [m >> self.bits for m in seeds]
        while len(self.swept) < 1 << (n - self.bits):
            if pending:
                high = pending.pop()
            else:
                rows = list(base_rows)
                if len(tracker.violators) >= top:
                    neg, size, _ = tracker.violators[-1]
                    rows += s.ranked_after(-neg, size, self.with_ties)
                mask = s.solve([*rows, *cuts])
                if mask is None:
                    return
                high = mask >> self.bits
                if high in self.swept:
                    raise Limit("the solver proposed a coalition it had already ruled out")
            if high in self.swept:
                continue
            if time.monotonic() > s.deadline:
                raise Limit("the time limit was reached")
            self.feed.next = high
            chunk = next(self.chunks)
            masks = chunk.masks
            valid = (masks != 0) & (masks != full)
            if chunk.e_num is not None:
                tracker.exact_chunk(masks, valid, chunk)
            else:
                tracker.inexact_chunk(masks, valid, chunk)
            tracker.settle(lambda mask: self.checker.exact_excess(mask))
            if tracker.overflow:
                raise Limit("too many coalitions could not be told apart in floating point")
            self.swept.add(high)
            cuts.append(s.prefix_cut(high, self.bits))
