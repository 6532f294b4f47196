"""`Result`s of the stability check -> diagnostics on the requirement lines.

A requirement that fails becomes an error saying why (the worst coalition,
its excess, and a payout total that misses worth(all)); one that is unknown
becomes a warning with the reason. Requirements that hold show nothing.
"""

from __future__ import annotations

from fractions import Fraction

from .. import ast
from ..diagnostics import Diagnostic
from ..model import Model
from ..numbers import human
from ..results import FAILS, HOLDS, Result


def unit_text(model: Model) -> str:
    """The unit as a suffix for amounts, ` kEUR`, or nothing."""
    return f" {model.unit}" if model.unit else ""


def coalition_text(names) -> str:
    """Party names as a coalition in backticks, `` `{a, b}` ``."""
    return "`{" + ", ".join(names) + "}`"


def _scenario_parties(model: Model, contingency: str | None) -> tuple[str, ...]:
    gone = set()
    for c in model.contingencies:
        if c.name == contingency:
            gone = {line.party.name for line in c.lines if isinstance(line, ast.Without)}
    return tuple(p for p in model.parties if p not in gone)


def _at(parameters: dict[str, Fraction]) -> str:
    if not parameters:
        return ""
    return " at " + ", ".join(f"{k} = {human(v)}" for k, v in sorted(parameters.items()))


def explain(result: Result, model: Model) -> str:
    """Why a requirement fails: the worst coalition and its excess (with the
    allowance and the values of ranged quantities where they matter), and a
    payout total that misses worth(all)."""
    unit = unit_text(model)
    everyone = _scenario_parties(model, result.contingency)
    budget = next((c for c in result.counterexamples if c.coalition == everyone), None)
    budget_text = "" if budget is None else (
        f"the payouts add up to {human(budget.payout)}{unit}, "
        f"worth(all) is {human(budget.worth)}{unit}{_at(budget.parameters)}")
    if result.requirement == "balanced budget" or not result.worst_coalition or result.worst_excess is None:
        return budget_text or "see the counterexamples of `pactlang check`"
    worst = f"worst coalition {coalition_text(result.worst_coalition)} has excess {human(result.worst_excess)}{unit}"
    match = next((c for c in result.counterexamples if c.coalition == result.worst_coalition), None)
    if match is None:  # no coalition gains too much: only the budget is off
        return f"{budget_text} ({worst})" if budget_text else worst
    if match.allowed:
        worst += f" (allowed {human(match.allowed)}{unit})"
    worst += _at(match.parameters)
    return f"{worst}; {budget_text}" if budget_text else worst


def verdict_diagnostics(results: list[Result], model: Model) -> list[tuple[tuple, Diagnostic]]:
    """A diagnostic on the requirement for every result that is not `holds`:
    an error when it fails, a warning when it is unknown; keyed by the
    requirement's span and text so it can be carried to the next version."""
    out = []
    for r in results:
        if r.status == HOLDS or r.span is None:
            continue
        where = f" under `{r.contingency}`" if r.contingency else ""
        if r.status == FAILS:
            d = Diagnostic("requirement-fails", "error", f"`{r.requirement}` fails{where}: {explain(r, model)}", r.span)
        else:
            d = Diagnostic("requirement-unknown", "warning",
                           f"`{r.requirement}` is unknown{where}: {r.reason or 'no reason was given'}", r.span)
        out.append(((r.span, r.requirement), d))
    return out
