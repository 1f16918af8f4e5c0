"""The table snapshot of tests/conftest.py, importable by name from the web tests."""
from __future__ import annotations


def snapshot(db):
    import duckdb

    con = duckdb.connect(str(db), read_only=True)
    try:
        names = [r[0] for r in con.execute(
            "SELECT table_name FROM information_schema.tables WHERE table_type = 'BASE TABLE' ORDER BY 1").fetchall()]
        return {n: sorted(map(repr, con.execute(f'SELECT * FROM "{n}"').fetchall())) for n in names}
    finally:
        con.close()
