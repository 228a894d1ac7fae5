"""The project's own error and warning classes, one root each.

Callers catch :class:`AuditError` for every failure the library raises on purpose and
filter :class:`AuditWarning` for every warning it emits.
"""

from __future__ import annotations

from os import PathLike


class AuditError(Exception):
    """Root of every error raised on purpose by ``audit_lib``."""


class InputError(AuditError, ValueError):
    """Bad user input: names the file, line or key, the field, and a hint.

    Parameters
    ----------
    message : str
        What is wrong, in one sentence.
    path : str or PathLike, optional
        The file that holds the bad input.
    line : int, optional
        1-based line number in that file (CSV row, TOML line).
    field : str, optional
        Column name or TOML key path (``enclosures.vivarium-3.lamps[0].height_m``).
    hint : str, optional
        How to fix it.
    """

    def __init__(
        self,
        message: str,
        *,
        path: str | PathLike | None = None,
        line: int | None = None,
        field: str | None = None,
        hint: str | None = None,
    ) -> None:
        self.message = message
        self.path = None if path is None else str(path)
        self.line = line
        self.field = field
        self.hint = hint
        super().__init__(self.__str__())

    def __str__(self) -> str:
        where = ""
        if self.path is not None:
            where = self.path + (f":{self.line}" if self.line is not None else "") + ": "
        elif self.line is not None:
            where = f"line {self.line}: "
        field = f"{self.field}: " if self.field else ""
        hint = f" (hint: {self.hint})" if self.hint else ""
        return f"{where}{field}{self.message}{hint}"


class InputErrors(AuditError):
    """Several input problems found at once (validation reports all of them).

    Parameters
    ----------
    problems : list of InputError
        Every problem found, in file order.
    """

    def __init__(self, problems: list[InputError]) -> None:
        self.problems = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


class AuditWarning(UserWarning):
    """Root of every warning emitted by ``audit_lib``."""
