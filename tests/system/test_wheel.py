"""A built wheel carries its catalogs and examples and runs without the source checkout.

The wheel is built with ``pip wheel . --no-deps --no-build-isolation`` from a copy of the project
files (so no ``build/`` folder is left in the checkout and no stale one is reused), installed with
``pip install --no-deps --no-index`` into a fresh virtual environment made inside ``tmp_path``, and
run from an unrelated folder. No network: the fresh environment finds the dependencies (numpy,
itur, sgp4, ...) through a ``.pth`` file that lists the site-packages folders of the interpreter
running the tests. Those folders hold the editable install of the checkout only as an import hook
that a plain ``.pth`` path never runs, and the fresh environment's own site-packages come first;
``tradeopt.__file__`` is checked to be inside the fresh environment.

Needs the build backend of ``[build-system]`` (setuptools >= 68 and wheel) in the test
environment: ``pip install -e '.[test]'`` installs them.
"""
from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import tomllib
import zipfile
from pathlib import Path

import pytest

from tradeopt.inputs.catalog import CATALOG_FILES

ROOT = Path(__file__).resolve().parents[2]
PACKAGED_EXAMPLES = ROOT / "tradeopt" / "data" / "examples"

#: The link file and the scenario run from the installed wheel (the quickest scenario example).
LINK_EXAMPLE = "x_band_leo_downlink.toml"
SCENARIO_EXAMPLE = "geostationary_link.toml"

#: Upper bound of every subprocess [s]; the whole module takes about 30 s on two shared cores.
TIMEOUT_S = 120.0

pytestmark = pytest.mark.slow


def _env() -> dict[str, str]:
    """Environment for the subprocesses: no PYTHONPATH pointing at the checkout, no user site, no index."""
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV")}
    env.update(PYTHONNOUSERSITE="1", PIP_NO_INDEX="1", PIP_DISABLE_PIP_VERSION_CHECK="1")
    return env


def _run(args, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([str(a) for a in args], cwd=cwd, env=_env(), capture_output=True, text=True,
                          timeout=TIMEOUT_S, check=False)


def _ok(proc: subprocess.CompletedProcess) -> subprocess.CompletedProcess:
    assert proc.returncode == 0, f"exit {proc.returncode}\n{proc.stdout[-3000:]}\n{proc.stderr[-3000:]}"
    return proc


def _dependency_folders() -> list[str]:
    """Site-packages folders of the running interpreter (they hold numpy, itur, sgp4, ...)."""
    return [p for p in dict.fromkeys(sys.path)
            if Path(p).name in ("site-packages", "dist-packages") and Path(p).is_dir()]


@pytest.fixture(scope="module")
def installed(tmp_path_factory):
    """(wheel path, fresh venv folder, its python, its tradeopt script, its packaged data folder, a neutral cwd)."""
    base = tmp_path_factory.mktemp("wheel")
    src = base / "src"
    src.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy2(ROOT / name, src / name)
    shutil.copytree(ROOT / "tradeopt", src / "tradeopt", ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
    wheelhouse = base / "tmp"
    build = _run([sys.executable, "-m", "pip", "wheel", ".", "--no-deps", "--no-build-isolation", "-w", wheelhouse],
                 cwd=src)
    assert build.returncode == 0, ("building the wheel failed (is the build backend installed? "
                                   f"pip install -e '.[test]'):\n{build.stdout[-3000:]}\n{build.stderr[-3000:]}")
    (wheel,) = wheelhouse.glob("tradeopt-*.whl")

    venv = base / "fresh-venv"
    _ok(_run([sys.executable, "-m", "venv", "--without-pip", venv], cwd=base))
    python = venv / "bin" / "python"
    purelib = _ok(_run([python, "-c", "import sysconfig; print(sysconfig.get_path('purelib'))"], cwd=base))
    site_packages = Path(purelib.stdout.strip())
    (site_packages / "zz_tradeopt_test_dependencies.pth").write_text("\n".join(_dependency_folders()) + "\n",
                                                                      encoding="utf-8")
    _ok(_run([sys.executable, "-m", "pip", "--python", python, "install", "--no-deps", "--no-index", wheel],
             cwd=base))
    elsewhere = base / "elsewhere"
    elsewhere.mkdir()
    return wheel, venv, python, venv / "bin" / "tradeopt", site_packages / "tradeopt" / "data", elsewhere


def test_wheel_holds_every_catalog_and_example(installed):
    # Catches: package data that leaves the catalogs or the examples out of the wheel (an installed
    # tradeopt then fails on its first catalog lookup), or a new catalog or example file type that
    # the package-data globs do not match.
    wheel = installed[0]
    with zipfile.ZipFile(wheel) as zf:
        names = set(zf.namelist())
    expected = {f"tradeopt/data/catalogs/{f}" for f in CATALOG_FILES.values()}
    expected |= {f"tradeopt/data/examples/{p.name}" for p in PACKAGED_EXAMPLES.iterdir() if p.is_file()}
    assert expected - names == set()


def test_the_fresh_environment_imports_the_wheel_not_the_checkout(installed):
    # Catches: a test environment that picks up the editable checkout (the checks below would then
    # pass whatever the wheel holds), and a default-catalog lookup that points outside the package
    # (e.g. a folder beside the package, which exists only in a source checkout).
    _, venv, python, _, data, elsewhere = installed
    code = ("import tradeopt, tradeopt.data; from tradeopt.inputs.catalog import default_catalog_dir; "
            "print(tradeopt.__file__); print(default_catalog_dir())")
    lines = _ok(_run([python, "-c", code], cwd=elsewhere)).stdout.splitlines()
    assert Path(lines[0]).resolve().is_relative_to(venv.resolve())
    assert Path(lines[1]).resolve() == (data / "catalogs").resolve()


def test_catalog_check_uses_the_packaged_catalogs(installed):
    # Catches: `tradeopt catalog check` failing in an installed wheel, or checking a folder other
    # than the packaged one.
    *_, script, data, elsewhere = installed
    out = _ok(_run([script, "catalog", "check"], cwd=elsewhere)).stdout
    assert f"catalogs in {data / 'catalogs'}: all valid" in out


def test_budget_on_the_packaged_link_example_needs_the_packaged_catalogs(installed):
    # Catches: `tradeopt budget` failing on the packaged example from an unrelated folder; the second
    # run, with the packaged catalogs moved away, catches a budget that silently read some other copy
    # of the catalogs (it must then fail naming the packaged folder).
    *_, script, data, elsewhere = installed
    link = data / "examples" / LINK_EXAMPLE
    budget = json.loads(_ok(_run([script, "budget", link, "--json"], cwd=elsewhere)).stdout)
    assert budget["allocation_band_id"] == "X-DOWN"
    moved = data / "catalogs-moved-away"
    (data / "catalogs").rename(moved)
    try:
        proc = _run([script, "budget", link], cwd=elsewhere)
    finally:
        moved.rename(data / "catalogs")
    assert proc.returncode == 2
    assert str(data / "catalogs") in proc.stderr


def test_optimize_on_a_packaged_scenario_example(installed):
    # Catches: `tradeopt optimize` failing on a packaged example from an unrelated folder, or a trade
    # that took its catalogs from anywhere but the packaged folder (best_link.toml then names the
    # catalog folder it used).
    *_, script, data, elsewhere = installed
    out_dir = elsewhere / "trade-out"
    _ok(_run([script, "optimize", data / "examples" / SCENARIO_EXAMPLE, "--out", out_dir], cwd=elsewhere))
    assert (out_dir / "best.json").is_file()
    link = tomllib.loads((out_dir / "best_link.toml").read_text(encoding="utf-8"))
    assert "catalogs" not in link["link"]
