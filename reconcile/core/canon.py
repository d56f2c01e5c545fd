"""Turn a frame of raw values into the canonical fills, financing or opening-lot table.

Every column is converted at once with Arrow compute, and every problem found is collected with its
row and column before anything is raised, so one run reports all that is wrong with an input.
The functions know nothing of files: ``source`` is only the label errors carry.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from decimal import Decimal, InvalidOperation
from typing import Any, Final

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from reconcile import schema
from reconcile.core import vectorised
from reconcile.core.threads import concurrently
from reconcile.errors import MissingColumnsError, Problem, ValidationError, raise_if_problems
from reconcile.money import is_known_currency, minor_unit
from reconcile.timezones import zone

MAX_DIGITS: Final = 38
_PLAIN_DECIMAL: Final = r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)$"
_EXPONENT_DECIMAL: Final = re.compile(r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)[eE][+-]?[0-9]+$")
_ISO_TIME: Final = (
    r"^(?P<date>[0-9]{4}-[0-9]{2}-[0-9]{2})"
    r"(?P<clock>[T ][0-9]{2}:[0-9]{2}(?::[0-9]{2}(?:[.,][0-9]{1,9})?)?)?"
    r"(?P<offset>Z|z|[+-][0-9]{2}(?::?[0-9]{2})?)?$"
)
TIME_DTYPE: Final = "datetime64[ns, UTC]"


@dataclass
class _Checker:
    """Converts one frame column by column and collects the problems it meets."""

    frame: pd.DataFrame
    source: str
    rows: np.ndarray
    problems: list[Problem] = field(default_factory=list)
    keys: np.ndarray | None = None  # (account, instrument) codes, once per-key checks need them

    def add(
        self,
        positions: Iterable[int],
        column: str,
        expected: str,
        found: Sequence[str | None] | None = None,
        reason: str = "invalid value",
    ) -> None:
        for n, position in enumerate(positions):
            value = None if found is None else found[n]
            self.problems.append(
                Problem(self.source, expected, value, int(self.rows[position]), column, reason)
            )

    def raw_text(self, column: str) -> pa.Array:
        """The column as Arrow strings (null where absent or missing)."""
        return _as_text(self.frame[column], column, self)

    def text(self, column: str, *, required: bool, default: str = "") -> pa.Array:
        if column not in self.frame.columns:
            if not default:
                return vectorised.blank_text(len(self.frame))
            return pa.repeat(pa.scalar(default, pa.string()), len(self.frame))
        values = clean_text(self.raw_text(column))
        if required:
            blank = _positions(pc.equal(values, ""))
            self.add(blank, column, "a non-empty value", [""] * len(blank), "blank value")
        elif default:
            values = pc.if_else(pc.equal(values, ""), default, values)
        return values

    def choice(
        self,
        column: str,
        mapping: dict[str, str],
        expected: str,
        fold: Callable[[pa.Array], pa.Array] = pc.utf8_lower,
    ) -> pa.Array:
        values = self.text(column, required=False)
        same = pa.array([k for k, v in mapping.items() if k == v], pa.string())
        canonical = pc.filter(same, pc.equal(fold(same), same))  # values that map to themselves
        if len(values) and pc.all(pc.is_in(values, value_set=canonical)).as_py():
            return values  # already in canonical form (``buy``, ``sell``): one pass, no copy
        folded = fold(values)
        keys = pa.array(list(mapping), pa.string())
        known = pc.is_in(folded, value_set=keys)
        bad = _positions(pc.invert(known))
        self.add(bad, column, expected, _take(values, bad), "unknown value")
        lookup = pc.index_in(folded, value_set=keys)
        targets = pa.array(list(mapping.values()), pa.string())
        return pc.fill_null(pc.take(targets, lookup), "")

    def decimal(
        self,
        column: str,
        *,
        default: str | None = None,
        optional: bool = False,
        rule: str = "",
        expected: str = "a decimal number",
    ) -> pa.Array:
        """Exact decimal column; ``rule`` is one of '', '>0', '>=0'.

        A blank or absent value takes ``default``; with ``optional`` it stays null; otherwise a
        blank is a problem.
        """
        if column not in self.frame.columns:
            if optional:
                return pa.nulls(len(self.frame), pa.decimal128(1, 0))
            assert default is not None, column
            return pa.array([Decimal(default)] * len(self.frame), pa.decimal128(1, 0))
        series = self.frame[column]
        if pd.api.types.is_float_dtype(series.dtype):
            self.problems.append(
                Problem(
                    self.source,
                    "exact decimal values (text or a decimal type)",
                    str(series.dtype),
                    None,
                    column,
                    "binary floating-point column",
                )
            )
            return pa.nulls(len(series), pa.decimal128(1, 0))
        if isinstance(series.dtype, pd.ArrowDtype) and pa.types.is_decimal(
            series.dtype.pyarrow_dtype
        ):
            values = _arrow(series)
            blank = pc.is_null(values)
            shown = values  # shown as text only for the rows a problem names
        else:
            shown = trimmed(self.raw_text(column))
            blank = pc.fill_null(pc.equal(shown, ""), True)
            values = self._parse_decimal_text(column, shown, expected)
        if default is not None and pc.any(blank).as_py():
            values = pc.if_else(blank, pa.scalar(Decimal(default), values.type), values)
        elif not optional:
            missing = _positions(blank)
            self.add(missing, column, expected, [""] * len(missing), "blank value")
        self._check_rule(column, values, shown, rule, expected)
        return values

    def _parse_decimal_text(self, column: str, text: pa.Array, expected: str) -> pa.Array:
        """Parse text exactly; blanks and reported bad values come back null."""
        parsed = vectorised.plain_decimals(text)
        if parsed is not None:
            return parsed
        text = pc.if_else(pc.equal(text, ""), pa.scalar(None, pa.string()), text)
        plain = pc.fill_null(pc.match_substring_regex(text, _PLAIN_DECIMAL), True)
        rewritten, bad = _rewrite_exponents(text, plain)
        self.add(
            bad, column, f"{expected} (finite, plain digits)", _take(text, bad), "not a number"
        )
        has_dot = pc.greater_equal(pc.find_substring(rewritten, "."), 0)
        scale = pc.if_else(
            has_dot,
            pc.subtract(
                pc.subtract(pc.utf8_length(rewritten), pc.find_substring(rewritten, ".")), 1
            ),
            0,
        )
        digits = pc.utf8_length(pc.replace_substring_regex(rewritten, r"^[+-]?0*|\.", ""))
        int_digits = pc.subtract(digits, scale)
        max_scale = min(pc.max(scale).as_py() or 0, MAX_DIGITS)
        # Arrow wraps silently when a cast overflows, so widths are checked before casting.
        too_wide = pc.fill_null(
            pc.greater(pc.add(pc.max_element_wise(int_digits, 0), max_scale), MAX_DIGITS), False
        )
        wide = _positions(too_wide)
        self.add(
            wide,
            column,
            f"at most {MAX_DIGITS} digits in all ({max_scale} after the point in this column)",
            _take(text, wide),
            "too many digits",
        )
        safe = pc.if_else(too_wide, pa.scalar(None, pa.string()), rewritten)
        widest = pc.max(pc.if_else(too_wide, 0, int_digits)).as_py() or 0
        return pc.cast(safe, pa.decimal128(max(widest, 1) + max_scale, max_scale))

    def _check_rule(
        self, column: str, values: pa.Array, shown: pa.Array, rule: str, expected: str
    ) -> None:
        if not rule:
            return
        zero = pa.scalar(Decimal(0), pa.decimal128(1, 0))
        failing = pc.less_equal(values, zero) if rule == ">0" else pc.less(values, zero)
        bad = _positions(pc.fill_null(failing, False))
        self.add(bad, column, expected, _take(shown, bad), "out of range")

    def time(self, column: str, timezone: str | None) -> pd.Series:
        """UTC timestamps; a time without an offset needs ``timezone`` (IANA) to be placed."""
        # One UTC object whichever way the times were parsed (Arrow hands pandas ZoneInfo("UTC"),
        # pandas' own parser datetime.timezone.utc), so frames from any input compare alike.
        utc: pd.Series = self._utc_times(column, timezone).dt.tz_convert("UTC")
        return utc

    def _utc_times(self, column: str, timezone: str | None) -> pd.Series:
        series = self.frame[column]
        if isinstance(series.dtype, pd.DatetimeTZDtype):
            aware: pd.Series = series.dt.tz_convert("UTC").astype(TIME_DTYPE)
            return aware.reset_index(drop=True)
        if pd.api.types.is_datetime64_dtype(series.dtype):
            text = pa.array(series.dt.strftime("%Y-%m-%dT%H:%M:%S.%f").tolist(), pa.string())
        else:
            text = pc.fill_null(trimmed(self.raw_text(column)), "")
            parsed = vectorised.iso_times(text)
            if parsed is not None:
                return pd.Series(parsed.to_pandas(), dtype=TIME_DTYPE)
        parts = pc.extract_regex(text, _ISO_TIME)
        bad_shape = _positions(pc.is_null(parts))
        self.add(
            bad_shape,
            column,
            "an ISO 8601 date-time such as 2026-11-30T16:00:00-05:00",
            _take(text, bad_shape),
            "bad time",
        )
        offset = pc.fill_null(pc.struct_field(parts, "offset"), "-")
        # RFC 3339 allows a lower-case z for UTC, which the ISO parser refuses.
        plain = pc.replace_substring_regex(pc.replace_substring(text, ",", "."), "z$", "Z")
        strings = pd.Series(plain.to_pylist(), dtype=object)
        result = pd.Series(pd.NaT, index=range(len(series)), dtype=TIME_DTYPE)
        with_offset = _mask(pc.and_(pc.is_valid(parts), pc.not_equal(offset, "")))
        naive = _mask(pc.equal(offset, ""))
        if with_offset.any():
            parsed = pd.to_datetime(
                strings[with_offset], format="ISO8601", utc=True, errors="coerce"
            )
            result[with_offset] = parsed.astype(TIME_DTYPE)
            self._report_unreal(column, strings, with_offset & result.isna().to_numpy())
        if naive.any() and timezone is None:
            where = [int(i) for i in np.flatnonzero(naive)]
            self.add(
                where,
                column,
                "a UTC offset (e.g. +00:00 or Z), or --timezone ZONE",
                strings[naive].tolist(),
                "time without offset",
            )
        elif naive.any():
            assert timezone is not None
            result[naive] = self._localise(column, strings, naive, timezone)
        return result

    def _localise(
        self, column: str, strings: pd.Series, naive: np.ndarray, timezone: str
    ) -> pd.Series:
        parsed = pd.to_datetime(strings[naive], format="ISO8601", errors="coerce")
        self._report_unreal(column, strings, _spread(naive, parsed.isna().to_numpy()))
        local = parsed.dt.tz_localize(zone(timezone), ambiguous="NaT", nonexistent="NaT")
        lost = _spread(naive, (local.isna() & parsed.notna()).to_numpy())
        self.add(
            list(np.flatnonzero(lost)),
            column,
            f"a local time that occurs exactly once in {timezone} (give a UTC offset)",
            strings[lost].tolist(),
            "ambiguous or skipped local time",
        )
        return local.dt.tz_convert("UTC").astype(TIME_DTYPE)

    def _report_unreal(self, column: str, strings: pd.Series, mask: np.ndarray) -> None:
        self.add(
            list(np.flatnonzero(mask)),
            column,
            "a real calendar date and time",
            strings[mask].tolist(),
            "bad time",
        )

    def currency(self, column: str) -> pa.Array:
        values = self.text(column, required=True)
        upper = pc.utf8_upper(values)
        codes = [c for c in pc.unique(upper).to_pylist() if c]
        unknown = [c for c in codes if not is_known_currency(c)]
        unitless = [c for c in codes if c not in unknown and minor_unit(c) is None]
        for codes_bad, expected in (
            (unknown, "an ISO 4217 currency code such as USD"),
            (unitless, "a currency with an ISO 4217 minor unit"),
        ):
            if codes_bad:
                bad = _positions(pc.is_in(upper, value_set=pa.array(codes_bad, pa.string())))
                self.add(bad, column, expected, _take(values, bad), "unknown currency")
        return upper

    def check_distinct_ids(
        self,
        column: str,
        ids: pa.Array,
        compare: list[str],
        dedupe: bool,
        repeated: np.ndarray | None = None,
    ) -> np.ndarray:
        """Rows to keep; exact repeats are errors unless ``dedupe``, clashing ids always are.
        ``repeated`` flags the rows whose id occurs more than once, when already known."""
        # Only rows sharing an id can repeat or clash, so only those are compared in full.
        suspects = np.flatnonzero(vectorised.repeated(ids) if repeated is None else repeated)
        keep = np.ones(len(self.frame), dtype=bool)
        if not len(suspects):
            return keep
        frame = self.frame.iloc[suspects].reset_index(drop=True)
        sub = _Checker(frame, self.source, self.rows[suspects])
        keep[suspects] = sub.compare_rows(column, ids.take(pa.array(suspects)), compare, dedupe)
        self.problems += sub.problems
        return keep

    def compare_rows(
        self, column: str, ids: pa.Array, compare: list[str], dedupe: bool
    ) -> np.ndarray:
        table = self.frame[compare].astype(str).reset_index(drop=True)
        table[column] = ids.to_pylist()
        exact = table.duplicated(keep="first").to_numpy()
        keep = ~exact
        if exact.any() and not dedupe:
            group = table.groupby(compare, dropna=False, sort=False).ngroup().to_numpy()
            first_row = pd.Series(self.rows).groupby(group).transform("first").to_numpy()
            where = list(np.flatnonzero(exact))
            self.problems += [
                Problem(
                    self.source,
                    f"no exact repeat of row {first_row[i]} (a repeated fill is usually "
                    "a break; --dedupe drops exact repeats)",
                    None,
                    int(self.rows[i]),
                    None,
                    "duplicate row",
                )
                for i in where
            ]
        ids_kept = table.loc[keep, column].astype(str)
        clash = ids_kept.duplicated(keep=False) & ids_kept.ne("")
        for value, same in ids_kept[clash].groupby(ids_kept[clash], sort=False):
            first, second = int(same.index[0]), int(same.index[1])
            one, two = table.iloc[first].to_dict(), table.iloc[second].to_dict()
            columns = [c for c in compare if one[c] != two[c]]
            detail = ", ".join(f"{c} {one[c]!r} vs {two[c]!r}" for c in columns[:3])
            self.problems.append(
                Problem(
                    self.source,
                    f"a unique {column} (row {self.rows[first]} has the same id with "
                    f"different content: {detail})",
                    str(value),
                    int(self.rows[second]),
                    column,
                    "duplicate id",
                )
            )
        return keep

    def check_one_per_key(
        self, frame: pd.DataFrame, column: str, what: str, codes: np.ndarray | None = None
    ) -> None:
        """One value of ``column`` per (account, instrument): name the rows that disagree.
        ``codes`` are the column's value codes (:func:`vectorised.codes`), when already known."""
        if any(p.column == column for p in self.problems):
            return  # bad values would only be reported twice
        if self.keys is None or len(self.keys) != len(frame):
            self.keys = vectorised.key_codes(_arrow(frame["account"]), _arrow(frame["instrument"]))
        if vectorised.one_value_per_key(self.keys, _arrow(frame[column]), codes):
            return
        if isinstance(frame[column].dtype, pd.ArrowDtype):
            frame = frame.assign(**{column: frame[column].astype(str)})
        grouped = frame.groupby(["account", "instrument"], sort=False)[column]
        counts = grouped.nunique()
        for account, instrument in counts[counts > 1].index:
            rows = frame[(frame["account"] == account) & (frame["instrument"] == instrument)]
            firsts = rows.drop_duplicates(column)
            (r1, v1), (r2, v2) = list(zip(firsts[schema.SOURCE_ROW], firsts[column], strict=True))[
                :2
            ]
            self.problems.append(
                Problem(
                    self.source,
                    f"one {what} per account and instrument ({account} {instrument} has "
                    f"{v1} at row {r1})",
                    str(v2),
                    int(r2),
                    column,
                    f"two {what}s for one instrument",
                )
            )


def clean_text(raw: pa.Array) -> pa.Array:
    """Text values as canon reads them: trimmed, blank for null, a writer's apostrophe undone."""
    values = pc.fill_null(trimmed(raw), "")
    # Undo the apostrophe our CSV writer puts before a would-be spreadsheet formula (the regex
    # only where some value starts with one: most columns have none).
    if pc.any(pc.starts_with(values, "'")).as_py():
        values = pc.replace_substring_regex(values, r"^'([=+\-@\t\r])", r"\1")
    return values


def trimmed(raw: pa.Array) -> pa.Array:
    """Text without leading or trailing whitespace; no copy when a scan shows there is none."""
    scans = vectorised.compiled_scans(raw)
    return raw if scans is not None and scans.surely_unpadded(raw) else pc.utf8_trim_whitespace(raw)


def _rewrite_exponents(text: pa.Array, plain: pa.Array) -> tuple[pa.Array, list[int]]:
    """Rewrite the rare ``1.5E-3`` forms as plain digits; return the rows that are not numbers."""
    odd = _positions(pc.invert(plain))
    if not odd:
        return text, []
    values = text.to_pylist()
    bad = []
    for i in odd:
        candidate = values[i]
        if candidate is not None and _EXPONENT_DECIMAL.match(candidate):
            try:
                values[i] = format(Decimal(candidate), "f")
                continue
            except InvalidOperation:  # pragma: no cover - the regex admits only finite forms
                pass
        bad.append(i)
        values[i] = None
    return pa.array(values, pa.string()), bad


def _as_text(series: pd.Series, column: str, checker: _Checker | None) -> pa.Array:
    if isinstance(series.dtype, pd.ArrowDtype) or pd.api.types.is_string_dtype(series.dtype):
        array = _arrow(series)
        # pandas keeps text as large strings and wants them back so: no cast either way.
        return array if pa.types.is_large_string(array.type) else array.cast(pa.string())
    if pd.api.types.is_integer_dtype(series.dtype):
        return pa.array(series.astype(str).tolist(), pa.string())
    values: list[str | None] = []
    floats: list[int] = []
    for i, value in enumerate(series.tolist()):
        if value is None or value is pd.NA or value is pd.NaT:
            values.append(None)
        elif isinstance(value, float):
            if value != value:
                values.append(None)
            else:
                floats.append(i)
                values.append(None)
        elif isinstance(value, Decimal):
            values.append(format(value, "f") if value.is_finite() else str(value))
        else:
            values.append(str(value))
    if floats and checker is not None:
        checker.add(
            floats,
            column,
            "exact values (text, integer or Decimal), not binary floats",
            [repr(series.iloc[i]) for i in floats],
            "binary float",
        )
    return pa.array(values, pa.string())


def _arrow(series: pd.Series) -> pa.Array:
    array = pa.array(series.array)
    return array.combine_chunks() if isinstance(array, pa.ChunkedArray) else array


def _spread(outer: np.ndarray, inner: np.ndarray) -> np.ndarray:
    """Place ``inner`` (one flag per True of ``outer``) back at full length."""
    full = np.zeros(len(outer), dtype=bool)
    full[np.flatnonzero(outer)] = inner
    return full


def _positions(mask: pa.Array) -> list[int]:
    return [int(i) for i in np.flatnonzero(_mask(mask))]


def _mask(mask: pa.Array) -> np.ndarray:
    return np.asarray(pc.fill_null(mask, False).to_numpy(zero_copy_only=False), dtype=bool)


def _take(values: pa.Array, positions: list[int]) -> list[str | None]:
    if not positions:
        return []
    return [None if v is None else str(v) for v in pc.take(values, pa.array(positions)).to_pylist()]


def _require(frame: pd.DataFrame, required: Sequence[str], source: str) -> None:
    present = [str(c) for c in frame.columns if c != schema.SOURCE_ROW]
    missing = [c for c in required if c not in present]
    if not missing:
        return
    hints = []
    # A column that is itself one of ours is not a misspelling of another (account is not amount).
    ours = {*schema.FILL_COLUMNS, *schema.FINANCING_COLUMNS, *schema.OPENING_COLUMNS}
    candidates = [c for c in present if c not in ours]
    for name in missing:
        close = difflib.get_close_matches(name, candidates, n=1, cutoff=0.5)
        hints.append(
            f"{name} (a column {close[0]!r} exists: rename it or use a profile)" if close else name
        )
    raise MissingColumnsError(
        f"{source}: missing required column{'s' if len(missing) > 1 else ''}: "
        f"{', '.join(hints)}; the header has: {', '.join(present) or '(nothing)'}"
        + _delimiter_hint(present),
        [Problem(source, "a column named " + m, None, 1, m, "missing column") for m in missing],
    )


def _delimiter_hint(present: Sequence[str]) -> str:
    """A header read as one column that holds another separator is the usual wrong delimiter."""
    if len(present) != 1:
        return ""
    for mark, toml in ((";", '";"'), ("\t", '"\\t"'), ("|", '"|"')):
        if mark in present[0]:
            return (
                f" (the header looks {mark!r}-separated: declare delimiter = {toml} under "
                "[source] in a profile)"
            )
    return ""


def _source_rows(frame: pd.DataFrame) -> np.ndarray:
    if schema.SOURCE_ROW in frame.columns:
        return frame[schema.SOURCE_ROW].to_numpy(dtype=np.int64)
    return np.arange(2, len(frame) + 2, dtype=np.int64)


def _extras(frame: pd.DataFrame, known: Iterable[str]) -> list[str]:
    names = set(known) | {schema.SOURCE_ROW}
    return [c for c in frame.columns if c not in names]


def _assemble(
    columns: dict[str, pa.Array | pd.Series],
    frame: pd.DataFrame,
    keep: np.ndarray,
    extras: list[str],
    rows: np.ndarray,
) -> pd.DataFrame:
    data: dict[str, Any] = {}
    every = bool(keep.all())
    for name, values in columns.items():
        if isinstance(values, pd.Series):
            data[name] = (values if every else values[keep]).reset_index(drop=True)
            continue
        kept = values if every else values.filter(pa.array(keep))
        if pa.types.is_decimal(values.type):
            data[name] = pd.Series(kept, dtype=pd.ArrowDtype(values.type))
        else:
            data[name] = vectorised.string_series(kept)
    for name in extras:
        extra = frame[name].reset_index(drop=True)
        data[name] = (extra if every else extra[keep]).reset_index(drop=True)
    data[schema.SOURCE_ROW] = rows if every else rows[keep]
    return pd.DataFrame(data)


def _fill_codes(columns: dict[str, pa.Array | pd.Series]) -> dict[str, np.ndarray | None]:
    """The whole-column steps the fill checks need after conversion, run concurrently: which
    ids repeat, and the codes of the columns checked per key."""

    def coder(name: str) -> Callable[[], np.ndarray | None]:
        values = columns[name]
        return lambda: vectorised.codes(values) if isinstance(values, pa.Array) else None

    ids = columns["fill_id"]
    assert isinstance(ids, pa.Array)
    steps: dict[str, Callable[[], np.ndarray | None]] = {
        "repeated": lambda: vectorised.repeated(ids),
        **{name: coder(name) for name in ("account", "instrument", "currency", "multiplier")},
    }
    return concurrently(steps)


def canonical_fills(
    frame: pd.DataFrame, *, source: str = "fills", timezone: str | None = None, dedupe: bool = False
) -> pd.DataFrame:
    """Validate and convert a fills frame; raise one error listing every problem found.

    The result has the canonical fill columns, then any other columns untouched, then
    ``source_row``. ``result.attrs["read_summary"]`` counts rows read and exact repeats dropped.
    """
    _require(frame, schema.FILL_REQUIRED, source)
    frame = frame.reset_index(drop=True)
    if timezone is not None:
        zone(timezone)  # an unknown zone is an error even when no time needs it
    check = _Checker(frame, source, _source_rows(frame))
    # Columns convert independently (Arrow releases the interpreter lock); problems are sorted
    # by row and column before they are reported, so the order they are found in does not show.
    columns: dict[str, pa.Array | pd.Series] = concurrently(
        {
            "fill_id": lambda: check.text("fill_id", required=True),
            "account": lambda: check.text("account", required=True),
            "instrument": lambda: check.text("instrument", required=True),
            "side": lambda: check.choice(
                "side", schema.SIDES, "buy or sell (also B or S, any case)"
            ),
            "quantity": lambda: check.decimal("quantity", rule=">0", expected="a decimal > 0"),
            "price": lambda: check.decimal("price"),
            "time": lambda: check.time("time", timezone),
            "commission": lambda: check.decimal(
                "commission", default="0", rule=">=0", expected="a decimal >= 0"
            ),
            "currency": lambda: check.currency("currency"),
            "multiplier": lambda: check.decimal(
                "multiplier", default="1", rule=">0", expected="a decimal > 0"
            ),
            "order_id": lambda: check.text("order_id", required=False),
            "venue": lambda: check.text("venue", required=False),
        }
    )
    compare = [c for c in frame.columns if c != schema.SOURCE_ROW]
    found = _fill_codes(columns)
    keep = check.check_distinct_ids(
        "fill_id", columns["fill_id"], compare, dedupe, found.pop("repeated")
    )
    result = _assemble(columns, frame, keep, _extras(frame, schema.FILL_COLUMNS), check.rows)
    every = bool(keep.all())
    kept = {name: c if c is None or every else c[keep] for name, c in found.items()}
    if kept["account"] is not None and kept["instrument"] is not None:
        check.keys = vectorised.pair_codes(kept["account"], kept["instrument"])
    check.check_one_per_key(result, "currency", "currency", kept["currency"])
    check.check_one_per_key(result, "multiplier", "multiplier", kept["multiplier"])
    _raise(check)
    result.attrs["read_summary"] = {
        "source": source,
        "rows_read": len(frame),
        "accepted": len(result),
        "duplicates_dropped": int((~keep).sum()),
    }
    return result


def canonical_financing(
    frame: pd.DataFrame,
    *,
    source: str = "financing",
    timezone: str | None = None,
    dedupe: bool = False,
) -> pd.DataFrame:
    """Validate and convert a financing-events frame (see :func:`canonical_fills`)."""
    _require(frame, schema.FINANCING_COLUMNS, source)
    frame = frame.reset_index(drop=True)
    if timezone is not None:
        zone(timezone)  # an unknown zone is an error even when no time needs it
    check = _Checker(frame, source, _source_rows(frame))
    kinds = {k: k for k in schema.FINANCING_KINDS}
    # Columns convert independently (Arrow releases the interpreter lock); problems are sorted
    # by row and column before they are reported, so the order they are found in does not show.
    columns: dict[str, pa.Array | pd.Series] = concurrently(
        {
            "event_id": lambda: check.text("event_id", required=True),
            "account": lambda: check.text("account", required=True),
            "instrument": lambda: check.text("instrument", required=True),
            "time": lambda: check.time("time", timezone),
            "amount": lambda: check.decimal(
                "amount", expected="a signed decimal (negative is a charge)"
            ),
            "currency": lambda: check.currency("currency"),
            "kind": lambda: check.choice(
                "kind", kinds, "one of " + ", ".join(schema.FINANCING_KINDS)
            ),
        }
    )
    compare = [c for c in frame.columns if c != schema.SOURCE_ROW]
    keep = check.check_distinct_ids("event_id", columns["event_id"], compare, dedupe)
    result = _assemble(columns, frame, keep, _extras(frame, schema.FINANCING_COLUMNS), check.rows)
    _raise(check)
    result.attrs["read_summary"] = {
        "source": source,
        "rows_read": len(frame),
        "accepted": len(result),
        "duplicates_dropped": int((~keep).sum()),
    }
    return result


def canonical_opening(
    frame: pd.DataFrame, *, source: str = "opening", timezone: str | None = None
) -> pd.DataFrame:
    """Validate and convert open lots carried in from an earlier period (``open_lots`` columns)."""
    _require(frame, schema.OPENING_REQUIRED, source)
    frame = frame.reset_index(drop=True)
    if timezone is not None:
        zone(timezone)  # an unknown zone is an error even when no time needs it
    check = _Checker(frame, source, _source_rows(frame))
    directions = {"long": "long", "short": "short"}
    # Columns convert independently (Arrow releases the interpreter lock); problems are sorted
    # by row and column before they are reported, so the order they are found in does not show.
    columns: dict[str, pa.Array | pd.Series] = concurrently(
        {
            "account": lambda: check.text("account", required=True),
            "instrument": lambda: check.text("instrument", required=True),
            "currency": lambda: check.currency("currency"),
            "direction": lambda: check.choice("direction", directions, "long or short"),
            "open_fill_id": lambda: check.text("open_fill_id", required=True),
            "open_time": lambda: check.time("open_time", timezone),
            "quantity": lambda: check.decimal("quantity", rule=">0", expected="a decimal > 0"),
            "open_price": lambda: check.decimal("open_price"),
            "commission": lambda: check.decimal(
                "commission", default="0", rule=">=0", expected="a decimal >= 0"
            ),
            "financing": lambda: check.decimal("financing", default="0"),
            "multiplier": lambda: check.decimal(
                "multiplier", default="1", rule=">0", expected="a decimal > 0"
            ),
        }
    )
    columns["cost_basis"] = check.decimal("cost_basis", optional=True)
    keep = np.ones(len(frame), dtype=bool)
    result = _assemble(columns, frame, keep, [], check.rows)
    check.check_one_per_key(result, "currency", "currency")
    check.check_one_per_key(result, "multiplier", "multiplier")
    _raise(check)
    return result


def _raise(check: _Checker) -> None:
    ordered = sorted(check.problems, key=lambda p: (p.row or 0, p.column or ""))
    raise_if_problems(check.source, ordered)


Canonicaliser = Callable[..., pd.DataFrame]


def screen(
    convert: Canonicaliser, frame: pd.DataFrame, *, source: str, **options: Any
) -> tuple[pd.DataFrame, dict[int, list[Problem]]]:
    """Run ``convert`` (e.g. :func:`canonical_fills`) but set bad rows aside instead of raising.

    Returns the canonical frame of the rows that pass and, by source row, the problems of each row
    set aside. Rows are screened until what is left passes, since removing a row can bring out
    another (the second currency of an instrument once the first row that disagreed is gone).
    A problem that names no row (a column of binary floats) concerns every row and still raises.
    """
    frame = frame.reset_index(drop=True)
    if schema.SOURCE_ROW not in frame.columns:
        frame = frame.assign(**{schema.SOURCE_ROW: _source_rows(frame)})
    rejected: dict[int, list[Problem]] = {}
    remaining = frame
    while True:
        try:
            result = convert(remaining, source=source, **options)
        except ValidationError as error:
            rows = {p.row for p in error.problems}
            present = set(remaining[schema.SOURCE_ROW].tolist())
            if None in rows or not rows & present:
                raise
            for problem in error.problems:
                rejected.setdefault(int(problem.row or 0), []).append(problem)
            remaining = remaining[~remaining[schema.SOURCE_ROW].isin(rows)]
            continue
        summary = dict(result.attrs.get("read_summary") or {"source": source})
        summary.update(rows_read=len(frame), accepted=len(result), rejected=len(rejected))
        summary.setdefault("duplicates_dropped", 0)
        result.attrs["read_summary"] = summary
        return result, rejected


def canonical_marks(
    frame: pd.DataFrame, *, source: str = "marks", timezone: str | None = None
) -> pd.DataFrame:
    """Validate and convert marks (time, instrument, price, optional account) for the fee audit.

    A blank account applies the mark to every account that holds the instrument.
    """
    _require(frame, schema.MARKS_REQUIRED, source)
    frame = frame.reset_index(drop=True)
    if timezone is not None:
        zone(timezone)  # an unknown zone is an error even when no time needs it
    check = _Checker(frame, source, _source_rows(frame))
    columns: dict[str, pa.Array | pd.Series] = {
        "time": check.time("time", timezone),
        "account": check.text("account", required=False),
        "instrument": check.text("instrument", required=True),
        "price": check.decimal("price"),
    }
    keep = np.ones(len(frame), dtype=bool)
    result = _assemble(columns, frame, keep, [], check.rows)
    _raise(check)
    return result


def canonical_statement(frame: pd.DataFrame, *, source: str = "statement") -> pd.DataFrame:
    """Validate and convert a broker's or clearing firm's statement (see docs/formats.md).

    A blank ``instrument`` makes an account-level line. Blank measures are not stated; each line
    states at least one. ``result.attrs["measures"]`` lists the measure columns the file has, and
    ``average_price_places`` keeps the places each average price was written with (a statement
    shows a rounded average, so ours is compared at its places).
    """
    _require(frame, schema.STATEMENT_REQUIRED, source)
    measures = [m for m in schema.STATEMENT_MEASURES if m in frame.columns]
    if not measures:
        raise MissingColumnsError(
            f"{source}: expected at least one of the columns "
            f"{', '.join(schema.STATEMENT_MEASURES)}; the header has: "
            f"{', '.join(str(c) for c in frame.columns)}",
            [Problem(source, "a measure column", None, 1, None, "missing column")],
        )
    frame = frame.reset_index(drop=True)
    check = _Checker(frame, source, _source_rows(frame))
    bases = {b: b for b in schema.STATEMENT_BASES}
    columns: dict[str, pa.Array | pd.Series] = {
        "account": check.text("account", required=True),
        "instrument": check.text("instrument", required=False),
        "currency": check.currency("currency"),
    }
    for measure in schema.STATEMENT_MEASURES:
        columns[measure] = check.decimal(measure, optional=True)
    columns["basis"] = check.choice(
        "basis", {"": "gross", **bases}, "gross or net (blank is gross)"
    )
    keep = np.ones(len(frame), dtype=bool)
    result = _assemble(columns, frame, keep, [], check.rows)
    result["average_price_places"] = _written_places(frame, "average_price")
    _check_statement_lines(check, result, measures)
    _raise(check)
    result.attrs["measures"] = measures
    result.attrs["read_summary"] = {"source": source, "rows_read": len(frame)}
    return result


def _written_places(frame: pd.DataFrame, column: str) -> list[int]:
    """Decimal places each value of ``column`` was written with (0 where blank or absent)."""
    if column not in frame.columns:
        return [0] * len(frame)
    series = frame[column]
    if isinstance(series.dtype, pd.ArrowDtype) and pa.types.is_decimal(series.dtype.pyarrow_dtype):
        return [int(series.dtype.pyarrow_dtype.scale)] * len(frame)
    places = []
    for value in _as_text(series, column, None).to_pylist():
        text = (value or "").strip().lower()
        try:
            exponent = Decimal(text).as_tuple().exponent if text else 0
        except InvalidOperation:
            exponent = 0
        places.append(max(0, -exponent) if isinstance(exponent, int) else 0)
    return places


def _check_statement_lines(check: _Checker, lines: pd.DataFrame, measures: list[str]) -> None:
    stated = lines[measures].notna()
    unreadable = {p.row for p in check.problems if p.column in measures}
    for position in np.flatnonzero(~stated.any(axis=1).to_numpy()):
        if int(check.rows[position]) in unreadable:
            continue  # its value is already reported as bad
        check.problems.append(
            Problem(
                check.source,
                f"a value in at least one of {', '.join(measures)}",
                None,
                int(check.rows[position]),
                None,
                "empty line",
            )
        )
    account_level = lines["instrument"].eq("").to_numpy()
    for measure in schema.INSTRUMENT_ONLY_MEASURES:
        if measure not in measures:
            continue
        bad = [int(i) for i in np.flatnonzero(account_level & stated[measure].to_numpy())]
        check.add(
            bad,
            measure,
            "blank on an account-level line (blank instrument): amounts of different "
            "instruments add up, their quantities and prices do not",
            [str(lines[measure].iloc[i]) for i in bad],
            "instrument measure on an account line",
        )
    if "average_price" in measures:
        _check_one_average(check, lines[stated["average_price"].to_numpy()])


def _check_one_average(check: _Checker, priced: pd.DataFrame) -> None:
    """A key's average price comes from one line: averages of several lines do not add up."""
    first_rows: dict[tuple[str, str, str], int] = {}
    for row in priced.to_dict(orient="records"):
        key = (row["account"], row["instrument"], row["currency"])
        if key not in first_rows:
            first_rows[key] = row[schema.SOURCE_ROW]
            continue
        check.problems.append(
            Problem(
                check.source,
                f"one average_price per account, instrument and currency (row "
                f"{first_rows[key]} gives one for {key[0]} {key[1]})",
                str(row["average_price"]),
                int(row[schema.SOURCE_ROW]),
                "average_price",
                "two average prices for one key",
            )
        )


_PAIR = re.compile(r"^([A-Za-z]{3})\s*[/.\-_ ]?\s*([A-Za-z]{3})$")


def canonical_rates(
    frame: pd.DataFrame, *, source: str = "rates", timezone: str | None = None
) -> pd.DataFrame:
    """Validate and convert FX rates: ``time``, ``base``, ``quote``, ``rate`` (1 base = rate quote).

    A ``pair`` column (``EURUSD``, ``EUR/USD``) may stand for ``base`` and ``quote``; an optional
    ``source`` names where a rate came from. Exact repeats are dropped; one pair, source and time
    with two different rates is an error.
    """
    frame = frame.reset_index(drop=True)
    if "pair" in frame.columns and not {"base", "quote"} & set(frame.columns):
        frame = _split_pairs(frame)
    _require(frame, ("time", "base", "quote", "rate"), source)
    if timezone is not None:
        zone(timezone)
    check = _Checker(frame, source, _source_rows(frame))
    if "pair_problem" in frame.columns:
        bad = [int(i) for i in np.flatnonzero(frame["pair_problem"].to_numpy())]
        check.add(
            bad,
            "pair",
            "a currency pair such as EURUSD or EUR/USD",
            [str(frame["pair"].iloc[i]) for i in bad],
        )
    columns: dict[str, pa.Array | pd.Series] = {
        "time": check.time("time", timezone),
        "base": check.currency("base"),
        "quote": check.currency("quote"),
        "rate": check.decimal("rate", rule=">0", expected="a decimal > 0"),
        "source": check.text("source", required=False),
    }
    if "pair_problem" in frame.columns:  # an unreadable pair is reported once, as the pair
        rows = {int(check.rows[i]) for i in np.flatnonzero(frame["pair_problem"].to_numpy())}
        check.problems = [
            p for p in check.problems if not (p.column in ("base", "quote") and p.row in rows)
        ]
    same = _positions(
        pc.and_(pc.equal(columns["base"], columns["quote"]), pc.not_equal(columns["base"], ""))
    )
    check.add(same, "quote", "a currency other than the base", _take(columns["quote"], same))
    keep = np.ones(len(frame), dtype=bool)
    result = _assemble(columns, frame, keep, [], check.rows)
    _check_rate_clashes(check, result)
    _raise(check)
    result = result.drop_duplicates(["time", "base", "quote", "source", "rate"])
    result = result.reset_index(drop=True)
    result.attrs["canonical"] = True
    result.attrs["read_summary"] = {"source": source, "rows_read": len(frame)}
    return result


def _split_pairs(frame: pd.DataFrame) -> pd.DataFrame:
    text = frame["pair"].astype(str).str.strip()
    parts = text.str.extract(_PAIR)
    return frame.assign(
        base=parts[0].fillna(""), quote=parts[1].fillna(""), pair_problem=parts[0].isna()
    )


def _check_rate_clashes(check: _Checker, rates: pd.DataFrame) -> None:
    bad = {p.row for p in check.problems}
    rates = rates[~rates[schema.SOURCE_ROW].isin(bad)]  # bad values are reported already
    keys = ["time", "base", "quote", "source"]
    distinct = rates.assign(rate=rates["rate"].astype(str)).drop_duplicates([*keys, "rate"])
    clash = distinct[distinct.duplicated(keys, keep="first")]
    for _, row in clash.iterrows():
        first = distinct[(distinct[keys] == row[keys]).all(axis=1)].iloc[0]
        check.problems.append(
            Problem(
                check.source,
                f"one rate per pair, source and time (row {first[schema.SOURCE_ROW]} gives "
                f"{first['rate']} for {row['base']}/{row['quote']} at that time)",
                str(row["rate"]),
                int(row[schema.SOURCE_ROW]),
                "rate",
                "two rates for one time",
            )
        )
