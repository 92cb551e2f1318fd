"""Routine readings of a bank on float: specific gravity, float voltage, temperature, ohmic values.

Pure checks over :class:`BlockReading` records. Every threshold is a field of
:class:`ReadingsCriteria`, with its default and where it comes from; the
trade's sources disagree on most of them, so each result records the
criteria and the specific-gravity convention that were used.

The block numbering ``S<string>-<position>`` lives here too, shared by both
kinds of field sheet; the bank a sheet is written for is
:class:`benchbook.model.fieldbank.FieldBank`.

Findings come back with ``subject`` = block id and ``field`` = the
:class:`BlockReading` field, for the sheet layer to place on a cell.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional, Sequence

import numpy as np

from benchbook.errors import ModelError
from benchbook.model.criteria import check_thresholds, threshold
from benchbook.model.findings import Finding

#: Specific-gravity temperature conventions: reference temperature [°C] and
#: correction per °C [1/°C].
SG_CONVENTIONS: dict[str, tuple[float, float]] = {
    "ieee": (25.0, 0.001 / (3 * 5 / 9)),       # +0.001 per 3 °F from 77 °F (from memory)
    "manual-80f": ((80 - 32) * 5 / 9, 0.004 / (10 * 5 / 9)),  # +0.004 per 10 °F from 80 °F (text)
    "ref-20c": (20.0, 0.0007),                 # +0.0007 per °C from 20 °C (text)
}

OHMIC_KINDS = ("resistance", "conductance")


def block_ids_for(series: int, parallel: int) -> tuple[str, ...]:
    """Block ids ``S1-01``, ``S1-02``, … string by string (``S<string>-<position>``)."""
    width = max(2, len(str(series)))
    return tuple(f"S{s}-{p:0{width}d}" for s in range(1, parallel + 1) for p in range(1, series + 1))


def parse_block_id(block_id: str) -> tuple[int, int]:
    """``"S2-07"`` → ``(2, 7)``; raises :class:`ModelError` for anything else."""
    text = str(block_id).strip().upper()
    if text.startswith("S") and "-" in text:
        s, _, p = text[1:].partition("-")
        if s.isdigit() and p.isdigit() and int(s) >= 1 and int(p) >= 1:
            return int(s), int(p)
    raise ModelError(f"block id: found {block_id!r}; expected S<string>-<position>, e.g. S1-01")


def strings_of(block_ids: Sequence[str]) -> dict[int, list[int]]:
    """Indices of ``block_ids`` grouped by string number."""
    out: dict[int, list[int]] = {}
    for j, b in enumerate(block_ids):
        out.setdefault(parse_block_id(b)[0], []).append(j)
    return out


def printed_order(labelled: Sequence[tuple[int, int]]) -> list[tuple[int, int]]:
    """The rows of a pre-printed block table whose labels still stand where they were printed.

    A field sheet prints one row per block, in the order of :func:`block_ids_for`;
    crews may insert or delete rows, which shifts the rows but keeps that order.
    ``labelled`` holds ``(row, k)`` in row order: a row and the position ``k``
    of its label in the printed order (repeats of a label are left out: only
    its first row counts). The rows kept are the longest run that keeps the
    printed order (longest strictly increasing subsequence, patience method;
    Knuth, TAOCP vol. 3, 5.1.4 [text]), less any row whose offset ``row - k``
    differs from both neighbours' when those agree (a single relabelled row; common
    practice, no source).

    Returns
    -------
    list of (row, k)
        The anchors, in row order.
    """
    import bisect  # noqa: PLC0415

    seen: set[int] = set()
    items = [(r, k) for r, k in labelled if not (k in seen or seen.add(k))]
    tails: list[int] = []
    tails_i: list[int] = []
    prev: list[Optional[int]] = [None] * len(items)
    for i, (_, k) in enumerate(items):
        pos = bisect.bisect_left(tails, k)
        if pos == len(tails):
            tails.append(k)
            tails_i.append(i)
        else:
            tails[pos], tails_i[pos] = k, i
        prev[i] = tails_i[pos - 1] if pos else None
    chain: list[tuple[int, int]] = []
    i = tails_i[-1] if tails_i else None
    while i is not None:
        chain.append(items[i])
        i = prev[i]
    chain.reverse()
    off = [r - k for r, k in chain]
    return [a for j, a in enumerate(chain)
            if not (0 < j < len(chain) - 1 and off[j - 1] == off[j + 1] != off[j])]


def printed_position(anchors: Sequence[tuple[int, int]], *, row: Optional[int] = None,
                     k: Optional[int] = None) -> Optional[int]:
    """From the anchors of :func:`printed_order`: the printed position ``k`` of ``row``, or the row of ``k``.

    Counted from the nearest anchor on each side; ``None`` when the two sides
    disagree (rows were inserted or deleted between them) or there is no anchor.
    """
    if (row is None) == (k is None):
        raise ModelError("printed_position needs exactly one of row and k")
    i_key = 0 if row is not None else 1
    x = row if row is not None else k
    before = [a for a in anchors if a[i_key] < x]
    after = [a for a in anchors if a[i_key] > x]
    guesses = set()
    if before:
        r0, k0 = before[-1]
        guesses.add(k0 + (x - r0) if row is not None else r0 + (x - k0))
    if after:
        r1, k1 = after[0]
        guesses.add(k1 - (r1 - x) if row is not None else r1 - (k1 - x))
    return guesses.pop() if len(guesses) == 1 else None


def sg_reference_temp_c(convention: str = "ieee") -> float:
    """Reference temperature of a specific-gravity convention. [°C]"""
    if convention not in SG_CONVENTIONS:
        raise ModelError(f"convention: found {convention!r}; expected one of {', '.join(SG_CONVENTIONS)}")
    return SG_CONVENTIONS[convention][0]


def sg_corrected(sg: float | np.ndarray, temp_c: float | np.ndarray, convention: str = "ieee") -> float | np.ndarray:
    """Specific gravity corrected to the reference temperature of a convention.

    Electrolyte expands as it warms, so a hydrometer reads low when warm; the
    correction adds to a reading taken above the reference temperature and
    subtracts below it.

    * ``"ieee"``: +0.001 per 3 °F (1.667 °C) above 25 °C (77 °F) (from memory).
    * ``"manual-80f"``: +0.004 per 10 °F above 80 °F (26.7 °C) (text, manuals).
    * ``"ref-20c"``: ``SG_20 = SG_t + 0.0007 (t - 20 °C)`` (text, manuals).

    Parameters
    ----------
    sg : float or ndarray
        Specific gravity as read, e.g. 1.215. [-]
    temp_c : float or ndarray
        Electrolyte temperature of the same cell. [°C]
    convention : str
        ``"ieee"``, ``"manual-80f"`` or ``"ref-20c"``.

    Returns
    -------
    float or ndarray
        Corrected specific gravity. [-]

    References
    ----------
    IEEE Std 450, specific-gravity temperature correction (from memory).
    Service and operating manuals (+0.004 per 10 °F from 80 °F, e.g. US Army
    TM 5-4210-230-14&P-1; +0.0007 per °C from 20 °C) [text]; their printed
    worked numbers are listed in ``docs/references.md`` and tested.
    """
    ref, per_c = SG_CONVENTIONS[convention] if convention in SG_CONVENTIONS else (None, None)
    if ref is None:
        raise ModelError(f"convention: found {convention!r}; expected one of {', '.join(SG_CONVENTIONS)}")
    out = np.asarray(sg, dtype=float) + per_c * (np.asarray(temp_c, dtype=float) - ref)
    return float(out) if out.ndim == 0 else out


@dataclass(frozen=True)
class BlockReading:
    """One block's readings; NaN (or ``""``) where not taken.

    Parameters
    ----------
    block_id : str
        ``S<string>-<position>``, e.g. ``"S1-03"``.
    float_voltage_v : float
        Block voltage on float. [V]
    specific_gravity : float
        Hydrometer reading, uncorrected (flooded cells only). [-]
    temp_c : float
        Block (or electrolyte) temperature. [°C]
    ohmic_value : float
        Internal resistance [mΩ] or conductance [S], per the set's ``ohmic_kind``.
    connection_uohm : float
        Resistance of the inter-block connection after this block. [µΩ]
    electrolyte_level : str
        ``"ok"``, ``"low"``, ``"high"`` or ``""``.
    remarks : str
        Free text.
    """

    block_id: str
    float_voltage_v: float = float("nan")
    specific_gravity: float = float("nan")
    temp_c: float = float("nan")
    ohmic_value: float = float("nan")
    connection_uohm: float = float("nan")
    electrolyte_level: str = ""
    remarks: str = ""

    @property
    def string(self) -> int:
        """String number from the block id. [-]"""
        return parse_block_id(self.block_id)[0]


@dataclass(frozen=True)
class ReadingsCriteria:
    """Thresholds for routine readings; sources disagree, so each is a parameter.

    Parameters
    ----------
    sg_below_mean : float
        Equalize when a cell's corrected SG is more than this below the bank
        mean (common practice, no source; 0.010). [-]
    min_float_v_per_cell : float
        Equalize when a block floats below this per cell (common practice, no
        source; 2.13 V). [V/cell]
    float_deviation_v_per_cell : float
        Flag a block whose float voltage per cell differs from its string's
        mean by more than this (common practice, no source; 0.05 V). [V/cell]
    sg_spread : float
        Flag a bank whose corrected SG spread (max − min) exceeds this
        (common practice, no source; manuals give 0.025–0.050). [-]
    temp_spread_c : float
        Flag a cell-to-cell temperature spread above this (common practice,
        no source; 3 °C / 5 °F). [°C]
    above_ambient_c : float
        A block this much above ambient warns of thermal runaway (common
        practice, no source; 10 °C). [°C]
    ohmic_rise : float
        Flag an ohmic reading this fraction or more above its own baseline
        (resistance terms; common practice, no source; 20 %). [-]
    ohmic_above_mean : float
        With no baseline, flag a block this fraction above the bank mean in
        resistance terms (common practice, no source; 30 %). [-]
    connection_above_mean : float
        Flag a connection more than this fraction above the average (common
        practice, no source; 20 %). [-]
    """

    sg_below_mean: float = threshold(0.010, low=0, high=0.2, low_open=True, metavar='SG',
                                  what="equalize when a cell's corrected SG is more than this below the mean",
                                  source='common practice')
    min_float_v_per_cell: float = threshold(
        2.13, low=1.8, high=2.6, metavar="V", source="common practice",
        what="equalize when a block floats below this [V/cell]")
    float_deviation_v_per_cell: float = threshold(0.05, low=0, high=0.5, low_open=True, metavar='V',
                                  what="flag a float voltage this far from its string's mean [V/cell]",
                                  source='common practice')
    sg_spread: float = threshold(
        0.030, low=0, high=0.2, low_open=True, metavar="SG", source="common practice; manuals give 0.025-0.050",
        what="flag a corrected-SG spread (max - min) above this")
    temp_spread_c: float = threshold(
        3.0, low=0, high=30, low_open=True, metavar="C", source="common practice",
        what="flag a cell-to-cell temperature spread above this [°C]")
    above_ambient_c: float = threshold(
        10.0, low=0, high=50, low_open=True, metavar="C", source="common practice",
        what="a block this much above ambient warns of thermal runaway [°C]")
    ohmic_rise: float = threshold(
        0.20, low=0, high=5, low_open=True, metavar="F", source="common practice",
        what="flag an ohmic value this fraction above its baseline (0.2 = 20 %)")
    ohmic_above_mean: float = threshold(
        0.30, low=0, high=5, low_open=True, metavar="F", source="common practice",
        what="with no baseline, flag an ohmic value this fraction above the bank mean")
    connection_above_mean: float = threshold(
        0.20, low=0, high=5, low_open=True, metavar="F", source="common practice",
        what="flag a connection resistance this fraction above the average")

    def __post_init__(self) -> None:
        check_thresholds(self)


@dataclass(frozen=True)
class ReadingsResult:
    """Readings judged block by block and for the bank.

    Parameters
    ----------
    block_ids : tuple of str
        Blocks, in input order.
    v_per_cell, deviation_v_per_cell : tuple of float
        Float voltage per cell and its deviation from the string mean. [V/cell]
    sg_corrected : tuple of float
        SG at the convention's reference temperature. [-]
    sg_mean, sg_spread : float
        Bank mean and spread (max − min) of the corrected SG; NaN without SG. [-]
    temp_spread_c : float
        Hottest minus coolest block. [°C]
    ohmic_rise : tuple of float
        Rise over baseline in resistance terms (NaN without baseline). [-]
    connection_ratio : tuple of float
        Connection resistance ÷ the average. [-]
    equalize : tuple of str
        Blocks for which an equalize charge is recommended.
    sg_convention : str
        Convention used for SG.
    sg_reference_c : float
        Its reference temperature. [°C]
    ohmic_kind : str
        ``"resistance"`` [mΩ] or ``"conductance"`` [S].
    criteria : ReadingsCriteria
        Thresholds used.
    findings : tuple of Finding
        Everything found, cells not yet placed.
    """

    block_ids: tuple[str, ...]
    v_per_cell: tuple[float, ...]
    deviation_v_per_cell: tuple[float, ...]
    sg_corrected: tuple[float, ...]
    sg_mean: float
    sg_spread: float
    temp_spread_c: float
    ohmic_rise: tuple[float, ...]
    connection_ratio: tuple[float, ...]
    equalize: tuple[str, ...]
    sg_convention: str
    sg_reference_c: float
    ohmic_kind: str
    criteria: ReadingsCriteria
    findings: tuple[Finding, ...] = field(default_factory=tuple)


def _col(blocks: Sequence[BlockReading], name: str) -> np.ndarray:
    return np.array([getattr(b, name) for b in blocks], dtype=float)


def resistance_terms(values: np.ndarray, kind: str) -> np.ndarray:
    """Ohmic readings as resistance-like numbers: resistance as is, conductance as ``1/G``.

    A 20 % rise in resistance is a fall of conductance to ``1/1.2`` (83 %) of
    its baseline; comparing in resistance terms keeps one threshold for both
    kinds of instrument (conductance is the reciprocal of resistance).
    """
    v = np.asarray(values, dtype=float)
    if kind == "resistance":
        return v
    if kind == "conductance":
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(v > 0, 1.0 / v, np.nan)
    raise ModelError(f"ohmic_kind: found {kind!r}; expected one of {', '.join(OHMIC_KINDS)}")


def check_readings(blocks: Sequence[BlockReading], *, cells_per_block: int, chemistry: str,
                   ohmic_kind: str = "resistance", ambient_temp_c: Optional[float] = None,
                   on_float: Optional[bool] = True, water_added: Optional[bool] = False,
                   baseline: Optional[Sequence[BlockReading]] = None, sg_convention: str = "ieee",
                   criteria: ReadingsCriteria = ReadingsCriteria()) -> ReadingsResult:
    """Check one set of routine readings; recommend equalize where the criteria say so.

    Checks: float voltage per cell against the string mean and the equalize
    floor; corrected SG against the bank mean (equalize) and its spread;
    temperature spread and blocks above ambient; ohmic values against their
    baseline (or, without one, the bank mean); connection resistance against
    the average. SG is used only for flooded cells, and only when no water
    was added before reading it.

    Parameters
    ----------
    blocks : sequence of BlockReading
        This set of readings.
    cells_per_block : int
        Cells in each block. [-]
    chemistry : str
        ``"flooded"``, ``"agm"`` or ``"gel"``.
    ohmic_kind : str
        ``"resistance"`` [mΩ] or ``"conductance"`` [S].
    ambient_temp_c : float, optional
        Room temperature. [°C]
    on_float : bool, optional
        Whether the bank was on float; voltage checks need it.
    water_added : bool, optional
        Whether water was added before the SG readings.
    baseline : sequence of BlockReading, optional
        An earlier set of the same bank, matched by block id.
    sg_convention : str
        See :func:`sg_corrected`.
    criteria : ReadingsCriteria
        Thresholds.

    Returns
    -------
    ReadingsResult

    References
    ----------
    IEEE Std 450, inspections and corrective actions (from memory); IEEE Std
    1188 (VRLA), ohmic measurements against baseline (from memory); thresholds
    are common practice, no source (see :class:`ReadingsCriteria`).
    """
    cr = criteria
    if not blocks:
        raise ModelError("check_readings needs at least one block")
    if not (isinstance(cells_per_block, int) and cells_per_block >= 1):
        raise ModelError(f"cells_per_block: found {cells_per_block!r}; expected a whole number of 1 or more")
    ref_c = sg_reference_temp_c(sg_convention)
    ids = tuple(b.block_id for b in blocks)
    out: list[Finding] = []
    fl = lambda j, sev, msg, code, fld: out.append(Finding("", sev, msg, code, ids[j], fld, j))  # noqa: E731

    # float voltage
    vpc = _col(blocks, "float_voltage_v") / cells_per_block
    dev = np.full(len(blocks), np.nan)
    equalize: set[int] = set()
    if on_float is False:
        out.append(Finding("", "info", "The bank was not on float: float-voltage checks were skipped.",
                           "not-on-float", "bank", "on_float"))
    else:
        strings: dict[int, list[int]] = {}
        for j, b in enumerate(blocks):
            strings.setdefault(b.string, []).append(j)
        for idx in strings.values():
            v = vpc[idx]
            if np.isfinite(v).sum() >= 2:
                dev[idx] = v - np.nanmean(v)
        for j in range(len(blocks)):
            if math.isfinite(dev[j]) and abs(dev[j]) > cr.float_deviation_v_per_cell:
                fl(j, "warning", f"Block {ids[j]} floats at {vpc[j]:.3f} V/cell, {dev[j]:+.3f} V/cell from its string's "
                   f"mean (limit ±{cr.float_deviation_v_per_cell:g}).", "float-deviation", "float_voltage_v")
            if math.isfinite(vpc[j]) and vpc[j] < cr.min_float_v_per_cell:
                equalize.add(j)
                fl(j, "warning", f"Block {ids[j]} floats at {vpc[j]:.3f} V/cell, below {cr.min_float_v_per_cell:g} V/cell: "
                   "give it (or the string) an equalize charge and re-read.", "equalize-low-float", "float_voltage_v")

    # specific gravity
    sgc = np.full(len(blocks), np.nan)
    sg_raw = _col(blocks, "specific_gravity")
    sg_mean = sg_spread = float("nan")
    if np.isfinite(sg_raw).any():
        if chemistry != "flooded":
            out.append(Finding("", "warning", f"Specific gravity was entered for {chemistry} (valve-regulated) "
                               "blocks, which cannot be read; the values were ignored.", "sg-not-flooded",
                               "bank", "specific_gravity"))
        elif water_added:
            out.append(Finding("", "warning", "Water was added before the specific-gravity readings: they read low "
                               "until a charge mixes the electrolyte, so they were not judged. Read SG again after "
                               "the next equalize.", "sg-after-water", "bank", "water_added"))
        else:
            temps = _col(blocks, "temp_c")
            t_use = np.where(np.isfinite(temps), temps, ambient_temp_c if ambient_temp_c is not None else np.nan)
            sgc = np.asarray(sg_corrected(sg_raw, t_use, sg_convention), dtype=float)
            ok = np.isfinite(sgc)
            if ok.any():
                sg_mean = float(np.mean(sgc[ok]))
                sg_spread = float(np.max(sgc[ok]) - np.min(sgc[ok]))
                out.append(Finding("", "info", f"Specific gravity corrected to {ref_c:g} °C by the "
                                   f"'{sg_convention}' convention: mean {sg_mean:.3f}, spread {sg_spread:.3f}.",
                                   "sg-convention", "bank", "specific_gravity"))
                for j in np.flatnonzero(ok & (sgc < sg_mean - cr.sg_below_mean)):
                    equalize.add(int(j))
                    fl(int(j), "warning", f"Block {ids[j]}: corrected SG {sgc[j]:.3f} is {sg_mean - sgc[j]:.3f} below the "
                       f"bank mean {sg_mean:.3f} (limit {cr.sg_below_mean:g}): equalize.", "equalize-low-sg",
                       "specific_gravity")
                if sg_spread > cr.sg_spread:
                    out.append(Finding("", "warning", f"Corrected SG spread {sg_spread:.3f} exceeds {cr.sg_spread:g}: "
                                       "equalize the bank and re-read.", "sg-spread", "bank", "specific_gravity"))
            if np.isfinite(sg_raw).any() and not np.isfinite(t_use[np.isfinite(sg_raw)]).all():
                out.append(Finding("", "warning", "Some SG readings have no temperature and no ambient temperature "
                                   "was given, so they could not be corrected.", "sg-no-temperature",
                                   "bank", "temp_c"))

    # temperature
    temps = _col(blocks, "temp_c")
    tspread = float(np.nanmax(temps) - np.nanmin(temps)) if np.isfinite(temps).sum() >= 2 else float("nan")
    if math.isfinite(tspread) and tspread > cr.temp_spread_c:
        j_hot = int(np.nanargmax(temps))
        out.append(Finding("", "warning", f"Temperatures spread {tspread:.1f} °C across the bank (limit "
                           f"{cr.temp_spread_c:g} °C); hottest is {ids[j_hot]} at {temps[j_hot]:g} °C. Check ventilation "
                           "and the blocks' connections.", "temperature-spread", ids[j_hot], "temp_c", j_hot))
    if ambient_temp_c is not None and math.isfinite(ambient_temp_c):
        for j in np.flatnonzero(np.isfinite(temps) & (temps > ambient_temp_c + cr.above_ambient_c)):
            fl(int(j), "error", f"Block {ids[j]} is at {temps[j]:g} °C, {temps[j] - ambient_temp_c:.1f} °C above the "
               f"{ambient_temp_c:g} °C ambient (limit {cr.above_ambient_c:g} °C): a warning of thermal runaway. Check "
               "the float current and charger at once, following the maker's and site procedures.",
               "above-ambient", "temp_c")

    # ohmic values
    r_now = resistance_terms(_col(blocks, "ohmic_value"), ohmic_kind)
    rise = np.full(len(blocks), np.nan)
    unit = "mΩ" if ohmic_kind == "resistance" else "S"
    if baseline:
        base = {b.block_id: b for b in baseline}
        for j, b in enumerate(blocks):
            b0 = base.get(b.block_id)
            if b0 is None:
                continue
            r0 = float(resistance_terms(np.array([b0.ohmic_value]), ohmic_kind)[0])
            if math.isfinite(r0) and r0 > 0 and math.isfinite(r_now[j]):
                rise[j] = r_now[j] / r0 - 1.0
                if rise[j] >= cr.ohmic_rise:
                    fl(j, "warning", f"Block {ids[j]}: ohmic value {b.ohmic_value:g} {unit} against a baseline of "
                       f"{b0.ohmic_value:g} {unit}, a rise of {rise[j]:.0%} in resistance terms (limit "
                       f"{cr.ohmic_rise:.0%}): capacity-test or replace it.", "ohmic-rise", "ohmic_value")
    elif np.isfinite(r_now).sum() >= 3:
        mean_r = float(np.nanmean(r_now))
        for j in np.flatnonzero(np.isfinite(r_now) & (r_now > mean_r * (1 + cr.ohmic_above_mean))):
            fl(int(j), "warning", f"Block {ids[j]}: ohmic value {blocks[j].ohmic_value:g} {unit} is "
               f"{r_now[j] / mean_r - 1:.0%} worse than the bank mean in resistance terms (limit "
               f"{cr.ohmic_above_mean:.0%}); record a baseline to track it.", "ohmic-above-mean", "ohmic_value")

    # connections
    conn = _col(blocks, "connection_uohm")
    ratio = np.full(len(blocks), np.nan)
    if np.isfinite(conn).sum() >= 2:
        mean_c = float(np.nanmean(conn))
        ratio = conn / mean_c
        for j in np.flatnonzero(np.isfinite(ratio) & (ratio > 1 + cr.connection_above_mean)):
            fl(int(j), "warning", f"Connection after block {ids[j]}: {conn[j]:g} µΩ is {ratio[j] - 1:.0%} above the "
               f"average {mean_c:.1f} µΩ (limit {cr.connection_above_mean:.0%}): clean and re-torque it, then "
               "re-measure.", "connection-high", "connection_uohm")

    for j, b in enumerate(blocks):
        if b.electrolyte_level == "low":
            fl(j, "warning", f"Block {ids[j]}: electrolyte level low; top up with approved water after charging, "
               "not before SG readings.", "electrolyte-low", "electrolyte_level")
    if equalize:
        names = ", ".join(ids[j] for j in sorted(equalize))
        out.append(Finding("", "warning", f"Equalize charge recommended for: {names} (follow the maker's voltage and "
                           "time, and ventilate: equalizing gasses hydrogen).", "equalize", "bank", ""))
    return ReadingsResult(ids, tuple(map(float, vpc)), tuple(map(float, dev)), tuple(map(float, sgc)), sg_mean,
                          sg_spread, tspread, tuple(map(float, rise)), tuple(map(float, ratio)),
                          tuple(ids[j] for j in sorted(equalize)), sg_convention, ref_c, ohmic_kind, cr, tuple(out))
