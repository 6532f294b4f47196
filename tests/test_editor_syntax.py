""".deal samples -> scopes from the TextMate grammar (real engine, node) and groups from the Vim syntax file (vim -es).

The TextMate checks run vscode-textmate + vscode-oniguruma under node
(`npm install --prefix tests/js`); the Vim checks run a headless `vim -es`
with editors/vim on its runtimepath. When a tool is missing these tests skip
with the reason on a developer machine and fail under CI (CI must never skip).
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
EDITORS = ROOT / "editors"
GRAMMAR = EDITORS / "textmate" / "deal.tmLanguage.json"
LANGUAGE_CONFIGURATION = EDITORS / "textmate" / "language-configuration.json"
VSCODE = EDITORS / "vscode"
VIM_RUNTIME = EDITORS / "vim"
JS_DIR = Path(__file__).resolve().parent / "js"
NPM_PACKAGES = ("vscode-textmate", "vscode-oniguruma")

STATEMENT_WORDS = ("agreement", "shares", "party", "param", "worth", "payout", "contingency", "require")
RULES = ("equal split", "proportional to size", "shapley", "nucleolus", "separable costs remaining benefits")

# Invented scenarios. Samples never contain [ or ]: the expectations below
# mark the checked text with brackets inside a unique stretch of a sample.
SAMPLES: dict[str, str] = {
    # The example of the language page.
    "channel": """\
# Four berth operators share the dredging of one approach channel.
agreement "Approach channel dredging"
shares cost in kEUR

party north_quay: draft 12.5, calls 340
party south_quay: draft 11.0, calls 210
party ferry_coop: draft 6.5, calls 900
party marina:     draft 3.0, calls 60

param overrun = 1

# A coalition dredges to the deepest draft any member needs.
worth S = overrun * 40 * max(draft in S) + 0.05 * sum(calls in S)
worth {marina} = 9                   # a table entry overrides the formula

payout marina = 9
payout rest by proportional to calls

contingency "deep-draft season" { draft of north_quay in 12.5 .. 14 }
contingency "marina leaves"     { without marina }
contingency "overrun"           { overrun in 1 .. 1.3 }

require stable within 15
require stable within 2%
require individually rational
""",
    "bakeries": """\
# Three bakeries pool one delivery van and share what it earns.
agreement "Van pool: shares value, not cost # of the van"
shares value in "EUR/week"

party rye:      loaves 120, ovens 2
party crumb:    loaves 80, ovens 1
party flourish: loaves 200, ovens 3, count 4

param bonus = 4.5

worth S = if count(S) >= 2 and not (crumb in S) then 0.1 * sum(loaves in S) + bonus else min(ovens in S)
worth {rye, crumb} = 30    # they already share a route
worth all = 60             # all of it, in euro, worth every payout
payout rye = 25%           # a quarter of worth(all)
payout crumb = worth(all) / 3 - 1
payout rest by equal split

contingency "flour shortage" {
  loaves of flourish = 150
  bonus in 0 .. 6
  worth {rye, flourish} in 20 .. 35
}
require stable
require balanced budget
""",
    "cold_store": """\
agreement "Shared cold store"
shares cost
party ice:   size 3, value 2
party fish:  size 5
party dairy: size 2
worth {ice} = 10
worth {fish} = 14
worth {ice, fish} = 20
worth otherwise = 25
payout by nucleolus
require stable within 1.5
""",
    "strings": r"""agreement "Quote \"in\" and back\\slash # not a comment" # a real comment
shares value in "payout by shapley"
party a: size 1
party b: size 2
worth otherwise = 1
""",
    "drafting": """\
agreement "Cold chain"
shares cost in EUR
parties from "members.csv"  # one row per member
worth S = 50 + 2 * sum(pallets in S)
payout by proportional to pallets
round payouts to 0.01 by largest remainder
require stable
""",
    # Unfinished text: an unterminated string and an unclosed block must not
    # colour the lines after them.
    "unfinished": """\
agreement "Unfinished draft
shares cost
party a: size 1
contingency "open block" {
  size of a in 1 .. 2
require stable
""",
}
for _i, _rule in enumerate(RULES):
    SAMPLES[f"rule{_i}"] = (
        f'agreement "Rule {_i}"\nshares cost\nparty a: size 1\nparty b: size 3\n'
        f"worth S = sum(size in S)\npayout by {_rule}\n"
    )

# (sample, marked text, TextMate scope, Vim standard group); None = not checked there.
EXPECTATIONS: list[tuple[str, str, str | None, str | None]] = [
    # comments: whole line, and after a statement
    ("channel", "[# Four berth operators share the dredging of one approach channel.]",
     "comment.line.number-sign.deal", "Comment"),
    ("channel", "[#] Four berth", "punctuation.definition.comment.deal", "Comment"),
    ("channel", "9                   [# a table entry overrides the formula]",
     "comment.line.number-sign.deal", "Comment"),
    ("bakeries", "30    [# they already share a route]", "comment.line.number-sign.deal", "Comment"),
    ("bakeries", "60             [# all of it, in euro, worth every payout]",
     "comment.line.number-sign.deal", "Comment"),
    ("bakeries", "[# a quarter of worth(all)]", "comment.line.number-sign.deal", "Comment"),
    ("strings", '" [# a real comment]', "comment.line.number-sign.deal", "Comment"),
    # statement keywords
    ("channel", '[agreement] "Approach', "keyword.other.agreement.deal", "Statement"),
    ("channel", "[shares] cost", "keyword.other.shares.deal", "Statement"),
    ("channel", "[party] north_quay", "keyword.other.party.deal", "Statement"),
    ("channel", "[param] overrun", "keyword.other.param.deal", "Statement"),
    ("channel", "[worth] S =", "keyword.other.worth.deal", "Statement"),
    ("channel", "[payout] marina = 9", "keyword.other.payout.deal", "Statement"),
    ("channel", '[contingency] "deep-draft', "keyword.other.contingency.deal", "Statement"),
    ("channel", "[require] stable within 15", "keyword.other.require.deal", "Statement"),
    ("drafting", "[parties from] \"members", None, "Statement"),
    ("drafting", "[parties] from", "keyword.other.parties.deal", None),
    ("drafting", "parties [from]", "keyword.other.from.deal", None),
    ("drafting", '"[members.csv]"', "string.quoted.double.deal", "String"),
    ("drafting", "csv\"  [# one row per member]", "comment.line.number-sign.deal", "Comment"),
    ("drafting", "[round] payouts", "keyword.other.round.deal", "Statement"),
    ("drafting", "round [payouts] to", "keyword.other.rounding.deal", "Keyword"),
    ("drafting", "to [0.01] by", "constant.numeric.decimal.deal", "Number"),
    ("drafting", "by [largest remainder]", "keyword.other.rounding.deal", "Keyword"),
    # other keywords
    ("channel", "shares [cost] in", "keyword.other.kind.deal", "Keyword"),
    ("bakeries", "shares [value] in", "keyword.other.kind.deal", "Keyword"),
    ("channel", "cost [in] kEUR", "keyword.other.in.deal", "Keyword"),
    ("channel", "max(draft [in] S)", "keyword.other.in.deal", "Keyword"),
    ("bakeries", "worth [all] = 60", "keyword.other.all.deal", "Keyword"),
    ("bakeries", "worth([all]) / 3", "keyword.other.all.deal", "Keyword"),
    ("bakeries", "payout crumb = [worth](all)", "keyword.other.worth.deal", "Statement"),
    ("cold_store", "worth [otherwise] = 25", "keyword.other.otherwise.deal", "Keyword"),
    ("channel", "payout [rest] by", "keyword.other.rest.deal", "Keyword"),
    ("channel", "rest [by] proportional", "keyword.other.by.deal", "Keyword"),
    ("cold_store", "payout [by] nucleolus", "keyword.other.by.deal", "Keyword"),
    ("channel", "by [proportional to] calls", "keyword.other.rule.deal", "Keyword"),
    ("bakeries", "by [equal split]", "keyword.other.rule.deal", "Keyword"),
    ("cold_store", "by [nucleolus]", "keyword.other.rule.deal", "Keyword"),
    ("rule2", "by [shapley]", "keyword.other.rule.deal", "Keyword"),
    ("rule4", "by [separable costs remaining benefits]", "keyword.other.rule.deal", "Keyword"),
    ("channel", "{ [without] marina }", "keyword.other.without.deal", "Keyword"),
    ("channel", "draft [of] north_quay", "keyword.other.of.deal", "Keyword"),
    ("bakeries", "loaves [of] flourish", "keyword.other.of.deal", "Keyword"),
    ("channel", "require [stable] within 15", "keyword.other.requirement.deal", "Keyword"),
    ("channel", "stable [within] 15", "keyword.other.within.deal", "Keyword"),
    ("channel", "require [individually rational]", "keyword.other.requirement.deal", "Keyword"),
    ("bakeries", "require [balanced budget]", "keyword.other.requirement.deal", "Keyword"),
    ("bakeries", "worth S = [if] count", "keyword.control.conditional.deal", "Conditional"),
    ("bakeries", "S) [then] 0.1", "keyword.control.conditional.deal", "Conditional"),
    ("bakeries", "bonus [else] min", "keyword.control.conditional.deal", "Conditional"),
    ("bakeries", ">= 2 [and] not", "keyword.operator.logical.deal", "Operator"),
    ("bakeries", "and [not] (crumb", "keyword.operator.logical.deal", "Operator"),
    ("bakeries", "(crumb [in] S)", "keyword.other.in.deal", "Keyword"),
    # functions
    ("channel", "[max](draft in S)", "support.function.builtin.deal", "Function"),
    ("channel", "[sum](calls in S)", "support.function.builtin.deal", "Function"),
    ("bakeries", "if [count](S)", "support.function.builtin.deal", "Function"),
    ("bakeries", "else [min](ovens in S)", "support.function.builtin.deal", "Function"),
    # numbers and percentages
    ("channel", "draft [12.5], calls 340", "constant.numeric.decimal.deal", "Number"),
    ("channel", "calls [340]", "constant.numeric.decimal.deal", "Number"),
    ("channel", "+ [0.05] *", "constant.numeric.decimal.deal", "Number"),
    ("channel", "north_quay in [12.5] .. 14", "constant.numeric.decimal.deal", "Number"),
    ("channel", "overrun in 1 .. [1.3]", "constant.numeric.decimal.deal", "Number"),
    ("channel", "require stable within [15]", "constant.numeric.decimal.deal", "Number"),
    ("channel", "within [2%]", "constant.numeric.percentage.deal", "Number"),
    ("channel", "within 2[%]", "keyword.other.unit.percent.deal", "Number"),
    ("bakeries", "payout rye = [25%]", "constant.numeric.percentage.deal", "Number"),
    ("cold_store", "within [1.5]", "constant.numeric.decimal.deal", "Number"),
    # strings; keywords and # inside them stay string
    ("channel", 'agreement ["Approach channel dredging"]', "string.quoted.double.deal", "String"),
    ("channel", 'contingency ["deep-draft season"]', "string.quoted.double.deal", "String"),
    ("bakeries", '"Van pool: [shares] value', "string.quoted.double.deal", "String"),
    ("bakeries", "shares [value], not cost", "string.quoted.double.deal", "String"),
    ("bakeries", "value, [not] cost", "string.quoted.double.deal", "String"),
    ("bakeries", "not [cost] # of the van", "string.quoted.double.deal", "String"),
    ("bakeries", "not cost [# of the van]", "string.quoted.double.deal", "String"),
    ("bakeries", 'shares value in ["EUR/week"]', "string.quoted.double.deal", "String"),
    ("strings", r'back\\slash [# not a comment]', "string.quoted.double.deal", "String"),
    ("strings", r'Quote \"[in]\" and', "string.quoted.double.deal", "String"),
    ("strings", r'\"in\" [and] back', "string.quoted.double.deal", "String"),
    ("strings", r'Quote [\"]in', "constant.character.escape.deal", "SpecialChar"),
    ("strings", r'back[\\]slash', "constant.character.escape.deal", "SpecialChar"),
    ("strings", '["payout by shapley"]', "string.quoted.double.deal", "String"),
    ("unfinished", 'agreement ["Unfinished draft]', "string.quoted.double.deal", "String"),
    # declared and other names
    ("channel", "party [north_quay]:", "entity.name.type.party.deal", "Type"),
    ("channel", "party [marina]:", "entity.name.type.party.deal", "Type"),
    ("channel", "param [overrun]", "entity.name.variable.param.deal", "Identifier"),
    ("channel", "worth [S] =", "variable.parameter.coalition.deal", "Identifier"),
    ("channel", "in [kEUR]", "string.unquoted.unit.deal", "Identifier"),
    ("channel", "north_quay: [draft] 12.5", "variable.other.property.deal", "Identifier"),
    ("channel", "draft 12.5, [calls] 340", "variable.other.property.deal", "Identifier"),
    ("bakeries", "rye:      [loaves] 120", "variable.other.property.deal", "Identifier"),
    ("bakeries", "ovens 3, [count] 4", "variable.other.property.deal", "Identifier"),
    ("cold_store", "size 3, [value] 2", "variable.other.property.deal", "Identifier"),
    ("channel", "max([draft] in S)", "variable.other.property.deal", None),
    ("channel", "proportional to [calls]", "variable.other.property.deal", None),
    ("channel", "{ [draft] of north_quay", "variable.other.property.deal", None),
    ("channel", "of [north_quay] in 12.5", "variable.other.party.deal", None),
    ("channel", "worth {[marina]}", "variable.other.party.deal", None),
    ("channel", "payout [marina] = 9", "variable.other.party.deal", "Identifier"),
    ("channel", "without [marina] }", "variable.other.party.deal", "Identifier"),
    ("channel", "{ [overrun] in 1", "variable.other.deal", None),
    ("bakeries", "+ [bonus] else", "variable.other.deal", None),
    # operators and punctuation
    ("channel", "overrun [=] 1", "keyword.operator.assignment.deal", "Operator"),
    ("channel", "overrun [*] 40", "keyword.operator.arithmetic.deal", "Operator"),
    ("bakeries", "worth(all) [/] 3 - 1", "keyword.operator.arithmetic.deal", "Operator"),
    ("bakeries", "worth(all) / 3 [-] 1", "keyword.operator.arithmetic.deal", "Operator"),
    ("bakeries", "count(S) [>=] 2", "keyword.operator.comparison.deal", "Operator"),
    ("channel", "in 12.5 [..] 14", "keyword.operator.range.deal", "Operator"),
    ("channel", "worth [{]marina}", "punctuation.section.braces.begin.deal", "Delimiter"),
    ("channel", "worth {marina[}]", "punctuation.section.braces.end.deal", "Delimiter"),
    ("bakeries", "{rye[,] crumb}", "punctuation.separator.comma.deal", "Delimiter"),
    ("channel", '"deep-draft season" [{]', "punctuation.section.block.begin.deal", "Delimiter"),
    ("channel", "in 12.5 .. 14 [}]", "punctuation.section.block.end.deal", "Delimiter"),
    # a block over several lines
    ("bakeries", "  [loaves] of flourish = 150", "meta.block.contingency.deal", None),
    ("bakeries", "  [bonus] in 0 .. 6", "meta.block.contingency.deal", None),
    ("bakeries", "  [worth] {rye, flourish} in", "keyword.other.worth.deal", "Statement"),
    ("bakeries", "worth {rye, [flourish]} in 20", "variable.other.party.deal", None),
    ("bakeries", "[}]\nrequire stable", "punctuation.section.block.end.deal", "Delimiter"),
    # recovery after unfinished text
    ("unfinished", "[shares] cost", "keyword.other.shares.deal", "Statement"),
    ("unfinished", "  [size] of a in", "meta.block.contingency.deal", None),
    ("unfinished", "[require] stable", "keyword.other.require.deal", "Statement"),
    ("unfinished", "require [stable]", "keyword.other.requirement.deal", "Keyword"),
]
# What a checked stretch must not also be (a keyword inside a string stays string).
FORBIDDEN = {
    "string": ("keyword", "comment", "support", "variable", "constant.numeric"),
    "comment": ("keyword", "string", "support", "variable", "constant.numeric"),
}
# Scopes that must be absent from a checked stretch, by expectation.
NOT_INSIDE = {
    ("unfinished", "[shares] cost"): ("string",),
    ("unfinished", "[require] stable"): ("meta.block.contingency.deal", "meta.statement.contingency.deal"),
    ("unfinished", "require [stable]"): ("meta.block.contingency.deal",),
    ("bakeries", "ovens 3, [count] 4"): ("support.function",),
    ("cold_store", "size 3, [value] 2"): ("keyword",),
}


# ---------------------------------------------------------------- helpers


def _in_ci() -> bool:
    """True when the CI variable is set to something other than a "no"."""
    return os.environ.get("CI", "").strip().lower() not in ("", "0", "false", "no")


def _unavailable(reason: str) -> None:
    """Skip on a developer machine; fail under CI, which must run every check."""
    if _in_ci():
        pytest.fail(f"{reason} (CI must install it, see .ci/run; these tests never skip under CI)", pytrace=False)
    pytest.skip(reason)


def _locate(sample: str, marked: str) -> tuple[int, int, int]:
    """Find `marked` ("context [target] context") once in a sample; return (line, start, end) of target."""
    match = re.fullmatch(r"([^\[\]]*)\[([^\[\]]+)\]([^\[\]]*)", marked, re.S)
    assert match, f"bad expectation {marked!r}: mark exactly one [target]"
    before, target, after = match.groups()
    assert "\n" not in target, f"target of {marked!r} spans lines"
    text = SAMPLES[sample]
    needle = before + target + after
    count = text.count(needle)
    assert count == 1, f"{needle!r} occurs {count} times in sample {sample!r}, must be once"
    offset = text.index(needle) + len(before)
    line = text.count("\n", 0, offset)
    start = offset - (text.rfind("\n", 0, offset) + 1)
    return line, start, start + len(target)


def _has_scope(scopes: list[str], wanted: str) -> bool:
    """TextMate selector match: `keyword` matches `keyword.other.x.deal`."""
    return any(s == wanted or s.startswith(wanted + ".") for s in scopes)


def _ids(expectations):
    return [f"{sample}:{marked}".replace("[", "<").replace("]", ">") for sample, marked, *_ in expectations]


# ---------------------------------------------------------------- static checks (no tools needed)


def _walk_rules(node):
    """Yield every dict of a grammar (rules, captures, repository entries)."""
    if isinstance(node, dict):
        yield node
        for value in node.values():
            yield from _walk_rules(value)
    elif isinstance(node, list):
        for item in node:
            yield from _walk_rules(item)


def test_grammar_file_is_complete_and_consistent():
    grammar = json.loads(GRAMMAR.read_text(encoding="utf-8"))
    assert grammar["scopeName"] == "source.deal"
    assert grammar["fileTypes"] == ["deal"]
    repository = grammar["repository"]
    # TextMate naming conventions: a standard root, and the language last.
    roots = {"comment", "constant", "entity", "invalid", "keyword", "markup", "meta",
             "punctuation", "storage", "string", "support", "variable"}
    for rule in _walk_rules(grammar):
        include = rule.get("include")
        if isinstance(include, str):
            assert include.startswith("#") and include[1:] in repository, f"unresolved include {include}"
        name = rule.get("name")
        if isinstance(name, str) and rule is not grammar:
            assert name.split(".")[0] in roots, f"scope {name} has no standard root"
            assert name.endswith(".deal"), f"scope {name} does not end in .deal"


def test_language_configuration():
    config = json.loads(LANGUAGE_CONFIGURATION.read_text(encoding="utf-8"))
    assert config["comments"]["lineComment"] == "#"
    assert ["{", "}"] in config["brackets"] and ["(", ")"] in config["brackets"]
    closing = {pair["open"]: pair["close"] for pair in config["autoClosingPairs"]}
    assert closing == {"{": "}", "(": ")", '"': '"'}


def test_vscode_extension_manifest_and_copies():
    manifest = json.loads((VSCODE / "package.json").read_text(encoding="utf-8"))
    for key in ("name", "publisher", "version", "engines"):
        assert key in manifest
    (language,) = manifest["contributes"]["languages"]
    (grammar,) = manifest["contributes"]["grammars"]
    assert language["extensions"] == [".deal"]
    assert grammar["language"] == language["id"]
    assert grammar["scopeName"] == "source.deal"
    # The folder is copied as it is into the editor's extensions, so it holds
    # its own copies; they must not drift from the editor-neutral originals.
    for copy, original in ((grammar["path"], GRAMMAR), (language["configuration"], LANGUAGE_CONFIGURATION)):
        copied = (VSCODE / copy).resolve()
        assert copied.is_file(), f"{copy} missing from editors/vscode"
        assert copied.read_bytes() == original.read_bytes(), (
            f"editors/vscode/{copy} differs from {original.relative_to(ROOT)}: copy the original over it"
        )


# ---------------------------------------------------------------- TextMate, real engine


@pytest.fixture(scope="module")
def tm_tokens() -> dict[str, list[list[dict]]]:
    """Tokens of every sample (and of agreements/*.deal) from vscode-textmate."""
    node = shutil.which("node")
    if node is None:
        _unavailable("node is not installed: the TextMate grammar cannot be run")
    missing = [p for p in NPM_PACKAGES if not (JS_DIR / "node_modules" / p / "package.json").is_file()]
    if missing:
        _unavailable(f"npm packages {', '.join(missing)} are missing: run `npm install --prefix tests/js`")
    documents = dict(SAMPLES)
    for path in sorted((ROOT / "agreements").glob("*.deal")):
        documents[f"agreements/{path.name}"] = path.read_text(encoding="utf-8")
    request = {"grammar": str(GRAMMAR), "documents": documents}
    run = subprocess.run([node, str(JS_DIR / "tokenize.js")], input=json.dumps(request),
                         capture_output=True, text=True, timeout=120, cwd=JS_DIR)
    assert run.returncode == 0, f"tokenize.js failed:\n{run.stderr}"
    result = json.loads(run.stdout)
    assert result["regexes"] > 0
    return result["documents"]


@pytest.mark.parametrize(("sample", "marked", "scope"),
                         [(s, m, tm) for s, m, tm, _ in EXPECTATIONS if tm],
                         ids=_ids([e for e in EXPECTATIONS if e[2]]))
def test_textmate_scope(tm_tokens, sample, marked, scope):
    line, start, end = _locate(sample, marked)
    tokens = [t for t in tm_tokens[sample][line] if t["start"] < end and t["end"] > start]
    assert tokens, f"no token covers {marked!r}"
    forbidden = FORBIDDEN.get(scope.split(".")[0], ()) + NOT_INSIDE.get((sample, marked), ())
    for token in tokens:
        scopes = token["scopes"]
        assert scopes[0] == "source.deal"
        assert _has_scope(scopes, scope), f"{token['text']!r} in {marked!r} has {scopes}, wanted {scope}"
        for bad in forbidden:
            assert not _has_scope(scopes, bad), f"{token['text']!r} in {marked!r} has {scopes}, must not be {bad}"


def test_textmate_keyword_is_one_token(tm_tokens):
    """A keyword is one token from its first to its last letter, even a multi-word one."""
    for sample, marked, scope, _ in EXPECTATIONS:
        if scope and scope.startswith("keyword.other") and ".unit." not in scope:
            line, start, end = _locate(sample, marked)
            spans = [(t["start"], t["end"]) for t in tm_tokens[sample][line] if t["start"] < end and t["end"] > start]
            assert spans == [(start, end)], f"{marked!r} is split: {spans}"


def test_textmate_rules_in_payout(tm_tokens):
    for i, rule in enumerate(RULES):
        line = SAMPLES[f"rule{i}"].splitlines().index(f"payout by {rule}")
        tokens = tm_tokens[f"rule{i}"][line]
        keyword = rule.removesuffix(" size")
        assert any(t["text"] == keyword and _has_scope(t["scopes"], "keyword.other.rule.deal") for t in tokens), tokens


def test_textmate_on_every_agreement_file(tm_tokens):
    """On every shipped agreement: comment lines are comments, statements start with their keyword."""
    for name, lines in tm_tokens.items():
        if not name.startswith("agreements/"):
            continue
        text_lines = (ROOT / name).read_text(encoding="utf-8").splitlines()
        for number, (text, tokens) in enumerate(zip(text_lines, lines), start=1):
            stripped = text.lstrip()
            words = re.match(r"\s*(\w+)\b", text)
            if stripped.startswith("#"):
                assert all(_has_scope(t["scopes"], "comment") for t in tokens if t["text"].strip()), \
                    f"{name}:{number}: comment line not all comment"
            elif words and words.group(1) in STATEMENT_WORDS:
                first = next(t for t in tokens if t["text"].strip())
                assert _has_scope(first["scopes"], f"keyword.other.{words.group(1)}.deal"), \
                    f"{name}:{number}: {words.group(1)!r} is not a keyword: {first['scopes']}"


# ---------------------------------------------------------------- Vim, headless

VIM_DUMP = r"""
set encoding=utf-8
try
  execute 'set runtimepath^=' . fnameescape(s:runtime)
  filetype plugin on
  syntax on
  let s:result = {'documents': {}, 'links': {}}
  for s:path in s:files
    execute 'edit ' . fnameescape(s:path)
    let s:doc = {'filetype': &filetype, 'syntax': get(b:, 'current_syntax', ''),
          \ 'commentstring': &commentstring, 'lines': []}
    for s:lnum in range(1, line('$'))
      let s:groups = []
      for s:col in range(1, strlen(getline(s:lnum)))
        let s:name = synIDattr(synID(s:lnum, s:col, 1), 'name')
        call add(s:groups, s:name)
        if s:name != '' && !has_key(s:result.links, s:name)
          let s:result.links[s:name] = matchstr(execute('highlight ' . s:name), 'links to \zs\w\+')
        endif
      endfor
      call add(s:doc.lines, s:groups)
    endfor
    let s:result.documents[fnamemodify(s:path, ':t:r')] = s:doc
    bwipeout!
  endfor
catch
  let s:result = {'error': v:exception . ' at ' . v:throwpoint}
endtry
call writefile([json_encode(s:result)], s:out)
qall!
"""


def _vim_string(text: str) -> str:
    return "'" + text.replace("'", "''") + "'"


@pytest.fixture(scope="module")
def vim_groups(tmp_path_factory) -> dict:
    """Per sample: filetype, syntax, commentstring and the syntax group of every byte; plus group links."""
    vim = shutil.which("vim")
    if vim is None:
        _unavailable("vim is not installed: the Vim syntax file cannot be loaded")
    version = subprocess.run([vim, "--version"], capture_output=True, text=True, timeout=30).stdout
    if "+syntax" not in version or "+eval" not in version:
        _unavailable(f"{vim} has no +syntax/+eval (a tiny build?): install the full vim package")
    folder = tmp_path_factory.mktemp("vim")
    files = []
    for name, text in SAMPLES.items():
        path = folder / f"{name}.deal"
        path.write_text(text, encoding="utf-8")
        files.append(str(path))
    out = folder / "groups.json"
    script = folder / "dump.vim"
    script.write_text(
        f"let s:runtime = {_vim_string(str(VIM_RUNTIME))}\n"
        f"let s:files = [{', '.join(_vim_string(f) for f in files)}]\n"
        f"let s:out = {_vim_string(str(out))}\n" + VIM_DUMP,
        encoding="utf-8",
    )
    run = subprocess.run([vim, "-Nu", "NONE", "-i", "NONE", "-n", "-es", "-S", str(script)],
                         stdin=subprocess.DEVNULL, capture_output=True, text=True, timeout=120)
    assert out.is_file(), f"vim wrote nothing (exit {run.returncode}):\n{run.stdout}\n{run.stderr}"
    result = json.loads(out.read_text(encoding="utf-8"))
    assert "error" not in result, result.get("error")
    return result


def test_vim_detects_and_loads(vim_groups):
    for name in SAMPLES:
        doc = vim_groups["documents"][name]
        assert doc["filetype"] == "deal"
        assert doc["syntax"] == "deal"
        assert doc["commentstring"] == "# %s"


@pytest.mark.parametrize(("sample", "marked", "group"),
                         [(s, m, g) for s, m, _, g in EXPECTATIONS if g],
                         ids=_ids([e for e in EXPECTATIONS if e[3]]))
def test_vim_group(vim_groups, sample, marked, group):
    line, start, end = _locate(sample, marked)
    text = SAMPLES[sample].splitlines()[line]
    groups = vim_groups["documents"][sample]["lines"][line]
    links = vim_groups["links"]
    first_byte = len(text[:start].encode("utf-8"))
    last_byte = len(text[:end].encode("utf-8"))
    seen = groups[first_byte:last_byte]
    assert len(seen) == last_byte - first_byte
    for name in seen:
        assert name.startswith("deal"), f"{marked!r}: byte in group {name!r}, wanted a deal group linked to {group}"
        assert links.get(name) == group, f"{marked!r}: {name} links to {links.get(name)!r}, wanted {group}"


def test_vim_attribute_named_like_a_keyword(vim_groups):
    """`cost` and `value` are keywords only after `shares`, and count only when
    called: in a party line they are attribute names like any other."""
    for sample, marked in (("bakeries", "ovens 3, [count] 4"), ("cold_store", "size 3, [value] 2")):
        line, start, end = _locate(sample, marked)
        assert set(vim_groups["documents"][sample]["lines"][line][start:end]) == {"dealAttributeName"}, marked


def test_vim_party_line_numbers_and_commas_keep_their_groups(vim_groups):
    """Only the names of a party line are attributes; the party name, values and commas keep their colours."""
    for marked, group in (("party [north_quay]:", "dealPartyName"), ("draft [12.5], calls", "dealNumber"),
                          ("draft 12.5[,] calls", "dealDelimiter"), ("calls [340]", "dealNumber")):
        line, start, end = _locate("channel", marked)
        assert set(vim_groups["documents"]["channel"]["lines"][line][start:end]) == {group}, marked
