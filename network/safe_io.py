"""Files at the edges: reading scenario and table inputs, writing outputs, safe messages.

Standard library only (the command line imports it before numpy).

Inputs (:func:`read_text`)
    Only regular files are read: a directory, a FIFO, a device (``/dev/zero``) or a socket is
    refused before it is opened, so nothing blocks or streams without end.  The size is
    capped before reading (``max_bytes``), UTF-8 with or without a byte-order mark is
    accepted, and a decoding error names the file and the byte offset, never the content.

Outputs (:func:`atomic_open`)
    Only regular files are written.  A target that exists and is a directory, FIFO, device
    or socket is refused (``--csv /dev/null`` never replaces the device node).  A symbolic
    link is followed deliberately: when it points to a regular file, that file is replaced
    (the link stays a link); a dangling link is refused.  The data go to a temporary file
    in the target's folder, which is renamed onto the target only when the writer finishes
    without an exception, so a failure never leaves a partial file.  The new file gets the
    mode of the file it replaces, or ``0o666`` less the user's umask for a new file (not
    the temporary file's ``0o600``).  An error while writing (disk full) names the target.

Messages (:func:`printable`)
    Control characters in text echoed back to a terminal (keys, names, values) are shown as
    escapes (``\\x1b``), so a scenario cannot send terminal escape codes.
"""
from __future__ import annotations

import contextlib
import os
import stat
import tempfile
import threading
from pathlib import Path
from typing import Any, Iterator

__all__ = ["InputFileError", "read_text", "atomic_open", "printable", "check_output_target",
           "MAX_SCENARIO_BYTES", "MAX_TABLE_BYTES", "is_input_error"]

#: Largest scenario file read, bytes (the shipped examples are 2-4 kB).
MAX_SCENARIO_BYTES = 1_000_000
#: Largest CSV envelope read, bytes (about 10^6 rows).
MAX_TABLE_BYTES = 64_000_000


class InputFileError(ValueError):
    """A file that cannot be read as an input; the message names the file (and the key that
    named it, when there is one), never its content."""


def printable(text: str) -> str:
    """``text`` with every non-printable character (control codes, escape, bidi controls)
    written as a Python escape, so echoing it cannot drive a terminal."""
    if text.isprintable():
        return text
    out = []
    for ch in text:
        if ch.isprintable() or ch == " ":
            out.append(ch)
        else:
            code = ord(ch)
            out.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")
    return "".join(out)


def _kind_of(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a directory"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def read_text(path: str | os.PathLike, what: str = "file", max_bytes: int = MAX_SCENARIO_BYTES,
              where: str = "") -> str:
    """The text of a regular file of at most ``max_bytes`` bytes, UTF-8 (a byte-order mark
    is dropped).

    ``what`` names the file's role in messages ("scenario", "CSV envelope"); ``where`` is
    the key that named the file (prefixed to the message).  Raises :class:`InputFileError`
    (a ``ValueError``) for anything but a readable regular UTF-8 file within the cap, and
    ``OSError`` (with the file name) when the file cannot be opened.
    """
    p = os.fspath(path)
    lead = f"{where}: " if where else ""
    st = os.stat(p)                      # FileNotFoundError / PermissionError name the file
    if not stat.S_ISREG(st.st_mode):
        raise InputFileError(f"{lead}{what} {printable(str(p))!r} is {_kind_of(st.st_mode)}; "
                             "expected a regular file")
    if st.st_size > max_bytes:
        raise InputFileError(f"{lead}{what} {printable(str(p))!r} has {st.st_size} bytes; "
                             f"expected at most {max_bytes} bytes")
    # O_NONBLOCK: if the path was swapped for a FIFO after the check, open does not wait
    fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    with os.fdopen(fd, "rb") as fh:
        if not stat.S_ISREG(os.fstat(fh.fileno()).st_mode):
            raise InputFileError(f"{lead}{what} {printable(str(p))!r} is not a regular file")
        data = fh.read(max_bytes + 1)
    if len(data) > max_bytes:
        raise InputFileError(f"{lead}{what} {printable(str(p))!r} is larger than {max_bytes} "
                             "bytes")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputFileError(f"{lead}{what} {printable(str(p))!r}: not UTF-8 text (byte "
                             f"{exc.start}); expected a UTF-8 file") from None


_UMASK_LOCK = threading.Lock()


def _umask() -> int:
    """The process umask now: from /proc where the kernel shows it (reading it through
    os.umask means setting it for a moment, which another thread could see)."""
    try:
        with open("/proc/self/status", encoding="ascii", errors="replace") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    with _UMASK_LOCK:
        mask = os.umask(0o022)
        os.umask(mask)
        return mask


def check_output_target(path: str | os.PathLike) -> tuple[Path, int | None]:
    """Where an output to ``path`` really goes and the mode to keep.

    Returns (final path, mode of the regular file it replaces or None for a new file).
    Raises :class:`InputFileError` for a directory, FIFO, device or socket at the target,
    a dangling symbolic link, or a missing folder.
    """
    p = Path(path)
    shown = printable(str(path))
    try:
        lst = os.lstat(p)
    except FileNotFoundError:
        lst = None
    except OSError as exc:
        raise InputFileError(f"output {shown!r}: {exc.strerror or exc}") from None
    if lst is not None and stat.S_ISLNK(lst.st_mode):
        real = Path(os.path.realpath(p))
        try:
            st = os.stat(real)
        except OSError:
            raise InputFileError(f"output {shown!r} is a symbolic link to a missing file; "
                                 "expected a regular file or a new name") from None
        if not stat.S_ISREG(st.st_mode):
            raise InputFileError(f"output {shown!r} links to {_kind_of(st.st_mode)}; expected "
                                 "a regular file or a new name")
        return real, stat.S_IMODE(st.st_mode)
    if lst is not None:
        if not stat.S_ISREG(lst.st_mode):
            raise InputFileError(f"output {shown!r} is {_kind_of(lst.st_mode)}; expected a "
                                 "regular file or a new name")
        return p, stat.S_IMODE(lst.st_mode)
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputFileError(f"output {shown!r}: folder {printable(str(folder))!r} does not "
                             "exist")
    return p, None


@contextlib.contextmanager
def atomic_open(path: str | os.PathLike, mode: str = "w",
                newline: str | None = None) -> Iterator[Any]:
    """Open a temporary file beside ``path``; rename it onto ``path`` only when the ``with``
    block ends without an exception (else it is removed).  See the module notes for the
    rules on what may be replaced.  ``mode`` is ``"w"`` (UTF-8 text) or ``"wb"``."""
    target, keep_mode = check_output_target(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent)
    try:
        try:
            os.fchmod(fd, keep_mode if keep_mode is not None else 0o666 & ~_umask())
        except (AttributeError, OSError):  # pragma: no cover - platforms without fchmod
            pass
        text = {} if "b" in mode else {"encoding": "utf-8", "newline": newline}
        try:
            with os.fdopen(fd, mode, **text) as fh:
                yield fh
            os.replace(tmp, target)
        except OSError as exc:
            if exc.filename is None or str(exc.filename) == tmp:
                # disk full, quota: name the output the user asked for, not the temporary
                raise OSError(exc.errno, f"cannot write ({exc.strerror or exc})",
                              str(path)) from None
            raise
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


#: Environment variable with extra folders (``os.pathsep``-separated) that scenarios may read
#: table files from, as ``--allow-path`` gives (worker processes inherit it).
ALLOW_ENV = "PULSETHERM_ALLOW_PATH"


def resolve_inside(base: str | os.PathLike, name: str,
                   allowed: tuple[str, ...] = ()) -> Path:
    """The file ``name`` (relative to the folder ``base``, or absolute) with every symbolic
    link resolved, refused unless it lies inside ``base`` or one of the ``allowed`` folders
    (and those of :data:`ALLOW_ENV`).

    A scenario is data: it must not make the program read, and echo parts of, files it was
    not given (``../../etc/...``, an absolute path, a link pointing out of the folder).
    Raises :class:`InputFileError` naming the folder and the way to allow another.
    """
    root = Path(base).resolve()
    target = (root / name).resolve()
    extra = [d for d in os.environ.get(ALLOW_ENV, "").split(os.pathsep) if d.strip()]
    roots = [root] + [Path(d).expanduser().resolve() for d in (*allowed, *extra)]
    if not any(target == r or target.is_relative_to(r) for r in roots):
        raise InputFileError(f"a file inside the scenario's folder {printable(str(root))!r} "
                             "(this one resolves outside it; pass --allow-path DIR to allow "
                             "another folder)")
    return target


def is_input_error(exc: BaseException) -> bool:
    """True when ``exc`` is the user's input error (exit 2, a failed sweep row), False when
    it is a bug in pulsetherm (exit 3).

    Input errors are the project's own error classes (``ValueError`` subclasses defined in
    ``pulsetherm``: ``ScenarioError``, ``UnitError``, ``WaveformError`` ...), a plain
    ``ValueError`` raised by pulsetherm's own code, files that cannot be read or written
    (``OSError``), text that is not UTF-8 or not TOML, a name that is not there (``KeyError``)
    and inputs too large or too deep for the machine (``MemoryError``, ``RecursionError``).
    A ``ValueError`` subclass of a library (numpy's ``LinAlgError``, say) is not: the
    project checks its inputs before calling the libraries, so one reaching the top is ours.
    """
    import tomllib

    if isinstance(exc, (OSError, MemoryError, RecursionError, UnicodeError, KeyError,
                        tomllib.TOMLDecodeError)):
        return True
    if not isinstance(exc, ValueError):
        return False
    cls = type(exc)
    if cls.__module__.startswith("pulsetherm."):
        return True
    if cls is not ValueError:
        return False
    # a plain ValueError: the project's own (its innermost frame is pulsetherm's code, as
    # for float('x') on a user's text), or one raised inside a library's Python code
    tb = exc.__traceback__
    while tb is not None and tb.tb_next is not None:
        tb = tb.tb_next
    return tb is None or _in_project(tb.tb_frame.f_code.co_filename)


def _in_project(filename: str) -> bool:
    """True for a source file of the pulsetherm packages (network, waveforms, tui)."""
    here = Path(__file__).resolve().parent          # network/
    roots = (here, here.parent / "waveforms", here.parent / "tui")
    try:
        path = Path(filename).resolve()
    except (OSError, RuntimeError):
        return False
    return any(root == path.parent for root in roots)
