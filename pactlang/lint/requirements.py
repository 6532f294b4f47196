"""`LintContext` -> warnings about requirements: negative-bound, unmeetable-requirement (proven)."""

from __future__ import annotations

from ..verdict_rules import allowed_excess, bound_ratio, is_relative
from fractions import Fraction

from .. import ast
from ..numbers import human
from .context import MAX_PAIRS_PARTIES, LintContext, all_worths
from .rules import coalition_text, diag


def check_requirements(ctx: LintContext):
    for req in ctx.of(ast.Require):
        if req.kind not in ("stable", "within"):
            continue
        proof = _unmeetable(ctx, req) if ctx.model is not None else None
        if proof is not None:
            yield diag("unmeetable-requirement", f"no payout can meet `{ast.requirement_text(req)}`: {proof}",
                        req.span)
        elif req.kind == "within" and req.bound.value < 0:
            yield diag("negative-bound", f"the bound of `{ast.requirement_text(req)}` is below zero",
                        req.bound.span or req.span)


def _split_candidates(req: ast.Require, sign: int, w: list[int], scale: int, full: int) -> list[list[int]]:
    """The best split of the parties into two coalitions, searched in integers
    (`w` = worths times `scale`); [] when no split proves anything."""
    best, best_parts = None, []
    ratio, relative = bound_ratio(req), is_relative(req)
    for s in range(1, full, 2):  # s holds party 0: each split once
        c = full ^ s
        total = sign * (w[s] + w[c] - w[full])  # the excess sum, times scale
        # room = ratio * (|w_s| + |w_c|) when relative, else 2 * ratio; all times scale
        weight = abs(w[s]) + abs(w[c]) if relative else 2 * scale
        margin = total * ratio.denominator - ratio.numerator * weight
        if margin > 0 and (best is None or margin > best):
            best, best_parts = margin, [[s, c]]
    return best_parts


def _unmeetable(ctx: LintContext, req: ast.Require) -> str | None:
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
        return allowed_excess(req, w)

    def gap(parts, worth) -> tuple[Fraction, Fraction] | None:
        worths = [worth(p) for p in parts]
        if any(w is None for w in worths):
            return None
        return sign * (sum(worths, Fraction(0)) - wall), sum((allowed(w) for w in worths), Fraction(0))

    candidates = [[1 << i for i in range(m.n)]]
    table = all_worths(ctx) if m.n <= MAX_PAIRS_PARTIES else None
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
        named = [f"`{coalition_text(m.names_of(p))}`" for p in parts]
        who = ", ".join(named[:-1]) + " and " + named[-1]
    return (f"under every split of worth(all) the excesses of {who} add up to {human(total)}, "
            f"above the {human(room)} the bound allows them")
