"""The shelf on the command line: every stock command, exact error lines, exit codes, old option spellings."""
from __future__ import annotations

from click.testing import CliRunner

from catalog.cli import cli
from tests.inventory.shelfdata import GEAR, HEAVY, LIGHT


def run(db, *args):
    result = CliRunner().invoke(cli, ["--db", str(db), *map(str, args)], catch_exceptions=False)
    assert "Traceback" not in result.output
    return result


def errors(result):
    return [line for line in result.output.splitlines() if line.startswith("error:")]


def test_the_movement_commands(shelf):
    db = shelf.path
    r = run(db, "stock", "receive", HEAVY, 4, "--location", "Lab 2 / cabinet A", "--serial", "S1", "--serial", "S2",
            "--person", "Mira", "--min-quantity", 2)
    assert r.exit_code == 0 and r.output.strip() == (
        "received 4 x shelf-heavy at 'Lab 2 / cabinet A' (new); now 'Lab 2 / cabinet A' (new): 4 on hand, 4 available")
    r = run(db, "stock", "take", HEAVY, 1, "--person", "Mira", "--project", "rover")
    assert r.exit_code == 0 and r.output.startswith(
        "took 1 x shelf-heavy from 'Lab 2 / cabinet A' (new) for project rover by Mira; now")
    assert run(db, "stock", "return", HEAVY, 1, "--location", "Lab 2 / cabinet A", "--project", "rover").exit_code == 0
    assert run(db, "stock", "move", HEAVY, 1, "--from-location", "Lab 2 / cabinet A", "--condition", "new",
               "--to-location", "Field kit").exit_code == 0
    r = run(db, "stock", "adjust", HEAVY, 1, "--location", "Field kit", "--reason", "count")
    assert "recorded 1: adjusted by +0" in r.output
    r = run(db, "stock", "reserve", HEAVY, 2, "--project", "winch", "--location", "Lab 2 / cabinet A",
            "--condition", "new")
    assert r.exit_code == 0 and r.output.startswith("reservation 1: 2 x shelf-heavy")
    r = run(db, "stock", "reservations")
    assert r.exit_code == 0 and "winch" in r.output
    r = run(db, "stock", "take", "--reservation", 1, 1, "--person", "Jonas")
    assert r.exit_code == 0 and "on reservation 1 by Jonas" in r.output
    assert run(db, "stock", "release", 1).output.startswith("released 1 x shelf-heavy of reservation 1")
    r = run(db, "stock", "write-off", HEAVY, 1, "--reason", "burnt", "--location", "Lab 2 / cabinet A",
            "--condition", "used")
    assert r.exit_code == 0 and "wrote off 1" in r.output
    r = run(db, "stock", "list", "--format", "csv")
    lines = r.output.splitlines()
    assert lines[0].startswith("id,record_type,manufacturer,part_number,location,condition,on_hand,reserved,available")
    assert len(lines) == 3  # Field kit (1), cabinet A new (1); the written-off used item is empty
    assert "Field kit" in run(db, "stock", "list", "--location", "field").output
    r = run(db, "stock", "history", HEAVY, "--format", "csv")
    kinds = [line.split(",")[2] for line in r.output.splitlines()[1:]]
    assert kinds == ["receive", "take", "return", "move-out", "move-in", "reserve", "take", "release", "write-off"]
    assert run(db, "stock", "list", "--low").output == "nothing below its reorder level\n"  # 2 left, level 2
    run(db, "stock", "take", HEAVY, 1, "--location", "Field kit", "--person", "Mira", "--project", "rover")
    assert "shelf-heavy" in run(db, "stock", "list", "--low").output


def test_refusals_are_one_error_line_and_exit_2(shelf):
    db = shelf.path
    run(db, "stock", "receive", LIGHT, 1, "--location", "Lab 2")
    cases = [
        (("stock", "take", LIGHT, 2, "--person", "Mira", "--project", "rover"),
         "error: cannot take 2 x shelf-light from 'Lab 2' (new): 1 available (1 on hand); nothing was changed"),
        (("stock", "take", LIGHT, 1),
         "error: take needs who takes the pieces (--person) and for which project (--project)"),
        (("stock", "receive", LIGHT, "x", "--location", "Lab 2"),
         "error: quantity 'x' is not a whole number, expected a count of pieces"),
        (("stock", "receive", "shelf-lite", 1, "--location", "Lab 2"),
         "error: no record with id 'shelf-lite'; did you mean shelf-light, "),
        (("stock", "release", "one"), "error: reservation 'one' is not a reservation number, expected e.g. 3"),
        (("stock", "release", 4), "error: no reservation 4; `motorshelf stock reservations` lists the open ones"),
        (("stock", "take", GEAR, 1, "--person", "a", "--project", "b"),
         "error: cannot take shelf-gh10: nothing of it is in stock "
         "(`motorshelf stock receive shelf-gh10 ...` records a delivery)"),
    ]
    for args, line in cases:
        r = run(db, *args)
        assert r.exit_code == 2, (args, r.output)
        assert len(errors(r)) == 1, r.output
        if line:
            assert errors(r)[0] == line or (line.endswith(", ") and errors(r)[0].startswith(line)), r.output


def test_stock_import_and_count(shelf, write):
    db = shelf.path
    f = write("shelf.csv", f"id,quantity,location\n{HEAVY},3,Lab 2\n{LIGHT},1,Lab 2\n")
    r = run(db, "stock", "import", f, "--person", "Ola")
    assert r.exit_code == 0 and r.output.strip().startswith(f"{db}: received 4 piece(s) in 2 row(s)")
    c = write("count.csv", f"id,quantity,location\n{HEAVY},2,Lab 2\n")
    r = run(db, "stock", "count", c)
    assert r.exit_code == 0 and "2 difference(s)" in r.output and "nothing written" in r.output
    r = run(db, "stock", "count", c, "--apply")
    assert r.exit_code == 0 and "2 adjust movement(s) written" in r.output
    assert "the count matches the records" in run(db, "stock", "count", c).output
    bad = write("bad.csv", "id,quantity,location\nnope,1,Lab 2\nshelf-heavy,-1,Lab 2\n")
    r = run(db, "stock", "import", bad)
    assert r.exit_code == 2 and errors(r) == [
        f"error: {bad}:2:id: no catalogue record with id 'nope'; import its datasheet first",
        f"error: {bad}:3:quantity: -1 is too small, expected at least 0",
        f"error: 2 problem(s); nothing was imported, {db} is unchanged"]


def test_select_with_the_shelf(shelf, envelope):
    db = shelf.path
    run(db, "stock", "receive", HEAVY, 2, "--location", "Lab 2")
    r = run(db, "select", envelope(), "--stock", "only", "--format", "csv")
    assert r.exit_code == 0
    header, *rows = r.output.splitlines()
    assert "available" in header.split(",") and "location" in header.split(",")
    assert [row.split(",")[1] for row in rows] == [HEAVY]
    r = run(db, "select", envelope('stock = "prefer"'))
    assert r.exit_code == 0 and "stocked first" in r.output and "in stock" in r.output


def test_old_option_spellings_still_work_with_one_note(shelf):
    """Renamed options (catalog.cli.options.RENAMED_OPTIONS) keep their old spelling, with a note on stderr."""
    db = shelf.path
    r = run(db, "stock", "receive", HEAVY, 3, "--location", "Lab 2", "--by", "Mira", "--min", 2)
    assert r.exit_code == 0 and r.stdout.startswith("received 3 x shelf-heavy")
    assert r.stderr.splitlines() == ["warning: --by is deprecated, use --person",
                                     "warning: --min is deprecated, use --min-quantity"]
    r = run(db, "stock", "move", HEAVY, 1, "--from=Lab 2", "--to", "Field kit", "--reason", "--by")
    assert r.exit_code == 0 and r.stdout.startswith("moved 1 x shelf-heavy from 'Lab 2' (new) to 'Field kit'")
    # an option's value is never read as an option: '--by' above is the reason given
    assert r.stderr.splitlines() == ["warning: --from is deprecated, use --from-location",
                                     "warning: --to is deprecated, use --to-location"]
    assert ",--by," in run(db, "stock", "history", HEAVY, "--format", "csv").stdout
    took = run(db, "stock", "take", HEAVY, 1, "--location", "Lab 2", "--by", "Jonas", "--project", "rover")
    assert "by Jonas" in took.stdout and took.stderr == "warning: --by is deprecated, use --person\n"
    listed = run(db, "stock", "list", "--all", "--format", "csv")
    assert listed.stderr == "warning: --all is deprecated, use --include-empty\n"
    assert listed.stdout == run(db, "stock", "list", "--include-empty", "--format", "csv").stdout
    # `--all` of `stock reservations` and `history` is the other side of --open-only / --changed-only
    assert run(db, "stock", "reservations", "--all").stderr == ""
    # the new spellings print no note
    assert run(db, "stock", "take", HEAVY, 1, "--location", "Lab 2", "--person", "Jonas",
               "--project", "rover").stderr == ""
