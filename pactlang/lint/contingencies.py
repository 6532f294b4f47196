"""`LintContext` -> warnings about contingencies.

Rules: empty-contingency, identical-contingencies, duplicate-contingency-line,
conflicting-contingency-lines, ineffective-contingency-line.
"""

from __future__ import annotations

from fractions import Fraction

from .. import ast
from ..format import Printer
from .context import LintContext
from .rules import coalition_text, diag

_PRINTER = Printer()


def _target(line) -> tuple:
    """What a contingency line changes."""
    match line:
        case ast.AttrRange() | ast.AttrFixed():
            return ("attr", line.attribute.name, line.party.name)
        case ast.ParamRange() | ast.ParamFixed():
            return ("param", line.param.name)
        case ast.WorthRange():
            return ("worth", frozenset(m.name for m in line.members))
        case ast.Without():
            return ("without", line.party.name)
    return ("?", id(line))


def _point(line) -> Fraction | None:
    """The single value a line pins its quantity to, if it does."""
    if isinstance(line, (ast.AttrFixed, ast.ParamFixed)):
        return line.value.value
    if isinstance(line, (ast.AttrRange, ast.ParamRange)) and line.low.value == line.high.value:
        return line.low.value
    return None


def check_contingencies(ctx: LintContext):
    seen_sets: dict[frozenset, str] = {}
    for c in ctx.of(ast.Contingency):
        if not c.lines:
            yield diag("empty-contingency", f"contingency `{c.name}` has no lines", c.span)
            continue
        key = frozenset(c.lines)
        if key in seen_sets:
            yield diag("identical-contingencies", f"contingency `{c.name}` has the same lines as `{seen_sets[key]}`",
                        c.span)
        else:
            seen_sets[key] = c.name
        yield from _contingency_lines(ctx, c)


def _contingency_lines(ctx: LintContext, c: ast.Contingency):
    by_target: dict[tuple, object] = {}
    withdrawn = {line.party.name for line in c.lines if isinstance(line, ast.Without)}
    for line in c.lines:
        target = _target(line)
        earlier = by_target.get(target)
        if earlier is not None:
            if earlier == line:
                yield diag("duplicate-contingency-line",
                            f"`{_PRINTER.fmt(line)}` is given twice in contingency `{c.name}`", line.span)
            else:
                yield diag("conflicting-contingency-lines",
                            f"contingency `{c.name}` sets {_describe(target)} twice: "
                            f"`{_PRINTER.fmt(earlier)}` and `{_PRINTER.fmt(line)}`", line.span)
            continue
        by_target[target] = line
        reason = _ineffective(ctx, line, target, withdrawn)
        if reason:
            yield diag("ineffective-contingency-line", reason, line.span)


def _describe(target: tuple) -> str:
    kind = target[0]
    if kind == "attr":
        return f"`{target[1]} of {target[2]}`"
    if kind == "param":
        return f"`{target[1]}`"
    if kind == "worth":
        return f"the worth of `{coalition_text(sorted(target[1]))}`"
    return f"`without {target[1]}`"


def _ineffective(ctx: LintContext, line, target: tuple, withdrawn: set[str]) -> str | None:
    kind = target[0]
    point = _point(line)
    if kind == "param":
        name = target[1]
        if name not in ctx.params_read and name in ctx.declared_params:
            return f"nothing reads `{name}`, so this line changes nothing"
        decl = ctx.declared_params.get(name)
        if decl is not None and point is not None and point == decl.value.value:
            return f"`{name}` is already {decl.value.text}"
    elif kind == "attr":
        attr, party = target[1], target[2]
        if party in withdrawn:
            return f"`{party}` leaves in this contingency (`without {party}`), so its `{attr}` does not matter"
        if attr not in ctx.attributes_read and attr in ctx.declared_attributes:
            return f"nothing reads `{attr}`, so this line changes nothing"
        decl = ctx.declared_attributes.get(attr, {}).get(party)
        if decl is not None and point is not None and point == decl.value.value:
            return f"`{attr} of {party}` is already {decl.value.text}"
    elif kind == "worth":
        gone = sorted(target[1] & withdrawn)
        if gone:
            return f"`{gone[0]}` leaves in this contingency, so no coalition with it is formed"
    return None
