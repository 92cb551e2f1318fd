"""Safety numbers for a lead-acid bank: ventilation, prospective short-circuit current, cautions.

Three things every output that guides installation or maintenance needs:

- the battery-room airflow and natural-vent openings of IEC 62485-2
  (:func:`ventilation_airflow_m3h`, :func:`vent_opening_cm2`, :func:`bank_ventilation`);
- the prospective short-circuit current ``V_oc / R_internal`` that sets the
  interrupt rating of fuses and breakers (:func:`short_circuit_current_a`,
  :func:`bank_short_circuit`);
- the standard caution texts, written once here and reused by the quote, the
  field sheets and the demo (:func:`cautions`).

These numbers are aids for qualified people. Local codes, the manufacturer's
instructions and licensed practice govern.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

from benchbook.errors import ModelError

# ---- IEC 62485-2 ventilation --------------------------------------------------------------

#: Hydrogen's lower flammability limit in air, by volume. [-]
HYDROGEN_LFL = 0.04
#: Dilution factor ``v = (100 % - 4 %) / 4 %`` of IEC 62485-2. [-]
DILUTION_FACTOR = 24.0
#: Hydrogen evolved per ampere-hour of gassing current at 0 °C, 1013 hPa. [m³/Ah]
HYDROGEN_M3_PER_AH = 0.42e-3
#: Safety factor ``s`` of IEC 62485-2. [-]
SAFETY_FACTOR = 5.0
#: The combined constant ``v q s`` that IEC 62485-2 rounds to 0.05. [m³/Ah]
AIRFLOW_CONSTANT = 0.05
#: Natural ventilation: free area of each of the inlet and outlet openings per m³/h. [cm²·h/m³]
OPENING_CM2_PER_M3H = 28.0

#: Gas current ``I_gas`` in mA per Ah of C10, by (cell type, charge mode); IEC 62485-2 table.
GAS_CURRENT_MA_PER_AH: dict[tuple[str, str], float] = {
    ("vented", "float"): 5.0,
    ("vented", "boost"): 20.0,
    ("vrla", "float"): 1.0,
    ("vrla", "boost"): 8.0,
}
#: Chemistry names benchbook uses, mapped to the IEC 62485-2 cell type.
CELL_TYPES: dict[str, str] = {"flooded": "vented", "vented": "vented", "agm": "vrla", "gel": "vrla", "vrla": "vrla"}
CHARGE_MODES = ("float", "boost")


def _positive(name: str, value: float, allow_zero: bool = False) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ModelError(f"{name}: found {value!r}; expected a number")
    if not math.isfinite(v) or v < 0 or (v == 0 and not allow_zero):
        raise ModelError(f"{name}: found {value!r}; expected a {'non-negative' if allow_zero else 'positive'} number")
    return v


def gas_current_ma_per_ah(chemistry: str, mode: str = "float", recombination_plugs: bool = False) -> float:
    """Gas current ``I_gas`` of IEC 62485-2 for a cell type and charge mode.

    Parameters
    ----------
    chemistry : str
        ``"flooded"`` / ``"vented"`` (vented cells) or ``"agm"`` / ``"gel"`` / ``"vrla"``
        (valve-regulated cells).
    mode : str
        ``"float"`` or ``"boost"`` (boost, equalize or absorption charging).
    recombination_plugs : bool
        Vented cells fitted with recombination vent plugs: the gas current is
        halved. Not applicable to VRLA cells.

    Returns
    -------
    float
        Gas current per Ah of C10 capacity. [mA/Ah]

    Raises
    ------
    ModelError
        For an unknown chemistry or mode, or recombination plugs on VRLA cells.

    References
    ----------
    IEC 62485-2:2010, "Safety requirements for secondary batteries and battery
    installations - Part 2: Stationary batteries" (formerly EN 50272-2), the
    table of ``I_gas`` values in its ventilation clause 7 (clause number from memory).
    """
    cell = CELL_TYPES.get(str(chemistry).lower())
    if cell is None:
        raise ModelError(f"chemistry: found {chemistry!r}; expected one of {', '.join(CELL_TYPES)}")
    if mode not in CHARGE_MODES:
        raise ModelError(f"mode: found {mode!r}; expected 'float' or 'boost'")
    value = GAS_CURRENT_MA_PER_AH[(cell, mode)]
    if recombination_plugs:
        if cell != "vented":
            raise ModelError("recombination_plugs: recombination vent plugs apply to vented (flooded) cells only")
        value *= 0.5
    return value


def ventilation_airflow_m3h(cells: float, gas_current_ma_per_ah: float, rated_ah_c10: float) -> float:
    """Required battery-room airflow ``Q = 0.05 n I_gas C_rt 1e-3`` of IEC 62485-2.

    The constant 0.05 is ``v q s = 24 × 0.42e-3 × 5``: dilution of hydrogen to
    below its 4 % lower flammability limit, hydrogen evolved per Ah, and a
    safety factor.

    Parameters
    ----------
    cells : float
        Number of 2 V cells in the room (all strings). [-]
    gas_current_ma_per_ah : float
        Gas current per Ah of rated capacity, see :func:`gas_current_ma_per_ah`. [mA/Ah]
    rated_ah_c10 : float
        Rated capacity ``C_rt`` of one cell, at the 10 h rate. [Ah]

    Returns
    -------
    float
        Airflow of fresh air. [m³/h]

    References
    ----------
    IEC 62485-2:2010, clause 7.2, equation for ``Q`` (clause number from memory).
    """
    n = _positive("cells", cells, allow_zero=True)
    i_gas = _positive("gas_current_ma_per_ah", gas_current_ma_per_ah, allow_zero=True)
    c = _positive("rated_ah_c10", rated_ah_c10, allow_zero=True)
    return AIRFLOW_CONSTANT * n * i_gas * c * 1e-3


def vent_opening_cm2(airflow_m3h: float) -> float:
    """Free area of each natural-ventilation opening, ``A = 28 Q`` of IEC 62485-2.

    One opening low (inlet) and one high on the opposite wall (outlet), each of
    this free area.

    Parameters
    ----------
    airflow_m3h : float
        Required airflow from :func:`ventilation_airflow_m3h`. [m³/h]

    Returns
    -------
    float
        Free area of the inlet, and again of the outlet. [cm²]

    References
    ----------
    IEC 62485-2:2010, clause 7.3, natural ventilation (clause number from
    memory). The 28 follows from an air velocity of 0.1 m/s through the opening:
    ``1e4 / (0.1 × 3600) ≈ 27.8`` cm² per m³/h.
    """
    return OPENING_CM2_PER_M3H * _positive("airflow_m3h", airflow_m3h, allow_zero=True)


@dataclass(frozen=True)
class Ventilation:
    """Ventilation of one bank by IEC 62485-2, for float and for boost charging.

    Parameters
    ----------
    cells : int
        Cells in the bank. [-]
    rated_ah_c10 : float
        C10 of one cell (of one block: the cells of a block are in series). [Ah]
    cell_type : str
        ``"vented"`` or ``"vrla"``.
    recombination_plugs : bool
        Whether vented cells have recombination vent plugs.
    gas_float_ma_per_ah, gas_boost_ma_per_ah : float
        Gas currents used. [mA/Ah]
    float_m3h, boost_m3h : float
        Required airflow on float and on boost. [m³/h]
    float_opening_cm2, boost_opening_cm2 : float
        Natural-ventilation inlet and outlet free area, each. [cm²]
    """

    cells: int
    rated_ah_c10: float
    cell_type: str
    recombination_plugs: bool
    gas_float_ma_per_ah: float
    gas_boost_ma_per_ah: float
    float_m3h: float
    boost_m3h: float
    float_opening_cm2: float
    boost_opening_cm2: float


def bank_ventilation(chemistry: str, cells: int, rated_ah_c10: float,
                     recombination_plugs: bool = False) -> Ventilation:
    """Ventilation for a whole bank, on float and on boost, by IEC 62485-2.

    Parameters
    ----------
    chemistry : str
        Battery chemistry, see :func:`gas_current_ma_per_ah`.
    cells : int
        Cells in the bank: cells per block × series × parallel. [-]
    rated_ah_c10 : float
        C10 of one string (of one block). [Ah]
    recombination_plugs : bool
        Vented cells with recombination vent plugs.

    Returns
    -------
    Ventilation

    References
    ----------
    IEC 62485-2:2010, clauses 7.2 and 7.3.
    """
    g_f = gas_current_ma_per_ah(chemistry, "float", recombination_plugs)
    g_b = gas_current_ma_per_ah(chemistry, "boost", recombination_plugs)
    q_f = ventilation_airflow_m3h(cells, g_f, rated_ah_c10)
    q_b = ventilation_airflow_m3h(cells, g_b, rated_ah_c10)
    return Ventilation(int(cells), float(rated_ah_c10), CELL_TYPES[str(chemistry).lower()], bool(recombination_plugs),
                       g_f, g_b, q_f, q_b, vent_opening_cm2(q_f), vent_opening_cm2(q_b))


# ---- short-circuit current ----------------------------------------------------------------

#: Offset of the open-circuit voltage above specific gravity, per cell; sources give 0.84–0.85. [V]
OCV_SG_OFFSET_V = 0.84
#: Full-charge specific gravity assumed for the short-circuit OCV when none is given. [-]
DEFAULT_FULL_CHARGE_SG = 1.265


def short_circuit_current_a(open_circuit_v: float, internal_resistance_ohm: float) -> float:
    """Prospective short-circuit current at the bank terminals, ``V_oc / R_internal``.

    Cable and connection resistance are ignored, so the value is an upper
    bound for a bolted fault at the terminals; that is the figure the interrupt
    rating of fuses and breakers must exceed.

    Parameters
    ----------
    open_circuit_v : float
        Open-circuit voltage of the bank. [V]
    internal_resistance_ohm : float
        Internal resistance of the bank. [Ω]

    Returns
    -------
    float
        Prospective short-circuit current. [A]

    References
    ----------
    IEEE Std 946, "Recommended Practice for the Design of DC Power Systems for
    Stationary Applications", short-circuit current of a battery as open-circuit
    voltage over internal resistance (from memory); IEC 61660-1 gives the
    detailed method.
    """
    v = _positive("open_circuit_v", open_circuit_v, allow_zero=True)
    r = _positive("internal_resistance_ohm", internal_resistance_ohm)
    return v / r


def open_circuit_voltage_per_cell_v(specific_gravity: float, offset_v: float = OCV_SG_OFFSET_V) -> float:
    """Open-circuit voltage of a lead-acid cell at rest from its specific gravity, ``SG + 0.84``.

    Parameters
    ----------
    specific_gravity : float
        Electrolyte specific gravity, 1.000–1.400. [-]
    offset_v : float
        The rule-of-thumb offset; sources give 0.84–0.85. [V]

    Returns
    -------
    float
        Open-circuit voltage per cell. [V]

    References
    ----------
    The "SG + 0.84" rule for lead-acid cells at rest, as given in battery
    handbooks and installation manuals (e.g. D. Linden, T. Reddy, *Handbook of
    Batteries*, 3rd ed., McGraw-Hill 2002, lead-acid chapters; from memory).
    """
    sg = _positive("specific_gravity", specific_gravity)
    if not 1.0 <= sg <= 1.4:
        raise ModelError(f"specific_gravity: found {specific_gravity!r}; expected 1.000–1.400")
    return sg + float(offset_v)


@dataclass(frozen=True)
class ShortCircuit:
    """Prospective short-circuit current of a bank.

    Parameters
    ----------
    open_circuit_v : float
        Bank open-circuit voltage, cells in series × per-cell OCV. [V]
    resistance_ohm : float
        Bank internal resistance, series × R_block / parallel. [Ω]
    current_a : float
        ``open_circuit_v / resistance_ohm``. [A]
    per_string_a : float
        The share one string feeds into a fault on the common bus. [A]
    specific_gravity : float
        Specific gravity assumed for the OCV. [-]
    ocv_offset_v : float
        OCV offset used (``SG + offset``). [V]
    """

    open_circuit_v: float
    resistance_ohm: float
    current_a: float
    per_string_a: float
    specific_gravity: float
    ocv_offset_v: float


def bank_short_circuit(cells_per_block: int, block_resistance_ohm: float, series: int, parallel: int,
                       specific_gravity: float = DEFAULT_FULL_CHARGE_SG,
                       ocv_offset_v: float = OCV_SG_OFFSET_V) -> ShortCircuit:
    """Prospective short-circuit current of ``parallel`` strings of ``series`` blocks.

    String OCV is ``cells_per_block × series × (SG + 0.84)``; bank resistance is
    ``series × R_block / parallel``.

    Parameters
    ----------
    cells_per_block : int
        Cells in one block (6 for a 12 V block). [-]
    block_resistance_ohm : float
        Internal resistance of one block, fully charged. [Ω]
    series : int
        Blocks in series per string. [-]
    parallel : int
        Strings in parallel. [-]
    specific_gravity : float
        Full-charge specific gravity; 1.265 gives 2.105 V per cell. [-]
    ocv_offset_v : float
        OCV offset above SG. [V]

    Returns
    -------
    ShortCircuit

    References
    ----------
    See :func:`short_circuit_current_a` and :func:`open_circuit_voltage_per_cell_v`.
    """
    for name, v in (("cells_per_block", cells_per_block), ("series", series), ("parallel", parallel)):
        if isinstance(v, bool) or not isinstance(v, int) and not (isinstance(v, float) and v.is_integer()) or v < 1:
            raise ModelError(f"{name}: found {v!r}; expected a whole number of at least 1")
    r_block = _positive("block_resistance_ohm", block_resistance_ohm)
    ocv = int(cells_per_block) * int(series) * open_circuit_voltage_per_cell_v(specific_gravity, ocv_offset_v)
    r = int(series) * r_block / int(parallel)
    i = short_circuit_current_a(ocv, r)
    return ShortCircuit(ocv, r, i, i / int(parallel), float(specific_gravity), float(ocv_offset_v))


#: Common DC interrupt (breaking) ratings of fuses and moulded-case breakers. [A]
STANDARD_INTERRUPT_RATINGS_A = (5_000, 10_000, 20_000, 25_000, 35_000, 50_000, 65_000, 100_000, 125_000, 200_000)


def interrupt_rating_a(prospective_a: float) -> float:
    """Smallest common interrupt rating strictly above a prospective short-circuit current.

    Parameters
    ----------
    prospective_a : float
        Prospective short-circuit current. [A]

    Returns
    -------
    float
        Interrupt rating to specify. [A]

    Raises
    ------
    ModelError
        When the current exceeds every listed rating (engineer it specially).

    Notes
    -----
    The list of ratings is common practice, no source. The rule that the
    interrupt rating must exceed the available fault current is that of the
    national electrical codes (e.g. NFPA 70 article 110.9, from memory).
    """
    i = _positive("prospective_a", prospective_a, allow_zero=True)
    for r in STANDARD_INTERRUPT_RATINGS_A:
        if r > i:
            return float(r)
    raise ModelError(f"prospective short-circuit current {i:,.0f} A exceeds every common interrupt rating "
                     f"({STANDARD_INTERRUPT_RATINGS_A[-1]:,} A); the protection needs special engineering")


# ---- cautions -----------------------------------------------------------------------------

CAUTION_KINDS = ("installation", "maintenance", "capacity_test")


@dataclass(frozen=True)
class Caution:
    """One caution: a short topic heading and its text.

    Parameters
    ----------
    topic : str
        One of ``"hydrogen"``, ``"acid"``, ``"short_circuit"``, ``"ppe"``,
        ``"discharge"``, ``"codes"``.
    heading : str
        Heading shown in bold.
    text : str
        The caution itself.
    """

    topic: str
    heading: str
    text: str


def _fmt_a(a: float) -> str:
    return f"{a:,.0f} A"


def cautions(kind: str = "installation", *, short_circuit_a: Optional[float] = None,
             airflow_m3h: Optional[float] = None) -> tuple[Caution, ...]:
    """The standard safety cautions for an output that guides battery work.

    One place for the texts, reused by the quote, the field sheets and the demo.
    Every kind carries hydrogen/ventilation, acid, short-circuit current, PPE
    and the deferral to local codes and licensed practice; capacity tests add
    a caution about the discharge itself.

    Parameters
    ----------
    kind : str
        ``"installation"``, ``"maintenance"`` or ``"capacity_test"``.
    short_circuit_a : float, optional
        Prospective short-circuit current of this bank, quoted in the text. [A]
    airflow_m3h : float, optional
        Required airflow while boost charging, quoted in the text. [m³/h]

    Returns
    -------
    tuple of Caution
        In the order they should be shown; the last is always ``"codes"``.

    References
    ----------
    IEC 62485-2:2010 (ventilation, clause 7; protection against electrolyte,
    clause 8); NFPA 70E, "Standard for Electrical Safety in the Workplace",
    article 320 (safety requirements related to batteries); IEEE Std 450 and
    IEEE Std 1188, safety sections (from memory).
    """
    if kind not in CAUTION_KINDS:
        raise ModelError(f"kind: found {kind!r}; expected one of {', '.join(CAUTION_KINDS)}")
    flow = (f" This bank needs at least {airflow_m3h:,.1f} m³/h of fresh air while boost charging (IEC 62485-2)."
            if airflow_m3h is not None else "")
    sc = (f" This bank can deliver about {_fmt_a(short_circuit_a)} into a short circuit at its terminals."
          if short_circuit_a is not None else "")
    charging = {"installation": "during commissioning charges", "maintenance": "during equalize and boost charges",
                "capacity_test": "during the recharge after the test"}[kind]
    out = [
        Caution("hydrogen", "Hydrogen and ventilation",
                "Lead-acid cells give off hydrogen, most of all " + charging + ". Hydrogen burns in air from 4 % by "
                "volume. Keep the battery area ventilated, keep flames, sparks and smoking away, make and break "
                "connections only with the circuit open, and never charge in a sealed enclosure." + flow),
        Caution("acid", "Sulphuric acid",
                "The electrolyte is sulphuric acid and burns skin and eyes. Wear goggles and a face shield, "
                "acid-resistant gloves and apron. Keep an eyewash station and a neutralizer (sodium bicarbonate "
                "solution) within reach; flush splashes with plenty of clean water."),
        Caution("short_circuit", "Short-circuit current",
                "A battery bank cannot be switched off. It can drive thousands of amperes into a fault, enough to "
                "melt tools and cause arc flash and burns." + sc + " Use insulated tools, remove rings, watches "
                "and metal jewellery, cover terminals not being worked on, and fit fuses or breakers whose interrupt "
                "rating exceeds the prospective short-circuit current. Open the string disconnects before work."),
        Caution("ppe", "Personal protective equipment",
                "Assess shock and arc-flash hazards and choose PPE by NFPA 70E (or the national equivalent). "
                "Lift blocks with proper equipment: a single block can weigh more than one person should lift."),
    ]
    if kind == "capacity_test":
        out.append(Caution("discharge", "Discharge test",
                           "A capacity test runs the bank down while it may still carry the load: agree the load "
                           "transfer in advance, watch for hot or reversing cells, and stop at the end voltage."))
    out.append(Caution("codes", "Codes and qualified people",
                       "Local codes, the electrical code's article on storage batteries, the manufacturer's "
                       "instructions and licensed practice govern this work. These figures are aids for qualified "
                       "people and do not replace their judgement or the authority having jurisdiction."))
    return tuple(out)
