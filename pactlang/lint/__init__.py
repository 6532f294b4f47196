"""`ast.Document` (+ `Model` when it resolved) -> drafting warnings, no solver.

Each finding is a `Diagnostic` with a rule code from `RULES`, a span and a
help line. Lint never repeats what `resolve` reports as an error: with no
model (the agreement did not resolve) only the checks that need nothing but
the syntax run. Everything numeric is exact: worths and payouts come from
the same evaluator the checker uses, and a claim such as "no payout can meet
this requirement" is made only with an exact certificate.

Layout: `rules` holds the catalogue and `diag`; `context` what the checks
read; one module per group of rules (`names`, `payouts`, `worths`,
`requirements`, `contingencies`), each check a function from the context to
its findings, listed in `CHECKS`.
"""

from __future__ import annotations

from .. import ast
from ..diagnostics import Diagnostic
from ..model import Model
from .context import MAX_PAIRS_PARTIES, LintContext
from .contingencies import check_contingencies
from .names import check_uneven_attributes, check_unused_attributes, check_unused_columns, check_unused_params
from .payouts import check_payout_magnitude, check_proportional_weights, check_shares
from .requirements import check_requirements
from .rules import RULES, WHOLE_FILE, LintRule
from .worths import check_redundant_worths, check_superadditivity, check_unreachable_worths

__all__ = ["CHECKS", "MAX_PAIRS_PARTIES", "RULES", "WHOLE_FILE", "LintRule", "lint_model"]

# Run in this order: findings at the same place and with the same code keep it.
CHECKS = (
    check_unused_attributes, check_unused_columns, check_unused_params, check_uneven_attributes, check_proportional_weights,
    check_shares, check_payout_magnitude, check_redundant_worths, check_unreachable_worths,
    check_superadditivity, check_requirements, check_contingencies,
)


def lint_model(doc: ast.Document, model: Model | None = None) -> list[Diagnostic]:
    """Drafting warnings for an agreement, ordered by position.

    `model` is the resolved agreement, or None when it did not resolve (then
    only the checks that need the syntax alone run, so that nothing repeats
    the resolver's errors).
    """
    ctx = LintContext(doc, model)
    found: list[Diagnostic] = []
    for check in CHECKS:
        found.extend(check(ctx))
    return sorted(found, key=lambda d: (d.span.line, d.span.column, d.code))
