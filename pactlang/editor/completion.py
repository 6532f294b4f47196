"""Document text + a cursor + the declared names -> the words that fit there, for completion.

The grammar decides which words may come next: the text of the statement
under the cursor, up to the word being typed, is fed to the parser's
interactive mode, and the terminals it accepts are the keywords to offer
(with the words that must follow them: `equal split`, `proportional to`).
Where it accepts a name, the place decides which names: parties inside a
coalition's braces and after `without` or `of`, attributes after `sum(`,
`max(`, `min(` and `proportional to`, and in party lines. Lines and columns
count from 1, as in the library's spans.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

from lark import Token
from lark.exceptions import LarkError

from ..parse import parser
from .names import FUNCTIONS

AGGREGATES = ("sum", "max", "min")  # called on `ATTR in S` (see `formula.is_aggregate`)
_PARTIAL = re.compile(r"[^\W\d]\w*$")  # the word being typed, which the editor filters by
_STRIP = re.compile(r'"(?:[^"\\\n]|\\.)*"?|#[^\n]*')  # strings and comments hide brackets


@dataclass(frozen=True)
class Suggestion:
    label: str
    kind: str  # "party" | "attribute" | "param" | "function" | "keyword"


@lru_cache(maxsize=1)
def _keyword_terminals() -> dict[str, str]:
    """Terminal name -> its word, for the grammar's word keywords."""
    return {t.name: t.pattern.value for t in parser().terminals
            if t.pattern.type == "str" and re.fullmatch(r"[^\W\d]\w*", t.pattern.value)}


def statement_prefix(text: str, line: int, column: int) -> str:
    """The text from the start of the statement under the cursor up to the
    cursor, without the word being typed. A statement starts on the first
    line outside any bracket (contingency blocks, long formulas and
    coalitions span lines)."""
    lines = text.split("\n")
    before = lines[: line - 1] + [lines[line - 1][: column - 1] if line - 1 < len(lines) else ""]
    start, depth = 0, 0
    for index, source in enumerate(before[:-1]):
        if depth == 0:
            start = index
        bare = _STRIP.sub("", source)
        depth = max(depth + bare.count("{") + bare.count("(") - bare.count("}") - bare.count(")"), 0)
    if depth == 0:
        start = len(before) - 1
    prefix = "\n".join(before[start:])
    return _PARTIAL.sub("", prefix)


def _accepted(prefix: str) -> tuple[set[str], list[Token], object] | None:
    """What the parser accepts after `prefix`, the tokens it read, and its state; None if it cannot read it."""
    try:
        interactive = parser().parse_interactive(prefix)
        tokens = [t for t in interactive.exhaust_lexer()]
        return set(interactive.accepts()), tokens, interactive
    except LarkError:
        return None


def _phrase(interactive, terminal: str, word: str) -> str:
    """The keyword plus the words that must follow it (`separable costs remaining benefits`)."""
    words = _keyword_terminals()
    phrase = [word]
    state = interactive.copy()
    try:
        for _ in range(6):
            state.feed_token(Token(terminal, words[terminal]))
            following = state.accepts()
            if len(following) != 1:
                break
            (terminal,) = following
            if terminal not in words:
                break
            phrase.append(words[terminal])
    except LarkError:
        pass
    return " ".join(phrase)


def _name_kinds(tokens: list[Token]) -> tuple[set[str], bool, bool]:
    """Which kinds of declared names fit after these tokens, whether functions
    do, and whether keywords do (not where only a name is written)."""
    types = [t.type for t in tokens]
    last = types[-1] if types else None
    opened: list[int] = []  # indices of brackets still open
    for index, kind in enumerate(types):
        if kind in ("LBRACE", "LPAR"):
            opened.append(index)
        elif kind in ("RBRACE", "RPAR") and opened:
            opened.pop()
    statement = types[0] if types else None
    if opened:
        at = opened[-1]
        before = tokens[at - 1] if at > 0 else None
        if types[at] == "LBRACE" and (before is None or before.type != "STRING"):
            return {"party"}, False, False  # a coalition (a contingency's block follows its name)
        if (types[at] == "LPAR" and at == len(tokens) - 1 and before is not None
                and before.type == "NAME" and before.value in AGGREGATES):
            return {"attribute"}, False, False  # `sum(ATTR in S)`
    if last == "TO" or statement == "PARTY" and last in ("COLON", "COMMA"):
        return {"attribute"}, False, True
    if last in ("WITHOUT", "OF", "PAYOUT"):
        return {"party"}, False, True
    if last in ("PARTY", "PARAM", "WORTH", "AGREEMENT", "IN"):
        return set(), False, True  # a new name, or the coalition variable
    if statement == "CONTINGENCY" and last in ("LBRACE", "SEMICOLON", "_NL"):
        return {"attribute", "param"}, False, True  # `ATTR of PARTY in ..`, `PARAM in ..`
    return {"party", "attribute", "param"}, True, True  # a formula


def _listed(tokens: list[Token]) -> set[str]:
    """The names already written inside the coalition braces the cursor is in."""
    names: list[str] = []
    for token in tokens:
        if token.type == "LBRACE":
            names = []
        elif token.type == "NAME":
            names.append(token.value)
    return set(names)


def suggestions(text: str, line: int, column: int, names: dict[str, str]) -> list[Suggestion] | None:
    """What to offer at the cursor (1-based line and column), given the declared
    names and their kinds; None when the statement cannot be read (offer everything)."""
    prefix = statement_prefix(text, line, column)
    found = _accepted(prefix)
    if found is None and "\n" in prefix and not prefix.startswith("contingency"):
        found = _accepted(prefix.replace("\n", " "))  # a long formula or coalition over several lines
    if found is None:
        return None
    accepts, tokens, interactive = found
    out: list[Suggestion] = []
    keywords = True
    if "NAME" in accepts:
        kinds, functions, keywords = _name_kinds(tokens)
        taken = _listed(tokens) if kinds == {"party"} and not keywords else set()
        out += [Suggestion(name, kind) for name, kind in names.items() if kind in kinds and name not in taken]
        if functions and "LPAR" in accepts:
            out += [Suggestion(name, "function") for name in FUNCTIONS]
    if keywords:
        words = _keyword_terminals()
        for terminal in sorted(accepts & words.keys(), key=lambda t: words[t]):
            out.append(Suggestion(_phrase(interactive, terminal, words[terminal]), "keyword"))
    return out
