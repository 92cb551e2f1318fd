"""A capacity test set beside the bank's model: predicted runtime, health, effective capacity, remaining life.

The bank's datasheet gives a KiBaM fit (:func:`benchbook.model.rate.fit_kibam`,
one string at 25 °C); the test gives a measured runtime at a known current and
temperature. This module compares the two and refits the model to the test.

What a refit can recover: KiBaM models charge, not voltage, so a discharge to
the end voltage tells it one thing, the moment the available tank is empty.
One capacity test is one such moment, one equation, and determines one
parameter: the capacity ``q_max`` (``c`` and ``k`` stay those of the datasheet
fit). :func:`refit_kibam` refits ``c`` and ``k`` as well, by least squares,
when it is given discharges at three or more distinct currents (a multi-rate
test series of one bank at one age).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional, Sequence

import numpy as np
from scipy.optimize import least_squares

from benchbook.errors import ModelError
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
        The same ``c`` and ``k`` with ``q_max`` refitted so that the model lasts
        ``measured_minutes`` at the test current (or the logged currents) and
        temperature, corrected back to 25 °C. Only the capacity is refitted:
        one discharge to one end voltage determines one parameter (see the module).
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
    refit_rule: str = ""


@dataclass(frozen=True, eq=False)
class MeasuredDischarge:
    """A discharge of one string from full until the available charge ran out (the end voltage).

    Parameters
    ----------
    end_h : float
        Time at which the end voltage was reached. [h]
    current_a : float or array
        Current of one string: one constant value, or one value per time of
        ``elapsed_h`` (linear between them, held before the first and after
        the last; NaN for a reading not taken, replaced by ``nominal_a``). [A]
    elapsed_h : array, optional
        Times of the logged currents. [h]
    nominal_a : float, optional
        Current used where a logged current is NaN (the test current). [A]
    """

    end_h: float
    current_a: float | np.ndarray
    elapsed_h: Optional[np.ndarray] = None
    nominal_a: Optional[float] = None

    def intervals(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """``(start_h, stop_h, current_a)`` of constant-current steps from 0 to ``end_h`` (trapezoidal means)."""
        end = _finite("end_h", self.end_h, positive=True)
        if self.elapsed_h is None:
            i = _finite("current_a", self.current_a, positive=True)
            return np.array([0.0]), np.array([end]), np.array([i])
        t = np.asarray(self.elapsed_h, dtype=float)
        cur = np.asarray(self.current_a, dtype=float)
        if t.shape != cur.shape or t.ndim != 1:
            raise ModelError(f"MeasuredDischarge: found {t.size} times and {cur.size} currents; expected one "
                             "current per time")
        if self.nominal_a is not None:
            cur = np.where(np.isfinite(cur), cur, _finite("nominal_a", self.nominal_a, positive=True))
        ok = np.isfinite(t) & np.isfinite(cur)
        t, cur = t[ok], cur[ok]
        if t.size == 0 or np.any(np.diff(t) < 0) or np.any(cur < 0):
            raise ModelError("MeasuredDischarge: expected logged times that increase and discharge currents of "
                             "0 A or more")
        knots = np.unique(np.concatenate([[0.0, end], t[(t > 0) & (t < end)]]))
        at = np.interp(knots, t, cur)
        return knots[:-1], knots[1:], 0.5 * (at[:-1] + at[1:])

    def delivered_ah(self) -> float:
        """Charge delivered until ``end_h``. [Ah]"""
        a, b, i = self.intervals()
        return float(np.sum(i * (b - a)))


def available_at_end(kibam: Kibam, discharge: MeasuredDischarge) -> float:
    """Available charge ``q1`` left at ``discharge.end_h`` after the discharge, from full. [Ah]

    KiBaM is linear, so for constant-current steps ``I_i`` over ``[a_i, b_i]``
    ending at ``T``: ``q1(T) = c q_max - c Q - (1 - c) S`` with ``Q = Σ I_i (b_i
    - a_i)`` and ``S = Σ I_i exp(-k (T - b_i)) (1 - exp(-k (b_i - a_i))) / k``.
    Zero when the model empties exactly at ``T``: for one constant current,
    exactly when ``q(T) = I T`` (:meth:`Kibam.capacity_ah`; the same model by
    another path).

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993 (the two-tank
    equations, solved for a piecewise-constant current). doi:10.1016/0038-092X(93)90060-2
    """
    a, b, i = discharge.intervals()
    return float(_q1_end(np.asarray(kibam.c), np.asarray(kibam.k_per_h), np.asarray(kibam.q_max_ah), a, b, i))


def _q1_end(c, k, q_max, a, b, i):
    end = b[-1]
    delivered = np.sum(i * (b - a))
    s = np.sum(i * np.exp(-k * (end - b)) * -np.expm1(-k * (b - a))) / k
    return c * q_max - c * delivered - (1.0 - c) * s


_FITTABLE = ("c", "k_per_h", "q_max_ah")


def refit_kibam(kibam: Kibam, discharges: Sequence[MeasuredDischarge],
                fit: Sequence[str] = ("q_max_ah",)) -> Kibam:
    """Refit KiBaM parameters to measured discharges by nonlinear least squares.

    Each discharge ran from full until the available tank was empty (the end
    voltage), so the model's available charge at its end time,
    :func:`available_at_end`, should be zero. The residuals are those charges
    divided by the charge each discharge delivered, minimised with
    :func:`scipy.optimize.least_squares` (trust-region reflective) over the
    parameters named in ``fit`` (``c`` in (0, 1), ``k_per_h`` and ``q_max_ah``
    in log space), starting from ``kibam``; the others are kept.

    One discharge determines one parameter: a capacity test refits
    ``q_max_ah`` only (the default). ``c`` and ``k_per_h`` need discharges at
    as many distinct mean currents (more than 5 % apart) as parameters fitted.

    Parameters
    ----------
    kibam : Kibam
        Start values and the parameters kept (one string, scalar fields).
    discharges : sequence of MeasuredDischarge
        Measured discharges of one string, each from full to empty.
    fit : sequence of str
        Parameters to refit, from ``"c"``, ``"k_per_h"``, ``"q_max_ah"``.

    Returns
    -------
    Kibam
        ``residual`` is the RMS of the relative residuals. [-]

    Raises
    ------
    ModelError
        Unknown parameter names, or too few discharges (or distinct currents) for them.

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993, parameter
    determination from constant-current discharges. doi:10.1016/0038-092X(93)90060-2
    """
    names = tuple(dict.fromkeys(fit))
    if not names or any(n not in _FITTABLE for n in names):
        raise ModelError(f"fit: found {list(fit)!r}; expected names from {', '.join(_FITTABLE)}")
    steps = [d.intervals() for d in discharges]
    delivered = np.array([np.sum(i * (b - a)) for a, b, i in steps])
    if not np.all(delivered > 0):
        raise ModelError("refit: found a discharge that delivered no charge; expected currents above 0 A")
    if len(steps) < len(names):
        raise ModelError(f"refit of {', '.join(names)}: found {len(steps)} discharge(s); expected at least "
                         f"{len(names)} (one discharge to one end voltage determines one parameter)")
    if set(names) & {"c", "k_per_h"}:
        rates = np.sort(delivered / np.array([b[-1] for _, b, _ in steps]))
        distinct = 1 + int(np.sum(rates[1:] > rates[:-1] * 1.05))
        if distinct < len(names):
            raise ModelError(f"refit of {', '.join(names)}: found discharges at {distinct} distinct current(s); "
                             f"expected at least {len(names)} (c and k show only in how capacity changes with rate)")
    start = {"c": float(kibam.c), "k_per_h": float(kibam.k_per_h), "q_max_ah": float(kibam.q_max_ah)}
    q_lo = float(delivered.max())
    box = {"c": (1e-6, 1 - 1e-6), "k_per_h": (math.log(1e-5), math.log(1e3)),
           "q_max_ah": (math.log(q_lo), math.log(q_lo * 1e3))}

    def unpack(theta: np.ndarray) -> dict[str, float]:
        out = dict(start)
        for n, v in zip(names, theta):
            out[n] = float(v) if n == "c" else math.exp(v)
        return out

    def resid(theta: np.ndarray) -> np.ndarray:
        p = unpack(theta)
        return np.array([_q1_end(p["c"], p["k_per_h"], p["q_max_ah"], a, b, i) for a, b, i in steps]) / delivered

    x0 = np.array([start[n] if n == "c" else math.log(start[n]) for n in names])
    lo = np.array([box[n][0] for n in names])
    hi = np.array([box[n][1] for n in names])
    x0 = np.clip(x0, lo + 1e-9, hi - 1e-9)
    sol = least_squares(resid, x0, bounds=(lo, hi), method="trf", xtol=1e-14, ftol=1e-14, gtol=1e-14)
    p = unpack(sol.x)
    return Kibam(p["c"], p["k_per_h"], p["q_max_ah"], float(np.sqrt(np.mean(sol.fun ** 2))))


def refit_q_max(kibam: Kibam, current_a: float, runtime_h: float) -> Kibam:
    """KiBaM with ``c`` and ``k`` kept and ``q_max`` scaled to last ``runtime_h`` at ``current_a``.

    The constant-current capacity ``q(T)`` is proportional to ``q_max`` at
    fixed ``c`` and ``k``, so the one scale factor that makes ``q(T) = I T`` is
    ``s = I T / q(T)``: the closed form of :func:`refit_kibam` for one
    constant-current discharge. Keeping ``c`` and ``k`` assumes aging removes
    capacity from both tanks alike (an assumption of benchbook, no source); a
    single test could not tell them apart anyway (one end time, one parameter).

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


def remaining_life_years(health: float, service_life_years: float, *, age_years: Optional[float] = None,
                         replace_at: float = 0.80, basis: str = "") -> tuple[float, float, str]:
    """Years until health reaches the replacement level, on the expected service life.

    The expected service life is the time the bank takes to fall from full
    health to ``replace_at`` (IEEE 450 calls a bank at 80 % due for
    replacement). The health measured today is placed on that span, as a
    linear fall of capacity with consumed life (common practice, no source):
    the fraction of life used is ``(1 - health) / (1 - replace_at)``, the
    aging rate is ``(1 - replace_at) / service_life_years`` per year and the
    remaining life is ``(health - replace_at) / rate``. When ``age_years`` is
    given and the bank has aged faster than that (``(1 - health) / age_years``
    larger), the faster observed rate is used. Real banks often age slowly,
    then fall off quickly near the end, so this is an estimate to plan the
    next test, not a promise.

    Parameters
    ----------
    health : float
        Capacity relative to new. [-]
    service_life_years : float
        Expected service life: the simulation's (cycle life by rainflow and
        Miner's rule, or float life, the lower; :func:`benchbook.model.life.service_life`),
        or the design float life at the site's temperature when the simulation
        is not at hand. [years]
    age_years : float, optional
        Time in service. [years]
    replace_at : float
        Health at which the bank is replaced (0.80 per IEEE 450). [-]
    basis : str
        Words for where ``service_life_years`` came from, for the rule text.

    Returns
    -------
    (years, rate_per_year, rule) : tuple of float, float, str

    References
    ----------
    IEEE Std 450, replacement at 80 % of rated capacity [text]. Linear fall of
    capacity with consumed life: common practice, no source.
    """
    h = _finite("health", health, nonneg=True)
    life = _finite("service_life_years", service_life_years, positive=True)
    rate = (1.0 - replace_at) / life
    rule = f"service life {life:.1f} years to {replace_at:.0%}" + (f", {basis}" if basis else "")
    if age_years is not None and _finite("age_years", age_years, nonneg=True) > 0:
        observed = (1.0 - h) / age_years
        if observed > rate:
            rate = observed
            rule = f"observed aging rate: {1 - h:.0%} lost in {age_years:g} years, faster than the {rule}"
    return max(0.0, (h - replace_at) / rate), rate, rule


def compare_with_model(kibam: Kibam, *, current_per_string_a: float, temp_c: float, measured_minutes: float,
                       rated_minutes: float, design_life_25c_years: Optional[float] = None,
                       avg_temp_c: float = 25.0, age_years: Optional[float] = None, replace_at: float = 0.80,
                       log: Optional[tuple[Sequence[float], Sequence[float]]] = None,
                       model_life_years: Optional[float] = None,
                       model_life_limited_by: str = "") -> ModelComparison:
    """Predicted runtime from the bank's KiBaM beside the measured one; health and effective capacity.

    The model's runtime at the test temperature uses the datasheet fit with
    ``q_max`` divided by the IEEE 485 factor (a cold bank holds less). Health
    is measured ÷ predicted runtime. The refitted model refits ``q_max`` only
    to the measured runtime (:func:`refit_q_max` at the test current, or
    :func:`refit_kibam` by least squares on the logged currents when ``log`` is
    given) and multiplies it by the factor to state it at 25 °C; its capacity
    at the rated time is the effective capacity today. ``c`` and ``k`` are
    kept: one discharge to one end voltage determines one parameter
    (``refit_rule`` says so in words). The remaining life follows
    :func:`remaining_life_years` on the service life the sizing simulation
    expects (``model_life_years``: rainflow cycle counting and Miner's rule
    on the simulated year, or the float life, the lower; see
    :func:`benchbook.model.life.service_life`). Without it, the design float
    life shortened for the site's mean temperature
    (:func:`benchbook.model.life.float_life_years`) stands in, and
    ``life_rule`` says so.

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
    design_life_25c_years : float, optional
        Design float life at 25 °C from the datasheet; used when
        ``model_life_years`` is not given. [years]
    avg_temp_c : float
        Mean battery temperature over the year at the site. [°C]
    age_years : float, optional
        Years in service. [years]
    replace_at : float
        Health at which the bank is replaced. [-]
    log : (elapsed minutes, current of one string [A]), optional
        The test's logged currents; NaN where not read (the test current is used there).
    model_life_years : float, optional
        Service life the sizing simulation expects for the bank. [years]
    model_life_limited_by : str
        ``"cycling"`` or ``"float"``: what limits ``model_life_years``.

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
    if log is not None:
        t_log = np.asarray(log[0], dtype=float) / 60.0
        run = MeasuredDischarge(t_meas / 60.0, np.asarray(log[1], dtype=float), t_log, nominal_a=i)
        refit = refit_kibam(cold, [run]).scaled(k)
        how = "by least squares on the logged currents"
    else:
        refit = refit_q_max(cold, i, t_meas / 60.0).scaled(k)
        how = f"at the test current {i:g} A"
    refit_rule = (f"capacity (q_max) refitted {how}; c = {float(kibam.c):.3f} and k = {float(kibam.k_per_h):.3f} "
                  "1/h kept from the datasheet fit: one discharge to one end voltage determines one parameter")
    rated_ah = float(kibam.capacity_ah(t_rated / 60.0))
    eff_ah = float(refit.capacity_ah(t_rated / 60.0))
    if model_life_years is not None:
        life = _finite("model_life_years", model_life_years, positive=True)
        by = {"cycling": ", limited by cycling (rainflow counting and Miner's rule on the simulated year)",
              "float": f", limited by float life at {avg_temp_c:g} °C"}.get(model_life_limited_by, "")
        basis = f"the model's{by}"
    elif design_life_25c_years is not None:
        life = float_life_years(design_life_25c_years, avg_temp_c)
        basis = (f"the design float life at {avg_temp_c:g} °C; the sheet carries no simulated service life, "
                 "so cycling wear is not counted")
    else:
        raise ModelError("remaining life: found neither model_life_years nor design_life_25c_years; "
                         "expected one of them")
    years, rate, rule = remaining_life_years(health, life, age_years=age_years, replace_at=replace_at, basis=basis)
    return ModelComparison(i, float(temp_c), k, predicted, t_meas, health, kibam, refit, rated_ah, eff_ah,
                           years, rate, rule, refit_rule)
