"""Inverse relations for resistance, Kt, inertia, inductance and efficiency.

Each function solves one forward relation of :mod:`catalog.physics.motor` or
:mod:`catalog.physics.operating_point` (speed-torque gradient, time
constants, motor constant, maximum efficiency) for another quantity, so a
derivation engine can walk a relation table (see
:data:`catalog.derive.EQUATIONS`).  Parameter names are the canonical quantity
names.

Validity shared by all: linear model, constant friction Tf = Kt·I0, steady
state; relations marked "Kt = Ke" use the SI identity of the two constants.
Source: textbook chapter on DC machines, solved algebraically.
"""

from __future__ import annotations

import numpy as np

from .broadcast import vectorised

__all__ = [
    "resistance_from_speed_torque_gradient",
    "torque_constant_from_speed_torque_gradient",
    "mechanical_time_constant_from_gradient",
    "rotor_inertia_from_mechanical_time_constant",
    "rotor_inertia_from_gradient",
    "inductance_from_electrical_time_constant",
    "resistance_from_electrical_time_constant",
    "resistance_from_motor_constant",
    "torque_constant_from_motor_constant",
    "no_load_current_from_max_efficiency",
    "stall_current_from_max_efficiency",
]


@vectorised
def resistance_from_speed_torque_gradient(speed_torque_gradient, torque_constant,
                                          back_emf_constant):
    """Terminal resistance from the speed-torque gradient.

    Parameters
    ----------
    speed_torque_gradient : float or ndarray
        Speed-torque gradient Δω/ΔT [(rad/s)/(N·m)].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        R = (Δω/ΔT)·Kt·Ke [Ω].

    Notes
    -----
    Inverse of Δω/ΔT = R/(Kt·Ke).  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (speed-torque characteristic).
    """
    return speed_torque_gradient * torque_constant * back_emf_constant


@vectorised
def torque_constant_from_speed_torque_gradient(speed_torque_gradient,
                                               terminal_resistance):
    """Torque constant from speed-torque gradient and resistance (Kt = Ke).

    Parameters
    ----------
    speed_torque_gradient : float or ndarray
        Speed-torque gradient Δω/ΔT [(rad/s)/(N·m)].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].

    Returns
    -------
    float or ndarray
        Kt = √(R/(Δω/ΔT)) [N·m/A].

    Notes
    -----
    Inverse of Δω/ΔT = R/Kt² (Kt = Ke in SI).  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (speed-torque characteristic).
    """
    return np.sqrt(terminal_resistance / speed_torque_gradient)


@vectorised
def mechanical_time_constant_from_gradient(rotor_inertia, speed_torque_gradient):
    """Mechanical time constant from inertia and speed-torque gradient.

    Parameters
    ----------
    rotor_inertia : float or ndarray
        Rotor moment of inertia J [kg·m²].
    speed_torque_gradient : float or ndarray
        Speed-torque gradient Δω/ΔT [(rad/s)/(N·m)].

    Returns
    -------
    float or ndarray
        τm = J·Δω/ΔT [s].

    Notes
    -----
    Relation: τm = J·R/(Kt·Ke) = J·Δω/ΔT.  Validity: linear model, τe ≪ τm.

    References
    ----------
    Textbook chapter on DC machines (dynamic model).
    """
    return rotor_inertia * speed_torque_gradient


@vectorised
def rotor_inertia_from_mechanical_time_constant(mechanical_time_constant,
                                                terminal_resistance, torque_constant,
                                                back_emf_constant):
    """Rotor inertia from the mechanical time constant.

    Parameters
    ----------
    mechanical_time_constant : float or ndarray
        Mechanical time constant τm [s].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        J = τm·Kt·Ke/R [kg·m²].

    Notes
    -----
    Inverse of τm = J·R/(Kt·Ke).  Validity: linear model, τe ≪ τm.

    References
    ----------
    Textbook chapter on DC machines (dynamic model).
    """
    return (mechanical_time_constant * torque_constant * back_emf_constant
            / terminal_resistance)


@vectorised
def rotor_inertia_from_gradient(mechanical_time_constant, speed_torque_gradient):
    """Rotor inertia from mechanical time constant and speed-torque gradient.

    Parameters
    ----------
    mechanical_time_constant : float or ndarray
        Mechanical time constant τm [s].
    speed_torque_gradient : float or ndarray
        Speed-torque gradient Δω/ΔT [(rad/s)/(N·m)].

    Returns
    -------
    float or ndarray
        J = τm/(Δω/ΔT) [kg·m²].

    Notes
    -----
    Inverse of τm = J·Δω/ΔT.  Validity: linear model, τe ≪ τm.

    References
    ----------
    Textbook chapter on DC machines (dynamic model).
    """
    return mechanical_time_constant / speed_torque_gradient


@vectorised
def inductance_from_electrical_time_constant(electrical_time_constant,
                                             terminal_resistance):
    """Terminal inductance from the electrical time constant.

    Parameters
    ----------
    electrical_time_constant : float or ndarray
        Electrical time constant τe [s].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].

    Returns
    -------
    float or ndarray
        L = τe·R [H].

    Notes
    -----
    Inverse of τe = L/R.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (RL transient of the armature).
    """
    return electrical_time_constant * terminal_resistance


@vectorised
def resistance_from_electrical_time_constant(electrical_time_constant,
                                             terminal_inductance):
    """Terminal resistance from the electrical time constant.

    Parameters
    ----------
    electrical_time_constant : float or ndarray
        Electrical time constant τe [s].
    terminal_inductance : float or ndarray
        Terminal inductance L [H].

    Returns
    -------
    float or ndarray
        R = L/τe [Ω].

    Notes
    -----
    Inverse of τe = L/R.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (RL transient of the armature).
    """
    return terminal_inductance / electrical_time_constant


@vectorised
def resistance_from_motor_constant(motor_constant, torque_constant):
    """Terminal resistance from the motor constant.

    Parameters
    ----------
    motor_constant : float or ndarray
        Motor constant Km [N·m/√W].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].

    Returns
    -------
    float or ndarray
        R = (Kt/Km)² [Ω].

    Notes
    -----
    Inverse of Km = Kt/√R.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (copper loss).
    """
    ratio = torque_constant / motor_constant
    return ratio * ratio


@vectorised
def torque_constant_from_motor_constant(motor_constant, terminal_resistance):
    """Torque constant from the motor constant.

    Parameters
    ----------
    motor_constant : float or ndarray
        Motor constant Km [N·m/√W].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].

    Returns
    -------
    float or ndarray
        Kt = Km·√R [N·m/A].

    Notes
    -----
    Inverse of Km = Kt/√R.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (copper loss).
    """
    return motor_constant * np.sqrt(terminal_resistance)


@vectorised
def no_load_current_from_max_efficiency(max_efficiency, stall_current):
    """No-load current from maximum efficiency and stall current.

    Parameters
    ----------
    max_efficiency : float or ndarray
        Maximum efficiency ηmax [1].
    stall_current : float or ndarray
        Stall current Is [A].

    Returns
    -------
    float or ndarray
        I0 = Is·(1 − √ηmax)² [A].

    Notes
    -----
    Inverse of ηmax = (1 − √(I0/Is))².  Validity: linear model, Kt = Ke.

    References
    ----------
    Textbook chapter on DC machines (losses and efficiency).
    """
    return stall_current * (1.0 - np.sqrt(max_efficiency)) ** 2


@vectorised
def stall_current_from_max_efficiency(max_efficiency, no_load_current):
    """Stall current from maximum efficiency and no-load current.

    Parameters
    ----------
    max_efficiency : float or ndarray
        Maximum efficiency ηmax [1].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Is = I0/(1 − √ηmax)² [A].

    Notes
    -----
    Inverse of ηmax = (1 − √(I0/Is))².  Validity: linear model, Kt = Ke.

    References
    ----------
    Textbook chapter on DC machines (losses and efficiency).
    """
    return no_load_current / (1.0 - np.sqrt(max_efficiency)) ** 2
