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

from catmap import _collector
from catmap.errors import EXIT_FAILURE, EXIT_INTERRUPTED, CatmapError

# Every command, in the order a product flows through catmap, with the module that registers it
# (``register(group)``). Modules are imported only when one of their commands runs, so that a quick
# command does not pay for the model's imports.
COMMANDS: dict[str, str] = {
    "init": "project",
    "inspect": "feeds",
    "normalise": "feeds",
    "tree": "tree",
    "train": "model",
    "map": "map",
    "evaluate": "evaluate",
    "brands": "brands",
    "onboard": "onboard",
    "status": "onboard",
    "review": "review",
    "audit-check": "audit",
    "decisions": "onboard",
    "export": "onboard",
    "demo": "onboard",
    "remap": "remap",
    "remap-report": "remap",
    "remap-rollback": "remap",
    "remap-finalise": "remap",
}

# The first sentence of each command's help, so that `catmap --help` lists the commands without
# importing their modules (which import the model: seconds and hundreds of MB). A test checks
# each entry against the command's own help text.
SHORT_HELP: dict[str, str] = {
    "init": "Start a project of your own in FOLDER: its tree, brand list and labelled feeds.",
    "inspect": "Show what a feed is and which column feeds which field; save that as the "
    "feed's profile.",
    "normalise": "Clean every record of a feed into products; write them, the rejects and the "
    "accounting.",
    "tree": "Check, show, search and diff the category tree (the project's, or a shared version).",
    "train": "Train the mapping model on labelled feeds (default: the project's, see `catmap "
    "init`).",
    "map": "Map every product of a feed to a node of the tree, with a calibrated confidence.",
    "evaluate": "Measure mapping and attribute quality on a feed with gold labels.",
    "brands": "Find brands the dictionary does not know yet, add them, and confirm or reject found "
    "ones.",
    "onboard": "Read, normalise, map and store a feed; auto-accept what is safe, queue the rest.",
    "status": "Show where each feed stands: rows, accepted, queue, reviews and the audited "
    "error.",
    "review": "Review uncertain mappings one product at a time, with single keys.",
    "audit-check": "Check each feed's audited error against its target; raise the threshold "
    "when over.",
    "decisions": "Review in a spreadsheet: export the queue to CSV, import the filled rows.",
    "export": "Write each feed's enriched products (node, confidence, status, attributes), its "
    "rejects and the accounting of its last run.",
    "demo": "Run the whole job on the invented demo world: build it, train, onboard, measure, "
    "export.",
    "remap": "Move every stored mapping onto a new version of the category tree.",
    "remap-report": "Show what the last remap did, node by node, and whether it can still be "
    "rolled back.",
    "remap-rollback": "Undo the last remap: every mapping and review item goes back as it was.",
    "remap-finalise": "Keep the last remap for good (the previous mappings are dropped).",
}

# Old spellings that still run (not listed): catmap spells its words the British way.
ALIASES: dict[str, str] = {"normalize": "normalise"}


# catmap parallelises by processes (map's workers, a cluster's workers), one core each: the
# BLAS library's own thread pool would only oversubscribe the cores. Its threads also spin
# after each small product of matrices, burning CPU for no gain. Measured on `catmap map` (2
# cores, paired runs): a one-row feed 1.03 → 0.82 CPU seconds, the demo's 66,000-row reference
# feed 5.7 → 5.0 (one worker) and 6.0 → 5.5 (two), at the same wall time; `catmap demo`
# (training included) unchanged. Set before NumPy loads its BLAS; the user's own setting wins.
BLAS_THREADS = {"OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


def _one_blas_thread() -> None:
    for name, value in BLAS_THREADS.items():
        os.environ.setdefault(name, value)


class _Boundary(click.Group):
    """The top-level group: loads command modules on demand, and is the one error boundary.

    A catmap error becomes one line on stderr and the error's named exit code.
    """

    def __call__(self, *args: Any, **kwargs: Any) -> Any:
        # How the `catmap` script and `python -m catmap` start catmap (a test's CliRunner calls
        # `main.main()` instead): a program, whose loaded model may be frozen out of the
        # garbage collector's rounds (catmap/_collector.py).
        _collector.run_as_program()
        _one_blas_thread()
        return super().__call__(*args, **kwargs)

    def list_commands(self, ctx: click.Context) -> list[str]:
        return list(COMMANDS)

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        cmd_name = ALIASES.get(cmd_name, cmd_name)
        if cmd_name not in self.commands and cmd_name in COMMANDS:
            # A command's modules live as long as the process: no collection while they load,
            # and (in a program) frozen out of the collector's rounds once loaded.
            with _collector.paused():
                module = importlib.import_module(f"catmap.cli.{COMMANDS[cmd_name]}")
                _collector.settle()
            module.register(self)
        return self.commands.get(cmd_name)

    def resolve_command(
        self, ctx: click.Context, args: list[str]
    ) -> tuple[str | None, click.Command | None, list[str]]:
        # An alias runs under its command's own name (its usage line and errors say that one).
        if args and args[0] in ALIASES:
            args = [ALIASES[args[0]], *args[1:]]
        return super().resolve_command(ctx, args)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        """List the commands from :data:`SHORT_HELP`, shortened as click would, no import."""
        width = max(len(name) for name in COMMANDS)
        limit = formatter.width - 6 - width
        rows = [
            (name, click.Command(name, help=SHORT_HELP[name]).get_short_help_str(limit))
            for name in COMMANDS
        ]
        with formatter.section("Commands"):
            formatter.write_dl(rows)

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
