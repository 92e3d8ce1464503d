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

# Every command, in the order a product flows through catmap, with the module that registers it
# (``register(group)``). Modules are imported only when one of their commands runs, so that a quick
# command does not pay for the model's imports.
COMMANDS: dict[str, str] = {
    "init": "project",
    "inspect": "feeds",
    "normalize": "feeds",
    "tree": "tree",
    "train": "model",
    "map": "model",
    "evaluate": "evaluate",
    "brands": "brands",
    "onboard": "onboard",
    "status": "onboard",
    "review": "review",
    "decisions": "onboard",
    "export": "onboard",
    "demo": "onboard",
    "remap": "remap",
    "remap-report": "remap",
    "remap-rollback": "remap",
    "remap-finalise": "remap",
}


class _Boundary(click.Group):
    """The top-level group: loads command modules on demand, and is the one error boundary.

    A catmap error becomes one line on stderr and the error's named exit code.
    """

    def list_commands(self, ctx: click.Context) -> list[str]:
        return list(COMMANDS)

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        if cmd_name not in self.commands and cmd_name in COMMANDS:
            module = importlib.import_module(f"catmap.cli.{COMMANDS[cmd_name]}")
            module.register(self)
        return self.commands.get(cmd_name)

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
