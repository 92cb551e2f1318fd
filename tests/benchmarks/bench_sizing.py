"""Benchmark: vectorised option scoring against a plain-Python loop, side by side in one run.

The candidates are every (battery × P strings) pair of a catalog made by tiling
the illustrative catalog with perturbed copies: each copy scales the capacities
by ``s`` and the durations by ``tau``. Such a copy's KiBaM fit is exactly the
base fit with ``q_max × s`` and ``k / tau`` (the KiBaM capacity formula depends
on ``k T`` only), so no copy needs a fit of its own. Both paths do the same
arithmetic (KiBaM runtime at the string current, the cap at the longest rating,
the autonomy check, the smallest P per battery) and must give the same answers.

Run: ``python tests/benchmarks/bench_sizing.py [candidates]`` (default 10,000).
The last line printed is JSON:
``{"benchmark": "sizing", "candidates": N, "vectorized_s": ..., "loop_s": ..., "ratio": ...}``.
Timings are never asserted in tests.
"""

from __future__ import annotations

import json
import math
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from benchbook.model.catalog import DEFAULT_CATALOG  # noqa: E402
from benchbook.model.options import candidate_grid, first_enough, score_autonomy  # noqa: E402
from benchbook.model.rate import Kibam  # noqa: E402
from benchbook.model.sizing import MEET_RTOL, kibam_fit_rows, kibam_for, string_capacity_ah  # noqa: E402

MAX_PARALLEL = 8


def tiled_catalog(n_batteries: int, seed: int = 485) -> dict[str, np.ndarray]:
    """Per-battery arrays for ``n_batteries`` perturbed copies of the illustrative catalog."""
    rng = np.random.default_rng(seed)
    base = list(DEFAULT_CATALOG)
    fits = [kibam_for(s) for s in base]
    pick = np.arange(n_batteries) % len(base)
    s = rng.uniform(0.5, 3.0, n_batteries)
    tau = rng.uniform(0.8, 1.25, n_batteries)
    return {
        "c": np.array([fits[i].c for i in pick]),
        "k": np.array([fits[i].k_per_h for i in pick]) / tau,
        "q": np.array([fits[i].q_max_ah for i in pick]) * s,
        "ceiling": np.array([base[i].rate_table[-1][1] for i in pick]) * s,
        "longest": np.array([base[i].rate_table[-1][0] for i in pick]) * tau,
        "shortest": np.array([kibam_fit_rows(base[i])[0][0] for i in pick]) * tau,
    }


def vectorised(cat: dict[str, np.ndarray], bank_current_a: float, required_ah: float):
    grid = candidate_grid(len(cat["c"]), MAX_PARALLEL)
    kb = Kibam(cat["c"], cat["k"], cat["q"])
    sc = score_autonomy(kb, cat["ceiling"], cat["longest"], cat["shortest"], grid,
                        bank_current_a=bank_current_a, required_ah=required_ah)
    idx, reached = first_enough(grid, sc.enough)
    return grid.parallel[idx], sc.bank_capacity_ah[idx], reached, sc.bank_capacity_ah


def loop(cat: dict[str, np.ndarray], bank_current_a: float, required_ah: float):
    chosen_p, chosen_cap, reached, all_caps = [], [], [], []
    for b in range(len(cat["c"])):
        kb = Kibam(float(cat["c"][b]), float(cat["k"][b]), float(cat["q"][b]))
        ceiling = float(cat["ceiling"][b])
        best = None
        for p in range(1, MAX_PARALLEL + 1):
            cap, _ = string_capacity_ah(kb, bank_current_a / p, ceiling)
            bank = p * cap
            all_caps.append(bank)
            if best is None and bank >= required_ah * (1 - MEET_RTOL):
                best = (p, bank)
        reached.append(best is not None)
        if best is None:
            best = (MAX_PARALLEL, all_caps[-1])
        chosen_p.append(best[0])
        chosen_cap.append(best[1])
    return np.array(chosen_p), np.array(chosen_cap), np.array(reached), np.array(all_caps)


def main(argv: list[str]) -> int:
    n_candidates = int(argv[1]) if len(argv) > 1 else 10_000
    n_batteries = math.ceil(n_candidates / MAX_PARALLEL)
    cat = tiled_catalog(n_batteries)
    # Invented load: 48 V bank, 4.8 kWh/day DC (100 Ah/day), 3 days, DoD 0.5, temp 1.11, margin 1.1, aging 1.25.
    current = 100.0 / 24.0
    required = 100.0 * 3 / 0.5 * 1.11 * 1.1 * 1.25
    vectorised(tiled_catalog(len(DEFAULT_CATALOG)), current, required)  # warm-up (imports, caches)

    t0 = time.perf_counter()
    v = vectorised(cat, current, required)
    t_vec = time.perf_counter() - t0
    t0 = time.perf_counter()
    lp = loop(cat, current, required)
    t_loop = time.perf_counter() - t0

    same_p = bool(np.array_equal(v[0], lp[0]))
    same_reached = bool(np.array_equal(v[2], lp[2]))
    worst = max(float(np.max(np.abs(v[3] / lp[3] - 1.0))), float(np.max(np.abs(v[1] / lp[1] - 1.0))))
    n = n_batteries * MAX_PARALLEL
    print(f"candidates            {n:>12,d}  ({n_batteries} batteries × P = 1..{MAX_PARALLEL})")
    print(f"vectorised            {t_vec:>12.4f} s")
    print(f"plain-Python loop     {t_loop:>12.4f} s")
    print(f"loop / vectorised     {t_loop / t_vec:>12.1f} ×")
    print(f"same chosen P         {same_p!s:>12}   same reached {same_reached}")
    print(f"largest capacity diff {worst:>12.2e} (relative)")
    print(f"strings chosen        {np.bincount(v[0], minlength=MAX_PARALLEL + 1)[1:].tolist()} for P = 1..{MAX_PARALLEL}")
    if not (same_p and same_reached and worst < 1e-12):
        print("MISMATCH between the vectorised and the loop results", file=sys.stderr)
        return 1
    print(json.dumps({"benchmark": "sizing", "candidates": n, "vectorized_s": round(t_vec, 6),
                      "loop_s": round(t_loop, 6), "ratio": round(t_loop / t_vec, 2)}))
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
