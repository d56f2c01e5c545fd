"""Apply a :class:`~reconcile.io.readers.profiles.Profile` to a raw frame of text values.

The result has canonical column names and canonical value spellings, still as text, so the core's
canonicaliser validates it exactly as it validates a canonical file. Problems met here (a side the
profile does not map, a number not written the profile's way, a time not in its format) are row
problems like the canonicaliser's, named by the source's own column names.
"""

from __future__ import annotations

import decimal
import re
from dataclasses import dataclass, field
from decimal import Decimal

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from reconcile import schema
from reconcile.errors import MissingColumnsError, Problem
from reconcile.io.readers.profiles import CANONICAL, MULTI_COLUMN, NUMERIC, NumberOptions, Profile

_PLAIN = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)"
_PLAIN_RE = re.compile(_PLAIN)


@dataclass
class Mapped:
    """A frame in canonical columns and the row problems found while mapping it."""

    frame: pd.DataFrame
    problems: list[Problem] = field(default_factory=list)


def apply_profile(raw: pd.DataFrame, profile: Profile, source: str) -> Mapped:
    _require_sources(raw, profile, source)
    rows = raw[schema.SOURCE_ROW].to_numpy(dtype=np.int64)
    problems: list[Problem] = []
    report = _Reporter(source, rows, problems)
    data: dict[str, pd.Series] = {}
    numeric = NUMERIC[profile.kind]
    for name in CANONICAL[profile.kind]:
        sources = profile.source_columns(name)
        if name in profile.constants:
            data[name] = pd.Series([profile.constants[name]] * len(raw), dtype="str")
        elif not all(s in raw.columns for s in sources):
            continue  # an optional column the source does not have
        elif name in numeric:
            data[name] = _number_column(raw, sources, profile.numbers, report)
        elif name == "time":
            data[name] = _time_column(raw, sources, profile, report)
        else:
            data[name] = _text(raw[sources[0]])
    _map_values(data, profile, report)
    _apply_signs(data, profile, report)
    used = {s for name in CANONICAL[profile.kind] for s in profile.source_columns(name)}
    canonical = set(CANONICAL[profile.kind])
    for name in raw.columns:
        if name not in used and name not in canonical and name != schema.SOURCE_ROW:
            data[name] = raw[name].reset_index(drop=True)
    frame = pd.DataFrame(data)
    frame[schema.SOURCE_ROW] = rows
    return Mapped(frame, problems)


@dataclass
class _Reporter:
    source: str
    rows: np.ndarray
    problems: list[Problem]

    def add(
        self, mask: np.ndarray, column: str, expected: str, found: pd.Series, reason: str
    ) -> None:
        for position in np.flatnonzero(mask):
            self.problems.append(
                Problem(
                    self.source,
                    expected,
                    str(found.iloc[position]),
                    int(self.rows[position]),
                    column,
                    reason,
                )
            )


def _require_sources(raw: pd.DataFrame, profile: Profile, source: str) -> None:
    present = [str(c) for c in raw.columns if c != schema.SOURCE_ROW]
    missing = [
        (name, column)
        for name, given in profile.columns.items()
        for column in ([given] if isinstance(given, str) else given)
        if column not in present
    ]
    if not missing:
        return
    named = ", ".join(f"{c!r} ({profile.origin} key columns.{n})" for n, c in missing)
    raise MissingColumnsError(
        f"{source}: the profile names columns the file does not have: {named}; "
        f"the header has: {', '.join(present) or '(nothing)'}",
        [Problem(source, f"a column named {c}", None, 1, n, "missing column") for n, c in missing],
    )


def _text(series: pd.Series) -> pd.Series:
    values = series.reset_index(drop=True)
    return values.where(values.notna(), "").astype("str").str.strip()


def _number_column(
    raw: pd.DataFrame, sources: list[str], numbers: NumberOptions, report: _Reporter
) -> pd.Series:
    for column in sources:
        if pd.api.types.is_float_dtype(raw[column].dtype):
            report.problems.append(
                Problem(
                    report.source,
                    "exact decimal values (text or a decimal type)",
                    str(raw[column].dtype),
                    None,
                    column,
                    "binary floating-point column",
                )
            )
    parts = [_plain_number(_text(raw[s]), s, numbers, report) for s in sources]
    if len(parts) == 1:
        return parts[0]
    return _exact_sum(parts, sources, report)


def _plain_number(
    text: pd.Series, column: str, numbers: NumberOptions, report: _Reporter
) -> pd.Series:
    """Rewrite ``1.234,50`` / ``(3,25)`` as ``1234.50`` / ``-3.25``; report what fits no form."""
    if numbers.plain:
        return text
    values = pa.array(text.tolist(), pa.string())
    if numbers.parentheses:
        wrapped = pc.match_substring_regex(values, r"^\(.*\)$")
        inner = pc.utf8_slice_codeunits(values, 1, -1)
        values = pc.if_else(wrapped, pc.binary_join_element_wise("-", inner, ""), values)
    point, group = re.escape(numbers.decimal), re.escape(numbers.thousands)
    shape = rf"^[+-]?(?:[0-9]+|[0-9]{{1,3}}(?:{group}[0-9]{{3}})+)(?:{point}[0-9]*)?$"
    if not numbers.thousands:
        shape = rf"^[+-]?[0-9]*(?:{point}[0-9]*)?$"
    fits = pc.or_(pc.match_substring_regex(values, shape), pc.equal(values, ""))
    bad = ~np.asarray(fits.to_numpy(zero_copy_only=False), dtype=bool)
    example = f"1{numbers.thousands}234{numbers.decimal}5"
    negative = (
        f" or (3{numbers.decimal}25) for -3{numbers.decimal}25" if numbers.parentheses else ""
    )
    report.add(
        bad,
        column,
        f"a number written like {example}{negative} (profile [numbers])",
        text,
        "not a number",
    )
    if numbers.thousands:
        values = pc.replace_substring(values, numbers.thousands, "")
    if numbers.decimal != ".":
        values = pc.replace_substring(values, numbers.decimal, ".")
    plain = pd.Series(values.to_pylist(), dtype="str")
    return plain.where(~bad, "")


def _exact_sum(parts: list[pd.Series], sources: list[str], report: _Reporter) -> pd.Series:
    """Sum text decimals exactly (blank is 0); a part that is not a number is a problem."""
    for part, column in zip(parts, sources, strict=True):
        bad = ~(part.str.fullmatch(_PLAIN) | part.eq("")).to_numpy()
        report.add(
            bad, column, "a decimal number (a part of a summed column)", part, "not a number"
        )
    totals = []
    with decimal.localcontext() as context:
        context.prec = 100
        for values in zip(*(p.tolist() for p in parts), strict=True):
            numbers = [Decimal(v) for v in values if v and _PLAIN_RE.fullmatch(v)]
            totals.append(format(sum(numbers, Decimal(0)), "f") if numbers else "")
    return pd.Series(totals, dtype="str")


def _time_column(
    raw: pd.DataFrame, sources: list[str], profile: Profile, report: _Reporter
) -> pd.Series:
    text = _text(raw[sources[0]])
    for other in sources[1:]:
        text = text + " " + _text(raw[other])
    fmt = profile.time.format
    if fmt is None:
        return text
    parsed = pd.to_datetime(text, format=fmt, errors="coerce")
    bad = (parsed.isna() & text.ne("")).to_numpy()
    shown = " + ".join(sources)
    report.add(bad, shown, f"a time in the profile's format {fmt!r}", text, "bad time")
    iso = parsed.map(lambda t: "" if pd.isna(t) else t.isoformat())
    return pd.Series(iso.tolist(), dtype="str")


def _map_values(data: dict[str, pd.Series], profile: Profile, report: _Reporter) -> None:
    for name, mapping in profile.values.items():
        if name not in data:
            continue
        folded = {key.strip().lower(): value for key, value in mapping.items()}
        text = data[name]
        lowered = text.str.lower()
        known = lowered.isin(list(folded)) | text.eq("")
        listed = ", ".join(mapping)
        report.add(
            ~known.to_numpy(),
            profile.shown_name(name),
            f"one of {listed} (profile values.{name})",
            text,
            "unknown value",
        )
        data[name] = lowered.map(folded).where(known & text.ne(""), "").astype("str")


def _apply_signs(data: dict[str, pd.Series], profile: Profile, report: _Reporter) -> None:
    signs = profile.signs
    if signs.quantity == "signed" and "quantity" in data:
        quantity = data["quantity"]
        negative = quantity.str.startswith("-")
        derived = pd.Series(np.where(negative, "sell", "buy"), dtype="str")
        if "side" in data:  # a side column the file has as well: it must agree with the sign
            _check_sides(data["side"], derived, report)
        data["side"] = derived
        data["quantity"] = quantity.str.removeprefix("-").str.removeprefix("+")
    if signs.commission == "negative" and "commission" in data:
        data["commission"] = data["commission"].map(_negate).astype("str")


def _check_sides(given: pd.Series, derived: pd.Series, report: _Reporter) -> None:
    named = given.str.strip().str.lower().map(_SIDE_NAMES)
    bad = (given.ne("") & named.ne(derived)).to_numpy()
    report.add(
        bad,
        "side",
        "the side the signed quantity gives, buy for a positive, sell for a negative "
        "(profile signs.quantity = 'signed')",
        given,
        "side contradicts sign",
    )


_SIDE_NAMES = {"b": "buy", "buy": "buy", "s": "sell", "sell": "sell"}


def _negate(text: str) -> str:
    if text == "" or text.strip("0.+-") == "":
        return text.lstrip("+-")
    return text[1:] if text.startswith("-") else "-" + text.removeprefix("+")


__all__ = ["MULTI_COLUMN", "Mapped", "apply_profile"]
