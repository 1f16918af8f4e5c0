"""Generated documents stay current (`make docs` regenerates them all), and the README is real:
its envelope is the shipped file, and its command examples use the commands and options of today."""
import re
import shlex
import subprocess
import sys
from pathlib import Path

import click
import pytest

from catalog.docs import GENERATED, main, stale_docs, write_docs

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text(encoding="utf-8")


@pytest.mark.parametrize("doc", GENERATED, ids=[d.path for d in GENERATED])
def test_generated_doc_is_current(doc):
    text = (ROOT / doc.path).read_text(encoding="utf-8")
    assert text == doc.text(), f"{doc.path} is stale: run `make docs`"


def test_every_generated_doc_is_in_the_table():
    """A document of docs/ that says it is generated is one `make docs` writes."""
    said = {str(p.relative_to(ROOT)) for p in (ROOT / "docs").rglob("*.md")
            if "Generated from" in p.read_text(encoding="utf-8")[:400]}
    assert said == {d.path for d in GENERATED}


def test_make_docs_runs_the_generator():
    makefile = (ROOT / "Makefile").read_text(encoding="utf-8")
    recipe = re.search(r"^docs:.*\n((?:\t.*\n)+)", makefile, re.M)
    assert recipe and "-m catalog.docs" in recipe.group(1)


def test_the_generator_writes_what_is_stale_and_check_says_so(tmp_path, capsys):
    assert main(["--check", "--project", str(tmp_path)]) == 1   # nothing there yet: all stale
    assert {Path(p).name for p in re.findall(r"stale: (\S+)", capsys.readouterr().err)} == \
        {Path(d.path).name for d in GENERATED}
    written = write_docs(tmp_path)
    assert sorted(written) == sorted(tmp_path / d.path for d in GENERATED)
    assert stale_docs(tmp_path) == [] and write_docs(tmp_path) == []
    (tmp_path / GENERATED[0].path).write_text("edited by hand\n", encoding="utf-8")
    assert stale_docs(tmp_path) == [GENERATED[0]]
    assert main(["--project", str(tmp_path)]) == 0 and stale_docs(tmp_path) == []
    # as `make docs` runs it
    done = subprocess.run([sys.executable, "-m", "catalog.docs", "--check", "--project", str(tmp_path)],
                          capture_output=True, text=True)
    assert done.returncode == 0, done.stderr


def test_readme_envelope_is_the_shipped_file():
    assert (ROOT / "queries" / "lift_axis.toml").read_text(encoding="utf-8") in README


def _readme_commands():
    """The arguments after `--db PATH` of every `motorshelf` command line of the README (examples and
    transcripts)."""
    for line in README.splitlines():
        m = re.match(r"^(?:\.venv/bin/motorshelf|\$ motorshelf) (.*)$", line)
        if m:
            args = shlex.split(m.group(1), comments=True)
            yield args[2:] if args[0] == "--db" else args


def _command(args):
    """(command words, command, the arguments left) of one command line."""
    from catalog.cli import cli

    cmd, words, rest = cli, [], list(args)
    while isinstance(cmd, click.Group):
        assert rest and rest[0] in cmd.commands, f"no command {' '.join(words + rest[:1])!r}"
        words.append(rest.pop(0))
        cmd = cmd.commands[words[-1]]
    return " ".join(words), cmd, rest


def test_readme_command_lines_parse_with_the_names_of_today(capsys):
    """Every README command line names a real command and its current options (no deprecation note)."""
    lines = list(_readme_commands())
    assert len(lines) > 30
    for args in lines:
        name, cmd, rest = _command(args)
        cmd.make_context(name, rest)   # a wrong option or a missing argument raises click.UsageError
    assert capsys.readouterr().err == ""


def test_every_command_is_documented_in_the_readme():
    """Each command has a command line and its name in bold where the README explains it."""
    from catalog.cli import cli
    from catalog.cli.reference import walk_commands

    examples = {_command(args)[0] for args in _readme_commands()}
    for words, cmd, _ in walk_commands(cli, click.Context(cli, info_name="motorshelf")):
        if isinstance(cmd, click.Group):
            continue
        name = " ".join(words)
        assert cmd.help, f"command {name} has no help text"
        assert name in examples, f"README has no command line of `{name}`"
        assert f"**{name}**" in README or f"**{name} " in README, f"README does not explain `{name}`"


def test_readme_mechanism_envelope_and_its_cycle_are_real():
    """The README shows queries/screw_stage.toml and exactly what `motorshelf cycle` prints for it."""
    import os

    from click.testing import CliRunner

    from catalog.cli import cli

    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    assert (ROOT / "queries" / "screw_stage.toml").read_text(encoding="utf-8") in readme
    cwd = os.getcwd()
    os.chdir(ROOT)          # the command names the envelope as given: queries/screw_stage.toml
    try:
        result = CliRunner().invoke(cli, ["cycle", "queries/screw_stage.toml"], catch_exceptions=False)
    finally:
        os.chdir(cwd)
    assert result.exit_code == 0
    assert "```text\n" + result.output + "```" in readme
