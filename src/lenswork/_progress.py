"""Progress reporting for long steps, silent unless a front end switches it on.

The library calls :func:`step` around every long computation and
:func:`track` around long loops; both cost nothing while the silent reporter
is installed (the default). The CLI installs a printing reporter with
:func:`configure`: on when stderr is a terminal, off with ``-q``, forced on or
off with ``--progress`` / ``--no-progress`` or the environment variable
``LENSWORK_PROGRESS`` (``1`` / ``0``).

What the printing reporter writes to stderr:

* a step is one line, ``label ... 0.53 s``, indented two spaces per level of
  nesting. When a nested step or loop starts inside it, the parent's line is
  ended first (``label ...``), the children follow indented one level deeper,
  and the parent closes with its own ``label ... 0.60 s`` line, so no line is
  ever broken by another;
* a loop is one line: on a terminal a click progress bar redrawn in place with
  the count (``3/10``), the rate (``4.2/s``) and the time left; otherwise
  (forced on, e.g. into a log file) a line every ``interval`` seconds and a
  closing line with the count, rate and time. Inside a loop the bar is the
  one line: steps and loops nested in it run unreported;
* anything else written to the same stream (the CLI's warnings) calls
  :func:`interrupt` first, which ends a step's open ``label ...`` line or the
  loop's bar line, so the message gets a line of its own.

Examples
--------
>>> import io
>>> out = io.StringIO()
>>> previous = set_reporter(True, out)
>>> with step("outer"):
...     with step("inner"):
...         pass
>>> for _ in track(range(3), "items", length=3):
...     pass
>>> restore(previous)
>>> import re
>>> print(re.sub(r"\\d+\\.\\d+ s|[^ (]+/s", "T", out.getvalue()).rstrip())
  outer ...
    inner ... T
  outer ... T
  items: 3/3 in T (T)
"""

from __future__ import annotations

import contextlib
import os
import sys
import time

__all__ = [
    "ENV_VAR", "configure", "interrupt", "note", "progress_wanted", "restore", "set_reporter",
    "step", "track",
]

#: Environment variable that forces progress on (1, yes, on, always) or off (0, no, off, never).
ENV_VAR = "LENSWORK_PROGRESS"

_ON = {"1", "yes", "on", "true", "always"}
_OFF = {"0", "no", "off", "false", "never"}


class _Silent:
    def interrupt(self):
        pass

    def note(self, text):
        pass

    def step(self, label):
        return contextlib.nullcontext()

    def track(self, iterable, label, length=None):
        return iterable


def _isatty(stream):
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):  # no isatty, or a closed stream
        return False


def _rate(count, seconds):
    rate = count / seconds if seconds > 0 else float("inf")
    if rate == float("inf"):
        return "-/s"
    return f"{rate:.0f}/s" if rate >= 100 else f"{rate:.3g}/s"


def _duration(seconds):
    if seconds < 60:
        return f"{seconds:.2f} s" if seconds < 10 else f"{seconds:.0f} s"
    minutes, secs = divmod(int(round(seconds)), 60)
    if minutes < 60:
        return f"{minutes}m {secs:02d}s"
    hours, minutes = divmod(minutes, 60)
    return f"{hours}h {minutes:02d}m"


def _count(count, length):
    return f"{count}/{length}" if length is not None else str(count)


class _Open:
    """A step whose ``label ...`` line is still waiting for its time."""

    __slots__ = ("label",)

    def __init__(self, label):
        self.label = label


class _Printing:
    """Writes step lines and loop bars to ``stream`` (stderr by default).

    ``live`` redraws a loop's line in place (a click progress bar); it defaults
    to whether the stream is a terminal. ``interval`` is the time between the
    lines of a loop when not live.
    """

    def __init__(self, stream=None, *, live=None, interval=5.0):
        self.stream = stream or sys.stderr
        self.live = _isatty(self.stream) if live is None else bool(live)
        self.interval = float(interval)
        self.depth = 0
        self._open = None  # the innermost step whose line is not yet ended
        self._loops = 0  # > 0 while a loop's line is on screen

    def _write(self, text):
        self.stream.write(text)
        self.stream.flush()

    def _indent(self):
        return "  " * (self.depth + 1)

    def _end_open_line(self):
        """End a parent's ``label ...`` line before anything nested is written."""
        if self._open is not None:
            self._write("\n")
            self._open = None

    def interrupt(self):
        """End the line on screen (an open step or a live bar) before an outside message."""
        if self._open is not None:
            self._end_open_line()
        elif self._loops and self.live:
            self._write("\n")  # the bar redraws itself on the next line

    def note(self, text):
        """One line of information at the current indentation (never inside a loop's bar)."""
        if self._loops:
            return
        self._end_open_line()
        self._write(f"{self._indent()}{text}\n")

    @contextlib.contextmanager
    def step(self, label):
        if self._loops:  # inside a loop the bar is the one line
            yield
            return
        self._end_open_line()
        indent = self._indent()
        mine = _Open(label)
        self._write(f"{indent}{label} ...")
        self._open = mine
        self.depth += 1
        start = time.perf_counter()
        outcome = "failed"
        try:
            yield
            outcome = _duration(time.perf_counter() - start)
        finally:
            self.depth -= 1
            if self._open is mine:  # nothing nested was printed: finish the same line
                self._write(f" {outcome}\n")
                self._open = None
            else:
                self._end_open_line()
                self._write(f"{indent}{label} ... {outcome}\n")

    def track(self, iterable, label, length=None):
        if length is None:
            try:
                length = len(iterable)
            except TypeError:
                length = None
        if self._loops:
            yield from iterable
            return
        self._end_open_line()
        text = f"{self._indent()}{label}"
        self._loops += 1
        try:
            if self.live:
                yield from self._bar(iterable, text, length)
            else:
                yield from self._lines(iterable, text, length)
        finally:
            self._loops -= 1

    def _bar(self, iterable, text, length):
        import click

        holder = {}

        def rate_and_time(_item):
            bar = holder.get("bar")
            if bar is None or bar.pos == 0:
                return None
            elapsed = time.time() - bar.start
            if bar.finished:
                return f"{_rate(bar.pos, elapsed)}  in {_duration(elapsed)}"
            return _rate(bar.pos, elapsed)

        with click.progressbar(
            iterable, length=length, label=text, file=self.stream, show_eta=True,
            show_pos=True, show_percent=length is not None, item_show_func=rate_and_time,
        ) as bar:
            holder["bar"] = bar
            yield from bar

    def _lines(self, iterable, text, length):
        start = last = time.perf_counter()
        count = 0
        for item in iterable:
            yield item
            count += 1
            now = time.perf_counter()
            if now - last >= self.interval and (length is None or count < length):
                last = now
                left = ""
                if length is not None:
                    left = f", {_duration((now - start) / count * (length - count))} left"
                rate = _rate(count, now - start)
                self._write(f"{text}: {_count(count, length)} ({rate}{left})\n")
        elapsed = time.perf_counter() - start
        self._write(
            f"{text}: {_count(count, length)} in {_duration(elapsed)} ({_rate(count, elapsed)})\n"
        )


_reporter = _Silent()


def set_reporter(verbose, stream=None, *, interval=5.0):
    """Switch progress output on (``verbose=True``) or off; returns the previous reporter.

    On, it prints whether or not ``stream`` (default stderr) is a terminal; a
    loop is a redrawn bar on a terminal and, elsewhere, a line every
    ``interval`` seconds and a closing line. Pass the returned reporter to
    :func:`restore` to switch back.
    """
    global _reporter
    previous = _reporter
    _reporter = _Printing(stream, interval=interval) if verbose else _Silent()
    return previous


def restore(reporter):
    """Reinstall a reporter returned by :func:`set_reporter` or :func:`configure`."""
    global _reporter
    _reporter = reporter


def progress_wanted(*, quiet=False, force=None, stream=None):
    """Whether progress should be shown: the CLI's rule.

    ``quiet`` wins; then ``force`` (True / False, None = not given); then the
    environment variable ``LENSWORK_PROGRESS``; then whether ``stream``
    (default stderr) is a terminal.

    Examples
    --------
    >>> import io
    >>> progress_wanted(stream=io.StringIO()), progress_wanted(force=True, stream=io.StringIO())
    (False, True)
    >>> progress_wanted(quiet=True, force=True)
    False
    """
    if quiet:
        return False
    if force is not None:
        return bool(force)
    env = os.environ.get(ENV_VAR, "").strip().lower()
    if env in _ON:
        return True
    if env in _OFF:
        return False
    return _isatty(stream or sys.stderr)


def configure(*, quiet=False, force=None, stream=None):
    """Install the reporter :func:`progress_wanted` asks for; returns the previous one."""
    return set_reporter(progress_wanted(quiet=quiet, force=force, stream=stream), stream)


def interrupt():
    """End the progress line on screen, if any, before a message is written to stderr.

    A no-op when reporting is off. The CLI calls it before every warning, so a
    warning raised inside a step never lands on the step's ``label ...`` line.

    Examples
    --------
    >>> import io
    >>> out = io.StringIO()
    >>> previous = set_reporter(True, out)
    >>> with step("reading"):
    ...     interrupt()
    ...     _ = out.write("Warning: a message\\n")
    >>> restore(previous)
    >>> [line.split(" ... ")[0] for line in out.getvalue().splitlines()]
    ['  reading ...', 'Warning: a message', '  reading']
    """
    _reporter.interrupt()


def note(text):
    """Print one line of information with the progress lines (nothing when they are off).

    Examples
    --------
    >>> import io
    >>> out = io.StringIO()
    >>> previous = set_reporter(True, out)
    >>> note("features (2): x, y")
    >>> restore(previous)
    >>> out.getvalue()
    '  features (2): x, y\\n'
    """
    _reporter.note(text)


def step(label):
    """Context manager around one long step."""
    return _reporter.step(label)


def track(iterable, label, length=None):
    """Iterate with a progress display (count, rate, time left) when reporting is on."""
    return _reporter.track(iterable, label, length=length)
