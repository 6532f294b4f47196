"""Mutated agreement text never crashes: every outcome is a result or a diagnostic."""

from __future__ import annotations

from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from pactlang.check import CheckOptions
from pactlang.results import EXIT_INPUT
from pactlang.run import check_file

SEED = (Path(__file__).parent / "cases" / "parse" / "core_syntax.deal").read_text().split("#### expected")[0]
PIECES = ["{", "}", "(", ")", ",", ";", "..", "=", "%", "-", "/", "0", "\"", "#", "\n", " in ", " all ",
          "worth", "payout", "party", "x", "S", "1e5", "\x00", "é", "\t", "'", "by", "rest", "within"]


@st.composite
def mutated(draw):
    text = SEED
    for _ in range(draw(st.integers(1, 4))):
        pos = draw(st.integers(0, len(text)))
        op = draw(st.sampled_from(["insert", "delete", "replace"]))
        piece = draw(st.sampled_from(PIECES))
        if op == "insert":
            text = text[:pos] + piece + text[pos:]
        elif op == "delete":
            text = text[:pos] + text[pos + draw(st.integers(1, 8)):]
        else:
            text = text[:pos] + piece + text[pos + len(piece):]
    return text


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mutated())
def test_mutations_give_diagnostics_not_tracebacks(tmp_path_factory, text):
    path = tmp_path_factory.mktemp("m") / "m.deal"
    path.write_text(text, encoding="utf-8")
    report, _ = check_file(str(path), CheckOptions())
    if report.has_errors:
        for d in report.diagnostics:
            assert d.span.line >= 1 and d.span.column >= 1 and d.message
    else:
        assert report.agreement is not None


def test_broken_input_exits_2_without_traceback(tmp_path):
    import subprocess
    import sys

    path = tmp_path / "x.deal"
    path.write_text(SEED.replace("payout ferry = 10%", "payout ferry = 10%%"))
    out = subprocess.run([sys.executable, "-m", "pactlang", "check", str(path)], capture_output=True, text=True)
    assert out.returncode == EXIT_INPUT
    assert "Traceback" not in out.stdout + out.stderr
    assert ":13:" in out.stderr  # diagnostics go to stderr, the report to stdout
