"""The pages: every route with Starlette's test client, their forms and their error paths."""
from __future__ import annotations

import io
import re
import time

import pytest

from webhelp import QUERIES, csrf_of, movement_total


def test_home_redirects_to_the_catalogue(client):
    r = client.get("/")
    assert r.status_code == 307 and r.headers["location"] == "/catalogue"


def _ids(html: str) -> list:
    return re.findall(r'<tr><td><a href="/records/([^"?]+)\?', html)


def test_catalogue_filters_in_display_units_sort_and_pages(client, demo_db):
    import catalog

    motors = catalog.open(demo_db).motors()
    r = client.get("/catalogue")
    assert r.status_code == 200
    assert "mass [g]" in r.text and f"{len(motors)} motors" in r.text
    expected = motors[motors["mass"] <= 0.2].sort_values(["mass", "id"], ascending=[False, True])
    r = client.get("/catalogue", params={"mass.max": "200", "sort": "mass", "order": "desc", "per": 500})
    assert f"{len(expected)} motors match" in r.text
    assert _ids(r.text) == list(expected["id"])
    kg = client.get("/catalogue", params={"mass.max": "0.2 kg", "sort": "mass", "order": "desc", "per": 500})
    assert _ids(kg.text) == list(expected["id"])
    page2 = client.get("/catalogue", params={"per": 25, "page": 2})
    assert _ids(page2.text) == sorted(motors["id"])[25:50]
    assert "page 2 of 3" in page2.text
    imperial = client.get("/catalogue", params={"units": "imperial"})
    assert "stall_torque [oz·in]" in imperial.text or "stall_torque [ozf·in]" in imperial.text


def test_catalogue_htmx_answers_the_results_only(client):
    r = client.get("/catalogue", params={"q": "sorvanto"}, headers={"HX-Request": "true", "HX-Target": "results"})
    assert r.status_code == 200
    assert "<html" not in r.text and 'id="records"' in r.text
    assert all(i.startswith("sorvanto") for i in _ids(r.text)) and _ids(r.text)


def test_catalogue_gearheads_and_text_fields(client):
    r = client.get("/catalogue", params={"kind": "gearheads", "mount": "F22"})
    assert r.status_code == 200 and "ratio" in r.text


@pytest.mark.parametrize("params, line", [
    ({"mass.max": "heavy"}, "error: mass.max: &#39;heavy&#39;"),
    ({"kind": "robots"}, "error: kind: &#39;robots&#39;, expected motors or gearheads"),
    ({"page": "x"}, "error: page: &#39;x&#39; is not a whole number"),
    ({"colour.min": "1"}, "error: colour.min: no such filter"),
    ({"sort": "colour"}, "error: sort: &#39;colour&#39; is not a motor field"),
])
def test_catalogue_mistakes_are_shown_as_lines(client, params, line):
    r = client.get("/catalogue", params=params)
    assert r.status_code == 422
    assert line in r.text and "Traceback" not in r.text


def test_record_page(client):
    r = client.get("/records/vaskeline-vk-c2232-24")
    assert r.status_code == 200
    text = r.text
    assert "Consistency flags" in text and "torque constant = 1/speed constant" in text
    assert "given: &#39;" in text and "derived: " in text
    assert 'src="/records/vaskeline-vk-c2232-24/diagram.svg' in text
    assert "On the shelf" in text and "History of the values" in text


def test_record_diagram_and_its_errors(client):
    r = client.get("/records/sorvanto-00341-06/diagram.svg")
    assert r.status_code == 200 and r.headers["content-type"].startswith("image/svg+xml")
    assert r.text.lstrip().startswith("<?xml") and "<svg" in r.text
    r = client.get("/records/halvard-hp-pl16-19/diagram.svg")
    assert r.status_code == 422 and "is a gearhead" in r.text
    assert client.get("/records/no-such/diagram.svg").status_code == 404


def test_record_page_says_how_the_selection_reads_brushless_constants(client):
    # the same line as `motorshelf show` (RecordView.basis_note); a brushed record has none
    r = client.get("/records/vaskeline-vk-bi4260-36")
    assert r.status_code == 200
    assert "Selection reads the constants: brushless constants stated DC-equivalent" in r.text
    assert "Selection reads the constants" not in client.get("/records/vaskeline-vk-c2232-24").text


def test_record_unknown(client):
    r = client.get("/records/sorvanto-00341-07")
    assert r.status_code == 404 and "no record with id" in r.text and 'href="/records/sorvanto-00341-06"' in r.text


def _run(client, text, source="lift_axis.toml", **more):
    token = csrf_of(client, "/select")
    return client.post("/select", data={"csrf": token, "envelope": text, "source": source, "action": "run", **more})


def test_selection_from_the_form(client):
    page = client.get("/select")
    assert page.status_code == 200 and "<textarea" in page.text
    example = client.get("/select", params={"example": "lift_axis"})
    assert 'name = &#34;lift_axis&#34;' in example.text or "name = &quot;lift_axis&quot;" in example.text
    text = (QUERIES / "lift_axis.toml").read_text(encoding="utf-8")
    r = _run(client, text, top="3")
    assert r.status_code == 303
    run = r.headers["location"]
    page = client.get(run)
    assert page.status_code == 200
    assert 'id="shortlist"' in page.text and "Rejections per check" in page.text and "Caution." in page.text
    first = re.search(r'data-candidate="([^"]+)"', page.text).group(1)
    ex = client.get(f"{run}/explain", params={"candidate": first}, headers={"HX-Request": "true"})
    assert ex.status_code == 200 and f"candidate {first}" in ex.text and "margins" in ex.text
    svg = client.get(f"{run}/diagram/{first}.svg")
    assert svg.status_code == 200 and "<svg" in svg.text
    compare = client.get(f"{run}/compare.svg")
    assert compare.status_code == 200 and "<svg" in compare.text and 'compare.svg' in page.text
    xlsx = client.get(f"{run}/selection.xlsx", params={"units": "si"})
    assert xlsx.status_code == 200 and "attachment" in xlsx.headers["content-disposition"]
    import openpyxl

    book = openpyxl.load_workbook(io.BytesIO(xlsx.content))
    assert book.sheetnames[:2] == ["shortlist", "rejected"] and "cautions" in book.sheetnames
    report = client.get(f"{run}/report.html")
    assert report.status_code == 200 and "Motor selection: lift_axis" in report.text
    assert "sandbox" in report.headers["content-security-policy"]
    env = client.get(f"{run}/envelope.toml")
    assert env.text == text.replace("\r\n", "\n")


def test_selection_explain_errors(client):
    r = _run(client, (QUERIES / "lift_axis.toml").read_text(encoding="utf-8"))
    run = r.headers["location"]
    bad = client.get(f"{run}/explain", params={"candidate": "nobody@1"}, headers={"HX-Request": "true"})
    assert bad.status_code == 404 and "no candidate &#39;nobody@1&#39;" in bad.text and "<html" not in bad.text
    missing = client.get(f"{run}/explain")
    assert missing.status_code == 422
    assert client.get("/select/runs/nothing-here").status_code == 404
    assert client.get("/select/runs/nothing-here/selection.xlsx").status_code == 404
    assert client.get(f"{run}/diagram/x.svg", params={"side": "left"}).status_code == 422


def test_selection_mistakes_keep_the_text(client):
    text = (QUERIES / "lift_axis.toml").read_text(encoding="utf-8").replace('min_voltage = "22 V"', 'min_voltage = "22 N*m"')
    r = _run(client, text, source="my axis.toml")
    assert r.status_code == 422
    assert "error: my_axis.toml:supply.min_voltage:" in r.text
    assert "22 N*m" in r.text   # the text stays in the editor
    r = _run(client, "", source="e.toml")
    assert r.status_code == 422 and "error: e.toml: empty" in r.text
    r = _run(client, text, top="zero")
    assert r.status_code == 422 and "error: top: &#39;zero&#39;" in r.text
    assert client.get("/select", params={"example": "nope"}).status_code == 404


def test_selection_upload_loads_or_runs(client):
    token = csrf_of(client, "/select")
    data = (QUERIES / "water_pump.toml").read_bytes()
    r = client.post("/select", data={"csrf": token, "envelope": "", "action": "load"},
                    files={"file": ("pump.toml", data, "application/toml")})
    assert r.status_code == 200 and "water_pump" in r.text and 'value="pump.toml"' in r.text
    r = client.post("/select", data={"csrf": token, "envelope": "", "action": "run"},
                    files={"file": ("pump.toml", data, "application/toml")})
    assert r.status_code == 303
    r = client.post("/select", data={"csrf": token, "envelope": "", "action": "load"},
                    files={"file": ("bad.toml", b"\xff\xfe", "application/toml")})
    assert r.status_code == 422 and "not UTF-8" in r.text


def test_shelf_pages(client):
    r = client.get("/shelf")
    assert r.status_code == 200
    for part in ("What is where", "Low stock", "Open reservations", "Latest movements", 'id="form-take"',
                 'id="form-release"', 'id="form-count"'):
        assert part in r.text, part
    r = client.get("/shelf", params={"location": "lab 2"})
    assert "Field kit" not in r.text.split("What is where")[1].split("Low stock")[0]
    labels = client.get("/shelf/labels", params={"location": "Lab 2"})
    assert labels.status_code == 200
    assert labels.text.count('src="data:image/svg+xml') == labels.text.count('class="label"') > 0
    assert "/shelf/item?record=" in labels.text and "http://127.0.0.1:8000/shelf/item" in labels.text


def test_take_from_the_item_page_changes_the_level(client, demo_db):
    rid, loc = "brackwater-bs2860-36", "Lab 2 / cabinet A / bin 7"
    page = client.get("/shelf/item", params={"record": rid, "location": loc, "condition": "new"})
    assert page.status_code == 200
    on_hand = int(re.search(r'id="on-hand">(\d+)<', page.text).group(1))
    token = re.search(r'name="csrf" value="([^"]+)"', page.text).group(1)
    nxt = re.search(r'name="next" value="([^"]+)"', page.text).group(1).replace("&amp;", "&")
    before = movement_total(demo_db)
    r = client.post("/shelf/take", data={"csrf": token, "next": nxt, "record_id": rid, "quantity": "1",
                                         "location": loc, "condition": "new", "project": "arm", "person": "Bo"})
    assert r.status_code == 303 and "note=" in r.headers["location"]
    after = client.get(r.headers["location"])
    assert int(re.search(r'id="on-hand">(\d+)<', after.text).group(1)) == on_hand - 1
    assert "took 1" in after.text or "now" in after.text
    assert movement_total(demo_db) == before - 1
    assert "motorshelf_person=Bo" in r.headers.get("set-cookie", "")


def test_shelf_form_mistakes(client, demo_db):
    token = csrf_of(client)
    before = movement_total(demo_db)
    r = client.post("/shelf/take", data={"csrf": token, "record_id": "brackwater-bs2860-36", "quantity": "500",
                                         "location": "Lab 2 / cabinet A / bin 7", "project": "x", "person": "Bo"})
    assert r.status_code == 422 and "error: " in r.text
    r = client.post("/shelf/take", data={"csrf": token, "record_id": "brackwater-bs2860-36"})
    assert r.status_code == 422 and "error: " in r.text
    r = client.post("/shelf/release", data={"csrf": token, "reservation_id": "two"})
    assert r.status_code == 422 and "is not a reservation number" in r.text
    r = client.post("/shelf/steal", data={"csrf": token})
    assert r.status_code == 422 and "no shelf form" in r.text
    assert movement_total(demo_db) == before
    assert client.get("/shelf/item").status_code == 422


def test_release_and_count_forms(client, demo_db):
    import catalog

    token = csrf_of(client)
    res = catalog.open(demo_db).stock_reservations()
    rid = int(res["reservation_id"].iloc[0])
    r = client.post("/shelf/release", data={"csrf": token, "reservation_id": str(rid), "person": "Bo"})
    assert r.status_code == 303
    assert catalog.open(demo_db).stock_reservations().empty
    r = client.post("/shelf/count", data={"csrf": token, "record_id": "brackwater-bs2860-36", "counted": "7",
                                          "location": "Lab 2 / cabinet A / bin 7", "person": "Bo"})
    assert r.status_code == 303
    items = catalog.open(demo_db).stock_list(record_id="brackwater-bs2860-36")
    assert int(items[items["location"] == "Lab 2 / cabinet A / bin 7"]["on_hand"].sum()) == 7


GOOD = "manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],torque_constant [mN*m/A]\n" \
       "Upload Test,UT-1,24,2.5,30\nUpload Test,UT-2,12,1.2,15\n"
BAD = "manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],torque_constant [mN*m/A]\n" \
      "Upload Test,UT-3,24,2.5,30\nUpload Test,UT-4,twelve,1.2,15\n"


def _wait(client, location: str, timeout: float = 120.0) -> str:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        page = client.get(location + "/status")
        assert page.status_code == 200
        if 'id="job-state"' in page.text:
            return client.get(location).text
        time.sleep(0.1)
    raise AssertionError("the import did not finish")


def _upload(client, files, **fields):
    token = csrf_of(client, "/import")
    return client.post("/import", data={"csrf": token, **fields},
                       files=[("files", (name, text.encode(), "text/csv")) for name, text in files])


def test_import_a_valid_file(client, demo_db):
    import catalog

    assert client.get("/import").status_code == 200
    r = _upload(client, [("upload_motors.csv", GOOD)], action="import")
    assert r.status_code == 303
    page = _wait(client, r.headers["location"])
    assert "done" in page and "2 record(s) created" in page
    assert "upload_motors.csv: motors, 2 row(s), 2 imported" in page
    assert len(catalog.open(demo_db).sql("SELECT * FROM records WHERE manufacturer = 'Upload Test'")) == 2
    assert "upload_motors.csv" in client.get("/import").text   # the recent imports


def test_import_a_bad_file_stores_nothing(client, demo_db):
    from conftest_snapshot import snapshot

    before = snapshot(demo_db)
    r = _upload(client, [("bad_motors.csv", BAD)], action="import")
    page = _wait(client, r.headers["location"])
    assert "rejected" in page and "error: bad_motors.csv:3:nominal_voltage:" in page
    assert "nothing was imported" in page and "motorshelf-upload-" not in page
    assert snapshot(demo_db) == before


def test_import_keep_valid_and_check_only(client, demo_db):
    import catalog

    r = _upload(client, [("bad_motors.csv", BAD)], action="validate")
    page = _wait(client, r.headers["location"])
    assert "error: bad_motors.csv:3:nominal_voltage:" in page
    assert catalog.open(demo_db).sql("SELECT count(*) AS n FROM records WHERE part_number = 'UT-3'")["n"][0] == 0
    r = _upload(client, [("bad_motors.csv", BAD)], action="import", keep_valid="1")
    location = r.headers["location"]
    page = _wait(client, location)
    assert "1 record(s) created" in page and "rejected-rows.csv" in page
    rejects = client.get(location + "/rejected-rows.csv")
    assert rejects.status_code == 200 and "UT-4" in rejects.text and "UT-3" not in rejects.text


def test_import_form_mistakes(client):
    token = csrf_of(client, "/import")
    r = client.post("/import", data={"csrf": token, "action": "import"})
    assert r.status_code == 422 and "error: files: missing" in r.text
    r = _upload(client, [("notes.txt", "x")], action="import")
    assert r.status_code == 422 and "error: notes.txt: extension &#39;.txt&#39;" in r.text
    r = client.post("/import", content=b"x", headers={"content-length": str(200 * 2**20),
                                                      "content-type": "multipart/form-data; boundary=b"})
    assert r.status_code == 413 and "expected at most 128 MiB" in r.text
    assert client.get("/import/jobs/nothing").status_code == 404
    assert client.get("/import/jobs/nothing/status").status_code == 404


def test_unknown_page_is_404(client):
    r = client.get("/nowhere")
    assert r.status_code == 404 and "<html" in r.text


def test_uploads_are_removed_when_the_server_stops(demo_db):
    from webhelp import make_client

    with make_client(demo_db) as c:
        r = _upload(c, [("upload_motors.csv", GOOD)], action="validate")
        _wait(c, r.headers["location"])
        folder = c.app.state.jobs.recent()[0].folder
        assert (folder / "upload_motors.csv").exists()
    assert not folder.exists()
