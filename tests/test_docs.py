"""Documentation generated from the data tables stays current, and the README's envelope is real."""
from pathlib import Path

from catalog.derive import relation_table_markdown
from catalog.units import spelling_table_markdown

ROOT = Path(__file__).resolve().parent.parent


def test_unit_spelling_doc_is_current():
    text = (ROOT / "docs" / "unit-spellings.md").read_text(encoding="utf-8")
    assert spelling_table_markdown() in text, "regenerate docs/unit-spellings.md (see its first lines)"


def test_relation_doc_is_current():
    text = (ROOT / "docs" / "relations.md").read_text(encoding="utf-8")
    assert relation_table_markdown() in text, "regenerate docs/relations.md (see its first lines)"


def test_readme_envelope_is_the_shipped_file():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    assert (ROOT / "queries" / "lift_axis.toml").read_text(encoding="utf-8") in readme


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
