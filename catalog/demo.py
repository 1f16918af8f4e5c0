"""``make demo``: build a fresh catalogue from ``sample_catalog/`` and summarise it.

Run as ``python -m catalog.demo --db PATH --fresh``.  Each supplier file of the
manifest is imported in its own transaction, so one rejected file does not stop
the others; rejected files are listed with their reasons.
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

SAMPLE = Path(__file__).resolve().parent.parent / "sample_catalog"


def _manifest(folder: Path) -> list[dict]:
    import yaml

    doc = yaml.safe_load((folder / "manifest.yaml").read_text(encoding="utf-8"))
    entries = doc.get("files", doc) if isinstance(doc, dict) else doc
    return [e for e in entries if isinstance(e, dict) and "file" in e]


def _short(path: Path) -> Path:
    """``path`` relative to the working directory when it lies below it (shorter messages)."""
    try:
        return path.relative_to(Path.cwd())
    except ValueError:
        return path


def build(db: Path, folder: Path = SAMPLE, out=print) -> dict:
    """Import every file of the manifest into ``db``; returns the catalogue summary."""
    from .api import Catalog
    from .errors import InputError

    cat = Catalog(db)
    rejected = []
    converted = 0
    for entry in _manifest(folder):
        if entry.get("kind", "datasheet") != "datasheet":
            continue
        path = _short(folder / entry["file"])
        mapping = _short(folder / entry["mapping"]) if entry.get("mapping") else None
        try:
            report = cat.import_([path], mapping=mapping)
        except InputError as exc:
            rejected.append((path, exc.problems))
            out(f"  rejected {path}: {len(exc.problems)} problem(s)")
            continue
        converted += report.converted
        how = f" with mapping {Path(entry['mapping']).name}" if mapping else ""
        out(f"  imported {path}{how}: {report.created} new, "
            f"{report.updated} updated, {report.converted} values converted to SI"
            + (f", {report.derived} derived" if report.derived else ""))
        for w in report.warnings:
            out(f"    warning: {w}")
        for flag in report.flags:
            out(f"    flag: {flag}")
    shelf_file = _stock_file(folder)
    if shelf_file is not None:
        try:
            out("  " + load_shelf(cat, shelf_file))
        except InputError as exc:
            rejected.append((shelf_file, exc.problems))
            out(f"  rejected {shelf_file}: {len(exc.problems)} problem(s)")
    summary = cat.summary()
    summary["converted"] = converted
    summary["rejected"] = rejected
    return summary


# The demo shelf's invented history: (days ago, operation, record, arguments). People and projects are fictional.
_HISTORY = [
    (63, "take", "brackwater-bx4265-36", dict(quantity=2, person="Mira", project="pan-tilt head")),
    (60, "reserve", "sorvanto-00811-12", dict(quantity=2, project="winch", person="Jonas")),
    (56, "move", "brackwater-bwg42-14", dict(quantity=1, to_location="Lab 2 / cabinet A / bin 7", to_condition="used",
                                             person="Tamsin", reason="tested on the rig: runs smoothly")),
    (49, "return", "brackwater-bx4265-36", dict(quantity=1, location="Field kit / case 1", person="Mira",
                                                project="pan-tilt head", reason="one was enough")),
    (42, "receive", "kettlebrook-kbg42-s27", dict(quantity=4, location="Workshop / shelf 4 / crate 2", person="Edvin",
                                                  reason="order for the drive wheels", min_quantity=2)),
    (35, "take", None, dict(reservation=1, person="Jonas", reason="winch built")),
    (30, "write_off", "vaskeline-vk-c2844-24", dict(quantity=1, serial_numbers="VA70774", person="Tamsin",
                                                    reason="open winding, not worth repairing")),
    (21, "adjust", "halvard-hp-pl32-71", dict(counted=9, location="Lab 2 / cabinet B / drawer 1", person="Ola",
                                              reason="yearly count")),
    (14, "move", "vaskeline-vk-c2232-12", dict(quantity=2, to_location="Lab 2 / cabinet A / bin 7", person="Mira")),
    (7, "reserve", "brackwater-bs3270-48", dict(quantity=2, project="test rig", person="Edvin")),
    (3, "take", "vaskeline-vk-g22-71", dict(quantity=1, person="Jonas", project="camera mast")),
    (1, "receive", "kettlebrook-kb205-31-24", dict(quantity=3, location="Workshop / shelf 4 / crate 2", person="Mira",
                                                   reason="spares for the drive wheels")),
]


def _stock_file(folder: Path):
    import yaml

    doc = yaml.safe_load((folder / "manifest.yaml").read_text(encoding="utf-8"))
    name = doc.get("stock") if isinstance(doc, dict) else None
    return _short(folder / name) if name and (folder / name).is_file() else None


def load_shelf(cat, shelf_file: Path) -> str:
    """Import the demo shelf 70 days back, then replay its invented history; returns one summary line."""
    import datetime as dt

    now = dt.datetime.now().replace(microsecond=0)
    rows, pieces, _ = cat.stock_import([shelf_file], person="Ola", reason="first count of the shelf",
                                       at=now - dt.timedelta(days=70))
    for days, op, record_id, kw in _HISTORY:
        args = () if record_id is None else (record_id,)
        getattr(cat, f"stock_{op}")(*args, at=now - dt.timedelta(days=days), **kw)
    items = cat.stock_list()
    return (f"stocked {shelf_file}: {len(items)} items, {int(items['on_hand'].sum())} pieces in "
            f"{items['location'].nunique()} locations ({pieces} received in {rows} rows, then "
            f"{len(_HISTORY)} invented movements over 70 days; {len(cat.stock_reservations())} open reservation(s))")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m catalog.demo", description=__doc__.splitlines()[0])
    parser.add_argument("--db", default="demo/motorshelf-demo.duckdb", help="catalogue file to build")
    parser.add_argument("--fresh", action="store_true", help="delete the file first")
    parser.add_argument("--sample", type=Path, default=SAMPLE,
                        help="folder of the demo datasheets, its manifest.yaml and stock file (default: sample_catalog/ "
                             "of this checkout)")
    args = parser.parse_args(argv)
    db = Path(args.db)
    if args.fresh and db.exists():
        db.unlink()
        wal = db.with_name(db.name + ".wal")
        if wal.exists():
            wal.unlink()
    print(f"motorshelf demo: building {db} from {args.sample.name}/")
    s = build(db, args.sample)
    from .select import kernel      # the compiled verdict pass of large selections, compiled once here
    kernel.warm()                   # and kept in numba's on-disk cache
    print(f"\nsummary: {s['suppliers']} suppliers, {s['motors']} motors, {s['gearheads']} gearheads; "
          f"{s['given_values']} values stored ({s['converted']} converted to SI), "
          f"{s['derived_values']} derived")
    if s["rejected"]:
        print(f"{len(s['rejected'])} file(s) rejected:")
        for path, problems in s["rejected"]:
            for p in problems:
                print(f"  {p}")
    else:
        print("files rejected: none")
    print(f"\ntry:  .venv/bin/motorshelf --db {db} list motors")
    print(f"      .venv/bin/motorshelf --db {db} select queries/drive_wheel.toml")
    print(f"      .venv/bin/motorshelf --db {db} report queries/drive_wheel.toml --out demo/report.html")
    print(f"      .venv/bin/motorshelf --db {db} stock list --location 'Lab 2'")
    return 0


if __name__ == "__main__":
    sys.exit(main())
