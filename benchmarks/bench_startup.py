"""Start-up time of ``qcthermo --help`` and what it imports.

Times the console script (best of several runs, each a fresh process) against a bare interpreter
start in the same script, then runs ``python -X importtime`` on the same call and prints which heavy
libraries were imported (there should be none) and the slowest imports. Target: < 0.3 s.
Run: ``.venv/bin/python benchmarks/bench_startup.py``.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

HEAVY = ("numpy", "scipy", "pandas", "matplotlib", "cclib", "ase", "rich", "openpyxl", "cantera")
HELP_CODE = "import sys; from qcthermo.cli import main\ntry:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
RUNS = 7


def best_of(command: list[str], runs: int = RUNS) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
        times.append(time.perf_counter() - start)
    return min(times)


def import_times() -> list[tuple[int, str]]:
    """(cumulative microseconds, module) of every import made by ``qcthermo --help``."""
    err = subprocess.run([sys.executable, "-X", "importtime", "-c", HELP_CODE], capture_output=True, text=True,
                         check=True).stderr
    out = []
    for line in err.splitlines():
        if not line.startswith("import time:") or "cumulative" in line:
            continue
        _, cumulative, name = (part.strip() for part in line.split(":", 1)[1].split("|"))
        out.append((int(cumulative), name))
    return out


def main() -> int:
    script = Path(sys.executable).parent / "qcthermo"
    command = [str(script), "--help"] if script.exists() else [sys.executable, "-m", "qcthermo", "--help"]
    bare = best_of([sys.executable, "-c", "pass"])
    helped = best_of(command)
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores; best of {RUNS} runs")
    print(f"  python -c pass     {bare:.3f} s")
    print(f"  qcthermo --help    {helped:.3f} s   (target < 0.3 s; {helped - bare:.3f} s above a bare interpreter)")
    imports = import_times()
    top_level = {name.split(".")[0] for _, name in imports}
    heavy = [m for m in HEAVY if m in top_level]
    print(f"  heavy libraries imported: {', '.join(heavy) if heavy else 'none'}")
    print("  slowest imports (cumulative):")
    for micros, name in sorted(imports, reverse=True)[:8]:
        print(f"    {micros / 1000:7.1f} ms  {name.strip()}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
