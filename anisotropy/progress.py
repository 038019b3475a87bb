"""One progress protocol for every long step (pair engine, bootstrap, batch, discovery).

Every public function with a ``progress`` argument reads it the same way:

``False`` or ``None``
    Quiet.
``True``
    One-line notes (a pair-count estimate, a finished stage or domain) are
    printed to standard error, or to the stream the caller names; counting
    bars (bootstrap replicates) are drawn with tqdm only where standard
    error is a terminal, and are quiet otherwise, so a log file never
    fills with carriage-return bars.
a callable
    Receives every note as one line of text, and one closing line per
    counting bar (what was counted, how many, how long); nothing is printed.

Use :func:`note` for a line and :class:`Bar` for a count.
"""

from __future__ import annotations

import sys
import time

from tqdm import tqdm

__all__ = ["note", "Bar", "is_terminal"]


def is_terminal(stream=None) -> bool:
    """True when ``stream`` (default standard error) is attached to a terminal."""
    stream = sys.stderr if stream is None else stream
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):  # a closed or replaced stream
        return False


def note(progress, message: str, *, stream=None) -> None:
    """Send one line of progress: to a callable, to ``stream`` (stderr) when True, else nowhere.

    Parameters
    ----------
    progress : bool, None or callable
    message : str
    stream : file-like, optional
        Where ``progress=True`` prints (default standard error).
    """
    if not progress:
        return
    if callable(progress):
        progress(message)
        return
    print(message, file=sys.stderr if stream is None else stream, flush=True)


class Bar:
    """A counting bar: tqdm on a terminal, a closing line for a callable, else quiet.

    Parameters
    ----------
    progress : bool, None or callable
    total : int
        Items to count.
    label : str
        What is counted (``"bootstrap"``).

    Examples
    --------
    >>> with Bar(False, 3, "replicates") as bar:
    ...     for _ in range(3):
    ...         bar.update()
    """

    def __init__(self, progress, total: int, label: str):
        self.progress, self.total, self.label = progress, int(total), label
        self.done = 0
        self._t0 = time.perf_counter()
        self._bar = None
        if progress is True and is_terminal():
            self._bar = tqdm(total=self.total, desc=label, file=sys.stderr, leave=True,
                             dynamic_ncols=True)

    def update(self, n: int = 1) -> None:
        """Count ``n`` more items."""
        self.done += int(n)
        if self._bar is not None:
            self._bar.update(int(n))

    def close(self) -> None:
        """Finish the bar (a callable receives the closing line)."""
        if self._bar is not None:
            self._bar.close()
            self._bar = None
        elif callable(self.progress):
            self.progress(f"{self.label}: {self.done}/{self.total} in "
                          f"{time.perf_counter() - self._t0:.1f} s")

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False
