"""Progress reporting for long steps, silent unless a front end switches it on.

The library calls :func:`step` around every long computation and
:func:`track` around long loops; the CLI installs a reporter that prints to
stderr with click (``--quiet`` keeps the silent one).
"""

from __future__ import annotations

import contextlib
import sys
import time

__all__: list[str] = []


class _Silent:
    def step(self, label):
        return contextlib.nullcontext()

    def track(self, iterable, label, length=None):
        return iterable


class _Printing:
    """Writes 'label ... 1.23 s' lines and click progress bars to stderr."""

    def __init__(self, stream=None):
        self.stream = stream or sys.stderr

    @contextlib.contextmanager
    def step(self, label):
        import click

        start = time.perf_counter()
        click.echo(f"  {label} ...", file=self.stream, nl=False)
        self.stream.flush()
        try:
            yield
        except BaseException:
            click.echo(" failed", file=self.stream)
            raise
        click.echo(f" {time.perf_counter() - start:.2f} s", file=self.stream)

    def track(self, iterable, label, length=None):
        import click

        with click.progressbar(
            iterable, length=length, label=f"  {label}", file=self.stream, show_eta=True
        ) as bar:
            yield from bar


_reporter = _Silent()


def set_reporter(verbose, stream=None):
    """Switch progress output on (``verbose=True``) or off; returns the previous reporter."""
    global _reporter
    previous = _reporter
    _reporter = _Printing(stream) if verbose else _Silent()
    return previous


def step(label):
    """Context manager around one long step."""
    return _reporter.step(label)


def track(iterable, label, length=None):
    """Iterate with a progress bar when reporting is on."""
    return _reporter.track(iterable, label, length=length)
