"""Input errors that point at the place: ``file:row:column: message``.

Every problem found in a user's file becomes a :class:`Problem` (path, row,
column, message).  A file with problems is refused as a whole with an
:class:`InputError` carrying all of them, unless the caller asked to keep
going, in which case the problems become rejects with their reasons.

Row numbers are the ones a person sees when opening the file: in CSV and
Excel the header is row 1 and the first record row 2; in JSON lines the
first line is row 1; in Parquet the first record is row 1.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from os import PathLike

__all__ = ["InputError", "Problem", "StoreInUseError", "format_place"]

#: How many problems an error message lists before summarising the rest.
MESSAGE_PROBLEM_LIMIT = 20


def format_place(path: str | PathLike | None, row: int | None = None, column: str | None = None) -> str:
    """Return ``file:row:column`` with the parts that are known."""
    parts = [str(path) if path is not None else "<input>"]
    if row is not None:
        parts.append(str(row))
    if column is not None:
        if row is None:
            parts.append("")
        parts.append(str(column))
    return ":".join(parts)


@dataclass(frozen=True, slots=True)
class Problem:
    """One thing wrong with one place in an input file."""

    path: str
    row: int | None
    column: str | None
    message: str

    def __str__(self) -> str:
        return f"{format_place(self.path, self.row, self.column)}: {self.message}"


class InputError(ValueError):
    """A user's input cannot be used as it is.

    Attributes
    ----------
    path, row, column : the place of the first problem (``row`` and
        ``column`` may be ``None`` when the problem is with the whole file).
    problems : every problem found, in file order.
    """

    def __init__(
        self,
        message: str | None = None,
        *,
        path: str | PathLike | None = None,
        row: int | None = None,
        column: str | None = None,
        problems: list[Problem] | tuple[Problem, ...] | None = None,
    ) -> None:
        if problems:
            problems = tuple(problems)
        else:
            if message is None:
                raise TypeError("InputError needs a message or problems")
            problems = (Problem(str(path) if path is not None else "<input>", row, column, message),)
        first = problems[0]
        self.problems: tuple[Problem, ...] = problems
        self.path = first.path
        self.row = first.row
        self.column = first.column
        self.reason = first.message
        super().__init__(self._text())

    def _text(self) -> str:
        lines = [str(p) for p in self.problems[:MESSAGE_PROBLEM_LIMIT]]
        hidden = len(self.problems) - MESSAGE_PROBLEM_LIMIT
        if hidden > 0:
            lines.append(f"... and {hidden} more problem{'s' if hidden != 1 else ''} in {self.path}")
        return "\n".join(lines)


class StoreInUseError(RuntimeError):
    """The store file is held by another process (DuckDB allows one writer)."""

    def __init__(self, path: str | PathLike, detail: str = "") -> None:
        self.path = str(path)
        text = (
            f"{self.path}: store in use by another streakwise process "
            "(a DuckDB store can be opened by one process at a time; "
            "close the other process, or use a different --store)"
        )
        if detail:
            text += f" [{detail}]"
        super().__init__(text)


@dataclass(slots=True)
class ProblemList:
    """Collects problems while a file is checked (internal helper)."""

    path: str
    items: list[Problem] = field(default_factory=list)

    def add(self, row: int | None, column: str | None, message: str) -> None:
        self.items.append(Problem(self.path, row, column, message))

    def extend(self, problems) -> None:
        self.items.extend(problems)

    def __bool__(self) -> bool:
        return bool(self.items)

    def __len__(self) -> int:
        return len(self.items)

    def raise_if_any(self) -> None:
        if self.items:
            raise InputError(problems=sorted(self.items, key=_problem_order))


def _problem_order(problem: Problem) -> tuple:
    return (problem.row if problem.row is not None else -1, problem.column or "")
