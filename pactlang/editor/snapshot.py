"""Document text -> `Snapshot`: what the library says about one version of it.

Parsing, name resolution and lint run at once (`analyse`); the stability
check (`run_check`) and the baseline payouts (`compute_payouts`) are slower
and run in the server's worker process (`editor.worker`); the server then
records them on the snapshot. Nothing here knows the editor protocol.
"""

from __future__ import annotations

import asyncio
import logging
from dataclasses import dataclass, field
from fractions import Fraction

from .. import ast
from ..check import CheckOptions, check_model
from ..diagnostics import AgreementError, Diagnostic
from ..formula import EvaluationError
from ..load import Loaded
from ..model import Model
from ..parse import parse_text
from ..resolve import resolve
from ..results import Result
from ..run import lint_diagnostics
from .verdicts import verdict_diagnostics

TIME_LIMIT = 30.0  # seconds per requirement before the editor is told `unknown`

log = logging.getLogger("pactlang.server")  # the server's log: these run only on its behalf


@dataclass
class Snapshot:
    """What the library says about one version of one document.

    `document` is None when the text does not parse and `model` when it does
    not resolve; `results` stays None until the stability check has run.
    `shown` holds the verdict diagnostics on display, keyed by the
    requirement's span and text: this version's own once checked, else those
    carried over from the previous version.
    """

    uri: str
    version: int | None
    text: str
    document: ast.Document | None
    model: Model | None
    problems: list[Diagnostic]
    results: list[Result] | None = None
    check_problems: list[Diagnostic] = field(default_factory=list)
    shown: list[tuple[tuple, Diagnostic]] = field(default_factory=list)
    done: asyncio.Event = field(default_factory=asyncio.Event)
    payouts: asyncio.Future | None = None

    def finish(self, results: list[Result], problems: list[Diagnostic]) -> None:
        """Record the check's outcome and wake whoever waits for it."""
        self.results, self.check_problems = results, problems
        self.shown = verdict_diagnostics(results, self.model) if self.model else []
        self.done.set()


def analyse(uri: str, version: int | None, text: str, path: str) -> Snapshot:
    """Parse, resolve and lint one version of a document (no stability check).

    `path` is the file the document's URI names, as the model records it.
    """
    try:
        document = parse_text(text)
    except AgreementError as exc:
        return Snapshot(uri, version, text, None, None, list(exc.diagnostics))
    try:
        model = resolve(document, path)
    except AgreementError as exc:
        # the linter's syntax-only rules still apply when names do not resolve
        problems = list(exc.diagnostics) + _lint(Loaded(path, text, document, None))
        return Snapshot(uri, version, text, document, None, problems)
    return Snapshot(uri, version, text, document, model, _lint(Loaded(path, text, document, model)))


def _lint(loaded: Loaded) -> list[Diagnostic]:
    try:
        return lint_diagnostics(loaded)
    except Exception:  # advice must never take the diagnostics of errors down with it
        log.exception("the linter failed")
        return []


def run_check(model: Model, time_limit: float | None = TIME_LIMIT) -> tuple[list[Result], list[Diagnostic]]:
    """The verdicts of every requirement, or the input error that stopped them."""
    try:
        return check_model(model, CheckOptions(time_limit=time_limit)), []
    except AgreementError as exc:
        return [], list(exc.diagnostics)


def compute_payouts(model: Model) -> tuple[dict[str, Fraction] | None, str | None]:
    """Every party's exact payout in the baseline, or why it cannot be computed."""
    from ..worths import PayoutUnavailable, Worths, payout  # numpy only once asked

    try:
        values = payout(Worths(model))
    except PayoutUnavailable as exc:
        return None, str(exc)
    except EvaluationError as exc:
        return None, exc.message
    return dict(zip(model.parties, values)), None


def carry_over(old: Snapshot | None, new: Snapshot) -> list[tuple[tuple, Diagnostic]]:
    """The old verdicts whose requirement still stands, unchanged, in the same place."""
    if old is None or new.model is None:
        return []
    keys = {(req.span, ast.requirement_text(req)) for req in new.model.requirements}
    return [(key, d) for key, d in old.shown if key in keys]
