"""`LintContext` -> warnings about declared names: unused-attribute, unused-param, uneven-attribute."""

from __future__ import annotations

import difflib

from .. import ast
from .context import LintContext
from .rules import RULES, diag


def _did_you_mean(name: str, candidates) -> str:
    close = difflib.get_close_matches(name, sorted(candidates), n=1, cutoff=0.75)
    return f"; did you mean `{close[0]}`?" if close else ""


def check_unused_attributes(ctx: LintContext):
    read = ctx.attributes_read
    for name, by_party in ctx.declared_attributes.items():
        if name in read:
            continue
        first = next(iter(by_party.values()))
        hint = _did_you_mean(name, read & set(ctx.declared_attributes))
        yield diag("unused-attribute", f"attribute `{name}` is never used", first.name.span,
                    RULES["unused-attribute"].help + hint)


def check_unused_columns(ctx: LintContext):
    """Columns of `parties from` files that nothing reads (party lines are `unused-attribute`)."""
    sources = ctx.of(ast.PartiesFrom)
    if ctx.model is None or not sources:
        return
    read, written = ctx.attributes_read, set(ctx.declared_attributes)
    for name in ctx.model.attributes:
        if name not in read and name not in written:
            yield diag("unused-column", f"column `{name}` of `{sources[0].path}` is never used", sources[0].span,
                       RULES["unused-column"].help)


def check_unused_params(ctx: LintContext):
    read = ctx.params_read
    for name, decl in ctx.declared_params.items():
        if name not in read:
            hint = _did_you_mean(name, read - set(ctx.declared_params))
            yield diag("unused-param", f"param `{name}` is never used", decl.name.span,
                        RULES["unused-param"].help + hint)


def check_uneven_attributes(ctx: LintContext):
    if ctx.model is None:  # resolve reports the parties that need an attribute
        return
    m = ctx.model
    for name in sorted(ctx.attributes_read & set(m.attributes)):
        have = m.attributes[name]
        for party in m.parties:
            if party not in have:
                yield diag("uneven-attribute",
                            f"party `{party}` has no `{name}`, which the other parties have",
                            m.party_spans.get(party))
