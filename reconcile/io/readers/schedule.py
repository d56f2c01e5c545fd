"""Read a fee schedule (TOML) into :class:`reconcile.core.fees.rules.Schedule`.

tomllib parses the file; pydantic checks every key. Money and rates are exact decimals, written
as TOML strings (``"0.0035"``) or integers: a TOML float is binary floating point, so it is
refused rather than silently rounded. Every problem names the file and the key path, with tables
of an array counted from 1 (``commission[2]`` is the second ``[[commission]]``), and all of them
are reported together.
"""

from __future__ import annotations

import datetime as dt
import difflib
import itertools
import re
import tomllib
from collections.abc import Callable, Sequence
from decimal import Decimal, InvalidOperation
from pathlib import Path
from typing import Annotated, Any, Literal

from pydantic import (
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Field,
    PlainValidator,
    ValidationError,
    model_validator,
)
from pydantic_core import ErrorDetails, PydanticCustomError

from reconcile import schema
from reconcile.core.fees import rules
from reconcile.core.fees.daycount import WEEKDAYS
from reconcile.errors import ConfigError, Problem, ScheduleError, SourceNotFoundError
from reconcile.money import is_known_currency, minor_unit
from reconcile.timezones import zone

_NUMBER = re.compile(r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$")
_DECIMAL_HINT = 'a decimal in quotes such as "0.0035", or an integer'
_FLOAT_HINT = (
    f"{_DECIMAL_HINT} (a TOML float is binary floating point and cannot be exact: write it in "
    "quotes)"
)


def _fail(kind: str, expected: str, **context: Any) -> PydanticCustomError:
    return PydanticCustomError(kind, expected, context)


def _exact(minimum: Decimal | None, strict: bool, percent: bool) -> Callable[[Any], Decimal]:
    bound = "" if minimum is None else f" {'>' if strict else '>='} {minimum}"
    expected = f"a decimal{bound}" + (" (a trailing % divides by 100)" if percent else "")

    def parse(value: Any) -> Decimal:
        if isinstance(value, float):
            raise _fail("toml_float", _FLOAT_HINT)
        if isinstance(value, bool) or not isinstance(value, int | str):
            raise _fail("not_decimal", _DECIMAL_HINT)
        text = str(value).strip()
        scale = 0
        if percent and text.endswith("%"):
            text, scale = text[:-1].strip(), -2
        if not _NUMBER.match(text):
            raise _fail("not_decimal", expected)
        try:
            number = Decimal(text).scaleb(scale)
        except InvalidOperation:  # pragma: no cover - the pattern admits only finite numbers
            raise _fail("not_decimal", expected) from None
        if minimum is not None and (number <= minimum if strict else number < minimum):
            raise _fail("out_of_range", expected)
        return number

    return parse


Amount = Annotated[Decimal, PlainValidator(_exact(Decimal(0), False, False))]
Positive = Annotated[Decimal, PlainValidator(_exact(Decimal(0), True, False))]
Signed = Annotated[Decimal, PlainValidator(_exact(None, False, False))]
Rate = Annotated[Decimal, PlainValidator(_exact(None, False, True))]


def _names(value: Any) -> Any:
    return (value,) if isinstance(value, str) else value


def _name(value: Any) -> str:
    if not isinstance(value, str):
        raise _fail("not_text", "text in quotes")
    if not value.strip():
        raise _fail("blank", "a non-empty name")
    return value.strip()


Name = Annotated[str, PlainValidator(_name)]
Names = Annotated[tuple[Name, ...], BeforeValidator(_names)]


def _date(value: Any) -> dt.date:
    if isinstance(value, dt.datetime) or not isinstance(value, dt.date | str):
        raise _fail("not_date", "a date such as 2026-11-30")
    if isinstance(value, dt.date):
        return value
    try:
        return dt.date.fromisoformat(value.strip())
    except ValueError:
        raise _fail("not_date", "a date such as 2026-11-30") from None


def _clock(value: Any) -> dt.time:
    expected = "a local time of day such as 17:00"
    if isinstance(value, dt.time) and value.tzinfo is None:
        return value
    if isinstance(value, str) and re.match(r"^\d{2}:\d{2}(:\d{2})?$", value.strip()):
        try:
            return dt.time.fromisoformat(value.strip())
        except ValueError:
            pass
    raise _fail("not_time", expected)


def _currency(value: Any) -> str:
    code = value.strip().upper() if isinstance(value, str) else ""
    if not is_known_currency(code) or minor_unit(code) is None:
        raise _fail("currency", "an ISO 4217 currency code with a minor unit, such as USD")
    return code


def _timezone(value: Any) -> str:
    if not isinstance(value, str):
        raise _fail("timezone", "an IANA time zone such as America/New_York")
    try:
        zone(value.strip())
    except ConfigError:
        raise _fail("timezone", "an IANA time zone such as America/New_York") from None
    return value.strip()


def _side(value: Any) -> str:
    side = schema.SIDES.get(value.strip().lower()) if isinstance(value, str) else None
    if side is None:
        raise _fail("side", "buy or sell")
    return side


def _weekday(value: Any) -> int:
    if isinstance(value, str) and value.strip().lower() in WEEKDAYS[:5]:
        return WEEKDAYS.index(value.strip().lower())
    raise _fail("weekday", "a weekday name, monday to friday")


_DAY_COUNTS = {
    "ACT/360": "ACT/360",
    "ACTUAL/360": "ACT/360",
    "ACT/365F": "ACT/365F",
    "ACT/365(FIXED)": "ACT/365F",
    "ACTUAL/365(FIXED)": "ACT/365F",
    "ACT/ACT(ISDA)": "ACT/ACT-ISDA",
    "ACT/ACT-ISDA": "ACT/ACT-ISDA",
    "ACTUAL/ACTUAL(ISDA)": "ACT/ACT-ISDA",
}


def _day_count(value: Any) -> str:
    folded = re.sub(r"\s+", "", value).upper() if isinstance(value, str) else ""
    if folded in ("ACT/365", "ACTUAL/365"):
        raise _fail(
            "day_count",
            "ACT/365F (365 every year) or ACT/ACT (ISDA): a bare ACT/365 is ambiguous, the ISDA "
            "2006 Definitions read it as Actual/Actual",
        )
    if folded not in _DAY_COUNTS:
        raise _fail("day_count", "ACT/360, ACT/365F or ACT/ACT (ISDA)")
    return _DAY_COUNTS[folded]


def _kind(value: Any) -> str:
    if isinstance(value, str) and value.strip().lower() in schema.FINANCING_KINDS:
        return value.strip().lower()
    raise _fail("kind", "one of " + ", ".join(schema.FINANCING_KINDS))


Date = Annotated[dt.date, PlainValidator(_date)]
Clock = Annotated[dt.time, PlainValidator(_clock)]
Currency = Annotated[str, PlainValidator(_currency)]
Timezone = Annotated[str, PlainValidator(_timezone)]
Side = Annotated[str, PlainValidator(_side)]
Weekday = Annotated[int, PlainValidator(_weekday)]
DayCountName = Annotated[str, PlainValidator(_day_count)]
Kinds = Annotated[tuple[Annotated[str, PlainValidator(_kind)], ...], BeforeValidator(_names)]


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=False)


def _key_problem(key: str, expected: str, found: Any = None) -> PydanticCustomError:
    """A problem found across keys, reported at ``key`` of the table being checked."""
    return _fail("cross_key", expected, key=key, found=found)


class _Selector(_Model):
    name: Name | None = None
    account: Names = ()
    instrument: Names = ()
    valid_from: Date | None = None
    valid_until: Date | None = None

    @model_validator(mode="after")
    def _dates_in_order(self) -> _Selector:
        if self.valid_from and self.valid_until and self.valid_until < self.valid_from:
            raise _key_problem(
                "valid_until",
                f"a date on or after valid_from ({self.valid_from})",
                self.valid_until,
            )
        return self


class _Tier(_Model):
    start: Amount = Field(alias="from")
    per_unit: Amount | None = None
    bps: Amount | None = None


class _Commission(_Selector):
    currency: Currency
    venue: Names = ()
    side: Side | None = None
    per_unit: Amount = Decimal(0)
    bps: Amount = Decimal(0)
    per_fill: Amount = Decimal(0)
    per_order: Amount = Decimal(0)
    minimum: Amount | None = None
    maximum: Amount | None = None
    maximum_bps: Amount | None = None
    charged_per: Literal["order", "fill"] = "order"
    tiers: tuple[_Tier, ...] = ()
    tier_measure: Literal["quantity", "notional"] | None = None
    tier_basis: Literal["reached", "final"] | None = None
    tier_volume: Literal["account", "all"] | None = None

    @model_validator(mode="after")
    def _consistent(self) -> _Commission:
        if self.minimum is not None and self.maximum is not None and self.minimum > self.maximum:
            raise _key_problem("maximum", f"at least the minimum ({self.minimum})", self.maximum)
        if self.tiers and self.tiers[0].start != 0:
            raise _key_problem("tiers[1].from", "0 (the first tier starts at zero volume)")
        starts = [tier.start for tier in self.tiers]
        for n, (low, high) in enumerate(itertools.pairwise(starts), start=2):
            if high <= low:
                raise _key_problem(f"tiers[{n}].from", f"more than {low} (tiers ascend)", high)
        for key in ("tier_measure", "tier_basis", "tier_volume"):
            if getattr(self, key) is not None and not self.tiers:
                raise _key_problem(key, "tiers ([[commission.tiers]]) for it to apply to")
        return self


class _Financing(_Selector):
    currency: Currency | None = None
    kinds: Kinds = rules.DEFAULT_FINANCING_KINDS
    long_rate: Rate | None = None
    short_rate: Rate | None = None
    benchmark: Name | None = None
    long_spread: Rate | None = None
    short_spread: Rate | None = None
    long_points: Signed | None = None
    short_points: Signed | None = None
    point_size: Positive | None = None
    day_count: DayCountName = "ACT/360"
    cutoff: Clock = dt.time(17, 0)
    cutoff_timezone: Timezone | None = None
    triple_weekday: Weekday = rules.FRIDAY
    holidays: tuple[Date, ...] = ()
    calendar: Name | None = None

    @model_validator(mode="after")
    def _one_way_to_charge(self) -> _Financing:
        ways = {
            "long_rate / short_rate": (self.long_rate, self.short_rate),
            "benchmark with long_spread / short_spread": (
                self.benchmark,
                self.long_spread,
                self.short_spread,
            ),
            "long_points / short_points": (self.long_points, self.short_points),
        }
        given = [name for name, values in ways.items() if any(v is not None for v in values)]
        if len(given) != 1:
            raise _key_problem(
                "long_rate",
                "exactly one way to charge: " + ", or ".join(ways),
                "; ".join(given) or "none",
            )
        if self.benchmark is None and given[0].startswith("benchmark"):
            raise _key_problem("benchmark", "the name of a [[benchmark]] the spreads apply to")
        if self.benchmark is not None and self.long_spread is None and self.short_spread is None:
            raise _key_problem("long_spread", "a long_spread or short_spread over the benchmark")
        if self.point_size is not None and self.long_points is None and self.short_points is None:
            raise _key_problem("point_size", "long_points or short_points for it to scale")
        return self


class _Fixing(_Model):
    date: Date
    rate: Rate


class _Benchmark(_Model):
    name: Name
    fixings: tuple[_Fixing, ...] = Field(min_length=1)


class _Header(_Model):
    name: str = ""
    timezone: Timezone = "UTC"
    rounding: Literal["half-even", "half-up"] = "half-even"


class _Document(_Model):
    schedule: _Header = _Header()
    calendars: dict[str, tuple[Date, ...]] = {}
    benchmark: tuple[_Benchmark, ...] = ()
    commission: tuple[_Commission, ...] = ()
    financing: tuple[_Financing, ...] = ()


def read_schedule(path: Path | str) -> rules.Schedule:
    """Read and check a TOML fee schedule; raise one error that lists every problem."""
    path = Path(path)
    if not path.is_file():
        raise SourceNotFoundError(f"{path}: no such file")
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ScheduleError(
            str(path), [Problem(str(path), f"valid TOML ({exc})", reason="bad TOML")]
        ) from None
    return parse_schedule(data, source=str(path))


def parse_schedule(data: dict[str, Any], *, source: str = "schedule") -> rules.Schedule:
    """Check a schedule already parsed from TOML (a dict) and build the core's values."""
    try:
        document = _Document.model_validate(data)
    except ValidationError as exc:
        raise ScheduleError(source, [_problem(source, e) for e in exc.errors()]) from None
    problems = _reference_problems(document, source)
    if problems:
        raise ScheduleError(source, problems)
    return _build(document, source)


def _problem(source: str, error: ErrorDetails) -> Problem:
    location = list(error["loc"])
    context = error.get("ctx") or {}
    found: Any = error.get("input")
    kind = error["type"]
    if kind == "cross_key":
        location.append(context["key"])
        found = context.get("found")
    expected = _expected(kind, error["msg"], context, location)
    shown = None if kind in ("missing", "extra_forbidden") or found is None else _shown(found)
    return Problem(source, expected, shown, key=_key_path(location), reason=kind)


def _expected(kind: str, message: str, context: dict[str, Any], location: list[Any]) -> str:
    if kind == "missing":
        return "a value (this key is required)"
    if kind == "extra_forbidden":
        close = difflib.get_close_matches(str(location[-1]), _KNOWN_KEYS, n=1)
        return "a known key" + (f" (did you mean {close[0]}?)" if close else "")
    if kind == "literal_error":
        return str(context.get("expected", message))
    if kind in ("tuple_type", "list_type"):
        return "a list in brackets"
    if kind in ("model_type", "dict_type", "model_attributes_type"):
        return "a table"
    if kind == "too_short":
        return "at least one entry"
    if kind == "string_type":
        return "text in quotes"
    return message


def _shown(value: Any) -> str:
    if isinstance(value, str):
        return value
    if isinstance(value, bool):
        return str(value).lower()
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list | tuple):
        return "a list"
    return str(value)


def _key_path(location: Sequence[Any]) -> str:
    text = ""
    for part in location:
        if isinstance(part, int):
            text += f"[{part + 1}]"
        else:
            text += ("." if text else "") + str(part)
    return text


def _known_keys() -> list[str]:
    keys: set[str] = set()
    for model in (_Document, _Header, _Benchmark, _Fixing, _Commission, _Tier, _Financing):
        for name, info in model.model_fields.items():
            keys.add(info.alias or name)
    return sorted(keys)


_KNOWN_KEYS = _known_keys()


def _reference_problems(document: _Document, source: str) -> list[Problem]:
    """Names that must exist elsewhere in the file, and rule names that must be unique."""
    benchmarks = sorted(b.name for b in document.benchmark)
    calendars = sorted(document.calendars)
    problems = []
    for n, rule in enumerate(document.financing, start=1):
        for key, name, known, what in (
            ("benchmark", rule.benchmark, benchmarks, "a [[benchmark]] table"),
            ("calendar", rule.calendar, calendars, "a list in [calendars]"),
        ):
            if name is not None and name not in known:
                listed = ", ".join(known) or "there are none"
                problems.append(
                    Problem(
                        source,
                        f"the name of {what} ({listed})",
                        name,
                        key=f"financing[{n}].{key}",
                        reason=f"unknown {key}",
                    )
                )
    for table, names in (
        ("commission", [rule.name for rule in document.commission]),
        ("financing", [rule.name for rule in document.financing]),
        ("benchmark", [b.name for b in document.benchmark]),
    ):
        problems += _repeated_names(source, table, names)
    return problems


def _repeated_names(source: str, table: str, names: Sequence[str | None]) -> list[Problem]:
    seen: dict[str, int] = {}
    problems = []
    for n, name in enumerate(names, start=1):
        label = name or f"{table}[{n}]"
        if label in seen:
            problems.append(
                Problem(
                    source,
                    f"a name of its own ({table}[{seen[label]}] has it already)",
                    label,
                    key=f"{table}[{n}].name",
                    reason="repeated name",
                )
            )
        seen.setdefault(label, n)
    return problems


def _build(document: _Document, source: str) -> rules.Schedule:
    header = document.schedule
    benchmarks = {
        b.name: rules.Benchmark(b.name, tuple(sorted((f.date, f.rate) for f in b.fixings)))
        for b in document.benchmark
    }
    return rules.Schedule(
        name=header.name,
        timezone=header.timezone,
        rounding=header.rounding,
        commission=tuple(
            _commission(rule, n) for n, rule in enumerate(document.commission, start=1)
        ),
        financing=tuple(
            _financing(rule, n, header.timezone, benchmarks, document.calendars)
            for n, rule in enumerate(document.financing, start=1)
        ),
        source=source,
    )


def _selector(rule: _Selector, **more: Any) -> rules.Selector:
    return rules.Selector(
        accounts=rule.account,
        instruments=rule.instrument,
        valid_from=rule.valid_from,
        valid_until=rule.valid_until,
        **more,
    )


def _commission(rule: _Commission, n: int) -> rules.CommissionRule:
    tiering = None
    if rule.tiers:
        tiering = rules.Tiering(
            tiers=tuple(rules.Tier(t.start, t.per_unit, t.bps) for t in rule.tiers),
            measure=rule.tier_measure or "quantity",
            basis=rule.tier_basis or "reached",
            volume=rule.tier_volume or "account",
        )
    return rules.CommissionRule(
        name=rule.name or f"commission[{n}]",
        selector=_selector(rule, venues=rule.venue, currency=rule.currency, side=rule.side),
        per_unit=rule.per_unit,
        bps=rule.bps,
        per_fill=rule.per_fill,
        per_order=rule.per_order,
        minimum=rule.minimum,
        maximum=rule.maximum,
        maximum_bps=rule.maximum_bps,
        charged_per=rule.charged_per,
        tiering=tiering,
    )


def _financing(
    rule: _Financing,
    n: int,
    timezone: str,
    benchmarks: dict[str, rules.Benchmark],
    calendars: dict[str, tuple[dt.date, ...]],
) -> rules.FinancingRule:
    holidays = set(rule.holidays) | set(calendars.get(rule.calendar or "", ()))
    return rules.FinancingRule(
        name=rule.name or f"financing[{n}]",
        selector=_selector(rule, currency=rule.currency),
        cutoff=rule.cutoff,
        cutoff_timezone=rule.cutoff_timezone or timezone,
        kinds=rule.kinds,
        day_count=rule.day_count,  # type: ignore[arg-type]  # checked by _day_count
        triple_weekday=rule.triple_weekday,
        holidays=frozenset(holidays),
        long_rate=rule.long_rate,
        short_rate=rule.short_rate,
        benchmark=None if rule.benchmark is None else benchmarks[rule.benchmark],
        long_spread=rule.long_spread,
        short_spread=rule.short_spread,
        long_points=rule.long_points,
        short_points=rule.short_points,
        point_size=rule.point_size or Decimal(1),
    )
