"""Installing (issue 13): `pip install .` gives the package (with its air table) and a
`thermo-budget` command; the page's install brings no test tools; the README's quick start, the CI
script and the page's binding agree with what the repository holds."""
from __future__ import annotations

import re
import shutil
import subprocess
import sys
import tomllib

from conftest import REPO

# CoolProp is a runtime dependency: air at the stand's altitude and humidity (air.air_columns)
TEST_TOOLS = {"pytest", "hypothesis", "ht", "playwright", "setuptools", "wheel"}


def requirement_lines(name: str) -> list[str]:
    lines = (REPO / name).read_text(encoding="utf-8").splitlines()
    return [line.strip() for line in lines if line.strip() and not line.startswith(("#", "-r"))]


def project() -> dict:
    return tomllib.loads((REPO / "pyproject.toml").read_text(encoding="utf-8"))["project"]


def name_of(requirement: str) -> str:
    return re.split(r"[<>=!~ \[]", requirement, maxsplit=1)[0].lower()


def test_runtime_and_test_requirements_are_apart_and_agree_with_pyproject():
    runtime = requirement_lines("requirements.txt")
    assert not {name_of(r) for r in runtime} & TEST_TOOLS
    assert runtime == project()["dependencies"]
    assert requirement_lines("requirements-test.txt") == project()["optional-dependencies"]["test"]
    assert "-r requirements.txt" in (REPO / "requirements-test.txt").read_text(encoding="utf-8")


def test_readme_quick_start_is_two_commands_that_ci_runs():
    readme = (REPO / "README.md").read_text(encoding="utf-8")
    block = readme.split("## Quick start", 1)[1].split("```bash", 1)[1].split("```", 1)[0]
    commands = [line for line in block.strip().splitlines() if line.strip()]
    assert commands == ["pip install -r requirements.txt && streamlit run app.py",
                        "pip install -r requirements-test.txt && python -m pytest -q"]
    ci = (REPO / ".ci" / "run").read_text(encoding="utf-8")
    assert "pip install -q -r requirements-test.txt" in ci and "python3 -m pytest -q" in ci
    assert "apt-get install" in ci and "chromium" in ci


def test_the_page_binds_to_this_computer_only():
    config = tomllib.loads((REPO / ".streamlit" / "config.toml").read_text(encoding="utf-8"))
    assert config["server"]["address"] == "127.0.0.1"
    assert "--server.address 0.0.0.0" in (REPO / "README.md").read_text(encoding="utf-8")


def test_pip_install_gives_the_package_and_the_command(tmp_path):
    source = tmp_path / "source"
    source.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy(REPO / name, source / name)
    shutil.copytree(REPO / "thermo_budget", source / "thermo_budget",
                    ignore=shutil.ignore_patterns("__pycache__"))
    target = tmp_path / "site"
    done = subprocess.run([sys.executable, "-m", "pip", "install", "-q", "--no-deps", "--no-build-isolation",
                           "--disable-pip-version-check", "--target", str(target), str(source)],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert (target / "thermo_budget" / "data" / "air_1atm.csv").is_file()
    assert (target / "thermo_budget" / "data" / "sobol_normals.npz").is_file()
    env = {"PYTHONPATH": str(target), "PATH": "/usr/bin:/bin"}
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    command = subprocess.run([str(target / "bin" / "thermo-budget"), "run", str(REPO / "scenarios" / "default.toml"),
                              "--json"], cwd=elsewhere, env=env, capture_output=True, text=True, timeout=300)
    assert command.returncode == 0, command.stderr
    assert '"pulls_under_limit"' in command.stdout
    module = subprocess.run([sys.executable, "-m", "thermo_budget", "--help"], cwd=elsewhere, env=env,
                            capture_output=True, text=True, timeout=120)
    assert module.returncode == 0 and "usage" in module.stdout


# The package's floors, its import cycles and its developer tools are checked in tests/test_layers.py.
