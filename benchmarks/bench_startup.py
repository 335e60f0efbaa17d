"""Start-up of ``kinetics solve`` against a plain numpy + scipy script doing the same job.

Run:  .venv/bin/python benchmarks/bench_startup.py [--runs 7]

The plain script (written to a temporary folder) integrates the bundled example
``networks/consecutive_intermediate.scheme`` (AL -> EN -> KE -> HV, 201 points
to 2 h) with scipy's ``solve_ivp`` and prints every eighth row.  Both commands
run alternately in fresh interpreters, warm (the compiled kernels are on disk
after a first run that is not counted).  Printed: the best and the median wall
time of each, their CPU time (user + system, steadier on a shared machine) and
the ratios kinetics / plain script (goal: at most 2.5).
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "networks" / "consecutive_intermediate.scheme"

#: The same job without kinetics: constants of the example file converted by hand
#: (0.12 1/min, 0.045 1/min, 2.0e-5 1/s), start AL = 0.80 mol/L.
PLAIN_SCRIPT = """\
import numpy as np
from scipy.integrate import solve_ivp

k1, k2, k3 = 0.12 / 60, 0.045 / 60, 2.0e-5
K = np.array([[-k1, 0, 0, 0], [k1, -k2, 0, 0], [0, k2, -k3, 0], [0, 0, k3, 0]])
t = np.linspace(0.0, 7200.0, 201)
sol = solve_ivp(lambda _, c: K @ c, (0.0, t[-1]), [0.8, 0, 0, 0], t_eval=t,
                method="LSODA", jac=lambda _, c: K, rtol=1e-10, atol=1e-14)
print("time [h]", "AL", "EN", "KE", "HV [mol/L]")
for i in range(0, len(t), 8):
    print(f"{t[i] / 3600:g}", *(f"{v:.6g}" for v in sol.y[:, i]))
"""


#: the children run as on a user's machine: Python writes the bytecode of the modules it
#: imports (an environment with PYTHONDONTWRITEBYTECODE, as some development shells set,
#: would compile every module of the package from source on every run: 0.11 s here,
#: while numpy and scipy keep the bytecode their installation wrote)
ENVIRONMENT = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def timed(command: list[str]) -> tuple[float, float]:
    """Wall time and CPU time (user + system of the child) of one run [s]."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    subprocess.run(
        command,
        check=True,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        env=ENVIRONMENT,
    )
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7, help="runs of each command (default 7)")
    args = parser.parse_args(argv)

    with tempfile.TemporaryDirectory() as folder:
        plain = Path(folder) / "plain_solve_ivp.py"
        plain.write_text(PLAIN_SCRIPT, encoding="utf-8")
        commands = {
            "python -c pass": [sys.executable, "-c", "pass"],
            "plain script": [sys.executable, str(plain)],
            "kinetics solve": [
                sys.executable,
                "-m",
                "kinetics",
                "solve",
                str(EXAMPLE),
                "--until",
                "2h",
                "--no-caution",
            ],
        }
        for command in commands.values():  # warm: compiled kernels and file caches
            timed(command)
        times: dict[str, list[tuple[float, float]]] = {name: [] for name in commands}
        for _ in range(args.runs):
            for name, command in commands.items():
                times[name].append(timed(command))

    print(f"{args.runs} runs each, alternating; load average {os.getloadavg()[0]:.1f}")
    print(f"{'command':16} {'best wall':>10} {'median wall':>12} {'median CPU':>11}  [s]")
    summary = {}
    for name, runs in times.items():
        walls, cpus = [w for w, _ in runs], [c for _, c in runs]
        summary[name] = (min(walls), statistics.median(walls), statistics.median(cpus))
        print(
            f"{name:16} {min(walls):10.3f} {statistics.median(walls):12.3f} "
            f"{statistics.median(cpus):11.3f}"
        )
    k, p = summary["kinetics solve"], summary["plain script"]
    ratios = [k[i] / p[i] for i in range(3)]
    verdict = "OK" if ratios[1] <= 2.5 else "ABOVE THE GOAL OF 2.5"
    print(
        f"ratio kinetics / plain script: best wall {ratios[0]:.2f}, median wall {ratios[1]:.2f}, "
        f"median CPU {ratios[2]:.2f} -> {verdict}"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
