"""The embedded default catalog: generic, illustrative battery classes.

These are **not real products**. Each entry is a plausible member of a class of
lead-acid battery (2 V flooded tubular cells, a 6 V flooded deep-cycle block, a
12 V flooded block, a 12 V AGM block and a 12 V gel block), with round numbers
chosen to sit inside the ranges that datasheets of each class commonly show
(common practice, no source). They let benchbook run with no catalog given.
Quote from a manufacturer's datasheet, never from these.

Rate tables are to 1.75 V per cell at 25 °C. The 2 V cells carry short-duration
ratings (1, 15 and 30 min) as stationary datasheets do, for duty-cycle sizing.
"""

from __future__ import annotations

from benchbook.model.battery import BatterySpec

_NOTE = "Illustrative class, not a real product"

DEFAULT_CATALOG: tuple[BatterySpec, ...] = (
    BatterySpec(
        model="IL-2F-420",
        chemistry="flooded",
        block_voltage_v=2,
        rate_table=((1 / 60, 11.7), (0.25, 126.0), (0.5, 176.0), (1, 240.0), (3, 318.0),
                    (5, 352.0), (8, 395.0), (10, 420.0), (20, 458.0), (100, 528.0)),
        rate_end_voltage_per_cell_v=1.75,
        internal_resistance_mohm=0.40,
        float_voltage_per_cell_v=2.23,
        absorption_voltage_per_cell_v=2.40,
        temp_comp_mv_per_c_per_cell=-3.0,
        max_charge_current_a=84.0,
        self_discharge_pct_per_month=3.0,
        weight_kg=33.0,
        length_mm=145.0,
        width_mm=206.0,
        height_mm=520.0,
        unit_price=310.0,
        cycle_life=((0.2, 5500), (0.5, 2800), (0.8, 1500)),
        float_life_years=20.0,
        description=f"2 V flooded tubular cell, ~420 Ah C10. {_NOTE}",
    ),
    BatterySpec(
        model="IL-2F-1000",
        chemistry="flooded",
        block_voltage_v=2,
        rate_table=((1 / 60, 27.0), (0.25, 295.0), (0.5, 415.0), (1, 565.0), (3, 755.0),
                    (5, 835.0), (8, 940.0), (10, 1000.0), (20, 1085.0), (100, 1240.0)),
        rate_end_voltage_per_cell_v=1.75,
        internal_resistance_mohm=0.18,
        float_voltage_per_cell_v=2.23,
        absorption_voltage_per_cell_v=2.40,
        temp_comp_mv_per_c_per_cell=-3.0,
        max_charge_current_a=200.0,
        self_discharge_pct_per_month=3.0,
        weight_kg=72.0,
        length_mm=210.0,
        width_mm=275.0,
        height_mm=700.0,
        unit_price=650.0,
        cycle_life=((0.2, 5500), (0.5, 2800), (0.8, 1500)),
        float_life_years=20.0,
        description=f"2 V flooded tubular cell, ~1000 Ah C10. {_NOTE}",
    ),
    BatterySpec(
        model="IL-6F-225",
        chemistry="flooded",
        block_voltage_v=6,
        rate_table=((1, 120.0), (3, 150.0), (5, 170.0), (8, 186.0), (10, 194.0),
                    (20, 225.0), (100, 256.0)),
        rate_end_voltage_per_cell_v=1.75,
        internal_resistance_mohm=2.8,
        float_voltage_per_cell_v=2.23,
        absorption_voltage_per_cell_v=2.45,
        temp_comp_mv_per_c_per_cell=-3.0,
        max_charge_current_a=45.0,
        self_discharge_pct_per_month=5.0,
        weight_kg=29.5,
        length_mm=265.0,
        width_mm=182.0,
        height_mm=285.0,
        unit_price=210.0,
        cycle_life=((0.2, 3800), (0.5, 1600), (0.8, 900)),
        float_life_years=8.0,
        description=f"6 V flooded deep-cycle block, ~225 Ah C20. {_NOTE}",
    ),
    BatterySpec(
        model="IL-12F-110",
        chemistry="flooded",
        block_voltage_v=12,
        rate_table=((1, 58.0), (3, 74.0), (5, 84.0), (8, 92.0), (10, 96.0),
                    (20, 110.0), (100, 126.0)),
        rate_end_voltage_per_cell_v=1.75,
        internal_resistance_mohm=5.0,
        float_voltage_per_cell_v=2.23,
        absorption_voltage_per_cell_v=2.40,
        temp_comp_mv_per_c_per_cell=-3.0,
        max_charge_current_a=22.0,
        self_discharge_pct_per_month=4.0,
        weight_kg=30.0,
        length_mm=330.0,
        width_mm=172.0,
        height_mm=240.0,
        unit_price=170.0,
        cycle_life=((0.2, 2500), (0.5, 1000), (0.8, 500)),
        float_life_years=6.0,
        description=f"12 V flooded block, ~110 Ah C20. {_NOTE}",
    ),
    BatterySpec(
        model="IL-12A-100",
        chemistry="agm",
        block_voltage_v=12,
        rate_table=((1, 62.0), (3, 78.0), (5, 85.0), (8, 91.0), (10, 93.0),
                    (20, 100.0), (100, 108.0)),
        rate_end_voltage_per_cell_v=1.75,
        internal_resistance_mohm=4.0,
        float_voltage_per_cell_v=2.27,
        absorption_voltage_per_cell_v=2.40,
        temp_comp_mv_per_c_per_cell=-3.0,
        max_charge_current_a=30.0,
        self_discharge_pct_per_month=2.5,
        weight_kg=30.0,
        length_mm=330.0,
        width_mm=171.0,
        height_mm=215.0,
        unit_price=230.0,
        cycle_life=((0.2, 1800), (0.5, 700), (0.8, 400)),
        float_life_years=10.0,
        description=f"12 V AGM (VRLA) block, ~100 Ah C20. {_NOTE}",
    ),
    BatterySpec(
        model="IL-12G-90",
        chemistry="gel",
        block_voltage_v=12,
        rate_table=((1, 50.0), (3, 66.0), (5, 74.0), (8, 81.0), (10, 84.0),
                    (20, 90.0), (100, 100.0)),
        rate_end_voltage_per_cell_v=1.75,
        internal_resistance_mohm=5.5,
        float_voltage_per_cell_v=2.25,
        absorption_voltage_per_cell_v=2.35,
        temp_comp_mv_per_c_per_cell=-3.0,
        max_charge_current_a=22.0,
        self_discharge_pct_per_month=2.0,
        weight_kg=32.0,
        length_mm=330.0,
        width_mm=171.0,
        height_mm=236.0,
        unit_price=280.0,
        cycle_life=((0.2, 3000), (0.5, 1200), (0.8, 600)),
        float_life_years=12.0,
        description=f"12 V gel (VRLA) block, ~90 Ah C20. {_NOTE}",
    ),
)


def default_catalog() -> tuple[BatterySpec, ...]:
    """The embedded illustrative catalog (see module docstring)."""
    return DEFAULT_CATALOG
