"""`RunReport` -> a report for people: verdicts, worst excess, worst coalitions,
and under each failing requirement who pays what against what it would pay alone.

Amounts are rounded per table (`report.amounts`); `--exact` prints fractions.
"""

from __future__ import annotations

import os
import sys
from dataclasses import replace

from .numbers import exact_str
from .report.amounts import decimals_of
from .results import FAILS, HOLDS, UNKNOWN, FileReport, RunReport
from .report.tables import (PartyViews, RenderOptions, Table, coalition_words, counterexample_table, headline,
                            party_table, values_words, worst_worth)

CAUTION = ("Results support negotiation; they do not replace legal, financial or "
           "regulatory advice or local rules.")

_COLOURS = {HOLDS: "32", FAILS: "31", UNKNOWN: "33", "error": "31", "warning": "33"}
INDENT = " " * 10


def use_colour(stream=None) -> bool:
    """Colour only on a terminal, and never when NO_COLOR is set."""
    stream = stream or sys.stdout
    return "NO_COLOR" not in os.environ and hasattr(stream, "isatty") and stream.isatty()


def _paint(text: str, key: str, colour: bool) -> str:
    return f"\x1b[{_COLOURS[key]}m{text}\x1b[0m" if colour else text


def _table(rows: list[list[str]], indent: str, right: list[bool] | None = None) -> list[str]:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    right = right if right is not None else [False] + [True] * (len(widths) - 1)
    out = []
    for r in rows:
        cells = [c.rjust(w) if ri else c.ljust(w) for c, w, ri in zip(r, widths, right)]
        out.append(indent + "  ".join(cells).rstrip())
    return out


def table_lines(table: Table, indent: str = INDENT) -> list[str]:
    return _table([table.head] + table.rows, indent, table.right)


def coalition_text(members, parties=()) -> str:
    """A coalition in a few words (kept for callers of the first release;
    the report uses `report.tables.coalition_words`)."""
    members = tuple(members)
    if parties and len(members) == len(parties) and len(parties) > 2:
        return "all"
    if len(members) <= 6:
        return "{" + ", ".join(members) + "}"
    if parties and len(parties) - len(members) <= 4:
        outside = [p for p in parties if p not in set(members)]
        return "all except {" + ", ".join(outside) + "}"
    return "{" + ", ".join(members[:4]) + f", ... {len(members) - 4} more}}"


def file_diagnostics(f: FileReport, colour: bool = False) -> list[str]:
    """`FILE:LINE:COL: severity: message` lines of one file."""
    return [_paint(d.render(f.path), d.severity, colour) if colour else d.render(f.path) for d in f.diagnostics]


def render_diagnostics(run: RunReport, colour: bool = False) -> list[str]:
    """Every file's diagnostics, for standard error."""
    return [line for f in run.files for line in file_diagnostics(f, colour)]


def render_file(f: FileReport, colour: bool = False, model=None, options: RenderOptions = RenderOptions(),
                diagnostics: bool = True) -> list[str]:
    lines = file_diagnostics(f, colour) if diagnostics else []
    if f.agreement is None:
        return lines
    lines.append(f"{f.path}: {f.agreement} (shares {f.kind}{' in ' + f.unit if f.unit else ''})")
    step = model.payouts.rounding if model is not None else None
    if step is not None:
        options = replace(options, min_decimals=decimals_of(step))
        lines.append(f"  payouts rounded to {exact_str(step)}{' ' + f.unit if f.unit else ''} by largest remainder; "
                     "every check uses the rounded amounts")
    views = PartyViews(model, options)
    shown_views: dict[tuple, str] = {}
    rounded = False
    for r in f.results:
        where = f"under \"{r.contingency}\"" if r.contingency else "baseline"
        status = _paint(r.status.ljust(7), r.status, colour)
        head = headline(r, f.unit, options, worst_worth(model, r))
        lines.append(f"  {status} {r.requirement} (line {r.line}, {where}){'  ' + head if head else ''}")
        if r.status == UNKNOWN and r.reason:
            lines.append(f"{INDENT}reason: {r.reason}")
        if r.status == HOLDS and r.worst_coalition and r.requirement not in ("balanced budget",):
            lines.append(f"{INDENT}worst coalition: {coalition_words(r.worst_coalition, f.parties, options.full)}"
                         f"  [{r.method}]")
        table = counterexample_table(r, f.parties, f.unit, options)
        if table is not None:
            rounded |= table.rounded
            lines.extend(table_lines(table))
        view = views.for_result(r)
        if view is not None:
            key = view.key()
            if key in shown_views:
                lines.append(f"{INDENT}per party: as under {shown_views[key]}")
                continue
            shown_views[key] = f"{r.requirement} ({where})"
            verb = "pays" if view.kind == "cost" else "receives"
            at = values_words(view.at, options)
            lines.append(f"{INDENT}per party{' at ' + at if at else ''}: what each {verb}; "
                         f"* marks the worst coalition's members")
            ptable = party_table(view, options)
            rounded |= ptable.rounded
            lines.extend(table_lines(ptable))
            lines.extend(f"{INDENT}note: {n}" for n in view.notes)
    if rounded:
        lines.append("  amounts are rounded; `--exact` prints them exactly")
    return lines


def summary(run: RunReport) -> str:
    files = len(run.files)
    errors = sum(1 for f in run.files if f.has_errors)
    text = (f"{files} file{'s' if files != 1 else ''}: {run.count(HOLDS)} held, "
            f"{run.count(FAILS)} failed, {run.count(UNKNOWN)} unknown")
    if errors:
        text += f", {errors} with errors"
    return text


def render_text(run: RunReport, colour: bool = False, models: dict | None = None,
                options: RenderOptions = RenderOptions(), diagnostics: bool = True) -> str:
    """The whole text report, ending with the one-line summary and the caution.

    `models` (display path -> Model, as `run.check_files` returns them) adds
    the per-party view under each failing requirement; `diagnostics=False`
    leaves the diagnostics out, when they are printed apart (on stderr)."""
    lines = []
    for f in run.files:
        lines.extend(render_file(f, colour, (models or {}).get(f.path), options, diagnostics))
    lines.append(summary(run))
    lines.append(CAUTION)
    return "\n".join(lines)
