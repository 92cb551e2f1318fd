"""Rate of discharge: Peukert's law and the Kinetic Battery Model (KiBaM).

Sign convention everywhere in this module: a **positive current discharges**
the battery, a negative current charges it. Charges are in ampere-hours,
times in hours, rate constants in 1/h.

KiBaM state is the pair ``(q1_ah, q2_ah)``: available and bound charge of one
string. Every KiBaM function broadcasts over numpy arrays, and a :class:`Kibam`
may itself hold arrays for ``c``, ``k_per_h`` and ``q_max_ah`` (one element per
option), so a simulation can step many options with different parameters in
one call; :meth:`Kibam.stack` builds such an instance from scalar ones.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from typing import Iterable, Sequence

import numpy as np
from scipy.optimize import least_squares

from benchbook.errors import FieldProblem, ModelError, SpecError


# ---- small numerical helpers -------------------------------------------------------------
def _one_minus_r(x: np.ndarray) -> np.ndarray:
    """``1 - exp(-x)`` without cancellation for small ``x``."""
    return -np.expm1(-x)


def _g(x: np.ndarray) -> np.ndarray:
    """``x - 1 + exp(-x)`` without cancellation for small ``x`` (series below 1e-2)."""
    x = np.asarray(x, dtype=float)
    small = np.abs(x) < 1e-2
    xs = np.where(small, x, 0.0)
    series = xs * xs * (0.5 - xs * (1 / 6 - xs * (1 / 24 - xs * (1 / 120 - xs / 720))))
    with np.errstate(invalid="ignore", over="ignore"):
        direct = x + np.expm1(-x)
    return np.where(small, series, direct)


def _out(v: np.ndarray) -> float | np.ndarray:
    v = np.asarray(v, dtype=float)
    return float(v) if v.ndim == 0 else v


def _ratings_array(ratings: Iterable[Sequence[float]], what: str, least: int) -> tuple[np.ndarray, np.ndarray]:
    """Validate ``(hours, ah)`` pairs; raise :class:`SpecError` listing every bad pair."""
    try:
        pairs = [(float(h), float(a)) for h, a in ratings]
    except (TypeError, ValueError):
        raise SpecError(what, [FieldProblem("ratings", ratings, "(hours, Ah) pairs of numbers")]) from None
    problems = [FieldProblem("ratings", p, "positive, finite hours and Ah")
                for p in pairs if not (math.isfinite(p[0]) and math.isfinite(p[1]) and p[0] > 0 and p[1] > 0)]
    if len(pairs) < least:
        problems.append(FieldProblem("ratings", pairs, f"{least} or more (hours, Ah) ratings"))
    if problems:
        raise SpecError(what, problems)
    pairs.sort()
    hours = np.array([p[0] for p in pairs])
    ah = np.array([p[1] for p in pairs])
    currents = ah / hours
    if len(np.unique(hours)) != len(hours) or len(np.unique(currents)) != len(currents):
        raise SpecError(what, [FieldProblem("ratings", pairs, "distinct durations and distinct currents")])
    return hours, ah


# ---- Peukert -----------------------------------------------------------------------------------
def fit_peukert(ratings: Iterable[Sequence[float]]) -> float:
    """Peukert exponent ``k`` from rate-table ratings.

    With ``I_x = C_x / H_x``: two ratings give ``k = ln(H1/H2) / ln(I2/I1)``;
    more than two give the least-squares slope of ``ln H`` against ``ln I``
    (``k`` = minus the slope).

    Parameters
    ----------
    ratings : iterable of (float, float)
        ``(hours, ah)`` pairs, two or more, with distinct currents. [h], [Ah]

    Returns
    -------
    float
        Peukert exponent. [-]

    References
    ----------
    W. Peukert, "Über die Abhängigkeit der Kapazität von der
    Entladestromstärke bei Bleiakkumulatoren", Elektrotechnische Zeitschrift,
    1897, pp. 287-288 (journal details from memory; rated-capacity form and
    two-rating fit as summarised in docs/references.md).
    """
    hours, ah = _ratings_array(ratings, "Peukert fit", 2)
    current = ah / hours
    if len(hours) == 2:
        return float(math.log(hours[0] / hours[1]) / math.log(current[1] / current[0]))
    x = np.log(current)
    y = np.log(hours)
    a = np.column_stack([x, np.ones_like(x)])
    slope = np.linalg.lstsq(a, y, rcond=None)[0][0]
    return float(-slope)


def peukert_hours(current_a: float | np.ndarray, rated_ah: float, rated_hours: float,
                  k: float) -> float | np.ndarray:
    """Runtime at constant current by Peukert's law, rated-capacity form.

    ``t = H (C / (I H)) ** k``. A current of zero or less never empties the
    battery: ``inf``. Peukert's law holds for a constant load only and says
    nothing about charge recovered during rest.

    Parameters
    ----------
    current_a : float or ndarray
        Constant discharge current. [A]
    rated_ah : float
        Rated capacity ``C`` at ``rated_hours``. [Ah]
    rated_hours : float
        Duration ``H`` of the rating. [h]
    k : float
        Peukert exponent, > 0 (1.05-1.6 for lead-acid). [-]

    Returns
    -------
    float or ndarray
        Runtime. [h]

    References
    ----------
    W. Peukert, Elektrotechnische Zeitschrift, 1897, pp. 287-288 (see :func:`fit_peukert`).
    """
    problems = [FieldProblem(n, v, "a positive, finite number") for n, v in
                (("rated_ah", rated_ah), ("rated_hours", rated_hours), ("k", k))
                if not (isinstance(v, (int, float, np.floating, np.integer)) and math.isfinite(v) and v > 0)]
    if problems:
        raise SpecError("Peukert parameters", problems)
    i = np.asarray(current_a, dtype=float)
    pos = i > 0
    ip = np.where(pos, i, 1.0)
    t = rated_hours * (rated_ah / (ip * rated_hours)) ** k
    return _out(np.where(pos, t, np.inf))


# ---- KiBaM ----------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Kibam:
    """Parameters of the Kinetic Battery Model for one string (or one per option).

    Parameters
    ----------
    c : float or ndarray
        Fraction of the capacity held in the available tank, 0 < c < 1. [-]
    k_per_h : float or ndarray
        Rate constant of the flow between the tanks, > 0. [1/h]
    q_max_ah : float or ndarray
        Total capacity, both tanks, > 0. [Ah]
    residual : float, optional
        Fit residual: RMS relative capacity error over the fitted ratings
        (see :func:`fit_kibam`); 0.0 for hand-made instances. [-]

    ``c``, ``k_per_h`` and ``q_max_ah`` may be numpy arrays of one common
    shape (one element per option); every method then broadcasts.

    References
    ----------
    J. F. Manwell and J. G. McGowan, "Lead acid battery storage model for
    hybrid energy systems", Solar Energy 50(5):399-405, 1993.
    doi:10.1016/0038-092X(93)90060-2
    """

    c: float | np.ndarray
    k_per_h: float | np.ndarray
    q_max_ah: float | np.ndarray
    residual: float = 0.0

    def __post_init__(self) -> None:
        problems = []
        for name, ok, text in (  # every bad field at once
            ("c", lambda v: (v > 0) & (v < 1), "a fraction above 0 and below 1"),
            ("k_per_h", lambda v: v > 0, "a rate constant above 0 1/h"),
            ("q_max_ah", lambda v: v > 0, "a capacity above 0 Ah"),
        ):
            raw = getattr(self, name)
            try:
                v = np.asarray(raw, dtype=float)
            except (TypeError, ValueError):
                problems.append(FieldProblem(name, raw, text))
                continue
            if v.size == 0 or not np.all(np.isfinite(v) & ok(v)):
                problems.append(FieldProblem(name, raw, text))
                continue
            object.__setattr__(self, name, float(v) if v.ndim == 0 else v)
        if problems:
            raise SpecError("KiBaM parameters", problems)
        try:
            np.broadcast_shapes(*(np.shape(getattr(self, n)) for n in ("c", "k_per_h", "q_max_ah")))
        except ValueError:
            raise SpecError("KiBaM parameters", [FieldProblem(
                "c", np.shape(self.c), "c, k_per_h and q_max_ah of shapes that broadcast together")]) from None
        object.__setattr__(self, "residual", float(self.residual))

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Kibam):
            return NotImplemented
        return all(np.array_equal(getattr(self, f.name), getattr(other, f.name)) for f in fields(self))

    __hash__ = None  # type: ignore[assignment]  # may hold arrays

    # ---- construction helpers ---------------------------------------------------------------
    @classmethod
    def stack(cls, kibams: Sequence["Kibam"]) -> "Kibam":
        """One array-valued :class:`Kibam` from scalar ones, in order (``residual`` = the largest)."""
        kibams = list(kibams)
        if not kibams:
            raise ModelError("Kibam.stack needs at least one Kibam")
        return cls(np.array([kb.c for kb in kibams], dtype=float),
                   np.array([kb.k_per_h for kb in kibams], dtype=float),
                   np.array([kb.q_max_ah for kb in kibams], dtype=float),
                   max(kb.residual for kb in kibams))

    def scaled(self, factor: float | np.ndarray) -> "Kibam":
        """Same ``c`` and ``k``, ``q_max`` times ``factor`` (temperature or aging derating). [-]"""
        return Kibam(self.c, self.k_per_h, np.asarray(self.q_max_ah) * np.asarray(factor, dtype=float),
                     self.residual)

    def full_state(self) -> tuple[float | np.ndarray, float | np.ndarray]:
        """``(q1, q2) = (c q_max, (1 - c) q_max)``: the fully charged state. [Ah]"""
        q = np.asarray(self.q_max_ah)
        c = np.asarray(self.c)
        return _out(c * q), _out((1.0 - c) * q)

    # ---- closed forms ----------------------------------------------------------------------
    def capacity_ah(self, hours: float | np.ndarray) -> float | np.ndarray:
        """Charge delivered by a constant-current discharge from full that lasts ``hours``.

        ``q(T) = q_max k c T / (1 - exp(-k T) + c (k T - 1 + exp(-k T)))``; the
        limits ``c q_max`` at ``T = 0`` and ``q_max`` at ``T = inf`` are returned
        exactly.

        Parameters
        ----------
        hours : float or ndarray
            Duration of the discharge, >= 0. [h]

        Returns
        -------
        float or ndarray
            Delivered charge. [Ah]

        References
        ----------
        Manwell & McGowan, Solar Energy 50(5):399-405, 1993. doi:10.1016/0038-092X(93)90060-2
        """
        t = np.asarray(hours, dtype=float)
        c, k, qm = (np.asarray(v) for v in (self.c, self.k_per_h, self.q_max_ah))
        x = k * t
        finite = np.isfinite(x) & (x > 0)
        xf = np.where(finite, x, 1.0)
        q = qm * c * xf / (_one_minus_r(xf) + c * _g(xf))
        q = np.where(finite, q, np.where(x > 0, qm, c * qm) * np.ones_like(q))
        return _out(q)

    def runtime_h(self, current_a: float | np.ndarray) -> float | np.ndarray:
        """Time to empty the available tank at constant current, from full. [h]

        Solves ``q(T) = I T`` (see :meth:`capacity_ah`). ``q(T)/T`` falls
        strictly from infinity to zero, so the root is unique and lies in
        ``[c q_max / I, q_max / I]``; it is found by vectorised bisection in
        ``log T`` to machine precision. A current of zero or less (charging or
        rest) never empties the tank: ``inf``.

        Parameters
        ----------
        current_a : float or ndarray
            Discharge current of one string. [A]

        Returns
        -------
        float or ndarray
            Runtime. [h]

        References
        ----------
        Manwell & McGowan, Solar Energy 50(5):399-405, 1993. doi:10.1016/0038-092X(93)90060-2
        """
        i = np.asarray(current_a, dtype=float)
        pos = i > 0
        ip = np.where(pos, i, 1.0)
        lo = np.log(np.asarray(self.c) * self.q_max_ah / ip)
        hi = np.log(np.asarray(self.q_max_ah) / ip)
        for _ in range(64):  # the bracket is at most ln(1/c) wide: 2**-64 of it is below 1e-17
            mid = 0.5 * (lo + hi)
            tm = np.exp(mid)
            short = np.asarray(self.capacity_ah(tm)) > ip * tm  # charge still available at tm
            lo = np.where(short, mid, lo)
            hi = np.where(short, hi, mid)
        t = np.exp(0.5 * (lo + hi))
        return _out(np.where(pos, t, np.inf))

    def max_current_a(self, q1_ah: float | np.ndarray, q2_ah: float | np.ndarray,
                      dt_h: float | np.ndarray, charging: bool = False) -> float | np.ndarray:
        """Largest constant current the state ``(q1, q2)`` allows over one step. [A]

        Discharge (``charging=False``): the current that empties the available
        tank exactly at the end of the step,
        ``I_dmax = (k q1 r + q0 k c (1 - r)) / D``.
        Charge (``charging=True``): the current that fills the available tank
        exactly to ``c q_max`` at the end of the step,
        ``I_cmax = (-k c q_max + k q1 r + q0 k c (1 - r)) / D``, with
        ``r = exp(-k dt)``, ``q0 = q1 + q2`` and ``D = 1 - r + c (k dt - 1 + r)``.

        Parameters
        ----------
        q1_ah, q2_ah : float or ndarray
            Available and bound charge at the start of the step. [Ah]
        dt_h : float or ndarray
            Step length, > 0. [h]
        charging : bool
            Return the charge limit instead of the discharge limit.

        Returns
        -------
        float or ndarray
            Discharge: ``I_dmax``. Charge: the **magnitude** ``max(0, -I_cmax)``;
            pass minus this value to :func:`kibam_step` to charge. [A]

        References
        ----------
        Manwell & McGowan, Solar Energy 50(5):399-405, 1993, maximum charge and
        discharge currents. doi:10.1016/0038-092X(93)90060-2
        """
        c, k, qm = (np.asarray(v) for v in (self.c, self.k_per_h, self.q_max_ah))
        q1 = np.asarray(q1_ah, dtype=float)
        q0 = q1 + np.asarray(q2_ah, dtype=float)
        x = k * np.asarray(dt_h, dtype=float)
        if np.any(x <= 0):
            raise ModelError(f"max_current_a needs a step longer than 0 h; found dt_h={dt_h!r}")
        r = np.exp(-x)
        d = _one_minus_r(x) + c * _g(x)
        i_d = (k * q1 * r + q0 * k * c * _one_minus_r(x)) / d
        if not charging:
            return _out(i_d)
        i_c = i_d - k * c * qm / d
        return _out(np.maximum(0.0, -i_c))


def kibam_step(kibam: Kibam, q1_ah: float | np.ndarray, q2_ah: float | np.ndarray,
               current_a: float | np.ndarray, dt_h: float | np.ndarray
               ) -> tuple[float | np.ndarray, float | np.ndarray]:
    """Advance the KiBaM state over one step at constant current (closed form).

    ``q1' = q1 r + ((q0 k c - I)(1 - r) - I c (k dt - 1 + r)) / k``

    ``q2' = q2 r + q0 (1 - c)(1 - r) - I (1 - c)(k dt - 1 + r) / k``

    with ``r = exp(-k dt)`` and ``q0 = q1 + q2``; the exact solution of
    ``dq1/dt = -I - k(1-c) q1 + k c q2``, ``dq2/dt = k(1-c) q1 - k c q2``.
    The step does not clip: a current above :meth:`Kibam.max_current_a`
    drives ``q1`` below zero, and the caller decides what that means.

    Parameters
    ----------
    kibam : Kibam
        Parameters; may hold arrays (one element per option).
    q1_ah, q2_ah : float or ndarray
        Available and bound charge at the start of the step. [Ah]
    current_a : float or ndarray
        Constant current over the step; > 0 discharges, < 0 charges. [A]
    dt_h : float or ndarray
        Step length, >= 0. [h]

    Returns
    -------
    (q1_ah, q2_ah) : tuple of float or ndarray
        State at the end of the step, broadcast over all inputs. [Ah]

    References
    ----------
    J. F. Manwell and J. G. McGowan, "Lead acid battery storage model for
    hybrid energy systems", Solar Energy 50(5):399-405, 1993.
    doi:10.1016/0038-092X(93)90060-2
    """
    c, k = np.asarray(kibam.c), np.asarray(kibam.k_per_h)
    q1 = np.asarray(q1_ah, dtype=float)
    q2 = np.asarray(q2_ah, dtype=float)
    i = np.asarray(current_a, dtype=float)
    dt = np.asarray(dt_h, dtype=float)
    if np.any(dt < 0):
        raise ModelError(f"kibam_step needs a step of 0 h or more; found dt_h={dt_h!r}")
    x = k * dt
    r = np.exp(-x)
    omr = _one_minus_r(x)
    g = _g(x)
    q0 = q1 + q2
    new_q1 = q1 * r + q0 * c * omr - i * (omr + c * g) / k
    new_q2 = q2 * r + q0 * (1.0 - c) * omr - i * (1.0 - c) * g / k
    return _out(new_q1), _out(new_q2)


# ---- fitting ----------------------------------------------------------------------------------
def _kibam_log_capacity(theta: np.ndarray, hours: np.ndarray) -> np.ndarray:
    c, lnk, lnq = theta
    x = np.exp(lnk) * hours
    return lnq + np.log(c * x) - np.log(_one_minus_r(x) + c * _g(x))


def fit_kibam(ratings: Iterable[Sequence[float]], min_hours: float | None = None) -> Kibam:
    """Fit KiBaM ``(c, k, q_max)`` to a rate table by nonlinear least squares.

    Each rating ``(T, C)`` is read as a constant-current discharge from full of
    ``I = C / T`` that empties the available tank in ``T`` hours, so the model
    value is ``q(T)`` of :meth:`Kibam.capacity_ah`. The residuals are
    ``ln q(T) - ln C`` (relative capacity error), minimised with
    :func:`scipy.optimize.least_squares` (trust-region reflective, bounds
    ``0 < c < 1``, ``k > 0``, ``q_max >=`` the largest rating) from a grid of
    start values; the best fit wins.

    KiBaM cannot follow sub-hour ratings: ``q(T) -> c q_max`` as ``T -> 0``,
    whereas a 1-minute rating is a few percent of C10. Pass ``min_hours=1.0``
    (or :func:`benchbook.model.battery.ratings_at_least`) to fit ratings of an
    hour and longer only.

    Parameters
    ----------
    ratings : iterable of (float, float)
        ``(hours, ah)`` pairs, three or more after filtering. [h], [Ah]
    min_hours : float, optional
        Drop ratings shorter than this before fitting. [h]

    Returns
    -------
    Kibam
        Fitted parameters; ``residual`` is the RMS relative capacity error
        ``sqrt(mean((q(T)/C - 1)^2))`` over the fitted ratings.

    Fewer than three usable ratings, or bad values, raise :class:`SpecError`.

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993, parameter
    determination from a rate table. doi:10.1016/0038-092X(93)90060-2
    """
    ratings = list(ratings)
    if min_hours is not None:
        try:
            ratings = [r for r in ratings if float(r[0]) >= min_hours]
        except (TypeError, ValueError, IndexError):
            raise SpecError("KiBaM fit", [FieldProblem("ratings", ratings, "(hours, Ah) pairs of numbers")]) from None
    hours, ah = _ratings_array(ratings, "KiBaM fit", 3)
    ln_ah = np.log(ah)
    q_lo = float(ah.max())
    lower = np.array([1e-6, math.log(1e-5), math.log(q_lo)])
    upper = np.array([1 - 1e-6, math.log(1e3), math.log(q_lo * 1e3)])

    def resid(theta: np.ndarray) -> np.ndarray:
        return _kibam_log_capacity(theta, hours) - ln_ah

    best = None
    for k0 in (0.1, 1.0, 10.0):
        for c0 in (0.3, 0.6):
            x0 = np.array([c0, math.log(k0), math.log(q_lo * 1.05)])
            sol = least_squares(resid, x0, bounds=(lower, upper), method="trf",
                                x_scale=np.array([0.1, 1.0, 0.1]), xtol=1e-12, ftol=1e-12, gtol=1e-12)
            if best is None or sol.cost < best.cost:
                best = sol
    c, lnk, lnq = best.x
    fitted = np.exp(_kibam_log_capacity(best.x, hours))
    rms = float(np.sqrt(np.mean((fitted / ah - 1.0) ** 2)))
    return Kibam(float(c), float(math.exp(lnk)), float(math.exp(lnq)), rms)


