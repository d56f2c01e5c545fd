"""FIX execution logs: a session with partial fills, a correction, a bust, a resend, a bad checksum.

Each test names the FIX version whose rules it follows. Positions are computed by hand below.
"""

from __future__ import annotations

from decimal import Decimal
from pathlib import Path

import pytest

from reconcile.errors import ValidationError
from reconcile.io.readers.sources import balance, read_source
from tests.fixmsg import SOH, execution, message

D = Decimal
PREFIX = "2026-11-02 14:30:00.123 IN  "


def _session(version: str, legacy: bool, delimiter: str = SOH) -> list[str]:
    """One trading day's log; 4.2 uses ExecTransType(20), 4.4 ExecType(150) F/G/H."""

    def fill(exec_id: str, **kw: object) -> list[tuple[int, str]]:
        if legacy:
            return execution(exec_id, "1", legacy_trans="0", **kw)  # type: ignore[arg-type]
        return execution(exec_id, "F", **kw)  # type: ignore[arg-type]

    def amend(exec_id: str, kind: str, **kw: object) -> list[tuple[int, str]]:
        if legacy:
            trans = {"G": "2", "H": "1"}[kind]
            return execution(exec_id, "1", legacy_trans=trans, **kw)  # type: ignore[arg-type]
        return execution(exec_id, kind, **kw)  # type: ignore[arg-type]

    def framed(fields: list[tuple[int, str]], **kw: object) -> str:
        return message(fields, version=version, delimiter=delimiter, **kw)  # type: ignore[arg-type]

    e1 = fill("E1", qty="100", px="50.10", extra=[(12, "1.00"), (13, "3")], seq=2)
    return [
        framed([(35, "A"), (49, "BRKR"), (56, "LMC"), (34, "1"), (98, "0"), (108, "30")]),
        PREFIX + framed(e1),
        framed(fill("E2", qty="200", px="50.20", seq=3, time="20261102-14:31:00")),
        framed(
            amend(
                "E3",
                "G",
                ref="E2",
                qty="200",
                px="50.25",
                seq=4,
                time="20261102-14:40:00",
                extra=[(12, "2.00"), (13, "3")],
            )
        ),
        framed(
            fill(
                "E4",
                side="2",
                qty="150",
                px="51.00",
                seq=5,
                time="20261102-15:00:00",
                extra=[(12, "0.01"), (13, "1")],
            )
        ),
        framed(amend("E5", "H", ref="E4", side="2", qty="150", px="51.00", seq=6)),
        framed([*e1[:3], (34, "7"), *e1[4:], (43, "Y"), (122, "20261102-14:30:00.000")]),
        framed(
            fill(
                "E6",
                side="2",
                qty="50",
                px="50.90",
                seq=8,
                time="20261102-16:00:00",
                extra=[(12, "0.50"), (13, "3")],
            )
        ),
        framed(execution("E0", "0", qty="0", px="0", seq=9)),
        framed([(35, "0"), (49, "BRKR"), (56, "LMC"), (34, "10")]),
        "",
    ]


def _write(tmp_path: Path, lines: list[str], name: str = "session.fix") -> Path:
    path = tmp_path / name
    path.write_bytes("\n".join(lines).encode("ascii"))
    return path


@pytest.mark.parametrize(
    ("version", "legacy"),
    [("FIX.4.4", False), ("FIX.4.2", True)],
    ids=["FIX 4.4 ExecType F/G/H", "FIX 4.2 ExecTransType 0/1/2"],
)
@pytest.mark.parametrize("delimiter", [SOH, "|"], ids=["SOH", "pipe"])
def test_session_log_gives_the_hand_computed_fills(
    tmp_path: Path, version: str, legacy: bool, delimiter: str
) -> None:
    read = read_source(_write(tmp_path, _session(version, legacy, delimiter)))
    fills = read.frame
    # By hand: E1 stands; E2 is corrected by E3 to 200 @ 50.25; E4 is busted by E5; the PossDup
    # resend of E1 is dropped; E6 stands. Fill ids: SenderCompID-TargetCompID-date-ExecID.
    assert fills["fill_id"].tolist() == [
        "BRKR-LMC-20261102-E1",
        "BRKR-LMC-20261102-E2",
        "BRKR-LMC-20261102-E6",
    ]
    assert fills["quantity"].tolist() == [D(100), D(200), D(50)]
    assert fills["price"].tolist() == [D("50.10"), D("50.25"), D("50.90")]
    assert fills["commission"].tolist() == [D("1.00"), D("2.00"), D("0.50")]
    assert fills["side"].tolist() == ["buy", "buy", "sell"]
    assert str(fills["time"].iloc[1]) == "2026-11-02 14:31:00+00:00"  # the trade's time, kept
    assert fills["source_row"].tolist() == [2, 4, 8]
    summary = read.summary
    assert (summary["rows_read"], summary["accepted"], summary["superseded"]) == (10, 3, 2)
    assert (summary["cancels"], summary["resent"], summary["skipped"]) == (1, 1, 3)
    assert balance(summary) == 0


def test_positions_equal_the_hand_computed_ones(tmp_path: Path) -> None:
    import reconcile

    # FIX 4.4. FIFO by hand: buy 100 @ 50.10, buy 200 @ 50.25, sell 50 @ 50.90 closes 50 of the
    # first lot: gross 50 x 0.80 = 40.00; commission at close: half of E1's 1.00 and E6's 0.50.
    # Open 250, average (50 x 50.10 + 200 x 50.25) / 250 = 50.22.
    fills = reconcile.read_fills(_write(tmp_path, _session("FIX.4.4", False)))
    position = reconcile.match(fills).positions.iloc[0]
    assert position["quantity"] == D(250)
    assert position["average_price"] == D("50.22")
    assert position["realized_gross"] == D("40.00")
    assert position["commission"] == D("1.00")
    assert position["realized_net"] == D("39.00")


def test_a_bad_checksum_is_an_error_naming_the_line(tmp_path: Path) -> None:
    # FIX 4.4: the true checksum is computed by the rule; the log says one more.
    fields = execution("E9", "F", qty="1", px="1")
    true_sum = int(message(fields).split(SOH)[-2].removeprefix("10="))
    wrong = f"{(true_sum + 1) % 256:03d}"
    lines = [message(execution("E8", "F", qty="1", px="1")), message(fields, checksum=wrong)]
    with pytest.raises(ValidationError) as caught:
        read_source(_write(tmp_path, lines))
    assert [str(p) for p in caught.value.problems] == [
        f"{tmp_path / 'session.fix'} row 2, column 10 (CheckSum): expected {true_sum:03d} (by "
        f"the FIX rule), found '{wrong}'"
    ]


def test_lenient_keeps_a_bad_checksum_with_a_warning(tmp_path: Path) -> None:
    # FIX 4.4
    lines = [message(execution("E9", "F", qty="1", px="1"), checksum="000", body_length=5)]
    read = read_source(_write(tmp_path, lines), fix_lenient=True)
    assert len(read.frame) == 1
    assert len(read.warnings) == 2
    assert "column 9 (BodyLength)" in read.warnings[0]
    assert read.warnings[1].endswith("found '000'; kept (--fix-lenient)")


def test_a_cancel_whose_target_is_not_in_the_log_is_a_problem(tmp_path: Path) -> None:
    # FIX 4.4: 150=H names ExecRefID E1, which sits in another day's log.
    lines = [message(execution("E5", "H", ref="E1", qty="1", px="1"))]
    with pytest.raises(ValidationError, match=r"column 19 \(ExecRefID\): expected the ExecID of"):
        read_source(_write(tmp_path, lines))
    read = read_source(_write(tmp_path, lines), keep_rejects=True)
    assert read.summary["rejected"] == 1
    assert balance(read.summary) == 0
    assert read.rejected["raw_line"].iloc[0].startswith("8=FIX.4.4|9=")


def test_an_exec_id_seen_twice_with_different_content_names_both_lines(tmp_path: Path) -> None:
    # FIX 4.4: ExecID is unique per session and day; a second E1 with another price is a clash.
    lines = [
        message(execution("E1", "F", qty="1", px="10")),
        message(execution("E1", "F", qty="1", px="11", seq=2)),
    ]
    with pytest.raises(ValidationError) as caught:
        read_source(_write(tmp_path, lines))
    (problem,) = caught.value.problems
    assert problem.row == 2
    assert "line 1 has it with different 31 (LastPx)" in str(problem)


def test_the_same_exec_id_on_another_trade_date_is_another_fill(tmp_path: Path) -> None:
    # FIX 4.4: ExecID restarts each trading day, so (sender, target, date, ExecID) is the key.
    lines = [
        message(execution("E1", "F", qty="1", px="10", time="20261102-15:00:00")),
        message(execution("E1", "F", qty="1", px="11", time="20261103-15:00:00")),
    ]
    fills = read_source(_write(tmp_path, lines)).frame
    assert fills["fill_id"].tolist() == ["BRKR-LMC-20261102-E1", "BRKR-LMC-20261103-E1"]


@pytest.mark.parametrize(
    ("comm_type", "rate", "expected"),
    [
        ("3", "7.25", "7.25"),  # absolute
        ("1", "0.015", "4.50"),  # per unit: 300 x 0.015
        ("2", "0.001", "6.09"),  # percent, as a fraction: 0.1% of 300 x 20.30 = 6.09
        ("2", ".05", "304.50"),  # 5% of 6,090, written .05 as the FIX dictionary's own example
        ("7", "5", "3.04"),  # basis points: 5 bp of 6,090 = 3.045, half-even to 3.04
    ],
)
def test_commission_types_become_amounts(
    tmp_path: Path, comm_type: str, rate: str, expected: str
) -> None:
    # FIX 4.4 CommType(13): 1 per unit, 2 percent, 3 absolute; 7 basis points from the later FIX
    # code set (from memory of the FIX Latest code set). A percentage is a fraction: the FIX data
    # dictionary's Commission(12), since FIX 2.7, "Note if CommType (13) is percentage,
    # Commission of 5% should be represented as .05". Computed amounts round half-even to the
    # currency's minor unit (common practice).
    fields = execution("E1", "F", qty="300", px="20.30", extra=[(12, rate), (13, comm_type)])
    fills = read_source(_write(tmp_path, [message(fields)])).frame
    assert fills["commission"].iloc[0] == D(expected)


def test_a_negative_computed_commission_is_reported_not_made_positive(tmp_path: Path) -> None:
    fields = execution("E1", "F", qty="300", px="20.30", extra=[(12, "-0.015"), (13, "1")])
    with pytest.raises(
        ValidationError,
        match=r"row 1, column 12 \(Commission\): expected a decimal >= 0, found '-4.50'",
    ):
        read_source(_write(tmp_path, [message(fields)]))
