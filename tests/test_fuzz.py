"""Mutated and generated agreements -> every stage answers in words, never with a traceback.

A seeded generator takes the bundled small agreements and the golden cases,
and swaps, drops, repeats and replaces tokens, truncates, inserts odd bytes,
changes line endings, adds a byte-order mark and puts in huge numbers; it
also writes long chains and deep nesting from scratch. Each text goes
through parse, format, lint and (when it parses) check, solve and repair,
in process: the library calls for parse/format/lint, the command line (via
typer's runner) for lint/check/solve/repair. Every outcome must be a result,
an `unknown` with its reason, or a located diagnostic with exit 2.
"""

from __future__ import annotations

import random
import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

from pactlang.cli import app
from pactlang.diagnostics import AgreementError
from pactlang.format import format_text
from pactlang.lint import lint_model
from pactlang.load import load_text
from pactlang.parse import parse_text

COUNT = 3000  # texts through parse and fmt per run
FULL_EVERY = 6  # every 6th text (500 in all) also goes through lint, check, solve and repair
SEED = 20261202
ROOT = Path(__file__).resolve().parent.parent
MAX_PARTIES = 6  # bundled agreements small enough to check in milliseconds

TOKEN = re.compile(r"[A-Za-z_][A-Za-z0-9_]*|[0-9]+(?:\.[0-9]+)?%?|\"[^\"\n]*\"|#[^\n]*|\.\.|[=!<>]=|\s+|.", re.S)
VOCABULARY = (
    "party", "param", "worth", "all", "otherwise", "payout", "by", "rest", "contingency", "without", "of", "in",
    "require", "stable", "within", "if", "then", "else", "and", "or", "not", "count(S)", "sum(", "max(", "min(",
    "S", "T", "{", "}", "(", ")", ",", ":", ";", "=", "==", "<=", "..", "-", "+", "*", "/", "%", "0", "1", "0.5",
    "100%", "-3", "9" * 309, "7" * 200, "1" * 5000, "0." + "0" * 300 + "1", '"x"', "\n", "\r\n", "\r",
    "\ufeff", "\x00", "\t", "\x0b", "\x0c", "é", "Münster", "\u200b", "\udcff", "'", "\\", "#",
)
ODD = ("\x00", "\ufeff", "\r", "\r\n", "\x0b", "\x0c", "\x1b", "\u2028", "\u00a0", "é", "\\", '"', "'", "{", "}", "%")


def seeds() -> list[str]:
    texts = []
    for path in sorted((ROOT / "agreements").glob("*.deal")):
        text = path.read_text(encoding="utf-8")
        if len(re.findall(r"^party ", text, re.M)) <= MAX_PARTIES:
            texts.append(text)
    for path in sorted((ROOT / "tests" / "cases").glob("*/*.deal")):
        texts.append(path.read_text(encoding="utf-8").split("#### expected\n")[0])
    return texts


def mutate(text: str, rng: random.Random) -> str:
    tokens = TOKEN.findall(text)
    for _ in range(rng.choice((1, 1, 1, 2, 3))):
        if not tokens:
            break
        i, j = rng.randrange(len(tokens)), rng.randrange(len(tokens))
        kind = rng.randrange(9)
        if kind == 0:
            tokens[i], tokens[j] = tokens[j], tokens[i]
        elif kind == 1:
            del tokens[i]
        elif kind == 2:
            tokens.insert(i, tokens[j])
        elif kind in (3, 4):
            tokens[i] = rng.choice(VOCABULARY)
        elif kind == 5:
            tokens.insert(i, rng.choice(ODD))
        elif kind == 6:
            numbers = [k for k, t in enumerate(tokens) if t[:1].isdigit()]
            if numbers:
                tokens[rng.choice(numbers)] = rng.choice(("9" * 309, "7" * 200, "1" * 5000, "0", "1" + "0" * 400))
        elif kind == 7:
            tokens = tokens[: rng.randrange(len(tokens) + 1)]
        else:
            tokens.insert(i, " ")
    out = "".join(tokens)
    roll = rng.random()
    if roll < 0.08:
        out = out.replace("\n", "\r\n")
    elif roll < 0.14:
        out = out.replace("\n", "\r")
    elif roll < 0.2:
        out = "\ufeff" + out
    return out


def generated(rng: random.Random) -> str:
    parties = [f"p{i}" for i in range(rng.randrange(2, 6))]
    head = 'agreement "made"\nshares ' + rng.choice(("cost", "value")) + "\n"
    head += "".join(f"party {p}: w {rng.randrange(1, 9)}\n" for p in parties)
    kind = rng.randrange(5)
    if kind == 0:  # a long chain of mixed terms
        ops = rng.choice((" + ", " - ", " * ", " / ", " and ", " or "))
        terms = [rng.choice((f"({rng.choice(parties)} in S)", "count(S)", "1", "2", "sum(w in S)"))
                 for _ in range(rng.choice((10, 60, 400)))]
        formula = ops.join(terms)
    elif kind == 1:  # deep nesting
        depth = rng.choice((5, 60, 99, 101, 3000))
        wrap = rng.choice(("-", "not ", "(", "if count(S) > 1 then 1 else ", "max(1, "))
        close = {"(": ")", "max(1, ": ")"}.get(wrap, "")
        formula = wrap * depth + "count(S)" + close * depth
    elif kind == 2:  # huge numbers
        big = rng.choice(("9" * 309, "7" * 200 + " * " + "7" * 200, "1" * 400, "1" + "0" * 350 + ".5"))
        formula = f"{big} * count(S) - {rng.choice(('1', big, '0.5'))}"
    elif kind == 3:
        formula = rng.choice(("count(S) / (count(S) - 2)", "max(w in S) - min(w in S)", "1 / 0",
                              "if count(S) == 2 then 10 else count(S)"))
    else:
        formula = " + ".join(f"{rng.randrange(-5, 9)} * ({p} in S)" for p in parties)
    tail = rng.choice(("payout by equal split", "payout by shapley", "payout by nucleolus",
                       "payout by proportional to w", f"payout {parties[0]} = 50%\npayout rest by equal split"))
    req = rng.choice(("require stable", "require stable within 5%", "require stable within 1",
                      "require individually rational"))
    return head + f"worth S = {formula}\n{tail}\n{req}\n"


def cases() -> list[str]:
    rng = random.Random(SEED)
    base = seeds()
    out = []
    for k in range(COUNT):
        out.append(generated(rng) if k % 5 == 0 else mutate(rng.choice(base), rng))
    return out


# `FILE:LINE:COL: error: ...`, or `FILE: error: ...` for what no line holds
LOCATED = re.compile(r"fuzz\.deal:(\d+:\d+:)? error: ")


def _library(text: str, full: bool = True) -> bool:
    """parse, format and (when `full`) lint in process; True when the text is an agreement."""
    try:
        parse_text(text)
    except AgreementError as exc:
        assert all(d.span is None or d.span.line >= 1 for d in exc.diagnostics)
        return False
    try:
        formatted = format_text(text)
    except AgreementError:
        formatted = None  # parses but does not resolve: the formatter still must not crash
    if formatted is not None:  # (the formatter proves on its own that the meaning is kept)
        assert format_text(formatted) == formatted, "formatting is not stable"
    if not full:
        return False
    try:
        loaded = load_text(text, "fuzz.deal")
    except AgreementError:
        return False
    lint_model(loaded.document, loaded.model)
    return True


def _command(runner: CliRunner, args: list[str], path: Path) -> str | None:
    """What went wrong running one command, or None."""
    result = runner.invoke(app, args + [str(path)])
    output = result.output + (result.stderr if result.stderr_bytes is not None else "")
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        return f"{args[0]} raised {result.exception!r}"
    if "Traceback" in output:
        return f"{args[0]} printed a traceback: {output[-300:]}"
    if result.exit_code not in (0, 1, 2, 3):
        return f"{args[0]} exit {result.exit_code}: {output[-300:]}"
    if result.exit_code == 2 and not LOCATED.search(output):
        return f"{args[0]} exit 2 without a diagnostic: {output[-300:]}"
    return None


def test_fuzz_has_no_tracebacks(tmp_path: Path) -> None:
    runner = CliRunner()
    path = tmp_path / "fuzz.deal"
    decided = 0
    problems: dict[str, str] = {}
    for k, text in enumerate(cases()):
        full = k % FULL_EVERY == 0
        try:
            parses = _library(text, full)
        except Exception as exc:  # noqa: BLE001 - collected and reported below
            problems.setdefault(f"library: {exc!r}"[:200], text)
            continue
        if not full:
            continue
        path.write_bytes(text.encode("utf-8", errors="surrogatepass"))
        commands = [["lint"]]
        if parses:
            decided += 1
            commands += [["check", "--time-limit", "2", "--quiet"], ["solve"], ["repair"]]
        for args in commands:
            problem = _command(runner, args, path)
            if problem is not None:
                problems.setdefault(problem[:200], text)
    report = "\n\n".join(f"{p}\n  on: {t[:600]!r}" for p, t in list(problems.items())[:10])
    assert not problems, f"{len(problems)} kinds of crash:\n{report}"
    # the generator is meant to reach the checkers, not only the parser
    assert decided > COUNT // FULL_EVERY // 10


@pytest.mark.parametrize("text", [
    "\ufeffagreement \"x\"\nshares cost\nparty a\nparty b\nworth S = count(S)\npayout by equal split\n",
    "agreement \"x\"\r\nshares cost\r\nparty a\r\nparty b\r\nworth S = count(S)\r\npayout by equal split\r\n",
])
def test_odd_starts_and_line_endings_are_answered(text, tmp_path):
    path = tmp_path / "fuzz.deal"
    path.write_bytes(text.encode("utf-8"))
    assert _command(CliRunner(), ["check", "--quiet"], path) is None
