"""Sizes -> CPU seconds and peak memory of the exact solvers, each beside a plain baseline run in the same process.

Usage:
    python bench/bench_solutions.py                  # the full run (several minutes)
    python bench/bench_solutions.py --quick          # small sizes only
    python bench/bench_solutions.py --least-core 20 --nucleolus --shapley 20 --voting 16 18

Every case runs in a child process of its own: first the exact solver, then
the plain baseline in the same process; the row prints both CPU times and
their ratio (exact / plain; below 1 means the exact solver is faster).
"peak MB" is the child's maximum resident set size after the exact solver
(numpy, HiGHS and all), "game MB" the resident size once the game is built.
The baselines: one HiGHS LP holding every coalition as a sparse row (least
core, and `solve` on voting games), the textbook sequence of such LPs in
floats (nucleolus), and a plain-Python loop over (player, coalition) terms
timed on a uniform sample and extrapolated (Shapley). The all-rows LPs are
skipped above `--plain-max` parties (at 22 parties the matrix alone passes
1 GiB). Random games are explicit, by default v(S) = |S| * U{0..99}
(integers); `--model iid` draws v(S) = U{0..99}, `--model glove` is a
balanced glove market (highly degenerate programs). "solve (voting)" runs
the whole `pactlang solve` computation after start-up (parse, worth table, least core with
certificate, Shapley, nucleolus with its exact Kohlberg check, every rule's
worst excess) on an invented council agreement
`worth S = if sum(votes in S) >= Q then 1000 else 0`.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import time
from fractions import Fraction
from math import factorial

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

GOALS = {  # (concept, n): CPU seconds, from the issues
    ("least core", 20): 3.0, ("least core", 22): 20.0,
    ("nucleolus", 14): 10.0, ("nucleolus", 18): 120.0,
    ("shapley", 20): 1.0,
    ("solve (voting)", 20): 5.0, ("solve (voting)", 22): 20.0,
}
PEAK_GOAL_MB = 1024


MODELS = {
    "sized": "v(S) = |S| * U{0..99}",
    "iid": "v(S) = U{0..99}",
    "glove": "glove market: v(S) = 10 * min(left holders, right holders), half of each",
}


def random_game(n: int, seed: int, model: str = "sized"):
    """An explicit game built with numpy, so that large n stays cheap (see MODELS)."""
    from pactlang.game import Game
    from pactlang.solutions.masks import popcounts

    rng = np.random.default_rng(seed)
    sizes = popcounts(n).astype(np.int64)
    if model == "sized":
        nums = rng.integers(0, 100, size=1 << n, dtype=np.int64) * sizes
    elif model == "iid":
        nums = rng.integers(0, 100, size=1 << n, dtype=np.int64)
    else:
        half, masks = n // 2, np.arange(1 << n)
        left = popcounts(half)[masks & ((1 << half) - 1)].astype(np.int64)
        nums = 10 * np.minimum(left, sizes - left)
    nums[0] = 0
    return Game(n, lambda m: Fraction(int(nums[m])), nums.astype(np.float64), (nums, 1),
                tuple(f"p{i}" for i in range(n)))


def voting_agreement(n: int, seed: int) -> str:
    """An invented council of n parties with 1..30 votes each; a coalition with a majority earns 1000."""
    rng = np.random.default_rng(seed)
    votes = rng.integers(1, 31, size=n).tolist()
    quota = sum(votes) // 2 + 1
    lines = [f'agreement "council of {n}"', "shares value"]
    lines += [f"party p{i}: votes {v}" for i, v in enumerate(votes)]
    lines += [f"worth S = if sum(votes in S) >= {quota} then 1000 else 0",
              "payout by proportional to votes", "require stable within 5"]
    return "\n".join(lines) + "\n"


def rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


# -- plain approaches ---------------------------------------------------------
def all_rows_matrix(n: int):
    """Every proper coalition as a sparse row -x(S) - t (CSR), built with numpy."""
    from scipy.sparse import csr_matrix

    from pactlang.solutions.masks import popcounts

    full = (1 << n) - 1
    masks = np.arange(1, full, dtype=np.int64)
    sizes = popcounts(n)[1:full].astype(np.int64) + 1
    indptr = np.concatenate([[0], np.cumsum(sizes)])
    bitmat = ((masks[:, None] >> np.arange(n)) & 1).astype(bool)
    cols = np.empty(int(indptr[-1]), dtype=np.int32)
    rows, members = np.nonzero(bitmat)
    del bitmat
    # members of row r come first, then the t column
    pos = indptr[:-1][rows] + (np.arange(len(rows)) - np.searchsorted(rows, rows))
    cols[pos] = members
    cols[indptr[1:] - 1] = n
    data = -np.ones(len(cols))
    return masks, csr_matrix((data, cols, indptr), shape=(full - 1, n + 1))


def plain_least_core(game) -> str:
    from scipy.optimize import linprog

    n = game.n
    masks, a_ub = all_rows_matrix(n)
    b_ub = -np.asarray(game.floats)[masks]
    res = linprog(np.r_[np.zeros(n), 1.0], A_ub=a_ub, b_ub=b_ub, A_eq=np.r_[np.ones(n), 0.0][None, :],
                  b_eq=[game.floats[-1]], bounds=(None, None), method="highs")
    return f"{res.fun:.6g} (float)"


def plain_nucleolus(game) -> str:
    """The textbook sequence in floats: every free coalition a row, fix rows with positive dual.

    Over imputations (x_i >= v({i})) when there are any, like the exact solver.
    """
    from scipy.optimize import linprog
    from scipy.sparse import csr_matrix

    n, full = game.n, game.full
    masks, a_all = all_rows_matrix(n)
    v = np.asarray(game.floats)
    singles = v[[1 << i for i in range(n)]]
    lower = singles if singles.sum() <= v[full] else np.full(n, -np.inf)
    bounds = [(lo if np.isfinite(lo) else None, None) for lo in lower] + [(None, None)]
    free = np.ones(len(masks), dtype=bool)
    eq_rows, eq_rhs = [np.r_[np.ones(n), 0.0]], [v[full]]
    x = None
    for _ in range(n):
        idx = np.flatnonzero(free)
        res = linprog(np.r_[np.zeros(n), 1.0], A_ub=a_all[idx], b_ub=-v[masks[idx]],
                      A_eq=csr_matrix(np.array(eq_rows)), b_eq=eq_rhs, bounds=bounds, method="highs")
        x, t = res.x[:n], res.x[n]
        tight = idx[np.asarray(res.ineqlin.marginals) < -1e-9]
        for k in tight:
            eq_rows.append(np.r_[((masks[k] >> np.arange(n)) & 1).astype(float), 0.0])
            eq_rhs.append(v[masks[k]] - t)
        for i in np.flatnonzero(np.asarray(res.lower.marginals)[:n] > 1e-9):
            eq_rows.append(np.r_[np.eye(n)[i], 0.0])
            eq_rhs.append(lower[i])
        free[tight] = False
        basis = np.array(eq_rows)[:, :n]
        _, sv, vt = np.linalg.svd(basis)
        rank = int(np.sum(sv > 1e-9))
        if rank == n:
            break
        # coalitions in the span of the fixed ones have a constant excess: drop them
        kern = vt[rank:]
        for start in range(0, len(masks), 1 << 20):
            sl = slice(start, start + (1 << 20))
            bits = ((masks[sl, None] >> np.arange(n)) & 1).astype(float)
            free[sl] &= np.abs(bits @ kern.T).max(axis=1) > 1e-9
    return "[" + ", ".join(f"{v:.6g}" for v in x[:3]) + ", ...] (float)"


def plain_shapley_seconds(game, samples: int = 20000) -> float:
    """A plain-Python loop over (player, coalition) terms, timed on a sample, extrapolated."""
    n = game.n
    rng = np.random.default_rng(1)
    weights = [Fraction(factorial(s) * factorial(n - s - 1), factorial(n)) for s in range(n)]
    players = rng.integers(0, n, size=samples).tolist()
    coalitions = rng.integers(0, 1 << n, size=samples).tolist()
    t0 = time.perf_counter()
    acc = [Fraction(0)] * n
    for i, m in zip(players, coalitions):
        m &= ~(1 << i)
        acc[i] += weights[bin(m).count("1")] * (game.exact(m | 1 << i) - game.exact(m))
    per_term = (time.perf_counter() - t0) / samples
    return per_term * n * (1 << (n - 1))


# -- one case in a child process ------------------------------------------------
def exact_run(concept: str, game, text: str | None) -> str:
    from pactlang.solutions import least_core, nucleolus, shapley

    if concept == "least core":
        lc = least_core(game)
        return f"{lc.value} ({len(lc.certificate)} weights)"
    if concept == "nucleolus":
        x = nucleolus(game)
        return "[" + ", ".join(f"{str(v)} = {float(v):.6g}" if v.denominator > 1 else str(v)
                               for v in x[:3]) + ", ...]"
    if concept == "shapley":
        return f"phi_0 = {float(shapley(game)[0]):.6g}"
    from pactlang.load import load_text
    from pactlang.solve import solve_model

    report = solve_model(load_text(text).model)
    nuc = next(a for a in report.allocations if a.rule == "nucleolus")
    return f"nucleolus p0 = {nuc.payout[0]}, least core {report.least_core_value}"


def run_case(concept: str, n: int, seed: int, model: str, plain: bool) -> dict:
    # Start-up is measured elsewhere: both sides are timed with their modules loaded.
    import scipy.optimize  # noqa: F401  (the baselines' linprog)

    import pactlang.solutions  # noqa: F401
    import pactlang.solve  # noqa: F401

    text = None
    if concept == "solve (voting)":
        from pactlang.load import load_text
        from pactlang.worths import Worths

        text = voting_agreement(n, seed)
        game = Worths(load_text(text).model).game()  # only for the baseline; solve builds its own
    else:
        game = random_game(n, seed, model)
    game_mb = rss_mb()
    t0 = time.process_time()
    result = exact_run(concept, game, text)
    seconds = time.process_time() - t0
    out = {"concept": concept, "n": n, "seconds": seconds, "peak_mb": rss_mb(), "game_mb": game_mb,
           "result": result}
    if plain:
        t0 = time.process_time()
        if concept in ("least core", "solve (voting)"):
            out["plain_result"] = plain_least_core(game)
        elif concept == "nucleolus":
            out["plain_result"] = plain_nucleolus(game)
        else:
            secs = plain_shapley_seconds(game)
        out["plain_seconds"] = secs if concept == "shapley" else time.process_time() - t0
    return out


PLAIN_LABEL = {"least core": "all-rows LP", "solve (voting)": "all-rows LP (least core)",
               "nucleolus": "all-rows LP sequence", "shapley": "Python loop (extrap.)"}


def child(concept: str, n: int, seed: int, model: str, plain: bool, timeout: float) -> dict:
    cmd = [sys.executable, os.path.abspath(__file__), "--case", concept, str(n), str(seed), model, str(int(plain))]
    try:
        out = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
    except subprocess.TimeoutExpired:
        return {"concept": concept, "n": n, "error": f"over {timeout:.0f} s, stopped"}
    if out.returncode != 0:
        last = (out.stderr.strip().splitlines() or ["no output"])[-1]
        return {"concept": concept, "n": n, "error": last[:70]}
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--least-core", type=int, nargs="*", default=None, metavar="N")
    ap.add_argument("--nucleolus", type=int, nargs="*", default=None, metavar="N")
    ap.add_argument("--shapley", type=int, nargs="*", default=None, metavar="N")
    ap.add_argument("--voting", type=int, nargs="*", default=None, metavar="N",
                    help="`solve` on a weighted-voting agreement")
    ap.add_argument("--quick", action="store_true", help="sizes 10 and 14, Shapley 16, voting 12")
    ap.add_argument("--plain-max", type=int, default=20, help="largest n for the all-rows LP baselines")
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--timeout", type=float, default=600.0, help="seconds allowed per case")
    ap.add_argument("--model", choices=sorted(MODELS), default="sized", help="random game family")
    ap.add_argument("--case", nargs=5, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.case:
        concept, n, seed, model, plain = args.case
        print(json.dumps(run_case(concept, int(n), int(seed), model, plain == "1")))
        return

    chosen = {"least core": args.least_core, "nucleolus": args.nucleolus, "shapley": args.shapley,
              "solve (voting)": args.voting}
    defaults = {"least core": [10, 14, 18, 20, 22], "nucleolus": [10, 14, 18, 22], "shapley": [16, 20, 24],
                "solve (voting)": [16, 18, 20, 22]}
    if args.quick:
        defaults = {"least core": [10, 14], "nucleolus": [10, 14], "shapley": [16], "solve (voting)": [12]}
    if all(v is None for v in chosen.values()):
        chosen = defaults
    else:
        chosen = {k: (defaults[k] if v == [] else v or []) for k, v in chosen.items()}

    print(f"pactlang solutions benchmark: explicit games {MODELS[args.model]}, seed {args.seed}")
    print("each case in its own process: exact solver, then the plain baseline in the same process;")
    print("CPU seconds; ratio = exact / plain (below 1: the exact solver is faster)\n")
    print(f"{'concept':<15} {'n':>3} {'exact s':>8} {'peak MB':>8} {'game MB':>8} {'baseline':<25} "
          f"{'plain s':>8} {'ratio':>7}  result")
    for concept, sizes in chosen.items():
        for n in sizes:
            plain = concept == "shapley" or n <= args.plain_max
            r = child(concept, n, args.seed, args.model, plain, args.timeout)
            base = PLAIN_LABEL[concept] if plain else f"(not run above {args.plain_max})"
            if "error" in r:
                print(f"{concept:<15} {n:>3} {'-':>8} {'-':>8} {'-':>8} {base:<25} {'-':>8} {'-':>7}  {r['error']}")
                continue
            mark = ""
            goal = GOALS.get((concept, n))
            if goal is not None:
                ok = r["seconds"] < goal and r["peak_mb"] < PEAK_GOAL_MB
                mark = f"  [goal < {goal:g} s, < 1 GiB: {'met' if ok else 'MISSED'}]"
            ps = r.get("plain_seconds")
            plain_s = f"{ps:>8.2f}" if ps is not None else f"{'-':>8}"
            ratio = f"{r['seconds'] / ps:>6.3g}x" if ps else f"{'-':>7}"
            print(f"{concept:<15} {n:>3} {r['seconds']:>8.2f} {r['peak_mb']:>8.0f} {r['game_mb']:>8.0f} "
                  f"{base:<25} {plain_s} {ratio}  {r['result']}{mark}", flush=True)


if __name__ == "__main__":
    main()
