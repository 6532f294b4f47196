"""`RunReport` -> a report for people: verdicts, worst excess, worst coalitions."""

from __future__ import annotations

import os
import sys

from .numbers import human
from .results import FAILS, HOLDS, UNKNOWN, FileReport, RunReport

CAUTION = ("Results support negotiation; they do not replace legal, financial or "
           "regulatory advice or local rules.")

_COLOURS = {HOLDS: "32", FAILS: "31", UNKNOWN: "33", "error": "31", "warning": "33"}


def use_colour(stream=None) -> bool:
    """Colour only on a terminal, and never when NO_COLOR is set."""
    stream = stream or sys.stdout
    return "NO_COLOR" not in os.environ and hasattr(stream, "isatty") and stream.isatty()


def _paint(text: str, key: str, colour: bool) -> str:
    return f"\x1b[{_COLOURS[key]}m{text}\x1b[0m" if colour else text


def _table(rows: list[list[str]], indent: str) -> list[str]:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    out = []
    for r in rows:
        cells = [r[0].ljust(widths[0])] + [c.rjust(w) for c, w in zip(r[1:], widths[1:])]
        out.append(indent + "  ".join(cells).rstrip())
    return out


def coalition_text(members, parties=()) -> str:
    """A coalition for people; large ones shortened (JSON always lists every member).

    Most members of a large agreement: `all except {x, y}`; otherwise the
    first few members and how many more."""
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


def render_file(f: FileReport, colour: bool = False, diagnostics: bool = True) -> list[str]:
    lines = file_diagnostics(f, colour) if diagnostics else []
    if f.agreement is None:
        return lines
    unit = f" {f.unit}" if f.unit else ""
    lines.append(f"{f.path}: {f.agreement} (shares {f.kind}{' in ' + f.unit if f.unit else ''})")
    for r in f.results:
        where = f"under \"{r.contingency}\"" if r.contingency else "baseline"
        status = _paint(r.status.ljust(7), r.status, colour)
        worst = "" if r.worst_excess is None else f"  worst excess {human(r.worst_excess)}{unit}"
        lines.append(f"  {status} {r.requirement} (line {r.line}, {where}){worst}")
        if r.status == UNKNOWN and r.reason:
            lines.append(f"          reason: {r.reason}")
        if r.status == HOLDS and r.worst_coalition and r.requirement not in ("balanced budget",):
            lines.append(f"          worst coalition: {coalition_text(r.worst_coalition, f.parties)}  [{r.method}]")
        if r.counterexamples:
            params = sorted({k for c in r.counterexamples for k in c.parameters})
            money = f" ({f.unit})" if f.unit else ""
            head = ["coalition", f"worth{money}", f"payout{money}", f"excess{money}"] + params
            rows = [head]
            for c in r.counterexamples:
                name = coalition_text(c.coalition, f.parties)
                rows.append([name, human(c.worth), human(c.payout), human(c.excess)]
                            + [human(c.parameters[k]) if k in c.parameters else "" for k in params])
            lines.extend(_table(rows, "          "))
    return lines


def summary(run: RunReport) -> str:
    files = len(run.files)
    errors = sum(1 for f in run.files if f.has_errors)
    text = (f"{files} file{'s' if files != 1 else ''}: {run.count(HOLDS)} held, "
            f"{run.count(FAILS)} failed, {run.count(UNKNOWN)} unknown")
    if errors:
        text += f", {errors} with errors"
    return text


def render_text(run: RunReport, colour: bool = False, diagnostics: bool = True) -> str:
    """The whole text report, ending with the one-line summary and the caution
    (`diagnostics=False`: without them, when they are printed apart)."""
    lines = []
    for f in run.files:
        lines.extend(render_file(f, colour, diagnostics))
    lines.append(summary(run))
    lines.append(CAUTION)
    return "\n".join(lines)
