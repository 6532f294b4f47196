"""Checked names and exact numbers -> `Model`, the agreement every solver reads.

A `Model` is the agreement after name resolution: parties in declaration
order (party i is bit i of a coalition mask), attribute and param values as
Fractions, the worth table keyed by mask, the formula, the payout clauses and
the requirements. Expressions stay as syntax nodes because params and
attributes may be overridden by a contingency; `Model.with_values` gives the
agreement under such overrides and `Model.without` the one read without a
party.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from fractions import Fraction

from . import ast


@dataclass(frozen=True)
class Payouts:
    """The payout clauses: fixed lines per party and at most one rule.

    `scope` is "all" (`payout by RULE`), "rest" (`payout rest by RULE`) or
    None (every party has a fixed line).
    """

    fixed: dict[str, ast.PayoutFixed]
    rule: ast.Rule | None
    scope: str | None
    span: ast.Span | None = None
    rounding: Fraction | None = None  # `round payouts to STEP by largest remainder`
    rounding_span: ast.Span | None = None


@dataclass(frozen=True)
class Model:
    path: str
    title: str
    kind: str  # "cost" | "value"
    unit: str | None
    parties: tuple[str, ...]
    attributes: dict[str, dict[str, Fraction]]  # attribute -> party -> value
    params: dict[str, Fraction]
    table: dict[int, ast.Expr]  # coalition mask -> constant expression
    table_spans: dict[int, ast.Span]
    grand: ast.Expr | None  # `worth all = EXPR`
    formula: ast.WorthFormula | None
    otherwise: Fraction | None
    payouts: Payouts
    requirements: tuple[ast.Require, ...]
    contingencies: tuple[ast.Contingency, ...]
    document: ast.Document = field(compare=False, repr=False)
    party_spans: dict[str, ast.Span] = field(default_factory=dict, compare=False, repr=False)
    # worth overrides from a contingency (`worth {A} in ..` pinned to a value)
    pinned: dict[int, Fraction] = field(default_factory=dict)

    @property
    def n(self) -> int:
        return len(self.parties)

    @property
    def full(self) -> int:
        return (1 << self.n) - 1

    def index(self, party: str) -> int:
        return self.parties.index(party)

    def mask_of(self, names) -> int:
        """The mask of a collection of party names."""
        mask = 0
        for name in names:
            mask |= 1 << self.parties.index(name)
        return mask

    def names_of(self, mask: int) -> list[str]:
        """The party names in a mask, in declaration order."""
        return [p for i, p in enumerate(self.parties) if mask >> i & 1]

    def attribute_vector(self, attribute: str) -> list[Fraction]:
        """An attribute's value for every party, in party order."""
        values = self.attributes[attribute]
        return [values[p] for p in self.parties]

    def with_values(
        self,
        attributes: dict[tuple[str, str], Fraction] | None = None,
        params: dict[str, Fraction] | None = None,
        worths: dict[int, Fraction] | None = None,
    ) -> "Model":
        """The agreement with some attribute values `(attr, party)`, params
        or coalition worths replaced by exact values."""
        new_attrs = {a: dict(v) for a, v in self.attributes.items()}
        for (attr, party), value in (attributes or {}).items():
            new_attrs[attr][party] = value
        new_params = dict(self.params) | dict(params or {})
        return replace(self, attributes=new_attrs, params=new_params, pinned=dict(self.pinned) | dict(worths or {}))

    def without(self, party: str) -> "Model":
        """The agreement read for the other parties only.

        Table entries naming the party are dropped, the others are re-keyed;
        `worth all` described the coalition with the party in it and is
        dropped too (the new grand coalition takes its worth like any other);
        its fixed payout line is dropped and rules are re-applied to the
        smaller game, while the fixed payouts of the others stay as written.
        """
        gone = self.parties.index(party)

        def rekey(mask: int) -> int:
            low = mask & ((1 << gone) - 1)
            high = mask >> (gone + 1)
            return low | (high << gone)

        keep = lambda mask: not (mask >> gone & 1)  # noqa: E731
        parties = tuple(p for p in self.parties if p != party)
        attrs = {a: {p: v for p, v in vals.items() if p != party} for a, vals in self.attributes.items()}
        table = {rekey(m): e for m, e in self.table.items() if keep(m)}
        spans = {rekey(m): s for m, s in self.table_spans.items() if keep(m)}
        pinned = {rekey(m): v for m, v in self.pinned.items() if keep(m)}
        fixed = {p: line for p, line in self.payouts.fixed.items() if p != party}
        payouts = replace(self.payouts, fixed=fixed)
        return replace(
            self, parties=parties, attributes=attrs, table=table, table_spans=spans,
            pinned=pinned, payouts=payouts, grand=None,
            party_spans={p: s for p, s in self.party_spans.items() if p != party},
        )
