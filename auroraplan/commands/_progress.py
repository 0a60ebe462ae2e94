"""A progress line on standard error for work that takes more than a moment."""

import contextlib
import sys


@contextlib.contextmanager
def working(message: str, quiet: bool = False):
    """Show a spinner with ``message`` on a terminal while the block runs."""
    if quiet or not sys.stderr.isatty():
        yield
        return
    from rich.console import Console

    with Console(stderr=True).status(message):
        yield


def progress_bar(total: int, message: str, quiet: bool = False):
    """A rich progress bar on standard error (a no-op off a terminal); use as a context manager
    and call ``advance()`` on what it returns."""
    if quiet or not sys.stderr.isatty():
        return _Silent()
    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn, TimeRemainingColumn

    progress = Progress(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.completed}/{task.total}"),
                        TimeRemainingColumn(), console=Console(stderr=True), transient=True)
    return _Bar(progress, message, total)


class _Silent:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False

    def advance(self, n=1):
        pass


class _Bar:
    def __init__(self, progress, message, total):
        self.progress, self.message, self.total = progress, message, total

    def __enter__(self):
        self.progress.__enter__()
        self.task = self.progress.add_task(self.message, total=self.total)
        return self

    def __exit__(self, *exc):
        return self.progress.__exit__(*exc)

    def advance(self, n=1):
        self.progress.advance(self.task, n)
