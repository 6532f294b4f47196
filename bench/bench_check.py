"""Benchmark: a full `check` of agreements with 16, 20 and 24 parties.

Prints, per size: seconds end to end (parse, resolve, payout, sweep over every
coalition, exact re-checks), coalitions per second, peak memory (RSS high
-water mark of a fresh child process), and the ratio against a plain-Python
loop over coalitions with Fractions on the same game, in the same process,
sampled and extrapolated. Goals on a 2-core machine: 20 parties < 1 s,
24 parties < 15 s and < 1.5 GiB, at least 50x the plain loop.

    python bench/bench_check.py            # 16 20 24
    python bench/bench_check.py 12 16      # other sizes
    python bench/bench_check.py top        # --top 1000 at 21 parties, integer program vs enumeration
"""

from __future__ import annotations

import json
import random
import resource
import subprocess
import sys
import time
from itertools import islice

SAMPLE = 20_000  # coalitions timed in the plain loop


def agreement(n: int, seed: int = 7) -> str:
    rng = random.Random(seed)
    lines = [f'agreement "bench {n}"', "shares cost in kEUR"]
    for i in range(n):
        lines.append(f"party p{i}: depth {rng.randint(20, 140) / 10}, calls {rng.randint(10, 900)}")
    lines.append("param threshold = 2000")
    lines.append("worth S = 40 * max(depth in S) + 0.05 * sum(calls in S)"
                 " + (if sum(calls in S) > threshold then 25 else 0)")
    lines.append("payout rest by proportional to calls")
    lines.append("require stable within 15")
    lines.append("require stable within 2%")
    return "\n".join(lines) + "\n"


def plain_loop(text: str, count: int) -> float:
    """Seconds per coalition for a straightforward exact loop (the baseline)."""
    from pactlang.load import load_text
    from pactlang.worths import Worths, excess, paid_by, payout

    model = load_text(text).model
    worths = Worths(model)
    x = payout(worths)
    start = time.perf_counter()
    worst = None
    for mask in islice(range(1, model.full), count):
        # the plain approach: evaluate the formula per coalition in Fractions
        e = excess(model, worths.exact(mask), paid_by(x, mask))
        worst = e if worst is None or e > worst else worst
    return (time.perf_counter() - start) / count


def timed_check(text: str, search: str) -> dict:
    from pactlang.check import CheckOptions, check_model
    from pactlang.load import load_text

    start = time.perf_counter()
    results = check_model(load_text(text).model, CheckOptions(search=search))
    seconds = time.perf_counter() - start
    peak_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return {"seconds": seconds, "peak_mib": peak_kib / 1024,
            "statuses": [r.status for r in results], "worst": [str(r.worst_excess) for r in results]}


def main(sizes: list[int]) -> None:
    if sizes and sizes[0] < 0:  # child mode: one measured check in a fresh process
        search = "enumeration" if sizes[0] == -1 else "auto"
        print(json.dumps(timed_check(agreement(sizes[1]), search)))
        return
    print("enumeration forced (every coalition examined); 'auto' is what `check` chooses")
    print(f"{'parties':>7} {'check s':>8} {'coalitions/s':>13} {'peak MiB':>9} {'plain s (extrap.)':>18} "
          f"{'ratio':>7} {'auto s':>7}")
    for n in sizes:
        out = subprocess.run([sys.executable, __file__, "-1", str(n)], capture_output=True, text=True, check=True)
        m = json.loads(out.stdout)
        auto = json.loads(subprocess.run([sys.executable, __file__, "-2", str(n)], capture_output=True,
                                         text=True, check=True).stdout)
        assert auto["statuses"] == m["statuses"] and auto["worst"] == m["worst"], "methods disagree"
        coalitions = 2**n - 2
        per = plain_loop(agreement(n), SAMPLE)
        plain = per * coalitions
        print(f"{n:>7} {m['seconds']:>8.2f} {coalitions / m['seconds']:>13.3g} {m['peak_mib']:>9.0f} "
              f"{plain:>18.1f} {plain / m['seconds']:>6.0f}x {auto['seconds']:>7.2f}   {m['statuses']}")


def long_list(n: int = 21, top: int = 1000) -> None:
    """`--top 1000` on a 21-party agreement through the integer program: the
    violators are collected a chunk of coalitions per solve (it took about 10
    minutes when they came one solve each). Baseline: enumeration of the same
    agreement with the same `--top`, in the same process."""
    from pactlang.check import CheckOptions, Checker
    from pactlang.load import load_text

    model = load_text(agreement(n)).model
    runs = {}
    for search in ("enumeration", "milp"):
        start = time.perf_counter()
        results = Checker(model, CheckOptions(top=top, search=search)).run()
        runs[search] = (time.perf_counter() - start, results)
    (enum_s, by_enum), (milp_s, by_milp) = runs["enumeration"], runs["milp"]
    same = all([c.coalition for c in a.counterexamples] == [c.coalition for c in b.counterexamples]
               for a, b in zip(by_enum, by_milp))
    listed = [len(r.counterexamples) for r in by_milp]
    print(f"--top {top} at {n} parties: integer program {milp_s:.2f} s, enumeration {enum_s:.2f} s "
          f"(ratio {milp_s / enum_s:.2f}), counterexamples listed {listed}, same lists: {same}")


if __name__ == "__main__":
    if sys.argv[1:] == ["top"]:
        long_list()
    else:
        main([int(a) for a in sys.argv[1:]] or [16, 20, 24])
