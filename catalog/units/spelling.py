"""Unit spelling -> :class:`Conversion` to SI, for one expected dimension.

The spelling is normalised (micro and ohm signs, superscripts, ``deg C``), split
into tokens, parsed and interpreted against the tables of
:mod:`catalog.units.atoms`.  pint is asked only for the factor of each atom.

Parsing.  Separators ``·`` ``*`` ``-`` ``.`` (between letters) and space multiply;
``/`` divides; ``( )`` group; ``^n`` ``**n`` ``²`` ``⁻¹`` ``^(1/2)`` ``√`` ``sqrt()``
are powers; ``min-1`` is min⁻¹; a digit glued to a length or time atom is a power
(``cm2``).  A run of letters is an atom or a glued spelling (``mNm`` = mN·m); a
power binds to its last atom.  ``a/b·c`` is ambiguous (ISO 80000-1), so both
readings are tried -- left to right ``(a/b)·c`` and datasheet style ``a/(b·c)``
-- and only the ones of the expected dimension are kept, as for ``oz``/``lb``/
``kg``/``g`` (a mass or a force).  One factor left: done; none: wrong dimension;
several: ambiguity error.

Angles.  pint counts rad as 1, so angles are counted here: a speed needs one angle
per time.  In a speed-like field a bare reciprocal minute (``1/min``, ``min^-1``)
means revolutions; a bare reciprocal second or ``Hz`` is an ambiguity error (write
rev/s or rad/s).  In the torque-constant field ``V·min`` (= V/(1/min)) is per
revolution, while ``V·s`` and ``N·m/A`` stay SI (V·s/rad).
"""
from __future__ import annotations

__all__ = ["Conversion", "parse_unit", "normalise_spelling"]

import itertools
import math
import re
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

from .atoms import MISPRINTS, Atom, lookup_run
from .dimensions import DIMENSIONS, Dimension, get_dimension
from .errors import UnitError
from .registry import get_registry, quantity


@dataclass(frozen=True)
class Conversion:
    """``si = value * factor + offset``; ``canonical`` is the spelling as read."""

    factor: float
    offset: float
    si_unit: str
    canonical: str
    warnings: tuple[str, ...] = ()

    def to_si(self, value):
        """SI value(s) [si_unit] of ``value`` (float or ndarray) in this unit."""
        return value * self.factor + self.offset

    def from_si(self, si):
        """Inverse of :meth:`to_si`."""
        return (si - self.offset) / self.factor


_REPLACE = {"μ": "µ", "Ω": "Ω", "º": "°", "˚": "°", "℃": "°C", "℉": "°F", "−": "-",
            "–": "-", "‐": "-", "‑": "-", "×": "*", "⋅": "·", "∙": "·", "•": "·",
            "\u00a0": " ", "\u2009": " ", "\u202f": " ", "\t": " "}
_SUPER = re.compile("[⁻⁺]?[⁰¹²³⁴⁵⁶⁷⁸⁹]+")
_SUPER_MAP = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺", "0123456789-+")
_DEG = re.compile(r"(?:\bdeg\.?|°)\s*([CF])\b")
_DC = re.compile(r"\b([VA])\s+(?:DC|dc)\b")
_RUN = re.compile(r"[A-Za-zµΩ°]+|%")
_NUM = re.compile(r"[0-9]+(?:\.[0-9]+)?")
_NEG = re.compile(r"-([0-9]+)(?![0-9.])")
_EXP = re.compile(r"\s*(\()?\s*([+-]?)\s*([0-9]+(?:\.[0-9]+)?)(?:\s*/\s*([0-9]+))?\s*(\))?")
_LETTER = re.compile(r"[A-Za-zµΩ°(]")
_MAX_AMBIGUOUS = 6
_SHOW = {"rp": "')'", "lp": "'('", "div": "'/'", "mul": "separator", "pow": "power",
         "num": "number", "atoms": "unit", "sqrt": "sqrt"}


def normalise_spelling(text: str) -> str:
    """Unicode variants, superscripts, ``deg C``, ``V DC`` and outer ``[ ]`` tidied."""
    t = "".join(_REPLACE.get(c, c) for c in str(text))
    t = _SUPER.sub(lambda m: "^" + m.group().translate(_SUPER_MAP), t)
    t = _DEG.sub(r"°\1", t.replace("**", "^"))
    t = " ".join(_DC.sub(r"\1DC", t).split())
    if t.startswith("[") and t.endswith("]"):
        t = t[1:-1].strip()
    return t


def _lex(t: str, dim: Dimension, original: str) -> list:
    """Tokens ``(kind, value)``: atoms, num, mul, div, pow, lp, rp, sqrt."""
    def syntax(what):
        raise UnitError(original, kind="syntax", found=what, expected=dim.expected)

    toks: list = []

    def add(kind, value=None):
        if kind == "mul" and (not toks or toks[-1][0] in ("mul", "div", "lp", "sqrt")):
            return
        if kind in ("div", "rp") and toks and toks[-1][0] == "mul":
            toks.pop()
        toks.append((kind, value))

    i, n = 0, len(t)
    while i < n:
        c = t[i]
        prev = toks[-1][0] if toks else None
        if c in " ·*":
            add("mul")
            i += 1
        elif c == "-":
            m = _NEG.match(t, i)
            if m and prev in ("atoms", "rp") and t[i - 1] not in " ·*":
                add("pow", Fraction(-int(m.group(1))))
                i = m.end()
                continue
            if prev is None:
                syntax("a leading '-'")
            add("mul")
            i += 1
        elif c == ".":
            if prev in ("atoms", "rp") and _LETTER.match(t, i + 1):
                add("mul")
                i += 1
            else:
                syntax("a stray '.'")
        elif c in "/()":
            add({"/": "div", "(": "lp", ")": "rp"}[c])
            i += 1
        elif c == "^":
            m = _EXP.match(t, i + 1)
            if not m or bool(m.group(1)) != bool(m.group(5)):
                syntax("a malformed power")
            e = Fraction(m.group(3)) / (int(m.group(4)) if m.group(4) else 1)
            add("pow", -e if m.group(2) == "-" else e)
            i = m.end()
        elif c == "√":
            add("sqrt")
            i += 1
        elif "0" <= c <= "9":  # ASCII only, as _NUM: other digits are not read as numbers
            m = _NUM.match(t, i)
            if i > 0 and _RUN.match(t[i - 1]) and prev == "atoms":
                last = toks[-1][1][-1]
                if last.kind not in ("length", "time", "minute") or "." in m.group():
                    syntax(f"a digit glued to '{last.spelling}'")
                add("pow", Fraction(int(m.group())))
            else:
                add("num", float(m.group()))
            i = m.end()
        elif m := _RUN.match(t, i):
            run = m.group()
            i = m.end()
            if run == "sqrt":
                add("sqrt")
                continue
            atoms = lookup_run(run)
            if atoms is None:
                raise UnitError(original, kind="unknown", expected=dim.expected)
            for a in atoms:
                if a.kind == "bare_temp" and not dim.temperature_family:
                    raise UnitError(original, kind="unknown", expected=dim.expected,
                                    hint=f"a bare '{a.spelling}' means °{a.spelling} "
                                         "in temperature fields only")
            add("atoms", atoms)
        else:
            syntax(f"the character '{c}'")
    if toks and toks[-1][0] == "mul":
        toks.pop()
    if toks and toks[0][0] == "num" and not (toks[0][1] == 1 and toks[1:2] == [("div", None)]):
        syntax("a number where a unit should start")  # '0.5 12 rpm' is no unit of 12 rpm
    return toks


class _Parser:
    """Recursive descent; ``compound`` mode reads ``a/b·c`` as ``a/(b·c)``."""

    def __init__(self, toks, compound: bool, syntax):
        self.toks, self.i, self.compound, self.syntax = toks, 0, compound, syntax

    def peek(self):
        return self.toks[self.i][0] if self.i < len(self.toks) else None

    def take(self):
        self.i += 1
        return self.toks[self.i - 1][1]

    def parse(self) -> list:
        out = self.expr()
        if self.peek() is not None:
            self.syntax(f"an unexpected {_SHOW[self.peek()]}")
        return out

    def expr(self) -> list:
        if self.compound:
            out = self.product()
            while self.peek() == "div":
                self.take()
                out = out + _inv(self.product())
            return out
        out = self.tight()
        while self.peek() in ("mul", "div"):
            div = self.peek() == "div"
            self.take()
            nxt = self.tight()
            out = out + (_inv(nxt) if div else nxt)
        return out

    def product(self) -> list:
        out = self.tight()
        while self.peek() == "mul":
            self.take()
            out = out + self.tight()
        return out

    def tight(self) -> list:
        """Factors written next to each other with no separator (``1000rpm``)."""
        out = self.power()
        while self.peek() in ("atoms", "num", "lp", "sqrt"):
            out = out + self.power()
        return out

    def power(self) -> list:
        kind = self.peek()
        if kind == "sqrt":
            self.take()
            return _pow(self.power(), Fraction(1, 2))
        if kind == "atoms":
            out = [(a, Fraction(1)) for a in self.take()]
            if self.peek() == "pow":  # binds to the last atom: gcm² = g·cm²
                out[-1] = (out[-1][0], self.take())
            return out
        if kind == "num":
            out = [(self.take(), Fraction(1))]
        elif kind == "lp":
            self.take()
            out = self.expr()
            if self.peek() != "rp":
                self.syntax("an unmatched '('")
            self.take()
        else:
            self.syntax("a missing unit" if kind is None else f"a misplaced {_SHOW[kind]}")
        if self.peek() == "pow":
            out = _pow(out, self.take())
        return out


def _inv(factors):
    return [(f, -e) for f, e in factors]


def _pow(factors, p):
    return [(f, e * p) for f, e in factors]


def _pe(e: Fraction):
    return int(e) if e.denominator == 1 else float(e)


def _render(items) -> str:
    """Canonical text of ``[(symbol, exponent)]``: ``ozf*in``, ``rev/(min*V)``."""
    def fmt(sym, e):
        return sym if e == 1 else f"{sym}**{_pe(e)}"
    items = [(s, e) for s, e in items if e != 0 and s != "1"]
    num = "*".join(fmt(s, e) for s, e in items if e > 0) or "1"
    den = [fmt(s, -e) for s, e in items if e < 0]
    if not den:
        return num
    return f"{num}/{den[0]}" if len(den) == 1 else f"{num}/({'*'.join(den)})"


@lru_cache(maxsize=None)
def _named_dimensions():
    return [(d, quantity(d.pint_si).dimensionality) for d in DIMENSIONS.values()
            if not d.unitless_only]


#: Quantities outside the schema's dimensions that a datasheet unit may still be, by pint
#: spelling, so that a message says what was written in words ("a thermal conductance").
_OTHER_QUANTITIES = (
    ("watt / kelvin", "a thermal conductance (the reciprocal of a thermal resistance)"),
    ("newton", "a force"), ("meter ** 2", "an area"), ("meter ** 3", "a volume"),
    ("meter / second", "a linear speed"), ("meter / second ** 2", "an acceleration"),
    ("pascal", "a pressure"), ("coulomb", "an electric charge"), ("farad", "a capacitance"),
    ("siemens", "an electric conductance (the reciprocal of a resistance)"), ("weber", "a magnetic flux"),
    ("tesla", "a magnetic flux density"), ("kilogram / meter ** 3", "a density"),
    ("newton * meter * second", "an angular momentum"),
    ("watt / meter / kelvin", "a thermal conductivity"), ("joule / kelvin", "a heat capacity"),
)
#: Words for pint's base dimensions.
_BASE_WORDS = {"[mass]": "mass", "[length]": "length", "[time]": "time", "[current]": "current",
               "[temperature]": "temperature", "[substance]": "amount of substance",
               "[luminosity]": "luminous intensity"}


@lru_cache(maxsize=None)
def _other_quantities():
    return [(quantity(spelling).dimensionality, noun) for spelling, noun in _OTHER_QUANTITIES]


def _dimension_words(dimensionality) -> str:
    """``[mass] * [length] ** 2 / [time] ** 3`` in words: ``mass × length² / time³``."""
    sup = str.maketrans("0123456789-.", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻·")

    def part(items):
        return " × ".join(_BASE_WORDS.get(k, k.strip("[]")) + ("" if e == 1 else f"{_pe(Fraction(e))}".translate(sup))
                          for k, e in items) or "1"
    items = sorted(dict(dimensionality).items())
    num = [(k, e) for k, e in items if e > 0]
    den = [(k, -e) for k, e in items if e < 0]
    text = part(num) + (f" / {part(den)}" if len(den) == 1 else f" / ({part(den)})" if den else "")
    return f"a quantity of {text}"


def _unnamed_noun(q) -> tuple[bool, str]:
    """(known quantity?, words) for a unit of none of the schema's dimensions."""
    dims = q.dimensionality
    for dd, noun in _other_quantities():
        if dd == dims:
            return True, noun
    for d, dd in _named_dimensions():
        if dd == 1 / dims:
            return True, f"the reciprocal of {d.noun}"
    return False, _dimension_words(dims)


def _found_noun(q, angle, energy: bool) -> str | None:
    same = [d for d, dd in _named_dimensions() if dd == q.dimensionality]
    if not same:
        return None
    pref = [d for d in same if angle in d.angles]
    if energy:
        pref = [d for d in pref if d.name == "energy"] or pref
    if pref:
        return pref[0].noun
    d = same[0]
    want = min(d.angles, key=lambda x: abs(x - angle))
    return f"{d.noun} {'times' if angle > want else 'per'} an angle"


def _interpret_product(factors, dim: Dimension, original: str, found: list) -> list:
    """Candidate ``(factor, offset, canonical)`` for one parsed reading."""
    atoms = [(f, e) for f, e in factors if isinstance(f, Atom)]
    temps = [a for a, _ in atoms if a.kind in ("temp", "bare_temp")]
    if dim.absolute_temperature and temps:
        if len(factors) != 1 or factors[0][1] != 1:
            raise UnitError(original, kind="syntax", expected=dim.expected,
                            found="an absolute temperature combined with other units")
        m = temps[0].meanings[0]
        off = float(get_registry().Quantity(0.0, m.pint).to("kelvin").magnitude)
        return [(float(quantity(m.delta).to("kelvin").magnitude), off, m.symbol)]
    angle = sum(a.angle * e for a, e in atoms)
    minutes = sum(e for a, e in atoms if a.kind == "minute")
    seconds = sum(e for a, e in atoms if a.kind == "time") - sum(e for a, e in atoms if a.kind == "hz")
    hz = any(a.kind == "hz" for a, _ in atoms)
    extra = 0
    if dim.speed_like and angle == 0:
        if minutes < 0:
            extra = 1
        elif hz or seconds < 0:
            what = "Hz" if hz else "a bare reciprocal second"
            raise UnitError(original, kind="ambiguous", expected=dim.noun,
                            found=f"{what} could mean rev/s or rad/s", hint="write rev/s or rad/s")
    elif dim.back_emf and angle == 0:
        if minutes > 0:
            extra = -1
        elif hz:
            raise UnitError(original, kind="ambiguous", expected=dim.noun,
                            found="Hz could mean rev/s or rad/s", hint="write V/(rev/s) or V*s/rad")
    ambiguous = [i for i, (f, _) in enumerate(factors) if isinstance(f, Atom) and len(f.meanings) > 1]
    if len(ambiguous) > _MAX_AMBIGUOUS:
        raise UnitError(original, kind="syntax", expected=dim.expected, found="too many mass/force words")
    target = quantity(dim.pint_si)
    energy = any(a.kind == "energy" for a, _ in atoms)
    out = []
    for combo in itertools.product(*(range(len(factors[i][0].meanings)) for i in ambiguous)):
        choice = dict(zip(ambiguous, combo))
        q, mag, items = quantity("dimensionless"), 1.0, []
        for i, (f, e) in enumerate(factors):
            if isinstance(f, Atom):
                m = f.meanings[choice.get(i, 0)]
                q = q * quantity(m.delta or m.pint) ** _pe(e)
                items.append(("delta_" + m.symbol if m.delta and m.symbol != "K" else m.symbol, e))
            else:
                mag *= f ** _pe(e)
                items.append((f"{f:g}", e))
        if extra:
            q = q * quantity("revolution") ** extra
            items.append(("rev", Fraction(extra)))
        if q.dimensionality == target.dimensionality and (angle + extra) in dim.angles \
                and not (dim.unitless_only and atoms):
            out.append((float(q.to(target.units).magnitude) * mag, 0.0, _render(items)))
        else:
            noun = _found_noun(q, angle + extra, energy)
            if noun is not None:
                found.append((2, noun))
            else:
                known, words = _unnamed_noun(q)
                found.append((1 if known else 0, words))
    return out


def _interpret(spelling: str, dim: Dimension) -> Conversion:
    original = spelling.strip()
    text = normalise_spelling(original)
    if text in ("", "1") and (dim.accepts_percent or dim.unitless_only):
        return Conversion(1.0, 0.0, dim.si_unit, text)
    if text == "":
        raise UnitError(original, kind="missing", expected=dim.expected)
    warnings: tuple[str, ...] = ()
    meant = MISPRINTS.get(dim.name, {}).get(text.replace(" ", "").lower())
    if meant:
        warnings = (f"unit '{original}' read as {meant} (a common misprint for {dim.noun})",)
        text = meant

    def syntax(what):
        raise UnitError(original, kind="syntax", found=what, expected=dim.expected)

    toks = _lex(text, dim, original)
    cands, found, errors = [], [], []
    for compound in (True, False):
        try:
            cands += _interpret_product(_Parser(toks, compound, syntax).parse(), dim, original, found)
        except UnitError as e:
            errors.append(e)
    if not cands:
        if errors:
            raise errors[0]
        best = max((rank for rank, _ in found), default=0)   # the schema's nouns, else other quantities, else words
        nouns = list(dict.fromkeys(text for rank, text in found if rank == best))
        ours = {d.noun for d in DIMENSIONS.values()}
        hint = None if any(n.split(" per ")[0].split(" times ")[0] in ours for n in nouns[:2]) else \
            f"{dim.noun} is {dim.example.replace('*', '·')}"
        raise UnitError(original, kind="dimension", expected=dim.noun, found=" or ".join(nouns[:2]), hint=hint)
    distinct: list = []
    for c in cands:
        if not any(math.isclose(c[0], d[0], rel_tol=1e-12) and math.isclose(c[1], d[1], abs_tol=1e-9)
                   for d in distinct):
            distinct.append(c)
    if len(distinct) > 1:
        raise UnitError(original, kind="ambiguous", expected=dim.noun,
                        found="it reads as " + " or ".join(d[2] for d in distinct),
                        hint="use parentheses, or ozf/lbf/kgf/gf for a force")
    factor, offset, canonical = distinct[0]
    return Conversion(factor, offset, dim.si_unit, canonical, warnings)


@lru_cache(maxsize=4096)
def _cached(spelling: str, dimension: str):
    from . import diskcache

    hit = diskcache.lookup(spelling, dimension)
    if hit is not None:
        return Conversion(float(hit[0]), float(hit[1]), hit[2], hit[3], tuple(hit[4]))
    try:
        conv = _interpret(spelling, DIMENSIONS[dimension])
    except UnitError as e:
        return e
    diskcache.store(spelling, dimension, conv.factor, conv.offset, conv.si_unit, conv.canonical, conv.warnings)
    return conv


def parse_unit(spelling: str, dimension) -> Conversion:
    """The :class:`Conversion` of unit ``spelling`` in ``dimension`` (cached).

    Raises :class:`UnitError` naming what was found and what was expected.
    """
    result = _cached(str(spelling), get_dimension(dimension).name)
    if isinstance(result, UnitError):
        raise result.with_text(result.text)
    return result


parse_unit.cache_info = _cached.cache_info  # type: ignore[attr-defined]
parse_unit.cache_clear = _cached.cache_clear  # type: ignore[attr-defined]
