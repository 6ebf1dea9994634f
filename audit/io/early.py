"""Read the line list in a child process while this one imports CoolProp.

CoolProp's import loads its whole fluid library, some 1.5 s on one core, and holds the
interpreter's lock throughout, so a thread cannot overlap it.  Reading a line list needs no
CoolProp until its fluid names are resolved (``loader.read_linelist`` and ``finish_linelist``).
So the command line forks a child before the engine's imports; the child reads the file and
sends the result back through a pipe (pickled), while this process imports the engine; then
``finish_linelist`` resolves the fluids here.  The result is the same tables ``load_linelist``
gives (tests/test_early_read.py).

Only an optimisation: wherever it cannot help or anything goes wrong in the child (no fork,
standard input or another file that is not a regular one and so reads only once, a file too
large for the copy through the pipe to be worth it, CoolProp already imported, an unreadable
file), ``collect`` answers None and the caller reads the file itself, so every error appears as
it would without this module.  The child keeps the warnings its reading raises (a workbook
feature the reader drops, say) and sends them with the tables; they are shown here when the
result is used, so a warning appears once even where the file has to be read again.  Imports
nothing of the tool at module level.
"""
from __future__ import annotations

import os
import pickle
import stat
import sys
import warnings
from pathlib import Path

# Above these sizes the audit takes long enough that the second saved is small beside it, and the
# pickled tables in the pipe would add to the peak memory: such files are read in this process.
EARLY_MAX_BYTES_CSV = 16_000_000    # about 80,000 valves of the synthetic benchmark list
EARLY_MAX_BYTES_XLSX = 4_000_000    # a workbook is compressed, about four times as dense


class EarlyRead:
    """A child process reading one line list; ``collect`` gives its ``ReadLineList`` or None."""

    def __init__(self, pid: int, fd: int, key: tuple):
        self.pid, self.fd, self.key = pid, fd, key

    def collect(self, path, sheet, p_atm, limits):
        """The child's reading of this file with these arguments, or None (read it yourself).

        Waits for the child.  Answers None when the arguments differ from those the child was
        started with, or the child failed.
        """
        data = self._receive()
        if data is None or self.key != _key(path, sheet, p_atm, limits):
            return None
        try:
            read, caught = pickle.loads(data)
        except Exception:  # noqa: BLE001 - a damaged transfer: read the file here instead
            return None
        for message, category, filename, lineno in caught:  # as they would have shown, read here
            warnings.warn_explicit(message, category, filename, lineno)
        return read

    def cancel(self) -> None:
        """End the child without its result (the run stopped before reading)."""
        if self.pid:
            try:
                os.kill(self.pid, 9)
            except ProcessLookupError:
                pass
            self._receive()

    def _receive(self) -> bytes | None:
        if not self.pid:
            return None
        chunks = []
        with os.fdopen(self.fd, "rb") as pipe:
            while chunk := pipe.read(1 << 20):
                chunks.append(chunk)
        _, status = os.waitpid(self.pid, 0)
        self.pid = 0
        ok = os.WIFEXITED(status) and os.WEXITSTATUS(status) == 0
        return b"".join(chunks) if ok and chunks else None


def start_reading(path, sheet=None, p_atm=None, limits=None) -> EarlyRead | None:
    """Fork a child that reads ``path`` as ``loader.read_linelist(path, sheet, p_atm, limits)``.

    None where it would not help: see the module docstring.  p_atm None: the loader's default.
    """
    if not _worth_it(path):
        return None
    try:
        read_fd, write_fd = os.pipe()
    except OSError:  # no descriptors left, say: read in this process
        return None
    try:
        pid = os.fork()
    except OSError:
        os.close(read_fd)
        os.close(write_fd)
        return None
    if pid == 0:  # the child: read, send, and leave without running the parent's exit handlers
        os.close(read_fd)
        os._exit(_child(write_fd, path, sheet, p_atm, limits))
    os.close(write_fd)
    return EarlyRead(pid, read_fd, _key(path, sheet, p_atm, limits))


def _child(fd: int, path, sheet, p_atm, limits) -> int:
    """The child's work; its exit status (0: the result is in the pipe)."""
    try:
        from audit.workers import die_with_parent

        die_with_parent()
        from audit.io.loader import read_linelist
        from audit.memory import use_system_allocator_for_text

        use_system_allocator_for_text()  # as the run itself would read (audit.memory)
        extra = {} if p_atm is None else {"p_atm": p_atm}
        with warnings.catch_warnings(record=True) as caught:  # shown by the parent, once (module docstring)
            read = read_linelist(path, sheet, limits=limits, **extra)
        kept = [(str(w.message), w.category, w.filename, w.lineno) for w in caught]
        data = pickle.dumps((read, kept), protocol=pickle.HIGHEST_PROTOCOL)
        with os.fdopen(fd, "wb") as pipe:
            pipe.write(data)
    except BaseException:  # noqa: BLE001 - any failure: the parent reads the file itself, and reports it
        return 1
    return 0


def _worth_it(path) -> bool:
    if "CoolProp" in sys.modules or not hasattr(os, "fork") or str(path) == "-":
        return False
    try:
        info = Path(path).stat()
    except (OSError, ValueError):
        return False
    if not stat.S_ISREG(info.st_mode):  # a pipe or device reads once: the parent could not read it again
        return False
    limit = EARLY_MAX_BYTES_XLSX if str(path).lower().endswith((".xlsx", ".xlsm")) else EARLY_MAX_BYTES_CSV
    return info.st_size <= limit


def _key(path, sheet, p_atm, limits) -> tuple:
    return (str(path), sheet, p_atm, repr(limits))
