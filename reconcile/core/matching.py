"""``match``: the one way from fills (and financing, and carried lots) to a :class:`Book`."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from reconcile import schema
from reconcile.core.book import Book, build_book
from reconcile.core.canon import canonical_fills, canonical_financing, canonical_opening
from reconcile.core.engine import Progress, replay
from reconcile.core.frames import InputFrames
from reconcile.core.period import utc_text
from reconcile.errors import ConfigError, Problem, raise_if_problems
from reconcile.money import ROUNDING_MODES, Rounding, exact_arithmetic


@exact_arithmetic
def match(
    fills: pd.DataFrame,
    financing: pd.DataFrame | None = None,
    *,
    opening: pd.DataFrame | None = None,
    method: schema.Method = "fifo",
    commission: schema.CommissionConvention = "at-close",
    rounding: Rounding = "half-even",
    timezone: str | None = None,
    progress: Progress | None = None,
    engine: schema.Engine = "auto",
) -> Book:
    """Match fills into closed lots, round trips, open lots and positions.

    ``fills``, ``financing`` and ``opening`` are DataFrames in the canonical columns (what the
    readers return; raw text values are accepted and validated too). ``method`` is ``fifo``,
    ``lifo``, ``hifo`` or ``average``; ``commission`` is ``at-close`` (opening commission stays in
    the lot's basis until it closes) or ``at-fill`` (every commission is realized when paid).
    ``timezone`` places times that carry no UTC offset. ``progress(done, total)`` is called as
    (account, instrument) keys finish.

    ``engine`` picks how: ``reference`` replays each key with the readable engine of
    :mod:`reconcile.core.engine`; ``fast`` runs the integer kernel of :mod:`reconcile.fast`
    (compiled when numba is installed), which gives identical tables; ``auto`` (the default)
    takes the fast path when the input has at least :data:`AUTO_FAST_ROWS` rows (below that the
    reference engine finishes before the compiled kernel has loaded) and the reference engine
    otherwise. Either way a
    key whose numbers do not fit the kernel's 64-bit integers is replayed by the reference engine.
    """
    check_choice("method", method, schema.METHODS)
    check_choice("commission", commission, schema.COMMISSION_CONVENTIONS)
    check_choice("rounding", rounding, tuple(ROUNDING_MODES))
    check_choice("engine", engine, schema.ENGINES)
    fills = canonical_fills(fills, source=_label(fills, "fills"), timezone=timezone)
    if financing is not None:
        financing = canonical_financing(
            financing, source=_label(financing, "financing"), timezone=timezone
        )
    if opening is not None:
        opening = canonical_opening(opening, source=_label(opening, "opening"), timezone=timezone)
    return match_canonical(
        fills,
        financing,
        opening=opening,
        method=method,
        commission=commission,
        rounding=rounding,
        progress=progress,
        engine=engine,
    )


@dataclass
class HeldFrames:
    """The canonical input frames of one match, behind one reference.

    A caller that reads its inputs only to match them (the command line) hands them over with
    ``releasable=True``: the fast path then lets go of them (:meth:`release`) once it has taken
    what it needs, so millions of fills are not kept beside the tables built from them. A caller
    that can also ``reread`` them (the same frames, read again) lets the fast path let go before
    its kernel runs; it reads them again only for a key that overflows 64 bits.
    """

    fills: pd.DataFrame
    financing: pd.DataFrame | None = None
    opening: pd.DataFrame | None = None
    releasable: bool = False
    reread: Callable[[], InputFrames] | None = None

    def rows(self) -> int:
        return sum(len(f) for f in (self.fills, self.financing, self.opening) if f is not None)

    def release(self) -> None:
        if self.releasable:
            self.fills = pd.DataFrame(columns=self.fills.columns)
            self.financing = self.opening = None


@exact_arithmetic
def match_canonical(
    fills: pd.DataFrame,
    financing: pd.DataFrame | None = None,
    *,
    opening: pd.DataFrame | None = None,
    method: schema.Method = "fifo",
    commission: schema.CommissionConvention = "at-close",
    rounding: Rounding = "half-even",
    progress: Progress | None = None,
    engine: schema.Engine = "auto",
) -> Book:
    """:func:`match` for inputs that are already canonical (what the readers return), so a
    command that has just read and validated its files does not validate them twice."""
    held = HeldFrames(fills, financing, opening)
    return match_held(held, method, commission, rounding, progress, engine)


@exact_arithmetic
def match_held(
    held: HeldFrames,
    method: schema.Method = "fifo",
    commission: schema.CommissionConvention = "at-close",
    rounding: Rounding = "half-even",
    progress: Progress | None = None,
    engine: schema.Engine = "auto",
) -> Book:
    """:func:`match_canonical` of frames in a :class:`HeldFrames` (which it may release)."""
    check_choice("method", method, schema.METHODS)
    check_choice("commission", commission, schema.COMMISSION_CONVENTIONS)
    check_choice("rounding", rounding, tuple(ROUNDING_MODES))
    check_choice("engine", engine, schema.ENGINES)
    if held.opening is not None:
        check_carried_lots(held.fills, held.opening)
    if _use_fast(engine, held.rows()):
        book = _fast_book(held, method, commission, rounding, progress)
        if book is not None:
            return book
    run = replay(held.fills, held.financing, held.opening, method, commission, progress)
    return build_book(run, method, rounding)


def check_carried_lots(fills: pd.DataFrame, opening: pd.DataFrame) -> None:
    """Carried lots stand for fills before these ones: a lot that is one of the fills, or that
    opens after its key's first fill, would count that history twice (the usual slip: last
    month's open lots with a fills file that still holds last month)."""
    source, fill_source = _label(opening, "opening"), _label(fills, "fills")
    rows = opening.reset_index(drop=True)
    problems = []
    clash = rows["open_fill_id"].isin(fills["fill_id"]).to_numpy()
    hits = fills[fills["fill_id"].isin(rows["open_fill_id"][clash])]  # few: map only those
    seen = dict(zip(hits["fill_id"], hits[schema.SOURCE_ROW], strict=True))
    for index in np.flatnonzero(clash):
        fill_id = rows["open_fill_id"].iloc[index]
        problems.append(
            Problem(
                source,
                f"a lot opened before these fills, not one of them ({fill_source} row "
                f"{seen[fill_id]})",
                fill_id,
                int(rows[schema.SOURCE_ROW].iloc[index]),
                "open_fill_id",
                "lot is also a fill",
            )
        )
    first = fills.groupby(["account", "instrument"], sort=False)["time"].min().rename("first")
    joined = rows.join(first, on=["account", "instrument"])
    for index in np.flatnonzero((joined["open_time"] > joined["first"]).to_numpy()):
        row = joined.iloc[index]
        problems.append(
            Problem(
                source,
                f"an open time at or before the first fill of {row['account']} "
                f"{row['instrument']} ({utc_text(row['first'])})",
                utc_text(row["open_time"]),
                int(row[schema.SOURCE_ROW]),
                "open_time",
                "lot opens after the fills",
            )
        )
    raise_if_problems(source, sorted(problems, key=lambda p: (p.row or 0, p.column or "")))


#: Below this many input rows the reference engine is done before the compiled kernel is loaded.
AUTO_FAST_ROWS = 5_000


def _use_fast(engine: str, rows: int) -> bool:
    """``auto``: the kernel from :data:`AUTO_FAST_ROWS` rows up; compiled it is tens of times
    faster than the reference engine, and even as plain Python (no numba) about six times."""
    if engine != "auto":
        return engine == "fast"
    return rows >= AUTO_FAST_ROWS


def _fast_book(
    held: HeldFrames,
    method: str,
    commission: str,
    rounding: Rounding,
    progress: Progress | None,
) -> Book | None:
    """The fast path's book, or None when the inputs hold something only the reference engine
    reports (it then raises the same errors it always does)."""
    from reconcile.fast._jit import numba_available
    from reconcile.fast.engine import fast_book
    from reconcile.fast.prepare import NeedsReference

    try:
        # The frames go in as arguments only, never as names here, so that releasing them
        # inside drops the last reference the match holds.
        book = fast_book(
            held.fills,
            held.financing,
            held.opening,
            method,
            commission,
            rounding,
            compiled=numba_available(),
            release=held.release,
            reread=held.reread if held.releasable else None,
        )
    except NeedsReference:
        return None
    if progress is not None:
        keys = len(book.positions)
        progress(keys, keys)
    return book


def check_choice(option: str, value: str, choices: Sequence[str]) -> None:
    if value not in choices:
        raise ConfigError(f"{option}: expected one of {', '.join(choices)}, found {value!r}")


def _label(frame: pd.DataFrame, default: str) -> str:
    summary = frame.attrs.get("read_summary")
    return str(summary["source"]) if isinstance(summary, dict) else default
