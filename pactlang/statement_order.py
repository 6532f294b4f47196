"""Syntax tree -> statement indices in canonical order, and the kinds a blank line separates.

The canonical order: title, shares, parties, params, worths, payouts,
contingencies, requirements; statements of one kind keep their source order.
"""

from __future__ import annotations

from . import ast

_RANK = {
    ast.AgreementTitle: 0, ast.Shares: 1, ast.PartyDecl: 2, ast.ParamDecl: 3,
    ast.WorthEntry: 4, ast.WorthGrand: 4, ast.WorthFormula: 4, ast.WorthOtherwise: 4,
    ast.PayoutFixed: 5, ast.PayoutAll: 5, ast.PayoutRest: 5, ast.RoundPayouts: 5,
    ast.Contingency: 6, ast.Require: 7, ast.PartiesFrom: 2,
}


def statement_group(stmt) -> int:
    """Kinds separated by a blank line; the title and `shares` form one header."""
    rank = _RANK[type(stmt)]
    return 0 if rank == 1 else rank


def canonical_order(doc: ast.Document) -> list[int]:
    """Statement indices in canonical order.

    Declarations are order-free, with one exception the resolver enforces:
    the title must come first. A file that does not start with its title is
    left in source order so that its error stays where the user put it.
    """
    stmts = doc.statements
    if not stmts or not isinstance(stmts[0], ast.AgreementTitle):
        return list(range(len(stmts)))
    return sorted(range(len(stmts)), key=lambda i: (_RANK[type(stmts[i])], i))
