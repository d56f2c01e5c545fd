"""``match --batch-rows``: a file matched in batches of keys writes what one whole run writes.

The main property is "derived": the batched run is compared, file by file and byte by byte, with
the whole-file run of the same command (read, match, write), which the engine tests check
against published cases and the slow reference matcher. Histories are random (hypothesis), with
every relief method, both commission conventions, CSV, Parquet and JSON output, and batch sizes
from one fill to more than the file holds.
"""

from __future__ import annotations

import tempfile
from decimal import Decimal
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

import reconcile
from reconcile.errors import ConfigError, ReconcileError, ValidationError
from reconcile.io import session
from reconcile.io.batches import match_in_batches
from tests.builders import concat, fills, financing
from tests.strategies import financing_for, histories

METHODS = st.sampled_from(["fifo", "lifo", "hifo", "average"])
CONVENTIONS = st.sampled_from(["at-close", "at-fill"])


def whole_run(folder: Path, fills_path: Path, fmt: str = "csv", **options: Any) -> list[Path]:
    """What ``reconcile match`` does without --batch-rows (the CLI's own steps)."""
    rejects = options.pop("rejects", None)
    read = session.read_inputs(
        fills_path,
        options.pop("financing", None),
        options.pop("opening", None),
        timezone=options.pop("timezone", None),
        dedupe=options.pop("dedupe", False),
        keep_rejects=rejects is not None,
    )
    book = session.match_inputs(read, **options)
    written = session.write_book(book, read, folder, fmt)
    session.finish_rejects(read, rejects)
    return written


def files_of(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


def write_csv(frame: pd.DataFrame, path: Path) -> Path:
    frame.to_csv(path, index=False)
    return path


def assert_same_run(folder: Path, fills_path: Path, batch_rows: int, **options: Any) -> None:
    fmt = options.pop("fmt", "csv")
    whole_options = dict(options)
    if "rejects" in options:
        whole_options["rejects"] = folder / "whole-rejects.csv"
        options["rejects"] = folder / "batched-rejects.csv"
    expected = whole_run(folder / "whole", fills_path, fmt, **whole_options)
    run = match_in_batches(
        fills_path, folder / "batched", batch_rows=batch_rows, fmt=fmt, **options
    )
    assert [p.name for p in run.written] == [p.name for p in expected]
    assert files_of(folder / "batched") == files_of(folder / "whole")
    if "rejects" in options:
        assert options["rejects"].read_bytes() == whole_options["rejects"].read_bytes()


@st.composite
def mixed_places(draw: st.DrawFn) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Histories whose keys write prices with different places (the whole file's places set the
    places of the results, so a batch must not type them by its own rows alone)."""
    history = draw(histories(max_keys=5, max_fills=20))
    padded = draw(st.sets(st.sampled_from(sorted(set(history["instrument"])))))
    pad = history["instrument"].isin(padded) & history["price"].str.contains(".", regex=False)
    history.loc[pad, "price"] = history.loc[pad, "price"] + "00"
    return history, draw(financing_for(history))


@given(
    data=mixed_places(),
    method=METHODS,
    convention=CONVENTIONS,
    fmt=st.sampled_from(["csv", "parquet", "json"]),
    engine=st.sampled_from(["auto", "reference", "fast"]),
    batch_rows=st.one_of(st.integers(1, 120), st.just(10**6)),
)
def test_batched_run_writes_the_whole_runs_files(
    data: tuple[pd.DataFrame, pd.DataFrame],
    method: str,
    convention: str,
    fmt: str,
    engine: str,
    batch_rows: int,
) -> None:
    history, events = data
    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        fills_path = write_csv(history, folder / "fills.csv")
        financing_path = write_csv(events, folder / "financing.csv")
        assert_same_run(
            folder,
            fills_path,
            batch_rows,
            financing=financing_path,
            method=method,
            commission=convention,
            engine=engine,
            fmt=fmt,
        )


@given(data=mixed_places(), batch_rows=st.integers(1, 40))
def test_parquet_input_is_read_in_row_groups_with_the_same_result(
    data: tuple[pd.DataFrame, pd.DataFrame], batch_rows: int
) -> None:
    history, _ = data
    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        fills_path = folder / "fills.parquet"
        history.to_parquet(fills_path, index=False)
        assert_same_run(folder, fills_path, batch_rows, fmt="parquet")


def at(minute: int) -> str:
    return f"2026-11-02T09:{minute:02d}:00Z"


def two_keys() -> pd.DataFrame:
    return concat(
        fills(
            [("F1", "buy", 10, "100.00", at(1)), ("F2", "sell", 4, "101.5", at(3))], instrument="X"
        ),
        fills([("G1", "sell", 5, 20, at(2)), ("G2", "buy", 5, "19.25", at(4))], instrument="Y"),
        fills([("H1", "buy", 3, 7, at(5))], account="B", instrument="Z", currency="JPY"),
    )


def test_a_key_with_financing_or_carried_lots_but_no_fills_is_matched_as_in_one_run(
    tmp_path: Path,
) -> None:
    fills_path = write_csv(two_keys(), tmp_path / "fills.csv")
    events = concat(
        financing([("E1", at(2), "-1.25")], instrument="X"),
        financing([("E2", at(3), "-0.50")], account="A", instrument="W"),  # no fills for A W
        financing([("E3", at(4), "-2")], account="C", instrument="Q"),  # after every fill key
    )
    financing_path = write_csv(events, tmp_path / "financing.csv")
    opening = pd.DataFrame(
        [
            {
                "account": "A",
                "instrument": "V",  # carried, no fills this period
                "currency": "USD",
                "direction": "long",
                "open_fill_id": "OLD1",
                "open_time": "2026-10-30T15:00:00+00:00",
                "quantity": "2",
                "open_price": "50",
                "cost_basis": "100",
            }
        ]
    )
    opening_path = write_csv(opening, tmp_path / "opening.csv")
    for batch_rows in (1, 2, 3, 100):
        folder = tmp_path / f"run-{batch_rows}"
        assert_same_run(
            folder, fills_path, batch_rows, financing=financing_path, opening=opening_path
        )
        positions = pd.read_csv(folder / "batched" / "positions.csv")
        keys = set(zip(positions["account"], positions["instrument"], strict=True))
        assert {("A", "V"), ("A", "W"), ("C", "Q")} <= keys


def test_trip_ids_run_on_across_batches(tmp_path: Path) -> None:
    fills_path = write_csv(two_keys(), tmp_path / "fills.csv")
    match_in_batches(fills_path, tmp_path / "out", batch_rows=1)
    trips = pd.read_csv(tmp_path / "out" / "round_trips.csv")
    lots = pd.read_csv(tmp_path / "out" / "open_lots.csv")
    # derived: X closes no trip (10 bought, 4 sold: trip 1 open), Y's trip 2 closes, Z opens 3
    assert trips["trip_id"].tolist() == [2]
    assert lots["trip_id"].tolist() == [1, 3]


def errors_of(
    tmp_path: Path, frame: pd.DataFrame, batch_rows: int, **options: Any
) -> tuple[str, str]:
    tmp_path.mkdir(exist_ok=True)
    fills_path = write_csv(frame, tmp_path / "fills.csv")
    with pytest.raises(ReconcileError) as whole:
        whole_run(tmp_path / "whole", fills_path, **options)
    out = tmp_path / "batched" / "deeper"
    with pytest.raises(ReconcileError) as batched:
        match_in_batches(fills_path, out, batch_rows=batch_rows, **options)
    assert type(batched.value) is type(whole.value)
    assert not (tmp_path / "batched").exists()  # nothing written, no spill left behind
    return str(whole.value), str(batched.value)


def test_problems_of_every_batch_are_listed_together_as_one_run_lists_them(
    tmp_path: Path,
) -> None:
    frame = two_keys()
    frame.loc[1, "quantity"] = "-5"
    frame.loc[3, "time"] = "yesterday"
    frame.loc[4, "currency"] = "XYZ"
    whole, batched = errors_of(tmp_path, frame, batch_rows=1)
    assert batched == whole
    assert "3 problems found" in batched


def test_a_fill_id_under_two_keys_names_both_rows(tmp_path: Path) -> None:
    frame = two_keys()
    frame.loc[4, "fill_id"] = "F1"  # the B Z fill takes the id of A X's first fill
    whole, batched = errors_of(tmp_path, frame, batch_rows=2)
    assert batched == whole
    assert "row 6, column fill_id: expected a unique fill_id (row 2 has the same id" in batched


def test_an_id_under_two_keys_and_repeated_within_one_is_worded_once(tmp_path: Path) -> None:
    frame = two_keys()
    frame.loc[[1, 2, 3], "fill_id"] = "G9"  # rows 3 (A X), 4 and 5 (A Y)
    whole, batched = errors_of(tmp_path, frame, batch_rows=1)
    assert batched == whole
    assert "1 problem found" in batched
    assert "row 4, column fill_id" in batched


def test_a_second_currency_is_not_reported_when_a_currency_is_bad_elsewhere(
    tmp_path: Path,
) -> None:
    frame = two_keys()
    frame.loc[1, "currency"] = "EUR"  # A X: USD then EUR, judged only when no code is bad
    frame.loc[4, "currency"] = "QQQ"  # B Z, another batch
    whole, batched = errors_of(tmp_path, frame, batch_rows=1)
    assert batched == whole
    frame.loc[4, "currency"] = "JPY"
    whole, batched = errors_of(tmp_path / "clean", frame, batch_rows=1)
    assert batched == whole
    assert "two currencys" not in batched
    assert "one currency per account" in batched


def test_rejects_set_aside_across_batches_as_one_run_does(tmp_path: Path) -> None:
    frame = two_keys()
    frame.loc[1, "quantity"] = "-5"
    frame.loc[4, "fill_id"] = "F1"
    frame.loc[2, "currency"] = "EUR"  # A Y: USD and EUR
    fills_path = write_csv(frame, tmp_path / "fills.csv")
    for batch_rows in (1, 2, 50):
        assert_same_run(tmp_path / f"run-{batch_rows}", fills_path, batch_rows, rejects=True)


def test_exact_repeats_are_dropped_with_dedupe_as_one_run_drops_them(tmp_path: Path) -> None:
    frame = concat(two_keys(), two_keys().iloc[[1, 4]])
    fills_path = write_csv(frame, tmp_path / "fills.csv")
    assert_same_run(tmp_path / "run", fills_path, 1, dedupe=True)
    whole, batched = errors_of(tmp_path / "strict", frame, batch_rows=1)
    assert batched == whole
    assert "exact repeat of row" in batched


def test_missing_columns_and_empty_files_are_the_whole_runs_errors(tmp_path: Path) -> None:
    whole, batched = errors_of(tmp_path, two_keys().drop(columns=["price"]), batch_rows=1)
    assert batched == whole
    fills_path = write_csv(two_keys().head(0), tmp_path / "header-only.csv")
    assert_same_run(tmp_path / "empty", fills_path, 1)


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        ("fills.xlsx", "--batch-rows: expected fills as csv, tsv or parquet, found excel"),
        ("fills.jsonl", "--batch-rows: expected fills as csv, tsv or parquet, found jsonl"),
        ("fills.fix", "--batch-rows: expected fills as csv, tsv or parquet, found fix"),
    ],
)
def test_other_formats_are_refused_by_name(tmp_path: Path, name: str, expected: str) -> None:
    path = tmp_path / name
    path.write_text("anything\n")
    with pytest.raises(ConfigError, match=expected):
        match_in_batches(path, tmp_path / "out", batch_rows=10)
    assert not (tmp_path / "out").exists()


def test_a_failed_match_leaves_an_existing_folder_as_it_was(tmp_path: Path) -> None:
    out = tmp_path / "out"
    out.mkdir()
    (out / "positions.csv").write_text("earlier results\n")
    frame = two_keys()
    frame.loc[0, "side"] = "hold"
    with pytest.raises(ValidationError):
        match_in_batches(write_csv(frame, tmp_path / "f.csv"), out, batch_rows=1)
    assert files_of(out) == {"positions.csv": b"earlier results\n"}


def test_the_public_verb_reports_counts_totals_and_progress(tmp_path: Path) -> None:
    fills_path = tmp_path / "fills.tsv"
    two_keys().to_csv(fills_path, sep="\t", index=False)
    ticks: list[tuple[int, int]] = []
    run = reconcile.match_in_batches(
        fills_path, tmp_path / "out", batch_rows=2, progress=lambda d, t: ticks.append((d, t))
    )
    assert ticks == [(1, 3), (2, 3), (3, 3)]  # A X, A Y, B Z: one key a batch
    assert run.totals.counts == {
        "closed_lots": 2,
        "round_trips": 1,
        "open_lots": 2,
        "positions": 3,
        "unattributed": 0,
    }
    # derived: A X sells 4 of 10 bought at 100.00 for 101.5 (+6.00); A Y shorts 5 at 20 and
    # buys them back at 19.25 (+3.75); B Z only opens
    totals = run.totals.currency_totals()
    assert totals["currency"].tolist() == ["JPY", "USD"]
    assert totals["realized_gross"].tolist() == [Decimal(0), Decimal("9.75")]
    assert [p.name for p in run.written][-1] == "run.json"
    assert run.inputs.summaries()[0]["accepted"] == 5


@pytest.mark.parametrize("fmt", ["parquet", "csv"])
def test_a_later_batch_with_more_places_retypes_the_earlier_ones(tmp_path: Path, fmt: str) -> None:
    frame = two_keys()
    frame.loc[4, "price"] = "7.0000"  # B Z, the last batch: the file's prices have 4 places
    frame.loc[4, "quantity"] = "3.000"
    fills_path = write_csv(frame, tmp_path / "fills.csv")
    assert_same_run(tmp_path / "run", fills_path, 1, fmt=fmt)


def test_events_that_cannot_apply_are_listed_from_every_batch(tmp_path: Path) -> None:
    opening = pd.DataFrame(
        [
            {
                "account": account,
                "instrument": instrument,
                "currency": "EUR",  # the fills of A X and B Z are in USD and JPY
                "direction": "long",
                "open_fill_id": f"OLD{n}",
                "open_time": "2026-10-30T15:00:00+00:00",
                "quantity": "2",
                "open_price": "50",
                "cost_basis": "100",
            }
            for n, (account, instrument) in enumerate([("A", "X"), ("B", "Z")])
        ]
    )
    opening_path = write_csv(opening, tmp_path / "opening.csv")
    whole, batched = errors_of(tmp_path, two_keys(), batch_rows=1, opening=opening_path)
    assert batched == whole


def test_a_file_with_no_usable_row_fails_as_the_whole_run_fails(tmp_path: Path) -> None:
    frame = two_keys()
    frame["side"] = "hold"
    rejects = tmp_path / "rejects.csv"
    whole, batched = errors_of(tmp_path, frame, batch_rows=1, rejects=rejects)
    assert batched == whole
    assert "expected at least one usable row of fills, found none" in batched
    assert not rejects.exists()
