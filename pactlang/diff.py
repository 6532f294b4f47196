"""Two versions of an agreement -> `AgreementDiff`: verdicts and payouts before and after.

A version is a file on disk or `REV:PATH`, read through `git show` so that a
review in any repository (or in CI) can compare a pull request with its base.
Requirements are matched by their canonical text and scenario, not by line,
so moving a line is no change. A contingency is matched by name; one whose
name is gone but whose lines reappear under a new name counts as renamed.
"""

from __future__ import annotations

import subprocess
from collections import Counter
from dataclasses import dataclass, field
from fractions import Fraction

from .check import CheckOptions, check_model
from .diagnostics import AgreementError, Diagnostic, error
from .formula import EvaluationError
from .load import FILE_START, decode_source, load_text, read_text
from .results import FAILS, HOLDS, Result
from .worths import PayoutUnavailable, Worths, payout

# What a requirement's move between two versions is called, worst news first.
NEWLY_FAILS, NEW, REMOVED, CHANGED, NOW_HOLDS, UNCHANGED = (
    "newly fails", "new", "removed", "changed", "now holds", "unchanged")


@dataclass
class Version:
    """One side of the comparison: where it came from and what `check` says of it."""

    spec: str
    label: str
    exists: bool = True
    title: str | None = None
    unit: str | None = None
    parties: tuple[str, ...] = ()
    results: list[Result] = field(default_factory=list)
    payouts: dict[str, Fraction] | None = None
    payout_note: str | None = None  # why payouts could not be computed
    contingency_lines: dict[str, tuple] = field(default_factory=dict)
    diagnostics: list[Diagnostic] = field(default_factory=list)

    @property
    def has_errors(self) -> bool:
        return any(d.is_error for d in self.diagnostics)


@dataclass(frozen=True)
class RequirementChange:
    requirement: str
    contingency: str | None  # the scenario's name in NEW (in OLD for a removed one)
    renamed_from: str | None
    before: Result | None
    after: Result | None
    change: str
    newly_failing: tuple[tuple[str, ...], ...] = ()  # coalitions that break it now, not before


@dataclass(frozen=True)
class PayoutChange:
    party: str
    before: Fraction | None
    after: Fraction | None

    @property
    def change(self) -> Fraction | None:
        if self.before is None or self.after is None:
            return None
        return self.after - self.before


@dataclass
class AgreementDiff:
    old: Version
    new: Version
    requirements: list[RequirementChange]
    payouts: list[PayoutChange]

    @property
    def exit_code(self) -> int:
        """2 when either version is wrong input, 1 when a requirement that held now fails, else 0."""
        if self.old.has_errors or self.new.has_errors:
            return 2
        return 1 if any(r.change == NEWLY_FAILS for r in self.requirements) else 0


class VersionError(Exception):
    """A version that cannot be read at all (not a file, not a git revision)."""


def is_revision_spec(spec: str) -> bool:
    """`REV:PATH` rather than a plain path (a file that exists always wins)."""
    import os

    rev, sep, path = spec.partition(":")
    return bool(sep and rev and path) and not os.path.exists(spec)


def read_version_text(spec: str) -> tuple[str | None, str]:
    """The text of a version (None when the file did not exist at that revision) and its label."""
    if not is_revision_spec(spec):
        return read_text(spec), spec
    rev, _, path = spec.partition(":")
    try:
        done = subprocess.run(["git", "show", f"{rev}:{path}"], capture_output=True, timeout=60)
    except (OSError, subprocess.TimeoutExpired) as exc:
        raise VersionError(f"cannot run git to read `{spec}`: {exc}") from None
    if done.returncode != 0:
        message = done.stderr.decode("utf-8", "replace").strip()
        if "does not exist in" in message or "exists on disk, but not in" in message:
            return None, spec
        first = message.splitlines()[-1] if message else "git failed"
        raise VersionError(f"cannot read `{spec}` from git: {first.removeprefix('fatal: ')}")
    return decode_source(done.stdout).text, spec  # as a file is read: BOM, CR line ends, located errors


def analyse_version(spec: str, options: CheckOptions) -> Version:
    """Read, check and pay out one version; problems become diagnostics, never exceptions."""
    version = Version(spec, spec)
    try:
        text, version.label = read_version_text(spec)
    except AgreementError as exc:
        version.diagnostics.extend(exc.diagnostics)
        return version
    except VersionError as exc:
        version.diagnostics.append(error("no-file", str(exc), FILE_START))
        return version
    if text is None:
        version.exists = False
        return version
    try:
        loaded = load_text(text, spec)
    except AgreementError as exc:
        version.diagnostics.extend(exc.diagnostics)
        return version
    model = loaded.model
    version.title, version.unit, version.parties = model.title, model.unit, model.parties
    version.contingency_lines = {c.name: c.lines for c in model.contingencies}
    try:
        version.results = check_model(model, options)
    except AgreementError as exc:
        version.diagnostics.extend(exc.diagnostics)
    try:
        amounts = payout(Worths(model))
        version.payouts = dict(zip(model.parties, amounts))
    except (PayoutUnavailable, EvaluationError) as exc:
        version.payout_note = getattr(exc, "message", None) or str(exc)
    return version


def _renames(old: Version, new: Version) -> dict[str, str]:
    """Old contingency name -> new name, for contingencies whose lines stayed and name changed."""
    gone = [n for n in old.contingency_lines if n not in new.contingency_lines]
    fresh = [n for n in new.contingency_lines if n not in old.contingency_lines]
    renames = {}
    for name in gone:
        for candidate in fresh:
            if candidate not in renames.values() and new.contingency_lines[candidate] == old.contingency_lines[name]:
                renames[name] = candidate
                break
    return renames


def _keyed(results: list[Result], rename: dict[str, str] | None = None) -> dict[tuple, Result]:
    """Results keyed by (requirement text, scenario, occurrence), so a repeated line stays apart."""
    seen: Counter = Counter()
    keyed = {}
    for r in results:
        scenario = (rename or {}).get(r.contingency, r.contingency)
        base = (r.requirement, scenario)
        keyed[base + (seen[base],)] = r
        seen[base] += 1
    return keyed


def _classify(before: Result | None, after: Result | None) -> str:
    if before is None:
        return NEW
    if after is None:
        return REMOVED
    if before.status == HOLDS and after.status == FAILS:
        return NEWLY_FAILS
    if before.status != HOLDS and after.status == HOLDS:
        return NOW_HOLDS
    if before.status != after.status or before.worst_excess != after.worst_excess:
        return CHANGED
    return UNCHANGED


def compare(old: Version, new: Version) -> AgreementDiff:
    """The requirement-by-requirement and party-by-party comparison of two analysed versions."""
    renames = _renames(old, new)
    before = _keyed(old.results, renames)
    after = _keyed(new.results)
    back = {v: k for k, v in renames.items()}
    changes = []
    for key in list(after) + [k for k in before if k not in after]:
        b, a = before.get(key), after.get(key)
        newly = ()
        if a is not None and a.status == FAILS:
            known = {c.coalition for c in b.counterexamples} if b is not None else set()
            newly = tuple(c.coalition for c in a.counterexamples if c.coalition not in known)
        scenario = key[1]
        changes.append(RequirementChange(
            requirement=key[0], contingency=scenario,
            renamed_from=back.get(scenario) if a is not None else None,
            before=b, after=a, change=_classify(b, a), newly_failing=newly))
    payouts = []
    old_pay, new_pay = old.payouts or {}, new.payouts or {}
    for party in list(new.parties) + [p for p in old.parties if p not in new.parties]:
        payouts.append(PayoutChange(party, old_pay.get(party), new_pay.get(party)))
    return AgreementDiff(old, new, changes, payouts)


def diff_versions(old_spec: str, new_spec: str, options: CheckOptions = CheckOptions()) -> AgreementDiff:
    """OLD and NEW (files or `REV:PATH`) -> their comparison."""
    return compare(analyse_version(old_spec, options), analyse_version(new_spec, options))
