"""First use after installation: where the compilation of the numba kernels goes.

Run:  .venv/bin/python benchmarks/bench_first_use.py [--commands solve,report,sweep]
                                                      [--repeat 3]

Each command runs twice in a fresh interpreter with its own empty numba cache
(``NUMBA_CACHE_DIR`` in a temporary folder, so the package's own cache is left
alone): cold, as on the first use after installation, then warm.  Printed per
command: CPU time (user + system) and wall time of both runs, their ratio, and
for the cold run the CPU time of each kernel called from Python (its compilation
and that of every kernel it calls for the first time) and each kernel's own
share with the number of signatures compiled.  CPU time is the steadier figure
on a shared machine (goal: first use under 5 s); with ``--repeat N`` each pair
of runs is repeated and the least CPU time of each is printed (other work on
the machine only ever adds to it), the kernel table from the fastest cold run.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = str(ROOT / "networks" / "consecutive_intermediate.scheme")

COMMANDS = {
    "solve": ["solve", EXAMPLE, "--until", "2h", "--no-caution"],
    "report": ["report", EXAMPLE, "--until", "2h", "--no-caution", "--out", "{out}/r.html"],
    "sweep": [
        "sweep", EXAMPLE, "--until", "3h", "--samples", "500", "--spread", "k1=15%",
        "--seed", "1", "--no-caution", "--out", "{out}/bands.csv",
    ],
    # a run with operations (daily elutions): the timeline's chain and action kernels
    "timeline": ["solve", str(ROOT / "networks" / "generator_daily_elution.scheme"),
                 "--until", "10d", "--no-caution"],
}  # fmt: skip

#: Runs the command line in-process and times each first compilation of a kernel.
PROBE = r"""
import json, sys, time
from numba.core import dispatcher
original = dispatcher.Dispatcher.compile
stack, own, entry, count = [], {}, {}, {}
# modules of the package's kernels
OURS = ("kernels.", "block_kernels.", "_sweep_kernels.", "chain_kernels.", "action_kernels.")
def compile(self, sig):
    name = self.py_func.__module__.rsplit(".", 1)[-1] + "." + self.py_func.__name__
    before = len(self.overloads)
    start = time.process_time()
    stack.append(0.0)
    try:
        return original(self, sig)
    finally:
        inner = stack.pop()
        total = time.process_time() - start
        if len(self.overloads) > before and name.startswith(OURS):
            own[name] = own.get(name, 0.0) + total - inner
            count[name] = count.get(name, 0) + 1
            if not stack:
                entry[name] = entry.get(name, 0.0) + total
        if stack:
            stack[-1] += total
dispatcher.Dispatcher.compile = compile
from kinetics.cli import main
status = main(sys.argv[1:])
print(json.dumps({"status": status, "entry": entry, "own": own, "count": count}), file=sys.stderr)
"""


def run(argv: list[str], cache: str) -> tuple[float, float, dict]:
    """CPU and wall time [s] of one run with the numba cache in ``cache``, and the probe's data."""
    env = {**os.environ, "NUMBA_CACHE_DIR": cache}
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-c", PROBE, *argv],
        env=env,
        capture_output=True,
        text=True,
        check=False,
        cwd=ROOT,
    )
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    lines = [line for line in done.stderr.splitlines() if line.startswith('{"status"')]
    if done.returncode != 0 or not lines:
        raise SystemExit(f"{' '.join(argv)} failed:\n{done.stderr}")
    return cpu, wall, json.loads(lines[-1])


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--commands", default="solve,report,sweep")
    parser.add_argument("--repeat", type=int, default=1, help="pairs of runs per command")
    args = parser.parse_args(argv)

    print(f"load average at start {os.getloadavg()[0]:.1f} (2 cores shared: wall times vary)")
    for name in args.commands.split(","):
        colds, warms = [], []
        for _ in range(args.repeat):
            with tempfile.TemporaryDirectory() as folder:
                cache = str(Path(folder) / "numba")
                command = [part.format(out=folder) for part in COMMANDS[name]]
                colds.append(run(command, cache))
                warms.append(run(command, cache))
        cold_cpu, cold_wall, data = min(colds, key=lambda r: r[0])
        warm_cpu, warm_wall, _ = min(warms, key=lambda r: r[0])
        if args.repeat > 1:
            spread = ", ".join(f"{c:.2f}" for c, _, _ in colds)
            print(f"\n{name}: first-use CPU times of the {args.repeat} runs [s]: {spread}")
        compiled = sum(data["entry"].values())
        verdict = "OK" if cold_cpu < 5.0 else "ABOVE THE 5 s GOAL"
        print(
            f"\n{name}: first use {cold_cpu:.2f} s CPU ({cold_wall:.2f} s wall), warm "
            f"{warm_cpu:.2f} s CPU ({warm_wall:.2f} s wall), ratio {cold_cpu / warm_cpu:.1f}; "
            f"compiling {compiled:.2f} s CPU -> {verdict}"
        )
        print("  kernels called from Python (with what they compile first) [s CPU]:")
        for kernel, seconds in sorted(data["entry"].items(), key=lambda kv: -kv[1]):
            print(f"    {kernel:36} {seconds:6.2f}")
        print("  own share of each kernel [s CPU] (signatures compiled):")
        for kernel, seconds in sorted(data["own"].items(), key=lambda kv: -kv[1]):
            print(f"    {kernel:36} {seconds:6.2f}  ({data['count'][kernel]})")
    print(f"\nload average at end {os.getloadavg()[0]:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
