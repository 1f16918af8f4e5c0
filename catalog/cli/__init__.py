"""The ``motorshelf`` command: a thin mirror of the Python API.

Each command parses its options, calls the :class:`~catalog.api.Catalog` method of
its name with options named like its keyword arguments, and prints the result.
Shared options come from :mod:`catalog.cli.options`.
User mistakes print one ``error: ...`` line per problem and exit with code 2.
Heavy libraries are imported inside the commands, so ``--help`` starts fast.
"""
from __future__ import annotations

__all__ = ["main", "cli"]

import functools
import sys

import click

from .. import __version__
from .options import DB_OPTION, Group


class Context:
    def __init__(self, db):
        self.db = db

    def catalog(self):
        from ..api import Catalog

        return Catalog(self.db)


def handle_errors(func):
    """Turn project errors into `error:` lines and exit code 2 (no traceback)."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        from ..errors import MotorshelfError
        from .output import echo

        try:
            return func(*args, **kwargs)
        except MotorshelfError as exc:
            problems = getattr(exc, "problems", None) or []
            for p in problems:
                echo(f"error: {p}", err=True)
            if not problems or len(problems) > 1:
                echo(f"error: {exc.message}", err=True)
            sys.exit(exc.exit_code)

    return wrapper


@click.group(cls=Group, context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@DB_OPTION
@click.version_option(__version__, prog_name="motorshelf")
@click.pass_context
def cli(ctx, db):
    """motorshelf: keep a catalogue of PM DC motors and gearheads in SI units and pick the
    right one for a load."""
    ctx.obj = Context(db)


from . import catalogue  # noqa: E402,F401  (registers the commands)
from . import select_cmd  # noqa: E402,F401
from . import stock_cmd  # noqa: E402,F401
from . import export_cmd  # noqa: E402,F401
from . import cycle_cmd  # noqa: E402,F401
from . import serve_cmd  # noqa: E402,F401


def main(argv=None):
    """Console entry point."""
    try:
        cli.main(args=argv, prog_name="motorshelf", standalone_mode=True)
    except KeyboardInterrupt:  # pragma: no cover
        from .output import echo

        echo("error: interrupted", err=True)
        sys.exit(130)
