"""`Model` + ranged quantities -> Z3 terms for worths, payouts and excesses; Z3 models -> exact values.

One Boolean per party says whether it is in the coalition; one real per
ranged quantity (an attribute of a party, a param, or the worth of a listed
coalition) stands for its value. Worth formulas and payout clauses are
encoded exactly in the meaning of `formula.evaluate`: truth values are 1 and
0, any non-zero number is true, `if` takes one branch, a listed worth beats
the formula.

Everything that does not depend on a Z3 variable is folded to a Fraction on
the way, so a fixed coalition gives a term in the ranged quantities only.
Products are distributed over `if` and sums when one factor does not depend
on a ranged quantity (`rate * sum(load in S)` becomes a sum of `if`s with
linear leaves): the query then stays linear and Z3's optimizer can be used.
Products of two ranged terms and divisions by non-constant terms are kept as
they are and mark the encoding `nonlinear`.

Payouts are kept as numerators over one common denominator `den` (1, or the
sum of the weights of a proportional rule when a weight is ranged, or the sum
of remaining benefits of the scrb rule), so the excess of any coalition is
`excess_num / den` with `den` proved positive before any query relies on it.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from math import factorial
from typing import Callable

import z3

from . import ast
from .formula import is_aggregate
from .model import Model
from .verdict_rules import excess_sign

MAX_SHAPLEY_PARTIES = 10  # the Shapley value under ranges needs all 2**n worths as terms


@dataclass(frozen=True)
class Ranged:
    """One ranged quantity of a contingency.

    `kind` is "attribute" (`attribute` of `party`), "param" (`param`) or
    "worth" (`mask`, in the scenario's party order). `key` is the name shown
    to users: `draft of north_quay`, `overrun`, `worth {a, b}`.
    """

    key: str
    kind: str
    low: Fraction
    high: Fraction
    attribute: str | None = None
    party: str | None = None
    param: str | None = None
    mask: int | None = None


class Unsupported(Exception):
    """The agreement cannot be encoded (the reason is worth printing)."""


def real(value: Fraction) -> z3.ArithRef:
    """An exact Z3 rational."""
    value = Fraction(value)
    return z3.RealVal(f"{value.numerator}/{value.denominator}")


def fraction_of(term: z3.ExprRef) -> Fraction | None:
    """The exact value of a Z3 rational numeral, else None."""
    if z3.is_rational_value(term):
        return Fraction(term.numerator_as_long(), term.denominator_as_long())
    if z3.is_int_value(term):
        return Fraction(term.as_long())
    return None


Num = Fraction | z3.ArithRef
Truth = bool | z3.BoolRef


class Encoding:
    """The Z3 terms of one scenario (an agreement after the fixed lines of a
    contingency) with its ranged quantities left free."""

    def __init__(self, model: Model, ranged: list[Ranged]):
        self.model = model
        self.ranged = ranged
        self.nonlinear = False
        self.divisors: list[tuple[z3.ArithRef, str]] = []  # (term, what it is): proved non-zero before use
        self.member = [z3.Bool(f"member {p}") for p in model.parties]
        self.var = {r.key: z3.Real(r.key) for r in ranged}
        self._theta_ids = {v.get_id() for v in self.var.values()}
        self._deps: dict[int, tuple[z3.ExprRef, bool]] = {}
        self._attr = {(r.attribute, r.party): self.var[r.key] for r in ranged if r.kind == "attribute"}
        self._param = {r.param: self.var[r.key] for r in ranged if r.kind == "param"}
        self.ranges = [c for r in ranged for c in (self.var[r.key] >= real(r.low), self.var[r.key] <= real(r.high))]
        self._entries = self._listed_worths()
        self.scrb_parts = None  # (s, r, sum r, v(N) - sum s) while `scrb_form` is to be chosen
        self.worth_all = self.worth_of(model.full)
        self.pay_num, self.den = self._payouts()

    # ------------------------------------------------------------ algebra
    def depends_on_range(self, term) -> bool:
        """Whether a term reads a ranged quantity."""
        if isinstance(term, (Fraction, bool)):
            return False
        key = term.get_id()
        hit = self._deps.get(key)
        if hit is not None:
            return hit[1]
        if key in self._theta_ids:
            result = True
        else:
            result = any(self.depends_on_range(c) for c in term.children())
        self._deps[key] = (term, result)
        return result

    @staticmethod
    def z(value: Num) -> z3.ArithRef:
        return real(value) if isinstance(value, Fraction) else value

    @staticmethod
    def zb(value: Truth) -> z3.BoolRef:
        return z3.BoolVal(value) if isinstance(value, bool) else value

    def add(self, *terms: Num) -> Num:
        const = sum((t for t in terms if isinstance(t, Fraction)), Fraction(0))
        rest = [t for t in terms if not isinstance(t, Fraction)]
        if not rest:
            return const
        if const != 0:
            rest.append(real(const))
        return rest[0] if len(rest) == 1 else z3.Sum(rest)

    def neg(self, a: Num) -> Num:
        return -a if isinstance(a, Fraction) else self.scale(a, Fraction(-1))

    def scale(self, a: Num, k: Fraction) -> Num:
        if isinstance(a, Fraction):
            return a * k
        if k == 0:
            return Fraction(0)
        if k == 1:
            return a
        return real(k) * a

    def mul(self, a: Num, b: Num) -> Num:
        if isinstance(a, Fraction):
            return self.scale(b, a)
        if isinstance(b, Fraction):
            return self.scale(a, b)
        # keep the range-free factor as the tree so its leaves are numbers
        if self.depends_on_range(a) and not self.depends_on_range(b):
            a, b = b, a
        return self._distribute(a, b)

    def _distribute(self, tree: z3.ArithRef, factor: Num) -> Num:
        """tree * factor, pushed into the `if`s and sums of `tree`."""
        value = fraction_of(tree)
        if value is not None:
            return self.scale(factor, value)
        if z3.is_app_of(tree, z3.Z3_OP_ITE):
            c, t, e = tree.children()
            return self.ite(c, self._distribute(t, factor), self._distribute(e, factor))
        if z3.is_app_of(tree, z3.Z3_OP_ADD):
            return self.add(*(self._distribute(c, factor) for c in tree.children()))
        if z3.is_app_of(tree, z3.Z3_OP_SUB):
            first, *others = tree.children()
            return self.add(self._distribute(first, factor), *(self.neg(self._distribute(c, factor)) for c in others))
        if z3.is_app_of(tree, z3.Z3_OP_UMINUS):
            return self.neg(self._distribute(tree.children()[0], factor))
        if z3.is_app_of(tree, z3.Z3_OP_MUL):
            kids = tree.children()
            consts = [fraction_of(c) for c in kids]
            k = Fraction(1)
            for v in consts:
                if v is not None:
                    k *= v
            others = [c for c, v in zip(kids, consts) if v is None]
            if len(others) == 1 and k != 1:
                return self.scale(self._distribute(others[0], factor), k)
        if isinstance(factor, Fraction):
            return self.scale(tree, factor)
        if z3.is_app_of(factor, z3.Z3_OP_ITE) or z3.is_app_of(factor, z3.Z3_OP_ADD):
            if not self.depends_on_range(tree):
                return self._distribute(factor, tree)
        self.nonlinear = True
        return tree * factor

    def div(self, a: Num, b: Num, span=None) -> Num:
        if isinstance(b, Fraction):
            if b == 0:
                raise Unsupported("division by zero" + (f" at line {span.line}" if span else ""))
            return self.scale(a, 1 / b)
        where = f" at line {span.line}" if span else ""
        self.divisors.append((b, f"the divisor{where}"))
        self.nonlinear = True
        return self.z(a) / b

    def ite(self, c: Truth, a: Num, b: Num) -> Num:
        if isinstance(c, bool):
            return a if c else b
        if isinstance(a, Fraction) and isinstance(b, Fraction) and a == b:
            return a
        return z3.If(c, self.z(a), self.z(b))

    def number(self, value) -> Num:
        """A truth value as 1/0; numbers pass through."""
        if isinstance(value, bool):
            return Fraction(int(value))
        if isinstance(value, z3.BoolRef):
            return z3.If(value, real(Fraction(1)), real(Fraction(0)))
        return value

    def truth(self, value) -> Truth:
        """A number as a truth value (non-zero is true); truth values pass through."""
        if isinstance(value, (bool, z3.BoolRef)):
            return value
        if isinstance(value, Fraction):
            return value != 0
        return value != 0

    def compare(self, op: str, a: Num, b: Num) -> Truth:
        if isinstance(a, Fraction) and isinstance(b, Fraction):
            return {"==": a == b, "!=": a != b, "<": a < b, "<=": a <= b, ">": a > b, ">=": a >= b}[op]
        a, b = self.z(a), self.z(b)
        return {"==": a == b, "!=": a != b, "<": a < b, "<=": a <= b, ">": a > b, ">=": a >= b}[op]

    def both(self, a: Truth, b: Truth) -> Truth:
        if isinstance(a, bool):
            return b if a else False
        if isinstance(b, bool):
            return a if b else False
        return z3.And(a, b)

    def either(self, a: Truth, b: Truth) -> Truth:
        if isinstance(a, bool):
            return True if a else b
        if isinstance(b, bool):
            return True if b else a
        return z3.Or(a, b)

    def negate(self, a: Truth) -> Truth:
        return (not a) if isinstance(a, bool) else z3.Not(a)

    def larger(self, a: Num, b: Num, func: str) -> Num:
        """max(a, b) or min(a, b)."""
        if isinstance(a, Fraction) and isinstance(b, Fraction):
            return max(a, b) if func == "max" else min(a, b)
        return self.ite(self.compare(">=" if func == "max" else "<=", a, b), a, b)

    # ------------------------------------------------------------ expressions
    def attribute(self, attr: str, party: str) -> Num:
        return self._attr.get((attr, party), self.model.attributes[attr][party])

    def param(self, name: str) -> Num:
        return self._param.get(name, self.model.params[name])

    def expr(self, e: ast.Expr, members: Callable[[int], Truth] | None, worth_all: Num | None = None,
             percent_base: Num | None = None):
        """The term of an expression. `members(i)` says whether party i is in
        the coalition (a bool for a fixed coalition, a Z3 Boolean otherwise)."""
        rec = lambda x: self.expr(x, members, worth_all, percent_base)  # noqa: E731
        num = lambda x: self.number(rec(x))  # noqa: E731
        match e:
            case ast.Num(value=v):
                return v
            case ast.Percent(value=v):
                return v if percent_base is None else self.mul(v, percent_base)
            case ast.Name(name=name):
                return self.param(name)
            case ast.WorthOfAll():
                return worth_all
            case ast.Member(item=item):
                return members(self.model.index(item))
            case ast.Neg(operand=o):
                return self.neg(num(o))
            case ast.Not(operand=o):
                return self.negate(self.truth(rec(o)))
            case ast.If(cond=c, then=t, otherwise=o):
                cond = self.truth(rec(c))
                if isinstance(cond, bool):
                    return num(t) if cond else num(o)
                return self.ite(cond, num(t), num(o))
            case ast.Call(func="count"):
                return self.add(*(self.number(members(i)) for i in range(self.model.n)))
            case ast.Call(func=func, args=args) if is_aggregate(e):
                return self._aggregate(func, args[0].item, members)
            case ast.Call(func=func, args=args):
                values = [num(a) for a in args]
                result = values[0]
                for v in values[1:]:
                    result = self.larger(result, v, func)
                return result
            case ast.Chain(first=first, rest=rest) if rest[0][0] in ("and", "or"):
                combine = self.both if rest[0][0] == "and" else self.either
                acc = self.truth(rec(first))
                for _, operand in rest:
                    acc = combine(acc, self.truth(rec(operand)))
                return acc
            case ast.Chain(first=first, rest=rest) if rest[0][0] in ("+", "-"):
                return self.add(num(first), *(num(x) if op == "+" else self.neg(num(x)) for op, x in rest))
            case ast.Chain(first=first, rest=rest):
                acc = num(first)
                for k, (op, operand) in enumerate(rest):
                    b = num(operand)
                    acc = self.mul(acc, b) if op == "*" else self.div(acc, b, e.prefix_span(k))
                return acc
            case ast.Binary(op=op, left=l, right=r):
                return self.compare(op, num(l), num(r))
        raise Unsupported(f"cannot encode {type(e).__name__}")

    def _aggregate(self, func: str, attr: str, members) -> Num:
        parties = self.model.parties
        values = [self.attribute(attr, p) for p in parties]
        inside = [members(i) for i in range(len(parties))]
        if func == "sum":
            return self.add(*(self.ite(m, v, Fraction(0)) for m, v in zip(inside, values)))
        chosen = [(m, v) for m, v in zip(inside, values) if m is not False]
        if all(isinstance(m, bool) for m, _ in chosen):
            result = None
            for _, v in chosen:
                result = v if result is None else self.larger(result, v, func)
            return Fraction(0) if result is None else result  # the empty coalition is never judged
        # fixed values: an `if` chain from the most extreme down; ranged ones folded in pairwise
        fixed = [(m, v) for m, v in chosen if isinstance(v, Fraction)]
        ranged = [(m, v) for m, v in chosen if not isinstance(v, Fraction)]
        fixed.sort(key=lambda mv: mv[1], reverse=(func == "max"))
        result: Num = Fraction(0)
        for m, v in reversed(fixed):
            result = self.ite(m, v, result)
        present: Truth = False
        for m, _ in fixed:
            present = self.either(present, m)
        for m, v in ranged:
            better = self.either(self.negate(present), self.compare(">=" if func == "max" else "<=", v, result))
            result = self.ite(self.both(m, better), v, result)
            present = self.either(present, m)
        return result

    # ------------------------------------------------------------ worths
    def _listed_worths(self) -> dict[int, Num]:
        """Worths that do not come from the formula, by mask, in precedence order."""
        model = self.model
        entries: dict[int, Num] = {}
        for mask, e in model.table.items():
            entries[mask] = self.number(self.expr(e, None))
        if model.grand is not None and model.full not in entries:
            entries[model.full] = self.number(self.expr(model.grand, None))
        entries.update(model.pinned)
        for r in self.ranged:
            if r.kind == "worth":
                entries[r.mask] = self.var[r.key]
        return entries

    def _formula(self, members) -> Num:
        model = self.model
        if model.formula is not None:
            return self.number(self.expr(model.formula.expr, members))
        if model.otherwise is not None:
            return model.otherwise
        return Fraction(0)  # every non-empty coalition is listed; only the empty one lands here

    def worth_of(self, mask: int) -> Num:
        """The worth of a fixed coalition, a term in the ranged quantities."""
        if mask in self._entries:
            return self._entries[mask]
        return self._formula(lambda i: bool(mask >> i & 1))

    def worth(self) -> Num:
        """The worth of the coalition given by the membership Booleans."""
        result = self._formula(lambda i: self.member[i])
        for mask, value in reversed(list(self._entries.items())):
            result = self.ite(self.is_coalition(mask), value, result)
        return result

    def ranks_before(self, mask: int) -> z3.BoolRef:
        """The coalitions that come before `mask` in the checker's order for ties:
        fewer members, or as many and a smaller mask (party i is bit i)."""
        k = bin(mask).count("1")
        weighted = [(b, 1) for b in self.member]
        smaller = []
        for i in range(len(self.member) - 1, -1, -1):
            if mask >> i & 1:
                higher = [b if mask >> j & 1 else z3.Not(b) for j, b in enumerate(self.member) if j > i]
                smaller.append(z3.And(z3.Not(self.member[i]), *higher))
        fewer = z3.PbLe(weighted, k - 1) if k > 0 else z3.BoolVal(False)
        return z3.Or(fewer, z3.And(z3.PbEq(weighted, k), z3.Or(smaller) if smaller else z3.BoolVal(False)))

    def is_coalition(self, mask: int) -> z3.BoolRef:
        return z3.And([b if mask >> i & 1 else z3.Not(b) for i, b in enumerate(self.member)])

    # ------------------------------------------------------------ payouts
    def _payouts(self) -> tuple[list[Num], Num]:
        model = self.model
        n = model.n
        wall = self.worth_all
        pay: list[Num | None] = [None] * n
        for name, line in model.payouts.fixed.items():
            pay[model.index(name)] = self.number(self.expr(line.expr, None, worth_all=wall, percent_base=wall))
        rule = model.payouts.rule
        if rule is None:
            return pay, Fraction(1)
        rest = [i for i in range(n) if pay[i] is None] if model.payouts.scope == "rest" else list(range(n))
        if not rest:
            return pay, Fraction(1)
        remaining = self.add(wall, *(self.neg(x) for x in pay if x is not None))
        if rule.kind == "equal":
            for i in rest:
                pay[i] = self.scale(remaining, Fraction(1, len(rest)))
            return pay, Fraction(1)
        if rule.kind == "proportional":
            weights = {i: self.attribute(rule.attribute.name, model.parties[i]) for i in rest}
            total = self.add(*weights.values())
            if isinstance(total, Fraction):
                if total == 0:
                    raise Unsupported(f"`proportional to {rule.attribute.name}`: the weights add up to zero")
                for i in rest:
                    pay[i] = self.scale(self.mul(remaining, weights[i]), 1 / total)
                return pay, Fraction(1)
            # remaining * w_i / total: numerators over the common denominator total
            self.divisors.append((total, f"the sum of `{rule.attribute.name}` over the parties it shares among"))
            self.nonlinear = True
            for i in range(n):
                pay[i] = self.mul(remaining, weights[i]) if i in rest else self.mul(pay[i], total)
            return pay, total
        if rule.kind == "shapley":
            return self._shapley(), Fraction(1)
        if rule.kind == "scrb":
            return self._scrb()
        raise Unsupported(
            "the nucleolus is not linear in the worths, so no finite set of values in the ranges "
            "stands for all of them; fix the ranged values to check it")

    def _shapley(self) -> list[Num]:
        """The Shapley value: a fixed linear combination of the 2**n worths, so it
        is exact in the ranged quantities whatever the worth formula is."""
        n = self.model.n
        if n > MAX_SHAPLEY_PARTIES:
            raise Unsupported(f"the Shapley value under ranges needs every coalition; "
                              f"{n} parties is above {MAX_SHAPLEY_PARTIES}")
        weight = [Fraction(factorial(s) * factorial(n - s - 1), factorial(n)) for s in range(n)]
        worth = [Fraction(0)] + [self.worth_of(m) for m in range(1, 1 << n)]
        result = []
        for i in range(n):
            bit = 1 << i
            const, terms = Fraction(0), []
            for mask in range(1 << n):
                if mask & bit:
                    continue
                w = weight[bin(mask).count("1")]
                diff_terms = [worth[mask | bit], self.neg(worth[mask])]
                for t in diff_terms:
                    t = self.scale(t, w)
                    if isinstance(t, Fraction):
                        const += t
                    else:
                        terms.append(t)
            result.append(self.add(const, *terms))
        return result

    def _scrb(self) -> tuple[list[Num], Num]:
        """Separable costs remaining benefits: s_i = v(N) - v(N minus i),
        r_i = v({i}) - s_i, x_i = s_i + (v(N) - sum s) r_i / sum r (the same
        formula in cost and value form, since it commutes with negation)."""
        model = self.model
        n, full = model.n, model.full
        wall = self.worth_all
        sep = [self.add(wall, self.neg(self.worth_of(full & ~(1 << i)))) for i in range(n)]
        rem = [self.add(self.worth_of(1 << i), self.neg(sep[i])) for i in range(n)]
        total = self.add(*rem)
        left = self.add(wall, *(self.neg(s) for s in sep))
        if isinstance(total, Fraction):
            if total == 0:
                if isinstance(left, Fraction) and left == 0:
                    return sep, Fraction(1)  # nothing remains to share
                raise Unsupported("separable costs remaining benefits: the remaining benefits add up to zero")
            return [self.add(sep[i], self.scale(self.mul(left, rem[i]), 1 / total)) for i in range(n)], Fraction(1)
        # whether the sum can be zero is decided by queries (`scrb_form`); until
        # then the payouts read it as never zero
        self.scrb_parts = (sep, rem, total, left)
        self._nonlinear_worths = self.nonlinear
        self.nonlinear = True
        return [self.add(self.mul(sep[i], total), self.mul(left, rem[i])) for i in range(n)], total

    def scrb_form(self, zero: str) -> None:
        """Separable costs remaining benefits once it is known whether the sum of
        the remaining benefits r is zero somewhere in the ranges (`zero`: "never",
        "always", "sometimes" or "sometimes, changing sign"). Where sum r = 0 the
        rule gives x_i = s_i, as it does for fixed values (defined only where the
        non-separable part is zero there too, which the caller has proved):
        - never: numerators over the common denominator sum r;
        - always: x_i = s_i, denominator 1;
        - "sometimes, positive" / "sometimes, negative": each payout an `if` on
          sum r = 0, over the denominator sum r where it is not zero and +1 or
          -1 (the sign sum r has elsewhere) where it is, so the denominator
          keeps one sign for `orient`;
        - "sometimes, changing sign": numerators and denominator multiplied by
          sum r too (the denominator is then (sum r)^2 or 1, positive)."""
        sep, rem, total, left = self.scrb_parts
        n = len(sep)
        if zero == "never":
            self.divisors.append((total, "the sum of the remaining benefits"))
            return
        if zero == "always":
            self.pay_num, self.den = list(sep), Fraction(1)
            self.nonlinear = self._nonlinear_worths  # the payouts are the separable parts, as linear as the worths
            self.divisors = [d for d in self.divisors if d[0] is not total]
            return
        is_zero = self.compare("==", total, Fraction(0))
        nums = [self.add(self.mul(sep[i], total), self.mul(left, rem[i])) for i in range(n)]
        den: Num = total
        at_zero = Fraction(-1) if zero == "sometimes, negative" else Fraction(1)
        if zero == "sometimes, changing sign":
            nums = [self.mul(x, total) for x in nums]
            den = self.mul(total, total)
        self.pay_num = [self.ite(is_zero, self.scale(sep[i], at_zero), nums[i]) for i in range(n)]
        self.den = self.ite(is_zero, at_zero, den)

    # ------------------------------------------------------------ excess
    def orient(self, den_sign: int) -> None:
        """Make the common denominator positive (its sign was found at a point
        of the ranges and proved constant, since it is never zero on the box)."""
        if den_sign < 0:
            self.den = self.neg(self.den)
            self.pay_num = [self.neg(p) for p in self.pay_num]

    def excess_num(self, worth: Num, members: Callable[[int], Truth]) -> Num:
        """excess * den for the coalition given by `members` with worth `worth`."""
        paid = self.add(*(self.ite(members(i), p, Fraction(0)) for i, p in enumerate(self.pay_num)))
        diff = self.add(self.mul(worth, self.den), self.neg(paid))
        return diff if excess_sign(self.model.kind) > 0 else self.neg(diff)

    def coalition_excess(self) -> tuple[Num, Num]:
        """(excess * den, worth) of the coalition given by the membership Booleans.

        When the denominator reads a ranged quantity, the worth is named by a
        real of its own, defined by an equation added to `ranges` (so every
        query carries it): the product worth * den is then a few monomials of
        that real instead of a copy of den in every leaf of the worth's `if`s,
        which nonlinear arithmetic handles far better."""
        w = self.worth()
        if not isinstance(self.den, Fraction) and not isinstance(w, Fraction):
            named = z3.Real("worth of the coalition")
            self.ranges.append(named == w)
            w = named
        return self.excess_num(w, lambda i: self.member[i]), w

    def fixed_excess(self, mask: int) -> tuple[Num, Num]:
        """(excess * den, worth) of one fixed coalition."""
        w = self.worth_of(mask)
        return self.excess_num(w, lambda i: bool(mask >> i & 1)), w

    @property
    def linear(self) -> bool:
        """Whether every term is linear (then Z3's optimizer gives exact suprema)."""
        return not self.nonlinear and isinstance(self.den, Fraction)

    # ------------------------------------------------------------ decoding
    def mask_of(self, zmodel: z3.ModelRef) -> int:
        """The coalition of a Z3 model."""
        mask = 0
        for i, b in enumerate(self.member):
            if z3.is_true(zmodel.eval(b, model_completion=True)):
                mask |= 1 << i
        return mask

    def values_of(self, zmodel: z3.ModelRef) -> tuple[dict[str, Fraction], bool]:
        """The ranged values of a Z3 model as Fractions, and whether all were
        rational (an irrational one is replaced by a close rational in range)."""
        out, exact = {}, True
        for r in self.ranged:
            term = zmodel.eval(self.var[r.key], model_completion=True)
            value = fraction_of(term)
            if value is None:
                exact = False
                text = term.approx(30).as_fraction() if hasattr(term, "approx") else None
                value = Fraction(text) if text is not None else r.low
                value = min(max(value, r.low), r.high)
            out[r.key] = value
        return out, exact

    def at(self, term: Num, values: dict[str, Fraction]) -> Num:
        """A term with the ranged quantities replaced by values, simplified."""
        if isinstance(term, Fraction):
            return term
        pairs = [(self.var[k], real(v)) for k, v in values.items()]
        result = z3.simplify(z3.substitute(term, *pairs) if pairs else term)
        value = fraction_of(result)
        return result if value is None else value
