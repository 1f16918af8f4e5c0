"""The JSON API contract: every route, its answers and its error paths (Starlette's test client)."""
from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from webhelp import QUERIES, movement_total

TOML = {"content-type": "application/toml"}


def cli(*args):
    from catalog.cli import cli as group

    return CliRunner().invoke(group, [str(a) for a in args])


def test_health(client, demo_db):
    r = client.get("/api/health")
    assert r.status_code == 200
    doc = r.json()
    assert doc["status"] == "ok"
    assert doc["counts"]["motors"] == 60 and doc["counts"]["gearheads"] == 32   # the demo (README)


def test_motors_all_in_si(client, demo_db):
    import catalog

    motors = catalog.open(demo_db).motors()
    doc = client.get("/api/motors").json()
    assert doc["total"] == len(motors) == len(doc["records"])
    assert doc["units"]["stall_torque"] == "N·m" and doc["units"]["mass"] == "kg"
    first = doc["records"][0]
    row = motors[motors["id"] == first["id"]].iloc[0]
    assert first["stall_torque"] == pytest.approx(row["stall_torque"], rel=1e-12)
    assert first["mass"] == pytest.approx(row["mass"], rel=1e-12)


def test_motors_filters_sort_and_pages(client, demo_db):
    import catalog

    motors = catalog.open(demo_db).motors()
    expected = motors[(motors["mass"] <= 0.2) & (motors["nominal_voltage"] >= 12)].sort_values(
        ["stall_torque", "id"], ascending=[False, True])
    doc = client.get("/api/motors", params={"mass.max": "0.2", "nominal_voltage.min": "12",
                                            "sort": "stall_torque", "order": "desc"}).json()
    assert doc["total"] == len(expected) > 0
    assert [r["id"] for r in doc["records"]] == list(expected["id"])
    # a bound with its own unit reads as the datasheet parser reads it
    same = client.get("/api/motors", params={"mass.max": "200 g", "nominal_voltage.min": "12 V",
                                             "sort": "stall_torque", "order": "desc"}).json()
    assert [r["id"] for r in same["records"]] == list(expected["id"])
    page = client.get("/api/motors", params={"mass.max": "0.2", "nominal_voltage.min": "12", "sort": "stall_torque",
                                             "order": "desc", "limit": 2, "offset": 1}).json()
    assert [r["id"] for r in page["records"]] == list(expected["id"][1:3])
    text = client.get("/api/motors", params={"q": "SORVANTO", "commutation": "brush"}).json()
    assert text["total"] == int((motors["manufacturer"].str.contains("Sorvanto")
                                 & motors["commutation"].str.contains("brush")).sum())


def test_gearheads(client, demo_db):
    import catalog

    gears = catalog.open(demo_db).gearheads()
    doc = client.get("/api/gearheads", params={"ratio.min": 10}).json()
    assert doc["total"] == int((gears["ratio"] >= 10).sum()) > 0
    assert all(r["ratio"] >= 10 for r in doc["records"])


@pytest.mark.parametrize("params, line", [
    ({"mass.maks": "1"}, "error: mass.maks: no such filter"),
    ({"colour": "red"}, "error: colour: no such filter"),
    ({"mass.max": "heavy"}, "error: mass.max: 'heavy'"),
    ({"mass.max": "12 V"}, "error: mass.max: '12 V'"),
    ({"mass.min": "2", "mass.max": "1"}, "error: mass.min: is above mass.max"),
    ({"sort": "colour"}, "error: sort: 'colour' is not a motor field"),
    ({"order": "up"}, "error: order: 'up', expected asc or desc"),
    ({"limit": "many"}, "error: limit: 'many' is not a whole number"),
    ({"limit": "0"}, "error: limit: 0, expected 1 to 1000"),
    ({"offset": "-1"}, "error: offset: -1, expected 0 or more"),
])
def test_motors_input_mistakes_answer_422_with_lines(client, params, line):
    r = client.get("/api/motors", params=params)
    assert r.status_code == 422
    doc = r.json()
    assert any(x.startswith(line) for x in doc["lines"]), doc
    assert "Traceback" not in r.text


def test_record_with_provenance(client, demo_db):
    doc = client.get("/api/records/sorvanto-00341-06").json()
    assert doc["record_type"] == "motor" and doc["manufacturer"] == "Sorvanto Micromotors Oy"
    values = {v["field"]: v for v in doc["values"]}
    assert values["no_load_current"]["raw_text"] == "5.069" and values["no_load_current"]["raw_unit"] == "mA"
    assert values["no_load_current"]["value_si"] == pytest.approx(5.069e-3)
    assert values["no_load_current"]["source_file"].endswith("sorvanto_motors.csv")
    assert values["no_load_current"]["source_row"] == 2
    assert values["torque_constant"]["origin"] == "derived" and "speed_constant" in values["torque_constant"]["inputs"]
    flagged = client.get("/api/records/vaskeline-vk-c2232-24").json()
    assert any("torque constant = 1/speed constant" in f["text"] for f in flagged["flags"])   # the demo typo


def test_record_unknown_is_404_with_suggestions(client):
    r = client.get("/api/records/sorvanto-00341-07")
    assert r.status_code == 404
    doc = r.json()
    assert doc["lines"][0].startswith("error: no record with id 'sorvanto-00341-07'")
    assert "sorvanto-00341-06" in doc["suggestions"]


def _strip(doc):
    about = dict(doc["about"])
    for key in ("created", "envelope_source"):
        about.pop(key)
    return {**doc, "about": about}


@pytest.mark.parametrize("name", ["lift_axis", "drive_wheel", "impossible"])
def test_select_answers_the_cli_document(client, demo_db, tmp_path, name):
    out = tmp_path / "result.json"
    envelope = QUERIES / f"{name}.toml"
    res = cli("--db", demo_db, "select", envelope, "--out", out, "--units", "si")
    assert res.exit_code in (0, 1), res.output
    r = client.post("/api/select", content=envelope.read_bytes(), headers=TOML)
    assert r.status_code == 200, r.text[:500]
    api, written = r.json(), json.loads(out.read_text(encoding="utf-8"))
    assert written["about"]["catalogue"] == api["about"]["catalogue"] == str(demo_db)
    assert _strip(api) == _strip(written)


def test_select_query_parameters(client):
    body = (QUERIES / "lift_axis.toml").read_bytes()
    doc = client.post("/api/select", params={"top": 2}, content=body, headers=TOML).json()
    assert len(doc["records"]) == min(2, doc["about"]["passing"])
    only = client.post("/api/select", params={"stock": "only"}, content=body, headers=TOML).json()
    assert only["about"]["passing"] <= doc["about"]["passing"]


def test_select_envelope_mistakes_answer_the_cli_lines(client, demo_db, tmp_path, monkeypatch):
    text = (QUERIES / "lift_axis.toml").read_text(encoding="utf-8")
    bad = text.replace('regenerative = false', 'regenerative = "no"').replace('name = "raise"', 'name = 7')
    (tmp_path / "envelope.toml").write_text(bad, encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    res = cli("--db", demo_db, "select", "envelope.toml")
    assert res.exit_code == 2
    cli_lines = [line for line in res.output.splitlines() if line.startswith("error:")]
    r = client.post("/api/select", content=bad.encode(), headers=TOML)
    assert r.status_code == 422
    assert r.json()["lines"] == cli_lines and len(cli_lines) >= 2


@pytest.mark.parametrize("body, line", [
    (b"name = \n", "error: envelope.toml:1: not valid TOML"),
    (b"", "error: envelope.toml: empty"),
    (b"name = 'x'\0", "error: envelope.toml:1: binary data"),
    (b"\xff\xfe", "error: envelope.toml:1: byte 0xff is not UTF-8"),
    (b"# " + b"x" * (1 << 20) + b"\n", "error: envelope.toml: 1.0 MiB, expected an envelope of at most 1 MiB"),
])
def test_select_bad_bodies(client, body, line):
    r = client.post("/api/select", content=body, headers=TOML)
    assert r.status_code == 422
    assert r.json()["lines"][0].startswith(line), r.json()


@pytest.mark.parametrize("params, line", [({"top": "0"}, "error: top: '0'"), ({"stock": "all"}, "error: stock: 'all'")])
def test_select_bad_parameters(client, params, line):
    r = client.post("/api/select", params=params, content=(QUERIES / "lift_axis.toml").read_bytes(), headers=TOML)
    assert r.status_code == 422 and r.json()["lines"][0].startswith(line)


def test_select_needs_a_toml_body(client):
    r = client.post("/api/select", content=b'{"name": "x"}', headers={"content-type": "application/json"})
    assert r.status_code == 415 and "application/toml" in r.json()["error"]


SHELF = "Lab 2 / cabinet A / bin 7"


def _levels(doc, location):
    return [lv for lv in doc["levels"] if lv["location"] == location]


def test_stock_every_verb(client, demo_db):
    import catalog

    cat = catalog.open(demo_db)
    before = movement_total(demo_db)
    rid = "brackwater-bs2860-36"
    post = lambda verb, body: client.post(f"/api/stock/{verb}", json=body)  # noqa: E731
    r = post("receive", {"record_id": rid, "quantity": 4, "location": "Bench 1", "person": "Ana"})
    assert r.status_code == 200, r.text
    assert _levels(r.json(), "Bench 1")[0]["on_hand"] == 4
    r = post("take", {"record_id": rid, "quantity": 1, "location": "Bench 1", "person": "Ana", "project": "rig"})
    assert _levels(r.json(), "Bench 1")[0]["on_hand"] == 3 and r.json()["kind"] == "take"
    r = post("return", {"record_id": rid, "quantity": 1, "location": "Bench 1", "person": "Ana", "project": "rig"})
    assert {(lv["condition"], lv["on_hand"]) for lv in _levels(r.json(), "Bench 1")} >= {("used", 1)}
    r = post("move", {"record_id": rid, "quantity": 2, "from_location": "Bench 1", "condition": "new",
                      "to_location": "Bench 2", "person": "Ana"})
    assert _levels(r.json(), "Bench 2")[0]["on_hand"] == 2
    r = post("adjust", {"record_id": rid, "counted": 5, "location": "Bench 2", "person": "Ana", "reason": "count"})
    assert _levels(r.json(), "Bench 2")[0]["on_hand"] == 5
    r = post("reserve", {"record_id": rid, "quantity": 2, "project": "arm", "location": "Bench 2", "person": "Ana"})
    res_id = r.json()["reservation_id"]
    assert _levels(r.json(), "Bench 2")[0]["reserved"] == 2 and res_id
    r = post("release", {"reservation_id": res_id, "person": "Ana"})
    assert _levels(r.json(), "Bench 2")[0]["reserved"] == 0
    r = post("write-off", {"record_id": rid, "quantity": 1, "reason": "dropped", "location": "Bench 2",
                           "person": "Ana"})
    assert _levels(r.json(), "Bench 2")[0]["on_hand"] == 4
    # the ledger holds exactly these movements: +4 -1 +1 (move 0) +3 (adjust 2 -> 5) -1
    assert movement_total(demo_db) == before + 4 - 1 + 1 + 3 - 1
    hist = cat.stock_history(rid)
    assert set(hist["person"].dropna()) >= {"Ana"}


@pytest.mark.parametrize("verb, body, line", [
    ("take", {"record_id": "brackwater-bs2860-36", "quantity": 99, "location": SHELF, "person": "Ana",
              "project": "x"}, "error: "),
    ("take", {"record_id": "no-such-motor", "quantity": 1, "person": "Ana", "project": "x"},
     "error: no record with id 'no-such-motor'"),
    ("receive", {"record_id": "brackwater-bs2860-36", "quantity": "two", "location": SHELF}, "error: "),
    ("receive", {"record_id": "brackwater-bs2860-36", "location": SHELF}, "error: body:quantity: missing"),
    ("receive", {"record_id": "brackwater-bs2860-36", "quantity": 1, "location": SHELF, "colour": "red"},
     "error: body:colour: unknown argument of receive"),
    ("receive", {"record_id": "brackwater-bs2860-36", "quantity": 1, "location": SHELF, "at": "2020-01-01"},
     "error: body:at: unknown argument"),
    ("release", {"reservation_id": 999}, "error: "),
])
def test_stock_mistakes_answer_422_and_write_nothing(client, demo_db, verb, body, line):
    before = movement_total(demo_db)
    r = client.post(f"/api/stock/{verb}", json=body)
    assert r.status_code == 422, r.text
    doc = r.json()
    assert doc["lines"] and doc["lines"][0].startswith(line), doc
    assert movement_total(demo_db) == before


def test_stock_body_shape_errors(client):
    r = client.post("/api/stock/take", content=b"[1, 2]", headers={"content-type": "application/json"})
    assert r.status_code == 422 and "expected an object" in r.json()["lines"][0]
    r = client.post("/api/stock/take", content=b"{not json", headers={"content-type": "application/json"})
    assert r.status_code == 422 and "not valid JSON" in r.json()["lines"][0]
    r = client.post("/api/stock/take", content=b"record_id=x", headers={"content-type": "application/x-www-form-urlencoded"})
    assert r.status_code == 415
    r = client.post("/api/stock/steal", json={})
    assert r.status_code == 404 and "no stock verb 'steal'" in r.json()["error"]
    r = client.post("/api/stock/take", content=b"{" + b" " * (70 * 1024) + b"}", headers={"content-type": "application/json"})
    assert r.status_code == 422 and "KiB" in r.json()["lines"][0]


def test_openapi_describes_the_contract(client):
    doc = client.get("/api/openapi.json").json()
    assert doc["openapi"].startswith("3.")
    for path in ("/api/health", "/api/motors", "/api/gearheads", "/api/records/{record_id}", "/api/select",
                 "/api/stock/{verb}"):
        assert path in doc["paths"], path
    assert "application/toml" in doc["paths"]["/api/select"]["post"]["requestBody"]["content"]
    assert "422" in {str(k) for k in doc["paths"]["/api/stock/{verb}"]["post"]["responses"]}


def test_unknown_api_path_is_json_404(client):
    r = client.get("/api/nothing")
    assert r.status_code == 404 and r.headers["content-type"].startswith("application/json")
