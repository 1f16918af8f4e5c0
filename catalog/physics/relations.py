"""Relation table for deriving missing motor constants.

Each entry says: quantity ``output`` can be computed by ``function`` from the
quantities ``inputs``, which are exactly the function's parameter names (the
canonical quantity names of the catalogue).  A derivation engine walks this
table until no new quantity appears.  Only relations between constants of one
record are listed (not operating points, temperatures or gears); every
relation is exact within the linear model of :mod:`catalog.physics.motor`.
"""

from __future__ import annotations

import inspect
from typing import Callable, NamedTuple

from . import inverse_constants as _ic
from . import inverse_line as _il
from . import motor as _m
from . import operating_point as _op

__all__ = ["Relation", "RELATIONS", "relations_for"]


class Relation(NamedTuple):
    """One derivation step: ``output = function(**{name: value for inputs})``."""

    output: str
    function: Callable
    inputs: tuple


def _relation(output: str, function: Callable) -> Relation:
    parameters = inspect.signature(function).parameters.values()
    inputs = tuple(p.name for p in parameters if p.default is inspect.Parameter.empty)
    return Relation(output, function, inputs)


_TABLE = (
    ("torque_constant", _m.torque_constant_from_back_emf_constant),
    ("back_emf_constant", _m.back_emf_constant_from_torque_constant),
    ("speed_constant", _m.speed_constant_from_back_emf_constant),
    ("back_emf_constant", _m.back_emf_constant_from_speed_constant),
    ("torque_constant", _m.torque_constant_from_speed_constant),
    ("speed_constant", _m.speed_constant_from_torque_constant),
    ("stall_current", _m.stall_current),
    ("stall_torque", _m.stall_torque),
    ("friction_torque", _m.friction_torque),
    ("no_load_speed", _m.no_load_speed),
    ("speed_torque_gradient", _m.speed_torque_gradient),
    ("mechanical_time_constant", _m.mechanical_time_constant),
    ("electrical_time_constant", _m.electrical_time_constant),
    ("motor_constant", _m.motor_constant),
    ("max_efficiency", _op.max_efficiency),
    ("max_efficiency_current", _op.max_efficiency_current),
    ("max_output_power", _op.max_output_power),
    ("max_output_power", _op.max_output_power_from_no_load_speed_and_stall_torque),
    ("terminal_resistance", _il.resistance_from_stall_current),
    ("supply_voltage", _il.supply_voltage_from_stall_current),
    ("torque_constant", _il.torque_constant_from_stall),
    ("stall_current", _il.stall_current_from_stall_torque),
    ("no_load_current", _il.no_load_current_from_stall),
    ("no_load_current", _il.no_load_current_from_friction_torque),
    ("torque_constant", _il.torque_constant_from_friction_torque),
    ("back_emf_constant", _il.back_emf_constant_from_no_load_speed),
    ("no_load_current", _il.no_load_current_from_no_load_speed),
    ("terminal_resistance", _il.resistance_from_no_load_speed),
    ("supply_voltage", _il.supply_voltage_from_no_load_speed),
    ("speed_torque_gradient",
     _il.speed_torque_gradient_from_no_load_speed_and_stall_torque),
    ("stall_torque", _il.stall_torque_from_no_load_speed_and_gradient),
    ("no_load_speed", _il.no_load_speed_from_stall_torque_and_gradient),
    ("terminal_resistance", _ic.resistance_from_speed_torque_gradient),
    ("torque_constant", _ic.torque_constant_from_speed_torque_gradient),
    ("mechanical_time_constant", _ic.mechanical_time_constant_from_gradient),
    ("rotor_inertia", _ic.rotor_inertia_from_mechanical_time_constant),
    ("rotor_inertia", _ic.rotor_inertia_from_gradient),
    ("terminal_inductance", _ic.inductance_from_electrical_time_constant),
    ("terminal_resistance", _ic.resistance_from_electrical_time_constant),
    ("terminal_resistance", _ic.resistance_from_motor_constant),
    ("torque_constant", _ic.torque_constant_from_motor_constant),
    ("no_load_current", _ic.no_load_current_from_max_efficiency),
    ("stall_current", _ic.stall_current_from_max_efficiency),
)

#: All derivation relations, in a stable order.
RELATIONS = tuple(_relation(output, function) for output, function in _TABLE)


def relations_for(output):
    """Relations that compute one quantity.

    Parameters
    ----------
    output : str
        Canonical quantity name, e.g. 'stall_torque' [-].

    Returns
    -------
    tuple of Relation
        Every relation in ``RELATIONS`` whose output is ``output`` [-].

    Notes
    -----
    Relation: table look-up only.  Validity: as each relation's function.

    References
    ----------
    Textbook chapter on DC machines (the relations themselves).
    """
    return tuple(r for r in RELATIONS if r.output == output)
