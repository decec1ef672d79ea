"""The installed package: one import name, every sub-package listed, the licence and the version in one place."""

from __future__ import annotations

import subprocess
import sys
import tomllib
import zipfile
from pathlib import Path

import soaklog

ROOT = Path(__file__).resolve().parents[1]
#: the folders of the repository and the import names they are installed as (pyproject.toml package-dir)
FOLDERS = {"daq": "soaklog", "drivers": "soaklog.drivers", "simulators": "soaklog.simulators"}


def _pyproject() -> dict:
    return tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))


def test_every_folder_with_an_init_is_a_listed_package() -> None:
    listed = set(_pyproject()["tool"]["setuptools"]["packages"])
    found = set()
    for folder, name in FOLDERS.items():
        for init in (ROOT / folder).rglob("__init__.py"):
            rel = init.parent.relative_to(ROOT / folder).parts
            found.add(".".join((name, *rel)))
    assert found == listed


def test_the_wheel_adds_only_the_import_name_soaklog(tmp_path: Path) -> None:
    subprocess.run([sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "-w", str(tmp_path), str(ROOT)],
                   check=True, capture_output=True, timeout=600)
    (wheel,) = tmp_path.glob("soaklog-*.whl")
    with zipfile.ZipFile(wheel) as zf:
        names = zf.namelist()
    tops = {n.split("/", 1)[0] for n in names}
    dist_info = {t for t in tops if t.endswith(".dist-info")}
    assert tops - dist_info == {"soaklog"}
    # the licence travels with the package, and the shipped files are there
    assert any(n.endswith("LICENSE") for n in names)
    for data in ("soaklog/data/demo.toml", "soaklog/dashboard/dashboard.tcss", "soaklog/kinds/instruments/scpi.py"):
        assert data in names
    # the version is soaklog.__version__, read by the build
    assert wheel.name.startswith(f"soaklog-{soaklog.__version__}-")


def test_the_licence_file_matches_the_declared_licence() -> None:
    project = _pyproject()["project"]
    assert project["license"] == "MIT"
    assert (ROOT / "LICENSE").read_text(encoding="utf-8").startswith("MIT License")
    assert "version" not in project and project["dynamic"] == ["version"]
