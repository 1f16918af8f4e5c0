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
            report = cat.import_files([path], mapping=mapping)
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
    summary = cat.summary()
    summary["converted"] = converted
    summary["rejected"] = rejected
    return summary


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m catalog.demo", description=__doc__.splitlines()[0])
    parser.add_argument("--db", default="demo/motorshelf-demo.duckdb", help="catalogue file to build")
    parser.add_argument("--fresh", action="store_true", help="delete the file first")
    args = parser.parse_args(argv)
    db = Path(args.db)
    if args.fresh and db.exists():
        db.unlink()
        wal = db.with_name(db.name + ".wal")
        if wal.exists():
            wal.unlink()
    print(f"motorshelf demo: building {db} from {SAMPLE.name}/")
    s = build(db)
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
    return 0


if __name__ == "__main__":
    sys.exit(main())
