"""`RunReport` -> the JSON document of language.md (exact numbers as strings)."""

from __future__ import annotations

import json

from .numbers import exact_str
from .results import Counterexample, Result, RunReport


def _cex(c: Counterexample) -> dict:
    return {
        "coalition": list(c.coalition),
        "worth": exact_str(c.worth),
        "payout": exact_str(c.payout),
        "excess": exact_str(c.excess),
        "parameters": {k: exact_str(v) for k, v in c.parameters.items()},
    }


def result_json(r: Result) -> dict:
    out = {
        "requirement": r.requirement,
        "line": r.line,
        "contingency": r.contingency,
        "status": r.status,
        "worst_excess": None if r.worst_excess is None else exact_str(r.worst_excess),
        "method": r.method,
    }
    if r.status == "unknown":
        out["reason"] = r.reason or "unknown"
    out["counterexamples"] = [_cex(c) for c in r.counterexamples]
    return out


def internal_error_json(f) -> dict:
    """`{"internal_error": "MESSAGE"}` when the tool failed on the file (the run
    then exits 4; the file's diagnostics hold the same message), else `{}`."""
    from .failures import is_internal

    failures = [d.message for d in f.diagnostics if is_internal(d)]
    return {"internal_error": "; ".join(failures)} if failures else {}


def render_json(run: RunReport) -> str:
    """The `check --format json` document."""
    files = []
    for f in run.files:
        entry = {
            "path": f.path,
            "agreement": f.agreement,
            "results": [result_json(r) for r in f.results],
            "diagnostics": [d.to_json() for d in f.diagnostics],
        }
        entry.update(internal_error_json(f))
        files.append(entry)
    return json.dumps({"files": files}, indent=2, ensure_ascii=False)
