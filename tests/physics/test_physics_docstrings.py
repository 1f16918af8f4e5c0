"""House rules of catalog.physics checked mechanically.

Source of the rules: the motorshelf physics house rules (numpydoc docstrings
with a unit in brackets for every parameter and the return value, a Notes
section with relation and validity, a References section naming a source;
pure numpy: no pint, duckdb or pandas import; modules of about 400 lines;
explicit __all__).
"""

import ast
import inspect
import pathlib
import re

import pytest

import catalog.physics as ph

PACKAGE = pathlib.Path(ph.__file__).parent
UNIT = re.compile(r"\[[^\[\]]+\]")
FUNCTIONS = sorted(n for n in ph.__all__ if inspect.isfunction(getattr(ph, n)))


def sections(doc):
    """Split a numpydoc docstring into {section title: lines}."""
    lines = doc.splitlines()
    found, current = {}, "summary"
    found[current] = []
    for k, line in enumerate(lines):
        if k + 1 < len(lines) and re.fullmatch(r"-{3,}", lines[k + 1].strip()) \
                and line.strip():
            current = line.strip()
            found[current] = []
        elif not re.fullmatch(r"-{3,}", line.strip()):
            found[current].append(line)
    return found


def parameter_entries(lines):
    """{name: description text} from a numpydoc Parameters section."""
    entries, name = {}, None
    for line in lines:
        match = re.match(r"^(\w+) : .+$", line)
        if match:
            name = match.group(1)
            entries[name] = ""
        elif name and line.startswith("    "):
            entries[name] += " " + line.strip()
    return entries


@pytest.mark.parametrize("name", FUNCTIONS)
def test_docstring_documents_every_parameter_with_a_unit(name):
    function = getattr(ph, name)
    doc = inspect.getdoc(function)
    assert doc, f"{name} has no docstring"
    parts = sections(doc)
    for title in ("Parameters", "Returns", "Notes", "References"):
        assert title in parts, f"{name}: missing {title} section"
    entries = parameter_entries(parts["Parameters"])
    signature = list(inspect.signature(function).parameters)
    assert list(entries) == signature, f"{name}: documented {list(entries)}"
    for parameter, text in entries.items():
        assert UNIT.search(text), f"{name}: {parameter} has no [unit]"
    assert UNIT.search(" ".join(parts["Returns"])), f"{name}: return has no [unit]"
    assert " ".join(parts["References"]).strip(), f"{name}: empty References"


def test_public_names_are_full_words():
    # Short symbols (kt, ke, kv, i0, ...) only inside formulas, never in names.
    short = re.compile(r"(^|_)(kt|ke|kv|km|i0|w0|j|r|l|v|tf|eta|rth\d?|tau\w*)(_|$)")
    for name in FUNCTIONS:
        assert not short.search(name), name
        for parameter in inspect.signature(getattr(ph, name)).parameters:
            assert not short.search(parameter), f"{name}({parameter})"


def test_every_module_has_explicit_all_and_stays_small():
    for path in sorted(PACKAGE.glob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        names = {t.id for node in tree.body if isinstance(node, ast.Assign)
                 for t in node.targets if isinstance(t, ast.Name)}
        assert "__all__" in names, f"{path.name} has no __all__"
        lines = len(path.read_text(encoding="utf-8").splitlines())
        assert lines <= 460, f"{path.name} has {lines} lines"


def test_physics_imports_only_numpy_and_the_standard_library():
    allowed = {"numpy", "math", "functools", "typing", "inspect", "__future__"}
    for path in sorted(PACKAGE.glob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                roots = {alias.name.split(".")[0] for alias in node.names}
            elif isinstance(node, ast.ImportFrom):
                if node.level:          # relative import inside the package
                    continue
                roots = {node.module.split(".")[0]}
            else:
                continue
            assert roots <= allowed, f"{path.name} imports {roots - allowed}"


def test_dunder_all_lists_only_existing_unique_names():
    assert len(ph.__all__) == len(set(ph.__all__))
    for name in ph.__all__:
        assert hasattr(ph, name), name


def test_every_parameter_is_a_schema_field_or_in_the_glossary():
    # Source: the one-name rule (docs/glossary.md): a parameter meaning a catalogue quantity
    # carries its schema field name; any other quantity has one name, listed in the glossary.
    from catalog.fields import field_names
    from catalog.glossary import OPTION_PARAMETERS, OTHER_QUANTITIES

    known = set(field_names("motor")) | set(field_names("gearhead"))
    known |= {name for _symbol, name, _unit, _meaning in OTHER_QUANTITIES} | OPTION_PARAMETERS
    for name in FUNCTIONS:
        for parameter in inspect.signature(getattr(ph, name)).parameters:
            assert parameter in known, f"{name}({parameter}): a schema field name, or add it to the glossary"


def test_glossary_names_are_no_schema_fields_and_unique():
    from catalog.fields import field_names
    from catalog.glossary import OTHER_QUANTITIES

    names = [name for _symbol, name, _unit, _meaning in OTHER_QUANTITIES]
    assert len(names) == len(set(names))
    fields = set(field_names("motor")) | set(field_names("gearhead"))
    assert set(names) & fields <= {"magnet_material"}   # listed for its role as a physics parameter
