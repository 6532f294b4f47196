"""`LintContext` -> warnings about the worth lines.

Rules: redundant-worth, unreachable-worth, not-superadditive, not-subadditive.
"""

from __future__ import annotations

from .. import ast
from ..formula import walk
from ..numbers import human
from .context import MAX_PAIRS_PARTIES, LintContext, all_worths
from .rules import coalition_text, diag


def _varied_inputs(ctx: LintContext) -> tuple[set[str], set[tuple[str, str]]]:
    """Params and (attribute, party) pairs that some contingency changes."""
    params, attrs = set(), set()
    for c in ctx.of(ast.Contingency):
        for line in c.lines:
            if isinstance(line, (ast.ParamRange, ast.ParamFixed)):
                params.add(line.param.name)
            elif isinstance(line, (ast.AttrRange, ast.AttrFixed)):
                attrs.add((line.attribute.name, line.party.name))
    return params, attrs


def check_redundant_worths(ctx: LintContext):
    m = ctx.model
    if m is None or (m.formula is None and m.otherwise is None):
        return
    params, attrs = _varied_inputs(ctx)
    formula_params = {n.name for n in walk(m.formula.expr) if isinstance(n, ast.Name)} if m.formula else set()
    entries = [(mask, m.table[mask]) for mask in m.table]
    if m.grand is not None:
        entries.append((m.full, m.grand))
    for mask, expr in entries:
        members = m.names_of(mask)
        reads = formula_params | {n.name for n in walk(expr) if isinstance(n, ast.Name)}
        if reads & params or any((a, p) in attrs for a in ctx.attributes_read for p in members):
            continue  # a contingency moves the formula and the entry apart
        value, default = ctx.worth(mask), ctx.default_worth(mask)
        if value is not None and value == default:
            source = "formula" if m.formula is not None else "`worth otherwise`"
            yield diag("redundant-worth", f"the {source} already gives {coalition_text(members)} the worth {human(value)}",
                        m.table_spans.get(mask))


def check_unreachable_worths(ctx: LintContext):
    m = ctx.model
    if m is None:
        return
    otherwise = ctx.of(ast.WorthOtherwise)
    covered = len(m.table) + (1 if m.grand is not None and m.full not in m.table else 0)
    if covered == m.full:
        for line in ([m.formula] if m.formula else []) + otherwise[:1]:
            yield diag("unreachable-worth", "the worth table lists every coalition, so this line is never used",
                        line.span)
    elif m.formula is not None and otherwise:
        yield diag("unreachable-worth", "`worth otherwise` is never used: the formula gives every coalition "
                    "not in the table its worth", otherwise[0].span)


def _line_of(ctx: LintContext, mask: int) -> ast.Span | None:
    m = ctx.model
    if mask in m.table_spans:
        return m.table_spans[mask]
    return m.formula.span if m.formula is not None else next(
        (s.span for s in ctx.of(ast.WorthOtherwise)), None)


def check_superadditivity(ctx: LintContext):
    m = ctx.model
    if m is None or m.n > MAX_PAIRS_PARTIES:
        return
    scaled = all_worths(ctx)
    if scaled is None:
        return
    w, scale = scaled
    sign = 1 if m.kind == "value" else -1  # in value form merging must not lose
    full, worst, count = m.full, None, 0
    # 3**n / 2 pairs in plain integers: about 0.1 s at the 12-party limit
    for s in range(1, full + 1):
        rest = full ^ s
        t = rest
        while t > s:  # each unordered pair once: t > s
            loss = sign * (w[s] + w[t] - w[s | t])
            if loss > 0:
                count += 1
                if worst is None or loss > worst[0]:
                    worst = (loss, s, t)
            t = (t - 1) & rest
    if worst is None:
        return
    _, s, t = worst
    ws, wt, wu = (ctx.exact_worth(x) for x in (s, t, s | t))  # the printed numbers, re-evaluated
    if sign * (ws + wt - wu) <= 0:  # pragma: no cover - the table disagreed with the evaluator
        return
    names = [coalition_text(m.names_of(x)) for x in (s, t, s | t)]
    more = f" ({count} such pairs)" if count > 1 else ""
    if m.kind == "value":
        code, verb, cmp = "not-superadditive", "is worth", "less than"
    else:
        code, verb, cmp = "not-subadditive", "costs", "more than"
    yield diag(code, f"`{names[2]}` {verb} {human(wu)}, {cmp} `{names[0]}` and `{names[1]}` apart "
                f"({human(ws)} + {human(wt)} = {human(ws + wt)}){more}", _line_of(ctx, s | t))
