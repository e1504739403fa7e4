"""``python -m ringshift`` (and the ``ringshift`` command, ``run``) runs the command-line interface.

SIGINT and SIGTERM are blocked before anything is imported, so that every thread a library starts (BLAS
pools, RDKit) inherits the block and the signals reach ringshift's watchdog only (:mod:`ringshift._signals`).
"""



def run() -> None:
    """Console entry point: block the stop signals, then run :func:`ringshift.cli.main`."""
    from ringshift._signals import block_early

    block_early()
    from ringshift.cli import main

    main()


if __name__ == "__main__":  # pragma: no cover
    run()
