"""The long fuzz run: thousands of generated hostile inputs, counts per outcome (see tests/fuzz_cases.py).

    python benchmarks/fuzz_long.py                 # about 5,200 cases
    python benchmarks/fuzz_long.py --scale 0.1     # a quick look
    python benchmarks/fuzz_long.py --report out.json   # also keep every case that was not ok/refused

Outcomes: ok (read and equal to the truth of the clean rows), refused (one-line error), traceback, hang
(over 30 s of CPU time or 300 s of wall time; "max cpu" is the longest case), wrong (a silently wrong
reading), damaged (an input changed or an output left after a refusal); then the count of each exit code.
Run it with ``nice``: it uses one core.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

os.environ.setdefault("MPLBACKEND", "Agg")
ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT), str(ROOT / "tests")]

from fuzz_cases import FAMILIES, OUTCOMES, run_case  # noqa: E402
from hypothesis import HealthCheck, Phase, given, settings  # noqa: E402

#: cases per family at --scale 1 (5,200 in all)
CASES = {"delimited": 1500, "garbage": 1000, "touchstone": 1500, "expression": 600, "options": 600}


def run_family(family: str, count: int, problems: list[dict], codes: Counter) -> tuple[Counter, float, float]:
    counts: Counter = Counter()
    slowest = 0.0
    start = time.perf_counter()

    @settings(max_examples=count, deadline=None, database=None, phases=[Phase.generate],
              suppress_health_check=list(HealthCheck))
    @given(case=FAMILIES[family]())
    def one(case):
        nonlocal slowest
        with tempfile.TemporaryDirectory() as folder:
            outcome = run_case(case, Path(folder))
        counts[outcome.label] += 1
        codes[outcome.exit_code] += 1
        slowest = max(slowest, outcome.cpu_seconds)
        if outcome.label not in ("ok", "refused"):
            problems.append({"family": family, "outcome": outcome.label, "detail": outcome.detail,
                             "argv": case.argv[:8], "note": case.note,
                             "files": {k: v[:400].decode("latin-1") for k, v in case.files.items()}})

    one()
    return counts, slowest, time.perf_counter() - start


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--scale", type=float, default=1.0, help="fraction of the default case counts")
    parser.add_argument("--report", help="JSON file for the cases that were neither ok nor refused")
    args = parser.parse_args()
    problems: list[dict] = []
    total: Counter = Counter()
    codes: Counter = Counter()
    print(f"{'family':<11} {'cases':>6} " + " ".join(f"{o:>9}" for o in OUTCOMES) + f" {'max cpu':>8} "
          f"{'time':>7}")
    for family, count in CASES.items():
        n = max(1, round(count * args.scale))
        counts, slowest, seconds = run_family(family, n, problems, codes)
        total += counts
        print(f"{family:<11} {sum(counts.values()):>6} " + " ".join(f"{counts[o]:>9}" for o in OUTCOMES)
              + f" {slowest:>7.1f}s {seconds:>6.0f}s", flush=True)
    print(f"{'all':<11} {sum(total.values()):>6} " + " ".join(f"{total[o]:>9}" for o in OUTCOMES))
    print("exit codes: " + ", ".join(f"{'none' if c is None else c}: {n}"
                                     for c, n in sorted(codes.items(), key=lambda item: (item[0] is None,
                                                                                        item[0] or 0))))
    if args.report:
        Path(args.report).write_text(json.dumps(problems, indent=1) + "\n")
    for problem in problems[:20]:
        print(f"  {problem['family']} {problem['outcome']}: {problem['detail'][:160]} | {problem['note']}")
    return 0 if not problems else 1


if __name__ == "__main__":
    sys.exit(main())
