"""Command-line options of the resource limits (``--memory-limit``, ``--time-limit``), shared by every command
that loads a structure. They set :func:`ringshift.limits.set_limits` for the run and override the environment
variables ``RINGSHIFT_MEMORY_MB`` / ``RINGSHIFT_TIME_LIMIT_S``; not given, the variable (or the default) applies.
Every invocation sets both (None when absent), so one run's option never leaks into the next in one process."""

from __future__ import annotations

import click


def _set(key: str):
    def callback(ctx, param, value):
        from ringshift import limits

        limits.set_limits(**{**dict(zip(("memory_MB", "time_s"), limits.overrides())), key: value})
        return value
    return callback


limit_options = [
    click.option("--memory-limit", type=float, default=None, metavar="MB",
                 expose_value=False, callback=_set("memory_MB"),
                 help="Refuse a structure whose estimated peak memory (conformers, Hückel step, map) exceeds MB "
                      "[default: $RINGSHIFT_MEMORY_MB, else 4000]."),
    click.option("--time-limit", type=float, default=None, metavar="SECONDS",
                 expose_value=False, callback=_set("time_s"),
                 help="Refuse a structure whose estimated run time (conformers, Hückel step, map) exceeds SECONDS "
                      "[default: $RINGSHIFT_TIME_LIMIT_S, else 900]."),
]
