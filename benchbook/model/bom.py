"""Bill of materials for one bank option: the lines of a quote, before any workbook.

:func:`bill_of_materials` turns a battery, a series count and a parallel count
into :class:`BomLine` records: the blocks, inter-block connectors, string cables
and bus bars, racks, string fusing and the main disconnect (with an interrupt
rating above the bank's prospective short-circuit current), ventilation and
labour.

Quantities follow from the arrangement. Unit prices other than the block's come
from :class:`BomAllowances`, whose defaults are **illustrative allowances, not
prices**: the estimator replaces them in the quote (the unit-price cells are plain
values; every total is a formula).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from benchbook.errors import FieldProblem, ModelError, SpecError
from benchbook.model.battery import BatterySpec
from benchbook.model.safety import bank_short_circuit, bank_ventilation, interrupt_rating_a


@dataclass(frozen=True)
class BomAllowances:
    """Allowances for the non-battery lines of a quote. All prices are illustrative defaults.

    Parameters
    ----------
    connector_price : float
        One inter-block connector with its hardware and terminal cover. [currency/each]
    string_cable_price : float
        One string's pair of equal-length leads to the bus bars. [currency/set]
    bus_bar_price : float
        Positive and negative bus bars, for banks of two or more strings. [currency/set]
    rack_price : float
        One battery rack or cabinet. [currency/each]
    rack_rating_kg : float
        Load one rack carries. [kg]
    string_fuse_price : float
        One fused string disconnect. [currency/each]
    main_disconnect_price : float
        The bank's main DC disconnect. [currency/each]
    vent_grille_price : float
        One natural-ventilation grille. [currency/each]
    extract_fan_price : float
        One extract fan with its controls, when natural ventilation is impractical. [currency/each]
    natural_vent_max_cm2 : float
        Largest opening still served by natural ventilation; above it a fan is
        listed. Common practice, no source; a parameter. [cm²]
    labour_rate : float
        Installer labour. [currency/h]
    labour_base_h : float
        Fixed labour: set-out, bus bars, protection, commissioning charge. [h]
    labour_h_per_block : float
        Labour to place, connect and torque one block. [h/block]
    recombination_plugs : bool
        Vented cells fitted with recombination vent plugs (halves the gas current).
    """

    connector_price: float = 9.0
    string_cable_price: float = 70.0
    bus_bar_price: float = 140.0
    rack_price: float = 380.0
    rack_rating_kg: float = 700.0
    string_fuse_price: float = 160.0
    main_disconnect_price: float = 420.0
    vent_grille_price: float = 45.0
    extract_fan_price: float = 320.0
    natural_vent_max_cm2: float = 2000.0
    labour_rate: float = 65.0
    labour_base_h: float = 6.0
    labour_h_per_block: float = 0.4
    recombination_plugs: bool = False

    def __post_init__(self) -> None:
        bad = []
        for name in ("connector_price", "string_cable_price", "bus_bar_price", "rack_price", "string_fuse_price",
                     "main_disconnect_price", "vent_grille_price", "extract_fan_price", "labour_rate",
                     "labour_base_h", "labour_h_per_block"):
            v = getattr(self, name)
            if not isinstance(v, (int, float)) or isinstance(v, bool) or not math.isfinite(v) or v < 0:
                bad.append(FieldProblem(name, v, "a number of 0 or more"))
        for name in ("rack_rating_kg", "natural_vent_max_cm2"):
            v = getattr(self, name)
            if not isinstance(v, (int, float)) or isinstance(v, bool) or not math.isfinite(v) or v <= 0:
                bad.append(FieldProblem(name, v, "a number above 0"))
        if bad:
            raise SpecError("bill-of-materials allowances", bad)


@dataclass(frozen=True)
class BomLine:
    """One line of a bill of materials.

    Parameters
    ----------
    item : str
        Short name of the item (``"Battery blocks"``).
    description : str
        What exactly, with the ratings that matter.
    quantity : float
        How many. [unit]
    unit : str
        ``"ea"``, ``"set"`` or ``"h"``.
    unit_price : float
        Price of one unit. [currency/unit]
    """

    item: str
    description: str
    quantity: float
    unit: str
    unit_price: float

    @property
    def total(self) -> float:
        """Quantity × unit price. [currency]"""
        return self.quantity * self.unit_price


def _whole(name: str, v: object) -> int:
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not float(v).is_integer() or v < 1:
        raise ModelError(f"{name}: found {v!r}; expected a whole number of at least 1")
    return int(v)


def bill_of_materials(spec: BatterySpec, series: int, parallel: int,
                      allowances: BomAllowances = BomAllowances()) -> tuple[BomLine, ...]:
    """Bill-of-materials lines for ``parallel`` strings of ``series`` blocks of ``spec``.

    Parameters
    ----------
    spec : BatterySpec
        The battery.
    series : int
        Blocks in series per string. [-]
    parallel : int
        Strings in parallel. [-]
    allowances : BomAllowances
        Prices and rules for the lines other than the blocks.

    Returns
    -------
    tuple of BomLine
        Blocks, connectors, string cables (and bus bars for two strings or more),
        racks, string fuses, main disconnect, ventilation, labour; in that order.

    Notes
    -----
    - Connectors: ``series - 1`` per string (common practice, no source).
    - Fusing: one fused disconnect per string and one main disconnect, each with
      an interrupt rating above the bank's prospective short-circuit current
      ``V_oc / R_internal`` (see :func:`benchbook.model.safety.bank_short_circuit`)
      and a DC voltage rating above the string's absorption voltage.
    - Ventilation: two grilles (inlet low, outlet high) sized for the boost-charge
      airflow of IEC 62485-2, or an extract fan when the opening would exceed
      ``natural_vent_max_cm2``.

    References
    ----------
    IEC 62485-2:2010, clause 7 (ventilation); NFPA 70 article 110.9, interrupting
    rating (from memory).
    """
    n_s = _whole("series", series)
    n_p = _whole("parallel", parallel)
    a = allowances
    blocks = n_s * n_p
    cells = spec.cells_per_block * blocks
    string_cells = spec.cells_per_block * n_s
    sc = bank_short_circuit(spec.cells_per_block, spec.internal_resistance_ohm, n_s, n_p)
    rating = interrupt_rating_a(sc.current_a)
    dc_v = string_cells * spec.absorption_voltage_per_cell_v
    vent = bank_ventilation(spec.chemistry, cells, spec.c10_ah, a.recombination_plugs)
    weight = blocks * spec.weight_kg
    racks = max(1, math.ceil(weight / a.rack_rating_kg))
    nominal_v = n_s * spec.block_voltage_v

    lines = [
        BomLine("Battery blocks", f"{spec.model}, {spec.block_voltage_v:g} V {spec.chemistry}, "
                f"{spec.nominal_ah:,.0f} Ah nominal; {n_p} string(s) of {n_s} in series, {nominal_v:g} V nominal",
                float(blocks), "ea", float(spec.unit_price)),
        BomLine("Inter-block connectors", f"Connector with hardware and insulating cover; {n_s - 1} per string",
                float((n_s - 1) * n_p), "ea", a.connector_price),
        BomLine("String cables", "Pair of equal-length insulated leads per string to the common bus bars or "
                "terminals", float(n_p), "set", a.string_cable_price),
    ]
    if n_p > 1:
        lines.append(BomLine("Bus bars", f"Positive and negative bus bars for {n_p} strings, with covers",
                             1.0, "set", a.bus_bar_price))
    lines += [
        BomLine("Racks", f"Battery rack or cabinet rated {a.rack_rating_kg:,.0f} kg; bank weighs {weight:,.0f} kg",
                float(racks), "ea", a.rack_price),
        BomLine("String fuses", f"Fused string disconnect, DC rated above {dc_v:,.0f} V, interrupt rating at least "
                f"{rating / 1000:g} kA (prospective short circuit {sc.current_a:,.0f} A)",
                float(n_p), "ea", a.string_fuse_price),
        BomLine("Main disconnect", f"Lockable DC disconnect, rated above {dc_v:,.0f} V, interrupt rating at least "
                f"{rating / 1000:g} kA", 1.0, "ea", a.main_disconnect_price),
    ]
    if vent.boost_opening_cm2 <= a.natural_vent_max_cm2:
        lines.append(BomLine("Ventilation", f"Vent grilles, inlet low and outlet high, each at least "
                             f"{max(vent.boost_opening_cm2, 1.0):,.0f} cm² free area (IEC 62485-2, boost charging)",
                             2.0, "ea", a.vent_grille_price))
    else:
        lines.append(BomLine("Ventilation", f"Extract fan of at least {vent.boost_m3h:,.1f} m³/h with inlet grille "
                             "and airflow interlock (IEC 62485-2, boost charging)", 1.0, "ea", a.extract_fan_price))
    hours = a.labour_base_h + a.labour_h_per_block * blocks
    lines.append(BomLine("Labour", f"Install, connect, torque and commission: {a.labour_base_h:g} h plus "
                         f"{a.labour_h_per_block:g} h per block", round(hours, 2), "h", a.labour_rate))
    return tuple(lines)


def bom_subtotal(lines: tuple[BomLine, ...]) -> float:
    """Sum of the line totals. [currency]"""
    return float(sum(l.total for l in lines))


@dataclass(frozen=True)
class QuoteTotals:
    """Subtotal, discount, tax and grand total of a quote.

    Parameters
    ----------
    subtotal : float
        Sum of line totals. [currency]
    discount : float
        Discount, a non-positive amount. [currency]
    tax : float
        Tax on the discounted subtotal. [currency]
    grand_total : float
        Subtotal + discount + tax. [currency]
    """

    subtotal: float
    discount: float
    tax: float
    grand_total: float


def quote_totals(lines: tuple[BomLine, ...], discount_rate: float = 0.0, tax_rate: float = 0.0) -> QuoteTotals:
    """Totals exactly as the quote's formulas compute them.

    ``discount = -subtotal × discount_rate``; ``tax = (subtotal + discount) × tax_rate``.

    Parameters
    ----------
    lines : tuple of BomLine
    discount_rate : float
        Fraction 0 ≤ d < 1. [-]
    tax_rate : float
        Fraction 0 ≤ t < 1. [-]

    Returns
    -------
    QuoteTotals
    """
    for name, v in (("discount_rate", discount_rate), ("tax_rate", tax_rate)):
        if not isinstance(v, (int, float)) or isinstance(v, bool) or not 0 <= v < 1:
            raise ModelError(f"{name}: found {v!r}; expected a fraction from 0 up to (not including) 1")
    sub = bom_subtotal(lines)
    disc = -sub * discount_rate
    tax = (sub + disc) * tax_rate
    return QuoteTotals(sub, disc, tax, sub + disc + tax)
