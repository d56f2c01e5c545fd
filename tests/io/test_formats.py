"""Every input format gives byte-identical positions for the same fills (derived: one set of fills
written six ways, each through its own reader and profile)."""

from __future__ import annotations

import csv
import json
from datetime import UTC, datetime
from decimal import Decimal
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest
import xlsxwriter
from typer.testing import CliRunner

from reconcile.cli import app
from reconcile.io.readers.sources import read_source
from tests.fixmsg import execution, message

FILLS = Path(__file__).parents[1] / "golden" / "flip-and-yen" / "fills.csv"
NUMBERS = ("quantity", "price", "commission", "multiplier")


def _rows() -> list[dict[str, str]]:
    with FILLS.open(encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def _utc(text: str) -> datetime:
    return datetime.fromisoformat(text).astimezone(UTC)


def _tsv(folder: Path) -> list[str]:
    # A European export: tab-separated, cp1252, decimal comma, thousands dot, BOT/SLD, local
    # times without offset in UTC, commission split into two columns.
    lines = ["Réf\tCompte\tTitre\tSens\tQté\tCours\tDate\tFrais\tTaxe\tDevise\tMult"]
    for r in _rows():
        when = _utc(r["time"]).strftime("%d.%m.%Y %H:%M:%S")
        price = r["price"].replace(".", ",")
        price = "1.234" if price == "1234" else price
        commission = Decimal(r["commission"])
        half = (commission / 2).quantize(Decimal("0.01"))
        fee = str(commission - half).replace(".", ",")
        side = {"buy": "BOT", "sell": "SLD"}[r["side"]]
        lines.append(
            "\t".join(
                [
                    r["fill_id"],
                    r["account"],
                    r["instrument"],
                    side,
                    r["quantity"],
                    price,
                    when,
                    str(half).replace(".", ","),
                    fee,
                    r["currency"],
                    r["multiplier"],
                ]
            )
        )
    (folder / "fills.tsv").write_bytes(("\n".join(lines) + "\n").encode("cp1252"))
    (folder / "tsv.toml").write_text(
        """
[source]
encoding = "cp1252"
[columns]
fill_id = "Réf"
account = "Compte"
instrument = "Titre"
side = "Sens"
quantity = "Qté"
price = "Cours"
time = "Date"
commission = ["Frais", "Taxe"]
currency = "Devise"
multiplier = "Mult"
[values.side]
BOT = "buy"
SLD = "sell"
[numbers]
decimal = ","
thousands = "."
[time]
format = "%d.%m.%Y %H:%M:%S"
timezone = "UTC"
""",
        encoding="utf-8",
    )
    return ["fills.tsv", "--profile", "tsv.toml"]


def _excel(folder: Path) -> list[str]:
    book = xlsxwriter.Workbook(str(folder / "fills.xlsx"))
    sheet = book.add_worksheet("Trades")
    stamp = book.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
    sheet.write_row(0, 0, ["Desk fills, November"])  # a title row above the header
    header = list(_rows()[0])
    sheet.write_row(2, 0, header)
    for n, r in enumerate(_rows(), start=3):
        for c, name in enumerate(header):
            if name in NUMBERS:
                sheet.write_number(n, c, float(r[name]))
            elif name == "time":
                sheet.write_datetime(n, c, _utc(r[name]).replace(tzinfo=None), stamp)
            else:
                sheet.write_string(n, c, r[name])
    book.close()
    (folder / "excel.toml").write_text(
        """
[source]
sheet = "Trades"
header_row = 3
[numbers.places]
quantity = 0
price = 2
commission = 2
multiplier = 0
[time]
timezone = "UTC"
""",
        encoding="utf-8",
    )
    return ["fills.xlsx", "--profile", "excel.toml"]


def _parquet(folder: Path) -> list[str]:
    rows = _rows()
    columns: dict[str, pa.Array] = {}
    for name in rows[0]:
        values = [r[name] for r in rows]
        if name in NUMBERS:
            columns[name] = pa.array([Decimal(v) for v in values], pa.decimal128(12, 2))
        elif name == "time":
            columns[name] = pa.array([_utc(v) for v in values], pa.timestamp("us", tz="UTC"))
        else:
            columns[name] = pa.array(values, pa.string())
    pq.write_table(pa.table(columns), folder / "fills.parquet")
    return ["fills.parquet"]


def _jsonl(folder: Path) -> list[str]:
    lines = []
    for r in _rows():
        numbers = ", ".join(f'"{k}": {r[k]}' for k in NUMBERS)
        texts = ", ".join(f'"{k}": {json.dumps(v)}' for k, v in r.items() if k not in NUMBERS)
        lines.append("{" + texts + ", " + numbers + "}")
    (folder / "fills.jsonl").write_text("\n".join(lines) + "\n", encoding="utf-8")
    return ["fills.jsonl"]


def _fix(folder: Path) -> list[str]:
    # FIX 4.4 ExecutionReports, 150=F, commission absolute (13=3), ContractMultiplier(231).
    lines = []
    for n, r in enumerate(_rows(), start=1):
        fields = execution(
            r["fill_id"],
            "F",
            side="1" if r["side"] == "buy" else "2",
            qty=r["quantity"],
            px=r["price"],
            time=_utc(r["time"]).strftime("%Y%m%d-%H:%M:%S"),
            symbol=r["instrument"],
            account=r["account"],
            currency=r["currency"],
            seq=n,
            extra=[(12, r["commission"]), (13, "3"), (231, r["multiplier"]), (30, r["venue"])],
        )
        lines.append(message(fields, delimiter="|"))
    (folder / "fills.fix").write_text("\n".join(lines) + "\n", encoding="ascii")
    return ["fills.fix"]


WRITERS = {
    "tsv": _tsv,
    "excel": _excel,
    "parquet": _parquet,
    "jsonl": _jsonl,
    "fix": _fix,
}


def _positions(folder: Path, args: list[str], out: str) -> bytes:
    result = CliRunner().invoke(app, ["match", *args, "--out", out], env={"COLUMNS": "100"})
    assert result.exit_code == 0, result.output
    return (folder / out / "positions.csv").read_bytes()


@pytest.mark.parametrize("fmt", sorted(WRITERS))
def test_every_format_gives_byte_identical_positions(
    fmt: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "fills.csv").write_bytes(FILLS.read_bytes())
    expected = _positions(tmp_path, ["fills.csv"], "csv-out")
    assert _positions(tmp_path, WRITERS[fmt](tmp_path), f"{fmt}-out") == expected


def test_a_side_column_beside_signed_quantities_must_agree_with_the_sign(tmp_path: Path) -> None:
    # A common export fault: signed quantities and a side column that contradicts them. The sign
    # decides (the profile says so), and a side that disagrees is a problem, not silently ignored.
    (tmp_path / "p.toml").write_text('[signs]\nquantity = "signed"\n')
    (tmp_path / "fills.csv").write_text(
        "fill_id,account,instrument,side,quantity,price,time,currency\n"
        "F1,A,X,sell,5,2,2026-11-02T10:00:00Z,USD\n"
        "F2,A,X,SELL,-1,2,2026-11-02T10:00:02Z,USD\n"
        "F3,A,X,,-1,2,2026-11-02T10:00:03Z,USD\n"
    )
    read = read_source(tmp_path / "fills.csv", profile=tmp_path / "p.toml", keep_rejects=True)
    assert read.frame["fill_id"].tolist() == ["F2", "F3"]
    assert read.frame["side"].tolist() == ["sell", "sell"]
    assert [(p.row, p.column, p.found) for p in read.problems] == [(2, "side", "sell")]
