"""Run one call in a forked child process while the caller goes on (the second core).

A report spends most of its time in work that holds the interpreter lock for seconds:
rendering sheets with matplotlib and CoolProp's first import. Threads cannot overlap
those, a forked child can, and it needs no pickling of its inputs (it inherits the
caller's memory: figures, tables, the loaded site). Only the result comes back, pickled
through a pipe.

Where ``os.fork`` is missing (Windows), ``FRINGE_WORKERS=1`` is set or other threads
are running, the call runs at once in the caller and :meth:`ForkedCall.result` returns
what it gave, so results never depend on whether a child was used.

The child dies with its parent (Linux ``PR_SET_PDEATHSIG``), so a killed run leaves no
worker behind to write into a folder that is about to be discarded.
"""

from __future__ import annotations

import os
import pickle
import signal
import sys
import threading
from collections.abc import Callable
from typing import Any

from fringe.model.errors import FringeError

__all__ = ["ForkedCall", "forking_enabled"]


def forking_enabled() -> bool:
    """True when calls go to a forked child: POSIX, ``FRINGE_WORKERS`` is not 1, and no
    other Python thread is running (a thread holding a lock at the fork, e.g. in a GUI or
    a dask worker, could leave the child waiting on it forever)."""
    return (hasattr(os, "fork") and os.environ.get("FRINGE_WORKERS", "").strip() != "1"
            and threading.active_count() == 1)


def _die_with_parent(parent_pid: int) -> None:
    try:
        import ctypes

        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(1, int(signal.SIGKILL), 0, 0, 0)  # PR_SET_PDEATHSIG = 1
    except (OSError, AttributeError):  # not Linux: the parent-pid check below still runs
        pass
    if os.getppid() != parent_pid:  # the parent died before prctl took effect
        os._exit(1)


class ForkedCall:
    """``fn(*args, **kwargs)`` in a forked child; :meth:`result` waits for its value.

    Exceptions raised in the child are raised again by :meth:`result` (as they were when
    they pickle, otherwise as :class:`~fringe.model.errors.FringeError` with their text).
    :meth:`result` must be called once, so the child is reaped.
    """

    def __init__(self, fn: Callable[..., Any], /, *args: Any, **kwargs: Any) -> None:
        self._pid: int | None = None
        self._done = False
        self._value: Any = None
        self._error: BaseException | None = None
        if not forking_enabled():
            self._run_inline(fn, args, kwargs)
            return
        sys.stdout.flush()
        sys.stderr.flush()
        parent = os.getpid()
        read_fd, write_fd = os.pipe()
        pid = os.fork()
        if pid == 0:  # child: compute, send, leave without running the parent's clean-up
            code = 0
            try:
                os.close(read_fd)
                _die_with_parent(parent)
                try:
                    payload = pickle.dumps((True, fn(*args, **kwargs)))
                except BaseException as e:  # noqa: BLE001 - every failure goes back
                    try:
                        payload = pickle.dumps((False, e))
                    except Exception:  # an exception that does not pickle: its text
                        payload = pickle.dumps((False, FringeError(f"{type(e).__name__}: {e}")))
                with os.fdopen(write_fd, "wb") as fh:
                    fh.write(payload)
            except BaseException:  # noqa: BLE001 - the pipe broke: the parent reports it
                code = 1
            finally:
                os._exit(code)
        os.close(write_fd)
        self._pid, self._read_fd = pid, read_fd

    def _run_inline(self, fn, args, kwargs) -> None:
        try:
            self._value = fn(*args, **kwargs)
        except BaseException as e:  # noqa: BLE001 - raised again by result()
            self._error = e
        self._done = True

    def result(self) -> Any:
        """Wait for the child and return its value (or raise its exception)."""
        if not self._done:
            with os.fdopen(self._read_fd, "rb") as fh:
                data = fh.read()
            _, status = os.waitpid(self._pid, 0)
            self._done = True
            if not data:
                self._error = FringeError(
                    f"a worker process ended without a result (wait status {status})")
            else:
                ok, value = pickle.loads(data)
                if ok:
                    self._value = value
                else:
                    self._error = value
        if self._error is not None:
            raise self._error
        return self._value
