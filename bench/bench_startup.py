"""Start-up time of the light commands (``force``, ``profiles``).

Runs each command as a fresh process several times and prints the median wall
time. Target (issue 2): well under half a second. Run: ``python bench/bench_startup.py``.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time

COMMANDS = {
    "force": [sys.executable, "-m", "trackplan", "force", "--rail", "60E1", "--neutral", "27 degC",
              "--at", "60 degC", "--at", "-20 degC", "--json"],
    "profiles": [sys.executable, "-m", "trackplan", "profiles", "--json"],
    "python -c pass (interpreter alone)": [sys.executable, "-c", "pass"],
}


def main(repeats: int = 7) -> None:
    for name, cmd in COMMANDS.items():
        times = []
        for _ in range(repeats):
            t0 = time.perf_counter()
            subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL)
            times.append(time.perf_counter() - t0)
        print(f"{name:40s} median {statistics.median(times) * 1e3:6.0f} ms  (min {min(times) * 1e3:.0f} ms)")
    out = subprocess.run([sys.executable, "-X", "importtime", "-m", "trackplan", "force", "--rail", "60E1",
                          "--neutral", "27 degC", "--at", "60 degC", "--json"], capture_output=True, text=True)
    heavy = [m for m in ("matplotlib", "pvlib", "scipy", "pandas", "pint") if f" {m}\n" in out.stderr or f" {m}." in out.stderr]
    print("heavy modules imported by `force`:", ", ".join(heavy) or "none")


if __name__ == "__main__":
    main()
