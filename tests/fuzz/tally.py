"""Count the broken promises a long fuzz run recorded (``PQCALC_FUZZ_TALLY``).

    python -m tests.fuzz.tally fuzz.jsonl
"""

from __future__ import annotations

import collections
import json
import sys

from .harness import VIOLATIONS


def main(path: str) -> int:
    runs: collections.Counter = collections.Counter()
    exits: dict[str, collections.Counter] = collections.defaultdict(collections.Counter)
    try:
        with open(path + ".count", encoding="utf-8") as fh:
            for line in fh:
                if line.strip():
                    reader, code = (line.split() + ["?"])[:2]
                    runs[reader] += 1
                    exits[reader][code] += 1
    except FileNotFoundError:
        pass
    bad: dict[str, collections.Counter] = collections.defaultdict(collections.Counter)
    try:
        with open(path, encoding="utf-8") as fh:
            for line in fh:
                r = json.loads(line)
                for v in r["violations"]:
                    bad[r["reader"]][v] += 1
    except FileNotFoundError:
        pass
    print(f"{'reader':<14} {'cases':>7} " + " ".join(f"{v:>17}" for v in VIOLATIONS))
    for reader in sorted(set(runs) | set(bad)):
        print(f"{reader:<14} {runs[reader]:>7} "
              + " ".join(f"{bad[reader][v]:>17}" for v in VIOLATIONS))
    print("exit codes: " + "; ".join(
        f"{r} " + ", ".join(f"{c}: {n}" for c, n in sorted(exits[r].items()))
        for r in sorted(exits)))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
