"""catmap's command line: a thin layer that parses options, calls one library function, renders.

This package holds the one error boundary: a :class:`~catmap.errors.CatmapError` prints one
clear line on stderr and exits with its named code; a traceback only with ``--debug``. Ctrl-C
and a closed pipe end quietly.
"""

from __future__ import annotations

import importlib
import os
import sys
from typing import Any

import click

from catmap.errors import EXIT_FAILURE, EXIT_INTERRUPTED, CatmapError

# Command modules, each with a ``register(group)`` function. Kept as a list so that the order
# of ``catmap --help`` follows the pipeline.
COMMAND_MODULES = (
    "feeds",  # inspect, normalize
    "tree",  # tree validate/show/search/diff
    "model",  # train, map, evaluate
    "brands",  # brands candidates / accept
    "onboard",  # onboard, status, export, decisions, demo
    "review",  # review (terminal screen)
    "remap",  # remap, remap-rollback, remap-finalise
)


class _Boundary(click.Group):
    """A click group that turns catmap errors into one line and a named exit code."""

    def invoke(self, ctx: click.Context) -> Any:
        debug = bool(ctx.params.get("debug")) or os.environ.get("CATMAP_DEBUG") == "1"
        try:
            return super().invoke(ctx)
        except CatmapError as error:
            if debug:
                raise
            click.echo(f"catmap: error: {error}", err=True)
            ctx.exit(error.exit_code)
        except KeyboardInterrupt:
            if debug:
                raise
            click.echo("catmap: interrupted", err=True)
            ctx.exit(EXIT_INTERRUPTED)
        except BrokenPipeError:
            # The reader went away (e.g. `catmap ... | head`): end quietly, like other tools.
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            ctx.exit(EXIT_FAILURE)


@click.group(cls=_Boundary, context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--debug", is_flag=True, help="Show the full traceback when something fails.")
@click.version_option(package_name="catmap")
def main(debug: bool) -> None:
    """catmap: map retailer product feeds onto one shared category tree."""


def _register_commands() -> None:
    for name in COMMAND_MODULES:
        try:
            module = importlib.import_module(f"catmap.cli.{name}")
        except ModuleNotFoundError as error:
            if error.name == f"catmap.cli.{name}":
                continue  # not written yet
            raise
        module.register(main)


_register_commands()
