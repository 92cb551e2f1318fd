"""Terminal voltage and charge efficiency of a lead-acid cell: the Copetti model.

Copetti, Lorenzo & Chenlo (1993) give, per cell and normalised to the 10-hour
capacity ``C10``, empirical expressions for the discharge voltage, the charge
voltage, the charge (coulombic) efficiency, the gassing-onset and
end-of-charge voltages and the capacity ratio. The expressions below are those
recorded in the project's docs/references.md, which were **recalled, not read from
the paper** ([memory]); tests that rely on them say "from memory".

Notation (all per cell): ``SOC`` state of charge [-], ``I`` current magnitude
[A], ``C10`` [Ah], ``I10 = C10/10`` [A], ``n = I/I10`` [-],
``ΔT = T − 25 °C``.

Scaling to a real battery
-------------------------
The Copetti coefficients describe the cells they were fitted to. The first
term of each overpotential bracket, ``4/(1+n^1.3)`` (discharge) and
``6/(1+n^0.86)`` (charge), depends on the current but not on the state of
charge; we read it as the model's ohmic-like term. At the 10-hour rate the
discharge one equals a resistance of ``R_model = 2/C10`` Ω per cell
(``(I/C10)·4/(1+1) = I·2/C10``), i.e. ``R_model·C10 = 2 Ω·Ah``. A real
battery's datasheet gives its own ohmic resistance ``R_cell`` (block
resistance ÷ cells per block), and lead-acid datasheets put ``R_cell·C10``
well below that (about 0.05–0.2 Ω·Ah; common practice, no source). We
therefore **scale** both rate terms by

``s = R_cell · C10 / (2 Ω·Ah)``

(:func:`rate_term_scale`). ``s = 1`` gives the published expressions
unchanged; a battery with a higher internal resistance gets a lower discharge
voltage and a higher charge voltage at the same current. The
state-of-charge terms (``0.27/SOC^1.5``, ``0.48/(1−SOC)^1.2``) and the
constants are kept as published. This is our own choice, not Copetti's; it is
a parameter of every voltage function.

Equilibrium voltage
-------------------
At zero current the discharge expression gives ``2.085 − 0.12 (1 − SOC)`` and
the charge expression ``2 + 0.16 SOC``; the model has no single open-circuit
voltage. benchbook takes the discharge branch at zero current as the
equilibrium (rest) voltage :func:`equilibrium_voltage`, and values stored
charge with it (:func:`stored_energy_wh`), so the simulation's energy balance
closes exactly. Both branches lie above it when charging and below it when
discharging, so every loss is positive.

Singular points: the discharge expression is taken at ``SOC >= SOC_FLOOR`` and
the charge expression at ``SOC <= SOC_CEILING`` (see the constants).
"""

from __future__ import annotations

import math

import numpy as np

from benchbook.errors import ModelError

#: Reference temperature of the Copetti expressions. [°C]
REFERENCE_TEMP_C = 25.0
#: ``R_model · C10`` of the Copetti discharge rate term at the 10-hour rate. [Ω·Ah]
COPETTI_RATE_TERM_OHM_AH = 2.0
#: Lowest SOC at which the discharge expression is evaluated (it diverges at 0). [-]
SOC_FLOOR = 1e-3
#: Highest SOC at which the charge expression is evaluated (it diverges at 1). [-]
SOC_CEILING = 1.0 - 1e-6
#: Equilibrium voltage per cell, ``E = E_EMPTY + E_SLOPE · SOC``. [V], [V]
E_EMPTY = 2.085 - 0.12
E_SLOPE = 0.12
#: Temperatures the model is evaluated at (its linear temperature factors stay positive). [°C]
TEMP_RANGE_C = (-40.0, 60.0)

_REF = (
    "O. Copetti, E. Lorenzo and F. Chenlo, \"A general battery model for PV system "
    "simulation\", Progress in Photovoltaics 1:283-292 (1993), doi:10.1002/pip.4670010405"
)


def _arr(x) -> np.ndarray:
    return np.asarray(x, dtype=float)


def _out(v):
    v = np.asarray(v, dtype=float)
    return float(v) if v.ndim == 0 else v


def _check_temp(temp_c) -> np.ndarray:
    t = _arr(temp_c)
    if not np.all(np.isfinite(t)) or np.any(t < TEMP_RANGE_C[0]) or np.any(t > TEMP_RANGE_C[1]):
        bad = t[~(np.isfinite(t) & (t >= TEMP_RANGE_C[0]) & (t <= TEMP_RANGE_C[1]))].ravel()[0]
        raise ModelError(f"battery temperature {bad!r} °C is outside the range the voltage model "
                         f"covers, {TEMP_RANGE_C[0]:g} to {TEMP_RANGE_C[1]:g} °C")
    return t


def _check_c10(c10_ah) -> np.ndarray:
    c = _arr(c10_ah)
    if not np.all(np.isfinite(c) & (c > 0)):
        raise ModelError(f"C10 must be a capacity above 0 Ah; found {c10_ah!r}")
    return c


def _n(current_a, c10_ah) -> tuple[np.ndarray, np.ndarray]:
    i = np.abs(_arr(current_a))
    c10 = _check_c10(c10_ah)
    return i, i / (c10 / 10.0)


def equilibrium_voltage(soc) -> float | np.ndarray:
    """Rest voltage per cell: the Copetti discharge expression at zero current. [V]

    ``E = 2.085 − 0.12 (1 − SOC)``.

    Parameters
    ----------
    soc : float or ndarray
        State of charge. [-]

    Returns
    -------
    float or ndarray
        Equilibrium voltage per cell. [V]

    References
    ----------
    O. Copetti, E. Lorenzo and F. Chenlo, Prog. Photovolt. 1:283-292 (1993),
    doi:10.1002/pip.4670010405, discharge voltage at I = 0 (from memory).
    """
    return _out(E_EMPTY + E_SLOPE * _arr(soc))


def stored_energy_wh(q_ah, q_max_ah) -> float | np.ndarray:
    """Energy stored per cell, the charge valued at the equilibrium voltage. [Wh]

    ``W(q) = ∫₀^q E(q'/q_max) dq' = E_EMPTY q + E_SLOPE q² / (2 q_max)``.

    Parameters
    ----------
    q_ah : float or ndarray
        Charge held, ``SOC × q_max``. [Ah]
    q_max_ah : float or ndarray
        Full charge. [Ah]

    Returns
    -------
    float or ndarray
        Stored energy per cell. [Wh]

    References
    ----------
    Integral of :func:`equilibrium_voltage` (Copetti et al. 1993,
    doi:10.1002/pip.4670010405, from memory).
    """
    q = _arr(q_ah)
    return _out(E_EMPTY * q + 0.5 * E_SLOPE * q * q / _arr(q_max_ah))


def rate_term_scale(internal_resistance_mohm_per_block: float, cells_per_block: int, c10_ah: float,
                    reference_ohm_ah: float = COPETTI_RATE_TERM_OHM_AH) -> float:
    """Scale of the Copetti rate terms for a real battery, ``s = R_cell C10 / R_ref``. [-]

    See the module notes: ``R_ref = 2 Ω·Ah`` is what the discharge rate term
    ``(I/C10) · 4/(1+n^1.3)`` amounts to at the 10-hour rate.

    Parameters
    ----------
    internal_resistance_mohm_per_block : float
        Ohmic resistance of one block, from the datasheet. [mΩ]
    cells_per_block : int
        Cells in series in the block. [-]
    c10_ah : float
        10-hour capacity. [Ah]
    reference_ohm_ah : float, optional
        ``R·C10`` of the unscaled model. [Ω·Ah]

    Returns
    -------
    float
        ``s`` [-]; 1 reproduces the published expressions.

    References
    ----------
    Normalisation of the Copetti model to C10: Copetti et al. 1993,
    doi:10.1002/pip.4670010405 (from memory); the scaling itself is
    benchbook's own documented choice.
    """
    vals = (internal_resistance_mohm_per_block, cells_per_block, c10_ah, reference_ohm_ah)
    if not all(isinstance(v, (int, float, np.integer, np.floating)) and math.isfinite(v) and v > 0 for v in vals):
        raise ModelError(f"rate_term_scale needs positive numbers; found {vals!r}")
    r_cell = internal_resistance_mohm_per_block * 1e-3 / cells_per_block
    return float(r_cell * c10_ah / reference_ohm_ah)


def copetti_capacity_ratio(current_a, c10_ah, temp_c=REFERENCE_TEMP_C) -> float | np.ndarray:
    """Capacity at a constant current and temperature, relative to C10. [-]

    ``C/C10 = 1.67 / (1 + 0.67 n^0.9) · (1 + 0.005 ΔT)``; 1 at the 10-hour
    rate and 25 °C.

    Parameters
    ----------
    current_a : float or ndarray
        Discharge current (magnitude). [A]
    c10_ah : float or ndarray
        10-hour capacity. [Ah]
    temp_c : float or ndarray
        Electrolyte temperature. [°C]

    Returns
    -------
    float or ndarray
        ``C/C10`` [-].

    References
    ----------
    O. Copetti, E. Lorenzo and F. Chenlo, "A general battery model for PV
    system simulation", Prog. Photovolt. 1:283-292 (1993),
    doi:10.1002/pip.4670010405, capacity expression (from memory).
    """
    _, n = _n(current_a, c10_ah)
    dt = _check_temp(temp_c) - REFERENCE_TEMP_C
    return _out(1.67 / (1.0 + 0.67 * n ** 0.9) * (1.0 + 0.005 * dt))


def copetti_discharge_voltage(soc, current_a, c10_ah, temp_c=REFERENCE_TEMP_C,
                              rate_scale=1.0) -> float | np.ndarray:
    """Cell voltage while discharging. [V]

    ``V = (2.085 − 0.12 (1 − SOC)) − (I/C10) (s·4/(1 + n^1.3) + 0.27/SOC^1.5 + 0.02) (1 − 0.007 ΔT)``,
    with ``SOC`` floored at :data:`SOC_FLOOR`; ``s = rate_scale`` (1 = as published).

    Parameters
    ----------
    soc : float or ndarray
        State of charge. [-]
    current_a : float or ndarray
        Discharge current of the string (magnitude). [A]
    c10_ah : float or ndarray
        10-hour capacity. [Ah]
    temp_c : float or ndarray
        Electrolyte temperature. [°C]
    rate_scale : float or ndarray
        Scale ``s`` of the rate term (:func:`rate_term_scale`). [-]

    Returns
    -------
    float or ndarray
        Terminal voltage per cell. [V]

    References
    ----------
    O. Copetti, E. Lorenzo and F. Chenlo, Prog. Photovolt. 1:283-292 (1993),
    doi:10.1002/pip.4670010405, discharge expression (from memory).
    """
    s = np.clip(_arr(soc), SOC_FLOOR, 1.0)
    i, n = _n(current_a, c10_ah)
    dt = _check_temp(temp_c) - REFERENCE_TEMP_C
    bracket = _arr(rate_scale) * 4.0 / (1.0 + n ** 1.3) + 0.27 / s ** 1.5 + 0.02
    return _out(E_EMPTY + E_SLOPE * s - i / _arr(c10_ah) * bracket * (1.0 - 0.007 * dt))


def copetti_charge_voltage(soc, current_a, c10_ah, temp_c=REFERENCE_TEMP_C,
                           rate_scale=1.0) -> float | np.ndarray:
    """Cell voltage while charging, before gassing. [V]

    ``V = (2 + 0.16 SOC) + (I/C10) (s·6/(1 + n^0.86) + 0.48/(1 − SOC)^1.2 + 0.036) (1 − 0.025 ΔT)``,
    with ``SOC`` capped at :data:`SOC_CEILING`; ``s = rate_scale`` (1 = as published).

    Parameters
    ----------
    soc : float or ndarray
        State of charge. [-]
    current_a : float or ndarray
        Charge current of the string (magnitude). [A]
    c10_ah : float or ndarray
        10-hour capacity. [Ah]
    temp_c : float or ndarray
        Electrolyte temperature. [°C]
    rate_scale : float or ndarray
        Scale ``s`` of the rate term (:func:`rate_term_scale`). [-]

    Returns
    -------
    float or ndarray
        Terminal voltage per cell. [V]

    References
    ----------
    O. Copetti, E. Lorenzo and F. Chenlo, Prog. Photovolt. 1:283-292 (1993),
    doi:10.1002/pip.4670010405, charge expression (from memory).
    """
    s = np.clip(_arr(soc), 0.0, SOC_CEILING)
    i, n = _n(current_a, c10_ah)
    dt = _check_temp(temp_c) - REFERENCE_TEMP_C
    bracket = _arr(rate_scale) * 6.0 / (1.0 + n ** 0.86) + 0.48 / (1.0 - s) ** 1.2 + 0.036
    return _out(2.0 + 0.16 * s + i / _arr(c10_ah) * bracket * (1.0 - 0.025 * dt))


def copetti_charge_efficiency(soc, current_a, c10_ah) -> float | np.ndarray:
    """Charge (coulombic) efficiency: the share of the charge current that is stored. [-]

    ``η = 1 − exp((20.73 / (n + 0.55)) (SOC − 1))``: close to 1 at low state
    of charge, falling to 0 at full charge, and lower at higher currents.

    Parameters
    ----------
    soc : float or ndarray
        State of charge, 0 to 1. [-]
    current_a : float or ndarray
        Charge current of the string (magnitude). [A]
    c10_ah : float or ndarray
        10-hour capacity. [Ah]

    Returns
    -------
    float or ndarray
        Charge efficiency [-].

    References
    ----------
    O. Copetti, E. Lorenzo and F. Chenlo, Prog. Photovolt. 1:283-292 (1993),
    doi:10.1002/pip.4670010405, charge efficiency (from memory).
    """
    s = np.clip(_arr(soc), 0.0, 1.0)
    _, n = _n(current_a, c10_ah)
    return _out(-np.expm1(20.73 / (n + 0.55) * (s - 1.0)))


def copetti_gassing_voltage(current_a, c10_ah, temp_c=REFERENCE_TEMP_C) -> float | np.ndarray:
    """Cell voltage at the onset of gassing while charging. [V]

    ``Vg = (2.24 + 1.97 ln(1 + I/C10)) (1 − 0.002 ΔT)``.

    Parameters
    ----------
    current_a : float or ndarray
        Charge current of the string (magnitude). [A]
    c10_ah : float or ndarray
        10-hour capacity. [Ah]
    temp_c : float or ndarray
        Electrolyte temperature. [°C]

    Returns
    -------
    float or ndarray
        Gassing voltage per cell. [V]

    References
    ----------
    O. Copetti, E. Lorenzo and F. Chenlo, Prog. Photovolt. 1:283-292 (1993),
    doi:10.1002/pip.4670010405, gassing voltage (from memory).
    """
    i, _ = _n(current_a, c10_ah)
    dt = _check_temp(temp_c) - REFERENCE_TEMP_C
    return _out((2.24 + 1.97 * np.log1p(i / _arr(c10_ah))) * (1.0 - 0.002 * dt))


def copetti_end_of_charge_voltage(current_a, c10_ah, temp_c=REFERENCE_TEMP_C) -> float | np.ndarray:
    """Cell voltage at the end of charge (full saturation). [V]

    ``Vec = (2.45 + 2.011 ln(1 + I/C10)) (1 − 0.002 ΔT)``.

    Parameters
    ----------
    current_a : float or ndarray
        Charge current of the string (magnitude). [A]
    c10_ah : float or ndarray
        10-hour capacity. [Ah]
    temp_c : float or ndarray
        Electrolyte temperature. [°C]

    Returns
    -------
    float or ndarray
        End-of-charge voltage per cell. [V]

    References
    ----------
    O. Copetti, E. Lorenzo and F. Chenlo, Prog. Photovolt. 1:283-292 (1993),
    doi:10.1002/pip.4670010405, end-of-charge voltage (from memory).
    """
    i, _ = _n(current_a, c10_ah)
    dt = _check_temp(temp_c) - REFERENCE_TEMP_C
    return _out((2.45 + 2.011 * np.log1p(i / _arr(c10_ah))) * (1.0 - 0.002 * dt))


def terminal_voltage(spec, series: int, soc, current_a, temp_c=REFERENCE_TEMP_C) -> float | np.ndarray:
    """Terminal voltage of one string of ``series`` blocks of ``spec``. [V]

    A positive current discharges (Copetti discharge expression), a negative
    one charges (charge expression); zero current gives the equilibrium
    voltage. The rate terms are scaled to the battery's internal resistance
    (:func:`rate_term_scale`).

    Parameters
    ----------
    spec : BatterySpec
        The battery.
    series : int
        Blocks in series. [-]
    soc : float or ndarray
        State of charge. [-]
    current_a : float or ndarray
        String current; > 0 discharges, < 0 charges. [A]
    temp_c : float or ndarray
        Electrolyte temperature. [°C]

    Returns
    -------
    float or ndarray
        String terminal voltage. [V]

    References
    ----------
    O. Copetti, E. Lorenzo and F. Chenlo, Prog. Photovolt. 1:283-292 (1993),
    doi:10.1002/pip.4670010405 (from memory).
    """
    cells = series * spec.cells_per_block
    c10 = spec.c10_ah
    s = rate_term_scale(spec.internal_resistance_mohm, spec.cells_per_block, c10)
    i = _arr(current_a)
    vd = copetti_discharge_voltage(soc, np.maximum(i, 0.0), c10, temp_c, s)
    vc = copetti_charge_voltage(soc, np.minimum(i, 0.0), c10, temp_c, s)
    v = np.where(i > 0, vd, np.where(i < 0, vc, equilibrium_voltage(np.clip(_arr(soc), 0.0, 1.0))))
    return _out(cells * v)
