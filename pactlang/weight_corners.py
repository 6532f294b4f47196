"""`Scenario` with ranged proportional weights -> `Result`s merged over the corners of the weight box.

Ranged weights of a proportional rule that nothing else reads are taken at
the corners of their box, each corner a linear query or a plain enumeration
(`weight_ranges` gives the argument).
"""

from __future__ import annotations

from fractions import Fraction

from . import ast
from .check import CheckOptions, Checker
from .encode_z3 import Ranged
from .formula import walk
from .model import Model
from .ranged_check import RangedCheck
from .results import FAILS, HOLDS, UNKNOWN, Counterexample, Result
from .scenario import Scenario, corners
from .verdict_rules import counterexample_order, rank


def weight_ranges(scenario: Scenario) -> list[Ranged]:
    """The ranged weights of a proportional rule that nothing else reads.

    Why their corners suffice: with every other quantity and the coalition
    fixed, the payout of S is remaining * w(S) / w(all), a ratio of two affine
    functions of the weights whose denominator keeps one sign on the box (it
    is proved non-zero). Such a function is quasi-linear (monotone along every
    segment), so its largest and smallest values over the box sit at corners.
    The excess is a constant minus that payout, the allowed excess does not
    read the weights, and so a violation or a supremum anywhere in the box is
    matched or beaten at a corner. Each corner leaves a linear query.
    """
    model = scenario.model
    rule = model.payouts.rule
    if rule is None or rule.kind != "proportional":
        return []
    attr = rule.attribute.name
    exprs = ([model.formula.expr] if model.formula else []) + list(model.table.values())
    if model.grand is not None:
        exprs.append(model.grand)
    for e in exprs:
        for node in walk(e):
            if isinstance(node, ast.Member) and node.item == attr:
                return []  # the formula reads the weights too: no corner argument
    return [r for r in scenario.ranged if r.kind == "attribute" and r.attribute == attr]


def check_weight_corners(scenario: Scenario, weights: list[Ranged], options: CheckOptions, name: str) -> list[Result]:
    """Run the ranged check once per corner of the weight ranges and merge:
    fails if any corner fails, holds if every corner holds, the worst excess
    is the largest over the corners."""
    model = scenario.model
    rule = model.payouts.rule
    sharing = [p for p in model.parties if model.payouts.scope == "all" or p not in model.payouts.fixed]
    # the weight total is affine in the weights: its range over the box runs between corner values
    totals = [sum((corner.get(f"{rule.attribute.name} of {p}", model.attributes[rule.attribute.name][p])
                   for p in sharing), Fraction(0)) for corner in corners(weights)]
    if min(totals) <= 0 <= max(totals):
        reason = (f"the sum of `{rule.attribute.name}` over the parties it shares among can be zero in the ranges "
                  f"(it runs from {min(totals)} to {max(totals)})")
        return [Result(ast.requirement_text(r), r.span.line if r.span else 0, name, UNKNOWN, None, "z3",
                       reason=reason, span=r.span) for r in model.requirements]
    others = [r for r in scenario.ranged if r not in weights]
    runs = []
    count = 1 << len(weights)
    share = None if options.time_limit is None else options.time_limit / count
    sub_options = CheckOptions(top=options.top, time_limit=share if share is not None else None,
                               low_bits=options.low_bits, search=options.search)
    for corner in corners(weights):
        attrs = {(r.attribute, r.party): corner[r.key] for r in weights}
        sub = Scenario(scenario.model.with_values(attributes=attrs), others,
                       dict(scenario.fixed) | corner, scenario.notes)
        if others:
            runs.append(RangedCheck(sub, sub_options, name).run())
        else:
            runs.append(Checker(sub.model, sub_options, contingency=name, parameters=dict(sub.fixed)).run())
    merged = []
    for results in zip(*runs):
        merged.append(_merge(results, options.top, scenario.model))
    return merged


def _merge(results: tuple[Result, ...], top: int, model: Model) -> Result:
    first = results[0]
    failing = [r for r in results if r.status == FAILS]
    unknown = [r for r in results if r.status == UNKNOWN]
    worsts = [r.worst_excess for r in results]
    worst = None if any(w is None for w in worsts) else max(worsts)
    # of the corners reaching the worst excess, the one naming the first coalition in the
    # canonical order (fewest members, then smallest mask), as enumeration names it
    tied = [] if worst is None else [r for r in results if r.worst_excess == worst]
    named = [r for r in tied if r.worst_coalition is not None]
    at = (min(named, key=lambda r: rank(worst, model.mask_of(r.worst_coalition))) if named
          else tied[0] if tied else None)
    method = f"{first.method}, at every corner of the weight ranges"
    unproved = ", counterexamples not proved to be the worst ones (query or time limit reached)"
    if any(unproved in r.method for r in failing) and unproved not in method:
        method += unproved
    if failing:
        # one line per coalition (at its worst corner); an unbalanced budget first, as in the
        # baseline, then the checker's order: excess descending, coalition size, coalition mask
        # (not the order of the corners, so that ties read the same as without ranges)
        best: dict[tuple[str, ...], Counterexample] = {}
        for c in (c for r in failing for c in r.counterexamples):
            if c.coalition not in best or c.excess > best[c.coalition].excess:
                best[c.coalition] = c
        cex = sorted(best.values(), key=counterexample_order(model.mask_of, model.full))
        status, reason = FAILS, None
    elif unknown:
        cex, status, reason = [], UNKNOWN, unknown[0].reason
    else:
        cex, status, reason = [], HOLDS, None
    return Result(first.requirement, first.line, first.contingency, status, worst, method, reason=reason,
                  counterexamples=tuple(cex[:top]), span=first.span,
                  worst_coalition=at.worst_coalition if at is not None else None)
