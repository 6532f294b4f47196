"""Lint: one agreement per rule code that triggers it, clean agreements that do not, the CLI."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings

from pactlang.diagnostics import AgreementError
from pactlang.lint import RULES, lint_model
from pactlang.load import load_text
from pactlang.parse import parse_text
from test_format import agreement as generated_agreement  # the generator of the formatter's property test

HERE = Path(__file__).parent
AGREEMENTS = sorted((HERE.parent / "agreements").glob("*.deal"))


def agreement(body: str, kind: str = "value") -> str:
    return f'agreement "lint case"\nshares {kind}\n{body.strip()}\n'


def lint_text(text: str):
    """Lint with the model when the text resolves, else with the syntax only."""
    doc = parse_text(text)
    try:
        model = load_text(text).model
    except AgreementError:
        model = None
    return lint_model(doc, model)


TWO = "party a: w 1\nparty b: w 2\n"

# (code, agreement text, line of the finding, words in the message)
CASES = [
    ("unused-attribute", agreement(TWO.replace("w 1", "w 1, size 3") + "worth S = sum(w in S)\npayout by equal split"),
     3, "`size` is never used"),
    ("unused-param", agreement(TWO + "param rate = 2\nworth S = sum(w in S)\npayout by equal split"),
     5, "param `rate` is never used"),
    ("uneven-attribute", agreement("party a\nparty b: w 2\nparty c: w 3\nworth S = count(S)\n"
                                   "payout a = 1\npayout rest by proportional to w"),
     3, "party `a` has no `w`"),
    ("zero-weights", agreement("party a: w 0\nparty b: w 0\nworth S = count(S)\npayout by proportional to w"),
     6, "add up to zero"),
    ("negative-weight", agreement("party a: w -1\nparty b: w 3\nworth S = count(S)\npayout by proportional to w"),
     3, "negative weight `w -1`"),
    ("shares-over-100", agreement(TWO + "worth S = 10 * count(S)\npayout a = 60%\npayout b = 50%"),
     7, "110% of worth(all) (22 of 20)"),
    ("shares-under-100", agreement(TWO + "worth S = 10 * count(S)\npayout a = 40%\npayout b = 50%"),
     6, "90% of worth(all)"),
    ("nothing-left", agreement("party a\nparty b\nparty c\nworth S = count(S)\npayout a = 100%\n"
                               "payout rest by equal split"),
     8, "shares nothing"),
    ("payout-exceeds-total", agreement(TWO + "worth S = 10 * count(S)\npayout a = 30\npayout rest by equal split"),
     6, "payout of `a` (30) is larger than worth(all) (20)"),
    ("redundant-worth", agreement(TWO + "worth S = 40 * count(S)\nworth {a} = 40\nworth {b} = 41\n"
                                  "payout by equal split"),
     6, "formula already gives {a} the worth 40"),
    ("unreachable-worth", agreement(TWO + "worth S = count(S)\nworth otherwise = 0\npayout by equal split"),
     6, "`worth otherwise` is never used"),
    ("not-superadditive", agreement("party a\nparty b\nworth {a} = 5\nworth {b} = 5\nworth all = 8\n"
                                    "payout by equal split"),
     7, "`{a, b}` is worth 8, less than `{a}` and `{b}` apart (5 + 5 = 10)"),
    ("not-subadditive", agreement("party a\nparty b\nworth {a} = 5\nworth {b} = 5\nworth all = 12\n"
                                  "payout by equal split", kind="cost"),
     7, "`{a, b}` costs 12, more than `{a}` and `{b}` apart (5 + 5 = 10)"),
    ("negative-bound", agreement("party a\nparty b\nworth {a} = 0\nworth {b} = 0\nworth all = 10\n"
                                 "payout by equal split\nrequire stable within -1"),
     9, "below zero"),
    ("unmeetable-requirement", agreement("party a\nparty b\nworth {a} = 5\nworth {b} = 5\nworth all = 10\n"
                                         "payout by equal split\nrequire stable within -1"),
     9, "excesses of `{a}` and `{b}` add up to 0, above the -2 the bound allows"),
    ("empty-contingency", agreement(TWO + "worth S = count(S)\npayout by equal split\ncontingency \"later\" {}"),
     7, "contingency `later` has no lines"),
    ("duplicate-contingency-line", agreement(TWO + "worth S = count(S)\npayout by equal split\n"
                                             "contingency \"x\" {\n  without a\n  without a\n}"),
     9, "`without a` is given twice"),
    ("conflicting-contingency-lines", agreement(TWO + "param k = 1\nworth S = k * count(S)\npayout by equal split\n"
                                                "contingency \"x\" { k = 2; k in 3 .. 4 }"),
     8, "sets `k` twice: `k = 2` and `k in 3 .. 4`"),
    ("ineffective-contingency-line", agreement(TWO + "param k = 1\nworth S = k * count(S)\npayout by equal split\n"
                                               "contingency \"x\" { k = 1 }"),
     8, "`k` is already 1"),
    ("identical-contingencies", agreement(TWO + "worth S = count(S)\npayout by equal split\n"
                                          "contingency \"x\" { without a }\ncontingency \"y\" { without a }"),
     8, "contingency `y` has the same lines as `x`"),
    ("unused-column", agreement(f'parties from "{HERE / "data" / "lint_members.csv"}"\n'
                                "worth S = sum(w in S)\npayout by equal split"),
     3, "column `region` of"),
]


@pytest.mark.parametrize("code,text,line,words", CASES, ids=[c[0] for c in CASES])
def test_each_rule_fires(code: str, text: str, line: int, words: str) -> None:
    found = [d for d in lint_text(text) if d.code == code]
    assert len(found) == 1, [d.render("x") for d in lint_text(text)]
    d = found[0]
    assert d.span.line == line and words in d.message
    assert d.severity == "warning" and d.help


def test_every_rule_has_a_case_and_documentation() -> None:
    assert {c[0] for c in CASES} == set(RULES)
    for rule in RULES.values():
        assert rule.summary and rule.help and rule.example
        assert rule.code == rule.code.lower() and " " not in rule.code


@pytest.mark.parametrize("path", AGREEMENTS, ids=[p.stem for p in AGREEMENTS])
def test_sample_agreements_lint_without_crashing(path: Path) -> None:
    for d in lint_text(path.read_text(encoding="utf-8")):
        assert d.code in RULES and d.span.line >= 1


# ---------------------------------------------------------------- precision


def test_meetable_negative_bound_is_not_called_unmeetable() -> None:
    # x = (5, 5) gives both single parties excess -5 <= -1: the strict bound can be met
    text = agreement("party a\nparty b\nworth {a} = 0\nworth {b} = 0\nworth all = 10\n"
                     "payout by equal split\nrequire stable within -1")
    assert [d.code for d in lint_text(text)] == ["negative-bound"]


def test_unmeetable_core_found_by_a_split() -> None:
    # {a} and {b} earn 12 apart but all earns 10: under any split of 10 one of
    # them gains by leaving (e(a) + e(b) = 12 - 10 = 2 > 0)
    text = agreement("party a\nparty b\nworth {a} = 6\nworth {b} = 6\nworth all = 10\n"
                     "payout by equal split\nrequire stable\nrequire stable within 1\nrequire stable within 1%")
    found = {d.span.line: d.message for d in lint_text(text) if d.code == "unmeetable-requirement"}
    assert set(found) == {9, 11}  # within 1 leaves room 2 = gap 2: meetable; 1% of 6 + 6 is 0.12
    assert "add up to 2, above the 0 the bound allows" in found[9]


def test_superadditivity_is_exact_with_fractions() -> None:
    # 1/3 + 1/3 + 1/3 = 1 exactly: merging loses nothing, so no warning
    ok = agreement("party a\nparty b\nparty c\nworth S = count(S) / 3\npayout by equal split")
    assert not [d for d in lint_text(ok) if d.code == "not-superadditive"]
    bad = agreement("party a\nparty b\nparty c\nworth S = count(S) / 3 - (if count(S) == 2 then 1/1000000 else 0)\n"
                    "payout by equal split")
    msgs = [d.message for d in lint_text(bad) if d.code == "not-superadditive"]
    assert len(msgs) == 1 and "(3 such pairs)" in msgs[0]


def test_superadditivity_names_the_worst_pair_among_many_parties() -> None:
    parties = "\n".join(f"party p{i}: w {i + 1}" for i in range(12))
    text = agreement(parties + "\nworth S = sum(w in S) - (if count(S) == 12 then 1 else 0)\npayout by equal split")
    msgs = [d.message for d in lint_text(text) if d.code == "not-superadditive"]
    # only splits of everyone lose, by exactly 1 each: 2**11 - 1 = 2047 pairs
    assert len(msgs) == 1 and "(2047 such pairs)" in msgs[0]


def test_table_entry_kept_when_a_contingency_moves_the_formula() -> None:
    text = agreement(TWO + "param k = 1\nworth S = 40 * k * count(S)\nworth {a} = 40\npayout by equal split\n"
                     "contingency \"dear\" { k in 1 .. 2 }")
    assert "redundant-worth" not in [d.code for d in lint_text(text)]


def test_without_model_nothing_repeats_resolve_errors() -> None:
    # `b` lacks `w`, which the formula needs: resolve reports it; lint must not
    text = agreement("party a: w 1\nparty b\nparam unused = 1\nworth S = sum(w in S)\npayout by equal split")
    with pytest.raises(AgreementError) as info:
        load_text(text)
    assert [d.code for d in info.value.diagnostics] == ["missing-attribute"]
    assert [d.code for d in lint_model(parse_text(text), None)] == ["unused-param"]


def test_percent_shares_without_model() -> None:
    text = agreement("party a\nparty b\nparty c\npayout a = 70%\npayout b = 40%\npayout rest by equal split")
    assert [d.code for d in lint_model(parse_text(text), None)] == ["shares-over-100"]


def test_clean_agreement_has_no_findings() -> None:
    text = agreement(TWO + "param k = 2\nworth S = k * sum(w in S) + count(S)\nworth {a, b} = 9\n"
                     "payout a = 40%\npayout rest by proportional to w\n"
                     "contingency \"dear\" { k in 2 .. 3 }\ncontingency \"a leaves\" { without a }\n"
                     "require stable within 5%")
    assert lint_text(text) == []


def test_division_by_zero_does_not_crash_lint() -> None:
    text = agreement(TWO + "param k = 0\nworth S = sum(w in S) / k\npayout by equal split")
    assert [d.code for d in lint_text(text)] == []


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(generated_agreement())
def test_lint_never_crashes_on_generated_agreements(text: str) -> None:
    """`check` runs lint on every file, so lint must not raise on any agreement."""
    doc = parse_text(text)
    for d in lint_model(doc, None) + lint_text(text):
        assert d.code in RULES and d.span.line >= 1 and d.help


# ---------------------------------------------------------------- CLI


def run_lint(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, NO_COLOR="1", PYTHONPATH=str(HERE.parent))
    return subprocess.run([sys.executable, "-m", "pactlang", "lint", *args], cwd=cwd, capture_output=True,
                          text=True, env=env)


def test_cli_text_json_strict_and_ignore(tmp_path: Path) -> None:
    (tmp_path / "a.deal").write_text(CASES[1][1])  # unused-param
    text = run_lint("a.deal", cwd=tmp_path)
    assert text.returncode == 0
    assert text.stdout.splitlines() == [
        "a.deal:5:7: warning: param `rate` is never used [unused-param]",
        "  help: remove it, or use it in a worth or payout line",
        "1 file: 1 warning, 0 errors",
    ]
    assert run_lint("--strict", "a.deal", cwd=tmp_path).returncode == 1
    assert run_lint("--strict", "--ignore", "unused-param", "a.deal", cwd=tmp_path).returncode == 0
    data = json.loads(run_lint("--format", "json", "a.deal", cwd=tmp_path).stdout)
    assert data["files"][0]["diagnostics"][0] | {} == {
        "line": 5, "column": 7, "severity": "warning", "code": "unused-param",
        "message": "param `rate` is never used", "help": "remove it, or use it in a worth or payout line"}


def test_cli_reports_input_errors_with_exit_2(tmp_path: Path) -> None:
    (tmp_path / "bad.deal").write_text('agreement "x"\nparty a b\n')
    result = run_lint("bad.deal", "missing.deal", cwd=tmp_path)
    assert result.returncode == 2
    assert "bad.deal:2:9: error: unexpected `b` [syntax]" in result.stdout
    assert "missing.deal:1:1: error: no such file [no-file]" in result.stdout
    assert result.stdout.splitlines()[-1] == "2 files: 0 warnings, 2 errors"
