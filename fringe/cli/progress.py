"""Progress on stderr for the long commands: timed messages and a one-line bar.

:class:`Progress` prints one line per step with the elapsed time (``fringe report``,
``fringe place``); :class:`ProgressBar` redraws a bar of points done (``fringe map``).
Both are callables handed to the library as its ``progress`` argument.
"""

from __future__ import annotations

import re
import sys
import time

__all__ = ["Progress", "ProgressBar"]


#: A counted step of a stage: "<stage>: <words> i/n <rest>".
_STEP = re.compile(r"^(?P<stage>[^:]+):.*?\b(?P<i>\d+)/(?P<n>\d+)\b")


class Progress:
    """Progress messages on stderr with elapsed time (``[  1.2 s] message``); silent when
    ``quiet``.

    A counted step (``stage: … i/n …``) updates one live line when the stream is a
    terminal and is printed only at its last step otherwise, so a stage takes one line.
    """

    def __init__(self, quiet: bool = False, stream=None) -> None:
        self.quiet = quiet
        self.stream = stream
        self.t0 = time.monotonic()
        self._live = False  # a live line is open (terminal only)

    def __call__(self, msg: str) -> None:
        if self.quiet:
            return
        stream = self.stream if self.stream is not None else sys.stderr
        text = f"[{time.monotonic() - self.t0:5.1f} s] {msg}"
        step = _STEP.match(msg)
        last = step is None or int(step["i"]) >= int(step["n"])
        if _interactive(stream) and step is not None:
            stream.write("\r" + text + "\033[K" + ("\n" if last else ""))
            self._live = not last
        elif last:
            if self._live:
                stream.write("\n")
                self._live = False
            stream.write(text + "\n")
        stream.flush()


def _interactive(stream) -> bool:
    """Whether ``stream`` is a terminal (a live line can be redrawn there)."""
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


class ProgressBar:
    """A one-line text progress bar on a stream (stderr), redrawn at most 10× per second."""

    def __init__(self, stream=None, width: int = 30) -> None:
        self.stream = stream if stream is not None else sys.stderr
        self.width = width
        self.t0 = time.perf_counter()
        self.last = -1.0

    def __call__(self, done: int, total: int) -> None:
        now = time.perf_counter()
        if done < total and now - self.last < 0.1:
            return
        self.last = now
        frac = done / total if total else 1.0
        fill = int(round(frac * self.width))
        rate = done / max(now - self.t0, 1e-9)
        eta = (total - done) / rate if rate > 0 else float("inf")
        self.stream.write(f"\r[{'#' * fill}{'.' * (self.width - fill)}] {100 * frac:5.1f}% "
                          f"{done:.3g}/{total:.3g} points, {rate:.3g} points/s, "
                          f"{eta:5.1f} s left ")
        if done >= total:
            self.stream.write("\n")
        self.stream.flush()
