"""SARIF output: valid against the OASIS SARIF 2.1.0 schema, and pointing at the right lines.

The schema in tests/data/ is the OASIS SARIF 2.1.0 JSON schema (errata 01),
copied unchanged from ../shared/sarif-schema-2.1.0.json [read: OASIS TC
repository oasis-tcs/sarif-spec, sarif-2.1/schema/sarif-schema-2.1.0.json].
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import jsonschema
import pytest

from pactlang.diagnostics import warning
from pactlang.lint import RULES
from pactlang.load import load_text
from pactlang.render_sarif import render_sarif
from pactlang.results import FAILS, HOLDS, UNKNOWN, Counterexample, FileReport, Result, RunReport
from pactlang import ast

HERE = Path(__file__).parent
SCHEMA = json.loads((HERE / "data" / "sarif-schema-2.1.0.json").read_text(encoding="utf-8"))


def validate(log: dict) -> None:
    jsonschema.validators.validator_for(SCHEMA)(SCHEMA).validate(log)


TEXT = """agreement "Three labs"
shares value in kEUR
party a
party b
party c
worth {a} = 10
worth {a, b} = 50
worth S = 20 * count(S)
payout a = 10
payout rest by equal split
contingency "c leaves" { without c }
require stable within 5
require balanced budget
"""


def hand_built_run(path: str) -> tuple[RunReport, dict]:
    model = load_text(TEXT, path).model
    req_line = 12
    span = ast.Span(req_line, 1, req_line, 25)
    fails = Result("stable within 5", req_line, None, FAILS, Fraction(15), "enumeration",
                   counterexamples=(Counterexample(("a", "b"), Fraction(50), Fraction(35), Fraction(15), Fraction(5)),),
                   span=span, worst_coalition=("a", "b"))
    unknown = Result("stable within 5", req_line, "c leaves", UNKNOWN, None, "none",
                     reason="a limit was hit", span=span)
    holds = Result("balanced budget", 13, None, HOLDS, Fraction(0), "exact sum", span=ast.Span(13, 1, 13, 24))
    report = FileReport(path, model.title, "kEUR", "value", [fails, unknown, holds],
                        [warning("unused-param", "param `k` is never used", ast.Span(4, 7, 4, 8), "remove it")])
    return RunReport([report]), {path: model}


def test_hand_built_report_is_valid_and_located(tmp_path: Path) -> None:
    path = str(tmp_path / "deals" / "three labs.deal")
    run, models = hand_built_run(path)
    log = render_sarif(run, models, base=str(tmp_path))
    validate(log)
    sarif_run = log["runs"][0]
    driver = sarif_run["tool"]["driver"]
    assert driver["name"] == "pactlang"
    ids = [r["id"] for r in driver["rules"]]
    assert {"unstable-coalition", "requirement-unknown"} | set(RULES) <= set(ids)
    for rule in driver["rules"]:
        assert rule["shortDescription"]["text"] and rule["help"]["text"]
    results = sarif_run["results"]
    assert [r["ruleId"] for r in results] == ["unused-param", "unstable-coalition", "requirement-unknown"]
    for r in results:
        assert driver["rules"][r["ruleIndex"]]["id"] == r["ruleId"]
        location = r["locations"][0]["physicalLocation"]
        assert location["artifactLocation"] == {"uri": "deals/three%20labs.deal", "uriBaseId": "%SRCROOT%"}
    lint, fails, unknown = results
    assert lint["level"] == "warning" and lint["locations"][0]["physicalLocation"]["region"]["startLine"] == 4
    assert fails["level"] == "error"
    assert fails["locations"][0]["physicalLocation"]["region"]["startLine"] == 12
    assert fails["message"]["text"] == ("`stable within 5` fails in the baseline: coalition {a, b} has excess "
                                        "15 kEUR (allowed 5 kEUR)")
    related = {(x["physicalLocation"]["region"]["startLine"], x["message"]["text"]) for x in fails["relatedLocations"]}
    assert related == {(10, "payout rule"), (9, "payout of `a`"), (7, "worth of `{a, b}`")}
    assert fails["properties"]["worstExcess"] == "15"
    assert unknown["level"] == "warning" and "a limit was hit" in unknown["message"]["text"]
    assert (11, "contingency `c leaves`") in {(x["physicalLocation"]["region"]["startLine"], x["message"]["text"])
                                               for x in unknown["relatedLocations"]}
    assert sarif_run["originalUriBaseIds"]["%SRCROOT%"]["uri"] == tmp_path.resolve().as_uri() + "/"


def test_formula_line_is_related_when_the_coalition_has_no_table_entry(tmp_path: Path) -> None:
    run, models = hand_built_run("x.deal")
    result = run.files[0].results[0]
    cex = Counterexample(("b", "c"), Fraction(40), Fraction(30), Fraction(10), Fraction(5))
    run.files[0].results[0] = Result(result.requirement, result.line, None, FAILS, Fraction(10), "enumeration",
                                     counterexamples=(cex,), span=result.span, worst_coalition=("b", "c"))
    log = render_sarif(run, models, base=str(tmp_path))
    validate(log)
    related = log["runs"][0]["results"][1]["relatedLocations"]
    assert (8, "worth formula, which gives `{b, c}` its worth") in {
        (x["physicalLocation"]["region"]["startLine"], x["message"]["text"]) for x in related}


def test_without_models_and_outside_the_base(tmp_path: Path) -> None:
    run, _ = hand_built_run("/elsewhere/x.deal")
    log = render_sarif(run, None, base=str(tmp_path))
    validate(log)
    results = log["runs"][0]["results"]
    assert all("relatedLocations" not in r for r in results)
    assert results[0]["locations"][0]["physicalLocation"]["artifactLocation"] == {"uri": "file:///elsewhere/x.deal"}


def test_empty_run_is_valid() -> None:
    log = render_sarif(RunReport())
    validate(log)
    assert log["version"] == "2.1.0" and log["runs"][0]["results"] == []


# ---------------------------------------------------------------- through the commands


def run_cli(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, NO_COLOR="1", PYTHONPATH=str(HERE.parent))
    return subprocess.run([sys.executable, "-m", "pactlang", *args], cwd=cwd, capture_output=True, text=True,
                          env=env)


UNSTABLE = """agreement "Unstable split"
shares value
party a
party b
party c
worth {a} = 1
worth {b} = 1
worth {c} = 1
worth {a, b} = 9
worth {a, c} = 2
worth {b, c} = 2
worth all = 10
payout a = 2
payout rest by equal split
require stable
"""


def test_lint_format_sarif(tmp_path: Path) -> None:
    (tmp_path / "u.deal").write_text(UNSTABLE.replace("party c", "party c\nparam spare = 1"))
    result = run_cli("lint", "--format", "sarif", "u.deal", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    log = json.loads(result.stdout)
    validate(log)
    assert [(r["ruleId"], r["locations"][0]["physicalLocation"]["region"]["startLine"])
            for r in log["runs"][0]["results"]] == [("unused-param", 6)]


def test_check_format_sarif(tmp_path: Path) -> None:
    pytest.importorskip("pactlang.commands.check")
    (tmp_path / "u.deal").write_text(UNSTABLE)
    result = run_cli("check", "--format", "sarif", "u.deal", cwd=tmp_path)
    assert result.returncode == 1, result.stderr
    log = json.loads(result.stdout)
    validate(log)
    fails = [r for r in log["runs"][0]["results"] if r["ruleId"] == "unstable-coalition"]
    assert len(fails) == 1
    # payout (2, 4, 4): {a, b} is worth 9 but gets 6, so its excess is 3, the worst
    assert fails[0]["locations"][0]["physicalLocation"]["region"]["startLine"] == 15
    assert "coalition {a, b} has excess 3" in fails[0]["message"]["text"]
    related = {x["physicalLocation"]["region"]["startLine"] for x in fails[0]["relatedLocations"]}
    assert related == {13, 14, 9}  # a's payout line, the rest rule, worth {a, b}


def test_internal_error_is_a_tool_execution_notification(tmp_path: Path, monkeypatch, capsys) -> None:
    """A crash on one file of three: the log stays valid, the other files'
    results are in it, and the run's invocation says the execution failed."""
    import pactlang.run as run_module
    from pactlang.cli import main

    (tmp_path / "a.deal").write_text(UNSTABLE)
    (tmp_path / "b.deal").write_text(UNSTABLE)
    (tmp_path / "c.deal").write_text(UNSTABLE)
    real = run_module.check_model

    def crashing(model, options):
        if model.path.endswith("b.deal"):
            raise RuntimeError("injected fault")
        return real(model, options)

    monkeypatch.setattr(run_module, "check_model", crashing)
    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(sys, "argv", ["pactlang", "check", "--format", "sarif", "a.deal", "b.deal", "c.deal"])
    with pytest.raises(SystemExit) as info:
        main()
    assert info.value.code == 4
    log = json.loads(capsys.readouterr().out)
    validate(log)
    run = log["runs"][0]
    (invocation,) = run["invocations"]
    assert invocation["executionSuccessful"] is False
    (notification,) = invocation["toolExecutionNotifications"]
    assert notification["level"] == "error" and notification["descriptor"]["id"] == "internal-error"
    assert "internal error while checking the agreement: RuntimeError: injected fault" in notification["message"]["text"]
    assert notification["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "b.deal"
    failing = sorted(r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
                     for r in run["results"] if r["ruleId"] == "unstable-coalition")
    assert failing == ["a.deal", "c.deal"]
    assert all(r["ruleId"] != "internal-error" for r in run["results"])


def test_successful_run_says_so() -> None:
    log = render_sarif(RunReport([]))
    validate(log)
    assert log["runs"][0]["invocations"] == [{"executionSuccessful": True, "toolExecutionNotifications": []}]
