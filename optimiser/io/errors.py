"""The one exception for bad input: a list of clear, located problems."""

from __future__ import annotations


class InputError(Exception):
    """Bad input. ``problems`` holds one message per problem, each naming file and row/key."""

    def __init__(self, problems: list[str] | str) -> None:
        self.problems = [problems] if isinstance(problems, str) else list(problems)
        super().__init__("\n".join(self.problems))


class ProblemList:
    """Collects problems while a file is read, then raises them together."""

    def __init__(self) -> None:
        self.items: list[str] = []

    def add(self, message: str) -> None:
        self.items.append(message)

    def __bool__(self) -> bool:
        return bool(self.items)

    def raise_if_any(self) -> None:
        if self.items:
            raise InputError(self.items)
