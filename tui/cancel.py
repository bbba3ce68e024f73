"""Stopping a solve that runs in a worker thread.

A Python thread cannot be killed, and a Textual thread worker only notes that it was
cancelled.  :class:`Stopper` makes a cancelled solve stop promptly: while the solve runs
it records its thread, and :meth:`Stopper.stop` raises :class:`SolveCancelled` inside that
thread (CPython's ``PyThreadState_SetAsyncExc``), which takes effect at the thread's next
Python instruction - between two steps of an integrator, between two runs of a sweep.  A
single long call into compiled code (one large factorisation) finishes first.
"""
from __future__ import annotations

import ctypes
import threading
from contextlib import contextmanager
from typing import Iterator

__all__ = ["SolveCancelled", "Stopper"]


class SolveCancelled(Exception):
    """Raised inside a worker thread whose solve was cancelled."""


class Stopper:
    """Tracks the threads running stoppable work (one per group name)."""

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._threads: dict[str, int] = {}

    @contextmanager
    def running(self, group: str) -> Iterator[None]:
        """Mark the block as stoppable; a stop arriving inside it raises SolveCancelled
        there.  Use as ``try: with stopper.running(g): ... except SolveCancelled: ...``."""
        with self._lock:
            self._threads[group] = threading.get_ident()
        try:
            yield
        finally:
            with self._lock:
                if self._threads.get(group) == threading.get_ident():
                    del self._threads[group]

    def busy(self, group: str) -> bool:
        with self._lock:
            return group in self._threads

    def stop(self, group: str) -> bool:
        """Interrupt the work of ``group``; True when there was work to interrupt."""
        with self._lock:
            tid = self._threads.pop(group, None)
            if tid is None:
                return False
            done = ctypes.pythonapi.PyThreadState_SetAsyncExc(
                ctypes.c_ulong(tid), ctypes.py_object(SolveCancelled))
            return bool(done)
