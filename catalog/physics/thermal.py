"""Two-node thermal network of a motor: steady state and closed forms.

Network::

    winding ──Rth1──> housing ──Rth2──> ambient
      Cw                 Ch

Rth1 winding-to-housing and Rth2 housing-to-ambient thermal resistances
[K/W]; heat capacities from the datasheet time constants by the common
approximation Cw = τw/Rth1 and Ch = τ_motor/Rth2 (each time constant is
read as that of its node alone; :func:`winding_heat_capacity`).

Loss: copper loss only, P = I²·R(Tw) with R(Tw) = R_ref·(1 + α_ref·(Tw −
Tref)).  Because R(Tw) is linear in Tw the network stays linear, so steady
state, runaway threshold and maximum continuous current have exact closed
forms.  Friction, iron and brush losses are not included.

Common keyword parameters: ``resistance_reference_temperature``, at which the
record's resistance is stated [K] (default 298.15 K), ``temperature_coefficient`` α referred to
``coefficient_reference_temperature`` (default copper α20 at 293.15 K).

Source: lumped-parameter thermal networks of electrical machines (textbook
chapter on heating and cooling of machines); IEC 60028 for copper; IEC
60034-1 for continuous duty S1.
"""

from __future__ import annotations

import numpy as np

from .broadcast import vectorised
from .temperature import (
    COEFFICIENT_REFERENCE_TEMPERATURE,
    COPPER_TEMPERATURE_COEFFICIENT,
    DEFAULT_REFERENCE_TEMPERATURE,
    rereference_temperature_coefficient,
)

__all__ = [
    "winding_heat_capacity",
    "housing_heat_capacity",
    "copper_loss",
    "steady_winding_temperature",
    "steady_housing_temperature",
    "thermal_runaway",
    "thermal_runaway_current",
    "max_continuous_current",
    "thermal_resistance_from_max_continuous_current",
]

_TREF = DEFAULT_REFERENCE_TEMPERATURE
_ALPHA = COPPER_TEMPERATURE_COEFFICIENT
_TALPHA = COEFFICIENT_REFERENCE_TEMPERATURE


def linear_resistance_terms(terminal_resistance, ambient_temperature, resistance_reference_temperature,
                            temperature_coefficient, coefficient_reference_temperature):
    """(R at ``ambient_temperature`` [Ω], dR/dT [Ω/K]) of the linear copper law.

    The loss of the network is affine in the winding temperature through these two
    terms; shared by the closed forms here and the transient solutions of
    :mod:`catalog.physics.transient` (numpy arrays in and out, no wrapper).
    """
    alpha = rereference_temperature_coefficient(
        temperature_coefficient, coefficient_reference_temperature,
        resistance_reference_temperature)
    slope = terminal_resistance * alpha
    return terminal_resistance + slope * (ambient_temperature - resistance_reference_temperature), slope


@vectorised
def winding_heat_capacity(thermal_time_constant_winding,
                          thermal_resistance_winding_housing):
    """Heat capacity of the winding node.

    Parameters
    ----------
    thermal_time_constant_winding : float or ndarray
        Winding thermal time constant τw [s].
    thermal_resistance_winding_housing : float or ndarray
        Thermal resistance winding to housing Rth1 [K/W].

    Returns
    -------
    float or ndarray
        Cw = τw/Rth1 [J/K].

    Notes
    -----
    Common datasheet approximation: τw is taken as the time constant of the
    winding alone against a housing at fixed temperature.
    Validity: two-node lumped model.

    References
    ----------
    Textbook chapter on heating and cooling of electrical machines.
    """
    return thermal_time_constant_winding / thermal_resistance_winding_housing


@vectorised
def housing_heat_capacity(thermal_time_constant_motor,
                          thermal_resistance_housing_ambient):
    """Heat capacity of the housing (stator) node.

    Parameters
    ----------
    thermal_time_constant_motor : float or ndarray
        Motor (housing) thermal time constant τ_motor [s].
    thermal_resistance_housing_ambient : float or ndarray
        Thermal resistance housing to ambient Rth2 [K/W].

    Returns
    -------
    float or ndarray
        Ch = τ_motor/Rth2 [J/K].

    Notes
    -----
    Common datasheet approximation: τ_motor is taken as the time constant of
    the housing alone against ambient.  Validity: two-node lumped model.

    References
    ----------
    Textbook chapter on heating and cooling of electrical machines.
    """
    return thermal_time_constant_motor / thermal_resistance_housing_ambient


@vectorised
def copper_loss(current, terminal_resistance, winding_temperature,
                resistance_reference_temperature=_TREF, *, temperature_coefficient=_ALPHA,
                coefficient_reference_temperature=_TALPHA):
    """Copper (Joule) loss in the winding.

    Parameters
    ----------
    current : float or ndarray
        Winding current I (RMS for a varying current) [A].
    terminal_resistance : float or ndarray
        Terminal resistance at the reference temperature [Ω].
    winding_temperature : float or ndarray
        Winding temperature Tw [K].
    resistance_reference_temperature : float or ndarray
        Temperature at which ``terminal_resistance`` is stated [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K].

    Returns
    -------
    float or ndarray
        P = I²·R(Tw) [W].

    Notes
    -----
    Relation: Joule's law with the IEC 60028 resistance line.
    Validity: copper winding, DC (no skin effect).

    References
    ----------
    IEC 60028 (copper resistance law).
    """
    r_at, slope = linear_resistance_terms(terminal_resistance, winding_temperature,
                                   resistance_reference_temperature, temperature_coefficient,
                                   coefficient_reference_temperature)
    return current * current * r_at


def _steady_rise(current, terminal_resistance, rth1, rth2, ambient, tref, alpha, talpha):
    r_amb, slope = linear_resistance_terms(terminal_resistance, ambient, tref, alpha, talpha)
    rth = rth1 + rth2
    i2 = current * current
    gain = i2 * slope * rth
    rise = np.where(gain >= 1.0, np.inf, i2 * r_amb * rth / (1.0 - gain))
    return np.where(np.isnan(gain), np.nan, rise), gain


_COMMON_DOC = """
    current : float or ndarray
        Constant (or RMS) winding current I [A].
    terminal_resistance : float or ndarray
        Terminal resistance at the reference temperature [Ω].
    thermal_resistance_winding_housing : float or ndarray
        Thermal resistance winding to housing Rth1 [K/W].
    thermal_resistance_housing_ambient : float or ndarray
        Thermal resistance housing to ambient Rth2 [K/W].
    ambient_temperature : float or ndarray
        Ambient temperature Ta [K].
    resistance_reference_temperature : float or ndarray
        Temperature at which ``terminal_resistance`` is stated [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K]."""


@vectorised
def steady_winding_temperature(current, terminal_resistance,
                               thermal_resistance_winding_housing,
                               thermal_resistance_housing_ambient, ambient_temperature,
                               resistance_reference_temperature=_TREF, *,
                               temperature_coefficient=_ALPHA,
                               coefficient_reference_temperature=_TALPHA):
    """Steady-state winding temperature at a constant current.

    Parameters
    ----------{common}

    Returns
    -------
    float or ndarray
        Tw [K]; ``inf`` where there is no steady state (thermal runaway).

    Notes
    -----
    Relation: Tw − Ta = I²·R(Tw)·Rth with Rth = Rth1 + Rth2 and R linear in
    Tw, solved exactly: Tw − Ta = I²·R(Ta)·Rth/(1 − I²·R_ref·α_ref·Rth).
    With a varying current the RMS current gives the mean steady state.
    Validity: two-node lumped model, copper loss only, linear R(T).

    References
    ----------
    Textbook chapter on heating of machines; IEC 60028; IEC 60034-1 (S1).
    """
    rise, _ = _steady_rise(current, terminal_resistance,
                           thermal_resistance_winding_housing,
                           thermal_resistance_housing_ambient, ambient_temperature,
                           resistance_reference_temperature, temperature_coefficient,
                           coefficient_reference_temperature)
    return ambient_temperature + rise


@vectorised
def steady_housing_temperature(current, terminal_resistance,
                               thermal_resistance_winding_housing,
                               thermal_resistance_housing_ambient, ambient_temperature,
                               resistance_reference_temperature=_TREF, *,
                               temperature_coefficient=_ALPHA,
                               coefficient_reference_temperature=_TALPHA):
    """Steady-state housing temperature at a constant current.

    Parameters
    ----------{common}

    Returns
    -------
    float or ndarray
        Th [K]; ``inf`` at thermal runaway.

    Notes
    -----
    Relation: the same heat flow P passes both resistances, so
    Th − Ta = (Tw − Ta)·Rth2/(Rth1 + Rth2).
    Validity: two-node lumped model, copper loss only, linear R(T).

    References
    ----------
    Textbook chapter on heating of electrical machines.
    """
    rise, _ = _steady_rise(current, terminal_resistance,
                           thermal_resistance_winding_housing,
                           thermal_resistance_housing_ambient, ambient_temperature,
                           resistance_reference_temperature, temperature_coefficient,
                           coefficient_reference_temperature)
    share = thermal_resistance_housing_ambient / (
        thermal_resistance_winding_housing + thermal_resistance_housing_ambient)
    return ambient_temperature + rise * share


@vectorised
def thermal_runaway(current, terminal_resistance, thermal_resistance_winding_housing,
                    thermal_resistance_housing_ambient, resistance_reference_temperature=_TREF, *,
                    temperature_coefficient=_ALPHA,
                    coefficient_reference_temperature=_TALPHA):
    """Whether a constant current has no thermal steady state.

    Parameters
    ----------
    current : float or ndarray
        Constant (or RMS) winding current I [A].
    terminal_resistance : float or ndarray
        Terminal resistance at the reference temperature [Ω].
    thermal_resistance_winding_housing : float or ndarray
        Thermal resistance winding to housing Rth1 [K/W].
    thermal_resistance_housing_ambient : float or ndarray
        Thermal resistance housing to ambient Rth2 [K/W].
    resistance_reference_temperature : float or ndarray
        Temperature at which ``terminal_resistance`` is stated [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K].

    Returns
    -------
    bool or ndarray of bool
        True where I²·R_ref·α_ref·(Rth1 + Rth2) ≥ 1 [-]; NaN inputs give False.

    Notes
    -----
    Relation: loss grows by I²·R_ref·α_ref per kelvin while cooling grows by
    1/Rth per kelvin; runaway when the first is not smaller.  R_ref·α_ref is
    independent of the reference temperature, so ambient does not enter.
    Validity: two-node lumped model, copper loss only, linear R(T).

    References
    ----------
    Textbook chapter on heating of electrical machines; IEC 60028.
    """
    _, slope = linear_resistance_terms(terminal_resistance, resistance_reference_temperature,
                                resistance_reference_temperature, temperature_coefficient,
                                coefficient_reference_temperature)
    rth = thermal_resistance_winding_housing + thermal_resistance_housing_ambient
    return current * current * slope * rth >= 1.0


@vectorised
def thermal_runaway_current(terminal_resistance, thermal_resistance_winding_housing,
                            thermal_resistance_housing_ambient,
                            resistance_reference_temperature=_TREF, *,
                            temperature_coefficient=_ALPHA,
                            coefficient_reference_temperature=_TALPHA):
    """Smallest constant current without a thermal steady state.

    Parameters
    ----------
    terminal_resistance : float or ndarray
        Terminal resistance at the reference temperature [Ω].
    thermal_resistance_winding_housing : float or ndarray
        Thermal resistance winding to housing Rth1 [K/W].
    thermal_resistance_housing_ambient : float or ndarray
        Thermal resistance housing to ambient Rth2 [K/W].
    resistance_reference_temperature : float or ndarray
        Temperature at which ``terminal_resistance`` is stated [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K].

    Returns
    -------
    float or ndarray
        I_run = 1/√(R_ref·α_ref·(Rth1 + Rth2)) [A].

    Notes
    -----
    Relation: threshold of :func:`thermal_runaway`.  Far above any rating;
    useful as a sanity bound.  Validity: as :func:`thermal_runaway`.

    References
    ----------
    Textbook chapter on heating of electrical machines; IEC 60028.
    """
    _, slope = linear_resistance_terms(terminal_resistance, resistance_reference_temperature,
                                resistance_reference_temperature, temperature_coefficient,
                                coefficient_reference_temperature)
    rth = thermal_resistance_winding_housing + thermal_resistance_housing_ambient
    return 1.0 / np.sqrt(slope * rth)


@vectorised
def max_continuous_current(max_winding_temperature, terminal_resistance,
                           thermal_resistance_winding_housing,
                           thermal_resistance_housing_ambient, ambient_temperature,
                           resistance_reference_temperature=_TREF, *,
                           temperature_coefficient=_ALPHA,
                           coefficient_reference_temperature=_TALPHA):
    """Largest constant current that keeps the winding at or below a limit.

    Parameters
    ----------
    max_winding_temperature : float or ndarray
        Permitted winding temperature Tmax [K].{common_tail}

    Returns
    -------
    float or ndarray
        I_max = √((Tmax − Ta)/((Rth1 + Rth2)·R(Tmax))) [A]; NaN where
        Tmax < Ta (no current can satisfy the limit).

    Notes
    -----
    Relation: the steady state Tw − Ta = I²·R(Tw)·Rth evaluated at Tw = Tmax
    and solved for I; exact inverse of :func:`steady_winding_temperature`.
    Validity: two-node lumped model, copper loss only, linear R(T).

    References
    ----------
    Textbook chapter on heating of machines; IEC 60028; IEC 60034-1 (S1).
    """
    r_max, _ = linear_resistance_terms(terminal_resistance, max_winding_temperature,
                                resistance_reference_temperature, temperature_coefficient,
                                coefficient_reference_temperature)
    rth = thermal_resistance_winding_housing + thermal_resistance_housing_ambient
    rise = max_winding_temperature - ambient_temperature
    return np.sqrt(np.where(rise < 0.0, np.nan, rise / (rth * r_max)))


@vectorised
def thermal_resistance_from_max_continuous_current(max_continuous_current,
                                                   max_winding_temperature,
                                                   terminal_resistance,
                                                   ambient_temperature,
                                                   resistance_reference_temperature=_TREF, *,
                                                   temperature_coefficient=_ALPHA,
                                                   coefficient_reference_temperature=_TALPHA):
    """Total thermal resistance implied by a rated continuous current.

    Parameters
    ----------
    max_continuous_current : float or ndarray
        Rated maximum continuous current I_max [A].
    max_winding_temperature : float or ndarray
        Winding temperature the rating refers to Tmax [K].
    terminal_resistance : float or ndarray
        Terminal resistance at the reference temperature [Ω].
    ambient_temperature : float or ndarray
        Ambient temperature of the rating Ta [K].
    resistance_reference_temperature : float or ndarray
        Temperature at which ``terminal_resistance`` is stated [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K].

    Returns
    -------
    float or ndarray
        Rth1 + Rth2 = (Tmax − Ta)/(I_max²·R(Tmax)) [K/W].

    Notes
    -----
    Inverse of :func:`max_continuous_current` for the total resistance.
    Validity: two-node lumped model, copper loss only, linear R(T).

    References
    ----------
    Textbook chapter on heating of machines; IEC 60028; IEC 60034-1 (S1).
    """
    r_max, _ = linear_resistance_terms(terminal_resistance, max_winding_temperature,
                                resistance_reference_temperature, temperature_coefficient,
                                coefficient_reference_temperature)
    return (max_winding_temperature - ambient_temperature) / (
        max_continuous_current * max_continuous_current * r_max)


for _function in (steady_winding_temperature, steady_housing_temperature,
                  max_continuous_current):
    if _function.__doc__:  # docstrings are stripped under python -OO
        _function.__doc__ = _function.__doc__.format(
            common=_COMMON_DOC,
            common_tail="\n" + _COMMON_DOC.split("\n", 3)[3])
del _function
