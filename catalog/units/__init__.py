"""Datasheet unit spellings -> SI, in front of pint.

pint alone misreads datasheets silently ('12 V-V' as 11 V, '1,5 mH' as 15 mH,
'mNm' as milli-number-metre, 'C' as coulomb, '1/min' as 1/60 rad/s), so unit
spellings are tokenised here, table-driven, and pint is asked only for factors.

Rules (details in :mod:`catalog.units.spelling`, tables in :mod:`catalog.units.atoms`,
rendered by :func:`spelling_table_markdown`):

* A unit is a product/quotient of *atoms*: ``·`` ``*`` ``-`` ``.`` and space
  multiply, ``/`` divides, ``( )`` group; powers ``^2`` ``**2`` ``²`` ``⁻¹``
  ``^(1/2)`` ``√W``; ``min-1`` = min⁻¹; a digit glued to a length/time atom is a
  power (``gcm2``).  Glued spellings (``mNm``, ``gcm``, ``ozin`` ...) come from an
  explicit table; anything not in the tables is an error, never a guess.
* ``a/b·c`` is read both as ``(a/b)·c`` and ``a/(b·c)``, and ``oz`` ``lb`` ``kg``
  ``g`` both as mass and as force; only readings of the field's dimension are
  kept.  One factor left: used; none: "'12 N*m' is a torque, expected a speed";
  several different: ambiguity error.
* Speeds: ``rpm``, ``r/min``, ``min^-1``, ``1/min``, ``krpm``, ``rad/s``, ``rev/s``;
  a bare reciprocal minute in a speed-like field means revolutions, a bare
  reciprocal second or ``Hz`` is an ambiguity error (write rev/s or rad/s).
* Temperatures: ``°C`` ``degC`` ``K`` ``°F`` (bare ``C``/``F`` only in temperature
  fields, never coulomb/farad) carry an offset in ``temperature`` fields and are
  differences elsewhere (``°F/W`` = 5/9 K/W).
* Known misprints (``kg/cm`` in a torque field = kgf·cm ...) are read with a
  warning, which is returned, never printed.
* Numbers are strict: a decimal comma or a thousands separator is an error that
  says what to write; a hyphen after a number is never a minus sign.

Importing this package imports neither pint nor numpy nor pandas; the one pint
registry is made on first use (:func:`get_registry`).
"""
from __future__ import annotations

__all__ = [
    "get_registry",
    "parse_unit",
    "Conversion",
    "UnitError",
    "NumberError",
    "DIMENSIONS",
    "Dimension",
    "PRESETS",
    "dimension_noun",
    "get_dimension",
    "parse_number",
    "split_value_unit",
    "convert_column",
    "parse_cells",
    "ParsedCells",
    "parse_quantity",
    "to_display",
    "display_unit",
    "preset_name",
    "choose_label",
    "PRESET_ALIASES",
    "normalise_spelling",
    "spelling_table_markdown",
]

from .atoms import spelling_table_markdown
from .dimensions import DIMENSIONS, PRESET_ALIASES, PRESETS, Dimension, dimension_noun, get_dimension
from .display import choose_label, display_unit, preset_name, to_display
from .errors import NumberError, UnitError
from .registry import get_registry
from .spelling import Conversion, normalise_spelling, parse_unit
from .values import ParsedCells, convert_column, parse_cells, parse_number, parse_quantity, split_value_unit
