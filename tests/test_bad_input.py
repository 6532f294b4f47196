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


# ---------------------------------------------------------------- bytes: encodings, marks, line endings

BROKEN = 'agreement "x"\nshares value\nparty a b\n'  # `b` at 3:9 is unexpected


def _check_bytes(tmp_path, data: bytes, *args: str):
    import os
    import subprocess
    import sys

    env = dict(os.environ, NO_COLOR="1", PYTHONPATH=str(Path(__file__).parent.parent), LC_ALL="C",
               PYTHONUTF8="0", PYTHONIOENCODING="ascii:strict")
    return subprocess.run([sys.executable, "-m", "pactlang", "check", *args], cwd=tmp_path, input=data,
                          capture_output=True, env=env)


def test_byte_order_mark_and_line_endings_keep_positions():
    """A leading BOM is dropped and CR LF or a lone CR is a line break, so the
    error stays at the line and column an editor shows."""
    from pactlang.diagnostics import AgreementError
    from pactlang.load import decode_source, load_text

    for data in (BROKEN.encode(), b"\xef\xbb\xbf" + BROKEN.encode(), BROKEN.replace("\n", "\r\n").encode(),
                 BROKEN.replace("\n", "\r").encode()):
        source = decode_source(data)
        try:
            load_text(source.text)
        except AgreementError as exc:
            span = exc.diagnostics[0].span
            assert (span.line, span.column) == (3, 9), data
            assert "unexpected `b`" in exc.diagnostics[0].message
        else:
            raise AssertionError("a broken agreement loaded")
    assert decode_source(b"a\r\nb").newline == "\r\n" and decode_source(b"a\rb").newline == "\r"
    assert decode_source(b"\xef\xbb\xbfa").bom and decode_source(b"\xef\xbb\xbfa").text == "a"


def test_invalid_utf8_is_located_after_line_breaks_of_every_kind():
    from pactlang.diagnostics import AgreementError
    from pactlang.load import decode_source

    try:
        decode_source(b'agreement "x"\r\rshares "caf\xe9"\n')
    except AgreementError as exc:
        span = exc.diagnostics[0].span
        assert (span.line, span.column) == (3, 12) and "not valid UTF-8" in exc.diagnostics[0].message
    else:
        raise AssertionError("invalid UTF-8 accepted")


def test_check_reads_standard_input_as_bytes(tmp_path):
    good = _check_bytes(tmp_path, b"\xef\xbb\xbf" + SEED.replace("\n", "\r").encode(), "-")
    assert good.returncode in (0, 1, 3) and b"Traceback" not in good.stderr, good.stderr
    assert b"<stdin>:" in good.stdout
    bad = _check_bytes(tmp_path, b'agreement "caf\xe9"\n', "-")
    assert bad.returncode == EXIT_INPUT and b"Traceback" not in bad.stderr
    assert b"<stdin>:1:15: error: the file is not valid UTF-8" in bad.stderr
