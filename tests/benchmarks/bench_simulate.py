"""Benchmark: a full year of 1,000 bank options, vectorised engine against the scalar reference.

Run from the repository root::

    python tests/benchmarks/bench_simulate.py [--options 1000] [--sample 4] [--repeats 2]

Both engines run the full model (KiBaM, Copetti voltage and charge efficiency,
absorption taper, low-voltage disconnect, generator, self-discharge, daily
bookkeeping) on the same invented hourly year. The vectorised engine steps
all options at once; the scalar reference steps a sample of them one at a
time. Each is timed ``--repeats`` times, interleaved, and the best time is
kept, so both see the same machine load. The sampled options' totals are
checked equal between the engines before anything is printed.

The last line is JSON::

    {"benchmark": "simulate", "options": N, "steps": 8760, "vectorized_s": …,
     "scalar_s_per_option": …, "ratio": …}

``ratio`` = scalar seconds per option × options ÷ vectorised seconds: how
many times faster the vectorised engine runs the whole set than the scalar
reference would, one option after another. Targets: vectorised ≤ 2 s for
1,000 options, ratio ≥ 50.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time

sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..", "..")))


from benchbook.model.catalog import DEFAULT_CATALOG  # noqa: E402
from benchbook.model.job import Generator, Load  # noqa: E402
from benchbook.model.profiles import (Profile, load_profile_w, solar_profile_w,  # noqa: E402
                                      temperature_profile_c)
from benchbook.model.simulate import simulate, simulate_scalar  # noqa: E402
from benchbook.model.sizing import kibam_for  # noqa: E402


def _profile() -> Profile:
    """An invented off-grid site at 38° N: lights, refrigeration, a pump, a small workshop."""
    loads = [Load("lights", 240.0, 6.0), Load("refrigeration", 180.0, 24.0), Load("water pump", 750.0, 2.0),
             Load("workshop tools", 1200.0, 1.5), Load("radio", 40.0, 24.0)]
    load = load_profile_w(loads, inverter_efficiency=0.92)
    solar = solar_profile_w((7.0, 8.5, 10.5, 12.0, 13.0, 13.5, 13.8, 13.0, 11.5, 9.5, 7.5, 6.5), 38.0)
    temp = temperature_profile_c((9.0, 10.0, 13.0, 16.0, 20.0, 24.0, 27.0, 27.0, 24.0, 19.0, 14.0, 10.0))
    return Profile(load, solar, temp, 1.0)


def _options(n: int) -> list:
    """``n`` options over the catalog: 48 V strings, 1 to 8 in parallel."""
    out = []
    i = 0
    while len(out) < n:
        spec = DEFAULT_CATALOG[i % len(DEFAULT_CATALOG)]
        out.append((spec, int(48 // spec.block_voltage_v), 1 + (i // len(DEFAULT_CATALOG)) % 8))
        i += 1
    return out


def main(argv=None) -> dict:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--options", type=int, default=1000)
    ap.add_argument("--sample", type=int, default=4, help="options run through the scalar reference")
    ap.add_argument("--repeats", type=int, default=2)
    args = ap.parse_args(argv)

    prof = _profile()
    opts = _options(args.options)
    gen = Generator(start_soc=0.4, stop_soc=0.8, power_w=4000.0, fuel_cost_per_kwh=0.55)
    for spec in DEFAULT_CATALOG:
        kibam_for(spec)  # fit once, outside the timings
    step = max(1, len(opts) // args.sample)
    sample = list(range(0, len(opts), step))[: args.sample]

    vec_times, scalar_times = [], []
    res = None
    refs = {}
    for _ in range(args.repeats):
        t0 = time.perf_counter()
        res = simulate(opts, prof, 1.85, generator=gen)
        vec_times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        for i in sample:
            refs[i] = simulate_scalar(*opts[i], prof, 1.85, generator=gen)
        scalar_times.append((time.perf_counter() - t0) / len(sample))

    for i, ref in refs.items():
        for name in ("energy_in_kwh", "energy_out_kwh", "unserved_kwh", "generator_kwh", "losses_kwh"):
            a, b = float(getattr(res, name)[i]), float(getattr(ref, name)[0])
            if not abs(a - b) <= 1e-9 * max(1.0, abs(b)):
                raise SystemExit(f"engines disagree on option {i} {name}: {a!r} vs {b!r}")

    vec = min(vec_times)
    per = min(scalar_times)
    ratio = per * len(opts) / vec
    print(f"vectorised: {len(opts)} options x {prof.steps} steps in {vec:.3f} s (best of {args.repeats}: "
          + ", ".join(f"{t:.3f}" for t in vec_times) + ")")
    print(f"scalar reference: {per:.4f} s per option (best of {args.repeats}, {len(sample)} options each)")
    print(f"ratio (scalar per option x options / vectorised): {ratio:.1f}   targets: <= 2 s, >= 50x")
    print(f"load average: {os.getloadavg()[0]:.2f} on {os.cpu_count()} CPUs; engines agree on {len(refs)} options")
    out = {"benchmark": "simulate", "options": len(opts), "steps": prof.steps, "vectorized_s": round(vec, 4),
           "scalar_s_per_option": round(per, 5), "ratio": round(ratio, 2)}
    print(json.dumps(out))
    return out


if __name__ == "__main__":
    main()
