"""Cold start: the first find_rays call in a fresh Python process.

    python benchmarks/cold_start.py [--runs 3]

Runs ``python -c "import firnray; firnray.find_rays(...)"`` in fresh
processes (the first run may compile and fill numba's cache; later runs load
it) and, as the baseline in the same run, ``python -c "import numpy, scipy"``.
Prints each wall time and the difference.
"""

import argparse
import subprocess
import sys
import time

SNIPPET = ("import firnray; firnray.find_rays(firnray.load_profile(), "
           "(0.0, -600.0), (1500.0, -100.0))")
BASELINE = "import numpy, scipy, yaml"


def wall(code):
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], check=True)
    return time.perf_counter() - t0


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    base = min(wall(BASELINE) for _ in range(args.runs))
    times = [wall(SNIPPET) for _ in range(args.runs)]
    print(f"first run (may compile into the numba cache): {times[0]:.2f} s")
    print(f"warm-cache runs: {', '.join(f'{t:.2f}' for t in times[1:])} s")
    print(f"baseline 'import numpy, scipy, yaml': {base:.2f} s; firnray cold start adds "
          f"{min(times[1:] or times) - base:.2f} s")


if __name__ == "__main__":
    main()
