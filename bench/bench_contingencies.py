"""Seconds for ranged contingencies and large agreements -> printed figures.

Run: python bench/bench_contingencies.py [--quick] [--ranges]

1. a 6-party agreement with 3 ranged quantities (Z3; goal under 2 s);
2. a 100-party weighted-voting agreement with a proportional payout
   (integer programming; goal under 10 s);
3. a 300-party sum-with-threshold agreement (integer programming; goal under 30 s);
4. the crossover: the smallest number of parties from which the integer
   program decides a requirement faster than enumeration;
5. ranged checks that grow with the parties: 3 ranged quantities at 10 and
   16 parties (goals under 2 s and 10 s), 1 ranged quantity at 20 parties
   (goal under 3 s), in CPU seconds, each beside a plain baseline run in the
   same process: a float numpy sweep of every coalition's excess at the
   corners of the ranges (no proof, no exact numbers), and their ratio.

The agreements are invented and generated with a fixed seed.
"""

from __future__ import annotations

import random
import statistics
import sys
import time
from itertools import product
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from pactlang.check import CheckOptions, Checker, check_model  # noqa: E402
from pactlang.load import load_text  # noqa: E402


def six_party_ranges() -> str:
    return """\
agreement "Six-town water main"
shares cost in kEUR

party alder:  demand 12, distance 4
party birch:  demand 7,  distance 9
party cedar:  demand 20, distance 2
party damson: demand 5,  distance 12
party elm:    demand 9,  distance 6
party fir:    demand 15, distance 7

param pipe_price = 3

worth S = 40 + pipe_price * max(distance in S) * 5 + 2 * sum(demand in S) + (if count(S) >= 4 then 25 else 0)

payout alder = 15%
payout rest by proportional to demand

contingency "prices and growth" { pipe_price in 2.5 .. 4; demand of cedar in 16 .. 26; distance of damson in 10 .. 14 }

require stable within 20
require stable within 10%
require individually rational
require balanced budget
"""


def weighted_voting(n: int, seed: int = 7) -> str:
    rng = random.Random(seed)
    weights = [rng.randint(1, 30) for _ in range(n)]
    quota = sum(weights) * 55 // 100
    lines = ['agreement "Board votes"', "shares value in votes", ""]
    lines += [f"party member_{i}: weight {w}" for i, w in enumerate(weights)]
    lines += ["", f"worth S = if sum(weight in S) >= {quota} then 1000 else 0",
              "payout by proportional to weight", "",
              "require stable within 50", "require stable within 5%", "require individually rational"]
    return "\n".join(lines) + "\n"


def sum_threshold(n: int, seed: int = 11) -> str:
    rng = random.Random(seed)
    lines = ['agreement "Freight pool"', "shares cost in EUR", ""]
    lines += [f"party shipper_{i}: tons {rng.randint(1, 40)}, lanes {rng.randint(1, 6)}" for i in range(n)]
    total = "sum(tons in S)"
    lines += ["", f"worth S = 120 + 9 * {total} + 4 * sum(lanes in S) - (if {total} >= 900 then 0.8 * {total} else 0)"
                  f" + (if count(S) > {n // 2} then 400 else 0)",
              "payout by proportional to tons", "",
              "require stable within 100", "require stable within 2%"]
    return "\n".join(lines) + "\n"


def ranged_towns(n: int, ranges: int, seed: int = 5) -> str:
    """A cost agreement of n towns with up to 3 ranged quantities: a price, a
    demand read by the formula and the proportional payout, a distance."""
    rng = random.Random(seed)
    lines = ['agreement "Water main"', "shares cost in kEUR", ""]
    lines += [f"party town_{i}: demand {rng.randint(3, 25)}, distance {rng.randint(2, 14)}" for i in range(n)]
    lines += ["", "param pipe_price = 3", "",
              "worth S = 40 + pipe_price * max(distance in S) * 5 + 2 * sum(demand in S)"
              " + (if count(S) >= 4 then 25 else 0)",
              "", "payout town_0 = 15%", "payout rest by proportional to demand", ""]
    parts = ["pipe_price in 2.5 .. 4", "demand of town_2 in 16 .. 26", "distance of town_3 in 10 .. 14"][:ranges]
    lines += ['contingency "prices and growth" { ' + "; ".join(parts) + " }", "",
              "require stable within 20", "require stable within 10%", "require individually rational",
              "require balanced budget"]
    return "\n".join(lines) + "\n"


def plain_corner_sweep(model, ranges: int) -> float:
    """The plain baseline: every coalition's excess in floats at every corner
    of the ranges, as a vectorised numpy sweep would compute it (no proof).
    Returns the largest excess over proper coalitions."""
    import numpy as np

    n = model.n
    masks = np.arange(1, (1 << n) - 1, dtype=np.int64)
    bits = ((masks[:, None] >> np.arange(n)) & 1).astype(bool)
    demand0 = np.array([float(v) for v in model.attribute_vector("demand")])
    dist0 = np.array([float(v) for v in model.attribute_vector("distance")])
    best = -np.inf
    ends = [(2.5, 4.0), (16.0, 26.0), (10.0, 14.0)][:ranges]
    for corner in product(*ends):
        price, demand, dist = 3.0, demand0.copy(), dist0.copy()
        if ranges >= 1:
            price = corner[0]
        if ranges >= 2:
            demand[2] = corner[1]
        if ranges >= 3:
            dist[3] = corner[2]
        count = bits.sum(axis=1)
        worth = (40 + price * np.where(bits, dist, 0).max(axis=1) * 5 + 2 * (bits @ demand)
                 + np.where(count >= 4, 25, 0))
        total = 40 + price * dist.max() * 5 + 2 * demand.sum() + (25 if n >= 4 else 0)
        pay = np.empty(n)
        pay[0] = 0.15 * total
        pay[1:] = (total - pay[0]) * demand[1:] / demand[1:].sum()
        best = max(best, float((bits @ pay - worth).max()))
    return best


def cpu_timed(fn) -> tuple[float, object]:
    """CPU seconds of the process (Z3's threads included) for one call."""
    start = time.process_time()
    out = fn()
    return time.process_time() - start, out


def timed(fn, repeat: int = 1) -> tuple[float, object]:
    times, out = [], None
    for _ in range(repeat):
        start = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times), out


def describe(results) -> str:
    return ", ".join(f"{r.requirement}: {r.status} ({r.method})" for r in results)


def ranged_rows() -> None:
    print("\n5. ranged checks by size, CPU seconds (goal), plain float corner sweep, ratio")
    from pactlang.contingencies import check_contingency

    for n, ranges, goal in ((10, 3, 2), (16, 3, 10), (20, 1, 3)):
        model = load_text(ranged_towns(n, ranges)).model
        seconds, results = cpu_timed(lambda: check_contingency(model, model.contingencies[0], CheckOptions()))
        plain, top = cpu_timed(lambda: plain_corner_sweep(model, ranges))
        met = "met" if seconds < goal else "NOT met"
        print(f"   {n:>2} parties, {ranges} ranged: {seconds:6.2f} s (goal < {goal} s, {met})  "
              f"plain {plain:.3f} s  ratio {seconds / plain:,.0f}x")
        print(f"      {describe(results)}; worst excess {results[0].worst_excess} (plain float {top:.4f})")


def main() -> None:
    quick = "--quick" in sys.argv
    print("pactlang contingency and large-agreement benchmark")
    print(f"python {sys.version.split()[0]}")
    if "--ranges" in sys.argv:  # only the ranged rows (5.)
        ranged_rows()
        return

    model = load_text(six_party_ranges()).model
    seconds, results = timed(lambda: check_model(model, CheckOptions()), repeat=1 if quick else 3)
    ranged = [r for r in results if r.contingency]
    print(f"\n1. 6 parties, 3 ranged quantities (baseline + 1 contingency, 4 requirements): {seconds:.2f} s "
          f"(goal < 2 s)")
    print(f"   {describe(ranged)}")

    model = load_text(weighted_voting(100)).model
    seconds, results = timed(lambda: Checker(model, CheckOptions()).run())
    print(f"\n2. 100-party weighted voting, proportional payout: {seconds:.2f} s (goal < 10 s)")
    print(f"   {describe(results)}; worst excess {results[0].worst_excess}")

    model = load_text(sum_threshold(300)).model
    seconds, results = timed(lambda: Checker(model, CheckOptions()).run())
    print(f"\n3. 300-party sum with thresholds: {seconds:.2f} s (goal < 30 s)")
    print(f"   {describe(results)}; worst excess {results[0].worst_excess}")

    print("\n4. crossover, one agreement per size (seconds for all requirements)")
    print(f"   {'parties':>7}  {'family':<15} {'enumeration':>11}  {'milp':>7}")
    sizes = range(12, 23, 2) if quick else range(12, 25, 2)
    crossover = {}
    for family, make in (("weighted voting", weighted_voting), ("sum threshold", sum_threshold)):
        for n in sizes:
            m = load_text(make(n)).model
            te, re = timed(lambda: Checker(m, CheckOptions(search="enumeration")).run())
            tm, rm = timed(lambda: Checker(m, CheckOptions(search="milp")).run())
            note = ""
            if any(a.status == "unknown" for a in re):
                note = "  (enumeration: unknown, float pool overflow)"
            elif [(a.status, a.worst_excess) for a in re] != [(b.status, b.worst_excess) for b in rm]:
                note = "  DIFFERENT ANSWERS"
            print(f"   {n:>7}  {family:<15} {te:>11.3f}  {tm:>7.3f}{note}")
            if tm < te and family not in crossover:
                crossover[family] = n
    for family in ("weighted voting", "sum threshold"):
        at = crossover.get(family)
        print(f"   {family}: milp faster from {at} parties" if at else f"   {family}: enumeration faster throughout")
    ranged_rows()


if __name__ == "__main__":
    main()
