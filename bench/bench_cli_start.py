"""Start-up time of the command line's static commands against building the in-process service.

`cohop profiles`, `samples` and `--version` need no solver stack; before the lazy imports, `profiles`
built the whole app (flask, ortools, scipy...). The baseline, measured in the same run, is a process that
builds that app and lists the profiles through it (what `profiles` used to do). Prints medians of
interleaved runs and the ratio of each command to the baseline.

    python bench/bench_cli_start.py [--repeat 5]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time

import _common  # noqa: F401  (sets sys.path)
from _common import machine

BASELINE = ("from cohop.api import create_app\n"
            "create_app().test_client().get('/v1/profiles')")
COMMANDS = {
    "baseline (app built)": [sys.executable, "-c", BASELINE],
    "cohop profiles": [sys.executable, "-m", "cohop.cli", "profiles"],
    "cohop samples": [sys.executable, "-m", "cohop.cli", "samples"],
    "cohop --version": [sys.executable, "-m", "cohop.cli", "--version"],
}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args()
    times: dict[str, list[float]] = {name: [] for name in COMMANDS}
    for _ in range(args.repeat):
        for name, argv in COMMANDS.items():  # interleaved, so load on the machine hits all alike
            t = time.perf_counter()
            subprocess.run(argv, capture_output=True, check=True)
            times[name].append(time.perf_counter() - t)
    print(f"command-line start-up ({machine()}; median of {args.repeat} interleaved runs)")
    base = statistics.median(times["baseline (app built)"])
    for name, values in times.items():
        median = statistics.median(values)
        print(f"  {name:22s} {median:6.2f} s  ({median / base:.2f} x baseline)")


if __name__ == "__main__":
    main()
