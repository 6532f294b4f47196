"""`ast.Document` (+ `Model` when it resolved) -> drafting warnings, no solver.

Each finding is a `Diagnostic` with a rule code from `RULES`, a span and a
help line. Lint never repeats what `resolve` reports as an error: with no
model (the agreement did not resolve) only the checks that need nothing but
the syntax run. Everything numeric is exact: worths and payouts come from
the same evaluator the checker uses, and a claim such as "no payout can meet
this requirement" is made only with an exact certificate.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from fractions import Fraction
from functools import cached_property
from math import lcm

from . import ast
from .diagnostics import Diagnostic, warning
from .formula import Env, EvaluationError, evaluate, walk
from .model import Model
from .format import Printer
from .numbers import human

MAX_PAIRS_PARTIES = 12  # checks over pairs of coalitions enumerate 3**n pairs
WHOLE_FILE = ast.Span(1, 1, 1, 2)
_PRINTER = Printer()


@dataclass(frozen=True)
class LintRule:
    """A lint rule: its code, what it catches, general advice and an example."""

    code: str
    summary: str
    help: str
    example: str


RULES: dict[str, LintRule] = {r.code: r for r in (
    LintRule("unused-attribute", "a party attribute that no formula or payout rule reads",
             "remove it, or read it in a `worth S` formula or a `proportional to` rule",
             "`party a: calls 3, berths 2` where nothing reads `berths`"),
    LintRule("unused-param", "a param that no worth or payout line reads",
             "remove it, or use it in a worth or payout line",
             "`param overrun = 1` that no expression mentions"),
    LintRule("uneven-attribute", "an attribute the agreement reads that some parties lack",
             "give every party the attribute, so the rule still applies if a fixed payout line goes",
             "`payout rest by proportional to calls` and a fixed-payout party without `calls`"),
    LintRule("zero-weights", "a `proportional to` rule whose weights add up to zero",
             "the rule cannot share anything; check the attribute values",
             "`payout rest by proportional to calls` where every paid party has `calls 0`"),
    LintRule("negative-weight", "a negative weight in a `proportional to` rule",
             "a negative weight turns a share into a charge; check the sign",
             "`party a: calls -5` with `payout by proportional to calls`"),
    LintRule("shares-over-100", "fixed payouts that add up to more than worth(all)",
             "the fixed lines give away more than the whole; check the percentages or amounts",
             "`payout a = 60%` and `payout b = 50%`"),
    LintRule("shares-under-100", "every party has a fixed payout and together they fall short of worth(all)",
             "the budget does not balance; adjust a line or pay the rest by a rule",
             "`payout a = 40%` and `payout b = 50%` with no other party"),
    LintRule("nothing-left", "fixed payouts that take all of worth(all) before a `payout rest` rule",
             "the parties paid by the rest rule get nothing; check the fixed lines",
             "`payout a = 100%` followed by `payout rest by equal split`"),
    LintRule("payout-exceeds-total", "one fixed payout larger than worth(all) itself",
             "a single payout beyond the whole is usually a unit or percentage slip",
             "`payout a = 1200` when worth(all) is 120"),
    LintRule("redundant-worth", "a worth table entry equal to what the formula already gives",
             "remove the line, or keep it as a deliberate note",
             "`worth {a} = 40` where `worth S = 40 * count(S)`"),
    LintRule("unreachable-worth", "a formula or `worth otherwise` that no coalition ever uses",
             "remove it: the table (or the formula) already covers every coalition",
             "`worth otherwise = 0` beside a `worth S = ...` formula"),
    LintRule("not-superadditive", "a value agreement where two disjoint coalitions earn more apart than together",
             "merging should never lose in a value agreement; check these worths",
             "`worth {a} = 5`, `worth {b} = 5`, `worth {a, b} = 8`"),
    LintRule("not-subadditive", "a cost agreement where two disjoint coalitions pay less apart than together",
             "working together should never cost more; check these worths",
             "`worth {a} = 5`, `worth {b} = 5`, `worth {a, b} = 12`"),
    LintRule("negative-bound", "`stable within` with a bound below zero",
             "a negative bound asks every coalition to be strictly better off inside; "
             "if that is not meant, drop the minus sign",
             "`require stable within -5`"),
    LintRule("unmeetable-requirement", "a stability requirement that no payout at all can meet (proven)",
             "loosen the bound or change the worths: the coalitions named gain this much under any split",
             "`require stable within -5` with `worth {a} = 5`, `worth {b} = 5`, `worth all = 10`"),
    LintRule("empty-contingency", "a contingency with no lines",
             "it repeats the baseline; add lines or remove it",
             "`contingency \"later\" {}`"),
    LintRule("duplicate-contingency-line", "the same line twice in one contingency",
             "remove the copy",
             "`contingency \"x\" { without a; without a }`"),
    LintRule("conflicting-contingency-lines", "two lines of one contingency that set the same quantity differently",
             "the lines of a contingency apply together; keep one, or split them into two contingencies",
             "`contingency \"x\" { overrun = 1; overrun in 2 .. 3 }`"),
    LintRule("ineffective-contingency-line", "a contingency line that cannot change anything",
             "remove it, or change what it varies",
             "`overrun = 1` when `param overrun = 1`, or varying an attribute nothing reads"),
    LintRule("identical-contingencies", "two contingencies with the same lines",
             "remove one of them",
             "`contingency \"a\" { without x }` and `contingency \"b\" { without x }`"),
)}


def _diag(code: str, message: str, span: ast.Span | None, help: str | None = None) -> Diagnostic:
    return warning(code, message, span or WHOLE_FILE, help or RULES[code].help)


def _names(members) -> str:
    return "{" + ", ".join(members) + "}"


def _pct(ratio: Fraction) -> str:
    return human(ratio * 100) + "%"


class _Context:
    """What the checks read: the document, the model if any, exact worths."""

    def __init__(self, doc: ast.Document, model: Model | None):
        self.doc = doc
        self.model = model
        self.stmts = doc.statements
        self._worths: dict[int, Fraction | None] = {}
        self.scaled: tuple[list[int], int] | None | bool = False  # False: not computed yet

    def of(self, kind) -> list:
        return [s for s in self.stmts if isinstance(s, kind)]

    @cached_property
    def formula(self) -> ast.WorthFormula | None:
        found = self.of(ast.WorthFormula)
        return found[0] if found else None

    @cached_property
    def attributes_read(self) -> set[str]:
        """Attributes an aggregate of the formula or a payout rule reads."""
        read = set()
        for f in self.of(ast.WorthFormula):
            for node in walk(f.expr):
                if isinstance(node, ast.Member) and node.coalition == f.var.name:
                    read.add(node.item)
        for line in self.of((ast.PayoutAll, ast.PayoutRest)):
            if line.rule.attribute is not None:
                read.add(line.rule.attribute.name)
        return read

    @cached_property
    def params_read(self) -> set[str]:
        read = set()
        for s in self.stmts:
            expr = getattr(s, "expr", None)
            if expr is not None:
                read.update(n.name for n in walk(expr) if isinstance(n, ast.Name))
        return read

    @cached_property
    def declared_params(self) -> dict[str, ast.ParamDecl]:
        out = {}
        for decl in self.of(ast.ParamDecl):
            out.setdefault(decl.name.name, decl)
        return out

    @cached_property
    def declared_attributes(self) -> dict[str, dict[str, ast.Attribute]]:
        """attribute -> party -> its declaration (first one wins, as in resolve)."""
        out: dict[str, dict[str, ast.Attribute]] = {}
        for party in self.of(ast.PartyDecl):
            for attr in party.attributes:
                out.setdefault(attr.name.name, {}).setdefault(party.name.name, attr)
        return out

    # ------------------------------------------------------------ exact values
    @cached_property
    def worth_all(self) -> Fraction | None:
        return self.worth(self.model.full) if self.model else None

    def worth(self, mask: int) -> Fraction | None:
        """The baseline worth of a coalition, None if it cannot be evaluated;
        read from the integer table once `_all_worths` has built it."""
        if isinstance(self.scaled, tuple):
            values, den = self.scaled
            return Fraction(values[mask], den)
        return self.exact_worth(mask)

    def exact_worth(self, mask: int) -> Fraction | None:
        """The baseline worth from the reference evaluator alone."""
        if mask not in self._worths:
            self._worths[mask] = self._worth(mask)
        return self._worths[mask]

    def _worth(self, mask: int) -> Fraction | None:
        m = self.model
        env = Env(m.params, m.attributes)
        try:
            if mask in m.table:
                return evaluate(m.table[mask], env)
            if mask == m.full and m.grand is not None:
                return evaluate(m.grand, env)
            return self.default_worth(mask)
        except EvaluationError:
            return None

    def default_worth(self, mask: int) -> Fraction | None:
        """What the formula, else `worth otherwise`, gives a coalition."""
        m = self.model
        if m.formula is not None:
            env = Env(m.params, m.attributes, tuple(m.names_of(mask)), m.formula.var.name)
            try:
                return evaluate(m.formula.expr, env)
            except EvaluationError:
                return None
        return m.otherwise

    @cached_property
    def fixed_payouts(self) -> dict[str, Fraction] | None:
        """The exact amount of every fixed payout line, None if one fails."""
        m, wall = self.model, self.worth_all
        if wall is None:
            return None
        env = Env(m.params, m.attributes, worth_all=wall, percent_base=wall)
        try:
            return {p: evaluate(line.expr, env) for p, line in m.payouts.fixed.items()}
        except EvaluationError:
            return None


# ---------------------------------------------------------------- unused names


def _did_you_mean(name: str, candidates) -> str:
    close = difflib.get_close_matches(name, sorted(candidates), n=1, cutoff=0.75)
    return f"; did you mean `{close[0]}`?" if close else ""


def _unused_attributes(ctx: _Context):
    read = ctx.attributes_read
    for name, by_party in ctx.declared_attributes.items():
        if name in read:
            continue
        first = next(iter(by_party.values()))
        hint = _did_you_mean(name, read & set(ctx.declared_attributes))
        yield _diag("unused-attribute", f"attribute `{name}` is never used", first.name.span,
                    RULES["unused-attribute"].help + hint)


def _unused_params(ctx: _Context):
    read = ctx.params_read
    for name, decl in ctx.declared_params.items():
        if name not in read:
            hint = _did_you_mean(name, read - set(ctx.declared_params))
            yield _diag("unused-param", f"param `{name}` is never used", decl.name.span,
                        RULES["unused-param"].help + hint)


def _uneven_attributes(ctx: _Context):
    if ctx.model is None:  # resolve reports the parties that need an attribute
        return
    m = ctx.model
    for name in sorted(ctx.attributes_read & set(m.attributes)):
        have = m.attributes[name]
        for party in m.parties:
            if party not in have:
                yield _diag("uneven-attribute",
                            f"party `{party}` has no `{name}`, which the other parties have",
                            m.party_spans.get(party))


def _proportional_weights(ctx: _Context):
    m = ctx.model
    if m is None or m.payouts.rule is None or m.payouts.rule.kind != "proportional":
        return
    attr = m.payouts.rule.attribute.name
    scope = [p for p in m.parties if m.payouts.scope == "all" or p not in m.payouts.fixed]
    weights = {p: m.attributes.get(attr, {}).get(p) for p in scope}
    if any(w is None for w in weights.values()) or not scope:
        return
    if sum(weights.values()) == 0:
        yield _diag("zero-weights", f"the `{attr}` weights of the parties this rule pays add up to zero",
                    m.payouts.rule.span)
    for p, w in weights.items():
        if w < 0:
            decl = ctx.declared_attributes.get(attr, {}).get(p)
            yield _diag("negative-weight", f"party `{p}` has a negative weight `{attr} {human(w)}`",
                        decl.value.span if decl else m.party_spans.get(p))


# ---------------------------------------------------------------- payouts


def _shares(ctx: _Context):
    m = ctx.model
    if m is None:
        yield from _percent_shares(ctx)
        return
    wall, fixed = ctx.worth_all, ctx.fixed_payouts
    if fixed is None or not fixed or not wall:
        return
    lines = list(m.payouts.fixed.values())
    total = sum(fixed.values(), Fraction(0))
    ratio = total / wall
    rest = m.payouts.scope == "rest" and len(fixed) < m.n
    if ratio > 1:
        running, tipping = Fraction(0), lines[-1]
        for line in lines:
            running += fixed[line.party.name]
            if running / wall > 1:
                tipping = line
                break
        yield _diag("shares-over-100",
                    f"the fixed payouts add up to {_pct(ratio)} of worth(all) ({human(total)} of {human(wall)})",
                    tipping.span)
    elif ratio == 1 and rest:
        yield _diag("nothing-left", "the fixed payouts already take all of worth(all), "
                    "so the `payout rest` rule shares nothing", m.payouts.span)
    elif ratio < 1 and m.payouts.rule is None:
        yield _diag("shares-under-100",
                    f"the payouts add up to {_pct(ratio)} of worth(all) ({human(total)} of {human(wall)})",
                    lines[0].span)


def _percent_shares(ctx: _Context):
    """Without a model: bare percentages in payout lines only."""
    lines = [s for s in ctx.of(ast.PayoutFixed) if isinstance(s.expr, ast.Percent)]
    total = sum((s.expr.value for s in lines), Fraction(0))
    if total > 1:
        yield _diag("shares-over-100", f"the fixed payout percentages add up to {_pct(total)}", lines[-1].span)
    elif total == 1 and ctx.of(ast.PayoutRest) and len(lines) < len(ctx.of(ast.PartyDecl)):
        yield _diag("nothing-left", "the fixed payouts already take 100%, so the `payout rest` rule shares nothing",
                    ctx.of(ast.PayoutRest)[0].span)


def _payout_magnitude(ctx: _Context):
    m = ctx.model
    if m is None or not ctx.worth_all or ctx.fixed_payouts is None:
        return
    wall = ctx.worth_all
    for party, amount in ctx.fixed_payouts.items():
        if abs(amount) > abs(wall):
            yield _diag("payout-exceeds-total",
                        f"the payout of `{party}` ({human(amount)}) is larger than worth(all) ({human(wall)})",
                        m.payouts.fixed[party].span)


# ---------------------------------------------------------------- worths


def _varied_inputs(ctx: _Context) -> tuple[set[str], set[tuple[str, str]]]:
    """Params and (attribute, party) pairs that some contingency changes."""
    params, attrs = set(), set()
    for c in ctx.of(ast.Contingency):
        for line in c.lines:
            if isinstance(line, (ast.ParamRange, ast.ParamFixed)):
                params.add(line.param.name)
            elif isinstance(line, (ast.AttrRange, ast.AttrFixed)):
                attrs.add((line.attribute.name, line.party.name))
    return params, attrs


def _redundant_worths(ctx: _Context):
    m = ctx.model
    if m is None or (m.formula is None and m.otherwise is None):
        return
    params, attrs = _varied_inputs(ctx)
    formula_params = {n.name for n in walk(m.formula.expr) if isinstance(n, ast.Name)} if m.formula else set()
    entries = [(mask, m.table[mask]) for mask in m.table]
    if m.grand is not None:
        entries.append((m.full, m.grand))
    for mask, expr in entries:
        members = m.names_of(mask)
        reads = formula_params | {n.name for n in walk(expr) if isinstance(n, ast.Name)}
        if reads & params or any((a, p) in attrs for a in ctx.attributes_read for p in members):
            continue  # a contingency moves the formula and the entry apart
        value, default = ctx.worth(mask), ctx.default_worth(mask)
        if value is not None and value == default:
            source = "formula" if m.formula is not None else "`worth otherwise`"
            yield _diag("redundant-worth", f"the {source} already gives {_names(members)} the worth {human(value)}",
                        m.table_spans.get(mask))


def _unreachable_worths(ctx: _Context):
    m = ctx.model
    if m is None:
        return
    otherwise = ctx.of(ast.WorthOtherwise)
    covered = len(m.table) + (1 if m.grand is not None and m.full not in m.table else 0)
    if covered == m.full:
        for line in ([m.formula] if m.formula else []) + otherwise[:1]:
            yield _diag("unreachable-worth", "the worth table lists every coalition, so this line is never used",
                        line.span)
    elif m.formula is not None and otherwise:
        yield _diag("unreachable-worth", "`worth otherwise` is never used: the formula gives every coalition "
                    "not in the table its worth", otherwise[0].span)


def _all_worths(ctx: _Context) -> tuple[list[int], int] | None:
    """Every worth times one common denominator (index = mask), and that
    denominator, so that sums compare exactly in integers; None when a worth
    cannot be evaluated. Computed once per context."""
    if ctx.scaled is False:
        ctx.scaled = _fast_worths(ctx) or _exact_worths(ctx)
    return ctx.scaled


def _fast_worths(ctx: _Context) -> tuple[list[int], int] | None:
    """The checker's vectorised table, when it recovered every worth exactly;
    spot-checked against the exact evaluator (and the exact path is used
    whenever anything about it is off: it only saves time)."""
    try:
        from .sweep import worth_table
        from .worths import Worths

        _, scaled = worth_table(Worths(ctx.model))
    except Exception:  # noqa: BLE001 - an optional speed-up; the exact path follows
        return None
    if scaled is None:
        return None
    nums, den = scaled
    values = [int(v) for v in nums]
    m = ctx.model
    if len(values) != m.full + 1:
        return None
    for mask in {1, m.full, m.full >> 1 or 1, (m.full // 3) or 1}:
        if Fraction(values[mask], den) != ctx.exact_worth(mask):
            return None
    return values, int(den)


def _exact_worths(ctx: _Context) -> tuple[list[int], int] | None:
    m = ctx.model
    values = [Fraction(0)]
    for mask in range(1, m.full + 1):
        w = ctx.exact_worth(mask)
        if w is None:
            return None
        values.append(w)
    scale = lcm(*(v.denominator for v in values))
    return [v.numerator * (scale // v.denominator) for v in values], scale


def _line_of(ctx: _Context, mask: int) -> ast.Span | None:
    m = ctx.model
    if mask in m.table_spans:
        return m.table_spans[mask]
    return m.formula.span if m.formula is not None else next(
        (s.span for s in ctx.of(ast.WorthOtherwise)), None)


def _superadditivity(ctx: _Context):
    m = ctx.model
    if m is None or m.n > MAX_PAIRS_PARTIES:
        return
    scaled = _all_worths(ctx)
    if scaled is None:
        return
    w, scale = scaled
    sign = 1 if m.kind == "value" else -1  # in value form merging must not lose
    full, worst, count = m.full, None, 0
    # 3**n / 2 pairs in plain integers: about 0.1 s at the 12-party limit
    for s in range(1, full + 1):
        rest = full ^ s
        t = rest
        while t > s:  # each unordered pair once: t > s
            loss = sign * (w[s] + w[t] - w[s | t])
            if loss > 0:
                count += 1
                if worst is None or loss > worst[0]:
                    worst = (loss, s, t)
            t = (t - 1) & rest
    if worst is None:
        return
    _, s, t = worst
    ws, wt, wu = (ctx.exact_worth(x) for x in (s, t, s | t))  # the printed numbers, re-evaluated
    if sign * (ws + wt - wu) <= 0:  # pragma: no cover - the table disagreed with the evaluator
        return
    names = [_names(m.names_of(x)) for x in (s, t, s | t)]
    more = f" ({count} such pairs)" if count > 1 else ""
    if m.kind == "value":
        code, verb, cmp = "not-superadditive", "is worth", "less than"
    else:
        code, verb, cmp = "not-subadditive", "costs", "more than"
    yield _diag(code, f"`{names[2]}` {verb} {human(wu)}, {cmp} `{names[0]}` and `{names[1]}` apart "
                f"({human(ws)} + {human(wt)} = {human(ws + wt)}){more}", _line_of(ctx, s | t))


# ---------------------------------------------------------------- requirements


def _requirements(ctx: _Context):
    for req in ctx.of(ast.Require):
        if req.kind not in ("stable", "within"):
            continue
        proof = _unmeetable(ctx, req) if ctx.model is not None else None
        if proof is not None:
            yield _diag("unmeetable-requirement", f"no payout can meet `{ast.requirement_text(req)}`: {proof}",
                        req.span)
        elif req.kind == "within" and req.bound.value < 0:
            yield _diag("negative-bound", f"the bound of `{ast.requirement_text(req)}` is below zero",
                        req.bound.span or req.span)


def _split_candidates(req: ast.Require, sign: int, w: list[int], scale: int, full: int) -> list[list[int]]:
    """The best split of the parties into two coalitions, searched in integers
    (`w` = worths times `scale`); [] when no split proves anything."""
    best, best_parts = None, []
    ratio = req.bound.value if req.kind == "within" else Fraction(0)
    relative = isinstance(req.bound, ast.Percent)
    for s in range(1, full, 2):  # s holds party 0: each split once
        c = full ^ s
        total = sign * (w[s] + w[c] - w[full])  # the excess sum, times scale
        # room = ratio * (|w_s| + |w_c|) when relative, else 2 * ratio; all times scale
        weight = abs(w[s]) + abs(w[c]) if relative else 2 * scale
        margin = total * ratio.denominator - ratio.numerator * weight
        if margin > 0 and (best is None or margin > best):
            best, best_parts = margin, [[s, c]]
    return best_parts


def _unmeetable(ctx: _Context, req: ast.Require) -> str | None:
    """A certificate that no budget-balanced payout meets the requirement.

    The excesses of the parts of any partition of the parties add up to the
    same number under every payout x with x(all) = worth(all) (value:
    sum v(part) - v(all); cost: c(all) - sum c(part)). If that sum is above
    the sum of the bounds the parts may have, no payout meets the
    requirement. Checked for the partition into single parties and, up to
    MAX_PAIRS_PARTIES parties, every split into two coalitions.
    """
    m = ctx.model
    wall = ctx.worth_all
    if wall is None:
        return None
    sign = 1 if m.kind == "value" else -1

    def allowed(w: Fraction) -> Fraction:
        if req.kind == "stable":
            return Fraction(0)
        return req.bound.value * abs(w) if isinstance(req.bound, ast.Percent) else req.bound.value

    def gap(parts, worth) -> tuple[Fraction, Fraction] | None:
        worths = [worth(p) for p in parts]
        if any(w is None for w in worths):
            return None
        return sign * (sum(worths, Fraction(0)) - wall), sum((allowed(w) for w in worths), Fraction(0))

    candidates = [[1 << i for i in range(m.n)]]
    table = _all_worths(ctx) if m.n <= MAX_PAIRS_PARTIES else None
    if table is not None:
        candidates.extend(_split_candidates(req, sign, *table, m.full))
    best = None
    for parts in candidates:
        found = gap(parts, ctx.worth)
        if found is not None and found[0] > found[1] and (best is None or found[0] - found[1] > best[0]):
            best = (found[0] - found[1], parts)
    if best is None:
        return None
    parts = best[1]
    found = gap(parts, ctx.exact_worth)  # the certificate, re-derived by the reference evaluator
    if found is None or not found[0] > found[1]:  # pragma: no cover - the table disagreed
        return None
    total, room = found
    if len(parts) > 4:
        who = "the single parties"
    else:
        named = [f"`{_names(m.names_of(p))}`" for p in parts]
        who = ", ".join(named[:-1]) + " and " + named[-1]
    return (f"under every split of worth(all) the excesses of {who} add up to {human(total)}, "
            f"above the {human(room)} the bound allows them")


# ---------------------------------------------------------------- contingencies


def _target(line) -> tuple:
    """What a contingency line changes."""
    match line:
        case ast.AttrRange() | ast.AttrFixed():
            return ("attr", line.attribute.name, line.party.name)
        case ast.ParamRange() | ast.ParamFixed():
            return ("param", line.param.name)
        case ast.WorthRange():
            return ("worth", frozenset(m.name for m in line.members))
        case ast.Without():
            return ("without", line.party.name)
    return ("?", id(line))


def _point(line) -> Fraction | None:
    """The single value a line pins its quantity to, if it does."""
    if isinstance(line, (ast.AttrFixed, ast.ParamFixed)):
        return line.value.value
    if isinstance(line, (ast.AttrRange, ast.ParamRange)) and line.low.value == line.high.value:
        return line.low.value
    return None


def _contingencies(ctx: _Context):
    seen_sets: dict[frozenset, str] = {}
    for c in ctx.of(ast.Contingency):
        if not c.lines:
            yield _diag("empty-contingency", f"contingency `{c.name}` has no lines", c.span)
            continue
        key = frozenset(c.lines)
        if key in seen_sets:
            yield _diag("identical-contingencies", f"contingency `{c.name}` has the same lines as `{seen_sets[key]}`",
                        c.span)
        else:
            seen_sets[key] = c.name
        yield from _contingency_lines(ctx, c)


def _contingency_lines(ctx: _Context, c: ast.Contingency):
    by_target: dict[tuple, object] = {}
    withdrawn = {line.party.name for line in c.lines if isinstance(line, ast.Without)}
    for line in c.lines:
        target = _target(line)
        earlier = by_target.get(target)
        if earlier is not None:
            if earlier == line:
                yield _diag("duplicate-contingency-line",
                            f"`{_PRINTER.fmt(line)}` is given twice in contingency `{c.name}`", line.span)
            else:
                yield _diag("conflicting-contingency-lines",
                            f"contingency `{c.name}` sets {_describe(target)} twice: "
                            f"`{_PRINTER.fmt(earlier)}` and `{_PRINTER.fmt(line)}`", line.span)
            continue
        by_target[target] = line
        reason = _ineffective(ctx, line, target, withdrawn)
        if reason:
            yield _diag("ineffective-contingency-line", reason, line.span)


def _describe(target: tuple) -> str:
    kind = target[0]
    if kind == "attr":
        return f"`{target[1]} of {target[2]}`"
    if kind == "param":
        return f"`{target[1]}`"
    if kind == "worth":
        return f"the worth of `{_names(sorted(target[1]))}`"
    return f"`without {target[1]}`"


def _ineffective(ctx: _Context, line, target: tuple, withdrawn: set[str]) -> str | None:
    kind = target[0]
    point = _point(line)
    if kind == "param":
        name = target[1]
        if name not in ctx.params_read and name in ctx.declared_params:
            return f"nothing reads `{name}`, so this line changes nothing"
        decl = ctx.declared_params.get(name)
        if decl is not None and point is not None and point == decl.value.value:
            return f"`{name}` is already {decl.value.text}"
    elif kind == "attr":
        attr, party = target[1], target[2]
        if party in withdrawn:
            return f"`{party}` leaves in this contingency (`without {party}`), so its `{attr}` does not matter"
        if attr not in ctx.attributes_read and attr in ctx.declared_attributes:
            return f"nothing reads `{attr}`, so this line changes nothing"
        decl = ctx.declared_attributes.get(attr, {}).get(party)
        if decl is not None and point is not None and point == decl.value.value:
            return f"`{attr} of {party}` is already {decl.value.text}"
    elif kind == "worth":
        gone = sorted(target[1] & withdrawn)
        if gone:
            return f"`{gone[0]}` leaves in this contingency, so no coalition with it is formed"
    return None


# ---------------------------------------------------------------- entry point

CHECKS = (
    _unused_attributes, _unused_params, _uneven_attributes, _proportional_weights, _shares,
    _payout_magnitude, _redundant_worths, _unreachable_worths, _superadditivity, _requirements,
    _contingencies,
)


def lint_model(doc: ast.Document, model: Model | None = None) -> list[Diagnostic]:
    """Drafting warnings for an agreement, ordered by position.

    `model` is the resolved agreement, or None when it did not resolve (then
    only the checks that need the syntax alone run, so that nothing repeats
    the resolver's errors).
    """
    ctx = _Context(doc, model)
    found: list[Diagnostic] = []
    for check in CHECKS:
        found.extend(check(ctx))
    return sorted(found, key=lambda d: (d.span.line, d.span.column, d.code))
