"""The TOML fee schedule: exact decimals, every problem named by file and key path, together."""

from __future__ import annotations

from datetime import date, time
from decimal import Decimal
from pathlib import Path

import pytest

from reconcile.errors import ScheduleError, SourceNotFoundError
from reconcile.io.readers.schedule import read_schedule

D = Decimal
SAMPLE = Path(__file__).parents[2] / "sample_data" / "larkmoor-schedule.toml"


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "schedule.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _problems(tmp_path: Path, text: str) -> list[str]:
    with pytest.raises(ScheduleError) as caught:
        read_schedule(_write(tmp_path, text))
    return [str(p).replace(str(tmp_path) + "/", "") for p in caught.value.problems]


def test_the_sample_schedule_reads() -> None:
    schedule = read_schedule(SAMPLE)
    assert schedule.timezone == "America/New_York"
    assert [rule.name for rule in schedule.commission][:2] == ["VLT50 index futures", "BRQ futures"]
    futures = schedule.commission[0]
    assert futures.tiering is not None
    assert [tier.start for tier in futures.tiering.tiers] == [D(0), D(400)]
    swap = schedule.financing[0]
    assert (swap.long_rate, swap.short_rate) == (D("0.065"), D("0.012"))
    assert swap.holidays == frozenset({date(2026, 12, 25)})
    assert swap.cutoff == time(17, 0)


def test_a_toml_float_is_refused_as_binary_floating_point(tmp_path: Path) -> None:
    problems = _problems(tmp_path, '[[commission]]\ncurrency = "USD"\nper_unit = 0.0035\n')
    assert problems == [
        'schedule.toml commission[1].per_unit: expected a decimal in quotes such as "0.0035", or '
        "an integer (a TOML float is binary floating point and cannot be exact: write it in "
        "quotes), found '0.0035'"
    ]


def test_every_problem_is_reported_with_its_key_path(tmp_path: Path) -> None:
    text = """
[schedule]
timezone = "Mars/Olympus"

[[commission]]
currency = "USD"
per_unit = "0.01"

[[commission]]
currency = "usd"
minimum = "-1"
per_units = "1"
charged_per = "trade"
[[commission.tiers]]
from = "0"
[[commission.tiers]]
from = "100"
bps = "x"

[[financing]]
long_rate = "6.5%"
day_count = "ACT/365"
cutoff = "25:00"
triple_weekday = "saturday"
kinds = ["swap", "rebate"]
"""
    assert _problems(tmp_path, text) == [
        "schedule.toml schedule.timezone: expected an IANA time zone such as America/New_York, "
        "found 'Mars/Olympus'",
        "schedule.toml commission[2].minimum: expected a decimal >= 0, found '-1'",
        "schedule.toml commission[2].charged_per: expected 'order' or 'fill', found 'trade'",
        "schedule.toml commission[2].tiers[2].bps: expected a decimal >= 0, found 'x'",
        "schedule.toml commission[2].per_units: expected a known key (did you mean per_unit?)",
        "schedule.toml financing[1].kinds[2]: expected one of swap, financing, borrow, dividend, "
        "fee, other, found 'rebate'",
        "schedule.toml financing[1].day_count: expected ACT/365F (365 every year) or ACT/ACT "
        "(ISDA): a bare ACT/365 is ambiguous, the ISDA 2006 Definitions read it as "
        "Actual/Actual, found 'ACT/365'",
        "schedule.toml financing[1].cutoff: expected a local time of day such as 17:00, found "
        "'25:00'",
        "schedule.toml financing[1].triple_weekday: expected a weekday name, monday to friday, "
        "found 'saturday'",
    ]


def test_checks_across_keys_name_the_key(tmp_path: Path) -> None:
    text = """
[[commission]]
currency = "USD"
minimum = "5"
maximum = "2"

[[commission]]
currency = "USD"
[[commission.tiers]]
from = "10"
per_unit = "1"

[[commission]]
currency = "USD"
tier_basis = "final"

[[financing]]
long_rate = "1%"
long_points = "-0.5"
"""
    assert _problems(tmp_path, text) == [
        "schedule.toml commission[1].maximum: expected at least the minimum (5), found '2'",
        "schedule.toml commission[2].tiers[1].from: expected 0 (the first tier starts at zero "
        "volume)",
        "schedule.toml commission[3].tier_basis: expected tiers ([[commission.tiers]]) for it to "
        "apply to",
        "schedule.toml financing[1].long_rate: expected exactly one way to charge: long_rate / "
        "short_rate, or benchmark with long_spread / short_spread, or long_points / "
        "short_points, found 'long_rate / short_rate; long_points / short_points'",
    ]


def test_names_must_exist_and_rule_names_must_be_unique(tmp_path: Path) -> None:
    text = """
[[commission]]
name = "equities"
currency = "USD"
[[commission]]
name = "equities"
currency = "EUR"
[[financing]]
benchmark = "REF"
long_spread = "1%"
calendar = "exchange"
"""
    assert _problems(tmp_path, text) == [
        "schedule.toml financing[1].benchmark: expected the name of a [[benchmark]] table (there "
        "are none), found 'REF'",
        "schedule.toml financing[1].calendar: expected the name of a list in [calendars] (there "
        "are none), found 'exchange'",
        "schedule.toml commission[2].name: expected a name of its own (commission[1] has it "
        "already), found 'equities'",
    ]


def test_a_syntax_error_names_the_line(tmp_path: Path) -> None:
    problems = _problems(tmp_path, '[[commission]]\ncurrency = "USD\n')
    assert len(problems) == 1
    assert problems[0].startswith("schedule.toml: expected valid TOML (")
    assert "line 2" in problems[0]


def test_a_missing_schedule(tmp_path: Path) -> None:
    with pytest.raises(SourceNotFoundError, match="no such file"):
        read_schedule(tmp_path / "nothing.toml")


def test_rates_take_percent_signs_and_integers_dates_take_strings(tmp_path: Path) -> None:
    text = """
[[commission]]
currency = "JPY"
per_unit = 2
valid_from = "2026-10-01"
[[financing]]
short_rate = "-3%"
long_rate = "0.5"
day_count = "act/365 (fixed)"
cutoff = 16:30:00
"""
    schedule = read_schedule(_write(tmp_path, text))
    assert schedule.commission[0].per_unit == D(2)
    assert schedule.commission[0].selector.valid_from == date(2026, 10, 1)
    rule = schedule.financing[0]
    assert (rule.short_rate, rule.long_rate, rule.day_count) == (D("-0.03"), D("0.5"), "ACT/365F")
    assert rule.cutoff == time(16, 30)
    assert rule.cutoff_timezone == "UTC"
