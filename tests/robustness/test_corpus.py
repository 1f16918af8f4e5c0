"""Walk tests/bad_inputs/*/expected.yaml: every committed bad input, its exact message,
exit code 2 and an unchanged catalogue (see tests/bad_inputs/README.md)."""
from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from tests.conftest import table_snapshot
from tests.robustness.conftest import CORPUS, assert_clean_failure, error_lines, run_cli


def _import_args(folder: Path, spec: dict, db: Path) -> list:
    args = ["--db", db, "import", folder / spec["file"]]
    if spec.get("mapping"):
        args += ["--mapping", folder / spec["mapping"]]
    return args


def _validate_args(folder: Path, spec: dict, db: Path) -> list:
    args = ["--db", db, "validate", folder / spec["file"]]
    if spec.get("mapping"):
        args += ["--mapping", folder / spec["mapping"]]
    return args


def _select_args(folder: Path, spec: dict, db: Path) -> list:
    return ["--db", db, "select", folder / spec["file"]]


def _stock_import_args(folder: Path, spec: dict, db: Path) -> list:
    return ["--db", db, "stock", "import", folder / spec["file"]]


def _stock_count_args(folder: Path, spec: dict, db: Path) -> list:
    """A count without --apply reads the file as an import does and must find the same problems."""
    return ["--db", db, "stock", "count", folder / spec["file"]]


def _cli_args(folder: Path, spec: dict, db: Path) -> list:
    """A command's arguments, one per line of the case's file (no file of the case is read by it)."""
    lines = (folder / spec["file"]).read_text(encoding="utf-8").splitlines()
    return ["--db", db, *lines]


#: runner name (``runner:`` of an expected.yaml) -> (command, matching check command or None).
RUNNERS = {"import": (_import_args, _validate_args),
           "select": (_select_args, None),
           "stock": (_stock_import_args, _stock_count_args),
           "cli": (_cli_args, None)}


def _areas():
    for path in sorted(CORPUS.glob("*/expected.yaml")):
        doc = yaml.safe_load(path.read_text(encoding="utf-8"))
        yield path.parent, doc


def _cases():
    out = []
    for folder, doc in _areas():
        for name, spec in (doc.get("cases") or {}).items():
            spec = {"file": name, **spec}
            out.append(pytest.param(folder, doc["runner"], spec, id=f"{folder.name}/{name}"))
    return out


CASES = _cases()


def _fill(line: str, subst: dict) -> str:
    """Put the paths in for {file}, {mapping} and {db} (other braces are message text)."""
    for key, value in subst.items():
        line = line.replace("{" + key + "}", value)
    return line


def test_the_corpus_is_big_enough_and_complete():
    """At least 40 cases; every file of an area is a case (or the shared data file of one)."""
    assert len(CASES) >= 40
    for folder, doc in _areas():
        cases = doc.get("cases") or {}
        used = {spec.get("file", name) for name, spec in cases.items()} | {
            spec["mapping"] for spec in cases.values() if spec.get("mapping")}
        on_disk = {p.name for p in folder.iterdir() if p.name != "expected.yaml"}
        assert on_disk == used, f"{folder.name}: files without a case {on_disk - used}, cases without a file {used - on_disk}"
        for name, spec in cases.items():
            assert spec.get("why"), f"{folder.name}/{name}: say why the file is bad"
            assert ("errors" in spec) != ("created" in spec), f"{folder.name}/{name}: errors or created, not both"


@pytest.mark.parametrize("folder, runner, spec", CASES)
def test_bad_input(folder, runner, spec, prefilled, template_snapshot):
    if runner not in RUNNERS:
        pytest.skip(f"no runner {runner!r} yet in tests/robustness/test_corpus.py:RUNNERS")
    command, validate = RUNNERS[runner]
    subst = {"file": str(folder / spec["file"]), "db": str(prefilled),
             "mapping": str(folder / spec["mapping"]) if spec.get("mapping") else ""}
    before = template_snapshot  # prefilled is a byte copy of the template
    result = run_cli(*command(folder, spec, prefilled))
    if "created" in spec:  # a file that must be read correctly
        assert result.exit_code == spec.get("exit", 0), result.output
        assert error_lines(result) == []
        after = table_snapshot(prefilled)
        assert len(after["records"]) == len(before["records"]) + spec["created"]
        return
    assert_clean_failure(result, spec.get("exit", 2))
    expected = [_fill(line, subst) for line in spec["errors"]]
    assert error_lines(result) == expected
    assert table_snapshot(prefilled) == before
    if validate is not None:
        checked = run_cli(*validate(folder, spec, prefilled))
        assert_clean_failure(checked, spec.get("exit", 2))
        problems = [line for line in expected if line.startswith((subst["file"], subst["mapping"] or "\0"))]
        assert [line for line in error_lines(checked) if line in problems] == problems
