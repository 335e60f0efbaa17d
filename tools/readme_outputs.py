"""Run every README command (and each command's --help) and store what it produced.

Usage::

    python tools/readme_outputs.py OUTDIR   # OUTDIR/<n>/{argv,status,stdout,stderr,files}
    diff -r BEFORE AFTER                    # compare two runs

Each command runs in-process (``kinetics.cli.main``) in a fresh copy of ``networks/``.
Timestamps are replaced by ``<time>``: the report's date line, the zip and document dates of
``.xlsx`` files (their parts are stored unzipped),
and the random ids of matplotlib's SVG elements.  Everything else must match byte for byte.
"""

from __future__ import annotations

import contextlib
import io
import os
import re
import shlex
import shutil
import tempfile
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")
SVG_ID = re.compile(rb"\b(image|[mp])[0-9a-f]{10}\b")
STAMP = re.compile(rb"\d{4}-\d\d-\d\d[ T]\d\d:\d\d:\d\d(\.\d+)?( UTC|Z)?")


def commands() -> list[str]:
    """The README's commands that name a bundled example (as tests/test_readme.py finds them)."""
    found = set()
    for cmd in re.findall(r"`(kinetics [^`]+)`", README):
        if "networks/" in cmd and "FILE" not in cmd and "..." not in cmd:
            found.add(cmd)
    for block in re.findall(r"```sh\n(.*?)```", README, flags=re.S):
        for line in block.splitlines():
            line = line.strip()
            if line.startswith("kinetics ") and "networks/" in line:
                found.add(line)
    helps = [f"kinetics {c} --help" for c in ("check", "solve", "report", "sweep", "fit", "safety")]
    return [*sorted(found), "kinetics --help", "kinetics --version", *helps, *EXTRA]


#: Further commands that reach every output format and every command family.
EXTRA = [
    "kinetics check networks/parent_metabolites.scheme",
    "kinetics safety",
    "kinetics solve networks/parent_metabolites.scheme --until 365d --points 31 --out t.xlsx "
    "--out t.json --out t.parquet --out c.svg",
    "kinetics solve networks/soil_metabolites_mass.scheme --until 120d --points 11 "
    "--concentration-unit mg/kg --species PX --time-unit d",
    "kinetics sweep networks/consecutive_intermediate.scheme --until 3h --vary k2=0.01:1:5:log "
    "--vary k1=0.06,0.12 --plot t_max:EN --plot-out s.svg",
    "kinetics fit networks/consecutive_intermediate.scheme "
    "networks/consecutive_intermediate_samples.csv --free k1,k2 --out f.json --out f.csv "
    "--plot f.svg --no-profile",
    "kinetics solve networks/consecutive_intermediate.scheme --until -2h",
    "kinetics solve networks/missing.scheme --until 2h",
]


def normalised(path: Path) -> dict[str, bytes]:
    """name -> bytes of one output file (an .xlsx as its parts, dates replaced)."""
    data = path.read_bytes()
    if path.suffix == ".xlsx":
        parts = {}
        with zipfile.ZipFile(path) as book:
            for info in book.infolist():
                parts[f"{path.name}!{info.filename}"] = STAMP.sub(b"<time>", book.read(info))
        return parts
    if path.suffix == ".svg":  # matplotlib names clip paths and markers at random
        data = SVG_ID.sub(b"<id>", data)
    return {path.name: STAMP.sub(b"<time>", data)}


def run(command: str, out: Path) -> None:
    from kinetics.cli import main

    with tempfile.TemporaryDirectory() as tmp:
        work = Path(tmp)
        shutil.copytree(ROOT / "networks", work / "networks")
        before = set(work.rglob("*"))
        cwd = os.getcwd()
        os.chdir(work)
        stdout, stderr = io.StringIO(), io.StringIO()
        try:
            with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
                status = main(shlex.split(command)[1:])
        finally:
            os.chdir(cwd)
        out.mkdir(parents=True)
        (out / "argv").write_text(command + "\n")
        (out / "status").write_text(f"{status}\n")
        (out / "stdout").write_bytes(STAMP.sub(b"<time>", stdout.getvalue().encode()))
        (out / "stderr").write_bytes(STAMP.sub(b"<time>", stderr.getvalue().encode()))
        files = out / "files"
        files.mkdir()
        for path in sorted(set(work.rglob("*")) - before):
            if path.is_file():
                for name, data in normalised(path).items():
                    (files / name.replace("/", "_")).write_bytes(data)


def main() -> None:
    import argparse

    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("outdir", type=Path, help="folder for the outputs (created)")
    target = parser.parse_args().outdir
    for k, command in enumerate(commands()):
        run(command, target / f"{k:02d}")
        print(command)


if __name__ == "__main__":
    main()
