"""`Model` + one contingency -> `Result`s: fixed values checked exactly, ranges proved with Z3.

The lines of a contingency apply together. Fixed values (`ATTR of PARTY =
X`, `PARAM = X`, a range whose ends agree) and withdrawals give a smaller or
changed agreement that the enumerating (or integer-programming) `Checker`
decides exactly. Ranges make each requirement a claim about every value in
them, decided by Z3 over one Boolean per party and one real per ranged
quantity (see `encode_z3`):

- `holds` only when Z3 proves that no coalition and no values violate it
  (unsat);
- `fails` only with counterexamples whose coalition and values are evaluated
  again in Fractions from the model (`Model.with_values`, `Worths`,
  `payout`) and confirmed to violate it;
- `unknown` with the reason otherwise (solver limit, time limit, a rule that
  cannot be decided under ranges).

Each requirement is settled first by a plain satisfiability query; the worst
violators are then ranked, and the worst excess found, in the time left. The
worst excess is the exact supremum over the ranges: from Z3's optimizer when
every term is linear (its bound proved again by a plain unsat query), or by
bisection whose ends are exact (a witness evaluated in Fractions below, an
unsat query above) when the query is nonlinear. `method` says which.

Ranged weights of a proportional rule that nothing else reads are taken at
the corners of their box, each corner a linear query (`weight_ranges` gives
the argument). The nucleolus under ranges is `unknown`: it is not linear in
the worths, so no finite set of values stands for the whole box.

The stages live in their own modules: `scenario` (the contingency applied),
`ranged_check` (the Z3 decision), `z3_queries` (queries under a deadline),
`exact_points` (exact re-evaluation), `supremum` (the worst excess) and
`weight_corners` (ranged proportional weights). Their public names are
importable from here too.
"""

from __future__ import annotations

from . import ast
from .check import CheckOptions, Checker
from .model import Model
from .ranged_check import DEFAULT_TIME_LIMIT, RangedCheck, allowed
from .results import Result
from .scenario import Scenario, corners, scenario_of, worth_key
from .supremum import MAX_BISECTION_STEPS
from .weight_corners import check_weight_corners, weight_ranges

__all__ = [
    "DEFAULT_TIME_LIMIT", "MAX_BISECTION_STEPS", "RangedCheck", "Scenario", "allowed", "check_contingency",
    "check_weight_corners", "corners", "scenario_of", "weight_ranges", "worth_key",
]


def check_contingency(model: Model, contingency: ast.Contingency, options: CheckOptions) -> list[Result]:
    """Every requirement of the agreement under one contingency."""
    scenario = scenario_of(model, contingency)
    if not scenario.ranged:
        return Checker(scenario.model, options, contingency=contingency.name, parameters=dict(scenario.fixed)).run()
    if model.payouts.rounding is not None:
        return _rounding_unsupported(model, contingency)
    weights = weight_ranges(scenario)
    if weights:
        return check_weight_corners(scenario, weights, options, contingency.name)
    return RangedCheck(scenario, options, contingency.name).run()


def _rounding_unsupported(model: Model, contingency: ast.Contingency) -> list[Result]:
    """Rounded payouts jump where a ranged quantity crosses a rounding boundary;
    the Z3 encoding has no term for that yet, so every claim stays open."""
    from .results import UNKNOWN

    reason = ("payouts are rounded (`round payouts`), which the proof over ranges does not model yet; "
              "check chosen values with `ATTR of PARTY = X` lines instead")
    return [Result(ast.requirement_text(req), req.span.line if req.span else 0, contingency.name, UNKNOWN, None,
                   "z3", reason, span=req.span) for req in model.requirements]
