"""The bank a field sheet is written for: its identity, its capacity-test rating and its expected life.

Shared by both kinds of field sheet (capacity test and routine readings).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

from benchbook.errors import FieldProblem, SpecError
from benchbook.model.battery import BatterySpec
from benchbook.model.life import LIFE_LIMITS
from benchbook.model.readings import block_ids_for


@dataclass(frozen=True)
class FieldBank:
    """The identity of a bank in the field and the rating its capacity test is run at.

    Parameters
    ----------
    site, bank_id : str
        Names shown on the sheet (written as text, never as formulas).
    spec : BatterySpec
        The battery.
    series, parallel : int
        Blocks in series per string and strings in parallel. [-]
    test_hours : float
        Rated duration the capacity test is run at; a duration inside the
        battery's rate table (IEEE 450 tests at a published rating). [h]
    avg_temp_c : float
        Mean battery temperature over the year, for the remaining-life estimate. [°C]
    client : str
        Optional client name.
    model_life_years : float, optional
        Service life the sizing model expects for this bank: the lower of the
        cycle life (rainflow counting and Miner's rule on the simulated year)
        and the float life at the mean temperature
        (:func:`benchbook.model.life.service_life`). The remaining-life estimate
        of a capacity test starts from it. [years]
    model_life_limited_by : str
        ``"cycling"`` or ``"float"`` (what limits ``model_life_years``), or ``""``.

    Notes
    -----
    The test runs to the rate table's end voltage (``spec.rate_end_voltage_per_cell_v``),
    the only end voltage the rating is stated for.
    """

    site: str
    bank_id: str
    spec: BatterySpec
    series: int
    parallel: int
    test_hours: float = 3.0
    avg_temp_c: float = 25.0
    client: str = ""
    model_life_years: Optional[float] = None
    model_life_limited_by: str = ""

    def __post_init__(self) -> None:
        probs = []
        for name in ("site", "bank_id"):
            if not isinstance(getattr(self, name), str) or not getattr(self, name).strip():
                probs.append(FieldProblem(name, getattr(self, name), "a name"))
        for name, hi in (("series", 500), ("parallel", 50)):
            v = getattr(self, name)
            if not (isinstance(v, int) and not isinstance(v, bool) and 1 <= v <= hi):
                probs.append(FieldProblem(name, v, f"a whole number from 1 to {hi}"))
        h = self.test_hours
        lo, top = self.spec.rate_table[0][0], self.spec.rate_table[-1][0]
        if not (isinstance(h, (int, float)) and math.isfinite(h) and lo <= h <= top):
            probs.append(FieldProblem("test_hours", h, f"a rated duration inside the rate table, {lo:g}–{top:g} h"))
        life = self.model_life_years
        if life is not None and not (isinstance(life, (int, float)) and not isinstance(life, bool)
                                     and math.isfinite(life) and life > 0):
            probs.append(FieldProblem("model_life_years", life, "a service life above 0 years, or None"))
        if self.model_life_limited_by not in ("", *LIFE_LIMITS):
            probs.append(FieldProblem("model_life_limited_by", self.model_life_limited_by,
                                      f"{', '.join(LIFE_LIMITS)} or blank"))
        if probs:
            raise SpecError("field bank", probs)

    @property
    def block_ids(self) -> tuple[str, ...]:
        """``S1-01`` … string by string."""
        return block_ids_for(self.series, self.parallel)

    @property
    def rated_minutes(self) -> float:
        """Rated test duration. [min]"""
        return float(self.test_hours) * 60.0

    @property
    def end_voltage_per_cell_v(self) -> float:
        """End voltage of the rating. [V/cell]"""
        return self.spec.rate_end_voltage_per_cell_v

    @property
    def string_current_a(self) -> float:
        """Rated current of one string for ``test_hours`` at 25 °C. [A]"""
        return float(self.spec.current_a(self.test_hours))

    @property
    def test_current_a(self) -> float:
        """Rated current of the bank (all strings) for ``test_hours`` at 25 °C. [A]"""
        return self.string_current_a * self.parallel

    @classmethod
    def from_option(cls, option, *, site: str, bank_id: str, test_hours: Optional[float] = None,
                    avg_temp_c: float = 25.0, client: str = "", model_life_years: Optional[float] = None,
                    model_life_limited_by: str = "") -> "FieldBank":
        """From a sized :class:`benchbook.model.options.BankOption` (anything with ``spec``, ``series``,
        ``parallel`` and ``design_hours``).

        Without ``test_hours`` the rate-table duration of 1 h or longer nearest
        (in log time) to the option's design hours is used: a capacity test at
        about the duty's rate, on a published rating (common practice, no source).
        """
        spec = option.spec
        if test_hours is None:
            rows = [h for h, _ in spec.rate_table if h >= 1.0] or [h for h, _ in spec.rate_table]
            want = float(getattr(option, "design_hours", 3.0) or 3.0)
            test_hours = min(rows, key=lambda h: abs(math.log(h / want)))
        return cls(site, bank_id, spec, int(option.series), int(option.parallel), float(test_hours),
                   avg_temp_c, client, model_life_years, model_life_limited_by)
