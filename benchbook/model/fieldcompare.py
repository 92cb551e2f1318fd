"""A capacity test set beside the bank's model: predicted runtime, health, effective capacity, remaining life.

The bank's datasheet gives a KiBaM fit (:func:`benchbook.model.rate.fit_kibam`,
one string at 25 °C); the test gives a measured runtime at a known current and
temperature. This module compares the two and refits the model to the test.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

from benchbook.model.fieldtests import _finite, temperature_factor
from benchbook.model.life import float_life_years
from benchbook.model.rate import Kibam


@dataclass(frozen=True, eq=False)
class ModelComparison:
    """A capacity test set beside the bank's KiBaM.

    Parameters
    ----------
    current_per_string_a, temp_c : float
        Test current of one string [A] and starting temperature [°C].
    factor : float
        IEEE 485 factor at ``temp_c``; the model's capacity is divided by it. [-]
    predicted_minutes, measured_minutes : float
        Runtime the model predicts at the test's current and temperature, and the test's. [min]
    health : float
        ``measured_minutes / predicted_minutes``. [-]
    kibam : Kibam
        The bank's fit from its datasheet (one string, 25 °C).
    refit : Kibam
        The same ``c`` and ``k`` with ``q_max`` scaled so that the model lasts
        ``measured_minutes`` at the test current and temperature, corrected back to 25 °C.
    rated_capacity_ah, effective_capacity_ah : float
        Capacity at the rated time from ``kibam`` and from ``refit``, one string, 25 °C. [Ah]
    remaining_life_years : float
        Years until ``health`` reaches ``replace_at`` (see :func:`compare_with_model`). [years]
    aging_rate_per_year : float
        Loss of health per year used for ``remaining_life_years``. [-/year]
    life_rule : str
        How the remaining life was estimated, in words.
    """

    current_per_string_a: float
    temp_c: float
    factor: float
    predicted_minutes: float
    measured_minutes: float
    health: float
    kibam: Kibam
    refit: Kibam
    rated_capacity_ah: float
    effective_capacity_ah: float
    remaining_life_years: float
    aging_rate_per_year: float
    life_rule: str


def refit_q_max(kibam: Kibam, current_a: float, runtime_h: float) -> Kibam:
    """KiBaM with ``c`` and ``k`` kept and ``q_max`` scaled to last ``runtime_h`` at ``current_a``.

    The constant-current capacity ``q(T)`` is proportional to ``q_max`` at
    fixed ``c`` and ``k``, so the one scale factor that makes ``q(T) = I T`` is
    ``s = I T / q(T)``. Keeping ``c`` and ``k`` assumes aging removes capacity
    from both tanks alike (an assumption of benchbook, no source).

    Parameters
    ----------
    kibam : Kibam
        Parameters of one string.
    current_a : float
        Constant discharge current of one string. [A]
    runtime_h : float
        Measured runtime to the end voltage. [h]

    Returns
    -------
    Kibam

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993, capacity at constant
    current. doi:10.1016/0038-092X(93)90060-2
    """
    i = _finite("current_a", current_a, positive=True)
    t = _finite("runtime_h", runtime_h, positive=True)
    return kibam.scaled(i * t / float(kibam.capacity_ah(t)))


def remaining_life_years(health: float, design_life_years: float, *, age_years: Optional[float] = None,
                         replace_at: float = 0.80) -> tuple[float, float, str]:
    """Years until health reaches the replacement level, at the design aging rate.

    Rule (benchbook's, no source): a bank loses ``(1 - replace_at)`` of its
    health evenly over its design life, so the design aging rate is
    ``(1 - replace_at) / design_life_years`` per year and the remaining life is
    ``(health - replace_at) / rate``. When ``age_years`` is given and the bank
    has aged faster than that (``(1 - health) / age_years`` larger), the faster
    observed rate is used. Real banks often age slowly, then fall off quickly
    near the end, so this is an estimate to plan the next test, not a promise.

    Parameters
    ----------
    health : float
        Capacity relative to new. [-]
    design_life_years : float
        Design (float) life at the bank's temperature. [years]
    age_years : float, optional
        Time in service. [years]
    replace_at : float
        Health at which the bank is replaced (0.80 per IEEE 450). [-]

    Returns
    -------
    (years, rate_per_year, rule) : tuple of float, float, str

    References
    ----------
    IEEE Std 450, replacement at 80 % of rated capacity [text]; the linear
    aging rule is benchbook's own.
    """
    h = _finite("health", health, nonneg=True)
    life = _finite("design_life_years", design_life_years, positive=True)
    rate = (1.0 - replace_at) / life
    rule = f"design aging rate: {1 - replace_at:.0%} over {life:g} years"
    if age_years is not None and _finite("age_years", age_years, nonneg=True) > 0:
        observed = (1.0 - h) / age_years
        if observed > rate:
            rate = observed
            rule = f"observed aging rate: {1 - h:.0%} lost in {age_years:g} years"
    return max(0.0, (h - replace_at) / rate), rate, rule


def compare_with_model(kibam: Kibam, *, current_per_string_a: float, temp_c: float, measured_minutes: float,
                       rated_minutes: float, design_life_25c_years: float, avg_temp_c: float = 25.0,
                       age_years: Optional[float] = None, replace_at: float = 0.80) -> ModelComparison:
    """Predicted runtime from the bank's KiBaM beside the measured one; health and effective capacity.

    The model's runtime at the test temperature uses the datasheet fit with
    ``q_max`` divided by the IEEE 485 factor (a cold bank holds less). Health
    is measured ÷ predicted runtime. The refitted model scales ``q_max`` to the
    measured runtime (:func:`refit_q_max`) and multiplies it by the factor to
    state it at 25 °C; its capacity at the rated time is the effective capacity
    today. The remaining life follows :func:`remaining_life_years`, with the
    design life shortened for the site's mean temperature by
    :func:`benchbook.model.life.float_life_years`.

    Parameters
    ----------
    kibam : Kibam
        KiBaM fit of one string from the datasheet (``benchbook.model.rate.fit_kibam``).
    current_per_string_a : float
        Test current of one string. [A]
    temp_c : float
        Electrolyte temperature at the start. [°C]
    measured_minutes : float
        Time to the end voltage in the test. [min]
    rated_minutes : float
        Rated time at the test current. [min]
    design_life_25c_years : float
        Design float life at 25 °C from the datasheet. [years]
    avg_temp_c : float
        Mean battery temperature over the year at the site. [°C]
    age_years : float, optional
        Years in service. [years]
    replace_at : float
        Health at which the bank is replaced. [-]

    Returns
    -------
    ModelComparison

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993.
    doi:10.1016/0038-092X(93)90060-2. IEEE Std 485, Table 1 (from memory).
    IEEE Std 450, 80 % replacement [text].
    """
    i = _finite("current_per_string_a", current_per_string_a, positive=True)
    t_meas = _finite("measured_minutes", measured_minutes, positive=True)
    t_rated = _finite("rated_minutes", rated_minutes, positive=True)
    k = temperature_factor(temp_c)
    cold = kibam.scaled(1.0 / k)
    predicted = float(cold.runtime_h(i)) * 60.0
    health = t_meas / predicted
    refit = refit_q_max(cold, i, t_meas / 60.0).scaled(k)
    rated_ah = float(kibam.capacity_ah(t_rated / 60.0))
    eff_ah = float(refit.capacity_ah(t_rated / 60.0))
    life = float_life_years(design_life_25c_years, avg_temp_c)
    years, rate, rule = remaining_life_years(health, life, age_years=age_years, replace_at=replace_at)
    return ModelComparison(i, float(temp_c), k, predicted, t_meas, health, kibam, refit, rated_ah, eff_ah,
                           years, rate, rule)
