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
    from ..errors import InputError, Problem

    token = token or os.environ.get("MOTORSHELF_TOKEN") or None
    try:
        from ..web import create_app

        app = create_app(obj.db if obj.db is not None else None, token=token, host=host)
    except ValueError as exc:
        raise InputError(str(exc), [Problem("--token", None, None, str(exc))]) from None
    import uvicorn

    shown = f"[{host}]" if ":" in host else host
    click.echo(f"motorshelf: serving {app.state.catalog.path} on http://{shown}:{port}/ "
               + ("(team token required)" if token else "(this machine only)"), err=True)
    uvicorn.run(app, host=host, port=port, log_level="warning", access_log=False, server_header=False)
