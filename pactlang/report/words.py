"""One `Result` -> one sentence in plain words for the people at the table.

"Two of the five parties (orchard_a, orchard_b) would gain 39.2 kEUR by
going their own way in the baseline; the agreement allows 5 kEUR." The
numbers are those of the tables, rounded the same way.
"""

from __future__ import annotations

from fractions import Fraction

from ..results import FAILS, HOLDS, Result
from .amounts import Figures, percent, percent_text
from .tables import RenderOptions, absolute_bound, coalition_words, percent_bound, unit_suffix

_NUMBERS = ("no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten",
            "eleven", "twelve", "thirteen", "fourteen", "fifteen", "sixteen", "seventeen",
            "eighteen", "nineteen", "twenty")


def number_word(n: int) -> str:
    return _NUMBERS[n] if 0 <= n < len(_NUMBERS) else str(n)


def capital(text: str) -> str:
    return text[:1].upper() + text[1:]


def where_words(result: Result) -> str:
    return f"under \u201c{result.contingency}\u201d" if result.contingency else "in the baseline"


def at_words(parameters: dict[str, Fraction], options: RenderOptions) -> str:
    if not parameters:
        return ""
    figures = Figures.for_values(list(parameters.values()), options.digits, options.exact, options.min_decimals)
    return " when " + " and ".join(f"{k} is {figures.amount(v)}" for k, v in parameters.items())


def who_words(members, parties, options: RenderOptions) -> str:
    """`orchard_a`, `two of the five parties (a, b)`, `all six parties`."""
    k, n = len(members), len(parties)
    if k == 1:
        return members[0]
    if n and k == n:
        return f"all {number_word(n)} parties together"
    named = prose_names(members, parties, options)
    if k <= 6 or options.full or named.startswith("everyone except"):
        return f"{number_word(k)} of the {number_word(n)} parties ({named})"
    return f"{number_word(k)} of the {number_word(n)} parties (the first group in the table)"


def prose_names(members, parties, options: RenderOptions) -> str:
    """A coalition inside a sentence: `alder, cedar and fir`, `everyone except damson`."""
    named = coalition_words(members, parties, options.full)
    if named == "everyone":
        return named
    head, _, names = named.rpartition("{")
    names = names.rstrip("}").split(", ")
    listed = names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]
    return head + listed


def sentence(result: Result, parties, kind: str, unit: str | None, options: RenderOptions = RenderOptions()) -> str:
    """The finding of one result as a sentence."""
    u = unit_suffix(unit)
    where = where_words(result)
    if result.status not in (HOLDS, FAILS):
        return capital(f"{result.requirement} could not be decided {where}: {result.reason or 'no reason given'}.")
    if result.requirement == "balanced budget":
        if result.status == HOLDS:
            return capital(f"{where}, the payouts add up exactly to what the whole group "
                           f"{'pays' if kind == 'cost' else 'earns'}.")
        c = result.counterexamples[0]
        figures = Figures.for_values([c.payout, c.worth], options.digits, options.exact, options.min_decimals)
        return capital(f"{where}, the payouts add up to {figures.amount(c.payout)}{u}, but the whole group "
                       f"{'pays' if kind == 'cost' else 'earns'} {figures.amount(c.worth)}{u}"
                       f"{at_words(c.parameters, options)}.")
    bound = absolute_bound(result)
    pct = percent_bound(result)
    singles = result.requirement == "individually rational"
    if result.status == FAILS and result.counterexamples:
        c = result.counterexamples[0]
        figures = Figures.for_values([c.excess, 0] + ([bound] if bound else []), options.digits, options.exact, options.min_decimals)
        who = who_words(c.coalition, parties, options)
        plural = len(c.coalition) > 1
        if kind == "cost":
            gain = f"would save {figures.excess(c.excess)}{u} by going {'their' if plural else 'its'} own way"
        else:
            gain = f"would earn {figures.excess(c.excess)}{u} more on {'their' if plural else 'its'} own"
        text = f"{where}{at_words(c.parameters, options)}, {who} {gain}"
        if pct is not None:
            share = percent(c.excess, c.worth)
            if share is not None:
                text += f", {percent_text(share, 1, options.exact)} of {'their' if plural else 'its'} worth"
            text += f"; the agreement allows {percent_text(pct, 2, options.exact)}"
        elif bound:
            text += f"; the agreement allows {figures.amount(bound)}{u}"
        else:
            text += "; the agreement allows no gain"
        more = len(result.counterexamples) - 1
        if more:
            noun = ("party" if more == 1 else "parties") if singles else ("group" if more == 1 else "groups")
            text += f" ({number_word(more)} more {noun} in the table)"
        return capital(text) + "."
    e = result.worst_excess
    if e is None:
        return capital(f"{result.requirement} holds {where}.")
    figures = Figures.for_values([e, 0] + ([bound] if bound else []), options.digits, options.exact, options.min_decimals)
    who = ""
    if result.worst_coalition:
        who = prose_names(result.worst_coalition, parties, options)
    subject = "no party" if singles else "no group of parties"
    every = " for every value in the ranges" if result.method.startswith("z3") else ""
    own = "their own" if result.worst_coalition and len(result.worst_coalition) > 1 else "its own"
    if e < 0:
        loss = figures.excess(-e) if figures.excess(-e) != "just above 0" else "slightly"
        if kind == "cost":
            rest = f"the closest, {who}, would pay {loss}{u} more on {own}"
        else:
            rest = f"the closest, {who}, would earn {loss}{u} less on {own}"
        return capital(f"{where}, {subject} would be better off alone{every}: {rest}.")
    if e == 0:
        return capital(f"{where}, {subject} would be better off alone{every}; {who} would only break even.")
    limit = (f"{percent_text(pct, 2, options.exact)} of its worth" if pct is not None
             else f"{figures.amount(bound)}{u}")
    return capital(f"{where}, the most any group gains by leaving is {figures.excess(e)}{u} ({who}){every}, "
                   f"within the {limit} the agreement allows.")
