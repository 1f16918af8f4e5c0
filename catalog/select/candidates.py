"""Candidates: every motor combined with every gear option of an envelope.

A candidate is one motor with one gear option: direct drive (ratio 1, no
gear), a catalogue gearhead whose ``mount`` equals the motor's, or an assumed
gear of the envelope's ratio search (efficiency ``stage_efficiency**stages``,
inertia ``gearing.inertia``, no ratings, mass, size or price).

:class:`Candidates` keeps a motor table, a gear-option table and, per
candidate, only the two row numbers into them; a per-candidate column (``R``,
``ratio``, ``mass`` ...) is gathered when it is first asked for, and a chunk
of candidates gathers just its rows (:meth:`Candidates.take`).  Ten thousand
motors times two hundred ratios so never hold forty columns of two million
rows, and no candidate id is written as text until somebody reads it.

Brushless constants stated line-to-line are converted to the DC-equivalent
model here (:func:`dc_equivalent_constants`; a record that cannot be
converted is refused by the ``constant_basis`` check, never guessed).  R,
Kt and Ke stay the datasheet's: the evaluation applies the envelope's
tolerance corners (:mod:`catalog.select.registry`).  The housing-to-ambient
thermal resistance is multiplied by the envelope's housing cooling factor.  The heat capacities of winding and housing (``winding_heat_capacity``
= τw/Rth1, ``housing_heat_capacity`` = τ_motor/Rth2, from the datasheet
values) do not change with the cooling factor: a better or worse mounting
changes how fast the housing sheds heat, not how much heat it stores.
"""
from __future__ import annotations

__all__ = ["build_candidates", "Candidates", "GEAR_DIRECT", "GEAR_CATALOGUE", "GEAR_ASSUMED", "MAX_CANDIDATES",
           "dc_equivalent_constants", "constant_basis_note", "no_load_at_winding"]

from collections.abc import Mapping

import numpy as np
import pandas as pd

from ..physics import (CONSERVATIVE_MAGNET_COEFFICIENT, DEFAULT_REFERENCE_TEMPERATURE,
                       magnet_coefficient)

GEAR_DIRECT, GEAR_CATALOGUE, GEAR_ASSUMED = 0, 1, 2
#: Candidates one selection may hold (motors x gear options): each keeps its two row numbers
#: and its verdicts (about 100 bytes), so ten million take about a gigabyte.
MAX_CANDIDATES = 10_000_000

_MOTOR = ["terminal_resistance", "torque_constant", "back_emf_constant", "friction_torque",
          "rotor_inertia", "thermal_resistance_winding_housing", "thermal_resistance_housing_ambient",
          "thermal_time_constant_winding", "thermal_time_constant_motor", "max_winding_temperature",
          "resistance_reference_temperature", "max_speed", "no_load_speed", "mass", "length",
          "diameter", "price", "max_peak_current", "brush_voltage_drop"]
_GEAR = ["ratio", "efficiency", "inertia", "max_continuous_torque", "max_intermittent_torque",
         "max_input_speed", "mass", "length", "diameter", "price"]

#: candidate key -> motor-table column (gathered by the motor row); the schema's field names, except
#: the motor's id (``motor``) and its note
_BY_MOTOR = {**{k: k for k in _MOTOR if k not in ("no_load_speed", "mass", "length", "diameter", "price")},
             "magnet_coefficient": "magnet_coefficient", "speed_from_no_load": "speed_from_no_load",
             "winding_heat_capacity": "winding_heat_capacity", "housing_heat_capacity": "housing_heat_capacity",
             "motor": "id", "mount": "mount", "commutation": "commutation", "motor_note": "note",
             "constant_basis": "constant_basis", "basis_note": "basis_note", "basis_refused": "basis_refused",
             "no_load_at_winding": "no_load_at_winding", "current_basis_factor": "current_basis_factor",
             "brush_note": "brush_note"}
#: candidate key -> gear-option column (gathered by the option row): ``gear_`` + the gearhead schema's name
_BY_OPTION = {"ratio": "ratio", "efficiency": "efficiency", "gear_inertia": "inertia", "gear": "label",
              "kind": "kind", "gear_max_continuous_torque": "max_continuous_torque",
              "gear_max_intermittent_torque": "max_intermittent_torque",
              "gear_max_input_speed": "max_input_speed"}
#: every per-candidate key, in a stable order (the last ones combine both tables)
KEYS = ("id", "motor", "gear", "kind", "motor_ix", *[k for k in _BY_MOTOR if k not in ("motor",)],
        *[k for k in _BY_OPTION if k not in ("gear", "kind")], "mass", "length", "diameter", "price",
        "currency", "price_note")


def _prices(frame, env):
    """Prices of catalogue rows in the envelope's currency, and a note where there is none.

    Without ``ranking.currency`` prices are left in their own currency (``currency``
    column); with it, other currencies are converted by ``ranking.exchange_rates``,
    and a price in a currency without a rate becomes NaN with a note.
    """
    price = _col(frame, "price")
    cur = _text(frame, "currency")
    note = np.full(len(frame), "", dtype=object)
    if env.currency is None:
        return price, cur, note
    rates = {env.currency: 1.0, **env.exchange_rates}
    factor = np.array([rates.get(c, np.nan) for c in cur], dtype=float)
    missing = ~np.isnan(price) & np.isnan(factor)
    note[missing] = [f"no exchange rate for {c or 'a price without currency'}" for c in cur[missing]]
    cur = np.where(np.isnan(price), "", env.currency).astype(object)
    return price * factor, cur, note


def _col(frame, name, dtype=float):
    if name in frame.columns:
        return frame[name].to_numpy(dtype=dtype, na_value=np.nan) if dtype is float else frame[name]
    return np.full(len(frame), np.nan) if dtype is float else pd.Series([None] * len(frame), dtype=object)


def _magnet_coefficients(materials) -> np.ndarray:
    """β per motor [1/K]: looked up once per distinct material; unknown → conservative."""
    codes, keys = pd.factorize(_normal(materials, missing="unknown"))
    table = []
    for key in keys:   # a handful of materials, not one per motor
        try:
            table.append(magnet_coefficient(key, missing=CONSERVATIVE_MAGNET_COEFFICIENT))
        except ValueError:
            table.append(CONSERVATIVE_MAGNET_COEFFICIENT)
    return np.asarray(table, dtype=float)[codes] if len(codes) else np.zeros(0)


def _normal(values, missing: str = "") -> np.ndarray:
    """Texts stripped of surrounding white space and lower-cased, an object array of str (``missing`` for
    missing values, any other value as ``str``), by the Unicode rules of pandas' string methods (pyarrow's
    ``utf8_trim_whitespace`` and ``utf8_lower``) without a Series for each step."""
    import pyarrow as pa
    import pyarrow.compute as pc

    v = np.array(values, dtype=object).reshape(-1)
    v[pd.isna(v)] = missing
    odd = np.fromiter((type(x) is not str for x in v), dtype=bool, count=len(v))
    if odd.any():
        v[odd] = [str(x) for x in v[odd]]
    return pc.utf8_lower(pc.utf8_trim_whitespace(pa.array(v, type=pa.string()))).to_numpy(zero_copy_only=False)


#: stated basis -> (factor from the stated Ke to the DC-equivalent Ke, factor from the stated Kt to the
#: DC-equivalent Kt or None where the waveform decides it, the basis in words)
_BASES = {
    "line-to-line-rms": (np.sqrt(2.0), np.sqrt(2.0 / 3.0), "line-to-line RMS"),
    "line-to-line-peak": (1.0, None, "line-to-line peak"),
}


def dc_equivalent_constants(commutation, constant_basis, torque_constant, back_emf_constant):
    """The DC-equivalent Kt and Ke of motors whose constants may be stated line-to-line.

    Selection treats a brushless motor with its drive as a DC motor: the bus
    must supply R·I + Ke·ω with Ke the *peak line-to-line* back-EMF per rad/s
    (the bus voltage is a peak, and the drive connects two phases at a time
    to it), and the power balance T·ω = Ke·ω·I of that DC-equivalent model
    makes Kt = Ke in SI.

    Parameters
    ----------
    commutation, constant_basis : array of str
        The records' texts (``brushless``, ``line-to-line-rms`` ...; empty or
        None where not stated).
    torque_constant, back_emf_constant : ndarray
        Kt [N·m/A] and Ke [V·s/rad] as stored (on the stated basis), NaN missing.

    Returns
    -------
    (kt, ke, refused, note)
        DC-equivalent Kt [N·m/A] and Ke [V·s/rad] (NaN where refused),
        ``refused`` [bool] where the record cannot be converted, and a note
        per motor saying how its constants were read (the reason where refused).

    Notes
    -----
    * Ke stated line-to-line RMS: × √2 gives the line-to-line peak (a
      sinusoid's peak factor, IEC 60050-103: peak = √2 × RMS).
    * Ke stated line-to-line peak: the DC-equivalent Ke itself.
    * Only Kt, stated per ampere RMS (line-to-line RMS basis): a sinusoidal
      three-phase machine gives T = 3·E_ph,rms·I_rms/ω = √3·Ke_ll,rms·I_rms
      (power balance of the three phases), so Ke_ll,rms = Kt/√3 and the
      DC-equivalent Kt = Ke = √2·Kt/√3 = Kt·√(2/3).  The copper loss of that
      model, I_dc²·R_ll with I_dc = T/Kt_dc = √(3/2)·I_rms, equals the
      machine's 3·I_rms²·R_ll/2, so the thermal model stays exact.
    * Only Kt, stated line-to-line peak: Kt per peak ampere is √3/2·Ke_ll,pk
      for a sinusoidal machine but Ke_ll,pk for a trapezoidal one; the
      waveform is not recorded, so the record is refused for selection
      rather than guessed.
    * Where Ke is known it decides (Kt = Ke); a brushless record without a
      basis is read as DC-equivalent, and says so.

    Sources: IEC 60050-103 (peak factor of a sinusoid); textbook chapter on
    brushless permanent-magnet machines (power balance of a three-phase
    machine, six-step and sinusoidal commutation).
    """
    com = _normal(commutation)
    basis = _normal(constant_basis)
    kt = np.asarray(torque_constant, dtype=float).copy()
    ke = np.asarray(back_emf_constant, dtype=float).copy()
    n = len(kt)
    note = np.full(n, "", dtype=object)
    refused = np.zeros(n, dtype=bool)
    brushless = com == "brushless"
    note[brushless & (basis == "dc-equivalent")] = "brushless constants stated DC-equivalent"
    note[brushless & ~np.isin(basis, ["dc-equivalent", *_BASES])] = (
        "brushless constants of unstated basis read as DC-equivalent")
    for name, (ke_factor, kt_factor, words) in _BASES.items():
        rows = basis == name      # the basis is the supplier's statement: it counts whatever the commutation
        by_ke = rows & ~np.isnan(ke)
        ke[by_ke] *= ke_factor
        kt[by_ke] = ke[by_ke]
        ke_text = "Ke stated " + words + (": × √2 = line-to-line peak back-EMF, the DC-equivalent Ke"
                                          if ke_factor != 1.0 else " = the DC-equivalent Ke")
        note[by_ke] = ke_text + "; Kt = Ke (power balance)"
        by_kt = rows & np.isnan(ke) & ~np.isnan(kt)
        if kt_factor is not None:
            kt[by_kt] *= kt_factor
            ke[by_kt] = kt[by_kt]
            note[by_kt] = ("Kt stated " + words + " (per ampere RMS): × √(2/3) = the DC-equivalent Kt of a "
                           "sinusoidal machine; Ke = Kt (power balance)")
        else:
            refused |= by_kt
            kt[by_kt] = np.nan
            note[by_kt] = ("Kt stated " + words + " without Ke: its DC equivalent depends on the waveform "
                           "(sine or trapezoid), not converted; state Ke")
    return kt, ke, refused, note


def constant_basis_note(commutation, constant_basis, torque_constant=np.nan, back_emf_constant=np.nan) -> str:
    """How the selection reads the constants of one record (empty for a DC record)."""
    return str(dc_equivalent_constants([commutation], [constant_basis], [torque_constant],
                                       [back_emf_constant])[3][0])


def no_load_at_winding(commutation) -> np.ndarray:
    """Where a motor's no-load losses (friction and iron, Kt·I0·ω) heat it: True the winding node.

    A brushed motor carries its winding on the rotor together with the
    commutator and, iron-core, the armature iron whose flux alternates: the
    iron losses and the commutator's friction arise there, so the winding
    node (a coreless motor's small iron loss in its stator return path is
    counted there too, as is a motor whose commutation is not stated: the
    hotter reading).  A brushless motor's rotor carries magnets only; its iron
    losses arise in the stator lamination pressed into the housing and its
    friction in the bearings: the housing node.  Source: textbook chapters on
    DC machines (core loss in the rotating armature; brush and bearing
    friction) and on brushless permanent-magnet machines (core loss in the
    stator).
    """
    return _normal(commutation) != "brushless"


def _stages(ratio: np.ndarray) -> np.ndarray:
    """One stage per factor of about 7 in ratio [-]."""
    return np.maximum(1, np.ceil(np.log(ratio) / np.log(7.0) - 1e-9))


def _mount_table(motor_mounts, gear_mounts) -> tuple:
    """(fits, code per motor): ``fits[code, j]`` where gearhead ``j`` lists the mount code (``'F22; F28'``
    fits motors of F22 and of F28); an empty text on either side matches nothing.  The motors that fit
    gearhead ``j`` are those whose row of ``fits[code]`` is set there."""
    from ..fields import split_list

    codes, motor_code = np.unique(np.asarray(motor_mounts, dtype=object).astype(str), return_inverse=True)
    index = {c: i for i, c in enumerate(codes) if c}
    fits = np.zeros((len(codes), len(gear_mounts)), dtype=bool)    # mount codes x gearheads (a few of each)
    for j, text in enumerate(gear_mounts):
        for code in split_list(text):
            if code in index:
                fits[index[code], j] = True
    return fits, motor_code.reshape(-1)


def _text(frame, name) -> np.ndarray:
    """The column ``name`` of ``frame`` as an object array of str, empty where missing (or absent)."""
    if name not in frame.columns:
        return np.full(len(frame), "", dtype=object)
    return _texts(frame[name].to_numpy(dtype=object))


def _texts(values) -> np.ndarray:
    """An object array of str: missing values (None, NaN, NA) empty, any other value as ``str``."""
    out = np.asarray(values, dtype=object).copy()
    out[pd.isna(out)] = ""
    odd = np.fromiter((type(v) is not str for v in out), dtype=bool, count=len(out))
    if odd.any():
        out[odd] = [str(v) for v in out[odd]]
    return out


class Candidates(Mapping):
    """Every candidate of an envelope: (motor row, gear-option row) pairs over two small tables.

    A mapping from the per-candidate keys (:data:`KEYS`: the motor schema's
    field names in SI, ``magnet_coefficient`` [1/K], ``ratio`` [1],
    ``efficiency`` [1], ``winding_heat_capacity``/``housing_heat_capacity``
    [J/K], the gear option's ``gear_inertia`` [kg·m²] and ratings
    ``gear_max_continuous_torque``/``gear_max_intermittent_torque`` [N·m] and
    ``gear_max_input_speed`` [rad/s], totals ``mass`` [kg], ``length``/
    ``diameter`` [m], ``price``, and the texts ``id``, ``motor``, ``gear``,
    ``currency``, ``price_note``, ``mount``, ``commutation``) to arrays over all
    candidates, each gathered on first use and kept.  ``size`` is the number of
    candidates.
    """

    def __init__(self, motor_ix, option_ix, motors: dict, options: dict):
        self.motor_ix = np.asarray(motor_ix, dtype=np.intp)
        self.option_ix = np.asarray(option_ix, dtype=np.intp)
        self.motors = motors        # column -> (M,) array
        self.options = options      # column -> (G,) array
        self._cache: dict = {}

    @property
    def size(self) -> int:
        return len(self.motor_ix)

    def __len__(self) -> int:
        return len(KEYS)

    def __iter__(self):
        return iter(KEYS)

    def __getitem__(self, key):
        if key not in self._cache:
            self._cache[key] = self._gather(key, slice(None))
        return self._cache[key]

    def take(self, rows, keys=KEYS) -> dict:
        """The columns ``keys`` for the candidate rows ``rows`` (a slice or positions), as a dict."""
        return {k: (self._cache[k][rows] if k in self._cache else self._gather(k, rows)) for k in keys}

    def _gather(self, key, rows):
        mix, oix = self.motor_ix[rows], self.option_ix[rows]
        if key == "motor_ix":
            return mix
        if key in _BY_MOTOR:
            return self.motors[_BY_MOTOR[key]][mix]
        if key in _BY_OPTION:
            return self.options[_BY_OPTION[key]][oix]
        geared = self.options["kind"][oix] == GEAR_CATALOGUE
        if key in ("mass", "length", "price"):   # an assumed gear adds its estimates (0 without them)
            geared = self.options["kind"][oix] != GEAR_DIRECT
        if key == "id":
            return np.asarray(self.motors["id"], dtype=object)[mix] + np.asarray(self.options["suffix"], dtype=object)[oix]
        if key in ("mass", "length", "price"):
            total = self.motors[key][mix] + np.where(geared, self.options[key][oix], 0.0)
            if key == "price":
                m_cur, g_cur = self.motors["currency"][mix], self.options["currency"][oix]
                mixed = geared & (m_cur != "") & (g_cur != "") & (m_cur != g_cur)
                total = np.where(mixed, np.nan, total)
            return total
        if key == "diameter":
            m = self.motors["diameter"][mix]
            both = np.fmax(m, np.where(geared, self.options["diameter"][oix], np.nan))
            return np.where(np.isnan(m), np.nan, both)
        if key == "currency":
            m_cur, g_cur = self.motors["currency"][mix], self.options["currency"][oix]
            return np.where(m_cur != "", m_cur, np.where(geared, g_cur, "")).astype(object)
        if key == "price_note":
            m_cur, g_cur = self.motors["currency"][mix], self.options["currency"][oix]
            mixed = geared & (m_cur != "") & (g_cur != "") & (m_cur != g_cur)
            note = np.where(mixed, "motor and gearhead priced in different currencies "
                            "(set ranking.currency and exchange_rates)", self.motors["price_note"][mix])
            gnote = self.options["price_note"][oix]
            return np.where((note == "") & geared, gnote, note).astype(object)
        raise KeyError(key)

    def currency_codes(self):
        """(code per candidate, labels): the currency of each candidate's price without a text per row."""
        labels = sorted({"", *map(str, self.motors["currency"]), *map(str, self.options["currency"])})
        index = {c: i for i, c in enumerate(labels)}
        m_code = np.array([index[str(c)] for c in self.motors["currency"]], dtype=np.intp)
        g_code = np.array([index[str(c)] for c in self.options["currency"]], dtype=np.intp)
        own = m_code[self.motor_ix] if len(m_code) else np.zeros(0, dtype=np.intp)
        gear = g_code[self.option_ix] if len(g_code) else np.zeros(0, dtype=np.intp)
        geared = self.options["kind"][self.option_ix] == GEAR_CATALOGUE
        return np.where(own != index[""], own, np.where(geared, gear, index[""])), labels

    def ids(self, rows=None) -> np.ndarray:
        """Candidate ids (``motor``, ``motor+gearhead`` or ``motor@ratio-N``) of ``rows`` (all by default)."""
        if rows is None:
            return self["id"]
        return self.take(np.asarray(rows, dtype=np.intp), ("id",))["id"]

    def find(self, candidate_id: str):
        """Position of the candidate with this id, or None (only the motors it can belong to are read)."""
        text = str(candidate_id)
        motors = np.flatnonzero([text.startswith(m) for m in self.motors["id"]])
        rows = np.flatnonzero(np.isin(self.motor_ix, motors))
        if not len(rows):
            return None
        hit = rows[self.ids(rows) == text]
        return int(hit[0]) if len(hit) else None

    def set_motor_notes(self, notes: dict) -> None:
        """Notes per motor id (e.g. a datasheet that contradicts itself), shown with its candidates."""
        self.motors["note"] = pd.Series(self.motors["id"]).map(notes).fillna("").to_numpy(dtype=object)
        self._cache.pop("motor_note", None)


def _refuse_too_many(env, n_catalogue: int, options: dict, n_motor: int) -> None:
    """Count the candidates before making any (``n_catalogue`` motor-gearhead pairs of one mount) and
    refuse more than :data:`MAX_CANDIDATES` with what to change."""
    from ..errors import InputError, Problem

    kind = options["kind"]
    direct = n_motor if env.direct else 0
    catalogue = int(n_catalogue)
    assumed = n_motor * int(np.count_nonzero(kind == GEAR_ASSUMED))
    total = direct + catalogue + assumed
    if total > MAX_CANDIDATES:
        message = (f"{total:,} candidates ({n_motor:,} motors: {direct:,} direct, {catalogue:,} with catalogue "
                   f"gearheads, {assumed:,} with assumed ratios), expected at most {MAX_CANDIDATES:,}; use fewer "
                   "ratios (gearing.ratios, gearing.ratio_range.steps) or leave catalogue gearheads out")
        raise InputError(f"{env.source}: {message}", [Problem(env.source, None, "gearing", message)])


def build_candidates(motors: pd.DataFrame, gearheads: pd.DataFrame, env) -> Candidates:
    """Every candidate of the envelope.

    Parameters
    ----------
    motors, gearheads : DataFrame
        Catalogue frames in SI with canonical columns.
    env : Envelope
        The load envelope.

    Returns
    -------
    Candidates
        The motor table, the gear-option table and one (motor, option) row pair
        per candidate: every motor direct (if allowed), with every catalogue
        gearhead of its mount, then with every assumed ratio, motor by motor.
    """
    m = motors.reset_index(drop=True)
    mv = {c: _col(m, c) for c in _MOTOR}
    mv["constant_basis"] = _text(m, "constant_basis")
    mv["torque_constant"], mv["back_emf_constant"], mv["basis_refused"], mv["basis_note"] = dc_equivalent_constants(
        _text(m, "commutation"), mv["constant_basis"], mv["torque_constant"], mv["back_emf_constant"])
    mv["back_emf_constant"] = np.where(np.isnan(mv["back_emf_constant"]), mv["torque_constant"],
                                       mv["back_emf_constant"])
    commutation = _normal(_text(m, "commutation"))
    mv["no_load_at_winding"] = no_load_at_winding(commutation)
    # the phase current a motor's own peak limit is stated in, per DC-equivalent ampere (line-to-line
    # records: a sinusoidal drive's phase peak is 2/√3 of the DC-equivalent current, a six-step one's
    # equal to it; the larger is taken)
    mv["current_basis_factor"] = np.where(np.isin(mv["constant_basis"], list(_BASES)), 2.0 / np.sqrt(3.0), 1.0)
    brushed = commutation == "brushed"
    own = mv["brush_voltage_drop"]
    default = 0.0 if env.brush_voltage_drop is None else env.brush_voltage_drop
    mv["brush_voltage_drop"] = np.where(~np.isnan(own), own, np.where(brushed, default, 0.0))
    mv["brush_note"] = np.where(
        brushed & np.isnan(own),
        "brush voltage drop not stated: taken as 0 V (supply.brush_voltage_drop sets one)"
        if env.brush_voltage_drop is None else f"brush voltage drop {default:.3g} V (envelope default)", "").astype(object)
    # heat capacities of the datasheet (Cw = τw/Rth1, Ch = τ_motor/Rth2): the mounting's cooling factor
    # changes the housing-to-ambient resistance only, never how much heat the housing stores
    mv["winding_heat_capacity"] = mv["thermal_time_constant_winding"] / mv["thermal_resistance_winding_housing"]
    mv["housing_heat_capacity"] = mv["thermal_time_constant_motor"] / mv["thermal_resistance_housing_ambient"]
    mv["thermal_resistance_housing_ambient"] = (mv["thermal_resistance_housing_ambient"]
                                                * env.housing_cooling_factor)
    mv["resistance_reference_temperature"] = np.where(
        np.isnan(mv["resistance_reference_temperature"]), DEFAULT_REFERENCE_TEMPERATURE,
        mv["resistance_reference_temperature"])
    mv["price"], mv["currency"], mv["price_note"] = _prices(m, env)
    mv["magnet_coefficient"] = _magnet_coefficients(_col(m, "magnet_material", object))
    mv["speed_from_no_load"] = np.isnan(mv["max_speed"]) & ~np.isnan(mv["no_load_speed"])
    mv["max_speed"] = np.where(mv["speed_from_no_load"], mv["no_load_speed"], mv["max_speed"])
    mv["id"] = m["id"].astype(str).to_numpy(dtype=object) if len(m) else np.zeros(0, dtype=object)
    mv["mount"], mv["commutation"] = _text(m, "mount"), _text(m, "commutation")
    mv["note"] = np.full(len(m), "", dtype=object)
    n_motor = len(m)

    # the gear-option table: direct, the catalogue gearheads, the assumed ratios (columns of arrays)
    parts = []
    if env.direct:
        parts.append({"ratio": [1.0], "efficiency": [1.0], "inertia": [0.0], "label": ["direct"], "suffix": [""],
                      "kind": [GEAR_DIRECT], "mount": [""]})
    if env.catalogue_gears and len(gearheads):
        gh = gearheads.reset_index(drop=True)
        g = {c: _col(gh, c) for c in _GEAR}
        g["inertia"] = np.where(np.isnan(g["inertia"]), 0.0, g["inertia"])
        g["label"] = gh["id"].astype(str).to_numpy(dtype=object)
        g["suffix"] = np.array(["+" + x for x in g["label"]], dtype=object)
        g["kind"] = np.full(len(gh), GEAR_CATALOGUE)
        g["price"], g["currency"], g["price_note"] = _prices(gh, env)
        g["mount"] = _text(gh, "mount")
        parts.append(g)
    if env.ratios:
        ratios = np.asarray(env.ratios, dtype=float)
        stages = np.full(len(ratios), env.stages) if env.stages else _stages(ratios)
        labels = [f"ratio-{r:g}" if r != int(r) else f"ratio-{r:.1f}" for r in ratios]
        est = env.assumed_gear    # estimates (gearing.assumed), else an assumed gear adds nothing
        k = len(ratios)
        parts.append({"ratio": ratios, "efficiency": env.stage_efficiency ** stages,
                      "inertia": np.full(k, env.gear_inertia, dtype=float), "label": labels,
                      "suffix": ["@" + x for x in labels], "kind": np.full(k, GEAR_ASSUMED), "mount": [""] * k,
                      "mass": est.get("mass_per_stage", 0.0) * stages,
                      "length": est.get("length_per_stage", 0.0) * stages,
                      "price": np.full(k, est.get("price", 0.0), dtype=float), "currency": [env.currency or ""] * k})
    sizes = [len(p["kind"]) for p in parts]
    options = {c: np.concatenate([np.asarray(p[c], dtype=float) if c in p else np.full(size, np.nan)
                                  for p, size in zip(parts, sizes)] or [np.zeros(0)]) for c in _GEAR}
    for c in ("label", "suffix", "currency", "price_note", "mount"):
        options[c] = _texts(np.concatenate([np.asarray(p[c], dtype=object) if c in p else np.full(size, None)
                                            for p, size in zip(parts, sizes)] or [np.zeros(0, dtype=object)]))
    options["kind"] = np.concatenate([np.asarray(p["kind"], dtype=int) for p in parts] or [np.zeros(0, dtype=int)])
    kind = options["kind"]
    motor_rows = np.arange(n_motor)
    cat_rows = np.flatnonzero(kind == GEAR_CATALOGUE)
    n_catalogue = 0
    if len(cat_rows) and n_motor:
        fits, motor_code = _mount_table(mv["mount"], options["mount"][cat_rows])
        n_catalogue = int(np.bincount(motor_code, minlength=len(fits)) @ fits.sum(axis=1))
    _refuse_too_many(env, n_catalogue, options, n_motor)
    pairs = []
    if env.direct:
        pairs.append((motor_rows, np.zeros(n_motor, dtype=np.intp)))
    if n_catalogue:   # by motor row, then gearhead row
        m_at, g_at = np.nonzero(fits[motor_code])
        pairs.append((m_at.astype(np.intp), cat_rows[g_at].astype(np.intp)))
    ratio_rows = np.flatnonzero(kind == GEAR_ASSUMED)
    if len(ratio_rows) and n_motor:
        pairs.append((np.repeat(motor_rows, len(ratio_rows)), np.tile(ratio_rows, n_motor)))
    if len(pairs) == 1:                  # one kind of option (a copy of millions of rows is not free)
        mix, oix = pairs[0]
    elif pairs:
        mix = np.concatenate([p[0] for p in pairs])
        oix = np.concatenate([p[1] for p in pairs])
    else:
        mix = oix = np.zeros(0, dtype=np.intp)
    return Candidates(mix, oix, mv, options)
