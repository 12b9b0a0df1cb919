"""Packaging: the reference data and examples travel inside the package, every install works.

The install tests build vascplan from a copy of this source tree with the pip and setuptools
of the running environment (no network, no build isolation) into a throw-away ``--prefix``
and ``--target``, then run the installed ``vascplan`` with only that folder on
``PYTHONPATH``. ``--user`` installs use the same layout as ``--prefix`` (the user base is a
prefix), and pip refuses ``--user`` inside a virtual environment, so it is not run here.
"""

from __future__ import annotations

import csv
import json
import os
import shutil
import subprocess
import sys
import tomllib
from importlib import metadata
from pathlib import Path

import pytest

import vascplan
from vascplan.paths import data_dir, examples_dir

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "vascplan"
EXAMPLE = "case-DEMO-07-sfa-occlusion.yaml"


def _bundled_files() -> set[str]:
    """Every data and example file of the source tree, relative to the package folder."""
    out = set()
    for folder in ("data", "examples"):
        for p in (PACKAGE / folder).rglob("*"):
            if p.is_file() and "__pycache__" not in p.parts:
                out.add(p.relative_to(PACKAGE).as_posix())
    return out


def test_data_and_examples_are_package_data(monkeypatch):
    monkeypatch.delenv("VASCPLAN_DATA", raising=False)
    here = Path(vascplan.__file__).resolve().parent
    assert data_dir().resolve() == here / "data"
    assert examples_dir().resolve() == here / "examples"
    assert (data_dir() / "anatomy" / "segments.csv").is_file()
    assert (examples_dir() / EXAMPLE).is_file()
    assert (here / "py.typed").is_file()  # PEP 561 marker: the package ships its types
    # Nothing is left at the top of the source tree, where an install would not find it.
    assert not (ROOT / "data").exists() and not (ROOT / "examples").exists()


def test_vascplan_data_overrides_the_bundled_tables(tmp_path, monkeypatch):
    monkeypatch.setenv("VASCPLAN_DATA", str(tmp_path))
    assert data_dir() == tmp_path
    monkeypatch.setenv("VASCPLAN_DATA", "")  # empty is the same as unset
    assert data_dir() == Path(vascplan.__file__).resolve().parent / "data"


def test_pyproject_declares_package_data_not_data_files():
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    setuptools = project["tool"]["setuptools"]
    assert "data-files" not in setuptools  # the old <prefix>/share copy is gone
    assert set(setuptools["package-data"]["vascplan"]) >= {"py.typed", "data/**/*", "examples/*"}
    # Heavy or optional libraries are not forced on everyone.
    deps = project["project"]["dependencies"]
    names = {d.split(">")[0].split("[")[0].strip().lower() for d in deps}
    assert "pandas" not in names and "psycopg" not in names
    # The eccentric solver and the cannula flow still use numpy and scipy at run time.
    assert {"numpy", "scipy"} <= names
    assert project["project"]["optional-dependencies"]["postgres"] == ["psycopg[binary]>=3.1"]


def test_readme_test_command_installs_the_postgres_extra():
    # .ci/run runs the README's test command: the PostgreSQL tests need the driver there.
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    quick = readme.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    blocks = [b.split("```", 1)[0].strip() for b in quick.split("```sh\n")[1:]]
    assert len(blocks) == 2  # the demo command and the test command, nothing more
    test_cmd = readme.split("<!-- test-command -->", 1)[1].split("```sh\n", 1)[1].split("```")[0]
    assert "'.[test,postgres]'" in test_cmd


def test_a_postgresql_url_without_the_driver_is_one_clear_line(monkeypatch):
    from click.testing import CliRunner

    from vascplan.cli import cli

    # None in sys.modules makes `import psycopg` fail as if it were not installed.
    monkeypatch.setitem(sys.modules, "psycopg", None)
    unit = examples_dir() / "unit-demo.yaml"
    result = CliRunner().invoke(
        cli, ["obs", "review", str(unit), "--db", "postgresql://u@127.0.0.1:9/none"]
    )
    assert result.exit_code == 2
    assert result.stderr.strip() == (
        "error: a postgresql:// store needs the PostgreSQL driver (psycopg), which is not "
        "installed: install vascplan[postgres] (pip install 'vascplan[postgres]')"
    )
    assert "Traceback" not in result.output


# --- installs ------------------------------------------------------------------------------


def _build_tools_or_skip() -> None:
    try:
        subprocess.run(
            [sys.executable, "-m", "pip", "--version"], capture_output=True, check=True, timeout=60
        )
    except (subprocess.SubprocessError, OSError):
        pytest.skip("install test skipped: pip is not available in this environment")
    for name, least in (("setuptools", 68), ("wheel", 0)):
        try:
            major = int(metadata.version(name).split(".")[0])
        except metadata.PackageNotFoundError:
            pytest.skip(f"install test skipped: {name} is not installed (pip install '.[test]')")
        if major < least:
            pytest.skip(f"install test skipped: setuptools {metadata.version(name)} < {least}")


@pytest.fixture(scope="module")
def source_copy(tmp_path_factory) -> Path:
    """The project copied to a temporary folder, so that building leaves the tree clean."""
    _build_tools_or_skip()
    src = tmp_path_factory.mktemp("src")
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", "*.egg-info", "build")
    shutil.copytree(PACKAGE, src / "vascplan", ignore=ignore)
    for name in ("pyproject.toml", "README.md"):
        shutil.copy2(ROOT / name, src / name)
    return src


def _pip_install(src: Path, *where: str) -> None:
    # --ignore-installed: without it pip uninstalls the environment's own (editable) vascplan
    # before installing into the prefix, which would break the developer's venv.
    cmd = [sys.executable, "-m", "pip", "install", "-q", "--no-deps", "--no-build-isolation",
           "--no-index", "--disable-pip-version-check", "--ignore-installed", *where, str(src)]
    r = subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)
    assert r.returncode == 0, r.stderr


def _installed_env(site: Path) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if k not in ("VASCPLAN_DATA", "PYTHONPATH")}
    env["PYTHONPATH"] = str(site)
    return env


def _check_install(site: Path, script: Path, cwd: Path) -> None:
    env = _installed_env(site)
    # The installed copy is the one imported, not this source tree (an editable install).
    probe = subprocess.run(
        [sys.executable, "-c",
         "import vascplan, vascplan.paths as p; print(vascplan.__file__); print(p.data_dir())"],
        capture_output=True, text=True, env=env, cwd=cwd, timeout=60, check=True,
    )
    module_file, data = probe.stdout.splitlines()
    assert Path(module_file).is_relative_to(site), module_file
    assert Path(data) == site / "vascplan" / "data"
    # Every data and example file of the source tree was installed, and the type marker.
    installed = {
        p.relative_to(site / "vascplan").as_posix()
        for folder in ("data", "examples")
        for p in (site / "vascplan" / folder).rglob("*")
        if p.is_file()
    }
    assert installed == _bundled_files()
    assert (site / "vascplan" / "py.typed").is_file()
    # The command runs on the installed example and reads the installed reference table.
    example = site / "vascplan" / "examples" / EXAMPLE
    r = subprocess.run([str(script), "tree", str(example), "--format", "json"],
                       capture_output=True, text=True, env=env, cwd=cwd, timeout=60, check=False)
    assert r.returncode == 0, r.stderr
    tree = json.loads(r.stdout)
    with open(PACKAGE / "data" / "anatomy" / "segments.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(tree["segments"]) == len(rows)  # one row per segment of the reference table
    by_id = {s["id"]: s for s in tree["segments"]}
    assert by_id["R-CFA"]["diameter_mm"] == 6.1  # measured in the example file
    assert by_id["L-SFA"]["length_cm"] == 29  # measured in the example file
    # The front door: `vascplan` alone prints the help and succeeds.
    r = subprocess.run([str(script)], capture_output=True, text=True, env=env, cwd=cwd,
                       timeout=60, check=False)
    assert r.returncode == 0 and r.stdout.startswith("Usage: vascplan"), r.stderr


@pytest.mark.install
def test_install_with_prefix(source_copy, tmp_path):
    prefix = tmp_path / "prefix"
    _pip_install(source_copy, "--prefix", str(prefix))
    (init,) = prefix.glob("lib/python*/site-packages/vascplan/__init__.py")
    _check_install(init.parent.parent, prefix / "bin" / "vascplan", tmp_path)


@pytest.mark.install
def test_install_with_target(source_copy, tmp_path):
    target = tmp_path / "target"
    _pip_install(source_copy, "--target", str(target))
    _check_install(target, target / "bin" / "vascplan", tmp_path)
