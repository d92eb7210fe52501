"""Run time and peak memory against the number of levels (prints figures; asserts nothing).

    python benchmarks/levels.py [--repeat N] [--outputs]

An invented project (the metric demo's helix, storeys of 3.0 m, one turn each) with 10,
50, 100 and 200 levels, 200 being the most a project may have.  For each: the median
wall time and the peak memory of `helix check` in a fresh process (the whole check,
the vehicle rolled along every wheel path included) and, with ``--outputs``, of
`helix check -o` (figures, report, CSV, DXF).  The "marginal" columns give the extra
time per extra level from one row to the next: about constant means the work grows
linearly.  Target: the marginal time from 100 to 200 levels within 1.5x of that from
50 to 100.
"""
from __future__ import annotations

import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parents[1]
LEVELS = (10, 50, 100, 200)


def project(n: int) -> dict:
    data = yaml.safe_load((ROOT / "configs" / "demo-metric.yaml").read_text(encoding="utf-8"))
    data["project"] = {"name": f"Benchmark car park, {n} levels (invented)"}
    data["levels"] = [{"name": "L0", "level": "0 m"}] + [{"name": f"L{i}", "height": "3.0 m"} for i in range(1, n)]
    return data


def run(cmd: list[str], repeat: int) -> tuple[float, float]:
    """Median wall time (s) and peak resident memory (MB) of ``cmd`` in a fresh process."""
    times, peak = [], 0.0
    for _ in range(repeat):
        t0 = time.perf_counter()
        proc = subprocess.Popen(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        _, status, usage = os.wait4(proc.pid, 0)
        times.append(time.perf_counter() - t0)
        err = proc.stderr.read().decode()
        proc.stderr.close()
        proc.returncode = os.waitstatus_to_exitcode(status)
        if proc.returncode not in (0, 1):
            raise SystemExit(f"failed: {' '.join(cmd)}\n{err}")
        peak = max(peak, usage.ru_maxrss / 1024)  # kB on Linux
    return statistics.median(times), peak


def main() -> None:
    repeat = int(sys.argv[sys.argv.index("--repeat") + 1]) if "--repeat" in sys.argv else 3
    with_outputs = "--outputs" in sys.argv
    py = sys.executable
    print(f"helix check on an invented project, median of {repeat}; 'marginal' is the extra time per extra "
          "level since the row above")
    head = f"{'levels':>6s} {'check s':>8s} {'MB':>5s} {'marginal ms':>12s}"
    if with_outputs:
        head += f" {'check -o s':>11s} {'MB':>5s} {'marginal ms':>12s}"
    print(head)
    rows: list[tuple[int, float, float]] = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in LEVELS:
            path = Path(tmp) / f"levels-{n}.yaml"
            path.write_text(yaml.safe_dump(project(n)), encoding="utf-8")
            t, mb = run([py, "-m", "helix", "check", str(path)], repeat)
            t_o = mb_o = math.nan
            if with_outputs:
                t_o, mb_o = run([py, "-m", "helix", "check", str(path), "-o", str(Path(tmp) / f"out-{n}")], repeat)
            prev = rows[-1] if rows else None
            marg = lambda a, b: f"{1000 * (a - b) / (n - prev[0]):12.1f}" if prev else f"{'-':>12s}"
            line = f"{n:6d} {t:8.2f} {mb:5.0f} {marg(t, prev[1]) if prev else marg(0, 0)}"
            if with_outputs:
                line += f" {t_o:11.2f} {mb_o:5.0f} {marg(t_o, prev[2]) if prev else marg(0, 0)}"
            rows.append((n, t, t_o))
            print(line, flush=True)
    (n1, a1, _), (n2, a2, _), (n3, a3, _) = rows[1], rows[2], rows[3]
    ratio = ((a3 - a2) / (n3 - n2)) / ((a2 - a1) / (n2 - n1))
    print(f"marginal time per level, 100 to 200 levels / 50 to 100 levels: {ratio:.2f} "
          "(linear growth: about 1; target: within 1.5)")


if __name__ == "__main__":
    main()
