"""The web face: ``motorshelf serve`` serves the catalogue to a team's browsers and scripts.

A third thin face over :class:`catalog.api.Catalog` (beside the command line and the
Python API): an ASGI application (Starlette, run by uvicorn) with pages rendered by
Jinja2 (autoescaped) and htmx vendored in ``static/`` (nothing is fetched from another
site), and a JSON API under ``/api/`` described at ``/api/openapi.json``.

Modules: :mod:`.app` (the factory :func:`create_app`), :mod:`.security` (bind rules,
team token, cross-site form tokens, response headers), :mod:`.served` (the one writer
and the kept frames), :mod:`.jobs` (background imports), :mod:`.api_routes` (the JSON
API), :mod:`.pages`, :mod:`.select_pages`, :mod:`.shelf_pages`, :mod:`.import_pages`.
"""
from __future__ import annotations

__all__ = ["create_app"]


def create_app(*args, **kwargs):
    """See :func:`catalog.web.app.create_app`."""
    from .app import create_app as factory

    return factory(*args, **kwargs)
