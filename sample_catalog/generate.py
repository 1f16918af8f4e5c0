"""Generate the motorshelf demo catalogue (invented data for the demo only).

The workshop builds a field robot (drive wheels, lift, camera pan/tilt head, water pump, gripper,
winch) from parts of five invented suppliers, each writing datasheets in its own style and units
(see README.md). Every motor comes from a seeded physical model (R at its reference temperature,
Kt = Ke, I0, V, J, L, Rth1/Rth2, thermal time constants, max winding temperature); its datasheet
values follow exactly from the linear DC-motor relations, the nominal point is the steady-state
thermal limit at 25 degC ambient (capped at 35 % of the stall current), and the values are then
rounded in the supplier's own units. check_motor() converts the rounded values back to SI and
asserts that every relation a record over-determines holds within 1.5 % -- except for the one
deliberate datasheet typo (TYPO), which must exceed 10 %.

Run from the repo root: .venv/bin/python sample_catalog/generate.py (deterministic: seeded RNG,
fixed XLSX timestamps).
"""
import csv, io, json, math, random, re, zipfile  # noqa: E401
from pathlib import Path

import openpyxl
import yaml

SEED = 20240611
HERE = Path(__file__).resolve().parent
RPM = 2 * math.pi / 60
OZIN = 0.27801385095378 * 0.0254          # ounce-force inch in N·m
OZ, LB, INCH = 0.028349523125, 0.45359237, 0.0254
ALPHA20, T_AMB = 0.00393, 298.15
DATE = "2024-05"

UNITS = {  # unit -> factor to SI (temperatures handled apart)
    "N·m": 1, "Nm": 1, "mNm": 1e-3, "mN·m": 1e-3, "oz-in": OZIN, "oz·in": OZIN, "in-oz": OZIN,
    "lbf·in": 4.4482216152605 * INCH, "kgf·cm": 0.0980665, "kg-cm": 0.0980665, "g-cm": 9.80665e-5,
    "rpm": RPM, "RPM": RPM, "r/min": RPM, "min^-1": RPM, "rad/s": 1,
    "V/krpm": 1e-3 / RPM, "mV/rpm": 1e-3 / RPM, "V/(rad/s)": 1, "rpm/V": RPM,
    "mNm/A": 1e-3, "N·m/A": 1, "oz-in/A": OZIN, "rpm/mNm": RPM / 1e-3,
    "g·cm²": 1e-7, "gcm²": 1e-7, "kg·m²": 1, "oz-in²": OZ * INCH**2, "oz-in-s²": OZIN,
    "Ohm": 1, "Ω": 1, "mOhm": 1e-3, "mH": 1e-3, "µH": 1e-6, "uH": 1e-6,
    "K/W": 1, "°C/W": 1, "ms": 1e-3, "s": 1, "min": 60, "V": 1, "VDC": 1, "A": 1, "mA": 1e-3,
    "g": 1e-3, "kg": 1, "oz": OZ, "lb": LB, "mm": 1e-3, "in": INCH, "%": 0.01, "1": 1,
    "arcmin": math.pi / 10800, "deg": math.pi / 180,
}
TEMPS = {"degC": (1, 273.15), "°C": (1, 273.15), "K": (1, 0), "°F": (5 / 9, 273.15 - 32 * 5 / 9)}


def to_si(x, unit):
    a, b = TEMPS.get(unit, (UNITS.get(unit), 0))
    return a * x + b


def from_si(x, unit):
    a, b = TEMPS.get(unit, (UNITS.get(unit), 0))
    return (x - b) / a


def sig(x, n):
    """Round to n significant digits, plain decimal notation, trailing zeros dropped."""
    if x == 0:
        return "0"
    d = n - 1 - math.floor(math.log10(abs(x)))
    s = f"{round(x, d):.{max(d, 0)}f}"
    return s.rstrip("0").rstrip(".") if "." in s else s


# ----------------------------------------------------------------------------- motor model
def thermal_current(R, tref, rth, tmax):
    """Steady state Tw = Ta + I² R(Tw) Rth solved for I at Tw = tmax (ambient 25 degC), copper
    R(T) = R_ref (1 + a_ref (T - Tref)) with a_ref = a20 / (1 + a20 (Tref - 20 degC))."""
    a_ref = ALPHA20 / (1 + ALPHA20 * (tref - 293.15))
    return math.sqrt((tmax - T_AMB) / (R * (1 + a_ref * (tmax - tref)) * rth))


KM = {("brushed", "coreless"): 0.0068, ("brushed", "iron-core"): 0.0058,
      ("brushless", "slotless"): 0.0060, ("brushless", "iron-core"): 0.0080}
MAGNET = {"ndfeb": 1.0, "smco": 0.92, "ferrite": 0.8}
LOSS = {"coreless": (0.006, 0.02), "slotless": (0.02, 0.05), "iron-core": (0.02, 0.06)}
TAU_E = {"coreless": (2e-5, 1e-4), "slotless": (5e-5, 2e-4), "iron-core": (3e-4, 1.5e-3)}
ROTOR = {("brushed", "coreless"): (0.55, 0.8), ("brushed", "iron-core"): (0.6, 1.0),
         ("brushless", "slotless"): (0.42, 0.9), ("brushless", "iron-core"): (0.5, 0.95)}


def design_motor(rng, D, Lm, V, comm, cons, mag, n0, tmax_c, tref_c, pp=None):
    """Physical parameters (SI) of a motor of D x Lm mm for a no-load speed near n0 rpm at V."""
    u = rng.uniform
    d, l = D / 1000, Lm / 1000
    km = KM[comm, cons] * MAGNET[mag] * (D / 22) ** (2.8 if cons == "iron-core" else 2.5) * (Lm / (1.5 * D)) ** 0.5 * u(0.9, 1.1)
    r0 = u(*LOSS[cons]) * (1.0 if comm == "brushed" or cons == "slotless" else 0.6)
    ke = V * (1 - r0) / (n0 * RPM * u(0.95, 1.05))
    R = (ke / km) ** 2
    k, f = ROTOR[comm, cons]
    area = math.pi * d * l + math.pi * d * d / 2
    rth2 = u(0.9, 1.1) / (16 * area)
    rth1 = rth2 * (u(0.3, 0.45) if comm == "brushed" else u(0.12, 0.25))
    heavy = 3.0 if cons == "iron-core" else 1.0
    return dict(V=float(V), R=R, tref=tref_c + 273.15, Kt=ke, I0=r0 * V / R,
                J=math.pi / 32 * 7800 * (k * d) ** 4 * 0.75 * l * f * u(0.9, 1.1),
                L=u(*TAU_E[cons]) * R, rth1=rth1, rth2=rth2,
                tau_w=3.0 * heavy * (D / 13) ** 1.3 * u(0.85, 1.15),
                tau_motor=150 * (D / 13) ** 1.5 * (Lm / D / 1.5) ** 0.5 * u(0.85, 1.15),
                tmax=tmax_c + 273.15, nmax=round(n0 * u(1.2, 1.4), -2) * RPM,
                mass=(3800 if cons == "coreless" else 4500) * math.pi / 4 * d * d * l * u(0.9, 1.1),
                D=d, Lm=l, pp=pp, comm=comm, cons=cons, mag=mag)


def derive(p):
    """Exact SI datasheet values of a motor model."""
    V, R, K, I0 = p["V"], p["R"], p["Kt"], p["I0"]
    Is = V / R
    Ith = thermal_current(R, p["tref"], p["rth1"] + p["rth2"], p["tmax"])
    In = min(Ith, 0.35 * Is)
    si = dict(commutation=p["comm"], construction=p["cons"], magnet_material=p["mag"],
              nominal_voltage=V, no_load_speed=(V - R * I0) / K, no_load_current=I0,
              nominal_torque=K * (In - I0), nominal_speed=(V - R * In) / K, nominal_current=In,
              stall_torque=K * (Is - I0), stall_current=Is, max_efficiency=(1 - math.sqrt(I0 / Is)) ** 2,
              terminal_resistance=R, terminal_inductance=p["L"], resistance_reference_temperature=p["tref"],
              torque_constant=K, back_emf_constant=K, speed_constant=1 / K, speed_torque_gradient=R / K**2,
              mechanical_time_constant=p["J"] * R / K**2, electrical_time_constant=p["L"] / R,
              rotor_inertia=p["J"], thermal_resistance_winding_housing=p["rth1"],
              thermal_resistance_housing_ambient=p["rth2"], thermal_time_constant_winding=p["tau_w"],
              thermal_time_constant_motor=p["tau_motor"], max_winding_temperature=p["tmax"],
              max_speed=p["nmax"], friction_torque=K * I0, motor_constant=K / math.sqrt(R),
              max_output_power=(V - R * I0) / K * K * (Is - I0) / 4, max_continuous_current=Ith,
              max_continuous_torque=K * (Ith - I0), mass=p["mass"], diameter=p["D"], length=p["Lm"])
    if p["comm"] == "brushless":
        si.update(constant_basis="dc-equivalent", pole_pairs=p["pp"])
    return si


def check_motor(m):
    """Relative error of every relation the (SI, rounded) record over-determines."""
    g = m.get
    kt, ke, kv = g("torque_constant"), g("back_emf_constant"), g("speed_constant")
    Ke, Kt = ke or kt or 1 / kv, kt or ke or 1 / kv          # for speed / for torque relations
    V, R, I0, J, L, In, Tn = map(g, ("nominal_voltage", "terminal_resistance", "no_load_current", "rotor_inertia",
                                     "terminal_inductance", "nominal_current", "nominal_torque"))
    Is = g("stall_current") or V / R
    relations = {  # name: (stated, implied); a missing value makes the relation raise TypeError or give None
        "Kv=1/Ke": lambda: (1 / kv, ke or kt), "Kt=Ke": lambda: (kt, ke), "Is=V/R": lambda: (g("stall_current"), V / R),
        "Ts=Kt(Is-I0)": lambda: (g("stall_torque"), Kt * (Is - I0)),
        "w0=(V-R*I0)/Ke": lambda: (g("no_load_speed"), (V - R * I0) / Ke),
        "gradient=R/(Kt*Ke)": lambda: (g("speed_torque_gradient"), R / (Kt * Ke)),
        "tau_m=J*R/(Kt*Ke)": lambda: (g("mechanical_time_constant"), J * R / (Kt * Ke)),
        "tau_e=L/R": lambda: (g("electrical_time_constant"), L / R),
        "eta_max=(1-sqrt(I0/Is))^2": lambda: (g("max_efficiency"), (1 - math.sqrt(I0 / Is)) ** 2),
        "Tf=Kt*I0": lambda: (g("friction_torque"), Kt * I0), "In=(Tn+Tf)/Kt": lambda: (In, Tn / Kt + I0),
        "wn=(V-R*In)/Ke": lambda: (g("nominal_speed"), (V - R * In) / Ke),
        "In<=I_thermal": lambda: (In, thermal_current(R, g("resistance_reference_temperature") or T_AMB,
                                                      g("thermal_resistance_winding_housing")
                                                      + g("thermal_resistance_housing_ambient"),
                                                      g("max_winding_temperature")))}
    errs = {}
    for name, rel in relations.items():
        try:
            a, b = rel()
        except TypeError:
            continue
        if a is not None and b is not None:
            errs[name] = max(0.0, a / b - 1) if name == "In<=I_thermal" else abs(a / b - 1)
    return errs


# ----------------------------------------------------------------------------- gearhead model
GMOUNT = {"F13": (13, 0.08, 15000, 0.02), "F16": (16, 0.15, 12000, 0.05), "F22": (22, 0.4, 10000, 0.4),
          "F28": (28, 0.8, 8000, 0.9), "F32": (32, 1.5, 7000, 2.5), "F42": (42, 4.0, 6000, 9.0),
          "F52": (52, 10.0, 5000, 25.0), "F60": (60, 15.0, 4500, 40.0)}
STAGES = {"planetary": {3.7: 1, 5.2: 1, 14: 2, 19: 2, 27: 2, 53: 3, 71: 3, 100: 3, 150: 3, 231: 4, 300: 4},
          "spur": {14: 2, 27: 3, 53: 3, 100: 4, 150: 4, 300: 4}}


def design_gear(rng, mount, ratio, kind):
    """Catalogue values (SI, already at catalogue precision) of a gearhead."""
    u, st = rng.uniform, STAGES[kind][ratio]
    D, t1, nmax, j1 = GMOUNT[mount]
    spur = kind == "spur"
    tc = float(sig(t1 * (1 + 0.7 * (st - 1)) * (0.6 if spur else 1) * u(0.9, 1.1), 2))
    length = round(D * (0.55 + 0.32 * st) * u(0.95, 1.05), 1)
    return dict(series=kind, ratio=ratio, stages=st,
                efficiency=round(0.9**st * (0.97 if spur else 1.0) * u(0.98, 1.02), 2),
                max_continuous_torque=tc, max_intermittent_torque=float(sig(tc * u(1.4, 1.6), 2)),
                max_input_speed=nmax * (0.8 if spur else 1) * RPM,
                inertia=float(sig(j1 * (1 if st == 1 else 0.65) * u(0.85, 1.15), 2)) * 1e-7,
                backlash=round((90 + 30 * st if spur else 50 + 12 * st) * u(0.9, 1.1)) * math.pi / 10800,
                mass=round(4200 * math.pi / 4 * D * D * length * 1e-9 * (0.8 if spur else 1) * u(0.9, 1.1), 4),
                diameter=D / 1000, length=length / 1000, mount=mount)


# ----------------------------------------------------------------------------- suppliers
VASK, KETT, SORV = "Vaskeline Antriebstechnik GmbH", "Kettlebrook Motor Supply Inc.", "Sorvanto Micromotors Oy"
BRACK, HALV = "Brackwater Drives Ltd", "Halvard & Pim Gearworks"
KIND = {"BC": ("brushed", "coreless"), "BI": ("brushed", "iron-core"),
        "LC": ("brushless", "slotless"), "LI": ("brushless", "iron-core")}


def specs(text):
    """'D L V kind magnet no-load-rpm max-winding-degC [pole-pairs]' per line -> tuples."""
    out = []
    for line in text.strip().splitlines():
        D, L, V, kind, mag, n0, tmax, *pp = line.split()
        out.append((float(D), float(L), int(V), kind, mag, int(n0), int(tmax), int(pp[0]) if pp else None))
    return out


VASK_SPECS = specs("""
13 20 6 BC ndfeb 12000 85\n13 20 12 BC ndfeb 13000 85\n16 28 6 BC ndfeb 9000 100\n16 28 12 BC ndfeb 10500 100
16 28 24 BC ndfeb 11000 100\n22 32 12 BC ndfeb 8000 125\n22 32 24 BC ndfeb 8500 125\n28 44 24 BC ndfeb 7000 125
32 50 24 BC ndfeb 6500 125\n32 60 12 BI ferrite 4500 125\n32 60 24 BI ferrite 4800 125\n42 70 24 BI ndfeb 4000 155
42 70 48 BI ndfeb 4200 155\n16 36 12 LC ndfeb 16000 125 1\n22 45 24 LC ndfeb 14000 125 1\n42 60 36 LI ndfeb 4500 155 4""")
KETT_SPECS = specs("""
1.26 2.2 12 BI ferrite 4000 125\n1.26 2.2 24 BI ferrite 4200 125\n1.65 2.6 12 BI ferrite 3500 125
1.65 2.6 24 BI ferrite 3800 125\n1.65 2.6 36 BI ferrite 3600 125\n1.65 3.0 24 BI ndfeb 3900 155
2.05 3.1 12 BI ferrite 3000 155\n2.05 3.1 24 BI ferrite 3200 155\n2.05 3.1 36 BI ferrite 3300 155
2.05 3.6 24 BI ndfeb 3400 155\n2.36 3.5 24 BI ferrite 2800 155\n2.36 3.5 36 BI ferrite 3000 155
2.36 3.5 48 BI ferrite 3100 155\n2.36 4.0 48 BI ndfeb 3300 155""")          # inches
SORV_SPECS = specs("""
13 19 6 BC ndfeb 11000 85\n13 19 12 BC ndfeb 12000 85\n13 32 12 BC ndfeb 10000 100\n16 25 6 BC ndfeb 9000 100
16 25 12 BC ndfeb 9500 100\n16 36 24 BC ndfeb 9000 100\n16 28 12 BC smco 8000 125\n22 28 12 BC ndfeb 7500 125
22 40 18 BC ndfeb 7000 125\n22 40 24 BC ndfeb 7200 125\n13 30 12 LC ndfeb 18000 125 1\n16 32 12 LC ndfeb 16000 125 1
22 32 18 LC ndfeb 14000 125 1\n22 48 24 LC ndfeb 12000 125 1\n28 50 24 LC ndfeb 10000 125 1\n28 36 12 LI ndfeb 5000 125 4""")
SORV_PN = [341, 342, 415, 518, 519, 526, 527, 610, 612, 614, 720, 722, 735, 738, 804, 811]
BRACK_SPECS = specs("""
22 40 12 LI ndfeb 6000 155 2\n28 45 24 LI ndfeb 5000 155 4\n32 50 24 LI ndfeb 4500 155 4\n32 70 48 LI ndfeb 5000 155 4
42 45 24 LI ndfeb 4000 155 4\n42 65 36 LI ndfeb 4000 155 4\n42 85 48 LI ndfeb 4200 155 4\n52 60 24 LI ndfeb 3500 155 4
52 80 48 LI ndfeb 3800 155 4\n60 100 48 LI ndfeb 4500 155 4\n22 50 24 LC smco 12000 125 1\n28 60 36 LC smco 10000 125 1
32 70 48 LC smco 9000 125 1\n42 80 48 LC ndfeb 7000 125 1""")
G = lambda text: [(m, float(r) if "." in r else int(r), {"P": "planetary", "S": "spur"}[k])  # noqa: E731
                  for m, r, k in (x.split(":") for x in text.split())]
HALV_GEARS = G("F16:19:P F16:53:P F16:231:P F22:27:P F22:100:P F22:300:P F32:14:P F32:71:P F32:150:P F42:53:P")
VASK_GEARS = G("F13:14:P F13:100:P F22:19:P F22:71:P F32:27:P F42:100:P")
KETT_GEARS = G("F42:27:S F52:14:P F52:53:P F52:100:S F60:19:P F60:71:P")
SORV_GEARS = G("F13:53:S F13:150:S F13:300:S F16:27:S F16:100:S F28:14:S")
BRACK_GEARS = G("F28:5.2:P F28:19:P F42:14:P F52:27:P")
VK = {"BC": "C", "BI": "F", "LC": "BS", "LI": "BI"}     # Vaskeline series codes
TYPO = (VASK, "VK-C2232-24", "torque_constant", 1.30)   # printed Kt 30 % above the true Kt


def price(rng, si, cur):
    eur = (18 + 0.9 * (si["diameter"] * 1000) ** 1.35) * (1.6 if si.get("commutation") == "brushless" else 1)
    eur *= rng.uniform(0.85, 1.15) if "ratio" not in si else 0.7 * rng.uniform(0.85, 1.15) * (1 + 0.1 * si["stages"])
    return {"EUR": round(eur, 2), "USD": math.floor(eur * 1.08) + 0.95, "GBP": round(eur * 0.86, 2)}[cur]


def S(spec, pick=None, **over):
    """Style: 'field:unit ...' (or 'Header=field:unit;...' for supplier headers) -> [(header, field, unit)].
    No unit: text or count; unit '1': bare fraction; 'A|B': B where pick(record); over: field -> unit(record)."""
    out = []
    for item in (spec.split(";") if "=" in spec else spec.split()):
        head, _, rest = item.strip().rpartition("=")
        field, _, unit = rest.partition(":")
        if "|" in unit:
            a, b = unit.split("|")
            unit = (lambda a, b: lambda r: b if pick(r) else a)(a, b)
            unit.default = a                  # the column's unit where a file states one
        out.append((head or field, field, over.get(field, unit or None)))
    return out


TEXT_M = "part_number manufacturer series commutation construction magnet_material constant_basis pole_pairs "
THERMAL = ("thermal_resistance_winding_housing:{0} thermal_resistance_housing_ambient:{0} "
           "thermal_time_constant_winding:s thermal_time_constant_motor:{1} max_winding_temperature:{2} ")
VASK_M = S(TEXT_M + """nominal_voltage:V no_load_speed:min^-1 no_load_current:mA nominal_speed:min^-1 nominal_torque:mNm
    nominal_current:A stall_torque:mNm stall_current:A max_efficiency:% terminal_resistance:Ohm terminal_inductance:mH
    resistance_reference_temperature:degC torque_constant:mNm/A speed_constant:rpm/V speed_torque_gradient:rpm/mNm
    mechanical_time_constant:ms rotor_inertia:g·cm² """ + THERMAL.format("K/W", "s", "degC")
           + "max_speed:min^-1 mass:g diameter:mm length:mm mount price currency datasheet_date source_document source_page")
KETT_M = S(TEXT_M + """nominal_voltage:VDC no_load_speed:rpm no_load_current:A nominal_torque:oz-in|oz·in nominal_speed:rpm
    nominal_current:A stall_torque:oz-in|oz·in stall_current:A friction_torque:oz-in terminal_resistance:Ω
    resistance_reference_temperature:°F torque_constant:oz-in/A back_emf_constant:V/krpm rotor_inertia:oz-in²|oz-in-s²
    mechanical_time_constant:ms """ + THERMAL.format("°C/W", "min", "°F") + "mass:oz|lb diameter:in length:in mount price currency",
           pick=lambda r: r["diameter"] > 0.05)
SORV_M = S("""Part #=part_number; Series=series; Commutation=commutation; Rotor=construction; Magnet=magnet_material;
    EMF basis=constant_basis; Pole Pairs=pole_pairs; Rated Voltage (V)=nominal_voltage:V; No Load Speed (RPM)=no_load_speed:RPM;
    No Load Current (mA)=no_load_current:mA; Rated Torque (mN·m)=nominal_torque:mN·m; Rated Speed (RPM)=nominal_speed:RPM;
    Rated Current (A)=nominal_current:A; Stall Torque (mN·m)=stall_torque:mN·m; Starting Current (A)=stall_current:A;
    Max. Efficiency (%)=max_efficiency:%; Terminal Resistance (Ω)=terminal_resistance:Ω;
    Terminal Inductance (µH)=terminal_inductance:µH; Speed Constant (rpm/V)=speed_constant:rpm/V;
    Speed/Torque Gradient (rpm/mNm)=speed_torque_gradient:rpm/mNm; Mech. Time Constant (ms)=mechanical_time_constant:ms;
    Rotor Inertia (g-cm^2)=rotor_inertia:gcm²; Rth Winding-Case (K/W)=thermal_resistance_winding_housing:K/W;
    Rth Case-Ambient (K/W)=thermal_resistance_housing_ambient:K/W; Winding Time Const. (s)=thermal_time_constant_winding:s;
    Motor Time Const. (s)=thermal_time_constant_motor:s; Max. Winding Temp. (°C)=max_winding_temperature:°C;
    Weight (g)=mass:g; Dia. (mm)=diameter:mm; Length (mm)=length:mm; Flange=mount; Cat. page=source_page""")
SORV_M_CONST = {"manufacturer": SORV, "resistance_reference_temperature": "20 degC",
                "source_document": "Sorvanto product table 2024/2"}
bs = lambda r: r["construction"] == "slotless"  # noqa: E731  Brackwater's BS sheets use SI base units
BRACK_M = S(TEXT_M + """nominal_voltage:V no_load_speed:r/min|rad/s no_load_current:mA nominal_torque:mN·m|N·m
    nominal_speed:r/min|rad/s nominal_current:A stall_torque:mN·m|N·m stall_current:A max_efficiency:% terminal_resistance
    terminal_inductance resistance_reference_temperature:K torque_constant:N·m/A back_emf_constant:mV/rpm|V/(rad/s)
    electrical_time_constant:ms mechanical_time_constant:ms rotor_inertia:g·cm²|kg·m² max_speed:rpm mass:g|kg diameter:mm
    length:mm mount price currency datasheet_date""", pick=bs,
            terminal_resistance=lambda r: "mOhm" if r["terminal_resistance"] < 1 else "Ω",
            terminal_inductance=lambda r: "mH" if r["terminal_inductance"] >= 1e-3 else "uH" if bs(r) else "µH")
G_TEXT = "part_number manufacturer series ratio stages "
HALV_G = S(G_TEXT + """efficiency:1 max_continuous_torque:Nm max_intermittent_torque:Nm max_input_speed:rpm inertia:kg·m²
    backlash:arcmin mass:kg diameter:mm length:mm mount price currency datasheet_date""")
VASK_G = S(G_TEXT + """efficiency:% max_continuous_torque:N·m max_intermittent_torque:N·m max_input_speed:min^-1
    inertia:g·cm² backlash:arcmin mass:g diameter:mm length:mm mount price currency""")
KETT_G = S(G_TEXT + """efficiency:% max_continuous_torque:in-oz|lbf·in max_intermittent_torque:in-oz|lbf·in
    max_input_speed:RPM inertia:oz-in² backlash:deg mass:oz|lb diameter:in length:in mount price currency""",
           pick=lambda r: r["mount"] != "F42")
SORV_G = S("""Item No.=part_number; Type=series; Reduction=ratio; Stages=stages; Eff. (%)=efficiency:%;
    Rated Torque (kgf·cm)=max_continuous_torque:kgf·cm|g-cm; Peak Torque (kg-cm)=max_intermittent_torque:kg-cm;
    Max Input (r/min)=max_input_speed:r/min; Inertia (g·cm²)=inertia:g·cm²; Backlash (°)=backlash:deg; Weight (g)=mass:g;
    OD (mm)=diameter:mm; Length (mm)=length:mm; Fits Flange=mount; Unit Price (EUR)=price""",
           pick=lambda r: r["mount"] == "F13")
SORV_G_CONST = {"manufacturer": SORV, "currency": "EUR"}
BRACK_G = S(G_TEXT + """efficiency:1|% max_continuous_torque:N·m max_intermittent_torque:N·m max_input_speed:r/min
    inertia:g·cm² backlash:arcmin mass:g diameter:mm length:mm mount price currency""", pick=lambda r: r["stages"] > 1)


def fmt(si, style, digits, temp_digits=5):
    """SI record -> [(field, text, unit)] in the supplier's units, rounded like a datasheet."""
    out = []
    for _, field, unit in style:
        v = si.get(field)
        if v is None:
            continue
        unit = unit(si) if callable(unit) else unit
        if unit is None:
            out.append((field, f"{v:.2f}" if field == "price" else str(v), None))
        else:
            n = temp_digits if "temperature" in field else 2 if unit == "1" else digits
            out.append((field, sig(from_si(v, unit), n), unit))
    return out


def displayed_si(rows, constants=None):
    si = {f: (to_si(float(s), u) if u else s) for f, s, u in rows}
    for f, v in (constants or {}).items():
        x, _, u = str(v).partition(" ")
        if u in UNITS or u in TEMPS:
            si[f] = to_si(float(x), u)
    return si


def motor_rows(si, style, digits, constants=None, typo=None):
    """Format with the supplier's digits; add a digit where rounding alone would exceed 1.5 %."""
    for n in (digits, digits + 1, digits + 2):
        rows = fmt(si, style, n)
        if typo:
            rows = [(f, sig(float(s) * typo[3], n), u) if f == typo[2] else (f, s, u) for f, s, u in rows]
        errs = check_motor(displayed_si(rows, constants))
        if typo:
            assert max(errs.values()) > 0.10, (si["part_number"], errs)
            return rows, errs
        if max(errs.values()) <= 0.015:
            return rows, errs
    raise AssertionError((si["part_number"], errs))


# ----------------------------------------------------------------------------- writers
def write_csv(path, header, rows):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)


def table(style, recs, constants=(), bare=False):
    """Rows of formatted records under the style's columns (those used by any record).
    Each column's unit is its most common one; `bare` cells carry no unit unless it differs."""
    used = {f for r in recs for f, _, _ in r}
    cols = [(h, f) for h, f, _ in style if f in used and f not in constants]
    unit = {}
    for _, f in cols:
        us = [u for r in recs for ff, _, u in r if ff == f]
        unit[f] = getattr(dict((ff, u) for _, ff, u in style)[f], "default", max(us, key=us.count))
    body = []
    for r in recs:
        d = {f: s if u in (None, "1") or (bare and u == unit[f]) else f"{s} {u}" for f, s, u in r}
        body.append([d.get(f, "") for _, f in cols])
    return cols, unit, body


def save_xlsx(wb, path):
    """Save with fixed timestamps so the file is byte-for-byte reproducible."""
    buf = io.BytesIO()
    wb.save(buf)
    with zipfile.ZipFile(buf) as zin, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as zout:
        for item in zin.infolist():
            data = zin.read(item.filename)
            if item.filename == "docProps/core.xml":
                data = re.sub(rb"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", b"2024-05-01T00:00:00Z", data)
            zout.writestr(zipfile.ZipInfo(item.filename, (2024, 5, 1, 0, 0, 0)), data, zipfile.ZIP_DEFLATED)


def xl(field, s):
    """Spreadsheet cell: numbers as numbers, part numbers and cells with a unit as text."""
    if field != "part_number" and re.fullmatch(r"-?\d+(\.\d+)?", s):
        return float(s) if "." in s else int(s)
    return s or None


def yaml_record(rows, as_mapping):
    rec = {}
    for f, s, u in rows:
        num = float(s) if "." in s else int(s) if re.fullmatch(r"-?\d+", s) else s
        rec[f] = (num if f in ("pole_pairs", "stages", "price", "ratio") else s) if u is None else \
            num if u == "1" else {"value": float(s), "unit": u} if as_mapping(f) else f"{s} {u}"
    return rec


FILES = [  # file, mapping profile, record type, description
    ("vaskeline_motors.csv", None, "motor", "Vaskeline: CSV, canonical headers with [unit] (min^-1, mNm, Ohm, degC), EUR"),
    ("vaskeline_gearheads.csv", None, "gearhead", "Vaskeline planetary heads: CSV, canonical headers with [unit], EUR"),
    ("kettlebrook_motors.csv", None, "motor", "Kettlebrook: CSV, value+unit cells, imperial, Kt and Ke, no inductance, USD"),
    ("kettlebrook_gearheads.csv", None, "gearhead", "Kettlebrook heads: CSV, value+unit cells (in-oz, lbf·in, deg, lb), USD"),
    ("sorvanto_motors.csv", "sorvanto.mapping.yaml", "motor", "Sorvanto: own headers, Kv not Kt, leading-zero part numbers"),
    ("sorvanto_gearheads.xlsx", "sorvanto_gearheads.mapping.yaml", "gearhead",
     "Sorvanto spur units: XLSX 2nd sheet 'Gear units', headers in row 2, some cells carry their own unit"),
    ("halvard_pim_gearheads.xlsx", None, "gearhead", "Halvard & Pim: XLSX sheet 'gearheads', headers with [unit], EUR"),
    ("brackwater.yaml", None, "motor+gearhead", "Brackwater: YAML, brushless, strings and {value, unit}, no thermal data, GBP"),
]


# ----------------------------------------------------------------------------- main
def build_motors(rng, maker, spec_list, tref_c, cur, pn, series, inch=False):
    out = []
    for i, (D, Lm, V, kind, mag, n0, tmax, pp) in enumerate(spec_list):
        D, Lm = (D * 25.4, Lm * 25.4) if inch else (D, Lm)
        p = design_motor(rng, D, Lm, V, *KIND[kind], mag, n0, tmax, tref_c, pp)
        si = dict(manufacturer=maker, part_number=pn(i, D, Lm, V, kind, mag), series=series(kind, D), **derive(p))
        si["mount"] = min(GMOUNT, key=lambda m: abs(GMOUNT[m][0] - D))
        if cur:
            si.update(price=price(rng, si, cur), currency=cur)
        out.append((si, p))
    return out


def build_gears(rng, maker, spec_list, cur, pn):
    out = []
    for mount, ratio, kind in spec_list:
        si = dict(manufacturer=maker, part_number=pn(mount[1:], str(ratio).replace(".", "R"), kind, len(out)),
                  **design_gear(rng, mount, ratio, kind))
        if maker == KETT:                     # imperial supplier: dimensions are round inches
            si["diameter"], si["length"] = (round(si[k] / INCH, 2) * INCH for k in ("diameter", "length"))
        if cur:
            si.update(price=price(rng, si, cur), currency=cur)
        out.append(si)
    return out


def main():
    import jsonschema
    rng = random.Random(SEED)
    schema = {k: json.loads((HERE.parent / "schemas" / f"{k}.schema.json").read_text()) for k in ("motor", "gearhead", "mapping")}
    motors = {
        VASK: build_motors(rng, VASK, VASK_SPECS, 25, "EUR", lambda i, D, L, V, k, m: f"VK-{VK[k]}{D:.0f}{L:.0f}-{V:02d}",
                           lambda k, D: f"VK-{VK[k]}"),
        KETT: build_motors(rng, KETT, KETT_SPECS, 25, "USD", lambda i, D, L, V, k, m: f"KB{D / 0.254:.0f}-{L / 2.54:.0f}-{V}"
                           f"{'N' if m == 'ndfeb' else ''}", lambda k, D: "KB-HD" if D > 50 else "KB-P", inch=True),
        SORV: build_motors(rng, SORV, SORV_SPECS, 20, None, lambda i, D, L, V, k, m: f"{SORV_PN[i]:05d}-{V:02d}",
                           lambda k, D: {"BC": "SM", "LC": "SL", "LI": "SX"}[k]),
        BRACK: build_motors(rng, BRACK, BRACK_SPECS, 20, "GBP", lambda i, D, L, V, k, m: f"B{'X' if k == 'LI' else 'S'}"
                            f"{D:.0f}{L:.0f}-{V}", lambda k, D: "BX" if k == "LI" else "BS"),
    }
    gears = {
        HALV: build_gears(rng, HALV, HALV_GEARS, "EUR", lambda m, r, k, i: f"HP-PL{m}-{r}"),
        VASK: build_gears(rng, VASK, VASK_GEARS, "EUR", lambda m, r, k, i: f"VK-G{m}-{r}"),
        KETT: build_gears(rng, KETT, KETT_GEARS, "USD", lambda m, r, k, i: f"KBG{m}-{k[0].upper()}{r}"),
        SORV: build_gears(rng, SORV, SORV_GEARS, "EUR", lambda m, r, k, i: f"00{7210 + 10 * i}"),
        BRACK: build_gears(rng, BRACK, BRACK_GEARS, "GBP", lambda m, r, k, i: f"BWG{m}-{r}"),
    }
    for i, (si, _) in enumerate(motors[VASK]):
        si.update(datasheet_date=DATE, source_document="Vaskeline Katalog 2024", source_page=12 + 2 * i)
    for i, (si, _) in enumerate(motors[SORV]):
        si["source_page"] = 4 + i // 4
    for i, (si, _) in enumerate(motors[BRACK]):  # no thermal data (truth keeps the model); some quote no price
        for k in [k for k in si if k.startswith("thermal_")] + ["max_winding_temperature"] + ["price", "currency"] * (i % 5 == 1):
            del si[k]
    for si in [m for m, _ in motors[BRACK]] + gears[HALV]:
        si["datasheet_date"] = DATE
    for si in gears[SORV][::2]:
        del si["price"]                      # "on request"

    # format in each supplier's units, check every over-determined relation, collect the truth
    styles = {VASK: (VASK_M, 4, {}), KETT: (KETT_M, 3, {}), SORV: (SORV_M, 4, SORV_M_CONST), BRACK: (BRACK_M, 4, {})}
    gstyles = {HALV: HALV_G, VASK: VASK_G, KETT: KETT_G, SORV: SORV_G, BRACK: BRACK_G}
    home = {(m, t): f for f, _, t, _ in FILES for m in (VASK, KETT, SORV, BRACK, HALV) if f.startswith(m.split()[0].lower())}
    truth, worst, power, mrows, grows = {}, 0.0, [], {}, {}
    for maker, lst in motors.items():
        style, digits, const = styles[maker]
        mrows[maker] = []
        for si, p in lst:
            typo = TYPO if (maker, si["part_number"]) == TYPO[:2] else None
            rows, errs = motor_rows(si, style, digits, const, typo)
            worst = worst if typo else max(worst, max(errs.values()))
            mrows[maker].append(rows)
            exact = {**si, **derive(p)}
            jsonschema.validate(exact, schema["motor"])
            t = truth[f"{maker}|{si['part_number']}"] = {
                "record_type": "motor", "file": home.get((maker, "motor"), "brackwater.yaml"), "manufacturer": maker,
                "part_number": si["part_number"], "model": p, "si": exact}
            if typo:
                typo_si = exact
                t["datasheet_typo"] = {"field": TYPO[2], "printed_factor": TYPO[3], "relation_errors": errs}
            power.append((exact["nominal_torque"] * exact["nominal_speed"], si["part_number"]))
    for maker, lst in gears.items():
        grows[maker] = [fmt(si, gstyles[maker], 3) for si in lst]
        for si, rows in zip(lst, grows[maker]):
            jsonschema.validate(si, schema["gearhead"])
            d = displayed_si(rows)
            assert d["max_intermittent_torque"] >= d["max_continuous_torque"] and d["mount"] in GMOUNT
            assert abs(d["efficiency"] / 0.9 ** int(d["stages"]) - 1) < 0.08, si
            truth[f"{maker}|{si['part_number']}"] = {"record_type": "gearhead", "file": home.get((maker, "gearhead"), "brackwater.yaml"),
                                                    "manufacturer": maker, "part_number": si["part_number"], "si": si}
    motor_mounts = {si["mount"] for lst in motors.values() for si, _ in lst}
    assert all(si["mount"] in motor_mounts for lst in gears.values() for si in lst), "a gearhead fits no motor"

    # shape 1: canonical headers with [unit];  shape 2: canonical headers, "value unit" cells (imperial)
    for path, style, recs, bare in (("vaskeline_motors.csv", VASK_M, mrows[VASK], True), ("vaskeline_gearheads.csv", VASK_G, grows[VASK], True),
                                    ("kettlebrook_motors.csv", KETT_M, mrows[KETT], False),
                                    ("kettlebrook_gearheads.csv", KETT_G, grows[KETT], False)):
        cols, unit, body = table(style, recs, bare=bare)
        write_csv(HERE / path, [f"{f} [{unit[f]}]" if bare and unit[f] not in (None, "1") else f for _, f in cols], body)
        if path == "vaskeline_motors.csv":     # the supplier's corrected line of the typo (README: `history`)
            fields = [f for _, f in cols]
            at = [r[fields.index("part_number")] for r in body].index(TYPO[1])
            fixed = list(body[at])
            fixed[fields.index(TYPO[2])] = sig(typo_si[TYPO[2]] * 1e3, 4)
            assert unit[TYPO[2]] == "mNm/A" and fixed != body[at]
            errs = check_motor(displayed_si([(f, fixed[fields.index(f)] if f == TYPO[2] else s, u)
                                             for f, s, u in mrows[VASK][at]]))
            assert max(errs.values()) <= 0.015, errs
            write_csv(HERE / "vaskeline_fix.csv", [f"{f} [{unit[f]}]" if unit[f] not in (None, "1") else f
                                                   for _, f in cols], [fixed])
    # shape 3: supplier headers + mapping profile (CSV motors; XLSX gear units behind a notes sheet and a title row)
    profiles = {}
    for name, style, recs, const, rtype, desc in (
            ("sorvanto", SORV_M, mrows[SORV], SORV_M_CONST, "motor", "Sorvanto product table: own headers, Kv instead of Kt, no prices."),
            ("sorvanto_gearheads", SORV_G, grows[SORV], SORV_G_CONST, "gearhead", "Sorvanto gear units: XLSX, title row above the headers.")):
        cols, unit, body = table(style, recs, const, bare=True)
        prof = {"profile": name.replace("_", "-"), "version": 1, "record_type": rtype, "description": desc}
        prof.update({"sheet": "Gear units", "header_row": 2} if rtype == "gearhead" else {})
        prof.update(columns={h: {"field": f, **({"unit": unit[f]} if unit[f] else {})} for h, f in cols},
                    constants=const, ignore=["Remarks"])
        jsonschema.validate(prof, schema["mapping"])
        profiles[name] = (prof, [h for h, _ in cols] + ["Remarks"], body, [f for _, f in cols])
        (HERE / f"{name}.mapping.yaml").write_text(f"# Import mapping profile for {name.split('_')[0]} {rtype}s (invented demo data)\n"
                                                  + yaml.safe_dump(prof, sort_keys=False, allow_unicode=True), encoding="utf-8")
    _, head, body, _ = profiles["sorvanto"]
    remarks = ["", "low-noise brushes", "", "graphite brushes", "", "", "high-temp version", "", "", "", "", "", "", "hall sensors",
               "pump duty", "flat"]
    write_csv(HERE / "sorvanto_motors.csv", head, [b + [r] for b, r in zip(body, remarks)])
    _, head, body, fields = profiles["sorvanto_gearheads"]
    wb = openpyxl.Workbook()
    wb.active.title = "Notes"
    for line in ("Sorvanto Micromotors Oy - gear units", "Prices ex works, EUR. Blank price: on request.", "Invented demo data."):
        wb.active.append([line])
    ws = wb.create_sheet("Gear units")
    ws.append(["Sorvanto gear units - price list 2024-03"])
    ws.append(head)
    for b, r in zip(body, ["", "", "metal gears", "", "", "plastic first stage"]):
        ws.append([xl(f, s) for f, s in zip(fields, b)] + [r or None])
    save_xlsx(wb, HERE / "sorvanto_gearheads.xlsx")
    # shape 4: XLSX, sheet "gearheads", canonical headers with [unit]
    cols, unit, body = table(HALV_G, grows[HALV], bare=True)
    wb = openpyxl.Workbook()
    wb.active.title = "gearheads"
    wb.active.append([f"{f} [{unit[f]}]" if unit[f] not in (None, "1") else f for _, f in cols])
    for b in body:
        wb.active.append([xl(f, s) for (_, f), s in zip(cols, b)])
    save_xlsx(wb, HERE / "halvard_pim_gearheads.xlsx")
    # shape 5: YAML with "value unit" strings and {value, unit} maps
    doc = {"motors": [yaml_record(r, lambda f: f in ("rotor_inertia", "resistance_reference_temperature")) for r in mrows[BRACK]],
           "gearheads": [yaml_record(r, lambda f: f != "efficiency") for r in grows[BRACK]]}
    (HERE / "brackwater.yaml").write_text("# Brackwater Drives Ltd - brushless range and planetary heads, export 2024-05\n"
                                          "# Invented demo data. No thermal data published.\n"
                                          + yaml.safe_dump(doc, sort_keys=False, allow_unicode=True, width=200), encoding="utf-8")

    # demo stock shelf
    places = ["Lab 2 / cabinet A / bin 3", "Lab 2 / cabinet A / bin 7", "Lab 2 / cabinet B / drawer 1", "Workshop / shelf 4 / crate 2",
              "Workshop / shelf 4 / crate 5", "Store room / rack C / box 12", "Field kit / case 1"]
    notes = {"new": ["", "", "sealed bag", "spare for the winch", "bought for the drive wheels"],
             "used": ["pulled from the lift prototype", "ran ~40 h on the test rig", "from the first pan/tilt head", ""],
             "needs-testing": ["returned from field trial", "unknown history", "found in the old gripper"],
             "faulty": ["brushes worn", "bearing noise", "open winding", "shaft bent"]}
    parts = [(t["part_number"], t["manufacturer"]) for t in truth.values()]
    stock = []
    for pn, mfr in rng.sample(parts, 32) + rng.sample(parts, 4):
        cond = rng.choices(list(notes), weights=[6, 3, 2, 1])[0]
        qty = rng.choice([1, 1, 2, 2, 3, 4, 6, 10] if cond in ("new", "used") else [1, 1, 2])
        serials = ";".join(f"{re.sub('[^A-Z]', '', mfr)[:2]}{rng.randint(10000, 99999)}" for _ in range(qty)) \
            if qty <= 3 and rng.random() < 0.5 else ""
        stock.append([pn, mfr, qty, rng.choice(places), cond, serials, rng.choice(notes[cond])])
    (HERE / "stock").mkdir(exist_ok=True)
    write_csv(HERE / "stock" / "shelf.csv", "part_number manufacturer quantity location condition serial_numbers notes".split(), stock)

    # manifest + truth
    manifest = {"description": "motorshelf demo catalogue - invented data for the demo only",
                "generator": "sample_catalog/generate.py", "seed": SEED,
                "files": [{"file": f, **({"mapping": m} if m else {}), "record_type": t, "description": d} for f, m, t, d in FILES],
                "inconsistent_record": {"manufacturer": TYPO[0], "part_number": TYPO[1], "file": "vaskeline_motors.csv",
                                        "what": "torque_constant printed 30 % too high: it contradicts speed_constant (1/Ke) and "
                                                "stall_torque/(stall_current - no_load_current); all other values are consistent",
                                        "printed": f"{sig(typo_si['torque_constant'] * TYPO[3] * 1e3, 4)} mNm/A",
                                        "consistent_value": f"{sig(typo_si['torque_constant'] * 1e3, 4)} mNm/A"},
                "stock": "stock/shelf.csv", "truth": "truth.json"}
    (HERE / "manifest.yaml").write_text(yaml.safe_dump(manifest, sort_keys=False, allow_unicode=True, width=200), encoding="utf-8")
    (HERE / "truth.json").write_text(json.dumps(truth, indent=1, ensure_ascii=False, sort_keys=True) + "\n", encoding="utf-8")
    power.sort()
    print(f"{sum(map(len, motors.values()))} motors, {sum(map(len, gears.values()))} gearheads, {len(stock)} stock lines; worst "
          f"relation error {worst:.2%}; nominal power {power[0][0]:.2f} W ({power[0][1]}) .. {power[-1][0]:.0f} W ({power[-1][1]})")


if __name__ == "__main__":
    main()
