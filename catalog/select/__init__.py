"""Motor selection against a load envelope.

``select(motors, gearheads, envelope)`` evaluates every motor × gear option
(direct, catalogue gearheads with the motor's mount, assumed gears of a ratio
search) against a load envelope (``queries/*.toml``, schema
``schemas/envelope.schema.json``) and returns a :class:`Selection` with a
ranked ``shortlist``, the ``rejected`` candidates with their reasons,
``reason_counts()`` and ``explain(candidate_id)``.  ``Catalog.select`` is the
same on a catalogue file.

Modules: :mod:`.envelope` (TOML → validated SI envelope), :mod:`.candidates`
(motor × gear table, tolerance corner), :mod:`.evaluate` (vectorised kernels,
thermal fixed point), :mod:`.registry` (every check as one declarative entry),
:mod:`.checks` (running the registry: margins, verdicts, reason texts),
:mod:`.result` (ranking, Pareto front, Selection).
"""
from __future__ import annotations

__all__ = ["select", "Selection", "Envelope", "load_envelope", "CHECKS", "RANK_KEYS", "Check", "Margin",
           "register", "unregister"]

from .registry import CHECKS, Check, Margin, register, unregister
from .envelope import RANK_KEYS, Envelope, load_envelope
from .result import Selection, select
