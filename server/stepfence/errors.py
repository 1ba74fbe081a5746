"""The one error type user input can raise: it names the field and the problem."""
from __future__ import annotations


class InputError(ValueError):
    """Bad user input: carries the field it came from and, where known, a position.

    Every parser and validator in stepfence raises this (never a bare ValueError), so the CLI
    can print one line and exit 2, and the HTTP layer can answer 422 naming the field.
    """

    def __init__(self, field: str, message: str, position: int | None = None,
                 expected: str | None = None, line: int | None = None,
                 column: int | None = None):
        self.field = field
        self.message = message
        self.position = position
        self.expected = expected
        self.line = line
        self.column = column
        super().__init__(self.describe())

    def describe(self) -> str:
        where = ""
        if self.line is not None:
            where = f" at line {self.line}" + (f", column {self.column}" if self.column is not None else "")
        elif self.position is not None:
            where = f" at position {self.position}"
        tail = f" (expected {self.expected})" if self.expected else ""
        return f"{self.field}: {self.message}{where}{tail}"

    def to_dict(self) -> dict:
        return {"field": self.field, "message": self.message, "position": self.position,
                "line": self.line, "column": self.column, "expected": self.expected,
                "detail": self.describe()}


class LimitExceeded(InputError):
    """Input over one of the documented bounds (see stepfence.limits)."""
