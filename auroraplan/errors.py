"""Errors that reach the person at the keyboard."""


class InputError(Exception):
    """Bad input from the user: a file, a row, an option.

    Each problem is one line naming where (file, row or feature, field or
    option) and what is allowed. The command line prints every problem and
    exits with code 2, writing nothing.
    """

    def __init__(self, problems):
        if isinstance(problems, str):
            problems = [problems]
        self.problems = [str(p) for p in problems]
        super().__init__("; ".join(self.problems))


class ProblemList:
    """Collects problems in a file so that all of them are reported at once."""

    LIMIT = 30

    def __init__(self):
        self.problems: list[str] = []

    def add(self, message: str) -> None:
        self.problems.append(message)

    def __len__(self):
        return len(self.problems)

    def raise_if_any(self) -> None:
        if not self.problems:
            return
        shown = self.problems[: self.LIMIT]
        if len(self.problems) > self.LIMIT:
            shown.append(f"... and {len(self.problems) - self.LIMIT} more problems")
        raise InputError(shown)
