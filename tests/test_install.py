"""The wheel carries everything benchbook needs: templates and the embedded catalog work from another folder.

`pip install .` (not editable) must give a benchbook that runs outside the source tree: the test builds the
wheel, unpacks it into a folder of its own (what pip does for a pure-Python wheel, PEP 427), and runs
`benchbook new` and `benchbook size` from an unrelated working folder with only that folder on the path.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("wheel")
    # build from a copy, so the build's own folders (build/, *.egg-info) never land in the source tree
    src = tmp_path_factory.mktemp("src") / "benchbook"
    shutil.copytree(ROOT, src, ignore=shutil.ignore_patterns(".git", "build", "dist", "*.egg-info", "tests",
                                                             ".hypothesis", "__pycache__", "demo-out", "out"))
    cmd = [sys.executable, "-m", "pip", "wheel", "--no-deps", "--quiet", "-w", str(out), str(src)]
    r = subprocess.run(cmd + ["--no-build-isolation"], capture_output=True, text=True, timeout=600)
    if r.returncode != 0:  # no setuptools in this environment: let pip fetch the build backend
        r = subprocess.run(cmd, capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, r.stderr
    (whl,) = out.glob("benchbook-*.whl")
    return whl


def test_wheel_holds_the_templates_and_no_tests(wheel):
    names = zipfile.ZipFile(wheel).namelist()
    assert "benchbook/templates/intake.xlsx" in names and "benchbook/templates/quote.xlsx" in names
    assert "benchbook/model/catalog.py" in names and "benchbook/cli.py" in names
    assert not [n for n in names if n.startswith(("tests/", "samples/"))]
    entry = next(n for n in names if n.endswith(".dist-info/entry_points.txt"))
    assert "benchbook = benchbook.cli:main" in zipfile.ZipFile(wheel).read(entry).decode()


def test_installed_copy_runs_from_another_folder(wheel, tmp_path):
    site = tmp_path / "site"
    zipfile.ZipFile(wheel).extractall(site)
    work = tmp_path / "elsewhere"
    work.mkdir()
    env = {"PYTHONPATH": str(site), "PATH": "/usr/bin:/bin", "HOME": str(tmp_path)}

    def bb(*args: str) -> subprocess.CompletedProcess:
        return subprocess.run([sys.executable, "-m", "benchbook", *args], capture_output=True, text=True,
                              cwd=work, env=env, timeout=600)

    where = subprocess.run([sys.executable, "-c", "import benchbook; print(benchbook.__file__)"],
                           capture_output=True, text=True, cwd=work, env=env, timeout=60)
    assert where.stdout.strip().startswith(str(site)), where.stdout  # the unpacked copy, not the source tree
    r = bb("new", "job.xlsx")
    assert r.returncode == 0, r.stderr
    # the blank job carries the embedded catalog: the same six illustrative classes as the source
    from benchbook.model.catalog import DEFAULT_CATALOG
    from benchbook.sheets.catalog import read_catalog

    assert [s.model for s in read_catalog(work / "job.xlsx")] == [s.model for s in DEFAULT_CATALOG]
    r = bb("size", str(ROOT / "samples" / "telecom-48v.xlsx"), "--json", "--top", "2")
    assert r.returncode == 0, r.stderr
    assert [rec["rank"] for rec in json.loads(r.stdout)] == [1, 2]
    r = bb("quote", str(ROOT / "samples" / "telecom-48v.xlsx"), "-o", "quote.xlsx")
    assert r.returncode == 0, r.stderr
    assert (work / "quote.xlsx").stat().st_size > 10_000
