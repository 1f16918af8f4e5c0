"""Files written for people (``--out``, ``--rejects``, reports, diagrams): made whole beside
their target and renamed over it, never through a planted link, never over a link, folder,
device or FIFO, never leaving a temporary file behind, one clear line when the file system
refuses (catalog/store/files.py).
"""
from __future__ import annotations

import os
import resource
import shutil
import signal
import subprocess
import tempfile
from pathlib import Path

import pytest

from tests.conftest import table_snapshot
from tests.robustness.conftest import (GOOD_MOTORS, PYTHON, USER_B, as_user, assert_clean_failure, error_lines,
                                       needs_root, run_cli)

ROOT = Path(__file__).resolve().parents[2]


def parts(folder) -> list:
    return sorted(p.name for p in Path(folder).iterdir() if p.name.endswith(".part"))


# -- the temporary file ----------------------------------------------------------------------------

def test_a_planted_temporary_name_is_not_followed(prefilled, tmp_path):
    """A link under the name older versions used for the temporary file (``.NAME.part``)."""
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me\n", encoding="utf-8")
    (tmp_path / ".planted.csv.part").symlink_to(victim)
    out = tmp_path / "planted.csv"
    result = run_cli("--db", prefilled, "export", "motors", "--out", out)
    assert result.exit_code == 0, result.output
    assert victim.read_text(encoding="utf-8") == "keep me\n"
    assert not out.is_symlink() and out.read_text(encoding="utf-8").startswith("id,")
    assert (tmp_path / ".planted.csv.part").is_symlink()  # somebody else's link: left alone


@pytest.mark.parametrize("fmt", ["csv", "xlsx", "json", "parquet"])
def test_each_export_leaves_no_temporary_file_and_keeps_the_permissions(prefilled, tmp_path, fmt):
    out = tmp_path / f"motors.{fmt}"
    out.write_bytes(b"old")
    out.chmod(0o640)
    result = run_cli("--db", prefilled, "export", "motors", "--out", out)
    assert result.exit_code == 0, result.output
    assert out.stat().st_size > 3 and (out.stat().st_mode & 0o777) == 0o640
    assert parts(tmp_path) == []


# -- what is at the --out path ---------------------------------------------------------------------

def special(path: Path, kind: str, target: Path) -> str:
    if kind == "link":
        path.symlink_to(target)
        return f"is a symbolic link to {str(target)!r}"
    if kind == "dangling link":
        path.symlink_to(target.with_name("nothing-here"))
        return f"is a symbolic link to {str(target.with_name('nothing-here'))!r}"
    if kind == "fifo":
        os.mkfifo(path)
        return "is a FIFO"
    raise ValueError(kind)


@pytest.mark.parametrize("kind", ["link", "dangling link", "fifo"])
def test_export_never_replaces_a_link_or_a_fifo(prefilled, tmp_path, kind):
    victim = tmp_path / "victim.csv"
    victim.write_text("keep me\n", encoding="utf-8")
    out = tmp_path / "out.csv"
    what = special(out, kind, victim)
    result = run_cli("--db", prefilled, "export", "motors", "--out", out)
    assert_clean_failure(result)
    assert error_lines(result) == [f"--out: {out}: {what}, expected a regular file or a new name; nothing was "
                                   "written (remove it or choose another name)"]
    assert victim.read_text(encoding="utf-8") == "keep me\n"
    assert not (tmp_path / "nothing-here").exists()
    assert os.path.lexists(out) and parts(tmp_path) == []


def test_report_and_diagrams_never_replace_a_link(tmp_path):
    import catalog
    from catalog.demo import build
    from catalog.errors import InputError
    from catalog.export import write_plots, write_report

    db = tmp_path / "demo.duckdb"
    build(db, out=lambda *a, **k: None)
    cat = catalog.open(db)
    sel = cat.select(ROOT / "queries" / "water_pump.toml", top=2)
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me\n", encoding="utf-8")
    report = tmp_path / "report.html"
    report.symlink_to(victim)
    with pytest.raises(InputError, match=r"^--out: .*report.html: is a symbolic link to "):
        write_report(sel, report, catalog=cat, plots=0)
    folder = tmp_path / "plots"
    folder.mkdir()
    (folder / "compare.png").symlink_to(victim)
    with pytest.raises(InputError, match=r"^--out: .*compare.png: is a symbolic link to "):
        write_plots(sel, folder, catalog=cat)
    assert victim.read_text(encoding="utf-8") == "keep me\n"
    assert parts(folder) == [] and parts(tmp_path) == []


# -- the file system refuses -------------------------------------------------------------------------

def test_out_on_a_full_disk(prefilled, tmp_path):
    """A real write error from the OS: RLIMIT_FSIZE in a subprocess (EFBIG, as ENOSPC would be)."""
    out = tmp_path / "big.xlsx"

    def no_room():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (1024, 1024))

    proc = subprocess.run([PYTHON, "-c", "import sys; from catalog.cli import main; main(sys.argv[1:])",
                           "--db", str(prefilled), "export", "motors", "--out", str(out)],
                          preexec_fn=no_room, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr, proc.stderr
    assert proc.stderr.splitlines() == [
        f"error: --out: {out}: cannot write it (File too large); nothing was written, free some space and try again"]
    assert not out.exists() and parts(tmp_path) == []


def test_out_into_a_folder_the_user_may_not_write(prefilled, tmp_path):
    needs_root()
    shared = Path(tempfile.mkdtemp(prefix="motorshelf-out-"))
    try:
        shared.chmod(0o755)
        db = shared / "cat.duckdb"
        shutil.copyfile(prefilled, db)
        db.chmod(0o644)
        closed = shared / "closed"
        closed.mkdir(mode=0o755)  # root's: others may not write here
        run_cli("--db", db, "export", "motors", "--out", shared / "warm.csv")  # lazy imports before the fork
        out = closed / "motors.csv"

        def export():
            result = run_cli("--db", db, "export", "motors", "--out", out)
            return result.exit_code, result.stderr
        code, err = as_user(USER_B, export)
        assert (code, err.splitlines()) == (2, [
            f"error: --out: {out}: cannot write it (Permission denied); nothing was written, choose a folder "
            "you may write"])
        assert list(closed.iterdir()) == []
    finally:
        shutil.rmtree(shared, ignore_errors=True)


# -- after a kill -------------------------------------------------------------------------------------

KILLED = """
import os, signal, sys
import catalog.export.writers as w
def half(tables, path, about=None):
    path.write_text("half a fi", encoding="utf-8")
    os.kill(os.getpid(), signal.SIGKILL)
w.write_csv = half   # the writer the format table names
from catalog.cli import main
main(sys.argv[1:])
"""


def test_a_temporary_file_left_by_a_kill_goes_with_the_next_write(prefilled, tmp_path):
    out = tmp_path / "motors.csv"
    proc = subprocess.run([PYTHON, "-c", KILLED, "--db", str(prefilled), "export", "motors", "--out", str(out)],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == -signal.SIGKILL
    left = parts(tmp_path)
    assert len(left) == 1 and left[0].startswith(".motors.csv.") and not out.exists()
    result = run_cli("--db", prefilled, "export", "motors", "--out", out)
    assert result.exit_code == 0, result.output
    assert parts(tmp_path) == [] and out.read_text(encoding="utf-8").startswith("id,")


# -- --rejects ---------------------------------------------------------------------------------------

BAD = """\
manufacturer,part_number,stall_torque [mNm],notes
Rejects Motors,R-1,5,fine
Rejects Motors,R-2,ten,"=HYPERLINK(""http://example.invalid"",""click"")"
Rejects Motors,@R-3,-4 oz,+1
"""


def test_rejects_never_overwrite_an_input_of_the_import(prefilled, template_snapshot, tmp_path):
    data = tmp_path / "bad.csv"
    data.write_text(BAD, encoding="utf-8")
    link = tmp_path / "alias.csv"
    link.symlink_to(data)
    for rejects, shown in ((data, data), (tmp_path / "." / "bad.csv", data), (link, data)):
        result = run_cli("--db", prefilled, "import", data, "--keep-valid", "--rejects", rejects)
        assert_clean_failure(result)
        assert error_lines(result) == [f"--rejects: {rejects} is {shown}, an input of this import; expected "
                                       "another file for the rejected rows"]
        assert data.read_text(encoding="utf-8") == BAD
        assert table_snapshot(prefilled) == template_snapshot


def test_rejects_neutralise_formula_starts(prefilled, tmp_path):
    import csv

    data = tmp_path / "bad.csv"
    data.write_text(BAD, encoding="utf-8")
    rejects = tmp_path / "rejects.csv"
    result = run_cli("--db", prefilled, "import", data, "--keep-valid", "--rejects", rejects)
    assert result.exit_code == 2, result.output  # the valid row was imported, the others written
    rows = list(csv.reader(rejects.open(encoding="utf-8", newline="")))
    assert rows[0] == ["source_file", "source_row", "reasons", "manufacturer", "part_number",
                       "stall_torque [mNm]", "notes"]
    by_row = {r[1]: r for r in rows[1:]}
    assert by_row["3"][6] == "'=HYPERLINK(\"http://example.invalid\",\"click\")"
    assert by_row["4"][4] == "'@R-3" and by_row["4"][5] == "'-4 oz" and by_row["4"][6] == "'+1"
    assert all(not cell.startswith(("=", "+", "-", "@")) for r in rows for cell in r)
    assert parts(tmp_path) == []
