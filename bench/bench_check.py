"""Benchmark: a full `check` of agreements with 16, 20 and 24 parties.

Prints, per size: seconds end to end (parse, resolve, payout, sweep over every
coalition, exact re-checks), coalitions per second, peak memory (RSS high
-water mark of a fresh child process), and the ratio against a plain-Python
loop over coalitions with Fractions on the same game, in the same process,
timed on coalitions drawn uniformly and extrapolated. A second table sets
the exact enumeration against a plain float numpy sweep of the same formula. Goals on a 2-core machine: 20 parties < 1 s,
24 parties < 15 s and < 1.5 GiB, at least 50x the plain loop.

    python bench/bench_check.py            # 16 20 24
    python bench/bench_check.py 12 16      # other sizes
"""

from __future__ import annotations

import json
import random
import resource
import subprocess
import sys
import time

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
    """Seconds per coalition for a straightforward exact loop (the baseline).

    The coalitions are drawn uniformly from all proper ones: the first masks in
    order all lie inside the first parties, whose sums are small and cheap,
    which made the extrapolation flatter the checker.
    """
    from pactlang.load import load_text
    from pactlang.worths import Worths, excess, paid_by, payout

    model = load_text(text).model
    worths = Worths(model)
    x = payout(worths)
    rng = random.Random(11)
    masks = [rng.randrange(1, model.full) for _ in range(count)]
    start = time.perf_counter()
    worst = None
    for mask in masks:
        # the plain approach: evaluate the formula per coalition in Fractions
        e = excess(model, worths.exact(mask), paid_by(x, mask))
        worst = e if worst is None or e > worst else worst
    return (time.perf_counter() - start) / count


def plain_float_sweep(text: str) -> tuple[float, float]:
    """(CPU seconds, worst excess) of a plain float numpy sweep of the bench formula over every
    proper coalition, in chunks of 2**20 masks like the checker: no error bounds, no proof."""
    import numpy as np

    from pactlang.load import load_text
    from pactlang.worths import Worths, payout

    model = load_text(text).model
    n = model.n
    depth = [float(v) for v in model.attribute_vector("depth")]
    calls = [float(v) for v in model.attribute_vector("calls")]
    x = [float(v) for v in payout(Worths(model))]
    threshold = float(model.params["threshold"])
    start = time.process_time()
    low = min(n, 20)

    def table(values, op, empty):
        out = np.full(1, empty)
        for v in values[:low]:
            out = np.concatenate([out, op(out, v)])
        return out

    sum_calls, sum_x = table(calls, np.add, 0.0), table(x, np.add, 0.0)
    max_depth = table(depth, np.maximum, -np.inf)
    worst = -np.inf
    for high in range(1 << (n - low)):
        members = [low + j for j in range(n - low) if high >> j & 1]
        sc = sum_calls + sum(calls[i] for i in members)
        md = np.maximum(max_depth, max((depth[i] for i in members), default=-np.inf))
        cost = 40 * md + 0.05 * sc + np.where(sc > threshold, 25.0, 0.0)
        e = (sum_x + sum(x[i] for i in members)) - cost  # cost agreement: e(S) = x(S) - c(S)
        if high == 0:
            e[0] = -np.inf
        if high == (1 << (n - low)) - 1:
            e[-1] = -np.inf
        worst = max(worst, float(e.max()))
    return time.process_time() - start, worst


def sweep_versus_float(n: int) -> dict:
    """Exact enumeration (`check`, every coalition) and the plain float sweep, one process, CPU seconds."""
    import numpy  # noqa: F401
    import pactlang.check  # noqa: F401  (start-up is not what this row measures)

    text = agreement(n)
    plain_s, plain_worst = plain_float_sweep(text)
    exact = timed_check(text, "enumeration", clock=time.process_time)
    return {"exact": exact["seconds"], "plain": plain_s, "plain_worst": plain_worst, "worst": exact["worst"]}


def timed_check(text: str, search: str, clock=time.perf_counter) -> dict:
    from pactlang.check import CheckOptions, check_model
    from pactlang.load import load_text

    start = clock()
    results = check_model(load_text(text).model, CheckOptions(search=search))
    seconds = clock() - start
    peak_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return {"seconds": seconds, "peak_mib": peak_kib / 1024,
            "statuses": [r.status for r in results], "worst": [str(r.worst_excess) for r in results]}


def main(sizes: list[int]) -> None:
    if sizes and sizes[0] == -3:  # child mode: exact enumeration against the float sweep
        print(json.dumps(sweep_versus_float(sizes[1])))
        return
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
    print("\nexact enumeration (`check`, parse included) against a plain float numpy sweep of the same")
    print("formula (no error bounds, no proof), one fresh process per size, CPU seconds; goal: below 3x")
    print(f"{'parties':>7} {'exact s':>8} {'float s':>8} {'ratio':>7}")
    for n in sizes:
        out = subprocess.run([sys.executable, __file__, "-3", str(n)], capture_output=True, text=True, check=True)
        r = json.loads(out.stdout)
        print(f"{n:>7} {r['exact']:>8.2f} {r['plain']:>8.2f} {r['exact'] / r['plain']:>6.1f}x   "
              f"worst excess {r['worst'][0]} (float {r['plain_worst']:.6g})")


if __name__ == "__main__":
    main([int(a) for a in sys.argv[1:]] or [16, 20, 24])
