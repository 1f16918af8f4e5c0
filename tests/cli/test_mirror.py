"""The command line mirrors the Python API.

Every command calls the ``Catalog`` method of its name (``stock take`` → ``stock_take``,
``import`` → ``import_``), every argument and option fills the keyword argument of
its name with the same default, and the old names of renamed methods still answer,
with a DeprecationWarning.
"""
from __future__ import annotations

import ast
import inspect
import keyword
import textwrap

import click
import pytest

from catalog.api import Catalog
from catalog.cli import cli
from catalog.cli.options import RENAMED_OPTIONS, OutputOption

#: Options that shape only what a command prints and are not shared ones (those are
#: ``OutputOption``s): (command, option) → what it does instead of filling a keyword.
PRINT_ONLY = {("select", "explain"): "prints Selection.explain(ID) of the result instead of the shortlist",
              ("cycle", "units"): "display units of the printed table (the API returns SI)"}


_UNSET = getattr(click.core, "UNSET", None)


def _commands(group=cli, prefix=()):
    for name, cmd in sorted(group.commands.items()):
        if isinstance(cmd, click.Group):
            yield from _commands(cmd, (*prefix, name))
        else:
            yield (*prefix, name), cmd


COMMANDS = list(_commands())
IDS = [" ".join(path) for path, _ in COMMANDS]


def method_name(path) -> str:
    """``("stock", "write-off")`` → ``stock_write_off``; a Python keyword gets a trailing underscore."""
    name = "_".join(path).replace("-", "_")
    return name + "_" if keyword.iskeyword(name) else name


def _mirrored(path, cmd):
    for p in cmd.params:
        if isinstance(p, OutputOption) or (" ".join(path), p.name) in PRINT_ONLY:
            continue
        yield p


def test_the_commands_are_found():
    assert {"import", "show", "check", "history", "export", "report", "plot", "stock take", "stock list"} <= set(IDS)


@pytest.mark.parametrize("path,cmd", COMMANDS, ids=IDS)
def test_every_command_calls_the_method_of_its_name(path, cmd):
    name = method_name(path)
    assert callable(getattr(Catalog, name, None)), f"Catalog has no method {name} for `{' '.join(path)}`"
    source = textwrap.dedent(inspect.getsource(inspect.unwrap(cmd.callback)))
    called = {node.func.attr for node in ast.walk(ast.parse(source))
              if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute)}
    assert name in called, f"`{' '.join(path)}` does not call Catalog.{name}"


@pytest.mark.parametrize("path,cmd", COMMANDS, ids=IDS)
def test_every_option_is_named_like_its_keyword_with_the_same_default(path, cmd):
    params = inspect.signature(getattr(Catalog, method_name(path))).parameters
    ctx = click.Context(cmd)
    for p in _mirrored(path, cmd):
        assert p.name in params, f"`{' '.join(path)}` {p.opts[0]}: Catalog.{method_name(path)} has no {p.name!r}"
        if isinstance(p, click.Option):
            spelled = p.opts[0].lstrip("-").replace("-", "_")
            # a repeatable option is named for one item: --candidate fills candidates
            assert spelled == p.name or (p.multiple and p.name.startswith(spelled)), (path, p.opts)
        api_default = params[p.name].default
        if api_default is inspect.Parameter.empty or p.required:
            continue
        if p.multiple:   # none given: the API's None
            assert api_default is None, (path, p.name, api_default)
            continue
        cli_default = p.get_default(ctx)
        cli_default = None if cli_default is _UNSET else cli_default   # click ≥ 8.2: no default given
        assert cli_default == api_default, (path, p.name, cli_default, api_default)


def test_print_only_options_exist():
    """The exceptions above name real options (a renamed option would hide behind a stale entry)."""
    by_path = dict(COMMANDS)
    for (path, name) in PRINT_ONLY:
        assert name in {p.name for p in by_path[tuple(path.split())].params}


def test_the_tolerance_stated_in_the_help_is_the_api_default():
    from catalog.derive import DEFAULT_TOLERANCE

    for name in ("derive", "check"):
        option = next(p for p in cli.commands[name].params if p.name == "tolerance")
        assert f"default {DEFAULT_TOLERANCE:g}: {DEFAULT_TOLERANCE:.0%}".replace("%", " %") in option.help


def test_renamed_options_name_parameters_that_exist():
    """Every old spelling stands for a parameter some command has, and no command spells it itself."""
    for old, names in RENAMED_OPTIONS.items():
        assert any(old in cmd.renamed for _, cmd in COMMANDS), f"{old} stands for {names}, which no command has"
    for path, cmd in COMMANDS:
        spelled = {o for p in cmd.params for o in (*p.opts, *p.secondary_opts)}
        assert not spelled & set(cmd.renamed), path


CSV = """manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],torque_constant [mNm/A],speed_constant [rpm/V],mass [g],commutation
Mirror Test,M-1,24,2.0,30,318.3,180,brushed
Mirror Test,M-2,24,2.0,30,250,120,brushed
"""


@pytest.fixture
def cat(tmp_path):
    import catalog

    path = tmp_path / "m.csv"
    path.write_text(CSV, encoding="utf-8")
    c = catalog.open(tmp_path / "c.duckdb")
    c.import_(path)
    return c


def test_old_method_names_warn_and_answer_as_the_new_ones(cat, tmp_path):
    with pytest.warns(DeprecationWarning, match="Catalog.flags is deprecated, use Catalog.check"):
        old = cat.flags()
    assert [str(f) for f in old] == [str(f) for f in cat.check()] and old   # M-2: Kt disagrees with kv
    with pytest.warns(DeprecationWarning, match="Catalog.record is deprecated, use Catalog.show"):
        rtype, maker, part, values = cat.record("mirror-m-1")
    shown = cat.show("mirror-m-1")
    assert (rtype, maker, part) == shown[:3] == ("motor", "Mirror Test", "M-1")
    stored = shown.values[shown.values["origin"].notna()].set_index("field")
    assert sorted(values["field"]) == sorted(stored.index)
    assert values.set_index("field")["value_num"].to_dict() == pytest.approx(stored["value_num"].to_dict(),
                                                                             nan_ok=True)
    path = tmp_path / "again.csv"
    path.write_text(CSV, encoding="utf-8")
    with pytest.warns(DeprecationWarning, match="Catalog.validate_files is deprecated, use Catalog.validate"):
        assert not cat.validate_files([path]).problems
    with pytest.warns(DeprecationWarning, match="Catalog.import_files is deprecated, use Catalog.import_"):
        assert cat.import_files([path]).updated == 2


def test_show_gives_every_field_with_display_units_and_the_flags(cat):
    import pandas as pd

    rec = cat.show("mirror-m-2", units="datasheet")
    values = rec.values.set_index("field")
    # 30 mN·m/A given; 250 rpm/V implies 1/(250·2π/60) = 38.2 mN·m/A: the datasheet contradicts itself
    kt = values.loc["torque_constant"]
    assert (kt["value"], kt["unit"], kt["value_num"], kt["origin"]) == (pytest.approx(30.0), "mN·m/A",
                                                                        pytest.approx(0.030), "given")
    assert values.loc["commutation", "value_text"] == "brushed" and pd.isna(values.loc["commutation", "value"])
    assert pd.isna(values.loc["max_speed", "origin"])   # a schema field without a value is listed, empty
    assert "id" not in values.index and "manufacturer" not in values.index
    assert [f.record_id for f in rec.flags] and {f.record_id for f in rec.flags} == {"mirror-m-2"}
    si = cat.show("mirror-m-2", units="si").values.set_index("field").loc["torque_constant"]
    assert (si["value"], si["unit"]) == (pytest.approx(0.030), "N·m/A")


def test_list_is_the_table_the_command_prints(cat):
    table = cat.list("motors", units="imperial")
    assert list(table["id"]) == ["mirror-m-1", "mirror-m-2"]
    assert "mass [lb]" in table.columns
    from catalog.errors import InputError

    with pytest.raises(InputError, match="kind: 'motor' is not motors or gearheads"):
        cat.list("motor")
    with pytest.raises(InputError, match="units: 'furlongs' is not a units preset"):
        cat.list("motors", units="furlongs")
