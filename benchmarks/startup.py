"""Benchmark: a single check as a user feels it, against the floor of starting Python with numpy and scipy.

Run: ``python benchmarks/startup.py [--repeat N]`` (prints figures; not a test). Both commands run as
subprocesses, side by side in one run, alternating, and the medians are compared: the target is a check
within 1.3 times the floor (``python -c "import numpy, scipy.integrate"``).
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import subprocess
import sys
import time
from pathlib import Path

SITE = Path(__file__).resolve().parent.parent / "examples" / "willowmere-level.yaml"


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeat", type=int, default=9)
    args = parser.parse_args()
    entry = shutil.which("mergecheck")
    check = [entry] if entry else [sys.executable, "-m", "mergecheck"]
    commands = {
        "floor (import numpy, scipy.integrate)": [sys.executable, "-c", "import numpy, scipy.integrate"],
        "mergecheck check --json": [*check, "check", str(SITE), "--json"],
        "import mergecheck.cli only": [sys.executable, "-c", "import mergecheck.cli"],
    }
    times: dict[str, list[float]] = {name: [] for name in commands}
    for _ in range(args.repeat):
        for name, command in commands.items():
            start = time.perf_counter()
            subprocess.run(command, capture_output=True, check=False)
            times[name].append(time.perf_counter() - start)
    medians = {name: statistics.median(values) for name, values in times.items()}
    floor = medians["floor (import numpy, scipy.integrate)"]
    for name, value in medians.items():
        print(f"{name:<40} {value:6.3f} s  ({value / floor:.2f} x the floor)")


if __name__ == "__main__":
    main()
