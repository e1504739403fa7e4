"""Every module of the package imports on its own (no import cycle hidden by the order of other imports).

Contract check (no science). Each module is imported with every ``ringshift`` module removed from
``sys.modules`` first, so it starts from nothing of the package; third-party libraries stay loaded, which
keeps the check to a few seconds.
"""

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

_SCRIPT = r"""
import importlib, pkgutil, sys, traceback
import ringshift
names = sorted(m.name for m in pkgutil.walk_packages(ringshift.__path__, "ringshift."))
failed = []
for name in names:
    for key in [k for k in sys.modules if k == "ringshift" or k.startswith("ringshift.")]:
        del sys.modules[key]
    try:
        importlib.import_module(name)
    except Exception:
        failed.append(name + ": " + traceback.format_exc().strip().splitlines()[-1])
print(len(names))
print("\n".join(failed))
"""


def test_every_module_imports_alone():
    res = subprocess.run([sys.executable, "-c", _SCRIPT], capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert res.returncode == 0, res.stderr
    count, *failed = res.stdout.strip().splitlines()
    assert int(count) > 60          # the stage subpackages hold about 80 modules
    assert not [f for f in failed if f], "\n".join(failed)
