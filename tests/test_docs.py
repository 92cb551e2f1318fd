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
