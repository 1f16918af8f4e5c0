"""Temperature dependence of winding resistance and magnets; insulation classes.

Tables here are data that the code walks:

* ``WINDING_MATERIALS``: resistance temperature coefficient α20 of the
  conductor, referred to 20 °C (copper: IEC 60028 annealed copper standard).
* ``MAGNET_MATERIALS``: typical reversible temperature coefficient β of the
  remanence Br, with the range quoted across grades.  These are typical
  values, not guarantees; the keys are the schema's magnet material enum.
* ``INSULATION_CLASSES``: IEC 60085:2007 thermal classes in kelvin.

All temperatures are in kelvin.  A per-record reference temperature Tref is
the temperature at which the record's resistance and Kt were stated (20 °C or
25 °C on datasheets; default 25 °C = 298.15 K).
"""

from __future__ import annotations

import math

import numpy as np

from .broadcast import vectorised

__all__ = [
    "WINDING_MATERIALS",
    "COPPER_TEMPERATURE_COEFFICIENT",
    "COEFFICIENT_REFERENCE_TEMPERATURE",
    "DEFAULT_REFERENCE_TEMPERATURE",
    "MAGNET_MATERIALS",
    "CONSERVATIVE_MAGNET_COEFFICIENT",
    "INSULATION_CLASSES",
    "rereference_temperature_coefficient",
    "resistance_at_temperature",
    "resistance_at_reference_temperature",
    "winding_temperature_from_resistance",
    "torque_constant_at_temperature",
    "magnet_coefficient",
    "insulation_class_temperature",
]

_ZERO_CELSIUS = 273.15  # [K]

#: Temperature the conductor coefficients in WINDING_MATERIALS refer to [K].
COEFFICIENT_REFERENCE_TEMPERATURE = _ZERO_CELSIUS + 20.0
#: Default reference temperature of a catalogue record (25 °C) [K].
DEFAULT_REFERENCE_TEMPERATURE = _ZERO_CELSIUS + 25.0

#: Conductor materials: α referred to 20 °C [1/K] and the source.
WINDING_MATERIALS = {
    "copper": {
        "temperature_coefficient": 0.00393,
        "source": "IEC 60028 (international standard of resistance for copper, "
                  "annealed copper, alpha at 20 °C = 0.00393 /K)",
    },
}
#: α20 of annealed copper [1/K] (IEC 60028).
COPPER_TEMPERATURE_COEFFICIENT = WINDING_MATERIALS["copper"]["temperature_coefficient"]

#: Reversible temperature coefficient of remanence Br, per kelvin (−0.10 %/K
#: is −0.0010 /K).  'typical' is a typical value, 'most_negative' and
#: 'least_negative' bound the spread across common grades.  Typical values
#: only: a magnet datasheet overrides them.  Kt follows Br for magnets
#: working on their linear recoil line (no irreversible demagnetisation).
MAGNET_MATERIALS = {
    "ndfeb": {
        "description": "sintered NdFeB",
        "typical": -0.0010, "most_negative": -0.0013, "least_negative": -0.0009,
    },
    "ndfeb_bonded": {
        "description": "bonded (polymer-bound, isotropic) NdFeB; wide spread "
                       "between powder grades, verify against the datasheet",
        "typical": -0.0011, "most_negative": -0.0013, "least_negative": -0.0007,
    },
    "smco": {
        "description": "samarium-cobalt: SmCo5 about -0.04 %/K, "
                       "Sm2Co17 about -0.03 %/K",
        "typical": -0.00035, "most_negative": -0.0005, "least_negative": -0.00025,
    },
    "ferrite": {
        "description": "hard (strontium/barium) ferrite",
        "typical": -0.0020, "most_negative": -0.0020, "least_negative": -0.0018,
    },
    "alnico": {
        "description": "cast/sintered AlNiCo",
        "typical": -0.0002, "most_negative": -0.00025, "least_negative": -0.0001,
    },
    "unknown": {
        "description": "magnet material not stated",
        "typical": math.nan, "most_negative": math.nan, "least_negative": math.nan,
    },
}
#: Most negative coefficient over all known materials [1/K]: a conservative
#: stand-in for 'unknown' when hot torque must not be overestimated.
CONSERVATIVE_MAGNET_COEFFICIENT = min(
    entry["most_negative"] for entry in MAGNET_MATERIALS.values()
    if not math.isnan(entry["most_negative"])
)

_INSULATION_CLASSES_CELSIUS = {
    "Y": 90.0, "A": 105.0, "E": 120.0, "B": 130.0,
    "F": 155.0, "H": 180.0, "N": 200.0, "R": 220.0,
}
#: IEC 60085:2007 thermal classes (letter designation) → temperature [K].
INSULATION_CLASSES = {
    letter: celsius + _ZERO_CELSIUS
    for letter, celsius in _INSULATION_CLASSES_CELSIUS.items()
}

_MAGNET_BOUNDS = ("typical", "most_negative", "least_negative")


@vectorised
def rereference_temperature_coefficient(temperature_coefficient,
                                        coefficient_reference_temperature,
                                        reference_temperature):
    """Refer a linear temperature coefficient to another reference temperature.

    Parameters
    ----------
    temperature_coefficient : float or ndarray
        Coefficient α referred to ``coefficient_reference_temperature`` [1/K].
    coefficient_reference_temperature : float or ndarray
        Temperature the given coefficient refers to [K].
    reference_temperature : float or ndarray
        New reference temperature [K].

    Returns
    -------
    float or ndarray
        α_ref = α/(1 + α·(Tref − Tα)) [1/K].

    Notes
    -----
    Relation: the same straight line R(T) = R(Tα)·(1 + α·(T − Tα)) written
    about Tref; exact for a linear law.  Validity: linear temperature law.

    References
    ----------
    IEC 60028 (copper resistance law, coefficient at other temperatures).
    """
    return temperature_coefficient / (
        1.0 + temperature_coefficient
        * (reference_temperature - coefficient_reference_temperature))


@vectorised
def resistance_at_temperature(terminal_resistance, temperature,
                              resistance_reference_temperature=DEFAULT_REFERENCE_TEMPERATURE, *,
                              temperature_coefficient=COPPER_TEMPERATURE_COEFFICIENT,
                              coefficient_reference_temperature=COEFFICIENT_REFERENCE_TEMPERATURE):
    """Winding resistance at a temperature.

    Parameters
    ----------
    terminal_resistance : float or ndarray
        Terminal resistance at the reference temperature [Ω].
    temperature : float or ndarray
        Winding temperature [K].
    resistance_reference_temperature : float or ndarray
        Temperature at which ``terminal_resistance`` is stated [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α referred to
        ``coefficient_reference_temperature`` [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K]; default 293.15 K.

    Returns
    -------
    float or ndarray
        R(T) = R(Tref)·(1 + α_ref·(T − Tref)) [Ω].

    Notes
    -----
    Relation: R(T) = R(Tref)·(1 + α_ref·(T − Tref)) with
    α_ref = α20/(1 + α20·(Tref − 293.15 K)), i.e. exactly the IEC 60028 line
    through R(20 °C).  Validity: copper winding, linear law (good from about
    −50 °C to 200 °C), brush and contact resistance neglected.

    References
    ----------
    IEC 60028, international standard of resistance for copper.
    """
    alpha = rereference_temperature_coefficient(
        temperature_coefficient, coefficient_reference_temperature,
        resistance_reference_temperature)
    return terminal_resistance * (1.0 + alpha * (temperature - resistance_reference_temperature))


@vectorised
def resistance_at_reference_temperature(resistance, temperature,
                                        resistance_reference_temperature=DEFAULT_REFERENCE_TEMPERATURE,
                                        *,
                                        temperature_coefficient=COPPER_TEMPERATURE_COEFFICIENT,
                                        coefficient_reference_temperature=COEFFICIENT_REFERENCE_TEMPERATURE):
    """Resistance referred back to the reference temperature.

    Parameters
    ----------
    resistance : float or ndarray
        Resistance measured at ``temperature`` [Ω].
    temperature : float or ndarray
        Winding temperature at the measurement [K].
    resistance_reference_temperature : float or ndarray
        Temperature to refer the resistance to [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α referred to
        ``coefficient_reference_temperature`` [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K]; default 293.15 K.

    Returns
    -------
    float or ndarray
        R(Tref) = R(T)/(1 + α_ref·(T − Tref)) [Ω].

    Notes
    -----
    Inverse of :func:`resistance_at_temperature`.  Validity: copper winding,
    linear law.

    References
    ----------
    IEC 60028, international standard of resistance for copper.
    """
    alpha = rereference_temperature_coefficient(
        temperature_coefficient, coefficient_reference_temperature,
        resistance_reference_temperature)
    return resistance / (1.0 + alpha * (temperature - resistance_reference_temperature))


@vectorised
def winding_temperature_from_resistance(resistance, terminal_resistance,
                                        resistance_reference_temperature=DEFAULT_REFERENCE_TEMPERATURE,
                                        *,
                                        temperature_coefficient=COPPER_TEMPERATURE_COEFFICIENT,
                                        coefficient_reference_temperature=COEFFICIENT_REFERENCE_TEMPERATURE):
    """Mean winding temperature from a hot resistance (resistance method).

    Parameters
    ----------
    resistance : float or ndarray
        Hot resistance [Ω].
    terminal_resistance : float or ndarray
        Terminal resistance at the reference temperature [Ω].
    resistance_reference_temperature : float or ndarray
        Temperature at which ``terminal_resistance`` is stated [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α referred to
        ``coefficient_reference_temperature`` [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K]; default 293.15 K.

    Returns
    -------
    float or ndarray
        T = Tref + (R/R_ref − 1)/α_ref [K].

    Notes
    -----
    Inverse of :func:`resistance_at_temperature`.  IEC 60034-1 writes the same
    method with 235 K (= 1/α20 − 20 °C rounded) for copper.
    Validity: copper winding, linear law, mean (not hot-spot) temperature.

    References
    ----------
    IEC 60028 (copper law); IEC 60034-1 (resistance method).
    """
    alpha = rereference_temperature_coefficient(
        temperature_coefficient, coefficient_reference_temperature,
        resistance_reference_temperature)
    return resistance_reference_temperature + (resistance / terminal_resistance - 1.0) / alpha


@vectorised
def torque_constant_at_temperature(torque_constant, magnet_temperature,
                                   remanence_coefficient,
                                   reference_temperature=DEFAULT_REFERENCE_TEMPERATURE):
    """Torque (and back-EMF) constant at a magnet temperature.

    Parameters
    ----------
    torque_constant : float or ndarray
        Torque constant Kt (or Ke) at the reference temperature [N·m/A].
    magnet_temperature : float or ndarray
        Magnet temperature [K].
    remanence_coefficient : float or ndarray
        Reversible temperature coefficient β of the remanence, referred to the
        reference temperature [1/K] (see :func:`magnet_coefficient`); NaN
        propagates so a check sees that it is missing.
    reference_temperature : float or ndarray
        Temperature at which ``torque_constant`` is stated [K].

    Returns
    -------
    float or ndarray
        Kt(Tm) = Kt(Tref)·(1 + β·(Tm − Tref)) [N·m/A].

    Notes
    -----
    Relation: flux, hence Kt = Ke, scales with Br.  Validity: reversible
    region only (no irreversible demagnetisation), linear law over the
    coefficient's range (usually 20 °C to 100..150 °C).  Datasheet β values
    are averages over such a range, so re-referencing them is not done.

    References
    ----------
    IEC 60404-8-1 (magnetically hard materials, reversible temperature
    coefficient of Br); textbook chapter on PM DC machines (Kt ∝ flux).
    """
    return torque_constant * (
        1.0 + remanence_coefficient * (magnet_temperature - reference_temperature))


def _lookup_magnet(magnet_material, bound, missing):
    if magnet_material is None or (isinstance(magnet_material, float)
                                   and math.isnan(magnet_material)):
        magnet_material = "unknown"
    key = str(magnet_material).strip().lower()
    if key not in MAGNET_MATERIALS:
        raise ValueError(f"unknown magnet material {magnet_material!r}; "
                         f"expected one of {sorted(MAGNET_MATERIALS)}")
    value = MAGNET_MATERIALS[key][bound]
    return missing if math.isnan(value) else value


@vectorised
def magnet_coefficient(magnet_material, *, bound="typical", missing=math.nan):
    """Reversible temperature coefficient of remanence for a magnet material.

    Parameters
    ----------
    magnet_material : str or ndarray of str
        Magnet material, a key of ``MAGNET_MATERIALS`` ('ndfeb', 'ndfeb_bonded',
        'smco', 'ferrite', 'alnico', 'unknown'); None counts as 'unknown' [-].
    bound : str
        'typical', 'most_negative' (conservative for hot torque) or
        'least_negative' [-].
    missing : float
        Value returned where the coefficient is not known ('unknown'),
        default NaN; pass ``CONSERVATIVE_MAGNET_COEFFICIENT`` for a
        conservative default [1/K].

    Returns
    -------
    float or ndarray
        Coefficient β [1/K] (−0.10 %/K is −0.0010 /K).

    Notes
    -----
    Walks the ``MAGNET_MATERIALS`` table; values are typical, not guaranteed.
    An unrecognised key raises ValueError.  Validity: reversible region.

    References
    ----------
    IEC 60404-8-1 (magnetically hard materials), typical values.
    """
    if bound not in _MAGNET_BOUNDS:
        raise ValueError(f"bound must be one of {_MAGNET_BOUNDS}, got {bound!r}")
    if isinstance(magnet_material, np.ndarray):
        flat = [_lookup_magnet(m, bound, missing) for m in magnet_material.ravel()]
        return np.asarray(flat, dtype=float).reshape(magnet_material.shape)
    return float(_lookup_magnet(magnet_material, bound, missing))


def _lookup_class(insulation_class):
    if insulation_class is None or (
            isinstance(insulation_class, float) and math.isnan(insulation_class)):
        return math.nan
    key = str(insulation_class).strip().upper()
    if key in INSULATION_CLASSES:
        return INSULATION_CLASSES[key]
    try:
        celsius = float(key)
    except ValueError:
        celsius = math.nan
    if celsius in _INSULATION_CLASSES_CELSIUS.values():
        return celsius + _ZERO_CELSIUS
    raise ValueError(f"unknown insulation class {insulation_class!r}; expected a "
                     f"letter of {sorted(INSULATION_CLASSES)} or its number in °C")


@vectorised
def insulation_class_temperature(insulation_class):
    """Maximum temperature of an insulation thermal class.

    Parameters
    ----------
    insulation_class : str or ndarray of str
        Letter ('B', 'F', 'H', ...) or numeric designation ('155', 155) of
        the IEC 60085 thermal class; None gives NaN [-].

    Returns
    -------
    float or ndarray
        Thermal class temperature [K] (class F: 155 °C = 428.15 K).

    Notes
    -----
    Walks ``INSULATION_CLASSES``.  The class temperature is the hot-spot
    limit of the insulation system; how much margin to keep between mean
    winding temperature (what the thermal model gives) and hot spot is a
    selection policy, not done here.

    References
    ----------
    IEC 60085:2007, electrical insulation – thermal evaluation and designation.
    """
    if isinstance(insulation_class, np.ndarray):
        flat = [_lookup_class(c) for c in insulation_class.ravel()]
        return np.asarray(flat, dtype=float).reshape(insulation_class.shape)
    return float(_lookup_class(insulation_class))
