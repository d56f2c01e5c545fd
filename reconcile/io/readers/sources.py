"""One way in for every input: any format, an optional profile, and rejects set aside or raised.

:func:`read_source` reads a file (by extension, or the forced format), maps it through a profile,
then validates it with the core's canonicaliser. Without ``keep_rejects`` any bad row is an error
listing every problem, as for a canonical file; with it, bad rows are set aside with every reason
and the rest goes on. Either way each row read is counted in exactly one place: accepted,
rejected, exact repeats dropped, or (for FIX) superseded, cancels, resent or skipped.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from reconcile import schema
from reconcile.core.canon import canonical_fills, canonical_financing, screen
from reconcile.core.frames import release_unused_memory
from reconcile.errors import ConfigError, Problem, ValidationError
from reconcile.io.readers.delimited import Dialect
from reconcile.io.readers.excel import PROBLEMS
from reconcile.io.readers.fix import SHOWN_COLUMNS, read_fix
from reconcile.io.readers.jsonl import RAW_LINES
from reconcile.io.readers.mapping import apply_profile
from reconcile.io.readers.profiles import Profile, load_profile
from reconcile.io.readers.tabular import check_exists, detect_format, read_table
from reconcile.io.readers.typed_csv import UNTYPED, TypedColumns

ProfileLike = Profile | Path | str | None
REJECT_COLUMNS = ("source", "source_row", "reason", "problems")
_CANON: dict[str, Callable[..., pd.DataFrame]] = {
    "fills": canonical_fills,
    "financing": canonical_financing,
}


@dataclass
class Source:
    """A validated input: the canonical frame, the rows set aside, and the count of every row."""

    frame: pd.DataFrame
    rejected: pd.DataFrame
    summary: dict[str, Any]
    warnings: list[str] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)


@dataclass
class _Raw:
    frame: pd.DataFrame
    raw: pd.DataFrame | None
    problems: list[Problem]
    shown: Mapping[str, str]
    counts: dict[str, Any] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    raw_lines: dict[int, str] = field(default_factory=dict)


def as_profile(profile: ProfileLike) -> Profile | None:
    if profile is None or isinstance(profile, Profile):
        return profile
    return load_profile(profile)


def read_source(
    path: Path | str,
    kind: str = "fills",
    *,
    profile: ProfileLike = None,
    input_format: str | None = None,
    timezone: str | None = None,
    dedupe: bool = False,
    keep_rejects: bool = False,
    fix_lenient: bool = False,
) -> Source:
    """Read, map and validate one input file (see the module docstring)."""
    if kind not in _CANON:
        raise ConfigError(f"kind: expected one of {', '.join(_CANON)}, found {kind!r}")

    def attempt(typed: TypedColumns = UNTYPED) -> Source:
        return _read_source(
            Path(path),
            kind,
            profile=profile,
            input_format=input_format,
            timezone=timezone,
            dedupe=dedupe,
            keep_rejects=keep_rejects,
            fix_lenient=fix_lenient,
            typed=typed,
        )

    source = None
    if kind == "fills" and profile is None and not keep_rejects:
        # Clean canonical fills have their decimals and times parsed by the CSV reader. Problems,
        # and repeated rows (compared as written: 5 and 5.0 are different text), are judged by
        # the text path, so every message shows each value as the file writes it.
        try:
            typed = attempt(FILL_TYPED)
        except ValidationError:
            pass
        else:
            if not _has_decimals(typed.frame) or not typed.summary.get("duplicates_dropped"):
                source = typed
    if source is None:
        source = attempt()
    release_unused_memory()  # the parsed text is gone; hand its pages back for what comes next
    return source


#: Fill columns a plain CSV can have parsed by the reader: decimals, and the time.
FILL_DECIMALS = ("quantity", "price", "commission", "multiplier")
FILL_TYPED = TypedColumns(decimals=FILL_DECIMALS, times=("time",))


def _has_decimals(frame: pd.DataFrame) -> bool:
    return any(isinstance(frame[c].dtype, pd.ArrowDtype) for c in FILL_DECIMALS if c in frame)


def _read_source(
    path: Path,
    kind: str,
    *,
    profile: ProfileLike,
    input_format: str | None,
    timezone: str | None,
    dedupe: bool,
    keep_rejects: bool,
    fix_lenient: bool,
    typed: TypedColumns = UNTYPED,
) -> Source:
    chosen = as_profile(profile)
    if chosen is not None and chosen.kind != kind:
        raise ConfigError(f"profile for {chosen.kind} given for the {kind} input {path}")
    check_exists(path)
    fmt = detect_format(path, input_format or (chosen.source.format if chosen else None))
    raw = _read_raw(path, fmt, kind, chosen, fix_lenient, typed)
    zone = timezone or (chosen.time.timezone if chosen else None)
    source = str(path)
    pre = _shown(raw.problems, raw.shown)
    if any(p.row is None for p in pre):
        raise ValidationError(source, pre)
    bad_rows = {p.row for p in pre}
    remaining = raw.frame[~raw.frame[schema.SOURCE_ROW].isin(bad_rows)]
    convert = _CANON[kind]
    if keep_rejects:
        accepted, later = screen(convert, remaining, source=source, timezone=zone, dedupe=dedupe)
        problems = pre + _shown([p for ps in later.values() for p in ps], raw.shown)
    else:
        try:
            accepted = convert(remaining, source=source, timezone=zone, dedupe=dedupe)
        except ValidationError as error:
            raise ValidationError(
                source, _ordered(pre + _shown(error.problems, raw.shown))
            ) from None
        if pre:
            raise ValidationError(source, _ordered(pre))
        problems = []
    rejected = _rejects_table(source, problems, raw)
    summary = _summary(source, accepted, rejected, raw, keep_rejects)
    return Source(accepted, rejected, summary, raw.warnings, _ordered(problems))


def _read_raw(
    path: Path,
    fmt: str,
    kind: str,
    profile: Profile | None,
    lenient: bool,
    typed: TypedColumns = UNTYPED,
) -> _Raw:
    if fmt == "fix":
        if kind != "fills":
            raise ConfigError(f"{path}: a FIX log holds fills, not {kind}")
        log = read_fix(
            path,
            options=profile.fix if profile else None,
            lenient=lenient,
            constants=profile.constants if profile else None,
        )
        counts: dict[str, Any] = {**log.counts, "skipped_by_kind": log.skipped_by_kind}
        return _Raw(
            log.frame, None, log.problems, SHOWN_COLUMNS, counts, log.warnings, log.raw_lines
        )
    source = profile.source if profile else None
    places = {}
    if profile is not None:
        sources = profile.numeric_sources()
        places = {
            s: profile.numbers.places[c] for s, c in sources.items() if c in profile.numbers.places
        }
    frame = read_table(
        path,
        fmt,
        dialect=Dialect(
            source.delimiter or ("\t" if fmt == "tsv" else ","),
            source.encoding,
            source.header_row or 1,
        )
        if source
        else None,
        sheet=source.sheet if source else None,
        places=places,
        decimal_mark=profile.numbers.decimal if profile else ".",
        header_row=source.header_row if source else None,
        typed=typed,
    )
    problems: list[Problem] = list(frame.attrs.pop(PROBLEMS, []))
    raw_lines: dict[int, str] = dict(frame.attrs.pop(RAW_LINES, {}))
    if schema.SOURCE_ROW not in frame.columns:
        frame[schema.SOURCE_ROW] = range(2, len(frame) + 2)
    counts = {"read": len(frame) + len(raw_lines)}
    if profile is None:
        return _Raw(frame, frame, problems, {}, counts, raw_lines=raw_lines)
    mapped = apply_profile(frame, profile, str(path))
    shown = {c: profile.shown_name(c) for c in schema.FILL_COLUMNS + schema.FINANCING_COLUMNS}
    return _Raw(mapped.frame, frame, problems + mapped.problems, shown, counts, raw_lines=raw_lines)


def _shown(problems: Sequence[Problem], shown: Mapping[str, str]) -> list[Problem]:
    return [
        dataclasses.replace(p, column=shown.get(p.column, p.column)) if p.column else p
        for p in problems
    ]


def _ordered(problems: list[Problem]) -> list[Problem]:
    return sorted(problems, key=lambda p: (p.row or 0, p.column or ""))


def _rejects_table(source: str, problems: list[Problem], raw: _Raw) -> pd.DataFrame:
    """One row per rejected source row: its reasons, every problem, and its raw values."""
    by_row: dict[int, list[Problem]] = {}
    for problem in _ordered(problems):
        by_row.setdefault(int(problem.row or 0), []).append(problem)
    values = raw.raw if raw.raw is not None else None
    lookup = (
        values.set_index(schema.SOURCE_ROW, drop=False) if values is not None else pd.DataFrame()
    )
    records = []
    for row, found in by_row.items():
        record: dict[str, Any] = {
            "source": source,
            "source_row": row,
            "reason": "; ".join(dict.fromkeys(p.reason for p in found)),
            "problems": "; ".join(_without_place(p) for p in found),
        }
        if row in raw.raw_lines:
            record["raw_line"] = raw.raw_lines[row]
        elif values is not None and row in lookup.index:
            for column, value in lookup.loc[row].items():
                if column != schema.SOURCE_ROW:
                    record[str(column)] = "" if pd.isna(value) else str(value)
        records.append(record)
    frame = pd.DataFrame(records, columns=list(REJECT_COLUMNS) if not records else None)
    return frame.astype({"source_row": "int64"}) if records else frame


def _without_place(problem: Problem) -> str:
    return str(dataclasses.replace(problem, source="", row=None)).lstrip().removeprefix(": ")


def nothing_usable(summary: dict[str, Any], kind: str) -> str | None:
    """Why a file that had rows gave no usable one (every row rejected, or none a FIX message:
    usually the wrong file or format), or None. A file of a header only, or of FIX session
    messages only, is a day without trades, not an error."""
    read, rejected = summary.get("rows_read", 0), summary.get("rejected", 0)
    not_fix = summary.get("skipped_by_kind", {}).get("not a FIX message", 0)
    if summary.get("accepted") or not read or rejected + not_fix < read:
        return None
    found = [f"{rejected:,} rejected"] if rejected else []
    found += [f"{not_fix:,} not a FIX message"] if not_fix else []
    return (
        f"{summary['source']}: expected at least one usable row of {kind}, found none "
        f"({read:,} rows read: {', '.join(found)})"
    )


def _summary(
    source: str, accepted: pd.DataFrame, rejected: pd.DataFrame, raw: _Raw, keep_rejects: bool
) -> dict[str, Any]:
    canon = dict(accepted.attrs.get("read_summary") or {})
    summary: dict[str, Any] = {
        "source": source,
        "rows_read": raw.counts.get("read", len(raw.frame)),
        "accepted": len(accepted),
        "duplicates_dropped": int(canon.get("duplicates_dropped", 0)),
    }
    if keep_rejects:
        summary["rejected"] = len(rejected)
        summary["rejected_by_reason"] = _reasons(rejected)
    for key in ("superseded", "cancels", "resent", "skipped", "skipped_by_kind"):
        if key in raw.counts:
            summary[key] = raw.counts[key]
    if raw.warnings:
        summary["warnings"] = len(raw.warnings)
    accepted.attrs["read_summary"] = summary
    return summary


def _reasons(rejected: pd.DataFrame) -> dict[str, int]:
    if rejected.empty:
        return {}
    counts = rejected["reason"].str.split("; ").explode().value_counts()
    return {str(k): int(v) for k, v in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0]))}


COUNTED = (
    "accepted",
    "rejected",
    "duplicates_dropped",
    "superseded",
    "cancels",
    "resent",
    "skipped",
)


def balance(summary: Mapping[str, Any]) -> int:
    """Rows read minus every row accounted for: always 0."""
    return int(summary["rows_read"]) - sum(int(summary.get(k, 0)) for k in COUNTED)


def rejects_of(source: str, problems: list[Problem], raw: pd.DataFrame) -> pd.DataFrame:
    """The rejected-rows table of ``problems`` found in ``raw`` (rows as read, with source_row),
    for a reader that validates a file in parts (the batched match)."""
    return _rejects_table(source, problems, _Raw(raw, raw, problems, {}))


def rejected_by_reason(rejected: pd.DataFrame) -> dict[str, int]:
    """How many rejected rows give each reason, most frequent first."""
    return _reasons(rejected)
