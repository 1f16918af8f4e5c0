"""The README's example outputs, generated from real runs of the commands it shows.

An output block of ``README.md`` sits between two marker lines and follows the
``sh`` block whose commands it shows::

    ```sh
    .venv/bin/motorshelf --db demo/motorshelf-demo.duckdb check
    ```
    <!-- output: check, exit 1 -->
    ```text
    ...what the commands print...
    ```
    <!-- /output -->

:func:`run_examples` does what a reader does after ``make demo``: in a temporary
folder holding copies of ``sample_catalog/`` and ``queries/``, it runs ``make
demo`` (the Makefile's recipe, through :mod:`catalog.demo`) and then every
``.venv/bin/motorshelf`` line of every ``sh`` block, in the order of the README
(``serve`` excepted: it runs until stopped), through click's test runner.  So an
example sees the catalogue every command above it has changed, as it is for a
reader who copies them in order.  Each command must end with exit code 0, or
the code the marker states (``exit N``); anything else stops the generation
with the README line of the command.

What a block holds is the output of the commands of its ``sh`` block, stdout and
stderr as a terminal interleaves them, with three normalisations, all said in the
README: a command ending in ``| head -n N`` keeps its first N lines (the shell
does the same); a date and time ``2026-12-03 13:27`` is written
:data:`DATE_PLACEHOLDER` (the demo shelf's history is dated back from the day it
is built); trailing spaces are dropped.  ``make docs`` rewrites the blocks
(:func:`write_readme`); ``tests/test_docs.py`` fails when one differs from a
fresh run.
"""
from __future__ import annotations

__all__ = ["Command", "Example", "ReadmeError", "DATE_PLACEHOLDER", "parse_readme", "readme_commands",
           "run_examples", "filled_readme", "stale_examples", "write_readme", "normalise"]

import re
import shlex
from dataclasses import dataclass
from pathlib import Path

#: The catalogue every README command names.
README = "README.md"
#: Folders of the checkout the README commands read, copied into the folder the examples run in.
INPUT_FOLDERS = ("sample_catalog", "queries")
#: How a date and time of an output is written in the README.
DATE_PLACEHOLDER = "YYYY-MM-DD hh:mm"

_DATE = re.compile(r"\b\d{4}-\d\d-\d\d[ T]\d\d:\d\d(?::\d\d(?:\.\d+)?)?\b")
_START = re.compile(r"^<!-- output: (?P<id>[a-z0-9][a-z0-9-]*)(?:, exit (?P<exit>\d+))? -->$")
_END = "<!-- /output -->"
_PROGRAM = ".venv/bin/motorshelf"


class ReadmeError(Exception):
    """A README example that cannot be generated: one line naming README.md:LINE and the problem."""


@dataclass(frozen=True)
class Command:
    """One command line of a ``sh`` block that the examples run."""

    line: int                    #: 1-based line of README.md
    text: str                    #: as written
    kind: str                    #: "motorshelf" or "make-demo"
    args: tuple[str, ...] = ()   #: the words after ``.venv/bin/motorshelf``
    head: int | None = None      #: N of a trailing ``| head -n N``

    @property
    def words(self) -> tuple[str, ...]:
        """The command words and arguments after the global ``--db PATH``."""
        args = list(self.args)
        if args[:1] == ["--db"]:
            del args[:2]
        elif args and args[0].startswith("--db="):
            del args[:1]
        return tuple(args)

    @property
    def runs(self) -> bool:
        """Whether the examples run it (``serve`` runs until stopped: never)."""
        return not (self.kind == "motorshelf" and self.words[:1] == ("serve",))


@dataclass(frozen=True)
class Example:
    """One output block: its id, the commands it shows, the exit code they end with, the text shown."""

    id: str
    line: int                    #: 1-based line of its start marker
    commands: tuple[Command, ...]
    exit_code: int
    shown: str                   #: the text between ```text and ```, each line with its newline
    body: tuple[int, int]        #: 0-based [start, end) of the lines of ``shown``


def _command(number: int, text: str) -> Command | None:
    """The :class:`Command` of one line of a ``sh`` block, or None for a line the examples do not run."""
    stripped = text.strip()
    if not (stripped.startswith(_PROGRAM + " ") or stripped.split("#")[0].split() == ["make", "demo"]):
        return None
    try:
        words = shlex.split(stripped, comments=True)
    except ValueError as exc:
        raise ReadmeError(f"{README}:{number}: cannot read the command line ({exc})") from None
    head = None
    if "|" in words:
        at = words.index("|")
        pipe, words = words[at + 1:], words[:at]
        m = re.fullmatch(r"head (?:-n |-)(\d+)", " ".join(pipe))
        if not m:
            raise ReadmeError(f"{README}:{number}: found `| {' '.join(pipe)}`, expected `| head -n N` "
                              "(the only shortening the examples apply)")
        head = int(m.group(1))
    if words == ["make", "demo"]:
        return Command(number, stripped, "make-demo", head=head)
    return Command(number, stripped, "motorshelf", tuple(words[1:]), head)


def parse_readme(text: str) -> tuple[list[Command], list[Example]]:
    """Every runnable command line of the ``sh`` blocks, and every output block, in README order."""
    lines = text.splitlines(keepends=True)
    commands: list[Command] = []
    examples: list[Example] = []
    block: list[Command] | None = None     # the commands of the latest sh block
    i = 0
    while i < len(lines):
        line = lines[i].rstrip("\n")
        if line.startswith("```"):
            lang = line[3:].strip()
            j = i + 1
            while j < len(lines) and not lines[j].startswith("```"):
                j += 1
            if j == len(lines):
                raise ReadmeError(f"{README}:{i + 1}: a fenced block that never ends")
            if lang == "sh":
                block = [c for n in range(i + 1, j) if (c := _command(n + 1, lines[n].rstrip("\n"))) is not None]
                commands += block
            i = j + 1
            continue
        m = _START.match(line)
        if m:
            where = f"{README}:{i + 1}"
            if not block or not any(c.runs for c in block):
                raise ReadmeError(f"{where}: output block {m['id']!r} follows no sh block with a command it could show")
            if any(e.id == m["id"] for e in examples):
                raise ReadmeError(f"{where}: output block id {m['id']!r} is used twice")
            if i + 1 >= len(lines) or lines[i + 1].rstrip("\n") != "```text":
                raise ReadmeError(f"{where}: found {lines[i + 1].strip() if i + 1 < len(lines) else 'the end'!r} "
                                  "after the marker, expected ```text")
            j = i + 2
            while j < len(lines) and not lines[j].startswith("```"):
                j += 1
            if j + 1 >= len(lines) or lines[j + 1].rstrip("\n") != _END:
                raise ReadmeError(f"{where}: output block {m['id']!r} must end with ``` and {_END} on the next line")
            examples.append(Example(m["id"], i + 1, tuple(c for c in block if c.runs), int(m["exit"] or 0),
                                    "".join(lines[i + 2:j]), (i + 2, j)))
            block = None                   # one output block per sh block
            i = j + 2
            continue
        if line.startswith(_END):
            raise ReadmeError(f"{README}:{i + 1}: {_END} without its start marker")
        i += 1
    return commands, examples


def readme_commands(text: str):
    """Every ``.venv/bin/motorshelf`` command of the README's ``sh`` blocks (``serve`` too)."""
    return [c for c in parse_readme(text)[0] if c.kind == "motorshelf"]


def normalise(output: str, workdir: Path | None = None) -> str:
    """An output as the README shows it: dates and times as :data:`DATE_PLACEHOLDER`, the folder the examples
    ran in as the repository root, no trailing spaces."""
    if workdir is not None:
        output = output.replace(f"{workdir}/", "").replace(str(workdir), ".")
    output = _DATE.sub(DATE_PLACEHOLDER, output)
    return "".join(line.rstrip() + "\n" for line in output.splitlines())


def _make_variables(makefile: str) -> dict[str, str]:
    return {m[1]: m[2].strip() for m in re.finditer(r"^(\w+)\s*[:?]?=\s*(.*)$", makefile, re.M)}


def _expand(text: str, variables: dict[str, str]) -> str:
    for _ in range(10):
        text, n = re.subn(r"\$\((\w+)\)", lambda m: variables.get(m[1], ""), text)
        if not n:
            break
    return text


def _demo_recipe(project: Path) -> str:
    """The command line ``make demo`` runs (and echoes), from the Makefile of ``project``."""
    makefile = (project / "Makefile").read_text(encoding="utf-8")
    recipe = re.search(r"^demo:.*\n((?:\t.*\n)+)", makefile, re.M)
    lines = [_expand(x.strip(), _make_variables(makefile)) for x in recipe.group(1).splitlines()] if recipe else []
    if len(lines) != 1 or shlex.split(lines[0])[1:3] != ["-m", "catalog.demo"]:
        raise ReadmeError(f"Makefile: the demo recipe is {lines!r}, expected one line `$(PY) -m catalog.demo ...`")
    return lines[0]


def _run_make_demo(project: Path) -> tuple[str, int]:
    """``make demo`` in the working folder: its echoed command line and what catalog.demo prints.  It reads the
    copy of sample_catalog/ there, so the paths it prints are those of a checkout."""
    import contextlib
    import io

    from . import demo

    recipe = _demo_recipe(project)
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        code = demo.main(shlex.split(recipe)[3:] + ["--sample", "sample_catalog"])
    return f"{recipe}\n{out.getvalue()}", code or 0


def _run_motorshelf(command: Command) -> tuple[str, int]:
    from click.testing import CliRunner

    from .cli import cli

    # no colours whatever the environment says; the catalogue comes from --db only
    env = {"FORCE_COLOR": None, "TTY_COMPATIBLE": None, "TTY_INTERACTIVE": None, "MOTORSHELF_DB": None,
           "COLUMNS": None, "LINES": None}
    result = CliRunner(env=env).invoke(cli, list(command.args), prog_name="motorshelf", catch_exceptions=False)
    return result.output, result.exit_code


def run_examples(project: Path, text: str | None = None) -> dict[str, str]:
    """Run the README's commands as a reader would after ``make demo``, in a temporary folder; returns
    ``{example id: output as the README shows it}``.  Raises :class:`ReadmeError` when a command ends with an
    exit code the README does not state."""
    import contextlib
    import os
    import shutil
    import tempfile

    project = Path(project).resolve()
    text = (project / README).read_text(encoding="utf-8") if text is None else text
    commands, examples = parse_readme(text)
    expected = {c.line: e.exit_code for e in examples for c in e.commands}
    shown_by = {c.line: e.id for e in examples for c in e.commands}
    printed: dict[str, list[str]] = {e.id: [] for e in examples}
    with tempfile.TemporaryDirectory(prefix="motorshelf-readme-") as tmp:
        work = Path(tmp).resolve()
        for name in INPUT_FOLDERS:
            if (project / name).is_dir():
                shutil.copytree(project / name, work / name)
        (work / "demo").mkdir()
        cwd = os.getcwd()
        os.chdir(work)
        try:
            for command in commands:
                if not command.runs:
                    continue
                output, code = (_run_make_demo(project) if command.kind == "make-demo" else _run_motorshelf(command))
                output = normalise(output, work)
                if code != expected.get(command.line, 0):
                    raise ReadmeError(f"{README}:{command.line}: `{command.text}` ended with exit code {code}, "
                                      f"expected {expected.get(command.line, 0)}; it printed:\n{output}")
                if command.head is not None:
                    output = "".join(output.splitlines(keepends=True)[:command.head])
                if command.line in shown_by:
                    printed[shown_by[command.line]].append(output)
        finally:
            os.chdir(cwd)
    return {k: "".join(v) for k, v in printed.items()}


def filled_readme(text: str, outputs: dict[str, str]) -> str:
    """``text`` with every output block holding ``outputs[id]``."""
    lines = text.splitlines(keepends=True)
    for example in reversed(parse_readme(text)[1]):
        start, end = example.body
        lines[start:end] = outputs[example.id].splitlines(keepends=True)
    return "".join(lines)


def stale_examples(project: Path) -> list[str]:
    """The ids of the README output blocks that differ from a fresh run."""
    text = (Path(project) / README).read_text(encoding="utf-8")
    outputs = run_examples(project, text)
    return [e.id for e in parse_readme(text)[1] if e.shown != outputs[e.id]]


def write_readme(project: Path) -> list[str]:
    """Rewrite the README output blocks that differ from a fresh run; returns their ids."""
    path = Path(project) / README
    text = path.read_text(encoding="utf-8")
    outputs = run_examples(project, text)
    stale = [e.id for e in parse_readme(text)[1] if e.shown != outputs[e.id]]
    if stale:
        path.write_text(filled_readme(text, outputs), encoding="utf-8", newline="\n")
    return stale
