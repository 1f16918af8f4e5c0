"""Documentation generated from the data tables stays current, and the README's envelope is real."""
from pathlib import Path

from catalog.derive import relation_table_markdown
from catalog.glossary import glossary_markdown
from catalog.plausibility import check_table_markdown
from catalog.units import spelling_table_markdown

ROOT = Path(__file__).resolve().parent.parent


def test_unit_spelling_doc_is_current():
    text = (ROOT / "docs" / "unit-spellings.md").read_text(encoding="utf-8")
    assert spelling_table_markdown() in text, "regenerate docs/unit-spellings.md (see its first lines)"


def test_relation_doc_is_current():
    text = (ROOT / "docs" / "relations.md").read_text(encoding="utf-8")
    assert relation_table_markdown() in text, "regenerate docs/relations.md (see its first lines)"
    assert check_table_markdown() in text, "regenerate docs/relations.md (see its first lines)"


def test_glossary_doc_is_current():
    text = (ROOT / "docs" / "glossary.md").read_text(encoding="utf-8")
    assert text == glossary_markdown(), "regenerate docs/glossary.md (see its first lines)"


def test_readme_envelope_is_the_shipped_file():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    assert (ROOT / "queries" / "lift_axis.toml").read_text(encoding="utf-8") in readme
