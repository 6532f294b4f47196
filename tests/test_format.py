"""Formatter: golden cases, safety checks, generated agreements, the CLI.

Each file in tests/cases/format/ holds an input, a line `#### expected`, then
the expected output; a file without the marker must come out unchanged.
Run with PACTLANG_REGOLD=1 to rewrite the expected parts after a deliberate
change, then review the diff.
"""

from __future__ import annotations

import os
import stat
import subprocess
import sys
from collections import Counter
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from pactlang import ast
from pactlang import format as fmt
from pactlang.check import check_model
from pactlang.diagnostics import AgreementError
from pactlang.parse import parse_text
from pactlang.resolve import resolve

HERE = Path(__file__).parent
CASES = sorted((HERE / "cases" / "format").glob("*.deal"))
AGREEMENTS = sorted((HERE.parent / "agreements").glob("*.deal"))
MARKER = "#### expected\n"


def split_case(path: Path) -> tuple[str, str | None]:
    text = path.read_text(encoding="utf-8")
    if MARKER in text:
        source, expected = text.split(MARKER, 1)
        return source, expected
    return text, None


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_golden(path: Path) -> None:
    source, expected = split_case(path)
    out = fmt.format_text(source)
    if os.environ.get("PACTLANG_REGOLD"):
        path.write_text(source if out == source else source + MARKER + out, encoding="utf-8")
        return
    assert out == (source if expected is None else expected)
    assert fmt.format_text(out) == out  # the expected text is itself canonical


def test_golden_cases_cover_every_statement_and_line_kind() -> None:
    seen = set()
    for path in CASES:
        for stmt in parse_text(split_case(path)[0]).statements:
            seen.add(type(stmt).__name__)
            if isinstance(stmt, ast.Contingency):
                seen.update(type(line).__name__ for line in stmt.lines)
    kinds = {"AgreementTitle", "Shares", "PartyDecl", "ParamDecl", "WorthEntry", "WorthGrand", "WorthFormula",
             "WorthOtherwise", "PayoutFixed", "PayoutAll", "PayoutRest", "Contingency", "Require",
             "AttrRange", "AttrFixed", "ParamRange", "ParamFixed", "WorthRange", "Without"}
    assert kinds <= seen


@pytest.mark.parametrize("path", AGREEMENTS, ids=[p.stem for p in AGREEMENTS])
def test_sample_agreements_are_formatted(path: Path) -> None:
    """Every sample that parses is in canonical layout (`fmt --check` passes);
    a sample that does not parse must be a deliberately broken `*_bad` one."""
    source = path.read_text(encoding="utf-8")
    try:
        out = fmt.format_text(source)
    except AgreementError:
        assert path.stem.endswith("_bad"), f"{path.name} does not parse"
        return
    assert out == source, f"run `pactlang fmt {path.relative_to(HERE.parent)}`"


# ---------------------------------------------------------------- comments and layout


def test_lexer_comments_agree_with_a_plain_scan() -> None:
    text = ('agreement "a # not a comment \\" # still not"  # yes\n'
            'shares value in "x#y"\n# own line\nparty a: w 1#tight\n')
    assert fmt.comments_by_line(text) == fmt._scan_comments(text) == {
        1: (47, "# yes"), 3: (1, "# own line"), 4: (13, "#tight")}


def test_crlf_line_endings_are_kept() -> None:
    source = 'agreement "x"\r\nshares value\r\nparty a\r\nparty b\r\nworth otherwise = 1 # c\r\npayout by shapley\r\n'
    out = fmt.format_text(source)
    assert "\r\n" in out and "\n" not in out.replace("\r\n", "")
    assert "worth otherwise = 1  # c\r\n" in out
    assert fmt.format_text(out) == out


def test_missing_final_newline_is_added() -> None:
    assert fmt.format_text('agreement "x"\nshares value') == 'agreement "x"\nshares value\n'


def test_empty_file_stays_empty() -> None:
    assert fmt.format_text("") == ""
    assert fmt.format_text("\n\n") == ""


def test_syntax_error_raises_with_location() -> None:
    with pytest.raises(AgreementError) as info:
        fmt.format_text('agreement "x"\nparty a b\n')
    assert (info.value.diagnostics[0].span.line, info.value.diagnostics[0].span.column) == (2, 9)


def test_unsafe_output_is_refused(monkeypatch) -> None:
    """A printer bug that changes meaning is caught by the re-parse check."""
    monkeypatch.setattr(fmt.Printer, "_fmt_chain",
                        lambda self, node: " ".join([self.fmt(node.first)] + [f"{o} {self.fmt(x)}" for o, x in node.rest]))
    with pytest.raises(fmt.FormatError, match="does not mean the same"):
        fmt.format_text('agreement "x"\nshares value\nparty a\nparty b\nworth S = 2 * (1 + count(S))\n')


def test_comment_loss_is_refused(monkeypatch) -> None:
    monkeypatch.setattr(fmt, "_with_comment", lambda code, comment, column=None: code)
    with pytest.raises(fmt.FormatError, match="comment"):
        fmt.format_text('agreement "x"  # note\nshares value\n')


def test_unstable_output_is_refused(monkeypatch) -> None:
    calls = []
    original = fmt.render

    def drifting(*args, **kwargs):
        calls.append(1)
        lines = original(*args, **kwargs)
        return lines + [""] * len(calls)  # each pass adds one more blank line at the end

    monkeypatch.setattr(fmt, "render", drifting)
    with pytest.raises(fmt.FormatError):
        fmt.format_text('agreement "x"\nshares value\n')


# ---------------------------------------------------------------- files and CLI


def run_cli(*args: str, cwd: Path, stdin: str | None = None) -> subprocess.CompletedProcess:
    env = dict(os.environ, NO_COLOR="1", PYTHONPATH=str(HERE.parent))
    return subprocess.run([sys.executable, "-m", "pactlang", "fmt", *args], cwd=cwd, input=stdin,
                          capture_output=True, text=True, env=env)


MESSY = 'agreement "x"\nshares value\nparty a:w 1\nparty bb:w 10\nworth S=sum(w in S)\npayout by equal split\n'
TIDY = fmt.format_text(MESSY)


def test_fmt_rewrites_in_place_keeping_permissions(tmp_path: Path) -> None:
    target = tmp_path / "a.deal"
    target.write_text(MESSY)
    target.chmod(0o640)
    result = run_cli("a.deal", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert target.read_text() == TIDY
    assert stat.S_IMODE(target.stat().st_mode) == 0o640
    assert "a.deal: rewritten in canonical layout" in result.stderr
    assert [p.name for p in tmp_path.iterdir()] == ["a.deal"]  # no temporary file left behind
    again = run_cli("a.deal", cwd=tmp_path)
    assert again.returncode == 0 and "1 file: 1 already in canonical layout" in again.stderr


def test_fmt_follows_symlinks(tmp_path: Path) -> None:
    real = tmp_path / "real.deal"
    real.write_text(MESSY)
    link = tmp_path / "link.deal"
    link.symlink_to(real)
    assert run_cli("link.deal", cwd=tmp_path).returncode == 0
    assert link.is_symlink() and real.read_text() == TIDY


def test_check_lists_files_and_exits_1(tmp_path: Path) -> None:
    (tmp_path / "messy.deal").write_text(MESSY)
    (tmp_path / "tidy.deal").write_text(TIDY)
    result = run_cli("--check", "messy.deal", "tidy.deal", cwd=tmp_path)
    assert result.returncode == 1
    assert "messy.deal: layout would change" in result.stderr and "tidy.deal" not in result.stderr.split("\n")[0]
    assert (tmp_path / "messy.deal").read_text() == MESSY
    assert run_cli("--check", "tidy.deal", cwd=tmp_path).returncode == 0


def test_diff_prints_a_unified_diff_and_writes_nothing(tmp_path: Path) -> None:
    (tmp_path / "messy.deal").write_text(MESSY)
    result = run_cli("--diff", "messy.deal", cwd=tmp_path)
    assert result.returncode == 0
    assert result.stdout.startswith("--- a/messy.deal\n+++ b/messy.deal\n")
    assert "-party a:w 1\n" in result.stdout and "+party a:  w  1\n" in result.stdout
    assert (tmp_path / "messy.deal").read_text() == MESSY
    assert run_cli("--diff", "--check", "messy.deal", cwd=tmp_path).returncode == 1


def test_stdin_to_stdout(tmp_path: Path) -> None:
    result = run_cli("-", cwd=tmp_path, stdin=MESSY)
    assert result.returncode == 0 and result.stdout == TIDY
    assert run_cli("--check", "-", cwd=tmp_path, stdin=MESSY).returncode == 1
    bad = run_cli("-", cwd=tmp_path, stdin="agreement\n")
    assert bad.returncode == 2 and bad.stderr.startswith("<stdin>:1:10: error:")
    assert bad.stdout == "agreement\n"  # a filter hands its input back unchanged


def test_broken_file_is_left_byte_for_byte(tmp_path: Path) -> None:
    data = b'agreement "x"\r\nshares  value\r\nparty a b   \r\n\r\n# comment\t\r\n'
    target = tmp_path / "broken.deal"
    target.write_bytes(data)
    before = target.stat().st_mtime_ns
    result = run_cli("broken.deal", cwd=tmp_path)
    assert result.returncode == 2
    assert result.stderr.startswith("broken.deal:3:9: error: unexpected `b`")
    assert "Traceback" not in result.stderr
    assert target.read_bytes() == data and target.stat().st_mtime_ns == before


def test_missing_and_non_utf8_files_exit_2(tmp_path: Path) -> None:
    (tmp_path / "latin.deal").write_bytes('agreement "caf\xe9"\n'.encode("latin-1"))
    result = run_cli("nope.deal", "latin.deal", cwd=tmp_path)
    assert result.returncode == 2
    assert "nope.deal:1:1: error: no such file" in result.stderr
    assert "latin.deal:1:15: error: the file is not valid UTF-8" in result.stderr


def test_internal_error_writes_nothing(tmp_path: Path, monkeypatch) -> None:
    target = tmp_path / "a.deal"
    source = MESSY.replace("shares value", "shares value  # note")
    target.write_text(source)
    monkeypatch.setattr(fmt, "_with_comment", lambda code, comment, column=None: code)  # a printer that drops comments
    outcome = fmt.format_file(str(target))
    assert outcome.status == "error" and "comment" in outcome.internal
    assert target.read_text() == source


def test_directories_stand_for_their_deal_files(tmp_path: Path) -> None:
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "one.deal").write_text(MESSY)
    (tmp_path / "sub" / "notes.txt").write_text("not an agreement")
    result = run_cli("--check", "sub", cwd=tmp_path)
    assert result.returncode == 1 and f"{Path('sub/one.deal')}: layout would change" in result.stderr


def test_internal_error_is_reported_with_exit_4(tmp_path: Path, monkeypatch) -> None:
    import io

    from pactlang.commands.fmt import FmtOptions, run_fmt

    target = tmp_path / "a.deal"
    source = MESSY.replace("shares value", "shares value  # note")
    target.write_text(source)
    monkeypatch.setattr(fmt, "_with_comment", lambda code, comment, column=None: code)
    monkeypatch.chdir(tmp_path)
    out, err = io.StringIO(), io.StringIO()
    assert run_fmt(["a.deal"], FmtOptions(), out, err) == 4  # the tool failed, not the input
    assert "a.deal: error: the layout pass went wrong, so the file was left as it was" in err.getvalue()
    assert target.read_text() == source


# ---------------------------------------------------------------- generated agreements
# Agreements are generated as text with random spacing, comments in every
# position, runs of blank lines and statements in random order, so the
# formatter meets layouts no golden case lists. Formatting must be idempotent,
# give the same syntax tree and comments, and the checker's verdicts must not change.

EXAMPLES = int(os.environ.get("PACTLANG_EXAMPLES", "60"))  # raise it for a longer hunt
WORDS = set("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ_0123456789%.")


def join(draw, tokens: list[str]) -> str:
    """Tokens with random spacing; no space at all only next to punctuation."""
    out = tokens[0]
    for tok in tokens[1:]:
        need = out[-1] in WORDS and tok[0] in WORDS
        out += draw(st.sampled_from([" ", "  ", "\t"] if need else ["", " ", "  "]))
        out += tok
    return out


NUMBERS = st.sampled_from(["0", "1", "2", "3.5", "10", "0.25", "007", "12.50"])


@st.composite
def expr(draw, depth: int, context: str) -> list[str]:
    """Tokens of an expression; compound children are always bracketed."""
    leaves = [lambda: [draw(NUMBERS)], lambda: [draw(st.sampled_from(["k", "m"]))]]
    if context == "formula":
        leaves += [lambda: ["count", "(", "S", ")"],
                   lambda: [draw(st.sampled_from(["sum", "max", "min"])), "(", draw(st.sampled_from(["w", "v"])),
                            "in", "S", ")"],
                   lambda: [draw(st.sampled_from(["p0", "p1"])), "in", "S"]]
    if context == "payout":
        leaves += [lambda: [draw(st.sampled_from(["10%", "25%", "0.5%"]))], lambda: ["worth", "(", "all", ")"]]
    if depth <= 0 or draw(st.integers(0, 2)) == 0:
        leaf = draw(st.sampled_from(leaves))()
        return ["(", *leaf, ")"] if draw(st.integers(0, 4)) == 0 else leaf

    def sub() -> list[str]:
        tokens = draw(expr(depth - 1, context))
        return tokens if len(tokens) == 1 else ["(", *tokens, ")"]

    ops = ["+", "-", "*"] + (["==", "<", ">=", "and", "or"] if context == "formula" else [])
    shape = draw(st.sampled_from(["binary", "binary", "neg", "max", "if", "not"] if context == "formula"
                                 else ["binary", "binary", "neg", "max"]))
    if shape == "binary":
        return [*sub(), draw(st.sampled_from(ops)), *sub()]
    if shape == "neg":
        return ["-", *sub()]
    if shape == "not":
        return ["not", *sub()]
    if shape == "max":
        return [draw(st.sampled_from(["max", "min"])), "(", *sub(), ",", *sub(), ")"]
    return ["if", *sub(), "then", *sub(), "else", *sub()]


COMMENTS = st.sampled_from(["# note", "#tight", "# with \"quotes\" and # hashes", "#", "# x = 1 { }"])


@st.composite
def agreement(draw) -> str:
    n = draw(st.integers(2, 4))
    parties = [f"p{i}" for i in range(n)]
    statements: list[list[str] | tuple] = []  # token lists, or ("block", name, lines)
    statements.append(["agreement", '"generated # title"'])
    unit = draw(st.sampled_from([[], ["in", "kEUR"], ["in", '"k EUR"']]))
    statements.append(["shares", draw(st.sampled_from(["cost", "value"])), *unit])
    for p in parties:
        attrs = [[a, *(["-"] if draw(st.booleans()) else []), draw(NUMBERS)] for a in ("w", "v")]
        statements.append(["party", p, ":", *attrs[0], ",", *attrs[1]])
    statements.append(["param", "k", "=", draw(NUMBERS)])
    statements.append(["param", "m", "=", draw(st.sampled_from(["1", "5%", "-2"]))])
    statements.append(["worth", "S", "=", *draw(expr(3, "formula"))])
    for _ in range(draw(st.integers(0, 2))):
        members = draw(st.lists(st.sampled_from(parties), min_size=1, max_size=n, unique=True))
        statements.append(["worth", "{", *sum(([m, ","] for m in members), [])[:-1], "}", "=",
                           *draw(expr(1, "constant"))])
    if draw(st.booleans()):
        statements.append(["payout", "p0", "=", *draw(expr(2, "payout"))])
        statements.append(["payout", "rest", "by", *draw(st.sampled_from([["equal", "split"],
                                                                           ["proportional", "to", "w"]]))])
    else:
        statements.append(["payout", "by", *draw(st.sampled_from(
            [["equal", "split"], ["shapley"], ["proportional", "to", "v"]]))])
    for c in range(draw(st.integers(0, 2))):
        lines = draw(st.lists(st.sampled_from([
            ["k", "in", "1", "..", "2"], ["m", "=", "3"], ["w", "of", "p1", "in", "0", "..", "1.5"],
            ["v", "of", "p0", "=", "-", "1"], ["worth", "{", "p0", ",", "p1", "}", "in", "1", "..", "4"],
            ["without", parties[-1]]]), max_size=3))
        statements.append(("block", f'"case {c}"', lines))
    for req in draw(st.lists(st.sampled_from([["stable"], ["stable", "within", "2"], ["stable", "within", "5%"],
                                               ["individually", "rational"], ["balanced", "budget"]]),
                             min_size=1, max_size=3)):
        statements.append(["require", *req])
    head, rest = statements[0], statements[1:]
    rest = draw(st.permutations(rest))
    if draw(st.integers(0, 5)) == 0:  # now and then the title is not first
        rest.insert(draw(st.integers(0, len(rest))), head)
    else:
        rest.insert(0, head)

    def gap() -> list[str]:
        return draw(st.lists(st.one_of(st.just(""), st.just("   "), COMMENTS.map(lambda c: " " * draw(
            st.integers(0, 3)) + c)), max_size=3))

    def trailing() -> str:
        return draw(st.sampled_from(["", "", " " + draw(COMMENTS), draw(COMMENTS), "   "]))

    out: list[str] = []
    for stmt in rest:
        out.extend(gap())
        if isinstance(stmt, tuple):
            _, name, lines = stmt
            if draw(st.booleans()):  # one line
                body = " ; ".join(join(draw, line) for line in lines)
                out.append(join(draw, ["contingency", name, "{"]) + " " + body + " }" + trailing())
            else:
                out.append(join(draw, ["contingency", name, "{"]) + trailing())
                for line in lines:
                    out.extend("  " + g if g.strip() else g for g in gap())
                    out.append("  " + join(draw, line) + trailing())
                out.extend(gap())
                out.append("}" + trailing())
        else:
            out.append(join(draw, stmt) + trailing())
    out.extend(gap())
    return "\n".join(out) + draw(st.sampled_from(["\n", "", "\n\n"]))


def comment_texts(text: str) -> Counter:
    return Counter(c for _, c in fmt.comments_by_line(text).values())


def verdicts(model) -> list[tuple]:
    """What the checker says, up to the order of coalitions tied on excess."""
    return [(r.requirement, r.contingency, r.status, r.worst_excess, r.reason,
             sorted(c.excess for c in r.counterexamples)) for r in check_model(model)]


@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(agreement())
def test_formatting_is_idempotent_and_keeps_meaning(text: str) -> None:
    doc = parse_text(text)
    out = fmt.format_text(text)
    assert fmt.format_text(out) == out
    order = fmt.canonical_order(doc)
    assert parse_text(out).statements == tuple(doc.statements[i] for i in order)
    assert comment_texts(out) == Counter(c.rstrip() for c in comment_texts(text).elements())
    try:
        before = resolve(doc)
    except AgreementError as exc:
        after_codes = None
        try:
            resolve(parse_text(out))
        except AgreementError as exc2:
            after_codes = sorted(d.code for d in exc2.diagnostics)
        assert after_codes == sorted(d.code for d in exc.diagnostics)
        return
    after = resolve(parse_text(out))
    assert after.parties == before.parties and after.table == before.table and after.formula == before.formula
    assert verdicts(after) == verdicts(before)


# ---------------------------------------------------------------- files that must not be rewritten, odd bytes


def test_each_file_gets_its_own_result(tmp_path: Path) -> None:
    """`fmt a.deal readonly-dir/b.deal c.deal` used to stop at b with a
    PermissionError traceback and never format c."""
    (tmp_path / "a.deal").write_text(MESSY)
    locked = tmp_path / "locked"
    locked.mkdir()
    (locked / "b.deal").write_text(MESSY)
    (tmp_path / "c.deal").write_text(MESSY)
    locked.chmod(0o555)
    try:
        if os.geteuid() == 0:  # root may write into the directory anyway: take the write away another way
            (locked / "b.deal").chmod(0o444)
        result = run_cli("a.deal", str(Path("locked/b.deal")), "c.deal", cwd=tmp_path)
    finally:
        locked.chmod(0o755)
    assert result.returncode == 2 and "Traceback" not in result.stderr
    assert (tmp_path / "a.deal").read_text() == TIDY and (tmp_path / "c.deal").read_text() == TIDY
    assert (locked / "b.deal").read_text() == MESSY
    assert f"{Path('locked/b.deal')}:1:1: error:" in result.stderr
    assert "3 files: 2 rewritten, 1 left untouched (errors above)" in result.stderr


def test_read_only_files_are_refused(tmp_path: Path) -> None:
    target = tmp_path / "a.deal"
    target.write_text(MESSY)
    target.chmod(0o444)
    result = run_cli("a.deal", cwd=tmp_path)
    assert result.returncode == 2
    assert "a.deal:1:1: error: the file is read-only, so it was not reformatted" in result.stderr
    assert target.read_text() == MESSY and stat.S_IMODE(target.stat().st_mode) == 0o444
    assert run_cli("--check", "a.deal", cwd=tmp_path).returncode == 1  # checking a read-only file is fine


def test_hard_links_are_refused_and_named(tmp_path: Path) -> None:
    target = tmp_path / "a.deal"
    target.write_text(MESSY)
    os.link(target, tmp_path / "b.deal")
    result = run_cli("a.deal", cwd=tmp_path)
    assert result.returncode == 2 and "the file has 2 hard links, so it was not reformatted" in result.stderr
    assert target.read_text() == MESSY and (tmp_path / "b.deal").stat().st_ino == target.stat().st_ino


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() != 0, reason="only root can give a file away")
def test_owner_and_group_are_kept(tmp_path: Path) -> None:
    target = tmp_path / "a.deal"
    target.write_text(MESSY)
    os.chown(target, 4321, 4322)
    target.chmod(0o664)
    assert run_cli("a.deal", cwd=tmp_path).returncode == 0
    info = target.stat()
    assert target.read_text() == TIDY and (info.st_uid, info.st_gid) == (4321, 4322)
    assert stat.S_IMODE(info.st_mode) == 0o664


def test_dangling_links_in_a_directory_are_skipped_with_a_note(tmp_path: Path) -> None:
    (tmp_path / "a.deal").write_text(MESSY)
    (tmp_path / ".#a.deal").symlink_to(tmp_path / "user@host.1234")  # an editor's lock file
    result = run_cli(".", cwd=tmp_path)
    assert result.returncode == 0 and "Traceback" not in result.stderr
    assert ".#a.deal: note: skipped, a link to a file that does not exist" in result.stderr
    assert (tmp_path / "a.deal").read_text() == TIDY
    named = run_cli(".#a.deal", cwd=tmp_path)  # named on its own: an error for that file, not a crash
    assert named.returncode == 2 and ".#a.deal:1:1: error: a link to a file that does not exist" in named.stderr


@pytest.mark.parametrize("newline", ["\n", "\r\n", "\r"])
@pytest.mark.parametrize("bom", [False, True])
def test_line_endings_and_byte_order_mark_are_kept(tmp_path: Path, newline: str, bom: bool) -> None:
    """fmt writes the file back in its own convention: the line ending of its
    first line, and the byte-order mark if it had one."""
    mark = b"\xef\xbb\xbf" if bom else b""
    target = tmp_path / "a.deal"
    target.write_bytes(mark + MESSY.replace("\n", newline).encode())
    result = run_cli("a.deal", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert target.read_bytes() == mark + TIDY.replace("\n", newline).encode()
    assert run_cli("--check", "a.deal", cwd=tmp_path).returncode == 0


def test_stdin_is_read_as_bytes_and_decoded_like_a_file(tmp_path: Path) -> None:
    env = dict(os.environ, NO_COLOR="1", PYTHONPATH=str(HERE.parent), LC_ALL="C", PYTHONUTF8="0",
               PYTHONIOENCODING="ascii:strict")
    bad = subprocess.run([sys.executable, "-m", "pactlang", "fmt", "-"], cwd=tmp_path, capture_output=True,
                         input=b'agreement "caf\xe9"\n', env=env)
    assert bad.returncode == 2 and b"Traceback" not in bad.stderr
    assert b"<stdin>:1:15: error: the file is not valid UTF-8" in bad.stderr
    crlf = subprocess.run([sys.executable, "-m", "pactlang", "fmt", "-"], cwd=tmp_path, capture_output=True,
                          input=b"\xef\xbb\xbf" + MESSY.replace("\n", "\r\n").encode(), env=env)
    assert crlf.returncode == 0, crlf.stderr
    assert crlf.stdout == b"\xef\xbb\xbf" + TIDY.replace("\n", "\r\n").encode()
