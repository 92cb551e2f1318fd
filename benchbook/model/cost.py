"""Cost per delivered kWh (levelized cost of storage) and the yearly cost of a standby bank.

- :func:`lcos` prices a cycling bank: every discounted cost over the horizon
  divided by the discounted energy it delivers (Schmidt et al. 2019). Each
  term is kept in the result so an estimator can defend the number.
- :func:`cost_of_readiness` prices a standby bank, which delivers almost no
  energy: its whole discounted cost, float energy included, spread over the
  years by the capital recovery factor.
- :func:`bank_capex` and :func:`replacement_cost` compose the capital costs
  explicitly (blocks × unit price + installation or labour).

Conventions (recorded in every result's ``conventions``): capex at year 0;
O&M, fuel, charging and delivered energy at the end of each year
``n = 1..N``; replacements at the end of their year; end-of-life cost at
``N + 1``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from benchbook.errors import FieldProblem, SpecError

#: Hours in a year of 365 days, for float energy (common practice, no source). [h]
HOURS_PER_YEAR = 8760.0

LCOS_CONVENTIONS = (
    "LCOS after Schmidt et al., Joule 3:81-100 (2019); capex at year 0; O&M, fuel, charging and "
    "delivered energy at the end of years 1..N; replacements at the end of their year; end-of-life "
    "cost at year N+1; delivered energy E_n = E_1 (1 - degradation)^(n-1), not reset by replacements; "
    "charging energy E_n/efficiency priced at the charging price except the share the generator "
    "supplied, which its fuel pays"
)
READINESS_CONVENTIONS = (
    "annualised by the capital recovery factor; capex at year 0; O&M and float energy at the end of "
    "years 1..N; replacements at the end of their year; end-of-life cost at year N+1; float energy = "
    "float current x float voltage x 8760 h / charger efficiency"
)


def _finite(v: Any) -> bool:
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool) and math.isfinite(v)


def _rate_problem(r: Any) -> list[FieldProblem]:
    if not _finite(r) or not 0.0 <= r < 1.0:
        return [FieldProblem("discount_rate", r, "a yearly rate from 0 up to but not including 1 (0.06 for 6 %)")]
    return []


def _years_problem(n: Any) -> list[FieldProblem]:
    if not _finite(n) or n < 1 or float(n) != int(n):
        return [FieldProblem("years", n, "a whole number of years, 1 or more")]
    return []


def _nonneg(name: str, v: Any, text: str) -> list[FieldProblem]:
    if not _finite(v) or v < 0:
        return [FieldProblem(name, v, text)]
    return []


def _replacement_problems(replacements: Any, years: Any) -> tuple[list[tuple[float, float]], list[FieldProblem]]:
    try:
        pairs = [(y, c) for y, c in replacements]
    except (TypeError, ValueError):
        return [], [FieldProblem("replacements", replacements, "a sequence of (year, cost) pairs")]
    out, probs = [], []
    horizon = float(years) if _finite(years) else math.inf
    for y, c in pairs:
        if not _finite(y) or not 0 < y <= horizon:
            probs.append(FieldProblem("replacements", (y, c), f"a replacement year above 0 and at most {years}"))
        elif not _finite(c) or c < 0:
            probs.append(FieldProblem("replacements", (y, c), "a replacement cost of 0 or more"))
        else:
            out.append((float(y), float(c)))
    return out, probs


def _discount(r: float, t: float | np.ndarray) -> float | np.ndarray:
    return (1.0 + r) ** -np.asarray(t, dtype=float)


def present_value_annuity(r: float, n: int) -> float:
    """Present value of 1 paid at the end of each of ``n`` years, ``(1 − (1 + r)**−n) / r``.

    Parameters
    ----------
    r : float
        Discount rate per year, 0 ≤ r < 1; ``r = 0`` gives ``n``. [1/year]
    n : int
        Number of yearly payments, 1 or more. [years]

    Returns
    -------
    float
        Present value of the annuity per unit payment. [years]

    References
    ----------
    W. Short, D. J. Packey, T. Holt, "A Manual for the Economic Evaluation of
    Energy Efficiency and Renewable Energy Technologies", NREL/TP-462-5173
    (1995), uniform present-worth factor (from memory).
    """
    probs = _rate_problem(r) + _years_problem(n)
    if probs:
        raise SpecError("annuity inputs", probs)
    if r == 0:
        return float(n)
    # 1 - (1+r)^-n written with expm1/log1p so that a tiny r keeps its precision
    return float(-math.expm1(-int(n) * math.log1p(r)) / r)


def capital_recovery_factor(r: float, n: int) -> float:
    """Capital recovery factor ``r (1 + r)**n / ((1 + r)**n − 1)``, the inverse of the annuity factor.

    Parameters
    ----------
    r : float
        Discount rate per year, 0 ≤ r < 1; ``r = 0`` gives ``1 / n``. [1/year]
    n : int
        Number of years, 1 or more. [years]

    Returns
    -------
    float
        Equal yearly payment that repays a present value of 1. [1/year]

    References
    ----------
    W. Short, D. J. Packey, T. Holt, NREL/TP-462-5173 (1995), capital
    recovery factor (from memory).
    """
    return 1.0 / present_value_annuity(r, n)


def bank_capex(blocks: int, unit_price: float, install_cost: float = 0.0) -> float:
    """Capital cost of a bank: ``blocks × unit_price + install_cost``.

    Parameters
    ----------
    blocks : int
        Blocks (or cells) in the bank, 1 or more. [-]
    unit_price : float
        Price of one block. [currency]
    install_cost : float, default 0
        Installation, racks and balance of system. [currency]

    Returns
    -------
    float
        Capital cost at year 0. [currency]

    References
    ----------
    Common practice, no source.
    """
    probs = []
    if not _finite(blocks) or blocks < 1 or float(blocks) != int(blocks):
        probs.append(FieldProblem("blocks", blocks, "a whole number of blocks, 1 or more"))
    probs += _nonneg("unit_price", unit_price, "a price of 0 or more")
    probs += _nonneg("install_cost", install_cost, "a cost of 0 or more")
    if probs:
        raise SpecError("bank cost inputs", probs)
    return float(int(blocks) * unit_price + install_cost)


def replacement_cost(blocks: int, unit_price: float, labour_per_block: float = 0.0) -> float:
    """Cost of replacing every block of a bank: ``blocks × (unit_price + labour_per_block)``.

    Parameters
    ----------
    blocks : int
        Blocks (or cells) in the bank, 1 or more. [-]
    unit_price : float
        Price of one block at replacement (today's money). [currency]
    labour_per_block : float, default 0
        Labour and disposal handling per block. [currency]

    Returns
    -------
    float
        Cost of one replacement, undiscounted. [currency]

    References
    ----------
    Common practice, no source.
    """
    probs = _nonneg("labour_per_block", labour_per_block, "a cost of 0 or more")
    try:
        parts = bank_capex(blocks, unit_price, 0.0)
    except SpecError as e:
        probs = e.problems + probs
    if probs:
        raise SpecError("replacement cost inputs", probs)
    return float(parts + int(blocks) * labour_per_block)


@dataclass(frozen=True)
class LcosResult:
    """Levelized cost of storage and every term behind it.

    Parameters
    ----------
    per_kwh : float
        Levelized cost per delivered kWh. [currency/kWh]
    capex : float
        Capital cost at year 0 (not discounted). [currency]
    replacements_pv : float
        Discounted replacement costs. [currency]
    om_pv : float
        Discounted operation and maintenance. [currency]
    charging_pv : float
        Discounted cost of charging energy bought at the charging price (the
        generator's share is in ``fuel_pv``). [currency]
    fuel_pv : float
        Discounted generator fuel cost. [currency]
    end_of_life_pv : float
        Discounted end-of-life cost (negative for a net salvage credit). [currency]
    total_cost_pv : float
        Sum of the cost terms above. [currency]
    delivered_kwh_pv : float
        Discounted delivered energy, the denominator. [kWh]
    delivered_kwh_total : float
        Delivered energy over the horizon, not discounted. [kWh]
    discount_rate : float
        Discount rate used. [1/year]
    years : int
        Horizon. [years]
    conventions : str
        Timing and degradation conventions used.
    """

    per_kwh: float
    capex: float
    replacements_pv: float
    om_pv: float
    charging_pv: float
    fuel_pv: float
    end_of_life_pv: float
    total_cost_pv: float
    delivered_kwh_pv: float
    delivered_kwh_total: float
    discount_rate: float
    years: int
    conventions: str = LCOS_CONVENTIONS

    def breakdown(self) -> tuple[tuple[str, float], ...]:
        """Each term's share of :attr:`per_kwh`, as ``(label, currency/kWh)``; the shares sum to it."""
        terms = (("capex", self.capex), ("replacements", self.replacements_pv),
                 ("operation and maintenance", self.om_pv), ("charging energy", self.charging_pv),
                 ("generator fuel", self.fuel_pv), ("end of life", self.end_of_life_pv))
        return tuple((label, value / self.delivered_kwh_pv) for label, value in terms)


def lcos(*, capex: float, om_per_year: float, discount_rate: float, years: int, delivered_kwh_per_year: float,
         charge_price_per_kwh: float, round_trip_efficiency: float, degradation_per_year: float = 0.0,
         end_of_life_cost: float = 0.0, replacements: Sequence[tuple[float, float]] = (),
         fuel_per_year: float = 0.0, generator_share_of_charging: float = 0.0) -> LcosResult:
    """Levelized cost of storage (LCOS): discounted costs over discounted delivered energy.

    ``LCOS = [Capex + Σ_k R_k/(1+r)^y_k + Σ_n (O&M + F + P·(1 − s)·E_n/η)/(1+r)^n + EoL/(1+r)^(N+1)]
    / Σ_n E_n/(1+r)^n``, with ``n = 1..N``, ``E_n = E_1 (1 − g)^(n−1)`` and
    ``s`` the share of the charging energy a backup generator supplies (its
    fuel ``F`` already pays for it, so the charging price applies to the rest).

    Parameters
    ----------
    capex : float
        Capital cost at year 0 (see :func:`bank_capex`). [currency]
    om_per_year : float
        Operation and maintenance per year, paid at the end of each year. [currency/year]
    discount_rate : float
        Real discount rate, 0 ≤ r < 1. [1/year]
    years : int
        Horizon ``N``, 1 or more. [years]
    delivered_kwh_per_year : float
        Energy the bank delivers in year 1, above 0 (a standby bank that
        delivers almost nothing is priced by :func:`cost_of_readiness`). [kWh/year]
    charge_price_per_kwh : float
        Price of charging energy, 0 for energy that costs nothing (solar
        surplus). [currency/kWh]
    round_trip_efficiency : float
        Energy out over energy in, in (0, 1]; charging energy is ``E_n / η``. [-]
    degradation_per_year : float, default 0
        Yearly fall of delivered energy, 0 ≤ g < 1. Applied over the whole
        horizon and not reset by replacements; leave 0 when the load, not the
        bank, sets the delivered energy. [1/year]
    end_of_life_cost : float, default 0
        Decommissioning cost at year ``N + 1``; negative for a net salvage
        (scrap) credit. [currency]
    replacements : sequence of (float, float), default ()
        ``(year, cost)`` of each replacement within the horizon, year in
        (0, N], discounted by ``(1+r)^year`` (see ``ServiceLife.replacements``
        and :func:`replacement_cost`). [years], [currency]
    fuel_per_year : float, default 0
        Generator fuel (and running) cost per year, discounted like O&M. [currency/year]
    generator_share_of_charging : float, default 0
        Share ``s`` of the charging energy ``E_n/η`` that the backup generator
        supplied, from 0 to 1 (e.g. the simulation's generator energy into the
        bank ÷ its energy in); that energy is paid by ``fuel_per_year`` and does
        not carry ``charge_price_per_kwh`` as well. [-]

    Returns
    -------
    LcosResult
        ``per_kwh`` and every discounted term.

    Raises
    ------
    SpecError
        (a :class:`~benchbook.errors.ModelError`) listing every bad input:
        a discount rate outside [0, 1), fewer than 1 year, a negative cost or
        price, an efficiency outside (0, 1], a degradation outside [0, 1), no
        delivered energy, a generator share outside [0, 1], or a replacement
        outside the horizon.

    References
    ----------
    O. Schmidt, S. Melchior, A. Hawkes, I. Staffell, "Projecting the future
    levelized cost of electricity storage technologies", Joule 3:81–100
    (2019), doi:10.1016/j.joule.2018.12.008 (exact terms from memory).
    """
    probs = _rate_problem(discount_rate) + _years_problem(years)
    probs += _nonneg("capex", capex, "a capital cost of 0 or more")
    probs += _nonneg("om_per_year", om_per_year, "an O&M cost of 0 or more per year")
    probs += _nonneg("charge_price_per_kwh", charge_price_per_kwh, "a price of 0 or more per kWh")
    probs += _nonneg("fuel_per_year", fuel_per_year, "a fuel cost of 0 or more per year")
    if not _finite(delivered_kwh_per_year) or delivered_kwh_per_year <= 0:
        probs.append(FieldProblem("delivered_kwh_per_year", delivered_kwh_per_year,
                                  "delivered energy above 0 kWh per year (price a standby bank by cost of readiness)"))
    if not _finite(round_trip_efficiency) or not 0 < round_trip_efficiency <= 1:
        probs.append(FieldProblem("round_trip_efficiency", round_trip_efficiency, "an efficiency above 0 and at most 1"))
    if not _finite(degradation_per_year) or not 0 <= degradation_per_year < 1:
        probs.append(FieldProblem("degradation_per_year", degradation_per_year,
                                  "a yearly fall from 0 up to but not including 1"))
    if not _finite(generator_share_of_charging) or not 0 <= generator_share_of_charging <= 1:
        probs.append(FieldProblem("generator_share_of_charging", generator_share_of_charging,
                                  "a share of the charging energy from 0 to 1"))
    if not _finite(end_of_life_cost):
        probs.append(FieldProblem("end_of_life_cost", end_of_life_cost, "a number (negative for a salvage credit)"))
    repl, rprobs = _replacement_problems(replacements, years)
    probs += rprobs
    if probs:
        raise SpecError("LCOS inputs", probs)

    r, n_years = float(discount_rate), int(years)
    n = np.arange(1, n_years + 1, dtype=float)
    df = _discount(r, n)
    energy = float(delivered_kwh_per_year) * (1.0 - float(degradation_per_year)) ** (n - 1.0)
    energy_pv = float(np.sum(energy * df))
    annuity = float(np.sum(df))
    om_pv = float(om_per_year) * annuity
    fuel_pv = float(fuel_per_year) * annuity
    charging_pv = (float(charge_price_per_kwh) * (1.0 - float(generator_share_of_charging))
                   / float(round_trip_efficiency) * energy_pv)
    repl_pv = float(sum(c * _discount(r, y) for y, c in repl))
    eol_pv = float(end_of_life_cost) * float(_discount(r, n_years + 1))
    total = float(capex) + repl_pv + om_pv + charging_pv + fuel_pv + eol_pv
    return LcosResult(per_kwh=total / energy_pv, capex=float(capex), replacements_pv=repl_pv, om_pv=om_pv,
                      charging_pv=charging_pv, fuel_pv=fuel_pv, end_of_life_pv=eol_pv, total_cost_pv=total,
                      delivered_kwh_pv=energy_pv, delivered_kwh_total=float(np.sum(energy)),
                      discount_rate=r, years=n_years)


@dataclass(frozen=True)
class ReadinessCost:
    """Yearly cost of keeping a standby bank ready, and its parts.

    Parameters
    ----------
    per_year : float
        Equal yearly cost of readiness, the sum of the parts below. [currency/year]
    capex_per_year : float
        Capital cost × capital recovery factor. [currency/year]
    replacements_per_year : float
        Discounted replacements × capital recovery factor. [currency/year]
    om_per_year : float
        Operation and maintenance. [currency/year]
    float_energy_per_year : float
        Cost of the energy the charger supplies to hold the bank on float. [currency/year]
    end_of_life_per_year : float
        Discounted end-of-life cost × capital recovery factor. [currency/year]
    float_energy_kwh_per_year : float
        Energy the bank takes on float (before charger losses). [kWh/year]
    total_cost_pv : float
        Present value of all costs. [currency]
    capital_recovery_factor : float
        Factor used. [1/year]
    discount_rate : float
        Discount rate used. [1/year]
    years : int
        Horizon. [years]
    conventions : str
        Timing conventions used.
    """

    per_year: float
    capex_per_year: float
    replacements_per_year: float
    om_per_year: float
    float_energy_per_year: float
    end_of_life_per_year: float
    float_energy_kwh_per_year: float
    total_cost_pv: float
    capital_recovery_factor: float
    discount_rate: float
    years: int
    conventions: str = READINESS_CONVENTIONS


def cost_of_readiness(*, capex: float, om_per_year: float, discount_rate: float, years: int, float_current_a: float,
                      float_voltage_v: float, energy_price_per_kwh: float, charger_efficiency: float = 1.0,
                      end_of_life_cost: float = 0.0,
                      replacements: Sequence[tuple[float, float]] = ()) -> ReadinessCost:
    """Yearly cost of readiness of a standby bank: all discounted costs × capital recovery factor.

    ``per_year = CRF(r, N) · [Capex + Σ_k R_k/(1+r)^y_k + Σ_n (O&M + C_float)/(1+r)^n + EoL/(1+r)^(N+1)]``
    with ``C_float = price · I_float · V_float · 8760 h / 1000 / η_charger``.
    Because ``CRF · Σ_n 1/(1+r)^n = 1``, the O&M and float-energy parts come
    out at their own yearly values.

    Parameters
    ----------
    capex : float
        Capital cost at year 0 (see :func:`bank_capex`). [currency]
    om_per_year : float
        Operation and maintenance per year. [currency/year]
    discount_rate : float
        Real discount rate, 0 ≤ r < 1. [1/year]
    years : int
        Horizon ``N``, 1 or more. [years]
    float_current_a : float
        Float current of the whole bank, 0 or more. [A]
    float_voltage_v : float
        Float voltage of the whole bank (cells × volts per cell), above 0. [V]
    energy_price_per_kwh : float
        Price of the energy the charger draws. [currency/kWh]
    charger_efficiency : float, default 1.0
        Charger efficiency in (0, 1]; the energy bought is the float energy
        divided by it. [-]
    end_of_life_cost : float, default 0
        Decommissioning cost at year ``N + 1``; negative for a net salvage credit. [currency]
    replacements : sequence of (float, float), default ()
        ``(year, cost)`` of each replacement, year in (0, N]. [years], [currency]

    Returns
    -------
    ReadinessCost

    Raises
    ------
    SpecError
        (a :class:`~benchbook.errors.ModelError`) listing every bad input.

    References
    ----------
    Annualised cost by the capital recovery factor: W. Short, D. J. Packey,
    T. Holt, NREL/TP-462-5173 (1995) (from memory). Float
    energy as float current × float voltage × 8760 h: common practice, no source.
    """
    probs = _rate_problem(discount_rate) + _years_problem(years)
    probs += _nonneg("capex", capex, "a capital cost of 0 or more")
    probs += _nonneg("om_per_year", om_per_year, "an O&M cost of 0 or more per year")
    probs += _nonneg("float_current_a", float_current_a, "a float current of 0 A or more")
    probs += _nonneg("energy_price_per_kwh", energy_price_per_kwh, "a price of 0 or more per kWh")
    if not _finite(float_voltage_v) or float_voltage_v <= 0:
        probs.append(FieldProblem("float_voltage_v", float_voltage_v, "a bank float voltage above 0 V"))
    if not _finite(charger_efficiency) or not 0 < charger_efficiency <= 1:
        probs.append(FieldProblem("charger_efficiency", charger_efficiency, "an efficiency above 0 and at most 1"))
    if not _finite(end_of_life_cost):
        probs.append(FieldProblem("end_of_life_cost", end_of_life_cost, "a number (negative for a salvage credit)"))
    repl, rprobs = _replacement_problems(replacements, years)
    probs += rprobs
    if probs:
        raise SpecError("cost-of-readiness inputs", probs)

    r, n_years = float(discount_rate), int(years)
    crf = capital_recovery_factor(r, n_years)
    annuity = present_value_annuity(r, n_years)
    kwh = float(float_current_a) * float(float_voltage_v) * HOURS_PER_YEAR / 1000.0
    float_cost = float(energy_price_per_kwh) * kwh / float(charger_efficiency)
    repl_pv = float(sum(c * _discount(r, y) for y, c in repl))
    eol_pv = float(end_of_life_cost) * float(_discount(r, n_years + 1))
    total = float(capex) + repl_pv + (float(om_per_year) + float_cost) * annuity + eol_pv
    parts = dict(capex_per_year=float(capex) * crf, replacements_per_year=repl_pv * crf,
                 om_per_year=float(om_per_year), float_energy_per_year=float_cost, end_of_life_per_year=eol_pv * crf)
    return ReadinessCost(per_year=total * crf, float_energy_kwh_per_year=kwh, total_cost_pv=total,
                         capital_recovery_factor=crf, discount_rate=r, years=n_years, **parts)
