"""The generated documents of ``docs/`` and the README's example outputs: one command regenerates them all.

``python -m catalog.docs`` (what ``make docs`` runs) writes every document of
:data:`GENERATED` whose text differs from what its generator makes now, then
rewrites the output blocks of ``README.md`` that differ from a fresh run of the
commands above them on a freshly built demo catalogue (:mod:`catalog.readme`);
``python -m catalog.docs --check`` writes nothing and exits 1 naming the stale
ones.  ``tests/test_docs.py`` fails when one is stale.  A new generated document
is one :class:`GeneratedDoc` entry; a new README output block is one marker
(see :mod:`catalog.readme`).
"""
from __future__ import annotations

__all__ = ["GeneratedDoc", "GENERATED", "stale_docs", "write_docs", "main"]

import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

#: The project folder of a source checkout (``docs/`` lives there).
PROJECT = Path(__file__).resolve().parent.parent


@dataclass(frozen=True)
class GeneratedDoc:
    """One generated document: its file, title, what it is made from, and the function making its body."""

    path: str                   #: relative to the project folder
    title: str
    source: str                 #: Markdown naming the data and the function it is generated from
    body: Callable[[], str]

    def text(self) -> str:
        """The whole document as it should be on disk."""
        return (f"# {self.title}\n\nGenerated from {self.source}; `make docs` regenerates it and "
                f"`tests/test_docs.py` checks it is current.\n\n{self.body().rstrip()}\n")


def _relations() -> str:
    from .derive import relation_table_markdown
    from .plausibility import check_table_markdown

    return (relation_table_markdown() + "\n\n## Plausibility checks of single values\n\n"
            + check_table_markdown())


def _glossary() -> str:
    from .glossary import glossary_markdown

    return glossary_markdown()


def _spellings() -> str:
    from .units import spelling_table_markdown

    return spelling_table_markdown()


def _cli() -> str:
    from .cli.reference import cli_reference_markdown

    return cli_reference_markdown()


#: Every generated document.
GENERATED = (
    GeneratedDoc("docs/relations.md", "Relations used to derive motor constants",
                 "`catalog/derive.py:EQUATIONS` by `catalog.derive.relation_table_markdown()` and "
                 "`catalog/plausibility.py:CHECKS` by `catalog.plausibility.check_table_markdown()`", _relations),
    GeneratedDoc("docs/glossary.md", "Glossary",
                 "the schema files (`x-symbol`, descriptions) and `catalog/glossary.py:OTHER_QUANTITIES` by "
                 "`catalog.glossary.glossary_markdown()`", _glossary),
    GeneratedDoc("docs/unit-spellings.md", "Datasheet unit spellings",
                 "`catalog/units/atoms.py` by `catalog.units.spelling_table_markdown()`", _spellings),
    GeneratedDoc("docs/cli.md", "Command-line reference",
                 "the `--help` of every command by `catalog.cli.reference.cli_reference_markdown()`", _cli),
)


def stale_docs(project: Path = PROJECT) -> list[GeneratedDoc]:
    """The documents whose file is missing or differs from what their generator makes now."""
    out = []
    for doc in GENERATED:
        path = project / doc.path
        if not path.is_file() or path.read_text(encoding="utf-8") != doc.text():
            out.append(doc)
    return out


def write_docs(project: Path = PROJECT) -> list[Path]:
    """Write every stale document; returns the files written."""
    written = []
    for doc in stale_docs(project):
        path = project / doc.path
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(doc.text(), encoding="utf-8", newline="\n")
        written.append(path)
    return written


def main(argv=None) -> int:
    """``python -m catalog.docs [--check] [--project DIR]``."""
    import argparse

    from . import readme

    parser = argparse.ArgumentParser(prog="python -m catalog.docs", description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="write nothing; exit 1 when a document is stale")
    parser.add_argument("--project", type=Path, default=PROJECT, help="the project folder (default: this checkout)")
    args = parser.parse_args(argv)
    has_readme = (args.project / readme.README).is_file()
    try:
        if args.check:
            stale = [doc.path for doc in stale_docs(args.project)]
            stale += [f"{readme.README} (output block {i!r})" for i in
                      (readme.stale_examples(args.project) if has_readme else [])]
            for name in stale:
                print(f"stale: {name} (run `make docs`)", file=sys.stderr)
            return 1 if stale else 0
        written = write_docs(args.project)
        for path in written:
            print(f"wrote {path}")
        if not written:
            print(f"all {len(GENERATED)} generated documents are current")
        if has_readme:
            blocks = readme.write_readme(args.project)
            if blocks:
                print(f"wrote {args.project / readme.README}: output block(s) {', '.join(blocks)}")
            else:
                print(f"{readme.README}: every example output is current")
    except readme.ReadmeError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
