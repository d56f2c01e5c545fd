"""Column profiles: how one source's columns and values map to the canonical ones.

A profile is a TOML file (see docs/profiles.md), validated here with pydantic; a mistake in it is a
:class:`~reconcile.errors.ConfigError` naming the profile file and the key. A profile is applied to
the raw frame a reader returns, before the core's canonicaliser runs, so the core never learns what
the source looked like.
"""

from __future__ import annotations

import codecs
import tomllib
from pathlib import Path
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, PrivateAttr, field_validator, model_validator
from pydantic import ValidationError as PydanticError

from reconcile import schema
from reconcile.errors import ConfigError
from reconcile.timezones import zone

INPUT_FORMATS = ("csv", "tsv", "parquet", "excel", "jsonl", "fix")
InputFormat = Literal["csv", "tsv", "parquet", "excel", "jsonl", "fix"]

#: Canonical columns that hold decimals, by kind of input.
NUMERIC = {
    "fills": ("quantity", "price", "commission", "multiplier"),
    "financing": ("amount",),
}
CANONICAL = {"fills": schema.FILL_COLUMNS, "financing": schema.FINANCING_COLUMNS}
#: Canonical columns a profile may build from several source columns.
MULTI_COLUMN = {"commission": "summed", "amount": "summed", "time": "joined with a space"}


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class SourceOptions(_Strict):
    """``[source]``: how to read the file."""

    format: InputFormat | None = None
    encoding: str = "utf-8"
    delimiter: str | None = None
    sheet: str | int | None = None
    header_row: int | None = Field(default=None, ge=1)

    @field_validator("encoding")
    @classmethod
    def _known_encoding(cls, value: str) -> str:
        try:
            codecs.lookup(value)
        except LookupError:
            raise ValueError(
                f"a Python codec name such as utf-8 or cp1252, found {value!r}"
            ) from None
        return value

    @field_validator("delimiter")
    @classmethod
    def _one_character(cls, value: str | None) -> str | None:
        if value is not None and (len(value) != 1 or value in '\r\n"'):
            raise ValueError(f"one character other than a quote or line break, found {value!r}")
        return value


class NumberOptions(_Strict):
    """``[numbers]``: how decimals are written, and the places of Excel's double cells."""

    decimal: Literal[".", ","] = "."
    thousands: Literal["", ",", ".", " ", "'", "\u00a0", "\u202f"] = ""
    parentheses: bool = False
    places: dict[str, int] = Field(default_factory=dict)

    @model_validator(mode="after")
    def _separators_differ(self) -> NumberOptions:
        if self.thousands and self.thousands == self.decimal:
            raise ValueError("a thousands separator other than the decimal separator")
        if any(p < 0 or p > 18 for p in self.places.values()):
            raise ValueError("places between 0 and 18")
        return self

    @property
    def plain(self) -> bool:
        return self.decimal == "." and not self.thousands and not self.parentheses


class TimeOptions(_Strict):
    """``[time]``: the format of the time column(s) and the zone a naive time is in."""

    format: str | None = None
    timezone: str | None = None

    @field_validator("timezone")
    @classmethod
    def _real_zone(cls, value: str | None) -> str | None:
        if value is not None:
            try:
                zone(value)
            except ConfigError:
                raise ValueError(
                    f"an IANA zone name such as Europe/London, found {value!r}"
                ) from None
        return value


class SignOptions(_Strict):
    """``[signs]``: signed quantities instead of a side column, commissions written negative."""

    quantity: Literal["positive", "signed"] = "positive"
    commission: Literal["positive", "negative"] = "positive"


class FixOptions(_Strict):
    """``[fix]``: how an execution report becomes a fill."""

    instrument: list[int] = Field(default_factory=lambda: [55], min_length=1)
    instrument_separator: str = ":"
    venue: list[int] = Field(default_factory=lambda: [30, 207])


class Profile(_Strict):
    """A source profile: column renames, constants, value maps, number, time and sign rules."""

    name: str = ""
    kind: Literal["fills", "financing"] = "fills"
    source: SourceOptions = SourceOptions()
    columns: dict[str, str | list[str]] = Field(default_factory=dict)
    constants: dict[str, str] = Field(default_factory=dict)
    values: dict[str, dict[str, str]] = Field(default_factory=dict)
    numbers: NumberOptions = NumberOptions()
    time: TimeOptions = TimeOptions()
    signs: SignOptions = SignOptions()
    fix: FixOptions = FixOptions()
    _origin: str = PrivateAttr(default="profile")

    @property
    def origin(self) -> str:
        """The profile file it was read from, for messages."""
        return self._origin

    @model_validator(mode="after")
    def _canonical_names(self) -> Profile:
        known = CANONICAL[self.kind]
        for table, names in (
            ("columns", self.columns),
            ("constants", self.constants),
            ("values", self.values),
            ("numbers.places", self.numbers.places),
        ):
            for name in names:
                if name not in known:
                    raise ValueError(
                        f"{table}: keys that are canonical {self.kind} columns "
                        f"({', '.join(known)}), found {name!r}"
                    )
        for name, given in self.columns.items():
            if isinstance(given, list) and (name not in MULTI_COLUMN or not given):
                raise ValueError(
                    f"columns.{name}: one source column name (only "
                    f"{', '.join(MULTI_COLUMN)} may list several), found {given!r}"
                )
        both = sorted(set(self.columns) & set(self.constants))
        if both:
            raise ValueError(f"each column either mapped or constant, found {both[0]!r} in both")
        if self.signs.quantity == "signed" and ("side" in self.columns or "side" in self.constants):
            raise ValueError("no side column when signs.quantity = 'signed' (the sign is the side)")
        sides = self.values.get("side", {})
        wrong = [v for v in sides.values() if v.lower() not in schema.SIDES]
        if wrong:
            raise ValueError(f"values.side: values buy or sell, found {wrong[0]!r}")
        return self

    def source_columns(self, canonical: str) -> list[str]:
        """The source columns that make up a canonical one (its own name when not mapped)."""
        if canonical in self.constants:
            return []
        given = self.columns.get(canonical, canonical)
        return list(given) if isinstance(given, list) else [given]

    def numeric_sources(self) -> dict[str, str]:
        """Source column -> the canonical numeric column it feeds."""
        return {s: c for c in NUMERIC[self.kind] for s in self.source_columns(c)}

    def shown_name(self, canonical: str) -> str:
        """How errors name a column: the source's name, with the canonical one when it differs."""
        sources = self.source_columns(canonical)
        if sources == [canonical] or not sources:
            return canonical
        return f"{' + '.join(sources)} ({canonical})"


def load_profile(path: Path | str) -> Profile:
    """Read and validate a profile file; a mistake names the file and the key."""
    path = Path(path)
    if not path.is_file():
        raise ConfigError(f"{path}: profile not found (expected a TOML file)")
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: expected a TOML profile, found a syntax error: {exc}") from None
    return profile_from_dict(data, str(path))


def profile_from_dict(data: dict[str, Any], label: str = "profile") -> Profile:
    try:
        profile = Profile.model_validate(data)
    except PydanticError as exc:
        raise ConfigError(_describe(label, exc)) from None
    profile._origin = label
    return profile


def _describe(label: str, exc: PydanticError) -> str:
    lines = []
    for error in exc.errors():
        key = ".".join(str(part) for part in error["loc"]) or "(top level)"
        message = str(error["msg"])
        if error["type"] == "extra_forbidden":
            text = f"expected no key {key!r} here (see docs/profiles.md for the keys)"
        else:
            for prefix in ("Value error, ", "Input should be "):
                message = message.removeprefix(prefix)
            text = f"expected {message}"
            if error["type"] != "value_error" and "input" in error:
                text += f", found {error['input']!r}"
        lines.append(f"{label}, key {key}: {text}")
    return "\n".join(lines)
