"""The template contract: every defined name and Excel table benchbook reads or fills.

A template (the intake workbook, a firm's quote template, a field sheet) is
reached only through **workbook defined names** (one cell each) and **Excel
tables** with fixed headers that carry their units. A firm may move, restyle or
rebrand its template freely; as long as the names and headers of its kind of
workbook exist, benchbook reads and fills it.

The contract is data. Each kind of workbook has one :class:`Contract` in
:data:`CONTRACTS`, in its own section of this file, holding :class:`NameSpec`
rows (one per defined name) and :class:`TableSpec` rows (one per table, with a
:class:`HeaderSpec` per column). Readers validate cell values against these
rules, the template generator lays the forms out from them, the docs are
generated from them (:func:`benchbook.sheets.contract_check.contract_markdown`)
and ``benchbook template-check`` calls
:func:`benchbook.sheets.contract_check.check_template`. The building blocks
are in :mod:`benchbook.sheets.contract_types`.

Header matching is tolerant of case, spacing and a few spellings of units
(``mOhm`` for ``mΩ``, ``degC`` for ``°C``), see :func:`normalize_header`.
"""

from __future__ import annotations

import importlib.resources
import os
from pathlib import Path
from typing import Any

from benchbook.errors import TemplateError
from benchbook.model.battery import CHEMISTRIES
from benchbook.model.job import APPLICATIONS, CHARGE_SOURCES, Economics, Generator, Job
from benchbook.model.life import LIFE_LIMITS
from benchbook.sheets.contract_types import (KINDS, Contract, HeaderSpec, NameSpec, TableSpec,  # noqa: F401
                                             caption, closest, expected_text, normalize_header)

# =============================================================================================
# Contract: "intake" — the job workbook an estimator fills (benchbook new / size)
# =============================================================================================

_JOB, _GEN, _ECON = Job.__dataclass_fields__, Generator(), Economics()


def _job_default(name: str) -> Any:
    return _JOB[name].default


def _n(name: str, label: str, unit: str, kind: str, field_: str, group: str, **kw: Any) -> NameSpec:
    return NameSpec(name=name, label=label, unit=unit, kind=kind, field=field_, group=group, **kw)


_G_JOB, _G_SIZE, _G_CHARGE, _G_GEN, _G_ECON, _G_RANDOM = (
    "Job", "Sizing", "Charging and site", "Backup generator", "Economics", "Standby random load")

INTAKE_NAMES: tuple[NameSpec, ...] = (
    _n("job_site", "Site", "", "text", "site", _G_JOB, required=True, help="Site name shown on outputs."),
    _n("job_client", "Client", "", "text", "client", _G_JOB, required=True, help="Client name shown on outputs."),
    _n("job_application", "Application", "", "choice", "application", _G_JOB, required=True,
       choices=APPLICATIONS,
       help="cyclic: daily cycling, sized on autonomy days. standby: float service, sized on the duty cycle."),
    _n("job_system_voltage_v", "System voltage", "V", "number", "system_voltage_v", _G_SIZE, required=True,
       low=2, high=1000, typical="12, 24, 48, 110, 125", help="Nominal DC voltage of the bank."),
    _n("job_autonomy_days", "Autonomy", "days", "number", "autonomy_days", _G_SIZE, required=True,
       only_for="cyclic", low=0, low_open=True, high=30, typical="2–5 off-grid",
       help="Days the bank carries the load with no charging. Standby: blank = length of the duty cycle."),
    _n("job_max_dod", "Maximum depth of discharge", "%", "fraction", "max_dod", _G_SIZE, required=True,
       only_for="cyclic", low=0, low_open=True, high=1, default=1.0, typical="50 %–80 %",
       help="Deepest discharge allowed at the end of autonomy. Standby: blank = 100 % (the end voltage governs)."),
    _n("job_min_temp_c", "Lowest battery temperature", "°C", "number", "min_temp_c", _G_SIZE, required=True,
       low=-40, high=60, help="Coldest electrolyte temperature to size for (capacity falls when cold)."),
    _n("job_design_margin", "Design margin", "-", "number", "design_margin", _G_SIZE, required=True,
       low=1, high=2, typical="1.10–1.15", help="Margin for load growth and less-than-optimum conditions (IEEE 485)."),
    _n("job_aging_factor", "Aging factor", "-", "number", "aging_factor", _G_SIZE, required=True,
       low=1, high=2, typical="1.25",
       help="1.25 keeps the load carried until the bank falls to 80 % capacity (IEEE 485)."),
    _n("job_end_voltage_per_cell_v", "End voltage", "V/cell", "number", "end_voltage_per_cell_v", _G_SIZE,
       required=True, low=1.6, high=1.95, typical="1.75–1.85",
       help="Lowest voltage per cell the load equipment accepts at the end of discharge."),
    _n("job_inverter_efficiency", "Inverter / DC converter efficiency", "%", "fraction", "inverter_efficiency",
       _G_SIZE, required=True, only_for="cyclic", low=0, low_open=True, high=1, default=1.0, typical="90 %–95 %",
       help="Load energy ÷ energy drawn from the bank. Standby (DC loads in amperes): blank = 100 %."),
    _n("job_window_min_v", "DC input window, low end", "V", "number", "window_min_v", _G_SIZE,
       low=0, low_open=True, high=1500, default=_job_default("window_min_v"),
       help="Lowest bank voltage the charger/inverter accepts. Blank = not checked."),
    _n("job_window_max_v", "DC input window, high end", "V", "number", "window_max_v", _G_SIZE,
       low=0, low_open=True, high=1500, default=_job_default("window_max_v"),
       help="Highest bank voltage the charger/inverter accepts (while equalizing, too). Blank = not checked."),
    _n("job_max_parallel", "Most parallel strings", "strings", "integer", "max_parallel", _G_SIZE,
       low=1, high=50, default=_job_default("max_parallel"), typical="3 or fewer advised",
       help="Largest number of parallel strings to consider."),
    _n("job_charge_source", "Charge source", "", "choice", "charge_source", _G_CHARGE, choices=CHARGE_SOURCES,
       default=_job_default("charge_source"),
       help="solar: fill Energy by month on the Loads sheet. grid / generator: give the charger power."),
    _n("job_charger_power_w", "Charger power", "W", "number", "charger_power_w", _G_CHARGE,
       low=0, low_open=True, high=1e7, default=_job_default("charger_power_w"),
       help="DC output power of the charger (grid or generator charging)."),
    _n("job_charger_max_a", "Charger maximum current", "A", "number", "charger_max_current_a", _G_CHARGE,
       low=0, low_open=True, high=1e5, default=_job_default("charger_max_current_a"),
       help="Largest current the charger puts into the bank. Blank = no limit (the battery's own maximum)."),
    _n("job_latitude_deg", "Site latitude", "°", "number", "latitude_deg", _G_CHARGE,
       low=-90, high=90, default=_job_default("latitude_deg"), help="For the synthetic day-length shape."),
    _n("job_avg_temp_c", "Mean battery temperature over the year", "°C", "number", "avg_temp_c", _G_CHARGE,
       low=-40, high=60, default=_job_default("avg_temp_c"),
       help="Sets float life: life roughly halves per 10 °C above 25 °C."),
    _n("job_gen_power_w", "Generator charging power", "W", "number", "generator.power_w", _G_GEN,
       low=0, low_open=True, high=1e7, default=None,
       help="Filling this adds a backup generator; blank = no generator."),
    _n("job_gen_start_soc", "Generator starts at state of charge", "%", "fraction", "generator.start_soc", _G_GEN,
       low=0, high=1, high_open=True, default=_GEN.start_soc),
    _n("job_gen_stop_soc", "Generator stops at state of charge", "%", "fraction", "generator.stop_soc", _G_GEN,
       low=0, low_open=True, high=1, default=_GEN.stop_soc),
    _n("job_gen_fuel_cost_per_kwh", "Generator fuel cost", "currency/kWh", "number", "generator.fuel_cost_per_kwh",
       _G_GEN, low=0, high=1e4, default=_GEN.fuel_cost_per_kwh, help="Fuel and running cost per kWh delivered."),
    _n("job_horizon_years", "Costing horizon", "years", "integer", "economics.horizon_years", _G_ECON,
       low=1, high=100, default=_ECON.horizon_years),
    _n("job_discount_rate", "Discount rate (real)", "%", "fraction", "economics.discount_rate", _G_ECON,
       low=0, high=1, high_open=True, default=_ECON.discount_rate),
    _n("job_energy_price_per_kwh", "Charging energy price", "currency/kWh", "number",
       "economics.energy_price_per_kwh", _G_ECON, low=0, high=1e4, default=_ECON.energy_price_per_kwh),
    _n("job_om_per_year", "Operation and maintenance", "currency/year", "number", "economics.om_per_year", _G_ECON,
       low=0, high=1e9, default=_ECON.om_per_year),
    _n("job_install_cost", "Installation and balance of system", "currency", "number", "economics.install_cost",
       _G_ECON, low=0, high=1e10, default=_ECON.install_cost,
       help="Racks, cabling, protection and labour, paid once with the blocks (capex)."),
    _n("job_currency", "Currency", "", "text", "economics.currency", _G_ECON, default=_ECON.currency,
       help="Label written on costs, e.g. USD, EUR."),
    _n("job_replacement_labour_per_block", "Replacement labour", "currency/block", "number",
       "economics.replacement_labour_per_block", _G_ECON, low=0, high=1e7,
       default=_ECON.replacement_labour_per_block),
    _n("job_random_load_a", "Random load current", "A", "number", "random_load.current_a", _G_RANDOM,
       low=0, low_open=True, high=1e5, default=None,
       help="IEEE 485 random (momentary) load, added to the controlling section. Blank = none."),
    _n("job_random_load_minutes", "Random load duration", "min", "number", "random_load.minutes", _G_RANDOM,
       low=0, low_open=True, high=1440, default=None, typical="1",
       help="Needed when a random load current is given."),
)

#: Rate-table durations of the Batteries table. [h]
RATE_HOURS: tuple[float, ...] = (1 / 60, 0.25, 0.5, 1.0, 3.0, 5.0, 8.0, 10.0, 20.0, 100.0)
#: Cycle-life depths of discharge of the Batteries table. [-]
CYCLE_DODS: tuple[float, ...] = (0.2, 0.5, 0.8, 1.0)


def rate_header(hours: float) -> str:
    """Header of a rate-table column: ``"1 min rate [Ah]"``, ``"10 h rate [Ah]"``."""
    if hours < 1:
        return f"{hours * 60:g} min rate [Ah]"
    return f"{hours:g} h rate [Ah]"


def cycle_header(dod: float) -> str:
    """Header of a cycle-life column: ``"Cycles at 50% DoD"``."""
    return f"Cycles at {dod * 100:g}% DoD"


def _h(header: str, field_: str, kind: str = "number", **kw: Any) -> HeaderSpec:
    return HeaderSpec(header=header, field=field_, kind=kind, **kw)


BATTERY_HEADERS: tuple[HeaderSpec, ...] = (
    _h("Model", "model", "text", help="Model name as it appears on quotes."),
    _h("Chemistry", "chemistry", "choice", choices=CHEMISTRIES),
    _h("Block voltage [V]", "block_voltage_v", low=2, high=12, help="2, 4, 6, 8 or 12 V."),
    _h("End voltage [V/cell]", "rate_end_voltage_per_cell_v", low=1.6, high=1.95,
       help="End voltage per cell the rate columns are stated to."),
    *(_h(rate_header(h), "rate_table", required=False, low=0, low_open=True, key=h,
         help="Capacity at constant current to the end voltage, 25 °C; blank = not rated.") for h in RATE_HOURS),
    *(_h(cycle_header(d), "cycle_life", required=False, low=0, low_open=True, key=d,
         help="Cycles to end of life at this depth of discharge; blank = not given.") for d in CYCLE_DODS),
    _h("Internal resistance [mΩ]", "internal_resistance_mohm", low=0, low_open=True, help="Per block, charged."),
    _h("Float [V/cell]", "float_voltage_per_cell_v", low=2.15, high=2.35),
    _h("Absorption [V/cell]", "absorption_voltage_per_cell_v", low=2.25, high=2.6),
    _h("Temp. comp. [mV/°C/cell]", "temp_comp_mv_per_c_per_cell", low=-10, high=0),
    _h("Max charge [A]", "max_charge_current_a", low=0, low_open=True),
    _h("Self-discharge [%/month]", "self_discharge_pct_per_month", low=0, high=30),
    _h("Weight [kg]", "weight_kg", low=0, low_open=True),
    _h("Length [mm]", "length_mm", low=0, low_open=True),
    _h("Width [mm]", "width_mm", low=0, low_open=True),
    _h("Height [mm]", "height_mm", low=0, low_open=True),
    _h("Unit price [per block]", "unit_price", low=0, help="In the job's currency."),
    _h("Float life [years]", "float_life_years", low=0, low_open=True, help="Design life on float at 25 °C."),
    _h("Description", "description", "text", required=False),
)

MONTHS: tuple[str, ...] = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
#: Hours in the year of an hourly profile (365 days). [h]
HOURS_PER_YEAR = 8760

INTAKE_TABLES: tuple[TableSpec, ...] = (
    TableSpec("Loads", (
        _h("Load", "name", "text"),
        _h("Power [W]", "power_w", low=0, low_open=True, high=1e7),
        _h("Hours per day", "hours_per_day", low=0, high=24, unit="h"),
    ), sheet="Loads", help="Daily load list (cyclic jobs): one row per item, blank rows ignored."),
    TableSpec("DutyCycle", (
        _h("Current [A]", "current_a", low=0, high=1e5),
        _h("Minutes", "minutes", low=0, low_open=True, high=1e5, unit="min"),
    ), sheet="Loads", help="Standby duty cycle (IEEE 485): periods in time order, blank rows ignored."),
    TableSpec("ChargeByMonth", (
        _h("Month", "month", "text"),
        _h("Energy [kWh/day]", "energy_kwh_per_day", low=0, high=1e5),
        _h("Battery temperature [°C]", "temp_c", required=False, low=-40, high=60),
    ), rows=12, sheet="Loads",
        help="Solar jobs: mean daily charging energy from the array by month, DC side; "
             "optional monthly battery temperature."),
    TableSpec("Hourly", (
        _h("Hour", "hour", low=0, high=HOURS_PER_YEAR),
        _h("Load [W]", "load_w", low=0, high=1e8),
        _h("Charge [W]", "charge_w", low=0, high=1e8),
    ), required=False, rows=HOURS_PER_YEAR, sheet="Hourly",
        help="Optional explicit year: load and available charging power on the DC side, every hour."),
    TableSpec("Batteries", BATTERY_HEADERS, sheet="Batteries",
              help="Catalog to choose from; one row per battery model, blank rows ignored."),
)

INTAKE = Contract(
    kind="intake",
    title="Job intake workbook",
    template="intake.xlsx",
    names=INTAKE_NAMES,
    tables=INTAKE_TABLES,
    help="What an estimator enters for one job: site, sizing rules, loads or duty cycle, charging, "
         "costs and the battery catalog.",
)

# =============================================================================================
# Contract: "quote" — the firm's quote template that benchbook fills (benchbook quote)
# =============================================================================================
# Every name points at one cell that benchbook writes. Areas that hold several rows (safety
# cautions, assumptions, the arrangement drawing) are given by two names each, the top-left
# (``*_first``) and bottom-right (``*_last``) cells of the area.

_G_Q_HEAD, _G_Q_BANK, _G_Q_PERF, _G_Q_TOT, _G_Q_SITE, _G_Q_AREA = (
    "Customer and quote", "Bank configuration", "Expected performance", "Totals", "Site requirements", "Areas")


def _q(name: str, label: str, unit: str, kind: str, field_: str, group: str, required: bool = False,
       help: str = "") -> NameSpec:
    return NameSpec(name=name, label=label, unit=unit, kind=kind, field=field_, group=group, required=required,
                    help=help)


QUOTE_NAMES: tuple[NameSpec, ...] = (
    _q("quote_client", "Client", "", "text", "job.client", _G_Q_HEAD, True),
    _q("quote_site", "Site", "", "text", "job.site", _G_Q_HEAD, True),
    _q("quote_application", "Application", "", "text", "job.application", _G_Q_HEAD),
    _q("quote_system_voltage_v", "System voltage", "V", "number", "job.system_voltage_v", _G_Q_HEAD),
    _q("quote_number", "Quote number", "", "text", "terms.number", _G_Q_HEAD, True),
    _q("quote_date", "Quote date", "", "number", "terms.date", _G_Q_HEAD, True, "A date value."),
    _q("quote_valid_until", "Valid until", "", "number", "terms.valid_days", _G_Q_HEAD, help="A date value."),
    _q("quote_option_rank", "Option rank", "-", "integer", "rank", _G_Q_HEAD),
    _q("quote_currency", "Currency", "", "text", "job.economics.currency", _G_Q_HEAD, True),
    _q("quote_battery_model", "Battery model", "", "text", "option.spec.model", _G_Q_BANK, True),
    _q("quote_battery_description", "Battery type", "", "text", "option.spec.description", _G_Q_BANK),
    _q("quote_bank_series", "Blocks in series per string", "-", "integer", "option.series", _G_Q_BANK, True),
    _q("quote_bank_parallel", "Parallel strings", "-", "integer", "option.parallel", _G_Q_BANK, True),
    _q("quote_bank_blocks", "Blocks in total", "-", "integer", "option.blocks", _G_Q_BANK, True),
    _q("quote_bank_voltage_v", "Nominal bank voltage", "V", "number", "option.series × block voltage", _G_Q_BANK),
    _q("quote_nominal_kwh", "Nominal energy", "kWh", "number", "option.nominal_kwh", _G_Q_BANK, True),
    _q("quote_usable_kwh", "Usable energy at the design rate and minimum temperature", "kWh", "number",
       "option.usable_kwh", _G_Q_BANK, True),
    _q("quote_string_current_a", "Current per string", "A", "number", "option.string_current_a", _G_Q_BANK),
    _q("quote_c_rate", "Per-string C-rate", "1/h", "number", "option.c_rate", _G_Q_BANK),
    _q("quote_parallel_gain", "Parallel gain", "-", "number", "option.parallel_gain", _G_Q_BANK),
    _q("quote_round_trip_efficiency", "Round-trip efficiency", "%", "fraction", "round_trip_efficiency",
       _G_Q_PERF, True),
    _q("quote_service_life_years", "Service life", "years", "number", "service_life_years", _G_Q_PERF, True),
    _q("quote_life_limited_by", "Life limited by", "", "text", "life_limited_by", _G_Q_PERF, True),
    _q("quote_replacements", "Replacements in the horizon", "", "text", "replacements", _G_Q_PERF, True),
    _q("quote_horizon_years", "Costing horizon", "years", "integer", "job.economics.horizon_years", _G_Q_PERF),
    _q("quote_cost_per_kwh", "Cost per delivered kWh", "currency/kWh", "number", "cost_per_kwh", _G_Q_PERF, True),
    _q("quote_unserved_kwh", "Unserved energy", "kWh/year", "number", "unserved_kwh", _G_Q_PERF),
    _q("quote_cost_of_readiness", "Cost of readiness (standby jobs)", "currency/year", "number",
       "cost_of_readiness_per_year", _G_Q_PERF, help="Text 'not applicable' for cyclic jobs."),
    _q("quote_subtotal", "Subtotal (formula)", "currency", "number", "formula", _G_Q_TOT, True),
    _q("quote_discount_rate", "Discount rate (editable)", "%", "fraction", "terms.discount_rate", _G_Q_TOT, True),
    _q("quote_discount", "Discount (formula)", "currency", "number", "formula", _G_Q_TOT, True),
    _q("quote_tax_rate", "Tax rate (editable)", "%", "fraction", "terms.tax_rate", _G_Q_TOT, True),
    _q("quote_tax", "Tax (formula)", "currency", "number", "formula", _G_Q_TOT, True),
    _q("quote_grand_total", "Grand total (formula)", "currency", "number", "formula", _G_Q_TOT, True),
    _q("quote_weight_kg", "Weight of the blocks", "kg", "number", "option.weight_kg", _G_Q_SITE, True),
    _q("quote_footprint_m2", "Footprint of the blocks", "m²", "number", "option.footprint_m2", _G_Q_SITE, True),
    _q("quote_floor_loading_kg_m2", "Floor loading", "kg/m²", "number", "weight ÷ footprint", _G_Q_SITE, True),
    _q("quote_short_circuit_a", "Prospective short-circuit current", "A", "number", "safety.bank_short_circuit",
       _G_Q_SITE, True),
    _q("quote_interrupt_rating_ka", "Interrupt rating, at least", "kA", "number", "safety.interrupt_rating_a",
       _G_Q_SITE, True),
    _q("quote_airflow_float_m3h", "Airflow on float (IEC 62485-2)", "m³/h", "number", "safety.bank_ventilation",
       _G_Q_SITE, True),
    _q("quote_airflow_boost_m3h", "Airflow on boost (IEC 62485-2)", "m³/h", "number", "safety.bank_ventilation",
       _G_Q_SITE, True),
    _q("quote_vent_float_cm2", "Natural-vent opening each, float", "cm²", "number", "safety.vent_opening_cm2",
       _G_Q_SITE, True),
    _q("quote_vent_boost_cm2", "Natural-vent opening each, boost", "cm²", "number", "safety.vent_opening_cm2",
       _G_Q_SITE, True),
    _q("quote_ventilation_basis", "Ventilation basis", "", "text", "safety.bank_ventilation", _G_Q_SITE),
    _q("quote_cautions_first", "Safety cautions, top-left cell", "", "text", "safety.cautions", _G_Q_AREA, True,
       "Heading in the first column, text in the next (which may be merged across)."),
    _q("quote_cautions_last", "Safety cautions, bottom-right cell", "", "text", "safety.cautions", _G_Q_AREA, True),
    _q("quote_assumptions_first", "Assumptions, top-left cell", "", "text", "assumptions", _G_Q_AREA, True,
       "Label in the first column, value or note in the next (which may be merged across)."),
    _q("quote_assumptions_last", "Assumptions, bottom-right cell", "", "text", "assumptions", _G_Q_AREA, True),
    _q("quote_arrangement_first", "Arrangement drawing, top-left cell", "", "text", "option.series/parallel",
       _G_Q_AREA, help="Columns: string label, negative bus, one per block, fuse, positive bus; "
                       "the first row is the styled sample string."),
    _q("quote_arrangement_last", "Arrangement drawing, bottom-right cell", "", "text", "option.series/parallel",
       _G_Q_AREA),
    _q("quote_arrangement_caption", "Arrangement caption", "", "text", "option.series/parallel", _G_Q_AREA),
)

QUOTE_TABLES: tuple[TableSpec, ...] = (
    TableSpec("QuoteItems", (
        _h("Item", "item", "text"),
        _h("Description", "description", "text"),
        _h("Qty", "quantity", low=0),
        _h("Unit", "unit", "text"),
        _h("Unit price", "unit_price", low=0, help="In the quote's currency."),
        _h("Line total", "total", help="Formula: Qty × Unit price."),
    ), sheet="Quote", help="Bill of materials: benchbook fills the first rows and hides the blank ones; "
                           "quantities and unit prices are values, line totals formulas."),
)

QUOTE = Contract(
    kind="quote",
    title="Quote template",
    template="quote.xlsx",
    names=QUOTE_NAMES,
    tables=QUOTE_TABLES,
    help="A firm's quote: benchbook writes the job, the bank option, the bill of materials with formula totals, "
         "site requirements, safety cautions and assumptions into these cells; layout and styling are the firm's.",
)

# =============================================================================================
# Contracts: "capacity-test" and "readings" — the field data-entry sheets
# (benchbook fieldsheet writes them; benchbook check reads them back)
# =============================================================================================

_YES_NO = ("yes", "no")
#: Block columns of the TestLog table are headed ``Block S1-01``, ``Block S1-02``, … (string, then position);
#: their cells hold block voltages [V]. The prefix is part of the contract.
BLOCK_COLUMN_PREFIX = "Block "
FIELD_METHODS = ("time-adjusted", "rate-adjusted")
SG_CONVENTION_CHOICES = ("ieee", "manual-80f", "ref-20c")
ELECTROLYTE_LEVELS = ("ok", "low", "high")


def block_header(block_id: str) -> str:
    """Header of a TestLog block column: ``"Block S1-01"``."""
    return BLOCK_COLUMN_PREFIX + block_id


_G_T_BANK, _G_T_SETUP, _G_T_START, _G_T_END = (
    "Bank (filled by benchbook)", "Test set-up", "Conditions at the start", "End of test")

CAPACITY_TEST_NAMES: tuple[NameSpec, ...] = (
    _n("test_site", "Site", "", "text", "site", _G_T_BANK, required=True),
    _n("test_bank_id", "Bank", "", "text", "bank_id", _G_T_BANK, required=True),
    _n("test_battery_model", "Battery model", "", "text", "spec.model", _G_T_BANK, required=True),
    _n("test_chemistry", "Chemistry", "", "choice", "spec.chemistry", _G_T_BANK, required=True, choices=CHEMISTRIES),
    _n("test_cells_per_block", "Cells per block", "-", "integer", "spec.cells_per_block", _G_T_BANK,
       required=True, low=1, high=6),
    _n("test_series", "Blocks in series per string", "-", "integer", "series", _G_T_BANK, required=True,
       low=1, high=500),
    _n("test_parallel", "Strings in parallel", "-", "integer", "parallel", _G_T_BANK, required=True, low=1, high=50),
    _n("test_design_life_years", "Design float life at 25 °C", "years", "number", "spec.float_life_years",
       _G_T_BANK, low=0, low_open=True, high=40, help="For the remaining-life estimate; blank = not estimated."),
    _n("test_avg_temp_c", "Mean battery temperature over the year", "°C", "number", "avg_temp_c", _G_T_BANK,
       low=-40, high=60, default=25.0, help="Shortens the design life above 25 °C."),
    _n("test_model_life_years", "Service life the model expects", "years", "number", "model_life_years",
       _G_T_BANK, low=0, low_open=True, high=60,
       help="Simulated year: cycle or float life, the lower. Blank = design float life."),
    _n("test_life_limited_by", "Service life limited by", "", "choice", "model_life_limited_by", _G_T_BANK,
       choices=LIFE_LIMITS, help="cycling or float."),
    _n("test_rated_minutes", "Rated time at the test current", "min", "number", "rated_minutes", _G_T_SETUP,
       required=True, low=0, low_open=True, high=6000,
       help="Time the rating gives to the end voltage at the test current, 25 °C."),
    _n("test_current_a", "Test current, whole bank", "A", "number", "test_current_a", _G_T_SETUP,
       low=0, low_open=True, high=1e5, help="Constant current of the discharge; blank only for a constant-power test."),
    _n("test_power_w", "Test power (constant-power tests only)", "W", "number", "test_power_w", _G_T_SETUP,
       low=0, low_open=True, high=1e8, help="Blank for a constant-current test."),
    _n("test_rated_current_a", "Rated current for the rated time, 25 °C", "A", "number", "rated_current_a",
       _G_T_SETUP, low=0, low_open=True, high=1e5, help="From the rating; the rate-adjusted method divides it by "
                                                         "the temperature factor."),
    _n("test_end_voltage_per_cell_v", "End voltage", "V/cell", "number", "end_voltage_per_cell_v", _G_T_SETUP,
       required=True, low=1.6, high=1.95, typical="1.75"),
    _n("test_method", "Correction method", "", "choice", "method", _G_T_SETUP, choices=FIELD_METHODS,
       default="time-adjusted", help="IEEE 450: time-adjusted for tests of about 1 h or longer; rate-adjusted when "
                                     "the current was set for the temperature."),
    _n("test_date", "Test date", "", "text", "date", _G_T_START, required=True, help="A date."),
    _n("test_crew", "Crew", "", "text", "crew", _G_T_START, required=True),
    _n("test_start_temp_c", "Electrolyte temperature at the start, pilot cells average", "°C", "number",
       "start_temp_c", _G_T_START, required=True, low=-10, high=60),
    _n("test_ambient_temp_c", "Ambient temperature", "°C", "number", "ambient_temp_c", _G_T_START,
       low=-30, high=60),
    _n("test_charger_disconnected", "Charger disconnected", "", "choice", "charger_disconnected", _G_T_START,
       required=True, choices=_YES_NO),
    _n("test_last_full_charge", "Last fully charged", "", "text", "last_full_charge", _G_T_START,
       help="Date and time; IEEE 450 asks for a full charge (and float) before the test."),
    _n("test_previous_percent", "Capacity at the previous test", "%", "number", "baseline_percent", _G_T_START,
       low=0, high=150, help="Blank when there was none, or give --baseline."),
    _n("test_age_years", "Years in service", "years", "number", "age_years", _G_T_START, low=0, high=60),
    _n("test_end_minute", "End of test, elapsed time", "min", "number", "end_minute", _G_T_END, required=True,
       low=0, high=1e5, help="When the bank reached the end voltage (or the test was stopped)."),
    _n("test_bypassed_blocks", "Blocks bypassed", "", "text", "bypassed", _G_T_END,
       help="Block ids separated by commas, e.g. S1-03, S2-11; blank = none."),
    _n("test_remarks", "Remarks", "", "text", "remarks", _G_T_END),
)

CAPACITY_TEST_TABLES: tuple[TableSpec, ...] = (
    TableSpec("TestLog", (
        _h("Elapsed [min]", "elapsed_min", low=0, high=1e5),
        _h("Bank voltage [V]", "bank_voltage_v", required=False, low=0, low_open=True, high=3000),
        _h("Current [A]", "current_a", required=False, low=0, high=1e5),
        _h("Pilot temperature [°C]", "pilot_temp_c", required=False, low=-10, high=70),
    ), sheet="Log", help="One row per reading, in time order; between Current and Pilot temperature one column "
                         "per block headed Block S<string>-<position> holding its voltage [V]."),
    TableSpec("RatedCapacity", (
        _h("Duration [h]", "hours", low=0, low_open=True, high=1000),
        _h("Capacity [Ah]", "ah", low=0, low_open=True, high=1e6),
    ), required=False, sheet="Battery", help="The battery's rating, one string, to the end voltage at 25 °C; "
                                              "lets benchbook compare the test with the model."),
)

CAPACITY_TEST = Contract(
    kind="capacity-test",
    title="Capacity test sheet",
    template="",
    names=CAPACITY_TEST_NAMES,
    tables=CAPACITY_TEST_TABLES,
    help="Written per bank by benchbook fieldsheet --kind capacity-test and read back by benchbook check: "
         "the bank, the test set-up, the conditions, the log of a constant-current discharge and its end.",
)

_G_R_BANK, _G_R_COND = ("Bank (filled by benchbook)", "Conditions")

READINGS_NAMES: tuple[NameSpec, ...] = (
    _n("readings_site", "Site", "", "text", "site", _G_R_BANK, required=True),
    _n("readings_bank_id", "Bank", "", "text", "bank_id", _G_R_BANK, required=True),
    _n("readings_battery_model", "Battery model", "", "text", "spec.model", _G_R_BANK, required=True),
    _n("readings_chemistry", "Chemistry", "", "choice", "spec.chemistry", _G_R_BANK, required=True,
       choices=CHEMISTRIES),
    _n("readings_cells_per_block", "Cells per block", "-", "integer", "spec.cells_per_block", _G_R_BANK,
       required=True, low=1, high=6),
    _n("readings_series", "Blocks in series per string", "-", "integer", "series", _G_R_BANK, required=True,
       low=1, high=500),
    _n("readings_parallel", "Strings in parallel", "-", "integer", "parallel", _G_R_BANK, required=True,
       low=1, high=50),
    _n("readings_float_setting_v_per_cell", "Float setting from the datasheet", "V/cell", "number",
       "spec.float_voltage_per_cell_v", _G_R_BANK, low=2.0, high=2.5),
    _n("readings_date", "Date of readings", "", "text", "date", _G_R_COND, required=True, help="A date."),
    _n("readings_crew", "Crew", "", "text", "crew", _G_R_COND, required=True),
    _n("readings_on_float", "Bank on float while read", "", "choice", "on_float", _G_R_COND, required=True,
       choices=_YES_NO),
    _n("readings_water_added", "Water added before the SG readings", "", "choice", "water_added", _G_R_COND,
       choices=_YES_NO, help="Flooded cells only."),
    _n("readings_ambient_temp_c", "Ambient temperature", "°C", "number", "ambient_temp_c", _G_R_COND,
       low=-30, high=60),
    _n("readings_bank_voltage_v", "Bank voltage at the terminals", "V", "number", "bank_voltage_v", _G_R_COND,
       low=0, low_open=True, high=3000),
    _n("readings_sg_convention", "SG temperature correction", "", "choice", "sg_convention", _G_R_COND,
       choices=SG_CONVENTION_CHOICES, default="ieee",
       help="ieee: +0.001 per 3 °F from 77 °F; manual-80f: +0.004 per 10 °F from 80 °F; ref-20c: +0.0007 per °C "
            "from 20 °C."),
    _n("readings_ohmic_instrument", "Ohmic instrument (make, model)", "", "text", "ohmic_instrument", _G_R_COND),
    _n("readings_remarks", "Remarks", "", "text", "remarks", _G_R_COND),
)

READINGS_TABLES: tuple[TableSpec, ...] = (
    TableSpec("BlockReadings", (
        _h("Block", "block_id", "text", help="S<string>-<position>, filled by benchbook."),
        _h("Float voltage [V]", "float_voltage_v", low=0, low_open=True, high=20),
        _h("Specific gravity [-]", "specific_gravity", required=False, low=1.0, high=1.4,
           help="Flooded cells only, hydrometer reading before correction."),
        _h("Electrolyte level", "electrolyte_level", "choice", required=False, choices=ELECTROLYTE_LEVELS),
        _h("Temperature [°C]", "temp_c", required=False, low=-10, high=80),
        _h("Internal resistance [mΩ]", "ohmic_value", required=False, low=0, low_open=True, high=1000,
           help="Fill this or Conductance, as the instrument reads."),
        _h("Conductance [S]", "ohmic_value", required=False, low=0, low_open=True, high=1e5),
        _h("Connection [µΩ]", "connection_uohm", required=False, low=0, low_open=True, high=1e6,
           help="Inter-block connection after this block."),
        _h("Remarks", "remarks", "text", required=False),
    ), sheet="Readings", help="One row per block, as benchbook numbered them."),
)

READINGS = Contract(
    kind="readings",
    title="Routine readings sheet",
    template="",
    names=READINGS_NAMES,
    tables=READINGS_TABLES,
    help="Written per bank by benchbook fieldsheet --kind readings and read back by benchbook check: float "
         "voltage, specific gravity, temperature, ohmic value and connection resistance of every block.",
)

# =============================================================================================
# (Further contracts — "quote", "capacity-test", "readings" — go in their own sections here.)
# =============================================================================================

#: Every contract, by kind of workbook.
CONTRACTS: dict[str, Contract] = {c.kind: c for c in (INTAKE, QUOTE, CAPACITY_TEST, READINGS)}


def contract(kind: str) -> Contract:
    """The contract of one kind of workbook (``"intake"``, ...).

    Raises
    ------
    TemplateError
        For an unknown kind, listing the known ones.
    """
    try:
        return CONTRACTS[kind]
    except KeyError:
        raise TemplateError(f"unknown kind of workbook {kind!r}; known kinds: {', '.join(CONTRACTS)}") from None


def template_bytes(kind: str) -> bytes:
    """Bytes of the shipped template of ``kind`` (package ``benchbook.templates``)."""
    return template_path(kind).read_bytes()


def template_path(kind: str) -> Path:
    """Path of the shipped template of ``kind``.

    Installed, the templates live in the package ``benchbook.templates``; in a
    source checkout they are the repository's ``templates/`` folder.
    """
    name = contract(kind).template
    try:
        res = importlib.resources.files("benchbook.templates") / name
        path = Path(os.fspath(res))
    except (ModuleNotFoundError, TypeError):
        path = Path(__file__).resolve().parents[2] / "templates" / name
    if not path.is_file():
        raise TemplateError(f"shipped template {name} is missing from the installation ({path}); "
                            "reinstall benchbook or run python -m benchbook.sheets.make_templates")
    return path

