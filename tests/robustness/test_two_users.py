"""One catalogue shared by several users: whoever opens it first must not lock the others out.

The lock file beside the catalogue (``<catalogue>.lock``, catalog/store: FileLock) is
created by whoever opens the catalogue first.  Made with that user's umask (0644), it kept
every other user from writing ("cannot create its lock file: Permission denied") although
the catalogue itself was 0666 in a 0777 folder.  It is now made with the catalogue's
permissions and group, and a lock file another user made without write access for us is
still used (``flock`` needs no write access).

Tests run as root; two other users are made with ``os.setuid`` in forked children
(tests/robustness/conftest.py: as_user).
"""
from __future__ import annotations

import os
import shutil
import stat
import tempfile
from pathlib import Path

import pytest

import catalog
from tests.robustness.conftest import GOOD_MOTORS, SHARED_GROUP, USER_A, USER_B, as_user, needs_root

MORE = "manufacturer,part_number,stall_torque [mNm]\nShared Motors,S-{n},{n}\n"


@pytest.fixture
def shared(tmp_path):
    """A folder every user may write (0777, outside pytest's private 0700 tree) holding a
    catalogue with a few records, made by root, and a supplier file for each user."""
    needs_root()
    folder = Path(tempfile.mkdtemp(prefix="motorshelf-shared-"))
    folder.chmod(0o777)
    db = folder / "cat.duckdb"
    data = folder / "good.csv"
    data.write_text(GOOD_MOTORS, encoding="utf-8")
    cat = catalog.open(db)
    cat.import_([data])
    cat.motors()  # every lazy import is done before the children fork (they cannot read /root)
    cat.summary()
    for n in (1, 2, 3):
        f = folder / f"more{n}.csv"
        f.write_text(MORE.format(n=n), encoding="utf-8")
        f.chmod(0o644)
    yield folder, db
    shutil.rmtree(folder, ignore_errors=True)


def import_as(db, name):
    def run():
        report = catalog.open(db).import_([db.with_name(name)])
        return report.created
    return run


def count_as(db):
    return lambda: len(catalog.open(db).motors())


def mode(path) -> int:
    return stat.S_IMODE(os.stat(path).st_mode)


def test_a_second_user_can_write_after_the_first_made_the_lock_file(shared):
    folder, db = shared
    db.chmod(0o666)
    os.chown(db, USER_A, USER_A)
    db.with_name(db.name + ".lock").unlink()  # e.g. restored from a backup: nobody has opened it yet
    assert as_user(USER_A, count_as(db)) == 3  # the first user only reads, with umask 022 ...
    lock = db.with_name(db.name + ".lock")
    assert mode(lock) == 0o666  # ... and the lock file takes the catalogue's permissions
    assert as_user(USER_B, import_as(db, "more1.csv")) == 1  # the second user writes
    assert as_user(USER_A, import_as(db, "more2.csv")) == 1  # and the first again
    assert len(catalog.open(db).motors()) == 5


def test_the_lock_file_takes_the_catalogues_group(shared):
    folder, db = shared
    os.chown(db, USER_A, SHARED_GROUP)
    db.chmod(0o660)  # the catalogue is for its group only
    db.with_name(db.name + ".lock").unlink()
    # both users are in the shared group, each with a primary group of their own
    assert as_user(USER_A, import_as(db, "more1.csv"), gid=USER_A, groups=[SHARED_GROUP]) == 1
    lock = db.with_name(db.name + ".lock")
    assert (os.stat(lock).st_gid, mode(lock)) == (SHARED_GROUP, 0o660)
    assert as_user(USER_B, import_as(db, "more2.csv"), gid=USER_B, groups=[SHARED_GROUP]) == 1
    assert as_user(USER_B, count_as(db), gid=USER_B, groups=[SHARED_GROUP]) == 5


def test_a_lock_file_left_without_write_access_for_others_is_still_used(shared):
    """A lock file made before (0644, another user's): flock works on a file opened for reading."""
    folder, db = shared
    db.chmod(0o666)
    lock = db.with_name(db.name + ".lock")
    os.chown(lock, USER_A, USER_A)
    lock.chmod(0o644)
    assert as_user(USER_B, import_as(db, "more3.csv")) == 1
    assert as_user(USER_B, count_as(db)) == 4


def test_a_user_who_may_not_write_the_catalogue_is_told_so(shared):
    folder, db = shared
    db.chmod(0o644)  # root's catalogue, readable by all
    with pytest.raises(AssertionError) as info:
        as_user(USER_B, import_as(db, "more1.csv"))
    assert "StoreError" in str(info.value) and "Permission denied" in str(info.value)
    assert as_user(USER_B, count_as(db)) == 3  # reading is fine
