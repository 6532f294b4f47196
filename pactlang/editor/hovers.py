"""`Snapshot` + a name or requirement -> the Markdown text of its hover.

Parties show their attributes and exact baseline payout, attributes their
value for every party, params their value, and requirements their verdict
for the baseline and every contingency.
"""

from __future__ import annotations

from fractions import Fraction

from .. import ast
from ..numbers import human
from ..results import FAILS, HOLDS
from .snapshot import Snapshot
from .verdicts import coalition_text, unit_text


def _source(text: str, span: ast.Span | None) -> str:
    if span is None:
        return ""
    lines = text.split("\n")
    if span.line != span.end_line or span.line > len(lines):
        return lines[span.line - 1].strip() if span.line <= len(lines) else ""
    return lines[span.line - 1][span.column - 1: span.end_column - 1]


def party_hover(snap: Snapshot, name: str, payouts: dict[str, Fraction] | None, why: str | None) -> str:
    """A party's attributes and its exact baseline payout, with the clause that sets it."""
    lines = [f"**party** `{name}`", ""]
    decl = next((s for s in snap.document.statements if isinstance(s, ast.PartyDecl) and s.name.name == name), None)
    for attr in decl.attributes if decl else ():
        lines.append(f"- {attr.name.name}: {attr.value.text}")
    model = snap.model
    if model is None or name not in model.parties:
        lines.append("- payout: shown once the agreement has no errors")
        return "\n".join(lines)
    verb = "pays" if model.kind == "cost" else "receives"
    fixed = model.payouts.fixed.get(name)
    if fixed is not None:
        clause = _source(snap.text, fixed.span)
    elif model.payouts.rule is not None:
        scope = "rest by" if model.payouts.scope == "rest" else "by"
        clause = f"payout {scope} {ast.rule_text(model.payouts.rule)}"
    else:
        clause = ""
    how = f" (`{clause}`)" if clause else ""
    if payouts is not None:
        lines.append(f"- {verb} {human(payouts[name])}{unit_text(model)}{how}")
    else:
        lines.append(f"- payout{how}: {why or 'still being computed'}")
    return "\n".join(lines)


def attribute_hover(document: ast.Document, name: str) -> str:
    """An attribute's value for every party that gives one."""
    lines = [f"**attribute** `{name}`", ""]
    for stmt in document.statements:
        if isinstance(stmt, ast.PartyDecl):
            for attr in stmt.attributes:
                if attr.name.name == name:
                    lines.append(f"- {stmt.name.name}: {attr.value.text}")
    return "\n".join(lines)


def param_hover(document: ast.Document, name: str) -> str:
    """A param's declared value."""
    value = next((s.value.text for s in document.statements
                  if isinstance(s, ast.ParamDecl) and s.name.name == name), "?")
    return f"**param** `{name}` = {value}"


def requirement_hover(snap: Snapshot, req: ast.Require) -> str:
    """The verdict, worst excess and worst coalition of a requirement, for the
    baseline and each contingency."""
    text = ast.requirement_text(req)
    lines = [f"**require {text}**", ""]
    if snap.results is None:
        lines.append("checking…")
        return "\n".join(lines)
    unit = unit_text(snap.model)
    for r in snap.results:
        if r.span != req.span:
            continue
        where = f"under `{r.contingency}`" if r.contingency else "baseline"
        if r.status in (HOLDS, FAILS):
            worst = "" if r.worst_excess is None else f", worst excess {human(r.worst_excess)}{unit}"
            if worst and r.worst_coalition and r.requirement != "balanced budget":
                worst += f" for {coalition_text(r.worst_coalition)}"
            lines.append(f"- {where}: **{r.status}**{worst}")
        else:
            lines.append(f"- {where}: **{r.status}**: {r.reason or 'no reason was given'}")
    if len(lines) == 2:
        lines.append("no verdict (the agreement could not be checked)")
    return "\n".join(lines)
