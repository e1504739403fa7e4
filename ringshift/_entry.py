"""Entry point of the ``ringshift`` command: pin the BLAS/OpenMP thread pools, block the stop signals, run the CLI.

ringshift's arrays are small (a few hundred atoms, a few thousand segments): a multi-threaded BLAS spends
more time starting and synchronising its threads than computing. With the pools unpinned,
``ringshift predict benzene.xyz`` took 2.4 s instead of 0.55 s on a 2-core machine, and
``numpy.polynomial.legendre.leggauss(400)`` alone ran 17× slower (measured for issue 16). The pools are
read once, when NumPy's BLAS loads, so the variables are set here, before anything imports NumPy.

A value the user has set is kept (``OPENBLAS_NUM_THREADS=4 ringshift ...`` overrides the pin);
``RINGSHIFT_THREADS=N`` sets all of them at once. The library import (``import ringshift`` in a notebook)
does not touch the environment.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, MutableMapping

#: Thread-pool variables of OpenBLAS, MKL, BLIS, OpenMP (GFN2-xTB through tblite) and Apple Accelerate.
THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS", "OMP_NUM_THREADS",
                    "VECLIB_MAXIMUM_THREADS")


def pin_threads(environ: MutableMapping[str, str] = os.environ) -> Mapping[str, str]:
    """Set every unset variable of :data:`THREAD_VARIABLES` to ``RINGSHIFT_THREADS`` (default 1).

    Returns the values in force afterwards. A ``RINGSHIFT_THREADS`` that is not a positive integer is
    ignored (1 is used): a start-up helper must not fail before the CLI can print a proper error.
    """
    wanted = environ.get("RINGSHIFT_THREADS", "1").strip()
    if not (wanted.isdigit() and int(wanted) > 0):
        wanted = "1"
    for name in THREAD_VARIABLES:
        environ.setdefault(name, wanted)
    return {name: environ[name] for name in THREAD_VARIABLES}


def main(argv=None):
    """Pin the thread pools and block SIGINT/SIGTERM (so that every thread a library starts inherits the block
    and the signals reach ringshift's watchdog only, :mod:`ringshift._signals`), then hand over to
    :func:`ringshift.cli.main`."""
    try:
        pin_threads()
        from ringshift._signals import block_early

        block_early()
    except KeyboardInterrupt:        # Ctrl-C in the first milliseconds, before the stop signals are blocked
        stopped_at_start()
    from ringshift.cli import main as cli_main

    return cli_main(argv)


def stopped_at_start() -> None:
    """The one line and exit 130 of a Ctrl-C that lands while the command starts (ringshift._signals not in force
    yet): nothing has been written, and Python's own traceback is not shown."""
    import sys

    print("ringshift: stopped by Ctrl-C (SIGINT); no partial output was left", file=sys.stderr)
    raise SystemExit(130)
