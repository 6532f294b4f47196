"""`RunReport` (+ models) -> a SARIF 2.1.0 log, for code-review pages and CI.

One run of the tool `pactlang`: a rule for each kind of verdict and for every
diagnostic code, one result per requirement that fails or stays unknown (at
the requirement's line, with the worst coalition and its excess; related
locations for the payout clause, the worth lines and the contingency
involved when the model is given) and one result per diagnostic. Paths are
relative URIs against `%SRCROOT%`, the directory the run was started in.
"""

from __future__ import annotations

import os
from pathlib import Path, PurePosixPath
from urllib.parse import quote

from . import __version__, ast
from .diagnostics import Diagnostic
from .model import Model
from .numbers import exact_str, human
from .results import FAILS, UNKNOWN, FileReport, Result, RunReport

SCHEMA_URI = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
SRCROOT = "%SRCROOT%"

VERDICT_RULES = {
    "unstable-coalition": ("a coalition gains more than the agreement allows by walking away",
                           "change the payout or the bound; the worst coalition and its excess are named"),
    "not-individually-rational": ("a party receives less (or pays more) than it would alone",
                                  "raise that party's payout, or lower its charge, to at least its stand-alone worth"),
    "budget-not-balanced": ("the payouts do not add up to worth(all)",
                            "adjust the fixed payouts or pay the rest by a rule"),
    "requirement-unknown": ("a requirement could be neither proved nor refuted",
                            "the reason is given; a smaller agreement or a wider limit may decide it"),
}


def _verdict_rule(result: Result) -> str:
    if result.status == UNKNOWN:
        return "requirement-unknown"
    if result.requirement == "individually rational":
        return "not-individually-rational"
    if result.requirement == "balanced budget":
        return "budget-not-balanced"
    return "unstable-coalition"


def _rule_descriptor(code: str) -> dict:
    from .lint import RULES

    if code in VERDICT_RULES:
        short, help_text = VERDICT_RULES[code]
        level = "warning" if code == "requirement-unknown" else "error"
    elif code in RULES:
        short, help_text, level = RULES[code].summary, RULES[code].help, "warning"
    elif code == "lint-stopped":
        short, help_text, level = ("the drafting checks were cut short by the time limit",
                                   "allow more time with `--time-limit`, or run `pactlang lint`", "warning")
    else:  # errors of reading and resolving an agreement
        short = f"the agreement cannot be read: {code.replace('-', ' ')}"
        help_text, level = "fix the line named; nothing is checked until the file reads cleanly", "error"
    return {
        "id": code,
        "shortDescription": {"text": short},
        "help": {"text": help_text},
        "defaultConfiguration": {"level": level},
    }


def artifact_uri(path: str, base: str | None = None) -> dict:
    """An artifactLocation: relative to `base` (default: the working directory)
    when the file lies below it, else an absolute `file:` URI."""
    base_dir = Path(base or os.getcwd()).resolve()
    target = Path(path)
    absolute = (target if target.is_absolute() else base_dir / target).resolve()
    try:
        rel = absolute.relative_to(base_dir)
    except ValueError:
        return {"uri": absolute.as_uri()}
    return {"uri": quote(PurePosixPath(*rel.parts).as_posix()), "uriBaseId": SRCROOT}


def _region(span: ast.Span | None, line: int | None = None) -> dict:
    if span is None:
        return {"startLine": max(line or 1, 1)}
    region = {"startLine": span.line, "startColumn": span.column}
    if span.end_line >= span.line and (span.end_line, span.end_column) > (span.line, span.column):
        region |= {"endLine": span.end_line, "endColumn": span.end_column}
    return region


def _location(uri: dict, span: ast.Span | None, line: int | None = None, message: str | None = None,
              ident: int | None = None) -> dict:
    loc = {"physicalLocation": {"artifactLocation": uri, "region": _region(span, line)}}
    if ident is not None:
        loc["id"] = ident
    if message:
        loc["message"] = {"text": message}
    return loc


def _verdict_message(f: FileReport, r: Result) -> str:
    where = f"under contingency `{r.contingency}`" if r.contingency else "in the baseline"
    unit = f" {f.unit}" if f.unit else ""
    if r.status == UNKNOWN:
        return f"`{r.requirement}` is unknown {where}: {r.reason or 'no reason given'}"
    text = f"`{r.requirement}` fails {where}"
    cex = r.counterexamples[0] if r.counterexamples else None
    if r.requirement == "balanced budget" and cex is not None:
        return f"{text}: the payouts add up to {human(cex.payout)}{unit}, worth(all) is {human(cex.worth)}{unit}"
    coalition = cex.coalition if cex else r.worst_coalition
    excess = cex.excess if cex else r.worst_excess
    if coalition:
        text += f": coalition {{{', '.join(coalition)}}}"
        if excess is not None:
            text += f" has excess {human(excess)}{unit}"
            if cex is not None and cex.allowed is not None and r.requirement.startswith("stable"):
                text += f" (allowed {human(cex.allowed)}{unit})"
        if cex is not None and cex.parameters:
            values = ", ".join(f"{k} = {human(v)}" for k, v in sorted(cex.parameters.items()))
            text += f" at {values}"
    if len(r.counterexamples) > 1:
        text += f"; {len(r.counterexamples) - 1} more counterexample(s)"
    return text


def _related(model: Model | None, r: Result, uri: dict) -> list[dict]:
    """The payout clause, the worth lines and the contingency behind a verdict."""
    if model is None:
        return []
    spots: list[tuple[ast.Span, str]] = []
    cex = r.counterexamples[0] if r.counterexamples else None
    members = tuple(cex.coalition) if cex else tuple(r.worst_coalition or ())
    if model.payouts.span is not None:
        spots.append((model.payouts.span, "payout rule"))
    for name in members:
        line = model.payouts.fixed.get(name)
        if line is not None and line.span is not None:
            spots.append((line.span, f"payout of `{name}`"))
    if members and all(m in model.parties for m in members):
        mask = model.mask_of(members)
        label = "{" + ", ".join(members) + "}"
        if mask in model.table_spans:
            spots.append((model.table_spans[mask], f"worth of `{label}`"))
        elif model.formula is not None and model.formula.span is not None:
            spots.append((model.formula.span, f"worth formula, which gives `{label}` its worth"))
    if r.contingency is not None:
        for c in model.contingencies:
            if c.name == r.contingency and c.span is not None:
                spots.append((c.span, f"contingency `{c.name}`"))
                break
    out, seen = [], set()
    for span, message in spots:
        if (span, message) in seen:
            continue
        seen.add((span, message))
        out.append(_location(uri, span, message=message, ident=len(out) + 1))
    return out


def _diagnostic_result(d: Diagnostic, uri: dict, rule_index: int) -> dict:
    text = d.message if not d.help else f"{d.message}\nhelp: {d.help}"
    return {
        "ruleId": d.code,
        "ruleIndex": rule_index,
        "level": "error" if d.is_error else "warning",
        "message": {"text": text},
        "locations": [_location(uri, d.span)],
    }


def _internal_notification(d: Diagnostic, uri: dict) -> dict:
    """A tool execution notification for an internal error on one file."""
    return {
        "level": "error",
        "descriptor": {"id": d.code},
        "message": {"text": f"{d.message}\nhelp: {d.help}" if d.help else d.message},
        "locations": [{"physicalLocation": {"artifactLocation": uri}}],
    }


def render_sarif(run: RunReport, models: dict[str, Model | None] | None = None, base: str | None = None) -> dict:
    """The SARIF log of a run, as a JSON-ready dict. `models` maps a report's
    path to its model (for related locations); `base` is the directory the
    relative URIs start from (default: the working directory)."""
    models = models or {}
    rules: list[dict] = []
    index: dict[str, int] = {}

    def rule_index(code: str) -> int:
        if code not in index:
            index[code] = len(rules)
            rules.append(_rule_descriptor(code))
        return index[code]

    from .lint import RULES

    for code in list(VERDICT_RULES) + list(RULES):  # the whole catalogue, used or not
        rule_index(code)
    from .failures import is_internal

    results, notifications = [], []
    for f in run.files:
        uri = artifact_uri(f.path, base)
        for d in f.diagnostics:
            if is_internal(d):  # a fault of the tool, not a finding in the file
                notifications.append(_internal_notification(d, uri))
                continue
            results.append(_diagnostic_result(d, uri, rule_index(d.code)))
        for r in f.results:
            if r.status not in (FAILS, UNKNOWN):
                continue
            code = _verdict_rule(r)
            result = {
                "ruleId": code,
                "ruleIndex": rule_index(code),
                "level": "error" if r.status == FAILS else "warning",
                "message": {"text": _verdict_message(f, r)},
                "locations": [_location(uri, r.span, r.line)],
                "properties": {"requirement": r.requirement, "contingency": r.contingency, "status": r.status,
                               "method": r.method},
            }
            if r.worst_excess is not None:
                result["properties"]["worstExcess"] = exact_str(r.worst_excess)
            related = _related(models.get(f.path), r, uri)
            if related:
                result["relatedLocations"] = related
            results.append(result)
    return {
        "$schema": SCHEMA_URI,
        "version": "2.1.0",
        "runs": [{
            "tool": {"driver": {
                "name": "pactlang",
                "version": __version__,
                "rules": rules,
            }},
            "originalUriBaseIds": {SRCROOT: {"uri": Path(base or os.getcwd()).resolve().as_uri() + "/"}},
            "columnKind": "unicodeCodePoints",
            "invocations": [{
                "executionSuccessful": not notifications,
                "toolExecutionNotifications": notifications,
            }],
            "results": results,
        }],
    }
