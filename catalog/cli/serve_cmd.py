"""The ``serve`` command: the catalogue in a browser and as a JSON API (``catalog.web``)."""
from __future__ import annotations

__all__ = ["serve_cmd"]

import os

import click

from . import Context, cli, handle_errors


@cli.command("serve")
@click.option("--host", default="127.0.0.1", show_default=True, metavar="ADDRESS",
              help="Address to listen on; anything but a loopback address needs a team token.")
@click.option("--port", type=click.IntRange(0, 65535), default=8000, show_default=True,
              help="TCP port to listen on.")
@click.option("--token", default=None, metavar="TOKEN",
              help="Team token every request must carry (default: $MOTORSHELF_TOKEN); required on a "
                   "non-loopback address.")
@click.pass_obj
@handle_errors
def serve_cmd(obj: Context, host, port, token):
    """Serve the catalogue to the team: pages for browsers (catalogue, records, selection, shelf,
    import) and a JSON API (/api/..., described at /api/openapi.json).

    The server is the one writer of the catalogue file; motorshelf commands run beside it
    keep working.  Stop it with Ctrl+C.
    """
    token = token or os.environ.get("MOTORSHELF_TOKEN") or None
    shown = f"[{host}]" if ":" in host else host
    cat = obj.catalog()

    def started(path):
        click.echo(f"motorshelf: serving {path} on http://{shown}:{port}/ "
                   + ("(team token required)" if token else "(this machine only)"), err=True)

    cat.serve(host=host, port=port, token=token, started=started)
