"""Solver failures -> exceptions the checker turns into `unknown` with a reason."""

from __future__ import annotations


class NotApplicable(ValueError):
    """A rule does not apply to this game; `str(exc)` is the reason, fit to print."""


class SolverError(RuntimeError):
    """An optimum could not be found or could not be proved exactly.

    Raised instead of ever returning an unverified number; the message says
    which step failed.
    """
