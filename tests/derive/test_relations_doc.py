"""The relation table is data: its fields are schema fields and its doc lists every solver."""
from __future__ import annotations

import inspect
import json

import pytest

from catalog.derive import DERIVABLE, EQUATIONS, relation_table_markdown
from catalog.fields import schema_dir

SCHEMA = json.loads((schema_dir() / "motor.schema.json").read_text(encoding="utf-8"))
NUMERIC_MOTOR_FIELDS = {name for name, spec in SCHEMA["properties"].items()
                        if spec.get("type") in ("number", "integer")}

SOLVERS = [(eq, s) for eq in EQUATIONS for s in eq.solvers]


def _id(case):
    eq, s = case
    return f"{s.output}<-{','.join(s.inputs)}"


@pytest.mark.parametrize("case", SOLVERS, ids=[_id(c) for c in SOLVERS])
def test_solver_fields_are_numeric_motor_fields(case):
    eq, s = case
    assert s.output in NUMERIC_MOTOR_FIELDS, f"{eq.name}: output {s.output!r} is not a numeric motor field"
    for name in s.inputs:
        assert name in NUMERIC_MOTOR_FIELDS, f"{eq.name}: input {name!r} is not a numeric motor field"
    assert s.output not in s.inputs, eq.name
    assert len(set(s.inputs)) == len(s.inputs), eq.name
    assert callable(s.func)


@pytest.mark.parametrize("case", SOLVERS, ids=[_id(c) for c in SOLVERS])
def test_solver_takes_as_many_arguments_as_inputs(case):
    eq, s = case
    params = [p for p in inspect.signature(s.func).parameters.values()
              if p.kind in (p.POSITIONAL_ONLY, p.POSITIONAL_OR_KEYWORD)]
    required = [p for p in params if p.default is inspect.Parameter.empty]
    assert len(required) <= len(s.inputs) <= len(params), (eq.name, s.output)


def test_every_solver_of_an_equation_uses_only_its_fields():
    for eq in EQUATIONS:
        primary = {eq.solvers[0].output, *eq.solvers[0].inputs}
        for s in eq.solvers[1:]:
            assert {s.output, *s.inputs} <= primary, f"{eq.name}: solver for {s.output} leaves the relation"


def test_equation_names_are_unique():
    names = [eq.name for eq in EQUATIONS]
    assert len(names) == len(set(names)), sorted(n for n in names if names.count(n) > 1)


def test_derivable_fields_are_the_solver_outputs():
    assert set(DERIVABLE) == {s.output for _, s in SOLVERS}
    assert set(DERIVABLE) <= NUMERIC_MOTOR_FIELDS


def test_relation_table_markdown_lists_every_solver():
    lines = relation_table_markdown().splitlines()
    assert lines[:2] == ["| relation | field | from |", "|---|---|---|"]
    body = lines[2:]
    expected = [f"| {eq.name} | {s.output} | {', '.join(s.inputs)} |" for eq, s in SOLVERS]
    assert body == expected
    assert len(body) == len(SOLVERS)


def test_every_solver_is_a_documented_physics_function():
    """The solvers are the functions of :mod:`catalog.physics` (pure, documented, tested there),
    or a thin wrapper in :mod:`catalog.derive` that fixes a rating condition; no solver twice."""
    from catalog import derive, physics

    seen = set()
    for eq, s in SOLVERS:
        name = s.func.__name__
        assert getattr(physics, name, None) is s.func or getattr(derive, name, None) is s.func, name
        assert inspect.getdoc(s.func), name
        assert (s.output, s.func) not in seen, (eq.name, s.output)
        seen.add((s.output, s.func))


def test_a_relation_solves_for_each_field_at_most_once():
    for eq in EQUATIONS:
        outputs = [s.output for s in eq.solvers]
        assert len(outputs) == len(set(outputs)), eq.name


#: Parameters of an operating point, which a relation binds to the datasheet field it holds at.
OPERATING_POINT = {"supply_voltage", "torque", "current", "speed"}


@pytest.mark.parametrize("case", SOLVERS, ids=[_id(c) for c in SOLVERS])
def test_solver_inputs_are_the_parameter_names(case):
    """One name per quantity: a solver hands a field to the parameter of the same name; only an
    operating-point parameter takes a field of another name (e.g. supply_voltage <- nominal_voltage)."""
    eq, s = case
    params = [p.name for p in inspect.signature(s.func).parameters.values()
              if p.default is inspect.Parameter.empty]
    assert len(params) == len(s.inputs), (eq.name, s.output)
    for param, name in zip(params, s.inputs):
        assert param == name or param in OPERATING_POINT, (eq.name, s.output, param, name)
