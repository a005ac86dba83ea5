"""One BLAS thread for the small dense and banded matrices of a solve.

threadpoolctl's ``threadpool_limits`` looks the loaded libraries up on every
call (0.37 ms measured, a few per cent of a small solve); one controller, made
on first use, does it once (0.013 ms per limit).
"""
from __future__ import annotations

import functools
import os

_controller = None


def usable_cores() -> int:
    """The cores this process may run on: its CPU affinity where the platform has one (a container
    or ``taskset`` may allow fewer than the machine has), else ``os.cpu_count()``; at least 1."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def one_blas_thread():
    """A context manager limiting BLAS to one thread (threads only contend on these sizes)."""
    global _controller
    if _controller is None:
        from threadpoolctl import ThreadpoolController

        _controller = ThreadpoolController()
    return _controller.limit(limits=1, user_api="blas")


def inside(make_context):
    """Decorator: run the function inside ``make_context()`` (e.g. :func:`one_blas_thread`),
    keeping its signature and docstring (``help()`` shows the real ones)."""
    def decorate(func):
        @functools.wraps(func)
        def wrapper(*args, **kwargs):
            with make_context():
                return func(*args, **kwargs)
        return wrapper
    return decorate
