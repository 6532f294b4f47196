"""Benchmark: start-up of the command line, in CPU seconds of a fresh process.

Prints, for `pactlang --help`, `pactlang --version`, `pactlang check` on a
4-party agreement and `pactlang fmt --check` on it: the median CPU time (user
+ system, children's rusage) of REPEAT fresh processes, beside the same for
`python -c pass` run in the same loop, and their difference and ratio (the
machine-independent figure). Goals on a 2-core machine: `check` on 4 parties
< 0.3 s, `--help` < 0.15 s. `--imports` adds the ten slowest imports of
each command (`python -X importtime`), cumulative.

    python bench/bench_startup.py            # 5 runs each
    python bench/bench_startup.py 9 --imports
    PACTLANG_TREE=/other/checkout python bench/bench_startup.py   # another tree, to compare
"""

from __future__ import annotations

import os
import resource
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
FOUR = """agreement "Four berths"
shares cost in kEUR
party pier_one:   depth 12.5, visits 340
party pier_two:   depth 11.0, visits 210
party ferry_line: depth  6.5, visits 900
party yacht_club: depth  3.0, visits  60
worth S = 40 * max(depth in S) + 0.05 * sum(visits in S)
payout rest by proportional to depth
require stable within 15
"""
GOALS = {"--help": 0.15, "check 4 parties": 0.3}


def cpu_of(argv: list[str], env: dict) -> float:
    """CPU seconds (user + system) one child process used."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    subprocess.run(argv, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env, check=False)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def slowest_imports(argv: list[str], env: dict, count: int = 10) -> list[str]:
    out = subprocess.run([sys.executable, "-X", "importtime", *argv[1:]], capture_output=True, text=True, env=env)
    rows = []
    for line in out.stderr.splitlines():
        if line.startswith("import time:") and "|" in line:
            _, cumulative, name = line.split("|")
            try:
                rows.append((int(cumulative), name.rstrip()))
            except ValueError:
                continue
    rows.sort(reverse=True)
    return [f"      {us / 1e6:6.3f} s  {name.strip()}" for us, name in rows[:count]]


def main() -> None:
    args = [a for a in sys.argv[1:] if not a.startswith("--")]
    repeat = int(args[0]) if args else 5
    env = dict(os.environ, PYTHONPATH=os.environ.get("PACTLANG_TREE", str(ROOT)), NO_COLOR="1")
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "four.deal"
        path.write_text(FOUR)
        cases = {
            "--help": [sys.executable, "-m", "pactlang", "--help"],
            "--version": [sys.executable, "-m", "pactlang", "--version"],
            "check 4 parties": [sys.executable, "-m", "pactlang", "check", str(path)],
            "fmt --check": [sys.executable, "-m", "pactlang", "fmt", "--check", str(path)],
        }
        baseline_argv = [sys.executable, "-c", "pass"]
        times: dict[str, list[float]] = {name: [] for name in cases}
        base: list[float] = []
        for _ in range(repeat):  # interleaved, so a busy moment hits every case alike
            base.append(cpu_of(baseline_argv, env))
            for name, argv in cases.items():
                times[name].append(cpu_of(argv, env))
        b = statistics.median(base)
        print(f"start-up, CPU seconds, median of {repeat} fresh processes")
        print(f"  {'python -c pass (baseline)':28} {b:7.3f} s")
        for name, argv in cases.items():
            t = statistics.median(times[name])
            goal = GOALS.get(name)
            verdict = "" if goal is None else f"  goal < {goal} s: {'met' if t < goal else 'not met'}"
            print(f"  {'pactlang ' + name:28} {t:7.3f} s  = baseline + {t - b:6.3f} s, "
                  f"{t / b if b else float('inf'):5.1f}x baseline{verdict}")
            if "--imports" in sys.argv:
                print("\n".join(slowest_imports(argv, env)))


if __name__ == "__main__":
    main()
