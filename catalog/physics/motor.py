"""Constants of the linear permanent-magnet DC motor model (forward relations).

Model (brushed and brushless DC motors with trapezoidal/block commutation
reduced to an equivalent DC machine, SI units throughout)::

    V = R·I + L·dI/dt + Ke·ω          armature circuit
    T = Kt·(I − I0) = Kt·I − Tf       shaft torque, Tf = Kt·I0 constant

with V supply voltage [V], R terminal resistance [Ω], L terminal inductance
[H], Kt torque constant [N·m/A], Ke back-EMF constant [V·s/rad] (numerically
equal to Kt in SI), I0 no-load current [A] and Tf friction torque [N·m].

Validity shared by every function here: linear model (R, L, Kt, Ke constant;
magnetic saturation, armature reaction and brush drop neglected), constant
(Coulomb) friction torque Tf = Kt·I0, motoring quadrant ω ≥ 0.

Source for all relations: any textbook chapter on DC machines (armature
circuit equation and torque equation of the separately excited / permanent
magnet DC machine).  Inverse relations live in :mod:`catalog.physics.inverse_line`
and :mod:`catalog.physics.inverse_constants`,
operating-point relations in :mod:`catalog.physics.operating_point`.

All functions accept floats, numpy arrays and pandas Series and broadcast.
"""

from __future__ import annotations

import numpy as np

from .broadcast import vectorised

__all__ = [
    "torque_constant_from_back_emf_constant",
    "back_emf_constant_from_torque_constant",
    "speed_constant_from_back_emf_constant",
    "back_emf_constant_from_speed_constant",
    "torque_constant_from_speed_constant",
    "speed_constant_from_torque_constant",
    "stall_current",
    "stall_torque",
    "friction_torque",
    "no_load_speed",
    "speed_torque_gradient",
    "mechanical_time_constant",
    "electrical_time_constant",
    "motor_constant",
]


@vectorised
def torque_constant_from_back_emf_constant(back_emf_constant):
    """Torque constant from the back-EMF constant.

    Parameters
    ----------
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        Torque constant Kt [N·m/A].

    Notes
    -----
    Relation: Kt = Ke (power balance Kt·I·ω = Ke·ω·I; exact in SI units).
    Validity: linear model, any PM DC machine.

    References
    ----------
    Textbook chapter on DC machines (electromechanical power balance).
    """
    return back_emf_constant * 1.0


@vectorised
def back_emf_constant_from_torque_constant(torque_constant):
    """Back-EMF constant from the torque constant.

    Parameters
    ----------
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].

    Returns
    -------
    float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Notes
    -----
    Relation: Ke = Kt (exact in SI units).  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (electromechanical power balance).
    """
    return torque_constant * 1.0


@vectorised
def speed_constant_from_back_emf_constant(back_emf_constant):
    """Speed constant from the back-EMF constant.

    Parameters
    ----------
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        Speed constant Kv = 1/Ke [rad/(s·V)].

    Notes
    -----
    Relation: Kv = 1/Ke.  Datasheets quote Kv in rpm/V; conversion to SI is
    the job of the units layer (1 rpm/V = π/30 rad/(s·V)).
    Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (back-EMF equation E = Ke·ω).
    """
    return 1.0 / back_emf_constant


@vectorised
def back_emf_constant_from_speed_constant(speed_constant):
    """Back-EMF constant from the speed constant.

    Parameters
    ----------
    speed_constant : float or ndarray
        Speed constant Kv [rad/(s·V)].

    Returns
    -------
    float or ndarray
        Back-EMF constant Ke = 1/Kv [V·s/rad].

    Notes
    -----
    Relation: Ke = 1/Kv.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (back-EMF equation E = Ke·ω).
    """
    return 1.0 / speed_constant


@vectorised
def torque_constant_from_speed_constant(speed_constant):
    """Torque constant from the speed constant.

    Parameters
    ----------
    speed_constant : float or ndarray
        Speed constant Kv [rad/(s·V)].

    Returns
    -------
    float or ndarray
        Torque constant Kt = 1/Kv [N·m/A].

    Notes
    -----
    Relation: Kt = Ke = 1/Kv.  With Kv in rpm/V this is the common rule of
    thumb Kt ≈ 9.549/Kv (9.549 = 30/π).  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (power balance, back-EMF equation).
    """
    return 1.0 / speed_constant


@vectorised
def speed_constant_from_torque_constant(torque_constant):
    """Speed constant from the torque constant.

    Parameters
    ----------
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].

    Returns
    -------
    float or ndarray
        Speed constant Kv = 1/Kt [rad/(s·V)].

    Notes
    -----
    Relation: Kv = 1/Ke = 1/Kt.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (power balance, back-EMF equation).
    """
    return 1.0 / torque_constant


@vectorised
def stall_current(supply_voltage, terminal_resistance):
    """Stall (starting) current.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Supply voltage [V].
    terminal_resistance : float or ndarray
        Terminal resistance at the temperature of interest [Ω].

    Returns
    -------
    float or ndarray
        Stall current Is = V/R [A].

    Notes
    -----
    Relation: Is = V/R (rotor locked, ω = 0, steady state).
    Validity: linear model, brush drop neglected.

    References
    ----------
    Textbook chapter on DC machines (armature circuit equation at ω = 0).
    """
    return supply_voltage / terminal_resistance


@vectorised
def stall_torque(torque_constant, stall_current, no_load_current):
    """Stall torque available at the shaft.

    Parameters
    ----------
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    stall_current : float or ndarray
        Stall current Is [A].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Stall torque Ts = Kt·(Is − I0) [N·m].

    Notes
    -----
    Relation: Ts = Kt·(Is − I0).  Friction is counted at stall as well (the
    datasheet convention; it makes the speed-torque line straight from ω0 to
    Ts).  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (torque equation).
    """
    return torque_constant * (stall_current - no_load_current)


@vectorised
def friction_torque(torque_constant, no_load_current):
    """Friction torque from the no-load current.

    Parameters
    ----------
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Friction torque Tf = Kt·I0 [N·m].

    Notes
    -----
    Relation: Tf = Kt·I0.  Validity: constant (speed independent) friction
    torque; viscous and iron losses are lumped into it at no-load speed.

    References
    ----------
    Textbook chapter on DC machines (no-load test, rotational losses).
    """
    return torque_constant * no_load_current


@vectorised
def no_load_speed(supply_voltage, terminal_resistance, no_load_current,
                  back_emf_constant):
    """No-load speed.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Supply voltage V [V].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    no_load_current : float or ndarray
        No-load current I0 [A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        No-load speed ω0 = (V − R·I0)/Ke [rad/s].

    Notes
    -----
    Relation: ω0 = (V − R·I0)/Ke.  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (armature circuit equation at no load).
    """
    return (supply_voltage - terminal_resistance * no_load_current) / back_emf_constant


@vectorised
def speed_torque_gradient(terminal_resistance, torque_constant, back_emf_constant):
    """Speed-torque gradient (slope magnitude of the speed-torque line).

    Parameters
    ----------
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        Gradient Δω/ΔT = R/(Kt·Ke), a positive number: speed falls by this
        much per unit shaft torque [(rad/s)/(N·m)].

    Notes
    -----
    Relation: Δω/ΔT = R/(Kt·Ke) = ω0/Ts.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (speed-torque characteristic).
    """
    return terminal_resistance / (torque_constant * back_emf_constant)


@vectorised
def mechanical_time_constant(rotor_inertia, terminal_resistance, torque_constant,
                             back_emf_constant):
    """Mechanical time constant of the unloaded motor.

    Parameters
    ----------
    rotor_inertia : float or ndarray
        Rotor moment of inertia J [kg·m²].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        τm = J·R/(Kt·Ke) [s]: time to reach 63 % of no-load speed from rest.

    Notes
    -----
    Relation: τm = J·R/(Kt·Ke).  Validity: linear model, inductance
    negligible (τe ≪ τm), constant friction, no load inertia.

    References
    ----------
    Textbook chapter on DC machines (dynamic model, first-order response).
    """
    return rotor_inertia * terminal_resistance / (torque_constant * back_emf_constant)


@vectorised
def electrical_time_constant(terminal_inductance, terminal_resistance):
    """Electrical time constant of the winding.

    Parameters
    ----------
    terminal_inductance : float or ndarray
        Terminal inductance L [H].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].

    Returns
    -------
    float or ndarray
        τe = L/R [s].

    Notes
    -----
    Relation: τe = L/R.  Validity: linear model (no saturation), rotor locked.

    References
    ----------
    Textbook chapter on DC machines (armature circuit, RL transient).
    """
    return terminal_inductance / terminal_resistance


@vectorised
def motor_constant(torque_constant, terminal_resistance):
    """Motor constant (torque per square root of copper loss).

    Parameters
    ----------
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].

    Returns
    -------
    float or ndarray
        Km = Kt/√R [N·m/√W].

    Notes
    -----
    Relation: Km = Kt/√R, so copper loss at torque T is (T/Km)².
    Validity: linear model, friction excluded.

    References
    ----------
    Textbook chapter on DC machines (copper loss P = I²·R with T = Kt·I).
    """
    return torque_constant / np.sqrt(terminal_resistance)
