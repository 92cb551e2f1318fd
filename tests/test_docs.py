"""The docs say what the code does: commands, --help texts, the template contract, the CI command."""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

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


def test_readme_rule_of_thumb_figures_are_what_the_models_give():
    """Every figure of 'What benchbook tells you…' recomputed from the shipped models and catalog.

    The figures illustrate the models (KiBaM, Manwell & McGowan 1993; Peukert 1897; Copetti, Lorenzo &
    Chenlo 1993); the models themselves are checked against their sources in their own test files.
    """
    from benchbook.model.catalog import DEFAULT_CATALOG
    from benchbook.model.efficiency import cycle_efficiency, parallel_effect
    from benchbook.model.rate_bank import bank_at_load

    agm = next(s for s in DEFAULT_CATALOG if s.model == "IL-12A-100")
    one = bank_at_load(agm, 4, 1, load_w=2400, rest_h=8)
    three = bank_at_load(agm, 4, 3, load_w=2400, rest_h=8)
    text = _bullet("- **Parallel strings are not additive.**")
    for s in (f"gets {one.kibam_usable_kwh:.1f} kWh from one string", f"three strings give {three.kibam_usable_kwh:.1f} kWh",
              f"3 × {one.kibam_usable_kwh:.1f} = {3 * one.kibam_usable_kwh:.1f}",
              f"KiBaM parallel gain {three.kibam_parallel_gain:.2f}", f"says {three.peukert_parallel_gain:.2f}"):
        assert s in text, s
    text = _bullet("- **The same charge comes out more slowly.**")
    for s in (f"gives {agm.capacity_ah(1):.0f} Ah in 1 h and {agm.capacity_ah(20):.0f} Ah over 20 h",
              f"{one.bound_ah_at_cutoff:.0f} Ah is still bound", f"rest {one.recovered_ah_after_rest:.0f} Ah",
              "KiBaM"):
        assert s in text, s
    text = _bullet("- **Efficiency depends on the real rate.**")
    slow = cycle_efficiency(agm, 4, 1, depth=0.5, discharge_c_rate=0.1, charge_c_rate=0.1)
    fast = cycle_efficiency(agm, 4, 1, depth=0.5, discharge_c_rate=1 / 3, charge_c_rate=0.1)
    rows = parallel_effect(agm, 4, [1, 2, 3], bank_discharge_a=30.0, bank_charge_a=20.0, depth=0.5)
    for s in (f"returns {100 * slow.energy:.0f} % of the energy", f"at C/3 discharge, {100 * fast.energy:.0f} %",
              f"about {100 * slow.coulombic:.0f} %",
              "30 A bank discharge and 20 A recharge to 50 % depth",
              "return " + ", ".join(f"{100 * r.cycle.energy:.0f} %" for r in rows[:2])
              + f" and {100 * rows[2].cycle.energy:.0f} %"):
        assert s in text, s


def test_readme_cost_figures_are_the_off_grid_samples():
    """The cost bullet's figures are what `size` gives for samples/offgrid-cabin.xlsx (the demo's cyclic job).

    LCOS after Schmidt et al. 2019, service life by rainflow counting (ASTM E1049-85) and Miner's rule; those
    are checked against their sources in tests/test_cost.py and tests/test_life.py.
    """
    from benchbook.sheets.report import evaluate_job

    job, evaluated = evaluate_job(ROOT / "samples" / "offgrid-cabin.xlsx")
    by = {e.option.model: e for e in evaluated}
    agm, gel = by["IL-12A-100"], by["IL-12G-90"]
    cur = job.economics.currency
    text = _bullet("- **Cost per delivered kWh, not price per Ah.**")
    for s in (f"the AGM bank costs {agm.option.price / agm.option.nominal_kwh:.0f} {cur} per nominal kWh",
              f"the gel bank {gel.option.price / gel.option.nominal_kwh:.0f} {cur}",
              f"over {job.economics.horizon_years} years",
              f"the gel bank delivers its energy for {gel.cost_per_kwh:.3f} {cur}/kWh",
              f"the AGM bank for {agm.cost_per_kwh:.3f} {cur}/kWh",
              f"wears the AGM bank out in {agm.service_life_years:.1f} years and the gel bank in "
              f"{gel.service_life_years:.1f}"):
        assert s in text, s
    # the bullet says both banks are undersized: true as long as the sample keeps them so
    assert not agm.option.feasible and not gel.option.feasible
