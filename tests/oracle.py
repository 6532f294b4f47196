"""Random small agreements as (text, independent meaning), and a brute-force oracle.

The generator builds each agreement twice: as `.deal` text for pactlang, and
as plain Python data and closures that the oracle evaluates with Fractions
over every coalition. Nothing here imports pactlang's evaluator, so the
property tests compare two independent computations.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from typing import Callable

from hypothesis import strategies as st

NAMES = ["ann", "bo", "cy", "dee", "eli", "fay", "gus", "hal"]


def dec(value: Fraction) -> str:
    """A terminating Fraction as decimal text."""
    from decimal import Decimal

    text = format(Decimal(value.numerator) / Decimal(value.denominator), "f")
    return text


@dataclass
class Spec:
    kind: str
    parties: list[str]
    attrs: dict[str, list[Fraction]]
    params: dict[str, Fraction]
    formula_text: str | None
    formula: Callable[[list[int]], Fraction] | None
    table: dict[int, Fraction]
    otherwise: Fraction | None
    fixed: dict[int, tuple[str, Callable[[Fraction], Fraction]]]
    rule: tuple[str, str | None] | None  # ("equal"|"proportional", attr), scope by `rule_scope`
    rule_scope: str | None
    requirements: list[tuple[str, Fraction | None, str]] = field(default_factory=list)

    @property
    def n(self) -> int:
        return len(self.parties)

    def text(self) -> str:
        lines = ['agreement "random"', f"shares {self.kind}"]
        for i, p in enumerate(self.parties):
            attrs = ", ".join(f"{a} {dec(v[i])}" for a, v in self.attrs.items())
            lines.append(f"party {p}" + (f": {attrs}" if attrs else ""))
        for name, value in self.params.items():
            lines.append(f"param {name} = {dec(value)}")
        if self.formula_text:
            lines.append(f"worth S = {self.formula_text}")
        for mask, value in self.table.items():
            members = ", ".join(p for i, p in enumerate(self.parties) if mask >> i & 1)
            lines.append(f"worth {{{members}}} = {dec(value)}")
        if self.otherwise is not None:
            lines.append(f"worth otherwise = {dec(self.otherwise)}")
        for i, (text, _) in self.fixed.items():
            lines.append(f"payout {self.parties[i]} = {text}")
        if self.rule:
            kind, attr = self.rule
            words = "equal split" if kind == "equal" else f"proportional to {attr}"
            lines.append(f"payout {'rest ' if self.rule_scope == 'rest' else ''}by {words}")
        for _, _, text in self.requirements:
            lines.append(f"require {text}")
        return "\n".join(lines) + "\n"

    # ------------------------------------------------------------ oracle
    def worth(self, mask: int) -> Fraction:
        if mask in self.table:
            return self.table[mask]
        if self.formula is not None:
            return self.formula([i for i in range(self.n) if mask >> i & 1])
        return self.otherwise

    def payouts(self) -> list[Fraction]:
        full = (1 << self.n) - 1
        wall = self.worth(full)
        x: list[Fraction | None] = [None] * self.n
        for i, (_, fn) in self.fixed.items():
            x[i] = fn(wall)
        if self.rule:
            rest = [i for i in range(self.n) if x[i] is None]
            remaining = wall - sum(v for v in x if v is not None)
            kind, attr = self.rule
            if kind == "equal":
                for i in rest:
                    x[i] = remaining / len(rest)
            else:
                w = self.attrs[attr]
                total = sum(w[i] for i in rest)
                for i in rest:
                    x[i] = remaining * w[i] / total
        return x

    def excess(self, mask: int, x) -> Fraction:
        paid = sum(x[i] for i in range(self.n) if mask >> i & 1)
        w = self.worth(mask)
        return w - paid if self.kind == "value" else paid - w


def oracle(spec: Spec, top: int = 5) -> list[dict]:
    """Expected (status, worst_excess, counterexamples) per requirement."""
    x = spec.payouts()
    n, full = spec.n, (1 << spec.n) - 1
    budget = spec.excess(full, x)
    out = []
    for kind, bound, _ in spec.requirements:
        if kind == "budget":
            out.append({"status": "holds" if budget == 0 else "fails", "worst": budget,
                        "cex": [] if budget == 0 else [(tuple(range(n)), budget)]})
            continue
        if kind == "rational":
            ex = [(spec.excess(1 << i, x), i) for i in range(n)]
            worst = max(e for e, _ in ex)
            bad = sorted(((-e, i) for e, i in ex if e > 0))
            out.append({"status": "fails" if bad else "holds", "worst": worst,
                        "cex": [((i,), -e) for e, i in bad][:top]})
            continue
        rows = []
        for mask in range(1, full):
            e = spec.excess(mask, x)
            allowed = Fraction(0) if kind == "stable" else (bound if kind == "within" else bound * abs(spec.worth(mask)))
            rows.append((e, mask, e > allowed))
        worst = max(e for e, _, _ in rows)
        viol = sorted(((-e, bin(m).count("1"), m) for e, m, bad in rows if bad))
        cex = [] if budget == 0 else [(tuple(range(n)), budget)]
        cex += [(tuple(i for i in range(n) if m >> i & 1), -ne) for ne, _, m in viol]
        out.append({"status": "fails" if cex else "holds", "worst": worst, "cex": cex[:top]})
    return out


# ---------------------------------------------------------------- strategies

def decimals(lo=-20, hi=20, places=2):
    return st.integers(lo * 10**places, hi * 10**places).map(lambda k: Fraction(k, 10**places))


@st.composite
def expressions(draw, n: int, attrs: dict[str, list[Fraction]], params: dict[str, Fraction], depth: int = 0,
                linear: bool = False):
    """(text, closure over the member list) for a random formula; with
    `linear`, only shapes the integer program expresses exactly (products
    with a constant or a membership, division by a constant)."""
    leaf_only = depth >= 3
    choice = draw(st.sampled_from(
        ["num", "param", "sum", "max", "min", "count", "member"] if leaf_only else
        ["num", "param", "sum", "max", "min", "count", "member", "add", "sub", "mul", "divc", "divcount",
         "if", "minmax", "neg"]))
    if linear and choice in ("mul", "divcount"):
        choice = "scale" if choice == "mul" else "membermul"
    if choice == "scale":
        t, f = draw(expressions(n, attrs, params, depth + 1, linear))
        c = draw(decimals(-5, 5, 2))
        return f"({dec(c)}) * ({t})", (lambda m: c * f(m))
    if choice == "membermul":
        i = draw(st.integers(0, n - 1))
        t, f = draw(expressions(n, attrs, params, depth + 1, linear))
        return f"({NAMES[i]} in S) * ({t})", (lambda m, i=i: f(m) if i in m else Fraction(0))
    if choice == "num":
        v = draw(decimals(-10, 10, 2))
        return (f"({dec(v)})" if v < 0 else dec(v)), (lambda m, v=v: v)
    if choice == "param" and params:
        name = draw(st.sampled_from(sorted(params)))
        v = params[name]
        return name, (lambda m, v=v: v)
    if choice in ("sum", "max", "min") and attrs:
        a = draw(st.sampled_from(sorted(attrs)))
        values = attrs[a]
        if choice == "sum":
            return f"sum({a} in S)", (lambda m, v=values: sum((v[i] for i in m), Fraction(0)))
        fn = max if choice == "max" else min
        return f"{choice}({a} in S)", (lambda m, v=values, fn=fn: fn(v[i] for i in m))
    if choice == "count" or choice in ("param", "sum", "max", "min"):
        return "count(S)", (lambda m: Fraction(len(m)))
    if choice == "member":
        i = draw(st.integers(0, n - 1))
        return f"{NAMES[i]} in S", (lambda m, i=i: Fraction(1 if i in m else 0))
    if choice == "neg":
        t, f = draw(expressions(n, attrs, params, depth + 1, linear))
        return f"-({t})", (lambda m: -f(m))
    if choice in ("add", "sub", "mul"):
        t1, f1 = draw(expressions(n, attrs, params, depth + 1, linear))
        t2, f2 = draw(expressions(n, attrs, params, depth + 1, linear))
        op = {"add": "+", "sub": "-", "mul": "*"}[choice]
        fn = {"add": lambda a, b: a + b, "sub": lambda a, b: a - b, "mul": lambda a, b: a * b}[choice]
        return f"({t1}) {op} ({t2})", (lambda m: fn(f1(m), f2(m)))
    if choice == "divc":
        t, f = draw(expressions(n, attrs, params, depth + 1, linear))
        c = draw(st.sampled_from([Fraction(2), Fraction(3), Fraction(7), Fraction(1, 4), Fraction(3, 2)]))
        return f"({t}) / {dec(c)}", (lambda m: f(m) / c)
    if choice == "divcount":
        t, f = draw(expressions(n, attrs, params, depth + 1, linear))
        return f"({t}) / count(S)", (lambda m: f(m) / len(m))
    if choice == "if":
        t1, f1 = draw(expressions(n, attrs, params, depth + 1, linear))
        t2, f2 = draw(expressions(n, attrs, params, depth + 1, linear))
        t3, f3 = draw(expressions(n, attrs, params, depth + 1, linear))
        t4, f4 = draw(expressions(n, attrs, params, depth + 1, linear))
        op = draw(st.sampled_from(["<", "<=", ">", ">=", "==", "!="]))
        cmp = {"<": lambda a, b: a < b, "<=": lambda a, b: a <= b, ">": lambda a, b: a > b,
               ">=": lambda a, b: a >= b, "==": lambda a, b: a == b, "!=": lambda a, b: a != b}[op]
        joiner = draw(st.sampled_from(["", "and", "or", "not"]))
        if joiner == "and":
            cond_t, cond = f"({t1}) {op} ({t2}) and count(S) >= 2", (lambda m: cmp(f1(m), f2(m)) and len(m) >= 2)
        elif joiner == "or":
            cond_t, cond = f"({t1}) {op} ({t2}) or {NAMES[0]} in S", (lambda m: cmp(f1(m), f2(m)) or 0 in m)
        elif joiner == "not":
            cond_t, cond = f"not ({t1}) {op} ({t2})", (lambda m: not cmp(f1(m), f2(m)))
        else:
            cond_t, cond = f"({t1}) {op} ({t2})", (lambda m: cmp(f1(m), f2(m)))
        return f"if {cond_t} then {t3} else {t4}", (lambda m: f3(m) if cond(m) else f4(m))
    t1, f1 = draw(expressions(n, attrs, params, depth + 1, linear))
    t2, f2 = draw(expressions(n, attrs, params, depth + 1, linear))
    which = draw(st.sampled_from(["max", "min"]))
    fn = max if which == "max" else min
    return f"{which}({t1}, {t2})", (lambda m: fn(f1(m), f2(m)))


@st.composite
def specs(draw, min_n: int = 2, max_n: int = 8, kinds=("cost", "value"), linear: bool = False):
    """A random agreement with its independent meaning (`linear`: see `expressions`)."""
    n = draw(st.integers(min_n, max_n))
    kind = draw(st.sampled_from(kinds))
    parties = NAMES[:n]
    attr_names = draw(st.sampled_from([[], ["w"], ["w", "z"]]))
    attrs = {a: [draw(decimals(0, 50, 1)) for _ in range(n)] for a in attr_names}
    # proportional payouts need positive weights
    for a in attrs:
        attrs[a] = [v + Fraction(1, 10) for v in attrs[a]]
    params = {"k": draw(decimals(0, 5, 1))} if draw(st.booleans()) else {}
    mode = draw(st.sampled_from(["formula", "formula", "table", "otherwise"]))
    formula_text = formula = otherwise = None
    table: dict[int, Fraction] = {}
    full = (1 << n) - 1
    if mode == "formula":
        formula_text, formula = draw(expressions(n, attrs, params, linear=linear))
        for mask in draw(st.lists(st.integers(1, full), max_size=3, unique=True)):
            table[mask] = draw(decimals(-30, 60, 2))
    elif mode == "table":
        for mask in range(1, full + 1):
            table[mask] = draw(decimals(0, 100, 1))
    else:
        otherwise = draw(decimals(0, 10, 1))
        for mask in draw(st.lists(st.integers(1, full), max_size=4, unique=True)):
            table[mask] = draw(decimals(0, 40, 1))
    fixed = {}
    how = draw(st.sampled_from(["all-fixed", "rest-equal", "rest-prop", "by-equal", "by-prop"]))
    if how in ("rest-prop", "by-prop") and not attr_names:
        how = "rest-equal" if how == "rest-prop" else "by-equal"
    fixed_count = n if how == "all-fixed" else (draw(st.integers(0, n - 1)) if how.startswith("rest") else 0)
    for i in draw(st.permutations(range(n)))[:fixed_count]:
        form = draw(st.sampled_from(["num", "pct", "share"]))
        if form == "num":
            v = draw(decimals(-10, 40, 2))
            fixed[i] = (dec(v), lambda wall, v=v: v)
        elif form == "pct":
            p = draw(st.integers(0, 100))
            fixed[i] = (f"{p}%", lambda wall, p=p: wall * p / 100)
        else:
            c = draw(decimals(0, 1, 2))
            fixed[i] = (f"{dec(c)} * worth(all)", lambda wall, c=c: c * wall)
    rule = scope = None
    if how != "all-fixed":
        scope = "rest" if how.startswith("rest") else "all"
        rule = ("equal", None) if how.endswith("equal") else ("proportional", draw(st.sampled_from(attr_names)))
    reqs = []
    for _ in range(draw(st.integers(1, 3))):
        which = draw(st.sampled_from(["stable", "within", "pct", "rational", "budget"]))
        if which == "stable":
            reqs.append(("stable", None, "stable"))
        elif which == "within":
            e = draw(decimals(-2, 20, 2))
            reqs.append(("within", e, f"stable within {dec(e)}"))
        elif which == "pct":
            p = draw(st.integers(0, 50))
            reqs.append(("pct", Fraction(p, 100), f"stable within {p}%"))
        elif which == "rational":
            reqs.append(("rational", None, "individually rational"))
        else:
            reqs.append(("budget", None, "balanced budget"))
    return Spec(kind, parties, attrs, params, formula_text, formula, table, otherwise, fixed, rule, scope, reqs)
