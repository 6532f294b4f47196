"""Agreement text -> `ast.Document`, or an `AgreementError` with a located message.

The Lark grammar is built once (LALR, strict) from `grammar/pactlang.lark`.
A wheel carries the grammar inside the package (`pactlang/_grammar/`); an
editable install reads it from the source tree, so both are looked up.
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from importlib import resources
from pathlib import Path

from lark import Lark, Token, Transformer, v_args
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


@lru_cache(maxsize=1)
def parser() -> Lark:
    """The LALR parser, built once per process.

    Building it with the strict conflict checks takes about half a second;
    Lark's cache (a file in the temp directory, keyed by a hash of the grammar
    and options) makes later starts take milliseconds. A cache is only ever
    written by a strict build, so it never hides a conflict.
    """
    try:
        return Lark(grammar_text(), parser="lalr", strict=True, propagate_positions=True,
                    postlex=_WholeWords(), cache=True)
    except OSError:  # no writable temp directory: build without the cache
        return Lark(grammar_text(), parser="lalr", strict=True, propagate_positions=True, postlex=_WholeWords())


def span_of(item) -> ast.Span:
    """The span of a Lark token or tree meta."""
    return ast.Span(item.line, item.column, item.end_line, item.end_column)


def _decimal(text: str) -> Fraction:
    # Fraction parses decimal strings exactly ("0.05" -> 1/20); never via float.
    return Fraction(text)


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
class _ToAst(Transformer):
    """Lark tree -> ast nodes; one method per grammar rule or alias."""

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
        return ast.PartyDecl(self._ident(items[0]), tuple(items[1:]), span=span_of(meta))

    def attribute(self, meta, items):
        return ast.Attribute(self._ident(items[0]), items[1], span=span_of(meta))

    def param(self, meta, items):
        return ast.ParamDecl(self._ident(items[0]), items[1], span=span_of(meta))

    def worth_entry(self, meta, items):
        return ast.WorthEntry(items[0], items[1], span=span_of(meta))

    def worth_all(self, meta, items):
        return ast.WorthGrand(items[0], span=span_of(meta))

    def worth_formula(self, meta, items):
        return ast.WorthFormula(self._ident(items[0]), items[1], span=span_of(meta))

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
            value = _decimal(str(tok)[:-1]) / 100
            return ast.Percent(-value if negative else value, text, span=span_of(meta))
        value = _decimal(str(tok))
        return ast.Num(-value if negative else value, text, span=span_of(meta))

    # expressions
    def number(self, meta, items):
        return ast.Num(_decimal(str(items[0])), str(items[0]), span=span_of(meta))

    def percent(self, meta, items):
        return ast.Percent(_decimal(str(items[0])[:-1]) / 100, str(items[0]), span=span_of(meta))

    def name(self, meta, items):
        return ast.Name(str(items[0]), span=span_of(meta))

    def member(self, meta, items):
        return ast.Member(str(items[0]), str(items[1]), span=span_of(meta))

    def call(self, meta, items):
        return ast.Call(str(items[0]), tuple(items[1:]), span=span_of(meta))

    def worth_of_all(self, meta, items):
        return ast.WorthOfAll(span=span_of(meta))

    def negate(self, meta, items):
        return ast.Neg(items[1], span=span_of(meta))

    def binary(self, meta, items):
        left, op, right = items
        return ast.Binary(str(op), left, right, span=span_of(meta))

    def compare(self, meta, items):
        left, op, right = items
        return ast.Binary(str(op), left, right, span=span_of(meta))

    def and_op(self, meta, items):
        return ast.Binary("and", items[0], items[1], span=span_of(meta))

    def or_op(self, meta, items):
        return ast.Binary("or", items[0], items[1], span=span_of(meta))

    def not_op(self, meta, items):
        return ast.Not(items[0], span=span_of(meta))

    def if_expr(self, meta, items):
        return ast.If(items[0], items[1], items[2], span=span_of(meta))

    @staticmethod
    def _ident(tok: Token) -> ast.Ident:
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
        return _ToAst().transform(tree)
    except UnexpectedInput as exc:
        raise AgreementError([_syntax_diagnostic(exc, source)]) from None
    except VisitError as exc:  # a literal that cannot be converted; should not happen
        raise AgreementError([error("syntax", f"cannot read this value: {exc.orig_exc}", ast.Span(1, 1, 1, 2))]) from None
