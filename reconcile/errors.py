"""Every exception `reconcile` raises on purpose, in one tree.

::

    ReconcileError                 base class; .exit_code for the command line
    ├── InputError                 exit 2: an input cannot be used as given
    │   ├── SourceNotFoundError         a named file does not exist or is not a file
    │   ├── SourceEmptyError            a file has no header row at all
    │   ├── MissingColumnsError         required columns are absent
    │   ├── ValidationError        rows with bad values: .problems lists each one
    │   └── PrecisionError              a column's values need more than 76 digits at one scale
    ├── ConfigError                exit 2: an option, profile, schedule or config is invalid
    │   └── ScheduleError               a fee schedule's values: .problems names file and key path
    └── OutputError                exit 2: results could not be written (none left half-written)

Breaks and fee leakage are results, not errors: the commands exit 1 for them and raise nothing.

A :class:`Problem` names the source, row (the header is row 1), column, the value found and what was
expected, so each message reads like ``fills.csv row 14, column quantity: expected a decimal > 0,
found '-5'``. A problem in a TOML file names the key path instead of row and column:
``schedule.toml commission[2].tiers[1].per_unit: expected a decimal >= 0, found '-1'``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

EXIT_OK = 0
EXIT_FOUND = 1
EXIT_BAD_INPUT = 2

#: How many problems an error message lists before it only counts the rest.
MAX_LISTED_PROBLEMS = 50


@dataclass(frozen=True)
class Problem:
    """One thing wrong with one input value, row or file."""

    source: str
    expected: str
    found: str | None = None
    row: int | None = None
    column: str | None = None
    reason: str = "invalid value"
    key: str | None = None  # the key path in a TOML file, e.g. commission[2].per_unit

    def __str__(self) -> str:
        where = self.source
        if self.key is not None:
            where += f" {self.key}"
        if self.row is not None:
            where += f" row {self.row}"
        if self.column is not None:
            where += f", column {self.column}" if self.row is not None else f" column {self.column}"
        text = f"{where}: expected {self.expected}"
        if self.found is not None:
            text += f", found {_show(self.found)}"
        return text


def _show(value: str, limit: int = 60) -> str:
    shown = value if len(value) <= limit else value[: limit - 3] + "..."
    return repr(shown)


class ReconcileError(Exception):
    """Base class of every deliberate `reconcile` error."""

    exit_code = EXIT_BAD_INPUT


class InputError(ReconcileError):
    """An input (file or DataFrame) cannot be used as given."""

    def __init__(self, message: str, problems: Sequence[Problem] = ()) -> None:
        super().__init__(message)
        self.problems: tuple[Problem, ...] = tuple(problems)


class SourceNotFoundError(InputError):
    """A named input file does not exist or is not a regular file."""


class SourceEmptyError(InputError):
    """An input file has no content at all, not even a header row."""


class MissingColumnsError(InputError):
    """Required columns are absent from an input."""


class ValidationError(InputError):
    """One or more rows hold values that cannot be used; every problem is listed in ``problems``."""

    def __init__(self, source: str, problems: Sequence[Problem]) -> None:
        self.source = source
        super().__init__(problem_listing(source, problems), problems)


class PrecisionError(InputError):
    """A column's values cannot share one exact decimal type.

    An exact column holds at most 76 digits at one scale, so a value with 26 digits before the point
    cannot sit beside one with 51 places after it. Rounding either would lose money silently.
    """


class ConfigError(ReconcileError):
    """An option, profile, fee schedule or configuration file is invalid."""


class ScheduleError(ConfigError):
    """A fee schedule cannot be used; ``problems`` lists every problem (file and key path)."""

    def __init__(self, source: str, problems: Sequence[Problem]) -> None:
        super().__init__(problem_listing(source, problems))
        self.source = source
        self.problems: tuple[Problem, ...] = tuple(problems)


class OutputError(ReconcileError):
    """Results could not be written; no partial output is left behind."""


def problem_listing(source: str, problems: Sequence[Problem]) -> str:
    """``source: N problems found`` and the first :data:`MAX_LISTED_PROBLEMS`, one a line."""
    listed = list(problems)[:MAX_LISTED_PROBLEMS]
    lines = [f"{source}: {len(problems)} problem{'s' if len(problems) != 1 else ''} found"]
    lines += [f"  {p}" for p in listed]
    if len(problems) > len(listed):
        lines.append(f"  ... and {len(problems) - len(listed)} more")
    return "\n".join(lines)


def raise_if_problems(source: str, problems: Sequence[Problem]) -> None:
    """Raise one :class:`ValidationError` carrying every problem, if there are any."""
    if problems:
        raise ValidationError(source, problems)
