"""Helpers of the web tests (imported by name: pytest puts this folder on sys.path)."""
from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
QUERIES = ROOT / "queries"
LOOPBACK = "http://127.0.0.1:8000"


def make_client(db, token=None, host="127.0.0.1", base_url=LOOPBACK):
    from starlette.testclient import TestClient

    from catalog.web import create_app

    return TestClient(create_app(db, token=token, host=host), base_url=base_url, follow_redirects=False)


def csrf_of(client, path: str = "/shelf") -> str:
    """Open ``path`` (sets the form-token cookie) and return the form token of its forms."""
    page = client.get(path)
    assert page.status_code in (200, 422), page.text[:300]
    match = re.search(r'name="csrf" value="([^"]+)"', page.text)
    assert match, "no form token on " + path
    return match.group(1)


def movement_total(db) -> int:
    import catalog

    df = catalog.open(db).sql("SELECT coalesce(sum(quantity_change), 0) AS q FROM stock_movements")
    return int(df["q"].iloc[0])
