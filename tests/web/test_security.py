"""Who may talk to the server: loopback binds, the team token, form tokens, escaping, headers."""
from __future__ import annotations

import re

import pytest
from click.testing import CliRunner

from webhelp import QUERIES, csrf_of, make_client, movement_total

TOKEN = "correct horse battery staple"

#: (method, path, body kwargs) of every route: reads and writes, pages and API.
ROUTES = [
    ("GET", "/", {}), ("GET", "/catalogue", {}), ("GET", "/records/sorvanto-00341-06", {}),
    ("GET", "/records/sorvanto-00341-06/diagram.svg", {}), ("GET", "/select", {}),
    ("GET", "/select/runs/x", {}), ("GET", "/select/runs/x/explain?candidate=a", {}),
    ("GET", "/select/runs/x/diagram/a.svg", {}), ("GET", "/select/runs/x/compare.svg", {}), ("GET", "/select/runs/x/selection.xlsx", {}),
    ("GET", "/select/runs/x/report.html", {}), ("GET", "/select/runs/x/envelope.toml", {}),
    ("GET", "/shelf", {}), ("GET", "/shelf/item?record=sorvanto-007240", {}), ("GET", "/shelf/labels", {}),
    ("GET", "/import", {}), ("GET", "/import/jobs/x", {}), ("GET", "/import/jobs/x/status", {}),
    ("GET", "/import/jobs/x/rejected-rows.csv", {}),
    ("POST", "/select", {"data": {"envelope": "x"}}), ("POST", "/shelf/take", {"data": {"record_id": "x"}}),
    ("POST", "/import", {"data": {}}), ("POST", "/logout", {"data": {}}),
    ("GET", "/api/health", {}), ("GET", "/api/motors", {}), ("GET", "/api/gearheads", {}),
    ("GET", "/api/records/sorvanto-00341-06", {}), ("GET", "/api/openapi.json", {}),
    ("POST", "/api/select", {"content": b"name='x'", "headers": {"content-type": "application/toml"}}),
    ("POST", "/api/stock/take", {"json": {"record_id": "sorvanto-007240", "quantity": 1}}),
]


@pytest.fixture
def team(demo_db):
    """A server bound to a non-loopback address with a team token (nothing is bound in tests)."""
    with make_client(demo_db, token=TOKEN, host="0.0.0.0", base_url="http://shelf.example:8000") as c:
        yield c


def test_non_loopback_bind_needs_a_token(demo_db):
    from catalog.web import create_app

    with pytest.raises(ValueError, match="needs a team token"):
        create_app(demo_db, host="0.0.0.0")
    with pytest.raises(ValueError, match="needs a team token"):
        create_app(demo_db, host="192.0.2.10")
    with pytest.raises(ValueError, match="shorter than 8"):
        create_app(demo_db, token="abc", host="0.0.0.0")
    for host in ("127.0.0.1", "127.8.9.1", "::1", "localhost"):
        create_app(demo_db, host=host)


def test_serve_refuses_a_non_loopback_bind_without_token(demo_db, monkeypatch):
    from catalog.cli import cli

    monkeypatch.delenv("MOTORSHELF_TOKEN", raising=False)
    res = CliRunner().invoke(cli, ["--db", str(demo_db), "serve", "--host", "0.0.0.0", "--port", "1"])
    assert res.exit_code == 2
    assert "error: token: serving on 0.0.0.0 (not a loopback address) needs a team token" in res.output
    assert "Traceback" not in res.output


@pytest.mark.parametrize("method, path, kw", ROUTES)
def test_without_the_token_every_read_and_write_is_refused(team, demo_db, method, path, kw):
    before = movement_total(demo_db)
    r = team.request(method, path, **kw)
    if method == "GET" and not path.startswith("/api/"):
        assert r.status_code == 303 and r.headers["location"].startswith("/login?next=")
    else:
        assert r.status_code == 401
        assert "team token" in r.json()["error"]
    assert "sorvanto" not in r.text
    assert movement_total(demo_db) == before


@pytest.mark.parametrize("header", ["Bearer wrong-token-123", "Basic " + TOKEN, TOKEN, "Bearer "])
def test_a_wrong_token_is_refused(team, header):
    assert team.get("/api/health", headers={"Authorization": header}).status_code == 401
    assert team.get("/api/motors", headers={"Authorization": header}).status_code == 401


def test_with_the_token_reads_and_writes_work(team, demo_db):
    auth = {"Authorization": f"Bearer {TOKEN}"}
    assert team.get("/api/health", headers=auth).status_code == 200
    assert team.get("/api/motors", headers=auth).json()["total"] == 60
    assert team.post("/api/select", content=(QUERIES / "lift_axis.toml").read_bytes(),
                     headers={**auth, "content-type": "application/toml"}).status_code == 200
    body = {"record_id": "brackwater-bs2860-36", "quantity": 1, "location": "Lab 2 / cabinet A / bin 7",
            "project": "arm"}
    r = team.post("/api/stock/take", json=body, headers=auth)
    assert r.status_code == 422 and "error: body:person: missing" in r.json()["lines"][0]
    before = movement_total(demo_db)
    r = team.post("/api/stock/take", json={**body, "person": "Chris"}, headers=auth)
    assert r.status_code == 200
    assert movement_total(demo_db) == before - 1
    import catalog

    hist = catalog.open(demo_db).stock_history("brackwater-bs2860-36")
    assert hist["person"].iloc[-1] == "Chris"


def test_browser_sign_in_then_pages_and_forms(team, demo_db):
    login = team.get("/login?next=/shelf")
    assert login.status_code == 200
    token = re.search(r'name="csrf" value="([^"]+)"', login.text).group(1)
    bad = team.post("/login", data={"csrf": token, "token": "nope-nope", "person": "Dee", "next": "/shelf"})
    assert bad.status_code == 401 and "wrong team token" in bad.text
    noname = team.post("/login", data={"csrf": token, "token": TOKEN, "person": " ", "next": "/shelf"})
    assert noname.status_code == 422
    r = team.post("/login", data={"csrf": token, "token": TOKEN, "person": "Dee", "next": "//evil.example/x"})
    assert r.status_code == 303 and r.headers["location"] == "/"     # never off this server
    assert TOKEN not in r.headers.get("set-cookie", "")               # the cookie holds a hash, not the token
    shelf = team.get("/shelf")
    assert shelf.status_code == 200 and "Dee" in shelf.text
    token = re.search(r'name="csrf" value="([^"]+)"', shelf.text).group(1)
    before = movement_total(demo_db)
    r = team.post("/shelf/take", data={"csrf": token, "record_id": "brackwater-bs2860-36", "quantity": "1",
                                       "location": "Lab 2 / cabinet A / bin 7", "project": "arm"})
    assert r.status_code == 303
    assert movement_total(demo_db) == before - 1
    import catalog

    assert catalog.open(demo_db).stock_history("brackwater-bs2860-36")["person"].iloc[-1] == "Dee"
    out = team.post("/logout", data={"csrf": token})
    assert out.status_code == 303
    assert team.get("/api/health").status_code == 401


def test_loopback_server_answers_only_loopback_host_names(demo_db):
    with make_client(demo_db, base_url="http://rebound.example:8000") as c:
        r = c.get("/api/health")
        assert r.status_code == 400 and "answers only to localhost" in r.json()["error"]
    for base in ("http://localhost:8000", "http://127.0.0.1:8000", "http://[::1]:8000"):
        with make_client(demo_db, base_url=base) as c:
            assert c.get("/api/health").status_code == 200, base


@pytest.mark.parametrize("path, data", [
    ("/shelf/take", {"record_id": "brackwater-bs2860-36", "quantity": "1", "location": "Lab 2 / cabinet A / bin 7",
                     "project": "x", "person": "Eve"}),
    ("/select", {"envelope": "name = 'x'", "action": "run"}),
    ("/import", {"action": "import"}),
    ("/logout", {}),
])
def test_forms_without_their_token_are_refused(client, demo_db, path, data):
    before = movement_total(demo_db)
    r = client.post(path, data=data)                              # no cookie, no field
    assert r.status_code == 403 and "without its page" in r.text
    csrf_of(client)                                              # the cookie is set now
    r = client.post(path, data={**data, "csrf": "forged-token-value-123456"})
    assert r.status_code == 403
    r = client.post(path, data=data, headers={"X-CSRF-Token": "forged-token-value-123456"})
    assert r.status_code == 403
    assert movement_total(demo_db) == before


def test_htmx_header_token_is_accepted(client, demo_db):
    token = csrf_of(client)
    r = client.post("/shelf/take", headers={"X-CSRF-Token": token},
                    data={"record_id": "brackwater-bs2860-36", "quantity": "1", "location": "Lab 2 / cabinet A / bin 7",
                          "project": "x", "person": "Eve"})
    assert r.status_code == 303


def test_security_headers(client):
    r = client.get("/catalogue")
    assert r.headers["x-frame-options"] == "DENY" and r.headers["x-content-type-options"] == "nosniff"
    assert "script-src 'self'" in r.headers["content-security-policy"]
    cookie = r.headers["set-cookie"]
    assert "motorshelf_csrf=" in cookie and "HttpOnly" in cookie and "SameSite=strict" in cookie.replace("Strict", "strict")
    assert client.get("/api/health").headers["x-frame-options"] == "DENY"


HOSTILE = '<script>alert(1)</script>"\'><img src=x onerror=alert(2)>'


def test_supplier_text_is_escaped_everywhere(client, demo_db, tmp_path):
    import catalog

    csv = tmp_path / "hostile.csv"
    csv.write_text("manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],torque_constant [mN*m/A],"
                   "notes,mount\n"
                   f"\"Evil {HOSTILE.replace(chr(34), chr(34) * 2)}\",\"X{HOSTILE.replace(chr(34), chr(34) * 2)}\",24,2,30,"
                   f"\"{HOSTILE.replace(chr(34), chr(34) * 2)}\",F22\n", encoding="utf-8")
    cat = catalog.open(demo_db)
    cat.import_([csv])
    rid = cat.sql("SELECT record_id FROM records WHERE manufacturer LIKE 'Evil%'")["record_id"][0]
    cat.stock_receive(rid, 2, f"Shelf {HOSTILE}", person=HOSTILE, reason=HOSTILE)
    from urllib.parse import quote

    pages = [client.get("/catalogue", params={"q": "Evil"}), client.get(f"/records/{quote(rid)}"),
             client.get("/shelf"), client.get("/shelf/labels"),
             client.get("/shelf/item", params={"record": rid, "location": f"Shelf {HOSTILE}", "condition": "new"}),
             client.get("/catalogue", params={"q": HOSTILE}), client.get(f"/records/{quote(HOSTILE)}")]
    for page in pages:
        assert "<script>alert" not in page.text and "<img src=x" not in page.text, page.url
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in pages[1].text
    assert "&lt;script&gt;" in pages[2].text and "&lt;script&gt;" in pages[3].text
