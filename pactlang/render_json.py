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


def render_json(run: RunReport) -> str:
    """The `check --format json` document."""
    files = []
    for f in run.files:
        files.append({
            "path": f.path,
            "agreement": f.agreement,
            "results": [result_json(r) for r in f.results],
            "diagnostics": [d.to_json() for d in f.diagnostics],
        })
    return json.dumps({"files": files}, indent=2, ensure_ascii=False)
