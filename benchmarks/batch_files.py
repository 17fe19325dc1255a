"""Benchmark: ``mergecheck batch FOLDER --json FILE`` end to end, as a user runs it, on generated site files.

Run: ``python benchmarks/batch_files.py [--sites N] [--workers N]`` (prints figures; not a test). Writes N
invented site files (those of ``benchmarks/batch.py``) to a temporary folder, then times the real command
(start, reading and validating the files, the assessment on every core, the JSON and CSV files and the
terminal view) and, for comparison, the engine alone on the same sites already loaded.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import yaml

sys.path.insert(0, str(Path(__file__).resolve().parent))
from batch import generated

from mergecheck.batch import assess_all


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--sites", type=int, default=2000)
    parser.add_argument("--workers", type=int, default=None)
    args = parser.parse_args()
    entries = generated(args.sites)
    with tempfile.TemporaryDirectory(prefix="mergecheck-batch-") as scratch:
        folder = Path(scratch) / "sites"
        folder.mkdir()
        for i, entry in enumerate(entries):
            (folder / f"site{i:06d}.yaml").write_text(yaml.safe_dump(entry.load()))
        command = [sys.executable, "-m", "mergecheck", "batch", str(folder), "--json", f"{scratch}/out.json",
                   "--csv", f"{scratch}/out.csv"] + (["--workers", str(args.workers)] if args.workers else [])  # fmt: skip
        start = time.perf_counter()
        done = subprocess.run(command, capture_output=True, text=True, check=False)
        wall = time.perf_counter() - start
        assert done.returncode in (0, 1), done.stderr
        size = Path(f"{scratch}/out.json").stat().st_size
    start = time.perf_counter()
    assess_all(entries, workers=args.workers)
    engine = time.perf_counter() - start
    print(f"end to end: {args.sites} site files in {wall:.2f} s, {args.sites / wall:.0f} sites per second"
          f" (JSON {size / 1e6:.0f} MB)")  # fmt: skip
    print(f"engine alone (sites already loaded): {engine:.2f} s, {args.sites / engine:.0f} sites per second")
    print(f"end to end / engine: {wall / engine:.2f}")


if __name__ == "__main__":
    main()
