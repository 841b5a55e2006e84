"""A plain (non-editable) install ships the dispersion data and the command works elsewhere.

Builds a wheel from a copy of the sources, installs it with ``--no-deps`` into a fresh virtual
environment that borrows this environment's third-party packages (numpy, scipy, ...) through a
``.pth`` file, and runs ``prismdesign materials`` from an unrelated directory.  Slow (it builds
a wheel, using the network for the build backend when it is not installed here), but run by
default: it is the check that ``dispersion_data/`` really ends up inside the wheel.
"""
import shutil
import site
import subprocess
import sys
import sysconfig
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parents[1]


def _copy_sources(target: Path) -> Path:
    src = target / "src"
    src.mkdir()
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", "*.egg-info")
    for name in ("pyproject.toml", "README.md", "LICENSE"):
        if (REPO / name).exists():
            shutil.copy2(REPO / name, src / name)
    for name in ("prismdesign", "dispersion_data"):
        shutil.copytree(REPO / name, src / name, ignore=ignore)
    return src


def _pip(*args, timeout=240):
    return subprocess.run([sys.executable, "-m", "pip", "--disable-pip-version-check", *args],
                          capture_output=True, text=True, timeout=timeout)


def test_wheel_install_runs_materials_from_another_directory(tmp_path):
    src = _copy_sources(tmp_path)
    build = _pip("wheel", "--no-deps", "-q", "-w", str(tmp_path / "dist"), str(src))
    assert build.returncode == 0, build.stderr[-2000:]
    wheel = next((tmp_path / "dist").glob("prismdesign-*.whl"))

    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True,
                   timeout=120)
    python = venv / "bin" / "python"
    purelib = subprocess.run([str(python), "-c", "import sysconfig; "
                              "print(sysconfig.get_paths()['purelib'])"],
                             capture_output=True, text=True, check=True).stdout.strip()
    # Borrow numpy, scipy, matplotlib and tomli-w from this environment; the editable finder of
    # a development install is not activated by a plain path line, so prismdesign itself can
    # only come from the wheel.
    borrowed = {sysconfig.get_paths()["purelib"], sysconfig.get_paths()["platlib"],
                *site.getsitepackages()}
    (Path(purelib) / "borrowed_site.pth").write_text("\n".join(sorted(borrowed)) + "\n")
    install = _pip("--python", str(python), "install", "--no-deps", "--no-index", "-q",
                   str(wheel))
    assert install.returncode == 0, install.stderr[-2000:]

    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    where = subprocess.run([str(python), "-c", "import prismdesign; print(prismdesign.__file__)"],
                           cwd=elsewhere, capture_output=True, text=True, timeout=60)
    assert where.returncode == 0, where.stderr
    assert Path(where.stdout.strip()).is_relative_to(venv), where.stdout

    listing = subprocess.run([str(venv / "bin" / "prismdesign"), "materials"], cwd=elsewhere,
                             capture_output=True, text=True, timeout=120)
    assert listing.returncode == 0, listing.stderr
    rows = [line.split() for line in listing.stdout.splitlines()[2:]
            if line.strip() and not line.startswith("*")]
    # one row per dataset file: <name>.toml or <name>.<dataset>.toml
    listed = {(row[0], row[1].rstrip("*")) for row in rows}
    shipped = {p.stem for p in (REPO / "dispersion_data").glob("*.toml")}
    assert {f"{name}.{dataset}" if f"{name}.{dataset}" in shipped else name
            for name, dataset in listed} == shipped and ("calcite", "ghosh-1999") in listed
