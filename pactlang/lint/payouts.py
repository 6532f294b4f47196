"""`LintContext` -> warnings about payout lines and the weights of `proportional to` rules.

Rules: zero-weights, negative-weight, shares-over-100, shares-under-100,
nothing-left, payout-exceeds-total.
"""

from __future__ import annotations

from fractions import Fraction

from .. import ast
from ..numbers import human
from .context import LintContext
from .rules import diag, percent_text


def check_proportional_weights(ctx: LintContext):
    m = ctx.model
    if m is None or m.payouts.rule is None or m.payouts.rule.kind != "proportional":
        return
    attr = m.payouts.rule.attribute.name
    scope = [p for p in m.parties if m.payouts.scope == "all" or p not in m.payouts.fixed]
    weights = {p: m.attributes.get(attr, {}).get(p) for p in scope}
    if any(w is None for w in weights.values()) or not scope:
        return
    if sum(weights.values()) == 0:
        yield diag("zero-weights", f"the `{attr}` weights of the parties this rule pays add up to zero",
                    m.payouts.rule.span)
    for p, w in weights.items():
        if w < 0:
            decl = ctx.declared_attributes.get(attr, {}).get(p)
            yield diag("negative-weight", f"party `{p}` has a negative weight `{attr} {human(w)}`",
                        decl.value.span if decl else m.party_spans.get(p))


def check_shares(ctx: LintContext):
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
        yield diag("shares-over-100",
                    f"the fixed payouts add up to {percent_text(ratio)} of worth(all) ({human(total)} of {human(wall)})",
                    tipping.span)
    elif ratio == 1 and rest:
        yield diag("nothing-left", "the fixed payouts already take all of worth(all), "
                    "so the `payout rest` rule shares nothing", m.payouts.span)
    elif ratio < 1 and m.payouts.rule is None:
        yield diag("shares-under-100",
                    f"the payouts add up to {percent_text(ratio)} of worth(all) ({human(total)} of {human(wall)})",
                    lines[0].span)


def _percent_shares(ctx: LintContext):
    """Without a model: bare percentages in payout lines only."""
    lines = [s for s in ctx.of(ast.PayoutFixed) if isinstance(s.expr, ast.Percent)]
    total = sum((s.expr.value for s in lines), Fraction(0))
    if total > 1:
        yield diag("shares-over-100", f"the fixed payout percentages add up to {percent_text(total)}", lines[-1].span)
    elif total == 1 and ctx.of(ast.PayoutRest) and len(lines) < len(ctx.of(ast.PartyDecl)):
        yield diag("nothing-left", "the fixed payouts already take 100%, so the `payout rest` rule shares nothing",
                    ctx.of(ast.PayoutRest)[0].span)


def check_payout_magnitude(ctx: LintContext):
    m = ctx.model
    if m is None or not ctx.worth_all or ctx.fixed_payouts is None:
        return
    wall = ctx.worth_all
    for party, amount in ctx.fixed_payouts.items():
        if abs(amount) > abs(wall):
            yield diag("payout-exceeds-total",
                        f"the payout of `{party}` ({human(amount)}) is larger than worth(all) ({human(wall)})",
                        m.payouts.fixed[party].span)
