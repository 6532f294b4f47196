"""Rule codes -> the lint catalogue (`RULES`) and the `Diagnostic` each finding becomes.

Every rule module reports through `diag`, so a finding's code, severity and
default help line always come from this one table.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from .. import ast
from ..diagnostics import Diagnostic, warning
from ..numbers import human

WHOLE_FILE = ast.Span(1, 1, 1, 2)


@dataclass(frozen=True)
class LintRule:
    """A lint rule: its code, what it catches, general advice and an example."""

    code: str
    summary: str
    help: str
    example: str


RULES: dict[str, LintRule] = {r.code: r for r in (
    LintRule("unused-attribute", "a party attribute that no formula or payout rule reads",
             "remove it, or read it in a `worth S` formula or a `proportional to` rule",
             "`party a: calls 3, berths 2` where nothing reads `berths`"),
    LintRule("unused-column", "a column of a `parties from` file that no formula or payout rule reads",
             "remove the column from the file, or read it in a `worth S` formula or a `proportional to` rule",
             "`parties from \"members.csv\"` with a `region` column nothing reads"),
    LintRule("unused-param", "a param that no worth or payout line reads",
             "remove it, or use it in a worth or payout line",
             "`param overrun = 1` that no expression mentions"),
    LintRule("uneven-attribute", "an attribute the agreement reads that some parties lack",
             "give every party the attribute, so the rule still applies if a fixed payout line goes",
             "`payout rest by proportional to calls` and a fixed-payout party without `calls`"),
    LintRule("zero-weights", "a `proportional to` rule whose weights add up to zero",
             "the rule cannot share anything; check the attribute values",
             "`payout rest by proportional to calls` where every paid party has `calls 0`"),
    LintRule("negative-weight", "a negative weight in a `proportional to` rule",
             "a negative weight turns a share into a charge; check the sign",
             "`party a: calls -5` with `payout by proportional to calls`"),
    LintRule("shares-over-100", "fixed payouts that add up to more than worth(all)",
             "the fixed lines give away more than the whole; check the percentages or amounts",
             "`payout a = 60%` and `payout b = 50%`"),
    LintRule("shares-under-100", "every party has a fixed payout and together they fall short of worth(all)",
             "the budget does not balance; adjust a line or pay the rest by a rule",
             "`payout a = 40%` and `payout b = 50%` with no other party"),
    LintRule("nothing-left", "fixed payouts that take all of worth(all) before a `payout rest` rule",
             "the parties paid by the rest rule get nothing; check the fixed lines",
             "`payout a = 100%` followed by `payout rest by equal split`"),
    LintRule("payout-exceeds-total", "one fixed payout larger than worth(all) itself",
             "a single payout beyond the whole is usually a unit or percentage slip",
             "`payout a = 1200` when worth(all) is 120"),
    LintRule("redundant-worth", "a worth table entry equal to what the formula already gives",
             "remove the line, or keep it as a deliberate note",
             "`worth {a} = 40` where `worth S = 40 * count(S)`"),
    LintRule("unreachable-worth", "a formula or `worth otherwise` that no coalition ever uses",
             "remove it: the table (or the formula) already covers every coalition",
             "`worth otherwise = 0` beside a `worth S = ...` formula"),
    LintRule("not-superadditive", "a value agreement where two disjoint coalitions earn more apart than together",
             "merging should never lose in a value agreement; check these worths",
             "`worth {a} = 5`, `worth {b} = 5`, `worth {a, b} = 8`"),
    LintRule("not-subadditive", "a cost agreement where two disjoint coalitions pay less apart than together",
             "working together should never cost more; check these worths",
             "`worth {a} = 5`, `worth {b} = 5`, `worth {a, b} = 12`"),
    LintRule("negative-bound", "`stable within` with a bound below zero",
             "a negative bound asks every coalition to be strictly better off inside; "
             "if that is not meant, drop the minus sign",
             "`require stable within -5`"),
    LintRule("unmeetable-requirement", "a stability requirement that no payout at all can meet (proven)",
             "loosen the bound or change the worths: the coalitions named gain this much under any split",
             "`require stable within -5` with `worth {a} = 5`, `worth {b} = 5`, `worth all = 10`"),
    LintRule("empty-contingency", "a contingency with no lines",
             "it repeats the baseline; add lines or remove it",
             "`contingency \"later\" {}`"),
    LintRule("duplicate-contingency-line", "the same line twice in one contingency",
             "remove the copy",
             "`contingency \"x\" { without a; without a }`"),
    LintRule("conflicting-contingency-lines", "two lines of one contingency that set the same quantity differently",
             "the lines of a contingency apply together; keep one, or split them into two contingencies",
             "`contingency \"x\" { overrun = 1; overrun in 2 .. 3 }`"),
    LintRule("ineffective-contingency-line", "a contingency line that cannot change anything",
             "remove it, or change what it varies",
             "`overrun = 1` when `param overrun = 1`, or varying an attribute nothing reads"),
    LintRule("identical-contingencies", "two contingencies with the same lines",
             "remove one of them",
             "`contingency \"a\" { without x }` and `contingency \"b\" { without x }`"),
)}


def diag(code: str, message: str, span: ast.Span | None, help: str | None = None) -> Diagnostic:
    """A warning of rule `code`, with the rule's help unless another is given."""
    return warning(code, message, span or WHOLE_FILE, help or RULES[code].help)


def coalition_text(members) -> str:
    """Party names as a coalition, `{a, b}`."""
    return "{" + ", ".join(members) + "}"


def percent_text(ratio: Fraction) -> str:
    """A ratio as an exact percentage, `60%`."""
    return human(ratio * 100) + "%"
