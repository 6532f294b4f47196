"""The command line contract of language.md: exit codes, JSON shape, several files."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest

HOLDS = """agreement "two"
shares value
party a
party b
worth {a} = 1
worth {b} = 1
worth all = 4
payout by equal split
require stable
"""


ROOT = Path(__file__).parent.parent
ENV = dict(os.environ, NO_COLOR="1", PYTHONPATH=str(ROOT))  # this tree's pactlang, from any directory


def run(*args, cwd=None, stdin=None):
    return subprocess.run([sys.executable, "-m", "pactlang", *args], capture_output=True, text=True, cwd=cwd,
                          input=stdin, env=ENV)


@pytest.fixture
def files(tmp_path: Path):
    (tmp_path / "ok.deal").write_text(HOLDS)
    (tmp_path / "bad.deal").write_text(HOLDS.replace("payout by equal split", "payout a = 4\npayout b = 0"))
    (tmp_path / "broken.deal").write_text(HOLDS.replace("party b", "party b:"))
    (tmp_path / "unknown.deal").write_text(HOLDS.replace("payout by equal split", "payout by equal split\n"
                                                          "contingency \"later\" { without a }"))
    return tmp_path


def test_exit_codes(files):
    assert run("check", str(files / "ok.deal")).returncode == 0
    assert run("check", str(files / "bad.deal")).returncode == 1
    assert run("check", str(files / "ok.deal"), str(files / "bad.deal")).returncode == 1
    broken = run("check", str(files / "broken.deal"))
    assert broken.returncode == 2
    assert "Traceback" not in broken.stderr + broken.stdout
    # `party b:` with nothing after the colon: the line ends too early
    assert "broken.deal:4:9: error: unexpected end of line" in broken.stderr  # diagnostics on stderr
    assert run("check", str(files / "missing.deal")).returncode == 2


def test_json_document(files):
    out = run("check", str(files / "bad.deal"), str(files / "ok.deal"), "--format", "json", "--top", "1")
    doc = json.loads(out.stdout)
    assert [f["agreement"] for f in doc["files"]] == ["two", "two"]
    (result,) = doc["files"][0]["results"]
    assert result["status"] == "fails" and result["requirement"] == "stable" and result["line"] == 10
    assert result["contingency"] is None and result["method"]
    # b alone earns 1 and receives 0 [derived]
    assert Fraction(result["worst_excess"]) == 1
    assert len(result["counterexamples"]) == 1
    cex = result["counterexamples"][0]
    assert cex["coalition"] == ["b"] and Fraction(cex["excess"]) == 1 and Fraction(cex["worth"]) == 1
    assert Fraction(cex["payout"]) == 0 and cex["parameters"] == {}
    assert doc["files"][1]["results"][0]["status"] == "holds"


def test_text_report_names_the_worst_coalition(files):
    out = run("check", str(files / "bad.deal"))
    assert "fails" in out.stdout and "{b}" in out.stdout
    assert "do not replace legal" in out.stdout


def test_relative_paths_in_output(files):
    out = run("check", "bad.deal", cwd=files)
    assert out.stdout.startswith("bad.deal:")


def test_large_coalitions_are_shortened_in_text_only():
    from pactlang.render_text import coalition_text

    parties = tuple(f"p{i}" for i in range(12))
    assert coalition_text(("p1", "p2"), parties) == "{p1, p2}"
    assert coalition_text(parties[:10], parties) == "all except {p10, p11}"
    assert coalition_text(parties[:7], parties) == "{p0, p1, p2, p3, ... 3 more}"
    assert coalition_text(parties, parties) == "all"


# ---------------------------------------------------------------- internal errors (exit 4, never 1)

FAILS_TEXT = HOLDS.replace("payout by equal split", "payout a = 4\npayout b = 0")


def run_main(monkeypatch, capsys, *args) -> tuple[int, str, str]:
    """The console command in this process (so a stage can be made to crash)."""
    from pactlang.cli import main

    monkeypatch.setattr(sys, "argv", ["pactlang", *args])
    with pytest.raises(SystemExit) as info:
        main()
    captured = capsys.readouterr()
    return info.value.code, captured.out, captured.err


@pytest.fixture
def three(tmp_path: Path, monkeypatch):
    """a.deal fails, b.deal crashes while it is checked, c.deal holds."""
    import pactlang.run as run_module

    (tmp_path / "a.deal").write_text(FAILS_TEXT)
    (tmp_path / "b.deal").write_text(HOLDS)
    (tmp_path / "c.deal").write_text(HOLDS)
    real = run_module.check_model

    def crashing(model, options):
        if model.path.endswith("b.deal"):
            raise ValueError("tuple.index(x): x not in tuple")  # the shape of the crash in the trust issue
        return real(model, options)

    monkeypatch.setattr(run_module, "check_model", crashing)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_internal_error_in_text_keeps_the_other_files_and_exits_4(three, monkeypatch, capsys):
    code, out, err = run_main(monkeypatch, capsys, "check", "a.deal", "b.deal", "c.deal")
    assert code == 4  # not 1, though a.deal fails
    assert "Traceback" not in out + err
    assert "a.deal: two" in out and "c.deal: two" in out and "fails" in out and "holds" in out
    assert "b.deal:1:1: error: internal error while checking the agreement: ValueError: tuple.index(x)" in err
    assert "please report it" in err and "PACTLANG_DEBUG" in err


def test_internal_error_traceback_only_when_asked(three, monkeypatch, capsys):
    monkeypatch.setenv("PACTLANG_DEBUG", "1")
    code, _, err = run_main(monkeypatch, capsys, "check", "b.deal")
    assert code == 4 and "Traceback" in err and "crashing" in err


def test_internal_error_in_json_is_a_file_entry(three, monkeypatch, capsys):
    code, out, _ = run_main(monkeypatch, capsys, "check", "--format", "json", "a.deal", "b.deal", "c.deal")
    assert code == 4
    doc = json.loads(out)
    by_path = {f["path"]: f for f in doc["files"]}
    assert [r["status"] for r in by_path["a.deal"]["results"]] == ["fails"]
    assert [r["status"] for r in by_path["c.deal"]["results"]] == ["holds"]
    b = by_path["b.deal"]
    assert b["results"] == [] and b["internal_error"].startswith("internal error while checking the agreement")
    assert [d["code"] for d in b["diagnostics"]] == ["internal-error"]
    assert "internal_error" not in by_path["a.deal"]


def test_crash_while_reading_or_linting_is_internal_too(tmp_path: Path, monkeypatch, capsys):
    import pactlang.run as run_module

    (tmp_path / "a.deal").write_text(HOLDS)
    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(run_module, "lint_diagnostics", lambda loaded: 1 / 0)
    code, out, err = run_main(monkeypatch, capsys, "check", "a.deal")
    assert code == 4 and "holds" in out  # the verdicts survive a crash in lint
    assert "internal error while linting the agreement: ZeroDivisionError" in err
    monkeypatch.setattr(run_module, "load_file", lambda path: [][1])
    code, out, err = run_main(monkeypatch, capsys, "check", "a.deal")
    assert code == 4 and "internal error while reading the agreement: IndexError" in err


def test_a_crash_outside_any_file_exits_4_without_traceback(tmp_path: Path, monkeypatch, capsys):
    import pactlang.run as run_module

    (tmp_path / "a.deal").write_text(HOLDS)
    monkeypatch.setattr(run_module, "check_files", lambda *a, **k: {}["boom"])
    code, out, err = run_main(monkeypatch, capsys, "check", str(tmp_path / "a.deal"))
    assert code == 4 and "Traceback" not in err
    assert "pactlang: error: internal error: KeyError: 'boom'" in err


def test_solve_repair_and_lint_crashes_exit_4(tmp_path: Path, monkeypatch, capsys):
    import pactlang.lint as lint_module
    import pactlang.repair as repair_module
    import pactlang.solve as solve_module

    (tmp_path / "a.deal").write_text(HOLDS)
    (tmp_path / "b.deal").write_text(HOLDS)
    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(solve_module, "solve_model", lambda model: [][0])
    code, out, err = run_main(monkeypatch, capsys, "solve", "a.deal")
    assert code == 4 and "a.deal:1:1: error: internal error while analysing the agreement: IndexError" in err
    code, out, err = run_main(monkeypatch, capsys, "solve", "--format", "json", "a.deal", "b.deal")
    assert code == 4 and [f["error"] for f in json.loads(out)["files"]] == ["internal error"] * 2
    monkeypatch.setattr(repair_module, "repair_model", lambda *a: [][0])
    code, out, err = run_main(monkeypatch, capsys, "repair", "--target", "1", "a.deal")
    assert code == 4 and "internal error" in err and "Traceback" not in err
    real = lint_module.lint_model
    monkeypatch.setattr(lint_module, "lint_model",
                        lambda doc, model: [][0] if model and model.path.endswith("a.deal") else real(doc, model))
    code, out, err = run_main(monkeypatch, capsys, "lint", "--format", "json", "a.deal", "b.deal")
    assert code == 4
    files = json.loads(out)["files"]
    assert "internal_error" in files[0] and "internal_error" not in files[1]


# ---------------------------------------------------------------- options and inputs

@pytest.mark.parametrize("command, value", [("check", v) for v in ("nan", "inf", "-inf", "-1", "0", "soon")]
                         + [("solve", "nan"), ("repair", "-1")])
def test_time_limit_must_be_positive_and_finite(files, command, value):
    out = run(command, "--time-limit", value, str(files / "ok.deal"))
    assert out.returncode == 2, out.stdout + out.stderr
    assert "Traceback" not in out.stderr and "--time-limit" in out.stderr
    if value != "soon":
        assert "positive, finite number of seconds" in out.stderr


THREE_WITH_CONTINGENCY = """agreement "three"
shares value
party a
party b
party c
worth S = count(S)
payout by equal split
contingency "later" { without a }
require stable
"""


def test_time_limit_is_one_deadline_for_the_whole_command(files, monkeypatch):
    """Once the command's deadline has passed, what is left is `unknown`: the
    second scenario is not started, the first file's verdict stands."""
    from pactlang.check import CheckOptions
    from pactlang.deadline import REASON, Deadline
    from pactlang.run import check_files

    now = [0.0]
    deadline = Deadline(5, clock=lambda: now[0])
    import pactlang.check as check_module

    real = check_module.Checker.run

    def slow(self):
        out = real(self)
        now[0] += 3  # each scenario "takes" 3 s of the 5
        return out

    monkeypatch.setattr(check_module.Checker, "run", slow)
    (files / "later.deal").write_text(THREE_WITH_CONTINGENCY)
    run_report, _ = check_files([str(files / "ok.deal"), str(files / "later.deal")],
                                CheckOptions(time_limit=5, deadline=deadline))
    first, second = run_report.files
    assert [r.status for r in first.results] == ["holds"]
    # baseline of the second file ran (3 s < 5 s), its contingency did not
    assert [(r.contingency, r.status, r.reason) for r in second.results] == [
        (None, "holds", None), ("later", "unknown", REASON)]


def test_payout_rules_stop_at_the_deadline():
    """A nucleolus payout checks the deadline between its rounds."""
    from pactlang.check import CheckOptions, check_model
    from pactlang.deadline import REASON, Deadline
    from pactlang.load import load_text

    text = HOLDS.replace("payout by equal split", "payout by nucleolus")
    ticks = iter([0.0, 0.0, 0.0] + [100.0] * 100)  # passes inside the payout computation
    deadline = Deadline(1, clock=lambda: next(ticks))
    (result,) = check_model(load_text(text).model, CheckOptions(deadline=deadline))
    assert (result.status, result.reason, result.method) == ("unknown", REASON, "deadline")
    (result,) = check_model(load_text(text).model)
    assert result.status == "holds"


def test_stdin_and_directories_everywhere(files):
    (files / "sub").mkdir()
    (files / "sub" / "deep").mkdir()
    (files / "sub" / "deep" / "one.deal").write_text(HOLDS)
    (files / "sub" / ".#one.deal").symlink_to(files / "sub" / "gone.deal")  # an editor's lock file
    for command in ("check", "solve", "lint", "fmt"):
        out = run(command, "-", stdin=HOLDS)
        assert out.returncode == 0, (command, out.stdout, out.stderr)
    out = run("repair", "--target", "1", "-", stdin=HOLDS)
    assert out.returncode == 0 and "already meets" in out.stdout, out.stderr
    out = run("check", "--format", "json", "sub", cwd=files)
    assert out.returncode == 0, out.stderr
    assert [f["path"] for f in json.loads(out.stdout)["files"]] == [str(Path("sub/deep/one.deal"))]
    assert "sub/.#one.deal: note: skipped, a link to a file that does not exist" in out.stderr
    for command in ("lint", "fmt", "solve"):
        out = run(command, "sub", cwd=files)
        assert out.returncode == 0 and "Traceback" not in out.stderr, (command, out.stderr)
        assert "skipped" in out.stderr


def test_solve_json_over_several_files_is_one_document(files):
    out = run("solve", "--format", "json", str(files / "ok.deal"), str(files / "bad.deal"))
    assert out.returncode == 0, out.stderr
    docs = json.loads(out.stdout)["files"]
    assert [Fraction(d["worth_all"]) for d in docs] == [4, 4]
    assert [d["path"].endswith(n) for d, n in zip(docs, ("ok.deal", "bad.deal"))] == [True, True]


def test_version():
    from pactlang import __version__

    out = run("--version")
    assert out.returncode == 0 and out.stdout.strip() == f"pactlang {__version__}"
