"""Duty-cycle helpers: time-weighted RMS, mean and energy over segments.

A duty cycle is a sequence of segments along the last axis: ``durations``
[s] and the values in each segment.  Values are constant in a segment, or,
with ``end_values`` given, vary linearly from ``values`` to ``end_values``
(ramps of a trapezoidal speed profile).  Leading axes broadcast (many motors
or many profiles at once).

Source: IEC 60050-103 (International Electrotechnical Vocabulary,
mathematics - functions: mean and root-mean-square value over an interval);
IEC 60034-1 for the use of RMS current/torque in periodic duty.
"""

from __future__ import annotations

import numpy as np

from .broadcast import vectorised

__all__ = ["rms", "time_average", "energy_per_cycle"]


def _check(durations):
    durations = np.asarray(durations, dtype=float)
    if np.any(durations < 0.0):
        raise ValueError("segment durations must not be negative")
    return durations


@vectorised
def rms(values, durations, end_values=None):
    """Time-weighted root-mean-square value over the segments (last axis).

    Parameters
    ----------
    values : ndarray
        Segment values (or ramp start values), shape (..., S) [any unit].
    durations : ndarray
        Segment durations, broadcastable to ``values`` [s].
    end_values : ndarray
        Ramp end values; None for constant segments [any unit].

    Returns
    -------
    float or ndarray
        √(Σ mean(v²)·d / Σ d), in the unit of ``values`` [any unit]; NaN for
        zero total duration.

    Notes
    -----
    Relation: mean(v²) is v² on a constant segment and (a² + a·b + b²)/3 on a
    linear ramp from a to b.  Validity: piecewise-constant or piecewise-linear
    signal.

    References
    ----------
    IEC 60050-103 (root-mean-square value).
    """
    durations = _check(durations)
    a = np.asarray(values, dtype=float)
    b = a if end_values is None else np.asarray(end_values, dtype=float)
    square = (a * a + a * b + b * b) / 3.0
    total = np.sum(np.broadcast_to(durations, np.broadcast_shapes(
        durations.shape, square.shape)), axis=-1)
    return np.sqrt(np.sum(square * durations, axis=-1) / total)


@vectorised
def time_average(values, durations, end_values=None):
    """Time-weighted mean value over the segments (last axis).

    Parameters
    ----------
    values : ndarray
        Segment values (or ramp start values), shape (..., S) [any unit].
    durations : ndarray
        Segment durations, broadcastable to ``values`` [s].
    end_values : ndarray
        Ramp end values; None for constant segments [any unit].

    Returns
    -------
    float or ndarray
        Σ mean(v)·d / Σ d, in the unit of ``values`` [any unit].

    Notes
    -----
    Relation: mean(v) is v on a constant segment, (a + b)/2 on a ramp.
    Validity: piecewise-constant or piecewise-linear signal.

    References
    ----------
    IEC 60050-103 (mean value).
    """
    durations = _check(durations)
    a = np.asarray(values, dtype=float)
    b = a if end_values is None else np.asarray(end_values, dtype=float)
    mean = (a + b) / 2.0
    total = np.sum(np.broadcast_to(durations, np.broadcast_shapes(
        durations.shape, mean.shape)), axis=-1)
    return np.sum(mean * durations, axis=-1) / total


@vectorised
def energy_per_cycle(power, durations, end_power=None, *, regenerative=True):
    """Energy over one cycle from segment powers (last axis).

    Parameters
    ----------
    power : ndarray
        Segment power (or ramp start power), shape (..., S) [W].
    durations : ndarray
        Segment durations, broadcastable to ``power`` [s].
    end_power : ndarray
        Ramp end power; None for constant segments [W].
    regenerative : bool
        True: negative power is returned to the supply and subtracted;
        False: it is dissipated (brake resistor), only positive power counts
        [-].

    Returns
    -------
    float or ndarray
        E = Σ ∫ p dt over the cycle [J].

    Notes
    -----
    Relation: ∫ p dt per segment; the positive part of a ramp crossing zero
    is the triangle p⁺²·d/(2·(p⁺ − p⁻)).  Validity: piecewise-constant or
    piecewise-linear power (a ramp of speed at constant torque).

    References
    ----------
    IEC 60050-103 (integral of a function over an interval).
    """
    durations = _check(durations)
    a = np.asarray(power, dtype=float)
    b = a if end_power is None else np.asarray(end_power, dtype=float)
    if regenerative:
        energy = (a + b) / 2.0 * durations
    else:
        high, low = np.maximum(a, b), np.minimum(a, b)
        span = np.where(high > low, high - low, 1.0)
        crossing = high * high / (2.0 * span) * durations
        energy = np.where(low >= 0.0, (a + b) / 2.0 * durations,
                          np.where(high <= 0.0, 0.0, crossing))
    return np.sum(energy, axis=-1)
