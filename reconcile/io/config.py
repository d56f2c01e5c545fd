"""The tie-out's config file (TOML): tolerances per measure, break-search bounds, FX source.

Numbers are read as exact decimals (TOML floats too: ``0.001`` is the decimal 0.001, never a
binary float). Every problem of the file is reported together, each naming its key::

    tieout.toml, tolerance.commission.absolute: expected a decimal >= 0, found '-1'
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field, fields
from datetime import timedelta
from decimal import Decimal
from pathlib import Path
from typing import Any

from reconcile.core.explain import SearchLimits
from reconcile.errors import MAX_LISTED_PROBLEMS, ConfigError, SourceNotFoundError
from reconcile.schema import STATEMENT_MEASURES

_TOLERANCE_FIELDS = ("absolute", "relative")
_SEARCH_FIELDS = {
    "duplicate_window_seconds": "duplicate_window",
    "boundary_fills": "boundary_fills",
    "boundary_window_hours": "boundary_window",
    "max_single_removals": "max_single_removals",
    "max_pair_removals": "max_pair_removals",
    "max_causes": "max_causes",
}


@dataclass(frozen=True)
class TieOutConfig:
    """What a config file sets; ``None`` where it is silent."""

    absolute: Decimal | None = None
    relative: Decimal | None = None
    by_measure: dict[str, dict[str, Decimal]] = field(default_factory=dict)
    limits: SearchLimits = field(default_factory=SearchLimits)
    fx_source: str | None = None


def read_config(path: Path | str | None) -> TieOutConfig:
    """Read and check a tie-out config file; no file means every default."""
    if path is None:
        return TieOutConfig()
    path = Path(path)
    if not path.is_file():
        raise SourceNotFoundError(f"{path}: no such file")
    try:
        document = tomllib.loads(path.read_text(encoding="utf-8"), parse_float=Decimal)
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: expected a TOML file: {exc}") from exc
    return _Reader(str(path)).read(document)


@dataclass
class _Reader:
    source: str
    problems: list[str] = field(default_factory=list)

    def read(self, document: dict[str, Any]) -> TieOutConfig:
        self._known(document, "", ("tolerance", "search", "fx"))
        tolerance = self._table(document, "tolerance")
        self._known(tolerance, "tolerance.", (*_TOLERANCE_FIELDS, *STATEMENT_MEASURES))
        absolute = self._decimal(tolerance, "tolerance.", "absolute")
        relative = self._decimal(tolerance, "tolerance.", "relative")
        by_measure: dict[str, dict[str, Decimal]] = {}
        for measure in STATEMENT_MEASURES:
            if measure in tolerance:
                table = self._table(tolerance, measure, "tolerance.")
                self._known(table, f"tolerance.{measure}.", _TOLERANCE_FIELDS)
                given = {k: self._decimal(table, f"tolerance.{measure}.", k) for k in table}
                by_measure[measure] = {k: v for k, v in given.items() if v is not None}
        limits = self._limits(self._table(document, "search"))
        fx = self._table(document, "fx")
        self._known(fx, "fx.", ("source",))
        source = fx.get("source")
        if source is not None and not isinstance(source, str):
            self._problem("fx.source", "text (the source column of the rates file)", source)
        if self.problems:
            raise ConfigError(self._message())
        return TieOutConfig(absolute, relative, by_measure, limits, source)

    def _limits(self, table: dict[str, Any]) -> SearchLimits:
        self._known(table, "search.", tuple(_SEARCH_FIELDS))
        values: dict[str, Any] = {}
        for key, name in _SEARCH_FIELDS.items():
            if key not in table:
                continue
            number = table[key]
            if isinstance(number, bool) or not isinstance(number, int) or number < 0:
                self._problem(f"search.{key}", "a whole number >= 0", number)
                continue
            if key.endswith("_seconds"):
                values[name] = timedelta(seconds=number)
            elif key.endswith("_hours"):
                values[name] = timedelta(hours=number)
            else:
                values[name] = number
        defaults = {f.name: getattr(SearchLimits(), f.name) for f in fields(SearchLimits)}
        return SearchLimits(**{**defaults, **values})

    def _table(self, parent: dict[str, Any], key: str, prefix: str = "") -> dict[str, Any]:
        value = parent.get(key, {})
        if isinstance(value, dict):
            return value
        self._problem(prefix + key, "a table of settings", value)
        return {}

    def _decimal(self, table: dict[str, Any], prefix: str, key: str) -> Decimal | None:
        if key not in table:
            return None
        value = table[key]
        number: Decimal | None = None
        if isinstance(value, Decimal | int) and not isinstance(value, bool):
            number = Decimal(value)
        elif isinstance(value, str):
            try:
                number = Decimal(value.strip())
            except ArithmeticError:
                number = None
        if number is None or not number.is_finite() or number < 0:
            self._problem(prefix + key, "a decimal >= 0", value)
            return None
        return number

    def _known(self, table: dict[str, Any], prefix: str, names: tuple[str, ...]) -> None:
        for key in table:
            if key not in names:
                self._problem(prefix + key, "one of " + ", ".join(prefix + n for n in names), key)

    def _problem(self, key: str, expected: str, found: object) -> None:
        self.problems.append(f"{self.source}, {key}: expected {expected}, found {str(found)!r}")

    def _message(self) -> str:
        count = len(self.problems)
        lines = [f"{self.source}: {count} problem{'s' if count != 1 else ''} found"]
        lines += [f"  {p}" for p in self.problems[:MAX_LISTED_PROBLEMS]]
        if count > MAX_LISTED_PROBLEMS:
            lines.append(f"  ... and {count - MAX_LISTED_PROBLEMS} more")
        return "\n".join(lines)
