"""The error every bad case raises: each problem as (key path, message), printed with the file."""

from __future__ import annotations


class CaseError(Exception):
    """Problems found in a case file; ``problems`` is a list of (key path, message)."""

    def __init__(self, source: str, problems: list[tuple[str, str]]):
        self.source = source
        self.problems = problems
        super().__init__("\n".join(self.lines()))

    def lines(self) -> list[str]:
        return [f"{self.source}: {path}: {msg}" if path else f"{self.source}: {msg}" for path, msg in self.problems]
