"""Reading one uploaded file under a bound on time and memory.

An upload is read by :func:`run` in a child process forked for that one reading: the
child limits its own address space to what it already had plus ``memory_bytes`` and its
CPU time, and the parent (the gunicorn worker, or the background job's process) waits at
most ``seconds`` for the answer, then kills the child. So a zip bomb, a file of millions
of bad cells or a reader that never ends costs the child, never the worker: the worker's
memory does not grow and it answers within its timeout, with a coded problem —

* ``UI704`` reading took longer than ``read_seconds``;
* ``UI705`` reading needed more memory than ``read_memory_bytes`` (a ``MemoryError`` in the
  child, or the child ended by a signal such as the kernel's out-of-memory killer).

The engine's own guards (pipeline.ingest) refuse what they recognise before this matters;
this is the bound for what they do not. A coded problem the child raises comes back as
the same ``RealbasisError``; anything else it raises is a bug and comes back as one with
the traceback logged (``UI706``, see :mod:`dashboard.failures`).

Linux and macOS (``os.fork``, ``resource``); elsewhere the function runs in process.
"""

from __future__ import annotations

import contextlib
import logging
import os
import pickle
import select
import signal
import sys
import time
import traceback
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Generic, TypeVar

from pipeline.errors import RealbasisError, fail, register

UI704 = register("UI704", "reading the file took too long")
UI705 = register("UI705", "reading the file needed too much memory")

T = TypeVar("T")
log = logging.getLogger("realbasis.dashboard")


@dataclass(frozen=True)
class Bounded(Generic[T]):
    """What :func:`run` returns: the value, the child's peak resident memory (bytes; its
    pages shared with the parent included) and the seconds it took."""

    value: T
    peak_rss: int
    seconds: float


def _vm_size() -> int:
    """Bytes of address space this process has now (Linux: /proc/self/status)."""
    with contextlib.suppress(OSError, ValueError), open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith("VmSize:"):
                return int(line.split()[1]) * 1024
    return 0


def _child(fn: Callable[..., Any], args: tuple[Any, ...], kwargs: dict[str, Any],
           memory_bytes: int, seconds: float, out: int) -> None:
    import resource

    try:
        vm = _vm_size()
        if vm:
            limit = vm + int(memory_bytes)
            resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
        cpu = int(seconds) + 1
        resource.setrlimit(resource.RLIMIT_CPU, (cpu, cpu + 1))
        try:
            answer: tuple[str, Any] = ("ok", fn(*args, **kwargs))
        except RealbasisError as err:
            answer = ("problems", err.problems)
        except MemoryError:
            answer = ("memory", None)
        except BaseException:  # a bug: reported to the parent, logged there
            answer = ("bug", traceback.format_exc())
        try:
            data = pickle.dumps(answer, protocol=pickle.HIGHEST_PROTOCOL)
        except MemoryError:
            data = pickle.dumps(("memory", None))
        except Exception:  # an answer that cannot be sent is a bug
            data = pickle.dumps(("bug", traceback.format_exc()))
        view = memoryview(data)
        while view:
            n = os.write(out, view[:1 << 20])
            view = view[n:]
    finally:
        os._exit(0)


def _too_long(seconds: float, what: str) -> RealbasisError:
    return fail(UI704, f"{what} took longer than the server allows",
                expected=f"at most {seconds:g} s", found="still working; stopped",
                fix="Split the file or drop what is not needed (very many columns, huge "
                    "cells, many sheets), or ask the administrator to raise "
                    "REALBASIS_READ_SECONDS.")


def _too_big(memory_bytes: int, what: str, found: str) -> RealbasisError:
    return fail(UI705, f"{what} needed more memory than the server allows",
                expected=f"at most {memory_bytes / 1024 ** 2:,.0f} MB", found=found,
                fix="Split the file or drop what is not needed; a small workbook that "
                    "unpacks to gigabytes is refused. Or ask the administrator to raise "
                    "REALBASIS_READ_MEMORY_BYTES.")


def run(fn: Callable[..., T], *args: Any, memory_bytes: int, seconds: float,
        what: str = "reading the file", **kwargs: Any) -> Bounded[T]:
    """``fn(*args, **kwargs)`` in a forked child bounded by ``memory_bytes`` more memory
    and ``seconds`` (see the module notes). Raises the child's ``RealbasisError``, or
    ``UI704``/``UI705``."""
    start = time.monotonic()
    if not hasattr(os, "fork") or sys.platform == "win32":
        return Bounded(fn(*args, **kwargs), 0, time.monotonic() - start)
    read_end, write_end = os.pipe()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)  # "multi-threaded fork" (3.12+)
        pid = os.fork()
    if pid == 0:  # pragma: no cover - the child ends in os._exit
        os.close(read_end)
        _child(fn, args, kwargs, memory_bytes, seconds, write_end)
    os.close(write_end)
    chunks: list[bytes] = []
    timed_out = False
    try:
        deadline = start + seconds
        while True:
            left = deadline - time.monotonic()
            if left <= 0:
                timed_out = True
                break
            ready, _, _ = select.select([read_end], [], [], left)
            if not ready:
                continue
            chunk = os.read(read_end, 1 << 20)
            if not chunk:
                break
            chunks.append(chunk)
    finally:
        os.close(read_end)
        if timed_out:
            with contextlib.suppress(ProcessLookupError):
                os.kill(pid, signal.SIGKILL)
        _, status, usage = os.wait4(pid, 0)
    took = time.monotonic() - start
    peak = int(usage.ru_maxrss) * (1 if sys.platform == "darwin" else 1024)
    if timed_out:
        raise _too_long(seconds, what)
    if not chunks:
        sig = os.WTERMSIG(status) if os.WIFSIGNALED(status) else None
        if sig in (signal.SIGXCPU,):
            raise _too_long(seconds, what)
        raise _too_big(memory_bytes, what, f"the reading process ended (signal {sig})"
                       if sig else "the reading process ended without an answer")
    kind, value = pickle.loads(b"".join(chunks))
    if kind == "ok":
        return Bounded(value, peak, took)
    if kind == "problems":
        raise RealbasisError(tuple(value))
    if kind == "memory":
        raise _too_big(memory_bytes, what, "MemoryError")
    log.error("%s failed in the reading process:\n%s", what, value)
    from .failures import unexpected

    raise unexpected()
