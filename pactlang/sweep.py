"""`Worths` + payouts -> excess of every coalition, chunk by chunk, with proof.

The worth formula is evaluated for a whole chunk of coalitions at once with
numpy: coalition masks are split into low bits (a fixed table of 2**L masks,
L <= 20) and a high prefix that is constant within a chunk, so sums, maxima
and counts come from small prefix tables, never from a Python loop per
coalition.

Floats only guide. Every node carries a rigorous bound `err` on the distance
between its float value and the exact rational value, and a static
denominator bound `q` (q * value is an integer for every coalition) when one
exists. When `err * q < 1/4` for every element, rounding `value * q` to the
nearest integer gives the exact numerator, so whole chunks are decided with
exact integer comparisons. Where that fails the caller falls back to exact
Fraction evaluation of the few candidates the bounds cannot rule out.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from math import lcm
from typing import Iterator

import numpy as np

from . import ast
from .formula import Env, EvaluationError, depends_on_coalition, evaluate, is_aggregate
from .verdict_rules import excess_sign
from .worths import Worths

U = 2.0**-53  # unit roundoff of float64
SAFETY = 1.0 + 2.0**-40  # absorbs the rounding of the error arithmetic itself
LOW_BITS = 20
MAX_EXACT = 2.0**50  # numerators must stay well inside float64 and int64


def _conv(value: Fraction) -> tuple[float, float]:
    """A Fraction as float with the exact size of the conversion error; a
    value past the float range is 0 with an infinite error (undecided, so
    the exact evaluator decides)."""
    try:
        f = float(value)
    except OverflowError:
        return 0.0, np.inf
    return f, float(abs(Fraction(f) - value)) * SAFETY + (0.0 if Fraction(f) == value else 5e-324)


def _float_or_inf(value: Fraction) -> float:
    """The nearest float, or an infinity of the same sign past the float range."""
    try:
        return float(value)
    except OverflowError:
        return np.inf if value > 0 else -np.inf


def _undecided_where_overflow(val: np.ndarray, err: np.ndarray) -> None:
    """In place: where float arithmetic left the range (inf, NaN), the value is
    0 with an infinite error bound, so every later test calls it undecided
    and the exact evaluator decides."""
    bad = ~np.isfinite(val) | np.isnan(err)
    if bad.any():
        val[bad] = 0.0
        err[bad] = np.inf


def _lcm(*qs):
    if any(q is None for q in qs):
        return None
    return lcm(*qs)


@dataclass
class Vec:
    """Float values, their error bounds (arrays or scalars) and the denominator bound."""

    val: np.ndarray | float
    err: np.ndarray | float
    q: int | None


class _Tables:
    """Prefix tables over the low bits: sums, maxima, minima, counts."""

    def __init__(self, model, low_bits: int):
        self.model = model
        self.L = low_bits
        self.size = 1 << low_bits
        self.idx = np.arange(self.size, dtype=np.int64)
        self._cache: dict = {}

    def _doubling(self, values: list[float], op, empty: float) -> np.ndarray:
        table = np.empty(self.size, dtype=np.float64)
        table[0] = empty
        for i in range(self.L):
            half = 1 << i
            table[half:2 * half] = op(table[:half], values[i])
        return table

    def sum_table(self, attr: str):
        key = ("sum", attr)
        if key not in self._cache:
            exact = self.model.attribute_vector(attr)[: self.L]
            conv = [_conv(v) for v in exact]
            floats = [c[0] for c in conv]
            table = self._doubling(floats, np.add, 0.0)
            # each partial sum is the rounded sum of at most L float terms
            err = (sum(c[1] for c in conv) + self.L * U * sum(abs(f) for f in floats)) * SAFETY
            self._cache[key] = (table, err)
        return self._cache[key]

    def extreme_table(self, attr: str, func: str):
        key = (func, attr)
        if key not in self._cache:
            exact = self.model.attribute_vector(attr)[: self.L]
            conv = [_conv(v) for v in exact]
            op, empty = (np.maximum, -np.inf) if func == "max" else (np.minimum, np.inf)
            table = self._doubling([c[0] for c in conv], op, empty)
            self._cache[key] = (table, max((c[1] for c in conv), default=0.0))
        return self._cache[key]

    def count_table(self):
        if "count" not in self._cache:
            self._cache["count"] = self._doubling([1.0] * self.L, np.add, 0.0)
        return self._cache["count"]

    def bit(self, i: int) -> np.ndarray:
        key = ("bit", i)
        if key not in self._cache:
            self._cache[key] = ((self.idx >> i) & 1).astype(np.float64)
        return self._cache[key]


class Evaluator:
    """Evaluates one model's worth formula over chunks of coalitions."""

    def __init__(self, worths: Worths, low_bits: int | None = None):
        self.worths = worths
        self.model = model = worths.model
        self.n = model.n
        self.L = min(self.n, LOW_BITS if low_bits is None else low_bits)
        self.tables = _Tables(model, self.L)
        self.env = Env(model.params, model.attributes)
        formula = model.formula
        self.var = formula.var.name if formula else None
        self._high_members: tuple[str, ...] = ()

    # -------------------------------------------------------------- chunks
    @property
    def chunk_count(self) -> int:
        return 1 << (self.n - self.L)

    def masks(self, high: int) -> np.ndarray:
        if self.n > 62:  # past int64 the masks are Python integers
            base = high << self.L
            return np.array([base | low for low in range(self.tables.size)], dtype=object)
        return (np.int64(high) << np.int64(self.L)) | self.tables.idx

    def worth_chunk(self, high: int) -> Vec:
        """Worths of the coalitions `high << L | low` for every low, with bounds.
        Index 0 of chunk 0 (the empty coalition) holds 0."""
        model = self.model
        self._high = high
        self._high_members = tuple(model.parties[self.L + i] for i in range(self.n - self.L) if high >> i & 1)
        if model.formula is not None:
            vec = self._eval(model.formula.expr)
            vec = Vec(np.broadcast_to(vec.val, (self.tables.size,)).astype(np.float64, copy=True),
                      np.broadcast_to(vec.err, (self.tables.size,)).astype(np.float64, copy=True), vec.q)
        elif model.otherwise is not None:
            f, e = _conv(model.otherwise)
            vec = Vec(np.full(self.tables.size, f), np.full(self.tables.size, e), model.otherwise.denominator)
        else:
            vec = Vec(np.zeros(self.tables.size), np.full(self.tables.size, np.inf), None)
        qs = [vec.q]
        base = high << self.L
        for mask, value in self.worths.constants.items():
            qs.append(value.denominator)
            if mask >> self.L == high:
                f, e = _conv(value)
                vec.val[mask - base] = f
                vec.err[mask - base] = e
        if high == 0:
            vec.val[0], vec.err[0] = 0.0, 0.0
        vec.q = _lcm(*qs)
        _undecided_where_overflow(vec.val, vec.err)
        return vec

    # -------------------------------------------------------------- nodes
    def _const(self, value: Fraction) -> Vec:
        f, e = _conv(value)
        return Vec(f, e, value.denominator)

    def _eval(self, expr: ast.Expr) -> Vec:
        if not depends_on_coalition(expr):
            try:
                return self._const(evaluate(expr, self.env))
            except EvaluationError:
                # a constant division by zero: every coalition is undecided and
                # the exact evaluator reports it with its span
                return Vec(0.0, np.inf, None)
        match expr:
            case ast.Member(item=item):
                i = self.model.index(item)
                if i < self.L:
                    return Vec(self.tables.bit(i), 0.0, 1)
                return Vec(1.0 if item in self._high_members else 0.0, 0.0, 1)
            case ast.Call(func="count"):
                return Vec(self.tables.count_table() + float(len(self._high_members)), 0.0, 1)
            case ast.Call(func=func, args=args) if is_aggregate(expr):
                return self._aggregate(func, args[0].item)
            case ast.Call(func=func, args=args):
                parts = [self._eval(a) for a in args]
                op = np.maximum if func == "max" else np.minimum
                val, err = parts[0].val, parts[0].err
                for p in parts[1:]:
                    val, err = op(val, p.val), np.maximum(err, p.err)
                return Vec(val, err, _lcm(*(p.q for p in parts)))
            case ast.Neg(operand=o):
                v = self._eval(o)
                return Vec(-v.val, v.err, v.q)
            case ast.Not(operand=o):
                t, unc = self._truth(self._eval(o))
                return Vec((~t).astype(np.float64), np.where(unc, 1.0, 0.0), 1)
            case ast.If(cond=c, then=t, otherwise=o):
                truth, unc = self._truth(self._eval(c))
                a, b = self._eval(t), self._eval(o)
                val = np.where(truth, a.val, b.val)
                chosen = np.where(truth, a.err, b.err)
                # an undecided condition may pick either branch
                spread = np.abs(np.asarray(a.val) - np.asarray(b.val)) + np.maximum(a.err, b.err)
                err = np.where(unc, spread * SAFETY, chosen)
                return Vec(val, err, _lcm(a.q, b.q))
            case ast.Chain(first=first, rest=rest):
                acc = self._eval(first)
                for op, operand in rest:
                    b = self._eval(operand)
                    acc = self._logic(op, acc, b) if op in ("and", "or") else self._arith(op, acc, b, operand)
                return acc
            case ast.Binary(op=op, left=l, right=r):
                return self._compare(op, self._eval(l), self._eval(r))
        raise TypeError(f"cannot vectorise {expr!r}")

    def _aggregate(self, func: str, attr: str) -> Vec:
        exact = self.model.attributes[attr]
        high_values = [exact[p] for p in self._high_members]
        q = lcm(*(v.denominator for v in exact.values()))
        if func == "sum":
            table, err = self.tables.sum_table(attr)
            hf, he = _conv(sum(high_values, Fraction(0)))
            val = table + hf
            bound = (err + he + U * (float(np.max(np.abs(table))) + abs(hf))) * SAFETY
            return Vec(val, bound, q)
        table, err = self.tables.extreme_table(attr, func)
        if high_values:
            hf, he = _conv(max(high_values) if func == "max" else min(high_values))
            op = np.maximum if func == "max" else np.minimum
            return Vec(op(table, hf), max(err, he), q)
        # the empty coalition has no extreme; give it 0 (it is never judged)
        val = np.where(np.isfinite(table), table, 0.0)
        return Vec(val, err, q)

    @staticmethod
    def _truth(v: Vec):
        val, err = np.asarray(v.val), np.asarray(v.err)
        truth = val != 0
        # written so that a NaN (from values past the float range) is undecided
        unc = ~((err == 0) | (np.abs(val) > err))
        return truth, unc

    def _logic(self, op: str, a: Vec, b: Vec) -> Vec:
        ta, ua = self._truth(a)
        tb, ub = self._truth(b)
        if op == "and":
            val = ta & tb
            # a certainly-false side decides the result on its own
            decided = (~ta & ~ua) | (~tb & ~ub)
        else:
            val = ta | tb
            decided = (ta & ~ua) | (tb & ~ub)
        unc = (ua | ub) & ~decided
        return Vec(val.astype(np.float64), np.where(unc, 1.0, 0.0), 1)

    @staticmethod
    def _compare(op: str, a: Vec, b: Vec) -> Vec:
        av, bv = np.asarray(a.val), np.asarray(b.val)
        tol = (np.asarray(a.err) + np.asarray(b.err)) * (1 + 4 * U)
        with np.errstate(all="ignore"):
            diff = np.abs(av - bv)
        # written so that a NaN (from values past the float range) is undecided
        unc = ~((tol == 0) | (diff > tol))
        compare = {
            "==": np.equal, "!=": np.not_equal, "<": np.less,
            "<=": np.less_equal, ">": np.greater, ">=": np.greater_equal,
        }[op]
        result = compare(av, bv)
        if np.any(unc) and a.q is not None and b.q is not None:
            # Both sides are multiples of 1/q: where the error bound is below
            # 1/(4q) the exact numerators are the rounded ones, so ties (a sum
            # landing exactly on a threshold) are decided exactly.
            q = lcm(a.q, b.q)
            if q <= 2**40:
                with np.errstate(all="ignore"):
                    exact = unc & (tol * q < 0.25) & (np.maximum(np.abs(av), np.abs(bv)) * q < MAX_EXACT)
                    an, bn = np.rint(av * q), np.rint(bv * q)
                result = np.where(exact, compare(an, bn), result)
                unc = unc & ~exact
        return Vec(result.astype(np.float64), np.where(unc, 1.0, 0.0), 1)

    def _arith(self, op: str, a: Vec, b: Vec, right: ast.Expr) -> Vec:
        av, bv, ae, be = a.val, b.val, a.err, b.err
        with np.errstate(all="ignore"):
            if op in ("+", "-"):
                val = av + bv if op == "+" else av - bv
                err = (ae + be + U * np.abs(val)) * SAFETY
                return Vec(val, err, _lcm(a.q, b.q))
            if op == "*":
                val = av * bv
                err = (np.abs(av) * be + np.abs(bv) * ae + ae * be + U * np.abs(val)) * SAFETY
                q = None if a.q is None or b.q is None else a.q * b.q
                return Vec(val, err, q)
            # division: undecided wherever the divisor may be zero
            absb = np.abs(bv)
            safe = absb > be
            val = np.where(safe, av / np.where(safe, bv, 1.0), 0.0)
            err = np.where(
                safe,
                ((np.abs(av) * be + absb * ae) / (absb * (absb - be)) + U * np.abs(val)) * SAFETY,
                np.inf,
            )
            q = None
            if not depends_on_coalition(right) and a.q is not None:
                divisor = evaluate(right, self.env)
                if divisor != 0:
                    q = a.q * abs(divisor.numerator)
            return Vec(val, err, q)


@dataclass
class ExcessChunk:
    """Excesses of one chunk of coalitions.

    `e_num`/`v_num` are exact integer numerators over `e_den`/`v_den` when
    the chunk was recovered exactly, else None (then `e`, `e_err`, `v`,
    `v_err` bound the exact values).
    """

    masks: np.ndarray
    e: np.ndarray
    e_err: np.ndarray
    v: np.ndarray
    v_err: np.ndarray
    e_num: np.ndarray | None
    e_den: int | None
    v_num: np.ndarray | None
    v_den: int | None


def _recover(val: np.ndarray, err: np.ndarray, q: int | None) -> np.ndarray | None:
    """Exact numerators over q, or None when the bounds do not pin them down."""
    if q is None or q > 2**40:
        return None
    if not np.all(np.isfinite(err)) or float(np.max(err)) * q >= 0.25:
        return None
    scaled = val * q
    if float(np.max(np.abs(scaled))) >= MAX_EXACT:
        return None
    return np.rint(scaled).astype(np.int64)


def excess_chunks(worths: Worths, payouts: list[Fraction], low_bits: int | None = None,
                  highs=None) -> Iterator[ExcessChunk]:
    """The excess e(S) of every coalition (including the empty and the full
    one: callers skip them), chunk by chunk; only the chunks whose high
    prefixes `highs` yields, in its order, when it is given."""
    evaluator = Evaluator(worths, low_bits)
    model = worths.model
    L = evaluator.L
    conv = [_conv(x) for x in payouts]
    pay_table = evaluator.tables._doubling([c[0] for c in conv[:L]], np.add, 0.0)
    pay_err = sum(c[1] for c in conv[:L]) + L * U * sum(abs(c[0]) for c in conv[:L])
    q_pay = lcm(*(x.denominator for x in payouts))
    sign = float(excess_sign(model.kind))
    for high in range(evaluator.chunk_count) if highs is None else highs:
        w = evaluator.worth_chunk(high)
        high_paid = sum((payouts[L + i] for i in range(model.n - L) if high >> i & 1), Fraction(0))
        hf, he = _conv(high_paid)
        paid = pay_table + hf
        paid_err = (pay_err + he + U * (np.abs(pay_table) + abs(hf))) * SAFETY
        with np.errstate(all="ignore"):
            e = sign * (w.val - paid)
            e_err = (w.err + paid_err + U * np.abs(e)) * SAFETY
        _undecided_where_overflow(e, e_err)
        v_num = _recover(w.val, w.err, w.q)
        e_num = e_den = None
        if v_num is not None:
            e_den = lcm(w.q, q_pay)
            e_num = _recover(e, e_err, e_den)
            if e_num is None:
                e_den = None
        yield ExcessChunk(evaluator.masks(high), e, e_err, w.val, w.err, e_num, e_den, v_num, w.q if v_num is not None else None)


def worth_table(worths: Worths) -> tuple[np.ndarray, tuple[np.ndarray, int] | None]:
    """Every worth (raw sign, as written) as floats, plus exact numerators when
    they could be recovered for all coalitions. Used to build a `Game`."""
    evaluator = Evaluator(worths)
    parts, nums, q_all = [], [], None
    exact_ok = True
    for high in range(evaluator.chunk_count):
        w = evaluator.worth_chunk(high)
        val = w.val.copy()
        # solvers trust these floats to within a small margin: where the bound
        # is loose (an undecided branch, a divisor that may be zero) take the
        # exact worth instead; a real division by zero raises here
        loose = np.nonzero(~(w.err <= 1e-12 * (1.0 + np.abs(val))))[0]
        base = high << evaluator.L
        for i in loose:
            if base + int(i):
                val[i] = _float_or_inf(worths.exact(base + int(i)))
        parts.append(val)
        if exact_ok:
            num = _recover(w.val, w.err, w.q)
            if num is None:
                exact_ok = False
            else:
                nums.append(num)
                q_all = w.q
    floats = np.concatenate(parts)
    floats[0] = 0.0
    scaled = (np.concatenate(nums), q_all) if exact_ok else None
    return floats, scaled
