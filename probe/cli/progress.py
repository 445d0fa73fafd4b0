"""The progress display of every long run: a bar on stderr with the steps
done and an estimate of the time left, only when stderr is a terminal.

One mechanism for all commands: the steps of a sweep are its points (shown
at once, as grids are long), those of ``compare`` the points of all its
models, of ``solve`` the scan points and the evaluations of the refinement,
of ``rates`` and ``transit`` the scenarios.  Runs of few, possibly short
steps pass ``delay``: their bar appears only once the run has lasted that
long (about 2 s), so a quick run prints nothing."""
from __future__ import annotations

import sys
import threading
import time

import click

#: seconds a run lasts before a delayed bar appears
PROGRESS_DELAY = 2.0


def terminal_stream():
    """stderr when it is a terminal, else None (then nothing is shown)."""
    stream = sys.stderr
    try:
        return stream if stream.isatty() else None
    except (AttributeError, ValueError):
        return None


class Progress:
    """``Progress(total, label)``: call it with the number of steps just
    finished; ``grow(n)`` when more steps turn out to be needed; ``close()``
    at the end (also a context manager).  ``delay``: seconds before the bar
    appears (``True``: :data:`PROGRESS_DELAY`); ``stream``: where to draw it
    (default: stderr when it is a terminal)."""

    def __init__(self, total, label, delay=0.0, stream=None):
        self.total = int(total)
        self.label = label
        self.done = 0
        self.delay = PROGRESS_DELAY if delay is True else float(delay)
        self.started = time.monotonic()
        self.bar = None
        self.timer = None
        self.lock = threading.Lock()
        self.stream = stream if stream is not None else terminal_stream()
        if self.stream is not None and self.delay > 0:
            self.timer = threading.Timer(self.delay, self._show)
            self.timer.daemon = True
            self.timer.start()
        with self.lock:
            self._maybe_show()

    def _maybe_show(self, timed=False):
        """Show the bar once there are steps to count and the delay is over
        (call with the lock held); a run of one step shows it only when the
        delay has run out (``timed``)."""
        if self.bar is not None or self.stream is None or self.total < (1 if timed else 2):
            return
        if not timed and self.delay > 0 and time.monotonic() - self.started < self.delay:
            return
        self.bar = click.progressbar(length=self.total, label=self.label,
                                     file=self.stream, show_pos=True, show_eta=True)
        eta = self.bar.format_eta
        self.bar.format_eta = lambda: f"{eta()} left" if self.bar.eta_known else ""
        self.bar.__enter__()
        if self.done:
            self.bar.update(self.done)

    def _show(self):
        with self.lock:
            self._maybe_show(timed=True)

    def __call__(self, n):
        with self.lock:
            self.done += int(n)
            if self.done > self.total:
                self._set_total(self.done)
            if self.bar is not None:
                self.bar.update(int(n))
            else:
                self._maybe_show()

    def _set_total(self, total):
        self.total = int(total)
        if self.bar is not None:
            self.bar.length = self.total
            self.bar.finished = self.bar.pos >= self.total

    def grow(self, n):
        """``n`` more steps than announced."""
        with self.lock:
            self._set_total(self.total + int(n))
            if self.bar is not None:
                self.bar.render_progress()
            else:
                self._maybe_show()

    def close(self):
        if self.timer is not None:
            self.timer.cancel()
            self.timer = None
        with self.lock:
            if self.bar is not None:
                self.bar.__exit__(None, None, None)
                self.bar = None
            self.stream = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False
