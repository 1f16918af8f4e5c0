"""Each file of one import with its own mapping: FILE=MAPPING, an import manifest, --mapping."""
from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from catalog.cli import cli
from tests.conftest import table_snapshot

SAMPLE = Path(__file__).resolve().parents[2] / "sample_catalog"


@pytest.fixture
def suppliers(tmp_path):
    """Two suppliers' files with their own headers, their mappings, and a file of canonical headers."""
    for name in ("sorvanto_motors.csv", "sorvanto.mapping.yaml", "sorvanto_gearheads.xlsx",
                 "sorvanto_gearheads.mapping.yaml", "vaskeline_motors.csv", "manifest.yaml"):
        shutil.copy(SAMPLE / name, tmp_path / name)
    return tmp_path


def run(*args):
    r = CliRunner().invoke(cli, [str(a) for a in args])
    assert "Traceback" not in r.output
    return r


def test_file_equals_mapping_each_file_its_own(suppliers, tmp_path):
    db = tmp_path / "c.duckdb"
    s = suppliers
    r = run("--db", db, "import", f"{s / 'sorvanto_motors.csv'}={s / 'sorvanto.mapping.yaml'}",
            f"{s / 'sorvanto_gearheads.xlsx'}={s / 'sorvanto_gearheads.mapping.yaml'}", s / "vaskeline_motors.csv")
    assert r.exit_code == 0, r.output
    lines = r.output.splitlines()
    assert f"{s / 'sorvanto_motors.csv'}: motors, 16 row(s), 16 imported, 256 value(s) converted to SI, " \
           f"mapping {s / 'sorvanto.mapping.yaml'} (given with the file) [ok]" in lines
    assert any(line.startswith(f"{s / 'sorvanto_gearheads.xlsx'}[Gear units]: gearheads, 6 row(s), 6 imported")
               and line.endswith(f"mapping {s / 'sorvanto_gearheads.mapping.yaml'} (given with the file) [ok]")
               for line in lines)
    assert any(line.startswith(f"{s / 'vaskeline_motors.csv'}: motors") and
               "canonical headers (no mapping) [ok]" in line for line in lines)
    import catalog

    cat = catalog.open(db)
    assert len(cat.motors()) == 32 and len(cat.gearheads()) == 6
    # the gearhead XLSX was read with its own profile, not the motor CSV's
    assert cat.gearheads()["manufacturer"].unique().tolist() == ["Sorvanto Micromotors Oy"]


def test_one_mapping_for_all_misreads_the_other_supplier(suppliers, tmp_path):
    """Why each file needs its own: the motor profile applied to the gearhead workbook refuses it."""
    db = tmp_path / "c.duckdb"
    s = suppliers
    r = run("--db", db, "import", s / "sorvanto_motors.csv", s / "sorvanto_gearheads.xlsx",
            "--mapping", s / "sorvanto.mapping.yaml")
    assert r.exit_code == 2 and "nothing was imported" in r.output


def test_manifest_chooses_by_pattern_and_own_mapping_wins(suppliers, tmp_path):
    import catalog

    s = suppliers
    manifest = s / "import.yaml"
    manifest.write_text("files:\n"
                        "  - file: 'sorvanto_*.csv'\n    mapping: sorvanto.mapping.yaml\n"
                        "  - file: '*.xlsx'\n    mapping: sorvanto_gearheads.mapping.yaml\n"
                        "  - file: 'vaskeline_*'\n", encoding="utf-8")
    db = tmp_path / "c.duckdb"
    r = run("--db", db, "import", s / "sorvanto_motors.csv", s / "sorvanto_gearheads.xlsx",
            s / "vaskeline_motors.csv", "--manifest", manifest)
    assert r.exit_code == 0, r.output
    assert f"mapping {s / 'sorvanto.mapping.yaml'} (manifest {manifest})" in r.output
    assert f"mapping {s / 'sorvanto_gearheads.mapping.yaml'} (manifest {manifest})" in r.output
    assert len(catalog.open(db).motors()) == 32
    # the shipped demo manifest is an import manifest too
    report = catalog.open(tmp_path / "d.duckdb").validate(
        [s / "sorvanto_motors.csv", s / "sorvanto_gearheads.xlsx"], manifest=s / "manifest.yaml")
    assert report.ok and [f.mapping_from for f in report.files] == [f"manifest {s / 'manifest.yaml'}"] * 2
    # a file's own mapping before the manifest's, the manifest's before --mapping
    from catalog.ingest.manifest import mappings_for

    got = mappings_for(["a.csv", str(s / "sorvanto_motors.csv"), "other.json"],
                       {"a.csv": "own.yaml", str(s / "sorvanto_motors.csv"): None, "other.json": None},
                       manifest)
    assert [(m, why.split(" ")[0]) for _, m, why in got] == [
        ("own.yaml", "given"), (str(s / "sorvanto.mapping.yaml"), "manifest"), (None, "")]
    got = mappings_for(["x.json"], "common.yaml", manifest)
    assert got == [("x.json", "common.yaml", "--mapping")]


def test_a_file_named_with_an_equals_sign_is_a_file(suppliers):
    from catalog.ingest.manifest import split_file_argument

    odd = suppliers / "a=b.csv"
    odd.write_text("x", encoding="utf-8")
    assert split_file_argument(str(odd)) == (str(odd), None)
    assert split_file_argument("m.csv=p.yaml") == ("m.csv", "p.yaml")
    assert split_file_argument("dir/m.csv=../p.yaml") == ("dir/m.csv", "../p.yaml")


@pytest.mark.parametrize("text, lines", [
    ("files:\n  - name: a.csv\n", ["files/0: 'file' is a required property",
                                    "files/0: Additional properties are not allowed ('name' was unexpected)"]),
    ("files: []\n", ["files: [] should be non-empty"]),
    ("files:\n  - file: a.csv\n    mapping: nowhere.yaml\n", ["files/0/mapping: mapping profile 'nowhere.yaml' "
                                                              "not found beside the manifest"]),
    ("files: [\n", ["not a valid YAML import manifest"]),
])
def test_a_bad_manifest_is_refused_with_one_line_per_problem(suppliers, tmp_path, text, lines):
    manifest = suppliers / "bad.yaml"
    manifest.write_text(text, encoding="utf-8")
    db = tmp_path / "c.duckdb"
    run("--db", db, "import", suppliers / "vaskeline_motors.csv")
    before = table_snapshot(db)
    r = run("--db", db, "import", suppliers / "sorvanto_motors.csv", "--manifest", manifest)
    assert r.exit_code == 2
    errors = [line for line in r.output.splitlines() if line.startswith("error:")]
    for want in lines:
        assert any(want in e for e in errors), (want, errors)
    assert all(e.startswith(f"error: {manifest}") for e in errors)
    assert table_snapshot(db) == before
