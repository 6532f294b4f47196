"""Agreement text -> `ast.Document`, or an `AgreementError` with a located message.

The Lark grammar is built once (LALR) from `grammar/pactlang.lark`.
A wheel carries the grammar inside the package (`pactlang/_grammar/`); an
editable install reads it from the source tree, so both are looked up.
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from importlib import resources
from pathlib import Path

from lark import Lark, Token, Transformer_NonRecursive, v_args
from lark.exceptions import UnexpectedCharacters, UnexpectedInput, UnexpectedToken, VisitError

from . import ast
from .diagnostics import AgreementError, Diagnostic, error

GRAMMAR_FILE = "pactlang.lark"


def grammar_text() -> str:
    """The grammar source, from the installed package or the source tree."""
    packaged = resources.files("pactlang").joinpath("_grammar", GRAMMAR_FILE)
    if packaged.is_file():
        return packaged.read_text(encoding="utf-8")
    source = Path(__file__).resolve().parent.parent / "grammar" / GRAMMAR_FILE
    return source.read_text(encoding="utf-8")


class _WholeWords:
    """A post-lexer that only asks Lark's contextual lexer to try NAME in
    every state. A keyword is then matched as a whole word (NAME matches
    `partyp1` entirely, and only text equal to a keyword becomes that
    keyword), so `partyp1` is an error rather than `party p1`."""

    always_accept = ("NAME",)

    def process(self, stream):
        return stream


PARSER_OPTIONS = dict(parser="lalr", propagate_positions=True)


def build_parser(*, strict: bool = False, cache: str | None = None) -> Lark:
    """A new LALR parser for the grammar.

    `strict=True` makes Lark refuse shift/reduce and terminal collisions; it
    needs the optional `interegular` package, so only the test suite builds
    that way (tests/test_grammar_conflicts.py). The run-time parser is the same
    automaton without the extra checks.
    """
    return Lark(grammar_text(), strict=strict, postlex=_WholeWords(), cache=cache or False, **PARSER_OPTIONS)


@lru_cache(maxsize=1)
def parser() -> Lark:
    """The LALR parser, built once per process.

    Building takes about 0.1 s. The built tables are kept in the user's own
    cache folder (see `cache_file`), never in the shared temp folder, where
    another local user could plant a file that Lark would unpickle. Any
    problem with the cache falls back to a plain build.
    """
    path = cache_file()
    if path is not None:
        try:
            return build_parser(cache=str(path))
        except Exception:  # a half-written or foreign file: drop it and build afresh
            try:
                path.unlink()
            except OSError:
                pass
    return build_parser()


def cache_file() -> Path | None:
    """Where the built parser is kept: a file only this user can have written, or None.

    The folder is `$XDG_CACHE_HOME/pactlang` (else `~/.cache/pactlang`),
    created private (0700). It is used only when it belongs to this user and
    nobody else can write to it, and an existing file only when it belongs
    to this user and is not writable by others, so the unpickling inside
    Lark reads nothing another account wrote. The name carries a hash of the
    grammar and the Lark and Python versions, so a changed grammar never
    meets an old file. `PACTLANG_NO_CACHE=1` turns the cache off.
    """
    import hashlib
    import os
    import sys

    import lark

    if os.environ.get("PACTLANG_NO_CACHE") or not hasattr(os, "getuid"):
        return None
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    if not os.path.isabs(base):
        return None
    folder = Path(base) / "pactlang"
    try:
        folder.mkdir(mode=0o700, parents=True, exist_ok=True)
        if not _private(folder):
            return None
    except OSError:
        return None
    key = hashlib.sha256(
        (grammar_text() + lark.__version__ + repr(sys.version_info[:2])).encode("utf-8")
    ).hexdigest()[:32]
    path = folder / f"parser-{key}.cache"
    try:
        if path.exists() and (path.is_symlink() or not _private(path)):
            return None
    except OSError:
        return None
    return path


def _private(path: Path) -> bool:
    """True when `path` is owned by this user and nobody else may write to it."""
    import os
    import stat

    info = os.lstat(path)
    return info.st_uid == os.getuid() and not info.st_mode & (stat.S_IWGRP | stat.S_IWOTH) \
        and not stat.S_ISLNK(info.st_mode)


def span_of(item) -> ast.Span:
    """The span of a Lark token or tree meta."""
    return ast.Span(item.line, item.column, item.end_line, item.end_column)


# Longest number literal accepted, in digits. Far beyond any amount of money,
# and well inside what exact arithmetic and Python's own integer-to-text
# conversion (4,300 digits by default) handle quickly.
MAX_DIGITS = 400


def _decimal(text: str, where) -> Fraction:
    """The exact value of a decimal literal; `where` (a token or meta) locates
    the refusal of one too long to be an amount."""
    digits = sum(c.isdigit() for c in text)
    if digits > MAX_DIGITS:
        raise AgreementError([error(
            "syntax", f"number with {digits} digits: at most {MAX_DIGITS} digits are allowed", span_of(where))])
    # Fraction parses decimal strings exactly ("0.05" -> 1/20); never via float.
    return Fraction(text)


# Share kinds stay usable as names (`value` is a common attribute).
_NOT_RESERVED = frozenset({"cost", "value"})


@lru_cache(maxsize=1)
def reserved_words() -> frozenset[str]:
    """Every word of the grammar (`party`, `if`, `worth`, the rule words, ...)
    except the share kinds: none of them can be a name."""
    import re

    words = {t.pattern.value for t in parser().terminals if t.pattern.type == "str"}
    return frozenset(w for w in words if re.fullmatch(r"[A-Za-z_]\w*", w)) - _NOT_RESERVED


def _refuse_reserved(name: str, what: str, where) -> None:
    if name in reserved_words():
        raise AgreementError([error(
            "syntax", f"`{name}` is a reserved word and cannot name {what}", span_of(where),
            "choose another name, e.g. `" + name + "_`")])


def _unquote(token: str) -> str:
    body = token[1:-1]
    out, i = [], 0
    while i < len(body):
        if body[i] == "\\" and i + 1 < len(body):
            out.append(body[i + 1])
            i += 2
        else:
            out.append(body[i])
            i += 1
    return "".join(out)


def quote(text: str) -> str:
    """A title or unit as a string literal (inverse of the parser's unquoting)."""
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


@v_args(meta=True)
class _ToAst(Transformer_NonRecursive):
    """Lark tree -> ast nodes; one method per grammar rule or alias. The
    transform is iterative, so deeply nested input cannot exhaust the stack."""

    # statements
    def start(self, meta, items):
        return ast.Document(tuple(items), span=span_of(meta) if not meta.empty else None)

    def agreement(self, meta, items):
        return ast.AgreementTitle(_unquote(items[0]), span=span_of(meta))

    def shares(self, meta, items):
        unit = items[1] if len(items) > 1 else None
        return ast.Shares(items[0], unit, span=span_of(meta))

    def share_kind(self, meta, items):
        return str(items[0])

    def unit(self, meta, items):
        tok = items[0]
        return _unquote(tok) if tok.type == "STRING" else str(tok)

    def party(self, meta, items):
        return ast.PartyDecl(self._ident(items[0], "a party"), tuple(items[1:]), span=span_of(meta))

    def attribute(self, meta, items):
        return ast.Attribute(self._ident(items[0], "an attribute"), items[1], span=span_of(meta))

    def parties_from(self, meta, items):
        return ast.PartiesFrom(_unquote(items[0]), span=span_of(meta))

    def round_payouts(self, meta, items):
        text = str(items[0])
        return ast.RoundPayouts(ast.Num(_decimal(text, items[0]), text, span=span_of(items[0])), span=span_of(meta))

    def param(self, meta, items):
        return ast.ParamDecl(self._ident(items[0], "a param"), items[1], span=span_of(meta))

    def worth_entry(self, meta, items):
        return ast.WorthEntry(items[0], items[1], span=span_of(meta))

    def worth_all(self, meta, items):
        return ast.WorthGrand(items[0], span=span_of(meta))

    def worth_formula(self, meta, items):
        return ast.WorthFormula(self._ident(items[0], "a coalition variable"), items[1], span=span_of(meta))

    def worth_otherwise(self, meta, items):
        return ast.WorthOtherwise(items[0], span=span_of(meta))

    def coalition(self, meta, items):
        return tuple(self._ident(t) for t in items)

    def payout_fixed(self, meta, items):
        return ast.PayoutFixed(self._ident(items[0]), items[1], span=span_of(meta))

    def payout_all(self, meta, items):
        return ast.PayoutAll(items[0], span=span_of(meta))

    def payout_rest(self, meta, items):
        return ast.PayoutRest(items[0], span=span_of(meta))

    def rule_equal(self, meta, items):
        return ast.Rule("equal", span=span_of(meta))

    def rule_proportional(self, meta, items):
        return ast.Rule("proportional", self._ident(items[0]), span=span_of(meta))

    def rule_shapley(self, meta, items):
        return ast.Rule("shapley", span=span_of(meta))

    def rule_nucleolus(self, meta, items):
        return ast.Rule("nucleolus", span=span_of(meta))

    def rule_scrb(self, meta, items):
        return ast.Rule("scrb", span=span_of(meta))

    def contingency(self, meta, items):
        return ast.Contingency(_unquote(items[0]), tuple(items[1:]), span=span_of(meta))

    def attr_range(self, meta, items):
        a, p, lo, hi = items
        return ast.AttrRange(self._ident(a), self._ident(p), lo, hi, span=span_of(meta))

    def attr_fixed(self, meta, items):
        a, p, v = items
        return ast.AttrFixed(self._ident(a), self._ident(p), v, span=span_of(meta))

    def param_range(self, meta, items):
        p, lo, hi = items
        return ast.ParamRange(self._ident(p), lo, hi, span=span_of(meta))

    def param_fixed(self, meta, items):
        p, v = items
        return ast.ParamFixed(self._ident(p), v, span=span_of(meta))

    def worth_range(self, meta, items):
        members, lo, hi = items
        return ast.WorthRange(members, lo, hi, span=span_of(meta))

    def without(self, meta, items):
        return ast.Without(self._ident(items[0]), span=span_of(meta))

    def req_stable(self, meta, items):
        return ast.Require("stable", span=span_of(meta))

    def req_within(self, meta, items):
        return ast.Require("within", items[0], span=span_of(meta))

    def req_rational(self, meta, items):
        return ast.Require("rational", span=span_of(meta))

    def req_budget(self, meta, items):
        return ast.Require("budget", span=span_of(meta))

    def signed(self, meta, items):
        negative = len(items) == 2
        tok = items[-1]
        text = ("-" if negative else "") + str(tok)
        if tok.type == "PERCENT":
            value = _decimal(str(tok)[:-1], tok) / 100
            return ast.Percent(-value if negative else value, text, span=span_of(meta))
        value = _decimal(str(tok), tok)
        return ast.Num(-value if negative else value, text, span=span_of(meta))

    # expressions
    def number(self, meta, items):
        return ast.Num(_decimal(str(items[0]), items[0]), str(items[0]), span=span_of(meta))

    def percent(self, meta, items):
        return ast.Percent(_decimal(str(items[0])[:-1], items[0]) / 100, str(items[0]), span=span_of(meta))

    def name(self, meta, items):
        _refuse_reserved(str(items[0]), "a param", items[0])
        return ast.Name(str(items[0]), span=span_of(meta))

    def member(self, meta, items):
        _refuse_reserved(str(items[0]), "a party or attribute", items[0])
        _refuse_reserved(str(items[1]), "a coalition variable", items[1])
        return ast.Member(str(items[0]), str(items[1]), span=span_of(meta))

    def call(self, meta, items):
        return ast.Call(str(items[0]), tuple(items[1:]), span=span_of(meta))

    def worth_of_all(self, meta, items):
        return ast.WorthOfAll(span=span_of(meta))

    def negate(self, meta, items):
        return ast.Neg(items[1], span=span_of(meta))

    def compare(self, meta, items):
        left, op, right = items
        return ast.Binary(str(op), left, right, span=span_of(meta))

    def arith(self, meta, items):
        return self._chain(meta, items[0], [(str(op), x) for op, x in zip(items[1::2], items[2::2])])

    term = arith

    def and_expr(self, meta, items):
        return self._chain(meta, items[0], [("and", x) for x in items[1:]])

    def or_expr(self, meta, items):
        return self._chain(meta, items[0], [("or", x) for x in items[1:]])

    @staticmethod
    def _chain(meta, first, rest) -> ast.Chain:
        # `(a + b) - c` reads as `a + b - c`: merge a leading chain of the same
        # level, so equal meanings give equal trees (the formatter relies on it)
        level = ast.CHAIN_LEVELS[rest[0][0]]
        if isinstance(first, ast.Chain) and ast.CHAIN_LEVELS[first.rest[0][0]] == level:
            return ast.Chain(first.first, first.rest + tuple(rest), span=span_of(meta))
        return ast.Chain(first, tuple(rest), span=span_of(meta))

    def not_op(self, meta, items):
        return ast.Not(items[0], span=span_of(meta))

    def if_expr(self, meta, items):
        return ast.If(items[0], items[1], items[2], span=span_of(meta))

    @staticmethod
    def _ident(tok: Token, what: str = "a party, attribute or param") -> ast.Ident:
        _refuse_reserved(str(tok), what, tok)
        return ast.Ident(str(tok), span=span_of(tok))


_EXPECT_WORDS = {
    "_NL": "end of line", "NAME": "a name", "NUMBER": "a number", "PERCENT": "a percentage",
    "STRING": "a quoted string", "SIGNED": "a number", "MINUS": "`-`", "PLUS": "`+`",
    "STAR": "`*`", "SLASH": "`/`", "COMPARE": "a comparison",
    "$END": "end of file",
}


def _describe_expected(expected: set[str]) -> str:
    words = []
    for name in sorted(expected):
        if name in _EXPECT_WORDS:
            words.append(_EXPECT_WORDS[name])
        else:
            pattern = parser().get_terminal(name).pattern
            words.append(f"`{pattern.value}`" if pattern.type == "str" else name.lower())
    words = sorted(set(words))
    if len(words) > 6:
        words = words[:6] + ["..."]
    return ", ".join(words)


def _syntax_diagnostic(exc: UnexpectedInput, text: str) -> Diagnostic:
    line, column = max(exc.line, 1), max(exc.column, 1)
    if isinstance(exc, UnexpectedCharacters):
        char = text[exc.pos_in_stream] if exc.pos_in_stream < len(text) else ""
        message = f"unexpected character `{char}`"
        help_text = None
        if char == "'":
            help_text = "strings use double quotes"
        span = ast.Span(line, column, line, column + 1)
        return error("syntax", message, span, help_text)
    assert isinstance(exc, UnexpectedToken)
    tok = exc.token
    if tok.type == "$END":
        found = "end of file"
    elif tok.type == "_NL":
        found = "end of line"
    else:
        found = f"`{tok}`"
    message = f"unexpected {found}"
    expected = _describe_expected(set(exc.expected) - {"$END"} if tok.type != "$END" else set(exc.expected))
    help_text = f"expected {expected}" if expected else None
    end_col = column + max(len(str(tok)), 1) if tok.type not in ("_NL", "$END") else column + 1
    return error("syntax", message, ast.Span(line, column, line, end_col), help_text)


def parse_text(text: str) -> ast.Document:
    """Parse agreement text; raise `AgreementError` with a located diagnostic."""
    if "\x00" in text:
        line = text[: text.index("\x00")].count("\n") + 1
        raise AgreementError([error("syntax", "the file contains a NUL byte", ast.Span(line, 1, line, 2))])
    source = text if text.endswith("\n") else text + "\n"
    try:
        tree = parser().parse(source)
        document = _ToAst().transform(tree)
    except UnexpectedInput as exc:
        raise AgreementError([_syntax_diagnostic(exc, source)]) from None
    except VisitError as exc:
        if isinstance(exc.orig_exc, AgreementError):
            raise exc.orig_exc from None
        # a literal that cannot be converted; should not happen
        raise AgreementError([error("syntax", f"cannot read this value: {exc.orig_exc}", ast.Span(1, 1, 1, 2))]) from None
    _refuse_deep_nesting(document)
    return document


def _refuse_deep_nesting(document: ast.Document) -> None:
    """Every later stage walks a formula's nesting by recursion: refuse depth
    beyond `ast.MAX_DEPTH` here, where nothing recursive has run yet."""
    for stmt in document.statements:
        expr = getattr(stmt, "expr", None)
        if expr is None:
            continue
        node = ast.too_deep(expr)
        if node is not None:
            span = node.span or stmt.span
            raise AgreementError([error(
                "syntax", f"formula nested too deeply (more than {ast.MAX_DEPTH} levels)",
                ast.Span(span.line, span.column, span.line, span.column + 1),
                "split it with a param or a simpler formula")])
