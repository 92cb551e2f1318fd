"""The docs say what the code does: commands, --help texts, the template contract, the CI command."""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _make_docs():
    spec = importlib.util.spec_from_file_location("make_docs", ROOT / "docs" / "make_docs.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_readme_has_every_command_with_its_help_text():
    docs = _make_docs()
    assert docs.readme_with_commands(README) == README, "run: python docs/make_docs.py"
    from benchbook.cli import build_parser

    act = next(a for a in build_parser()._actions if a.dest == "command")
    for name in act.choices:
        assert f"### `benchbook {name}`" in README
        assert f"usage: benchbook {name}" in README


def test_every_defined_name_and_header_is_documented():
    from benchbook.sheets import names as N

    doc = (ROOT / "docs" / "template-contract.md").read_text(encoding="utf-8")
    assert doc == _make_docs().contract_doc(), "run: python docs/make_docs.py"
    for kind, c in N.CONTRACTS.items():
        for spec in c.names:
            assert f"`{spec.name}`" in doc, spec.name
        for table in c.tables:
            assert table.name in doc
            for h in table.header_texts:
                assert h in doc, (table.name, h)


def test_readme_order_and_the_two_setup_commands():
    heads = re.findall(r"^## (.+)$", README, flags=re.M)
    assert heads[0] == "Quick start"
    assert README.index("benchbook") < README.index("## Quick start")  # the job paragraph comes first
    quick = README[README.index("## Quick start"):README.index(heads[1])]
    assert "python -m pip install . && benchbook demo demo-out/" in quick
    assert "python -m pip install '.[test]' && python -m pytest" in quick
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert "python -m pip install '.[test]' && python -m pytest" in ci
    for section in ("Safety", "Input safety", "Benchmarks", "The models, with references",
                    "Limits of the models: when to trust the datasheet"):
        assert section in heads, section


def test_readme_pictures_exist():
    for rel in re.findall(r"\]\((docs/img/[^)]+\.png)\)", README):
        assert (ROOT / rel).is_file(), rel


def _bullet(start: str) -> str:
    i = README.index(start)
    return README[i:README.index("\n", i)]


def _demo_job(name: str):
    """A demo job, as `benchbook demo` builds it; the shipped sample is the same job."""
    from benchbook.sheets.intake import read_job
    from benchbook.sheets.report import evaluate_job

    job, evaluated = evaluate_job(ROOT / "samples" / name)
    return job, evaluated, read_job


def test_the_samples_are_the_demos_jobs(tmp_path):
    from benchbook.sheets.intake import read_job
    from benchbook.sheets.make_templates import build_offgrid_sample, build_telecom_sample
    from benchbook.sheets.names import template_path

    for build, name in ((build_telecom_sample, "telecom-48v.xlsx"), (build_offgrid_sample, "offgrid-cabin.xlsx")):
        wb = build(template_path("intake"))
        wb.save(tmp_path / name)
        assert read_job(tmp_path / name) == read_job(ROOT / "samples" / name), name


def test_readme_rule_of_thumb_figures_are_the_demos():
    """Every rate and efficiency figure of 'What benchbook tells you…' recomputed from the demo's standby job.

    The figures illustrate the models (KiBaM, Manwell & McGowan 1993; Peukert 1897; Copetti, Lorenzo &
    Chenlo 1993); the models themselves are checked against their sources in their own test files.
    """
    from benchbook.model.jobcycle import job_cycle_rates, job_parallel_effect
    from benchbook.model.rate_bank import bank_at_load

    job, evaluated, _ = _demo_job("telecom-48v.xlsx")
    rec = evaluated[0]
    o = rec.option
    assert (o.model, o.series, o.parallel) == ("IL-6F-225", 8, 3)  # the bullets name the recommended bank
    mean = job.duty_cycle_mean_current_a
    assert mean == pytest.approx(sum(d.current_a * d.minutes for d in job.duty_cycle)
                                 / sum(d.minutes for d in job.duty_cycle))
    one = bank_at_load(o.spec, o.series, 1, load_a=mean, rest_h=8)
    bank = bank_at_load(o.spec, o.series, o.parallel, load_a=mean, rest_h=8)
    assert o.parallel_gain == pytest.approx(bank.kibam_parallel_gain, rel=1e-9)  # the size column
    text = _bullet("- **Parallel strings are not additive.**")
    minutes = sum(d.minutes for d in job.duty_cycle)
    for s in (f"{minutes / 60:.0f}-hour outage duty cycle", f"draws {mean:.1f} A on average",
              f"(IL-6F-225, eight in series) carries that current for {one.kibam_runtime_h:.1f} h",
              f"three strings carry it for {bank.kibam_runtime_h:.1f} h",
              f"not 3 × {one.kibam_runtime_h:.1f} = {3 * one.kibam_runtime_h:.1f} h",
              f"KiBaM parallel gain {bank.kibam_parallel_gain:.2f}", f"says {bank.peukert_parallel_gain:.2f}"):
        assert s in text, s
    assert one.in_table and bank.in_table  # both runtimes inside the ratings KiBaM was fitted to
    text = _bullet("- **The same charge comes out more slowly.**")
    spec = o.spec
    for s in (f"rated {spec.capacity_ah(1):.0f} Ah in 1 h and {spec.capacity_ah(20):.0f} Ah over 20 h",
              f"reaches {o.spec.rate_end_voltage_per_cell_v:.2f} V/cell at {mean:.1f} A",
              f"{bank.bound_ah_at_cutoff:.0f} Ah is still bound", f"rest {bank.recovered_ah_after_rest:.0f} Ah",
              "KiBaM"):
        assert s in text, s
    text = _bullet("- **Efficiency depends on the real rate.**")
    rates = job_cycle_rates(job, o)
    cyc = rec.standard_cycle
    rows = job_parallel_effect(job, o, [1, 2, 3, 4])
    assert [r.parallel for r in rows] == [1, 2, 3, 4]
    for s in (f"({rates.discharge_a:.1f} A out, {rates.charge_a:.1f} A back", f"{100 * rates.depth:.0f} % deep",
              f"returns {100 * cyc.energy:.0f} % of the energy with the recommended three strings",
              f"at {100 * cyc.coulombic:.0f} % coulombic and {100 * cyc.voltage:.0f} % voltage efficiency",
              f"return {100 * rows[0].cycle.energy:.0f} %, {100 * rows[1].cycle.energy:.0f} % and "
              f"{100 * rows[3].cycle.energy:.0f} %",
              f"({100 * rows[0].cycle.coulombic:.0f} % to {100 * rows[3].cycle.coulombic:.0f} %)"):
        assert s in text, s
    assert rows[2].cycle.energy == pytest.approx(cyc.energy, abs=0.005)  # three strings: the option itself
    assert rows[0].cycle.voltage < rows[1].cycle.voltage < rows[2].cycle.voltage < rows[3].cycle.voltage


def test_readme_cost_figures_are_the_demos_off_grid_job():
    """The cost bullet's figures are what `size` gives for the demo's cyclic job (samples/offgrid-cabin.xlsx).

    LCOS after Schmidt et al. 2019, service life by rainflow counting (ASTM E1049-85) and Miner's rule; those
    are checked against their sources in tests/test_cost.py and tests/test_life.py.
    """
    job, evaluated, _ = _demo_job("offgrid-cabin.xlsx")
    by = {e.option.model: e for e in evaluated}
    feasible = [e.option.model for e in evaluated if e.option.feasible]
    assert sorted(feasible) == ["IL-2F-1000", "IL-2F-420"]  # "two banks meet the requirement"
    big, small, flooded, agm = by["IL-2F-1000"], by["IL-2F-420"], by["IL-12F-110"], by["IL-12A-100"]
    cur = job.economics.currency
    years = job.economics.horizon_years
    text = _bullet("- **Cost per delivered kWh, not price per Ah.**")

    def per_kwh(e):
        return e.option.price / e.option.nominal_kwh

    for s in (f"(IL-2F-1000, {big.option.parallel} strings".replace("2 strings", "two strings"),
              f"(IL-2F-420, {small.option.parallel} strings".replace("3 strings", "three strings"),
              f"cost {per_kwh(big):.0f} {cur} per nominal kWh",
              f"{per_kwh(small):.0f} {cur}, yet over {years} years",
              f"the smaller bank delivers the hut's energy for {small.cost_per_kwh:.3f} {cur}/kWh",
              f"the larger one for {big.cost_per_kwh:.3f} {cur}/kWh",
              f"the cheapest per nominal kWh of all ({per_kwh(flooded):.0f} {cur}) and the AGM block costs "
              f"{per_kwh(agm):.0f} {cur}",
              f"wears them out in {flooded.service_life_years:.1f} and {agm.service_life_years:.1f} years: "
              f"{len(flooded.replacements)} and {len(agm.replacements)} replacements in {years} years"):
        assert s in text, s
    # what the bullet claims in words
    assert big.option.price / big.option.nominal_kwh < small.option.price / small.option.nominal_kwh
    assert small.cost_per_kwh < big.cost_per_kwh
    assert big.life_limited_by == small.life_limited_by == "float"
    assert big.service_life_years >= job.economics.horizon_years <= small.service_life_years
    assert abs(big.energy_out_kwh - small.energy_out_kwh) < 0.02 * small.energy_out_kwh  # the same load
    for e in (flooded, agm):
        assert not e.option.feasible and e.life_limited_by == "cycling"
    assert min(evaluated, key=per_kwh) is flooded
    assert per_kwh(agm) < min(per_kwh(big), per_kwh(small))
