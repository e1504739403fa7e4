"""The wheel built from the source tree is complete and runs the demo on its own.

The wheel is built without build isolation and without an index (offline; the build backend,
setuptools >= 77, comes with the ``test`` extra), from a copy of the source tree so that a stale
``build/`` folder cannot leak removed modules into it. It is then installed with
``pip install --target`` into a temporary folder and ``python -m ringshift demo`` is run from an
empty working directory with that folder first on ``PYTHONPATH``.

The development venv also holds an editable install of the source tree. A ``sitecustomize`` hook
placed after the wheel's folder on ``PYTHONPATH`` records, at interpreter exit, the file of every
``ringshift`` module that was imported, so the test can show that the code that ran is the wheel's
copy and not the source tree's; a control run without the wheel's folder shows that the hook does
see the other copy.

Marked ``packaging`` (about 20 s): ``pytest -m 'not packaging'`` deselects it.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

pytestmark = pytest.mark.packaging

REPO = Path(__file__).resolve().parents[2]
SOURCE_PKG = REPO / "ringshift"

# The stage subpackages of the layout; the wheel must carry each one's __init__.py (the test also
# derives the list from the source tree, so a new subpackage is covered without editing this).
STAGES = ("io", "geometry", "pi", "fields", "shifts", "spectra", "comparison", "reporting", "runners")
DEMO_FILES = ("fj14c.sdf", "fj14c_1H.jdx", "fj14c_peaks.csv", "fj14o.sdf", "fj14o_1H.jdx", "fj14o_peaks.csv")
DEMO_NAMES = ("fj14c", "fj14o")

HOOK = '''\
"""Test hook: write the file of every imported ringshift module at exit."""
import atexit
import json
import os
import sys


def _record():
    mods = {name: getattr(mod, "__file__", None) for name, mod in list(sys.modules.items())
            if name == "ringshift" or name.startswith("ringshift.")}
    with open(os.environ["RINGSHIFT_ORIGIN_LOG"], "w", encoding="utf-8") as fh:
        json.dump(mods, fh)


atexit.register(_record)
'''


def _run(cmd, *, cwd, env=None, timeout=120):
    return subprocess.run(cmd, cwd=cwd, env=env, capture_output=True, text=True, timeout=timeout)


def _source_version() -> str:
    text = (SOURCE_PKG / "__init__.py").read_text(encoding="utf-8")
    match = re.search(r'^__version__\s*=\s*"([^"]+)"', text, re.MULTILINE)
    assert match, "ringshift/__init__.py defines no __version__"
    return match.group(1)


def _source_files() -> list[str]:
    """Package files of the source tree as wheel paths (``ringshift/...``), without caches."""
    out = []
    for path in SOURCE_PKG.rglob("*"):
        if path.is_dir() or "__pycache__" in path.parts or path.suffix == ".pyc":
            continue
        out.append(path.relative_to(REPO).as_posix())
    return sorted(out)


def _sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    """Build the wheel from a copy of the working tree (top-level files + ``ringshift/``)."""
    root = tmp_path_factory.mktemp("wheel_build")
    src = root / "src"
    src.mkdir()
    for item in REPO.iterdir():  # pyproject.toml, README.md (the long description), LICENSE if any
        if item.is_file() and not item.name.startswith("."):
            shutil.copy2(item, src / item.name)
    shutil.copytree(SOURCE_PKG, src / "ringshift", ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
    dist = root / "dist"
    res = _run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "--no-index",
                "--quiet", "-w", str(dist), str(src)], cwd=root)
    assert res.returncode == 0, (
        "building the wheel failed (it needs setuptools>=77 in this environment: "
        f"pip install -e '.[test]')\nstdout:\n{res.stdout}\nstderr:\n{res.stderr}")
    wheels = list(dist.glob("*.whl"))
    assert len(wheels) == 1, f"expected one wheel in {dist}, found {[w.name for w in wheels]}"
    return wheels[0]


@pytest.fixture(scope="module")
def site(wheel, tmp_path_factory) -> Path:
    """The wheel installed (no dependencies, no index) into a fresh ``--target`` folder."""
    target = tmp_path_factory.mktemp("wheel_site") / "site"
    res = _run([sys.executable, "-m", "pip", "install", "--no-deps", "--no-index", "--quiet",
                "--target", str(target), str(wheel)], cwd=wheel.parent)
    assert res.returncode == 0, f"pip install --target failed\nstdout:\n{res.stdout}\nstderr:\n{res.stderr}"
    return target


def _env(pythonpath: list[Path], origin_log: Path, tmp: Path) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith("PYTHON")}
    env["PYTHONPATH"] = os.pathsep.join(str(p) for p in pythonpath)
    env["PYTHONNOUSERSITE"] = "1"
    env["RINGSHIFT_ORIGIN_LOG"] = str(origin_log)
    env["MPLBACKEND"] = "Agg"
    env["MPLCONFIGDIR"] = str(tmp / "mplconfig")
    return env


def test_wheel_name_and_files(wheel):
    assert wheel.name == f"ringshift-{_source_version()}-py3-none-any.whl"
    with zipfile.ZipFile(wheel) as zf:
        names = set(zf.namelist())
        contents = {n: zf.read(n) for n in names if n.startswith("ringshift/") and not n.endswith(".py")}
        entry_points = next(zf.read(n).decode() for n in names if n.endswith(".dist-info/entry_points.txt"))

    required = {"ringshift/py.typed", "ringshift/data/reference_shifts.csv", "ringshift/__init__.py",
                "ringshift/__main__.py", "ringshift/cli.py"}
    required |= {f"ringshift/data/demo/{f}" for f in DEMO_FILES}
    required |= {f"ringshift/{stage}/__init__.py" for stage in STAGES}
    # every folder of the source package holding Python code is a package with its __init__.py
    code_dirs = {p.parent for p in SOURCE_PKG.rglob("*.py") if "__pycache__" not in p.parts}
    required |= {(d / "__init__.py").relative_to(REPO).as_posix() for d in code_dirs}
    missing = sorted(required - names)
    assert not missing, f"missing from {wheel.name}: {missing}"

    # the wheel carries the source package file for file, and nothing of the repository beyond it
    source = set(_source_files())
    package_files = {n for n in names if not n.startswith("ringshift-")}
    left_out = sorted(source - package_files)
    assert not left_out, f"files under ringshift/ left out of the wheel (package-data in pyproject.toml?): {left_out}"
    extra = sorted(package_files - source)
    assert not extra, f"files in the wheel that are not under ringshift/: {extra}"

    # data files are the real files (not links, not empty), byte for byte those of the source tree
    for name, data in contents.items():
        src = REPO / name
        assert not src.is_symlink(), f"{src} is a symlink; package data must be a real file"
        assert _sha(data) == _sha(src.read_bytes()), f"{name} differs from {src}"
    for f in DEMO_FILES:
        assert len(contents[f"ringshift/data/demo/{f}"]) > 100, f"demo file {f} is (nearly) empty"

    # the console entry pins the thread pools and blocks SIGINT/SIGTERM before importing the CLI
    # (ringshift._entry, ringshift._signals), then runs cli.main
    assert re.search(r"^ringshift\s*=\s*ringshift\._entry:main\s*$", entry_points, re.MULTILINE), entry_points


def test_installed_wheel_runs_the_demo(site, tmp_path):
    hook_dir = tmp_path / "hook"
    hook_dir.mkdir()
    (hook_dir / "sitecustomize.py").write_text(HOOK, encoding="utf-8")
    work = tmp_path / "empty_cwd"
    work.mkdir()
    out = tmp_path / "demo_out"
    log = tmp_path / "origins.json"
    env = _env([site, hook_dir], log, tmp_path)

    which = _run([sys.executable, "-c", "import ringshift; print(ringshift.__file__)"], cwd=work, env=env)
    print("ringshift.__file__ with the wheel first on PYTHONPATH:", which.stdout.strip())
    assert which.returncode == 0, which.stderr
    assert Path(which.stdout.strip()).resolve() == (site / "ringshift" / "__init__.py").resolve()

    res = _run([sys.executable, "-m", "ringshift", "demo", "-o", str(out), "--quiet"], cwd=work, env=env, timeout=180)
    assert res.returncode == 0, f"demo failed (exit {res.returncode})\nstdout:\n{res.stdout}\nstderr:\n{res.stderr}"

    for name in DEMO_NAMES:
        for rel in ("report.html", "results.json", "figures/spectrum.png"):
            f = out / name / rel
            assert f.is_file() and f.stat().st_size > 0, f"{f} missing or empty; demo printed:\n{res.stdout}"
        assert json.loads((out / name / "results.json").read_text(encoding="utf-8")), f"{name}/results.json is empty"
        assert str(out / name / "report.html") in res.stdout, f"the summary does not name {name}'s report"
    assert sorted(p.name for p in work.iterdir()) == [], "the demo wrote into the working directory"

    assert log.is_file(), f"the origin hook did not run\nstderr:\n{res.stderr}"
    origins = json.loads(log.read_text(encoding="utf-8"))
    site_pkg = (site / "ringshift").resolve()
    print("ringshift.__file__ in the demo run:", origins.get("ringshift"))
    assert origins.get("ringshift") and Path(origins["ringshift"]).resolve() == site_pkg / "__init__.py"
    # the modules that did the work were loaded, and every ringshift module came from the wheel
    for needed in ("ringshift.cli", "ringshift.runners.demo", "ringshift.shifts.prediction", "ringshift.reporting"):
        assert needed in origins, f"{needed} was not imported by the demo run"
    elsewhere = {n: f for n, f in origins.items() if f is None or not Path(f).resolve().is_relative_to(site_pkg)}
    assert elsewhere == {}, f"modules not loaded from the installed wheel ({site_pkg}): {elsewhere}"


def test_without_the_wheel_the_hook_sees_another_copy(site, tmp_path):
    """Control: the same hook, without the wheel's folder, reports a ringshift outside it.

    This shows that the venv offers another copy (the editable install of the source tree) and
    that the check above would have caught it winning.
    """
    hook_dir = tmp_path / "hook"
    hook_dir.mkdir()
    (hook_dir / "sitecustomize.py").write_text(HOOK, encoding="utf-8")
    work = tmp_path / "empty_cwd"
    work.mkdir()
    log = tmp_path / "origins.json"
    res = _run([sys.executable, "-c", "import ringshift; print(ringshift.__file__)"],
               cwd=work, env=_env([hook_dir], log, tmp_path))
    if res.returncode != 0 and "No module named 'ringshift'" in res.stderr:
        pytest.skip("ringshift is not installed in this interpreter, so no other copy could have won")
    assert res.returncode == 0, res.stderr
    origin = Path(json.loads(log.read_text(encoding="utf-8"))["ringshift"]).resolve()
    print("ringshift.__file__ without the wheel:", origin)
    assert Path(res.stdout.strip()).resolve() == origin
    assert not origin.is_relative_to((site / "ringshift").resolve())
