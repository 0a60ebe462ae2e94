"""A file object for tests of failures while writing: it does what it is told on write."""


class BrokenFile:
    """Wraps an open file; ``write`` calls ``on_write(fh, data)``, which raises."""

    def __init__(self, fh, on_write):
        self.fh = fh
        self.on_write = on_write

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.fh.close()
        return False

    def write(self, data):
        return self.on_write(self.fh, data)
