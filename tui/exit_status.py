"""Exit statuses of the command line and the one place that turns exceptions into them.

=====  ===========================================================================
0      success (``check``: every limit holds)
1      a limit is broken (``check``) or rows failed (``sweep``)
2      an input error: bad scenario, option or file; one line naming the key or file
3      an internal error (a bug): one line asking for a report; the traceback only with
       ``PULSETHERM_DEBUG=1`` in the environment
=====  ===========================================================================

Standard library only at import (``pulsetherm --help`` must not load numpy).

Every verb runs through :func:`guarded`, so a verb added to the command line inherits this
without code of its own.  Errors from the input are ``ValueError`` subclasses (the
project's ``ScenarioError``, ``UnitError``, ``WaveformError`` ...), ``OSError`` (a file
that cannot be read or written) and ``KeyError`` (a name that is not there).  Arithmetic
that overflows or divides by zero on hostile numbers is caught where the number is read and
raised as a ``ScenarioError`` naming the key; one that reaches this level is a bug (3).
``MemoryError`` and ``RecursionError`` come from inputs too large or too deeply nested for
the limits in front of them: status 2 with a line saying so.
"""
from __future__ import annotations

import errno
import os
import sys
import traceback
from typing import Callable

__all__ = ["EXIT_OK", "EXIT_LIMIT", "EXIT_ERROR", "EXIT_INTERNAL", "guarded", "one_line",
           "DEBUG_ENV", "REPORT_HINT"]

EXIT_OK, EXIT_LIMIT, EXIT_ERROR, EXIT_INTERNAL = 0, 1, 2, 3

#: Set to 1 to print the traceback of an internal error.
DEBUG_ENV = "PULSETHERM_DEBUG"
REPORT_HINT = ("this is a bug in pulsetherm; please report it with the scenario and the "
               f"command (set {DEBUG_ENV}=1 to see the traceback)")

_MAX_MESSAGE = 400


def one_line(text: str) -> str:
    """A message as one printable line of at most ~400 characters."""
    # imported here: the command line imports this module before numpy (``--help``)
    from pulsetherm.network.safe_io import printable

    text = printable(" ".join(str(text).split()))
    return text if len(text) <= _MAX_MESSAGE else text[:_MAX_MESSAGE] + " ..."


def _os_message(exc: OSError) -> str:
    name = exc.filename
    if exc.errno in (errno.ENOSPC, getattr(errno, "EDQUOT", -1)):
        what = f"no space left on the device ({exc.strerror})"
        return f"{name}: {what}" if name is not None else what
    if name is not None:
        return f"{name}: {exc.strerror or exc}"
    return str(exc)


def message_of(exc: BaseException) -> str:
    """The one-line message of an input error."""
    if isinstance(exc, OSError):
        return _os_message(exc)
    if isinstance(exc, KeyError) and exc.args:
        return str(exc.args[0])
    if isinstance(exc, MemoryError):
        return ("out of memory: the scenario asks for more than this machine holds "
                "(fewer layers, segments, rows or sweep points)")
    if isinstance(exc, RecursionError):
        return "the input is nested too deeply to read"
    return str(exc)


def guarded(verb: str, run: Callable[[], int],
            locate: Callable[[BaseException], BaseException] | None = None,
            stderr=None) -> int:
    """Run one verb; return its exit status, turning exceptions into statuses 0/2/3.

    ``locate(exc)`` may add the file and line to an input error before it is printed.
    """
    err = stderr if stderr is not None else sys.stderr
    try:
        return run()
    except KeyboardInterrupt:
        print(f"pulsetherm {verb}: interrupted", file=err)
        return EXIT_ERROR
    except BrokenPipeError:
        # the reader went away (``pulsetherm run ... | head``): stop quietly; point stdout
        # at devnull so the interpreter's final flush does not complain again
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except (OSError, ValueError, AttributeError):
            pass
        return EXIT_OK
    except Exception as exc:
        from pulsetherm.network.safe_io import is_input_error

        if not is_input_error(exc):
            return _internal(exc, err, verb)
        if locate is not None and isinstance(exc, ValueError):
            try:
                exc = locate(exc)
            except Exception:      # locating is a nicety; never let it hide the error
                pass
        print(f"pulsetherm {verb}: error: {one_line(message_of(exc))}", file=err)
        return EXIT_ERROR


def _internal(exc: BaseException, err, verb: str) -> int:
    """Status 3: one line asking for a report (the traceback with ``PULSETHERM_DEBUG=1``)."""
    if os.environ.get(DEBUG_ENV, "").strip() not in ("", "0"):
        traceback.print_exception(exc, file=err)
    print(f"pulsetherm {verb}: internal error ({type(exc).__name__}: "
          f"{one_line(str(exc))[:160]}); {REPORT_HINT}", file=err)
    return EXIT_INTERNAL
