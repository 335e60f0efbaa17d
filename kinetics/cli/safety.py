"""The ``kinetics safety`` command: the limits of the model, in full."""

from __future__ import annotations

import click

__all__ = ["safety"]


_SAFETY_HELP = """
Print SAFETY.md: the limits of the model and what a process-safety review must address.

\b
Example:
  kinetics safety | less
"""


@click.command(help=_SAFETY_HELP)
def safety():
    """Run ``kinetics safety`` (the help text is :data:`_SAFETY_HELP`)."""
    from importlib.resources import files

    click.echo(files("kinetics").joinpath("SAFETY.md").read_text(encoding="utf-8"), nl=False)
