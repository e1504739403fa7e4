"""The command's entry point pins the BLAS/OpenMP thread pools before NumPy loads (issue 16)."""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

from ringshift._entry import THREAD_VARIABLES, pin_threads


@pytest.mark.parametrize(("given", "expected"), [
    ({}, "1"),
    ({"RINGSHIFT_THREADS": "3"}, "3"),
    ({"RINGSHIFT_THREADS": "zero"}, "1"),
    ({"RINGSHIFT_THREADS": "0"}, "1"),
], ids=["default-one", "ringshift-threads", "not-a-number", "zero"])
def test_unset_pools_are_pinned(given, expected):
    env = dict(given)
    values = pin_threads(env)
    assert set(values) == set(THREAD_VARIABLES)
    assert all(v == expected for v in values.values())


def test_a_value_the_user_set_is_kept():
    env = {"OPENBLAS_NUM_THREADS": "4", "RINGSHIFT_THREADS": "2"}
    values = pin_threads(env)
    assert values["OPENBLAS_NUM_THREADS"] == "4"
    assert values["OMP_NUM_THREADS"] == "2"


def test_library_import_leaves_the_environment_alone():
    code = ("import os, json; before = dict(os.environ); import ringshift; "
            "print(json.dumps(dict(os.environ) == before))")
    env = {k: v for k, v in os.environ.items() if k not in THREAD_VARIABLES}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=120)
    assert out.stdout.strip() == "true", out.stderr


def test_nothing_before_the_pin_loads_numpy():
    # the pools are read when NumPy's BLAS loads, so the entry module must be reachable without NumPy
    code = "import sys, ringshift._entry; print('numpy' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.stdout.strip() == "False", out.stderr


def test_module_entry_pins_the_pools():
    # python -m ringshift goes through ringshift._entry
    code = ("import sys, runpy; sys.argv = ['ringshift', '--help']\n"
            "try:\n    runpy.run_module('ringshift', run_name='__main__')\nexcept SystemExit:\n    pass\n"
            "import os; print(os.environ.get('OPENBLAS_NUM_THREADS'))")
    env = {k: v for k, v in os.environ.items() if k not in THREAD_VARIABLES and k != "RINGSHIFT_THREADS"}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=120)
    assert out.stdout.strip().splitlines()[-1] == "1", out.stderr
