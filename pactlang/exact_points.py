"""`Scenario` + values of its ranged quantities -> `Point`s: worth, payout and excess in Fractions.

The solver only proposes coalitions and values; every claim printed is about
a `Point` evaluated here from the model (`Model.with_values`, `Worths`,
`payout`), never about the solver's own arithmetic.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import z3

from . import ast
from .encode_z3 import fraction_of, real
from .formula import walk
from .scenario import Scenario
from .worths import Worths, excess, paid_by, payout

EXACT_CACHE_SIZE = 4096  # evaluated value sets kept before the cache starts over
NEAR_THRESHOLD = (10**3, 10**6)  # beside a threshold: at width / k of the range from it


@dataclass
class Point:
    """A coalition and values of the ranged quantities, evaluated exactly."""

    mask: int
    values: dict[str, Fraction]
    excess: Fraction
    worth: Fraction
    paid: Fraction


class ExactPoints:
    """Exact evaluation of one scenario at given values, and the local search
    that moves a witness to a point of larger excess."""

    def __init__(self, scenario: Scenario):
        self.scenario = scenario
        self.model = scenario.model
        self._cache: dict = {}
        self._candidates = self._breakpoints()
        self.enc = None
        self._terms: dict[int, tuple] = {}

    def attach(self, enc) -> None:
        """Read the thresholds of each coalition from the encoding (its
        denominator already made positive): they give the points where the
        excess of that coalition can jump."""
        self.enc = enc
        self._terms = {}

    def exact(self, values: dict[str, Fraction]) -> tuple[Worths, list[Fraction]]:
        """Worths and payouts of the agreement at these values, in Fractions."""
        key = tuple(sorted(values.items()))
        hit = self._cache.get(key)
        if hit is None:
            w = Worths(self.fixed_model(values))
            hit = (w, payout(w))
            if len(self._cache) > EXACT_CACHE_SIZE:
                self._cache.clear()
            self._cache[key] = hit
        return hit

    def fixed_model(self, values: dict[str, Fraction]):
        """The agreement with its ranged quantities at these values."""
        return self.scenario.at(values)

    def point(self, mask: int, values: dict[str, Fraction]) -> Point:
        """The coalition `mask` at these values, evaluated exactly."""
        w, pay = self.exact(values)
        worth = w.exact(mask)
        paid = paid_by(pay, mask) if mask != self.model.full else sum(pay, Fraction(0))
        return Point(mask, dict(values), excess(self.model, worth, paid), worth, paid)

    def _breakpoints(self) -> dict[str, list[Fraction]]:
        """Values worth trying for each ranged quantity when polishing a witness:
        its ends, and the numbers it is compared with in the formula."""
        model = self.model
        literals: set[Fraction] = set()
        exprs = [model.formula.expr] if model.formula else []
        exprs += list(model.table.values()) + [line.expr for line in model.payouts.fixed.values()]
        for e in exprs:
            for node in walk(e):
                if isinstance(node, ast.Num):
                    literals.add(node.value)
        out = {}
        for r in self.scenario.ranged:
            cands = {r.low, r.high}
            if r.kind == "attribute":
                cands |= set(model.attributes[r.attribute].values())
            cands |= literals
            out[r.key] = sorted(c for c in cands if r.low <= c <= r.high)
        return out

    def polish(self, p: Point, keep=lambda p: True) -> Point:
        """Coordinate ascent over the breakpoints: a witness from the solver is
        moved to a point of larger exact excess (still satisfying `keep`).
        The breakpoints of a coordinate are its ends, the numbers of the
        formula and, for the witness's coalition with the other coordinates
        held, the values where one of its thresholds (`if`, a comparison,
        `max`/`min`) is met exactly. Only guides the search; every claim is
        still decided by a query."""
        best = p
        for _ in range(3):
            improved = False
            for r in self.scenario.ranged:
                cands = set(self._candidates[r.key])
                width = r.high - r.low
                for t, _ in self.thresholds(best.mask, best.values, r):
                    # the threshold, and points just beside it: where the worst is on its open
                    # side they come as close to it as the excess allows
                    cands.update(c for k in NEAR_THRESHOLD for c in (t - width / k, t + width / k)
                                 if r.low <= c <= r.high)
                    cands.add(t)
                for c in sorted(cands):
                    if c == best.values[r.key]:
                        continue
                    trial = self.point(best.mask, best.values | {r.key: c})
                    if trial.excess > best.excess and keep(trial):
                        best, improved = trial, True
            if not improved:
                break
        return best

    # ------------------------------------------------------------ thresholds of one coalition
    def _coalition_terms(self, mask: int) -> tuple:
        """(excess * den, den, the comparisons in either) of one coalition, as Z3 terms."""
        hit = self._terms.get(mask)
        if hit is None:
            enc = self.enc
            num, _ = enc.fixed_excess(mask)
            num, den = enc.z(num), enc.z(enc.den)
            atoms, seen, stack = [], set(), [num, den]
            while stack:
                t = stack.pop()
                if t.get_id() in seen:
                    continue
                seen.add(t.get_id())
                if _is_comparison(t):
                    atoms.append(t)
                stack.extend(t.children())
            hit = (num, den, atoms)
            if len(self._terms) > EXACT_CACHE_SIZE:
                self._terms.clear()
            self._terms[mask] = hit
        return hit

    def thresholds(self, mask: int, values: dict[str, Fraction], r) -> list[tuple[Fraction, bool]]:
        """The values of the ranged quantity `r` in its range where a comparison
        of the coalition `mask` is met exactly, the others held at `values`;
        each with whether every comparison is linear along `r` (then the
        excess is continuous between consecutive thresholds)."""
        if self.enc is None:
            return []
        _, _, atoms = self._coalition_terms(mask)
        x = self.enc.var[r.key]
        others = [(self.enc.var[k], real(v)) for k, v in values.items() if k != r.key]
        out, linear = set(), True
        for atom in atoms:
            a, b = atom.children()
            d = z3.simplify(z3.substitute(a - b, *others) if others else a - b)
            deg = _degree(d, x)
            if deg is None or deg > 1:
                linear = False
                continue
            if deg == 0:
                continue
            d0 = fraction_of(z3.simplify(z3.substitute(d, (x, real(Fraction(0))))))
            d1 = fraction_of(z3.simplify(z3.substitute(d, (x, real(Fraction(1))))))
            if d0 is None or d1 is None or d1 == d0:
                continue
            root = -d0 / (d1 - d0)
            if r.low <= root <= r.high:
                out.add(root)
        return [(t, linear) for t in sorted(out)]

    def side_limits(self, mask: int, values: dict[str, Fraction]) -> list[tuple[Fraction, str, Fraction]]:
        """(limit of the excess, quantity, value) as one ranged quantity of the
        coalition approaches one of its thresholds from either side, the others
        held. Only where every comparison is linear along that quantity and no
        division by a ranged term is inside: the excess is then one rational
        function between consecutive thresholds, so each limit is a value the
        excess comes arbitrarily close to (a lower bound of the supremum)."""
        if self.enc is None:
            return []
        num, den, atoms = self._coalition_terms(mask)
        if _divides_by_a_term(num) or _divides_by_a_term(den):
            return []
        out = []
        for r in self.scenario.ranged:
            ts = self.thresholds(mask, values, r)
            if not ts or not all(lin for _, lin in ts):
                continue
            x = self.enc.var[r.key]
            others = [(self.enc.var[k], real(v)) for k, v in values.items() if k != r.key]
            points = sorted({r.low, r.high, *(t for t, _ in ts)})
            for lo, hi in zip(points, points[1:]):
                mid = (lo + hi) / 2
                at_mid = [*others, (x, real(mid))]
                truths = []
                for atom in atoms:
                    v = z3.simplify(z3.substitute(atom, *at_mid))
                    if not (z3.is_true(v) or z3.is_false(v)):
                        break
                    truths.append((atom, z3.BoolVal(z3.is_true(v))))
                else:
                    piece_num = z3.substitute(num, *truths) if truths else num
                    piece_den = z3.substitute(den, *truths) if truths else den
                    for end in (lo, hi):
                        at_end = [*others, (x, real(end))]
                        n_end = fraction_of(z3.simplify(z3.substitute(piece_num, *at_end)))
                        d_end = fraction_of(z3.simplify(z3.substitute(piece_den, *at_end)))
                        if n_end is not None and d_end:
                            out.append((n_end / d_end, r.key, end))
        return out


_COMPARISONS = (z3.Z3_OP_LE, z3.Z3_OP_LT, z3.Z3_OP_GE, z3.Z3_OP_GT, z3.Z3_OP_EQ)


def _is_comparison(t) -> bool:
    return (z3.is_app(t) and t.decl().kind() in _COMPARISONS and t.num_args() == 2
            and z3.is_arith(t.arg(0)))


def _degree(t, x) -> int | None:
    """The degree of a polynomial term in `x` (other variables count as
    constants after substitution), or None when it is not a polynomial."""
    if fraction_of(t) is not None:
        return 0
    if z3.is_const(t):
        return 1 if t.eq(x) else 0
    if not z3.is_app(t):
        return None
    kind = t.decl().kind()
    kids = [_degree(c, x) for c in t.children()]
    if any(k is None for k in kids):
        return None
    if kind in (z3.Z3_OP_ADD, z3.Z3_OP_SUB, z3.Z3_OP_UMINUS):
        return max(kids)
    if kind == z3.Z3_OP_MUL:
        return sum(kids)
    if kind == z3.Z3_OP_DIV and kids[1] == 0:
        return kids[0]
    if kind == z3.Z3_OP_TO_REAL:
        return kids[0]
    return None


def _divides_by_a_term(t) -> bool:
    seen, stack = set(), [t]
    while stack:
        u = stack.pop()
        if u.get_id() in seen:
            continue
        seen.add(u.get_id())
        if z3.is_app_of(u, z3.Z3_OP_DIV) and fraction_of(u.arg(1)) is None:
            return True
        stack.extend(u.children())
    return False
