"""Planted links and special files where motorshelf makes its own files.

Nothing motorshelf writes beside the catalogue or at an ``--out`` path may follow a
symbolic link somebody planted there, or replace a link, a device or a FIFO without
saying so: a link could make it create, lock or overwrite any file its user may write.
"""
from __future__ import annotations

import os

import pytest

from tests.conftest import table_snapshot
from tests.robustness.conftest import GOOD_MOTORS, assert_clean_failure, error_lines, run_cli


# -- the lock file beside the catalogue ------------------------------------------------------------

@pytest.mark.parametrize("target_exists", [False, True], ids=["to-a-new-file", "to-a-file"])
def test_a_symlinked_lock_file_is_not_followed(prefilled, template_snapshot, tmp_path, target_exists):
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    target = elsewhere / "precious.txt"
    if target_exists:
        target.write_text("keep me\n", encoding="utf-8")
    lock = prefilled.with_name(prefilled.name + ".lock")
    lock.unlink(missing_ok=True)
    lock.symlink_to(target)
    data = tmp_path / "more.csv"
    data.write_text(GOOD_MOTORS.replace("G-", "L-"), encoding="utf-8")
    result = run_cli("--db", prefilled, "import", data)
    assert_clean_failure(result)
    assert error_lines(result) == [
        f"{prefilled}: cannot write the catalogue (its lock file {lock.name}: it is a symbolic link, expected "
        "a plain file; remove the link); nothing was changed"]
    assert table_snapshot(prefilled) == template_snapshot
    assert target.exists() == target_exists  # never created through the link ...
    if target_exists:
        assert target.read_text(encoding="utf-8") == "keep me\n"  # ... nor written
    assert lock.is_symlink()
    listed = run_cli("--db", prefilled, "list", "motors", "--format", "csv")  # reading still works
    assert listed.exit_code == 0 and "shelf-g-100" in listed.output
    assert target.exists() == target_exists
    lock.unlink()  # once the link is gone, writing works again
    assert run_cli("--db", prefilled, "import", data).exit_code == 0


def test_a_fifo_as_lock_file_is_refused_without_hanging(prefilled, template_snapshot, tmp_path):
    lock = prefilled.with_name(prefilled.name + ".lock")
    lock.unlink(missing_ok=True)
    os.mkfifo(lock)
    data = tmp_path / "more.csv"
    data.write_text(GOOD_MOTORS.replace("G-", "F-"), encoding="utf-8")
    result = run_cli("--db", prefilled, "import", data)
    assert_clean_failure(result)
    assert error_lines(result) == [
        f"{prefilled}: cannot write the catalogue (its lock file {lock.name}: it is not a plain file; remove it); "
        "nothing was changed"]
    assert table_snapshot(prefilled) == template_snapshot
