"""Match a fills file larger than memory, one batch of whole (account, instrument) keys at a time.

Keys never interact in matching, so a file can be matched key batch by key batch. The file is
streamed four times, never held whole:

1. count the fills of each key (keys cleaned exactly as the canonicaliser cleans them);
2. cut the keys, in the order a whole run replays them, into batches of about ``batch_rows``
   fills (a key with more fills forms a batch by itself), and spill every row, with its source
   row, to its batch's Arrow file in a temporary folder inside the output folder; each fill id
   goes with its key to one of a few hash buckets, so ids shared by two keys are found;
3. validate every batch (its problems, and those of ids shared across keys, are reported
   together, as one whole read reports them; ``rejects`` screens in rounds over every batch, as
   :func:`reconcile.core.canon.screen` does over a whole file);
4. match each batch with :func:`~reconcile.core.matching.match_canonical` and append its tables
   to one file per table, trip ids continued across batches.

What a whole run derives from the whole file is carried across: the decimal places of each
input column (they set the places of the outputs), the engine ``auto`` picks, the trip numbers,
the totals by currency (summed exactly, rounded once). The tables written are byte for byte those
of the whole run, Parquet included (its decimal types are widened over every batch and its row
groups cut at the writer's default length). Nothing is published until every table is complete;
on any error the temporary folder is removed.
"""

from __future__ import annotations

import bisect
import contextlib
import json
import shutil
import tempfile
from collections import Counter
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pa_csv
import pyarrow.ipc as ipc
import pyarrow.parquet as pq

from reconcile import schema
from reconcile.core.book import TABLES, Book
from reconcile.core.canon import canonical_fills, clean_text
from reconcile.core.engine import raise_replay_problems
from reconcile.core.matching import AUTO_FAST_ROWS, check_choice, match_canonical
from reconcile.core.summary import BookTotals
from reconcile.errors import (
    ConfigError,
    InputError,
    OutputError,
    Problem,
    ReconcileError,
    ValidationError,
)
from reconcile.io import session
from reconcile.io.readers import read_opening
from reconcile.io.readers.delimited import (
    LINE_SCAN_LIMIT,
    Dialect,
    _csv_header,
    _diagnose_csv,
    _head,
    _record_lines,
)
from reconcile.io.readers.sources import Source, read_source, rejected_by_reason, rejects_of
from reconcile.io.readers.tabular import check_exists, detect_format
from reconcile.io.session import Inputs
from reconcile.io.writers.atomic import file_set
from reconcile.io.writers.tables import (
    TABLE_FORMATS,
    add_tables,
    csv_bytes,
    json_records,
    parquet_options,
)
from reconcile.money import ROUNDING_MODES, Rounding

#: Input formats read in batches; the others are read whole (without ``--batch-rows``).
BATCH_FORMATS = ("csv", "tsv", "parquet")
#: Bytes of delimited text (or rows of Parquet) read at a time by the streaming passes.
CHUNK_BYTES = 16 << 20
CHUNK_ROWS = 1 << 18
#: Rows per Parquet row group when a table is written whole (pyarrow's default).
ROW_GROUP_ROWS = 1024 * 1024

Tick = Callable[[int, int], None]


@dataclass(frozen=True)
class _Options:
    source: str
    timezone: str | None
    dedupe: bool
    keep_rejects: bool


@dataclass
class _Plan:
    """Keys in replay order, the batch of each, and how many fills each batch holds."""

    keys: list[tuple[str, str]]
    batch_of_key: dict[tuple[str, str], int]
    batches: int
    rows: int
    firsts: list[tuple[str, str]] = field(default_factory=list)  # each batch's first key

    def __post_init__(self) -> None:
        # Each name is coded by its place among the sorted names, a pair by the two codes; the
        # keys are sorted, so their pair codes ascend and a row's code is found by bisection.
        names = [sorted({key[n] for key in self.keys}) for n in (0, 1)]
        self._names = [pa.array(n, pa.string()) for n in names]
        self._pairs = np.array(
            [
                bisect.bisect_left(names[0], a) * len(names[1]) + bisect.bisect_left(names[1], i)
                for a, i in self.keys
            ],
            dtype=np.int64,
        )
        self._batches = np.array([self.batch_of_key[k] for k in self.keys], dtype=np.int64)

    def batch_ids(self, accounts: pa.Array, instruments: pa.Array) -> np.ndarray:
        """The batch of each row of a fill key, over whole columns."""
        if not len(accounts) or not len(self.keys):
            return np.zeros(len(accounts), np.int64)
        a = np.asarray(pc.index_in(accounts, value_set=self._names[0]), dtype=np.int64)
        i = np.asarray(pc.index_in(instruments, value_set=self._names[1]), dtype=np.int64)
        where = np.searchsorted(self._pairs, a * len(self._names[1]) + i)
        found: np.ndarray = self._batches[where]
        return found

    def batch_of(self, key: tuple[str, str]) -> int:
        """The batch of any key, one with no fills too: where it falls in the sorted keys."""
        if key in self.batch_of_key:
            return self.batch_of_key[key]
        return max(0, bisect.bisect_right(self.firsts, key) - 1)


@dataclass
class _Spill:
    """The temporary folder: raw rows by batch, fill ids by hash bucket, finished tables."""

    root: Path
    parts: dict[int, list[Path]] = field(default_factory=dict)
    buckets: dict[int, list[Path]] = field(default_factory=dict)

    def write(self, table: pa.Table, kind: str, number: int, chunk: int) -> None:
        path = self.root / f"{kind}-{number:06d}-{chunk:06d}.arrow"
        with ipc.new_file(path, table.schema) as sink:
            sink.write_table(table)
        (self.parts if kind == "batch" else self.buckets).setdefault(number, []).append(path)

    def read(self, paths: Sequence[Path], schema_of: pa.Schema) -> pa.Table:
        tables = [ipc.open_file(p).read_all() for p in paths]
        return pa.concat_tables(tables) if tables else schema_of.empty_table()


@dataclass(frozen=True)
class BatchedMatch:
    """What a batched match produced: its totals, what it read, and the files it wrote.

    ``totals`` holds the row count of every table and the realized totals by currency
    (``totals.currency_totals()``); ``inputs`` describes what was read (``inputs.summaries()``,
    the rows set aside in ``inputs.rejected``); its ``fills`` frame is empty, since the fills are
    never held whole. ``written`` lists the files published, ``run.json`` last.
    """

    totals: BookTotals
    inputs: Inputs
    written: list[Path]


def match_in_batches(
    fills: Path | str,
    out: Path | str = "reconcile-out",
    *,
    batch_rows: int,
    financing: Path | str | None = None,
    opening: Path | str | None = None,
    method: schema.Method = "fifo",
    commission: schema.CommissionConvention = "at-close",
    rounding: Rounding = "half-even",
    timezone: str | None = None,
    dedupe: bool = False,
    engine: schema.Engine = "auto",
    fmt: str = "csv",
    input_format: str | None = None,
    rejects: Path | str | None = None,
    progress: Tick | None = None,
) -> BatchedMatch:
    """Match a fills file (CSV, TSV or Parquet) of any size in batches of whole (account,
    instrument) keys of about ``batch_rows`` fills each, and write every table to ``out``.

    Memory is bounded by the batch, not the file; the tables, ``run.json`` and the totals are
    those one whole run (:func:`reconcile.match` then :func:`reconcile.write_tables`) gives. A key
    with more than ``batch_rows`` fills forms a batch by itself. ``financing`` and ``opening`` are
    read whole (they are small); ``rejects`` names a CSV file for the rows set aside instead of
    failing. Errors are those of a whole run; nothing is written when one is raised.
    """
    check_choice("method", method, schema.METHODS)
    check_choice("commission", commission, schema.COMMISSION_CONVENTIONS)
    check_choice("rounding", rounding, tuple(ROUNDING_MODES))
    check_choice("engine", engine, schema.ENGINES)
    if fmt not in TABLE_FORMATS:
        raise OutputError(f"format: expected one of {', '.join(TABLE_FORMATS)}, found {fmt!r}")
    if batch_rows < 1:
        raise ConfigError(f"--batch-rows: expected a whole number >= 1, found {batch_rows}")
    path = Path(fills)
    check_exists(path)
    kind = detect_format(path, input_format)
    if kind not in BATCH_FORMATS:
        raise ConfigError(
            f"--batch-rows: expected fills as csv, tsv or parquet, found {kind} ({path}); "
            "match this file without --batch-rows"
        )
    options = _Options(str(path), timezone, dedupe, rejects is not None)
    reader = _Reader(path, kind)
    reader.check_columns(options)
    directory = Path(out)
    outermost = [*reversed(directory.parents), directory]
    created = next((p for p in outermost if not p.exists()), None)
    directory.mkdir(parents=True, exist_ok=True)
    spill = _Spill(Path(tempfile.mkdtemp(prefix=".batches-", dir=directory)))
    try:
        plan = _plan(reader, batch_rows)
        _spill_rows(reader, plan, spill)
        others = _Others.read(options, financing, opening)
        run = _Matcher(method, commission, rounding, engine, fmt, spill, plan, options, others)
        checked = _validate(spill, plan, options, reader.empty, run, progress)
        others.raise_error()  # a bad fills file is named first, as a whole run names it
        inputs = others.inputs(checked, options)
        session.check_usable(inputs)
        totals, staged = run.complete(checked, progress)
        written = _publish(directory, staged, session.run_manifest("match", totals, inputs))
    except BaseException:
        shutil.rmtree(spill.root, ignore_errors=True)
        if created is not None:  # the folders this run made, and only those
            shutil.rmtree(created, ignore_errors=True)
        raise
    shutil.rmtree(spill.root, ignore_errors=True)
    session.finish_rejects(inputs, None if rejects is None else Path(rejects))
    return BatchedMatch(totals, inputs, written)


@dataclass
class _Others:
    """Financing and carried lots, read whole (they are small); an error reading them is held
    until the fills are validated, so a bad fills file is named first, as a whole run names it."""

    financing: Source | None = None
    opening: pd.DataFrame | None = None
    error: ReconcileError | None = None

    @classmethod
    def read(
        cls, options: _Options, financing: Path | str | None, opening: Path | str | None
    ) -> _Others:
        found = cls()
        try:
            if financing is not None:
                found.financing = read_source(
                    Path(financing),
                    "financing",
                    timezone=options.timezone,
                    dedupe=options.dedupe,
                    keep_rejects=options.keep_rejects,
                )
            if opening is not None:
                found.opening = read_opening(Path(opening), timezone=options.timezone)
                found.opening.attrs["read_summary"] = {
                    "source": str(opening),
                    "accepted": len(found.opening),
                }
        except ReconcileError as error:
            found.error = error
        return found

    @property
    def events(self) -> pd.DataFrame | None:
        return None if self.financing is None else self.financing.frame

    def rows(self) -> int:
        return sum(len(f) for f in (self.events, self.opening) if f is not None)

    def raise_error(self) -> None:
        if self.error is not None:
            raise self.error

    def inputs(self, checked: _Checked, options: _Options) -> Inputs:
        """The run's inputs as the summary and run.json describe them."""
        fills = pd.DataFrame()
        fills.attrs["read_summary"] = checked.summary(options)
        rejected = None
        if options.keep_rejects:
            parts = [checked.rejects(options)]
            parts += [] if self.financing is None else [self.financing.rejected]
            found = [r for r in parts if not r.empty]
            rejected = pd.concat(found, ignore_index=True) if found else parts[0]
        return Inputs(
            fills=fills,
            financing=self.events,
            opening=self.opening,
            timezone=options.timezone,
            rejected=rejected,
            warnings=() if self.financing is None else tuple(self.financing.warnings),
        )


def _engine(engine: schema.Engine, rows: int) -> schema.Engine:
    """``auto`` chooses by the size of the whole input, as a whole run does."""
    if engine != "auto":
        return engine
    return "fast" if rows >= AUTO_FAST_ROWS else "reference"


def _publish(directory: Path, staged: dict[str, Path], manifest: dict[str, Any]) -> list[Path]:
    """Every table and run.json land together (the tables are moved from the spill)."""
    with file_set(directory) as files:
        written = [files.add(name, _move_from(path)) for name, path in staged.items()]
        return written + add_tables(files, {}, extra={"run.json": manifest})


def _move_from(staged: Path) -> Callable[[Path], None]:
    def write(target: Path) -> None:
        staged.replace(target)

    return write


# --- reading -----------------------------------------------------------------------------------


class _Reader:
    """Streams the file's rows as Arrow tables, as the whole-file reader would type them."""

    def __init__(self, path: Path, kind: str) -> None:
        self.path = path
        self.kind = kind
        self.dialect = Dialect("\t") if kind == "tsv" else Dialect()
        self.lines: np.ndarray | None = None
        if kind == "parquet":
            self.header = [f.name for f in self._parquet().schema_arrow]
        else:
            self.header = _csv_header(path, _head(path, self.dialect), self.dialect)

    @property
    def empty(self) -> pa.Schema:
        if self.kind == "parquet":
            return self._parquet().schema_arrow
        return pa.schema([(name, pa.string()) for name in self.header])

    def check_columns(self, options: _Options) -> None:
        """Missing columns and a bad time zone stop the run before any pass, as a whole read
        does; problems of values are reported later, with every row's."""
        with contextlib.suppress(ValidationError):
            canonical_fills(
                _frame(_with_rows(self.empty).empty_table()),
                source=options.source,
                timezone=options.timezone,
            )

    def chunks(self) -> Iterator[pa.Table]:
        if self.kind == "parquet":
            for batch in self._parquet().iter_batches(batch_size=CHUNK_ROWS):
                yield pa.Table.from_batches([batch])
            return
        dialect = self.dialect
        try:
            reader = pa_csv.open_csv(
                self.path,
                read_options=pa_csv.ReadOptions(
                    encoding=dialect.arrow_encoding,
                    skip_rows=dialect.header_row - 1,
                    block_size=CHUNK_BYTES,
                ),
                parse_options=pa_csv.ParseOptions(
                    delimiter=dialect.delimiter, newlines_in_values=True
                ),
                convert_options=pa_csv.ConvertOptions(
                    column_types={name: pa.string() for name in self.header},
                    strings_can_be_null=False,
                    quoted_strings_can_be_null=False,
                ),
            )
            for batch in reader:
                yield pa.Table.from_batches([batch])
        except (pa.ArrowInvalid, UnicodeDecodeError) as exc:
            raise _diagnose_csv(self.path, self.header, dialect, exc) from exc

    def numbered(self, rows: int) -> Iterator[pa.Table]:
        """The chunks with ``source_row``: the line each record starts on, as a whole read says."""
        if self.lines is None:
            first = self.dialect.header_row + 1 if self.kind != "parquet" else 2
            small = self.kind != "parquet" and self.path.stat().st_size <= LINE_SCAN_LIMIT
            self.lines = (
                _record_lines(self.path, rows, self.dialect)
                if small
                else np.arange(first, rows + first, dtype=np.int64)
            )
        start = 0
        for chunk in self.chunks():
            lines = self.lines[start : start + chunk.num_rows]
            start += chunk.num_rows
            yield chunk.append_column(schema.SOURCE_ROW, pa.array(lines, pa.int64()))

    def _parquet(self) -> pq.ParquetFile:
        try:
            return pq.ParquetFile(self.path)
        except (pa.ArrowInvalid, OSError) as exc:
            raise InputError(f"{self.path}: cannot be read as Parquet: {exc}") from exc


def _frame(table: pa.Table) -> pd.DataFrame:
    """A raw table as the whole-file reader hands it to canon."""
    frame: pd.DataFrame = table.to_pandas(
        types_mapper=lambda t: pd.ArrowDtype(t) if pa.types.is_decimal(t) else None
    )
    return frame


def _key_text(table: pa.Table, column: str) -> pa.Array:
    if column not in table.column_names:
        return pa.array([""] * table.num_rows, pa.string())
    values = table.column(column).combine_chunks()
    if not pa.types.is_string(values.type) and not pa.types.is_large_string(values.type):
        values = pc.cast(values, pa.string())
    return clean_text(values)


def _strings(values: pa.Array) -> np.ndarray:
    found: np.ndarray = np.asarray(values.to_numpy(zero_copy_only=False), dtype=object)
    return found


# --- pass 1: count, plan -----------------------------------------------------------------------


def _plan(reader: _Reader, batch_rows: int) -> _Plan:
    counts: Counter[tuple[str, str]] = Counter()
    rows = 0
    for chunk in reader.chunks():
        rows += chunk.num_rows
        keys = pa.table({"a": _key_text(chunk, "account"), "i": _key_text(chunk, "instrument")})
        grouped = keys.group_by(["a", "i"], use_threads=False).aggregate([([], "count_all")])
        for a, i, n in zip(*(grouped.column(c).to_pylist() for c in range(3)), strict=True):
            counts[(a, i)] += n
    keys = sorted(counts)
    batch_of_key, firsts, batch, held = {}, keys[:1], 0, 0
    for key in keys:
        if held and held + counts[key] > batch_rows:
            batch, held = batch + 1, 0
            firsts.append(key)
        batch_of_key[key] = batch
        held += counts[key]
    return _Plan(keys, batch_of_key, batch + 1, rows, firsts)


# --- pass 2: spill -----------------------------------------------------------------------------


def _spill_rows(reader: _Reader, plan: _Plan, spill: _Spill) -> None:
    buckets = max(1, min(256, plan.batches))
    for number, chunk in enumerate(reader.numbered(plan.rows)):
        if not chunk.num_rows:
            continue
        accounts, instruments = _key_text(chunk, "account"), _key_text(chunk, "instrument")
        batch = plan.batch_ids(accounts, instruments)
        order = np.argsort(batch, kind="stable")
        batch, ordered = batch[order], chunk.take(pa.array(order))
        starts = np.flatnonzero(np.r_[True, batch[1:] != batch[:-1]])
        ends = np.r_[starts[1:], len(batch)]
        for start, end in zip(starts, ends, strict=True):
            spill.write(ordered.slice(start, end - start), "batch", int(batch[start]), number)
        _spill_ids(chunk, accounts, instruments, spill, buckets, number)


def _spill_ids(
    chunk: pa.Table,
    accounts: pa.Array,
    instruments: pa.Array,
    spill: _Spill,
    buckets: int,
    number: int,
) -> None:
    """Each row's fill id and key, by a hash of the id, so ids of two keys can be found."""
    if "fill_id" not in chunk.column_names:
        return
    ids = _key_text(chunk, "fill_id")
    table = pa.table(
        {
            "fill_id": ids,
            "account": accounts,
            "instrument": instruments,
            schema.SOURCE_ROW: chunk.column(schema.SOURCE_ROW),
        }
    ).filter(pc.not_equal(ids, ""))
    hashes = pd.util.hash_array(_strings(table.column("fill_id").combine_chunks()))
    bucket = (hashes % np.uint64(buckets)).astype(np.int64)
    for b in np.unique(bucket):
        spill.write(table.filter(pa.array(bucket == b)), "ids", int(b), number)


def _shared_ids(spill: _Spill) -> list[int]:
    """Source rows of the fills whose id appears under more than one key."""
    rows: list[int] = []
    for paths in spill.buckets.values():
        frame = spill.read(paths, pa.schema([])).to_pandas()
        rows += frame.loc[_under_two_keys(frame), schema.SOURCE_ROW].tolist()
    return sorted(rows)


def _under_two_keys(frame: pd.DataFrame) -> pd.Series:
    """Rows of cleaned ``fill_id``, ``account``, ``instrument`` whose id two keys share."""
    keys = frame.groupby("fill_id")[["account", "instrument"]].nunique()
    shared = keys.index[(keys["account"] > 1) | (keys["instrument"] > 1)]
    found: pd.Series = frame["fill_id"].isin(shared)
    return found


# --- pass 3: validate --------------------------------------------------------------------------

FILL_DECIMALS = ("quantity", "price", "commission", "multiplier")
_ONE_PER_KEY = {
    "currency": "two currencys for one instrument",
    "multiplier": "two multipliers for one instrument",
}


@dataclass
class _Checked:
    """What validating every batch found: rows set aside, counts, and the places of decimals."""

    empty: pa.Schema
    rows: int
    excluded: set[int] = field(default_factory=set)
    rejected: dict[int, list[Problem]] = field(default_factory=dict)
    rejected_raw: list[pd.DataFrame] = field(default_factory=list)
    scales: dict[str, int] = field(default_factory=dict)
    accepted: int = 0
    duplicates: int = 0

    def summary(self, options: _Options) -> dict[str, Any]:
        found: dict[str, Any] = {
            "source": options.source,
            "rows_read": self.rows,
            "accepted": self.accepted,
            "duplicates_dropped": self.duplicates,
        }
        if options.keep_rejects:
            found["rejected"] = len(self.rejected)
            found["rejected_by_reason"] = rejected_by_reason(self.rejects(options))
        return found

    def rejects(self, options: _Options) -> pd.DataFrame:
        problems = [p for ps in self.rejected.values() for p in ps]
        raw = (
            pd.concat(self.rejected_raw, ignore_index=True)
            if self.rejected_raw
            else _frame(_with_rows(self.empty).empty_table())
        )
        return rejects_of(options.source, problems, raw)


def _with_rows(empty: pa.Schema) -> pa.Schema:
    return empty.append(pa.field(schema.SOURCE_ROW, pa.int64()))


def _validate(
    spill: _Spill,
    plan: _Plan,
    options: _Options,
    empty: pa.Schema,
    run: _Matcher,
    progress: Tick | None,
) -> _Checked:
    """Every batch's problems at once, as one read of the whole file lists them; with
    ``keep_rejects``, rounds over every batch until what is left passes, as canon.screen does
    over a whole frame. The first round also matches each batch while none has failed."""
    checked = _Checked(empty, plan.rows)
    shared = _shared_ids(spill)
    first = True
    while True:
        checked.scales, checked.accepted, checked.duplicates = {}, 0, 0
        problems: list[Problem] = []
        suspects, candidates = [], []
        for batch in range(plan.batches):
            raw = _raw_batch(spill, batch, empty, checked.excluded)
            if shared:
                suspects.append(raw[raw[schema.SOURCE_ROW].isin(shared)])
            found, fills = _batch_problems(raw, options, checked)
            if found and options.keep_rejects:
                candidates.append(raw[raw[schema.SOURCE_ROW].isin([p.row for p in found])])
            problems += found
            if first and fills is not None and run.matched == batch:
                run.add(batch, _widen(fills, checked.scales))
                if progress is not None:
                    progress(batch + 1, plan.batches)
        first = False
        problems = _whole_file(problems, suspects, options)
        if not problems:
            return checked
        if not options.keep_rejects or any(p.row is None for p in problems):
            raise ValidationError(options.source, _ordered(_distinct(problems)))
        rows = {int(p.row or 0) for p in problems}
        for problem in problems:
            checked.rejected.setdefault(int(problem.row or 0), []).append(problem)
        seen = pd.concat(candidates + suspects).drop_duplicates(schema.SOURCE_ROW)
        checked.rejected_raw.append(seen[seen[schema.SOURCE_ROW].isin(rows)])
        checked.excluded |= rows


def _raw_batch(spill: _Spill, batch: int, empty: pa.Schema, excluded: set[int]) -> pd.DataFrame:
    frame = _frame(spill.read(spill.parts.get(batch, []), _with_rows(empty)))
    if excluded:
        frame = frame[~frame[schema.SOURCE_ROW].isin(excluded)].reset_index(drop=True)
    return frame


def _batch_problems(
    raw: pd.DataFrame, options: _Options, checked: _Checked
) -> tuple[list[Problem], pd.DataFrame | None]:
    try:
        fills = _canonical(raw, options)
    except ValidationError as error:
        return list(error.problems), None
    for column in FILL_DECIMALS:
        kind = _arrow_type(fills[column])
        checked.scales[column] = max(checked.scales.get(column, 0), kind.scale)
    checked.accepted += len(fills)
    checked.duplicates += int(fills.attrs["read_summary"]["duplicates_dropped"])
    return [], fills


def _canonical(raw: pd.DataFrame, options: _Options) -> pd.DataFrame:
    frame: pd.DataFrame = canonical_fills(
        raw, source=options.source, timezone=options.timezone, dedupe=options.dedupe
    )
    return frame


def _whole_file(
    problems: list[Problem], suspects: list[pd.DataFrame], options: _Options
) -> list[Problem]:
    """Batch problems as one whole-file check words them.

    A fill id under two keys is judged over every row that has it (a batch sees only its own);
    a whole read skips its one-currency (one-multiplier) per key check when any value of that
    column is bad, so a batch's finding of that kind stands only when no batch has such a value.
    """
    shared_problems: list[Problem] = []
    shared: set[str] = set()
    if suspects:
        rows = pd.concat(suspects).sort_values(schema.SOURCE_ROW).reset_index(drop=True)
        cleaned = pd.DataFrame(
            {c: _strings(_key_text(pa.table({c: _as_strings(rows[c])}), c)) for c in _KEY_IDS}
        )
        mask = _under_two_keys(cleaned).to_numpy()
        shared = set(cleaned.loc[mask, "fill_id"])
        if shared:
            try:
                _canonical(rows[mask], options)
            except ValidationError as error:
                shared_problems = [p for p in error.problems if _is_duplicate_id(p)]
    kept = [p for p in problems if not (_is_duplicate_id(p) and p.found in shared)]
    for column, reason in _ONE_PER_KEY.items():
        if any(p.column == column and p.reason != reason for p in kept):
            kept = [p for p in kept if not (p.column == column and p.reason == reason)]
    return kept + shared_problems


_KEY_IDS = ("fill_id", "account", "instrument")


def _as_strings(series: pd.Series) -> pa.Array:
    values = [None if pd.isna(v) else str(v) for v in series.tolist()]
    return pa.array(values, pa.string())


def _is_duplicate_id(problem: Problem) -> bool:
    return problem.reason == "duplicate id" and problem.column == "fill_id"


def _distinct(problems: list[Problem]) -> list[Problem]:
    """A problem with no row (a whole column of binary floats) is found by every batch: once."""
    return list(dict.fromkeys(problems))


def _ordered(problems: list[Problem]) -> list[Problem]:
    return sorted(problems, key=lambda p: (p.row or 0, p.column or ""))


# --- pass 4: match and write -------------------------------------------------------------------


@dataclass
class _Matcher:
    """Matches batches in order and appends their tables.

    Batches are matched as soon as they validate, with the places of the decimal columns seen so
    far; :meth:`complete` then matches the rest. Only Parquet output depends on those places (and
    on the engine ``auto`` picks): a batch matched with fewer places than the whole file has is
    matched again for it, its part of each table replaced.
    """

    method: schema.Method
    commission: schema.CommissionConvention
    rounding: Rounding
    engine: schema.Engine
    fmt: str
    spill: _Spill
    plan: _Plan
    options: _Options
    others: _Others
    matched: int = 0
    problems: list[Problem] = field(default_factory=list)

    def __post_init__(self) -> None:
        self.chosen = _engine(self.engine, self.plan.rows + self.others.rows())
        self._start()

    def _start(self) -> None:
        self.totals = BookTotals(self.method, self.commission, self.rounding)
        self.sinks = _Sinks(self.spill.root, self.fmt)
        self.financing = _by_batch(self.others.events, self.plan)
        self.opening = _by_batch(self.others.opening, self.plan)
        self.trips: dict[int, int] = {}  # trips numbered before each batch
        self.numbered = 0
        self.places: dict[int, dict[str, int]] = {}
        self.engines: dict[int, str] = {}
        self.matched = 0

    def add(self, batch: int, fills: pd.DataFrame) -> None:
        book = self._book(batch, fills)
        self.matched = batch + 1
        if book is None:
            return
        self.trips[batch] = self.numbered
        book, self.numbered = _continue_trips(book, self.numbered)
        self.totals.add(book)
        self.sinks.add(batch, book)

    def _book(self, batch: int, fills: pd.DataFrame) -> Book | None:
        self.places[batch] = {c: _arrow_type(fills[c]).scale for c in FILL_DECIMALS}
        self.engines[batch] = self.chosen
        try:
            return match_canonical(
                fills,
                self.financing(batch),
                opening=self.opening(batch),
                method=self.method,
                commission=self.commission,
                rounding=self.rounding,
                engine=self.chosen,
            )
        except ValidationError as error:  # events that cannot apply: listed with the rest
            self.problems += error.problems
            return None

    def complete(
        self, checked: _Checked, progress: Tick | None
    ) -> tuple[BookTotals, dict[str, Path]]:
        self.chosen = _engine(self.engine, checked.accepted + self.others.rows())
        if checked.excluded:  # rows were set aside after the first round: match afresh
            shutil.rmtree(self.sinks.folder)
            self.problems = []
            self._start()
        if self.fmt == "parquet":
            for batch in range(self.matched):
                if self._stale(batch, checked.scales):
                    self._again(batch, checked)
        for batch in range(self.matched, self.plan.batches):
            self.add(batch, self._fills(batch, checked))
            if progress is not None:
                progress(batch + 1, self.plan.batches)
        raise_replay_problems(self.problems)
        return self.totals, self.sinks.finish()

    def _stale(self, batch: int, scales: dict[str, int]) -> bool:
        fewer = any(self.places[batch][c] < scales.get(c, 0) for c in FILL_DECIMALS)
        return fewer or self.engines[batch] != self.chosen

    def _again(self, batch: int, checked: _Checked) -> None:
        book = self._book(batch, self._fills(batch, checked))
        if book is not None:
            book, _ = _continue_trips(book, self.trips[batch])
            self.sinks.add(batch, book)

    def _fills(self, batch: int, checked: _Checked) -> pd.DataFrame:
        raw = _raw_batch(self.spill, batch, checked.empty, checked.excluded)
        return _widen(_canonical(raw, self.options), checked.scales)


def _by_batch(frame: pd.DataFrame | None, plan: _Plan) -> Callable[[int], pd.DataFrame | None]:
    """Financing events or carried lots of one batch's keys (a key with no fills included)."""
    if frame is None:
        return lambda batch: None
    keys = zip(frame["account"].tolist(), frame["instrument"].tolist(), strict=True)
    ids = np.array([plan.batch_of(key) for key in keys], dtype=np.int64)

    def part(batch: int) -> pd.DataFrame:
        chosen: pd.DataFrame = frame[ids == batch]
        return chosen

    return part


def _widen(fills: pd.DataFrame, scales: dict[str, int]) -> pd.DataFrame:
    """Decimal columns at the places the whole file has (they set the places of the results)."""
    for column, scale in scales.items():
        kind = _arrow_type(fills[column])
        if kind.scale < scale:
            wider = _decimal(kind.precision - kind.scale, scale)
            values = pa.array(fills[column].array).cast(wider)
            fills[column] = pd.Series(values, dtype=pd.ArrowDtype(wider), index=fills.index)
    return fills


def _arrow_type(series: pd.Series) -> Any:
    dtype = series.dtype
    assert isinstance(dtype, pd.ArrowDtype), series.name  # canon types decimals in Arrow
    return dtype.pyarrow_dtype


def _decimal(whole: int, scale: int) -> pa.DataType:
    precision = max(whole, 1) + scale
    return pa.decimal128(precision, scale) if precision <= 38 else pa.decimal256(precision, scale)


_NUMBERED = ("closed_lots", "round_trips", "open_lots")


def _continue_trips(book: Book, before: int) -> tuple[Book, int]:
    """Trip ids numbered on from the batches before, as one run numbers them across keys."""
    tables = book.tables()
    last = max((int(tables[n]["trip_id"].max()) for n in _NUMBERED if len(tables[n])), default=0)
    if before:
        for name in _NUMBERED:
            ids = tables[name]["trip_id"]
            tables[name] = tables[name].assign(trip_id=ids.where(ids == 0, ids + before))
    numbered = Book(
        **tables, method=book.method, commission=book.commission, rounding=book.rounding
    )
    return numbered, before + last


class _Sinks:
    """One growing file per table: CSV and JSON appended batch by batch, Parquet at the end
    (its decimal types are the widest of every batch, as one whole table's would be)."""

    def __init__(self, root: Path, fmt: str) -> None:
        self.fmt = fmt
        self.folder = root / "tables"
        self.folder.mkdir()
        self.paths = {name: self.folder / f"{name}.{fmt}" for name in TABLES}
        self.batches = 0
        self.parts: dict[str, dict[int, Path]] = {name: {} for name in TABLES}
        self.first: dict[str, pd.DataFrame] = {}
        self.widths: dict[tuple[str, int], dict[str, tuple[int, int]]] = {}
        self.json_rows = dict.fromkeys(TABLES, 0)

    def add(self, batch: int, book: Book) -> None:
        """Append one batch's tables (Parquet: set them, replacing an earlier try)."""
        for name, frame in book.tables().items():
            if self.fmt == "csv":
                self._csv(name, frame)
            elif self.fmt == "json":
                self._json(name, frame)
            else:
                self._spill_parquet(name, batch, frame)
        self.batches += 1

    def finish(self) -> dict[str, Path]:
        for name in TABLES:
            if self.fmt == "json":
                with self.paths[name].open("a", encoding="utf-8") as handle:
                    handle.write("\n]\n" if self.json_rows[name] else "[]\n")
            elif self.fmt == "parquet":
                self._write_parquet(name)
        return {path.name: path for path in self.paths.values()}

    def _csv(self, name: str, frame: pd.DataFrame) -> None:
        data = csv_bytes(frame)
        if self.batches:
            data = data.split(b"\n", 1)[1]  # the header, written with the first batch
        with self.paths[name].open("ab") as handle:
            handle.write(data)

    def _json(self, name: str, frame: pd.DataFrame) -> None:
        records = json_records(frame)
        if not records:
            return
        items = json.dumps(records, indent=1, default=str, allow_nan=False)[2:-2]
        with self.paths[name].open("a", encoding="utf-8") as handle:
            handle.write(("[\n" if not self.json_rows[name] else ",\n") + items)
        self.json_rows[name] += len(records)

    def _spill_parquet(self, name: str, batch: int, frame: pd.DataFrame) -> None:
        table = pa.Table.from_pandas(frame, preserve_index=False)
        self.first.setdefault(name, frame.head(0))
        self.widths[(name, batch)] = {
            f.name: (f.type.precision - f.type.scale, f.type.scale)
            for f in table.schema
            if pa.types.is_decimal(f.type)
        }
        path = self.folder / f"{name}-{batch:06d}.arrow"
        with ipc.new_file(path, table.schema) as sink:
            sink.write_table(table)
        self.parts[name][batch] = path

    def _types(self, name: str) -> dict[str, pd.ArrowDtype]:
        widest: dict[str, tuple[int, int]] = {}
        for (table, _), widths in self.widths.items():
            for column, (whole, scale) in widths.items() if table == name else ():
                was = widest.get(column, (1, 0))
                widest[column] = (max(was[0], whole), max(was[1], scale))
        return {c: pd.ArrowDtype(_decimal(w, s)) for c, (w, s) in widest.items()}

    def _write_parquet(self, name: str) -> None:
        empty = self.first[name].astype(self._types(name))
        target = pa.Table.from_pandas(empty, preserve_index=False).schema
        pending: list[pa.Table] = []
        held = total = 0
        options = parquet_options(target.empty_table())  # as a whole run writes the table
        with pq.ParquetWriter(self.paths[name], target, **options) as writer:
            for _, path in sorted(self.parts[name].items()):
                table = ipc.open_file(path).read_all().cast(target)
                path.unlink()
                pending.append(table)
                held, total = held + table.num_rows, total + table.num_rows
                while held >= ROW_GROUP_ROWS:  # row groups cut where one whole write cuts them
                    joined = pa.concat_tables(pending)
                    writer.write_table(joined.slice(0, ROW_GROUP_ROWS).combine_chunks())
                    pending, held = [joined.slice(ROW_GROUP_ROWS)], held - ROW_GROUP_ROWS
            if held or not total:
                joined = pa.concat_tables(pending) if pending else target.empty_table()
                writer.write_table(joined.combine_chunks())
