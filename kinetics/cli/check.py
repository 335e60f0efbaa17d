"""The ``kinetics check`` command: read a scheme and report what was understood."""

from __future__ import annotations

import json
from pathlib import Path

import click

from kinetics.cli.common import load_scheme
from kinetics.output.overview import CHECK_TABLE_ROWS

__all__ = ["check"]


_CHECK_HELP = """Check a scheme file and report species, steps, balance and structure.

\b
Example:
  kinetics check networks/reversible_isomerisation.scheme --json
"""


@click.command(help=_CHECK_HELP)
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of tables.")
@click.option(
    "--allow-imbalance",
    is_flag=True,
    help="Report an atom imbalance without failing (as 'balance: lumped' in the file).",
)
@click.option(
    "--full-tables",
    is_flag=True,
    help="Print the species and steps tables however long (by default a scheme with more "
    f"than {CHECK_TABLE_ROWS} species or steps gets an overview).",
)
def check(scheme_file, as_json, allow_imbalance, full_tables):
    """Run ``kinetics check`` (the help text is :data:`_CHECK_HELP`)."""
    from kinetics.cli.terminal import progress, render_check
    from kinetics.output.overview import check_report

    # a scheme of 100,000s of reactions takes a while: say which phase runs (stderr, terminal)
    with progress(2, f"reading {scheme_file.name}") as bar:
        scheme = load_scheme(scheme_file, strict_balance=not allow_imbalance)
        bar.step("checking the structure")
        report = check_report(scheme)
        bar.step()
    if as_json:
        click.echo(json.dumps(report, indent=2, allow_nan=False))
    else:
        render_check(scheme, report, full_tables=full_tables)
