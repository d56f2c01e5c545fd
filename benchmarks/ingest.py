"""Time reading fills in each input format and print rows per second.

    python benchmarks/ingest.py [N]

Writes N seeded fills as canonical CSV, a decimal-comma semicolon export read through a profile,
JSON lines, a FIX 4.4 log and (N/5 rows) an Excel sheet into benchmarks/data/, then times
``read_source`` on each (validation included). A figure, not a test.
"""

from __future__ import annotations

import sys
import time
from datetime import UTC, datetime, timedelta
from pathlib import Path

import xlsxwriter

from reconcile.io.readers.sources import read_source

sys.path.insert(0, str(Path(__file__).parents[1]))
from tests.fixmsg import execution, message

DATA = Path(__file__).parent / "data"
START = datetime(2026, 11, 2, 9, tzinfo=UTC)
COMMA_PROFILE = """
[source]
delimiter = ";"
[columns]
fill_id = "Ref"
side = "B/S"
quantity = "Qty"
price = "Px"
time = "When"
commission = ["Comm", "Fee"]
[constants]
account = "DESK"
currency = "EUR"
instrument = "INS"
[values.side]
BOT = "buy"
SLD = "sell"
[numbers]
decimal = ","
thousands = "."
[time]
format = "%d.%m.%Y %H:%M:%S"
timezone = "Europe/Paris"
"""


def rows(count: int) -> list[tuple[str, str, str, str, datetime]]:
    out = []
    for n in range(count):
        side = "buy" if n % 3 else "sell"
        out.append(
            (
                f"F{n}",
                side,
                str(1 + n % 17),
                f"{100 + n % 250}.{n % 100:02d}",
                START + timedelta(seconds=n),
            )
        )
    return out


def write_all(count: int) -> dict[str, tuple[Path, str | None]]:
    DATA.mkdir(exist_ok=True)
    data = rows(count)
    csv = ["fill_id,account,instrument,side,quantity,price,time,currency,commission"]
    csv += [f"{i},DESK,INS,{s},{q},{p},{t.isoformat()},EUR,1.25" for i, s, q, p, t in data]
    (DATA / "fills.csv").write_text("\n".join(csv) + "\n")
    comma = ["Ref;B/S;Qty;Px;When;Comm;Fee"]
    comma += [
        f"{i};{'BOT' if s == 'buy' else 'SLD'};{q};{p.replace('.', ',')};"
        f"{t.strftime('%d.%m.%Y %H:%M:%S')};1,00;0,25"
        for i, s, q, p, t in data
    ]
    (DATA / "comma.csv").write_text("\n".join(comma) + "\n", encoding="cp1252")
    (DATA / "comma.toml").write_text(COMMA_PROFILE)
    jsonl = [
        f'{{"fill_id": "{i}", "account": "DESK", "instrument": "INS", "side": "{s}", '
        f'"quantity": {q}, "price": {p}, "time": "{t.isoformat()}", "currency": "EUR"}}'
        for i, s, q, p, t in data
    ]
    (DATA / "fills.jsonl").write_text("\n".join(jsonl) + "\n")
    fix = [
        message(
            execution(
                i,
                "F",
                side="1" if s == "buy" else "2",
                qty=q,
                px=p,
                seq=n,
                time=t.strftime("%Y%m%d-%H:%M:%S"),
                currency="EUR",
            ),
            delimiter="|",
        )
        for n, (i, s, q, p, t) in enumerate(data)
    ]
    (DATA / "fills.fix").write_text("\n".join(fix) + "\n")
    book = xlsxwriter.Workbook(str(DATA / "fills.xlsx"))
    sheet = book.add_worksheet("Fills")
    sheet.write_row(
        0, 0, ["fill_id", "account", "instrument", "side", "quantity", "price", "time", "currency"]
    )
    for r, (i, s, q, p, t) in enumerate(data[: count // 5], start=1):
        sheet.write_row(r, 0, [i, "DESK", "INS", s, int(q), float(p), t.isoformat(), "EUR"])
    book.close()
    return {
        "csv": (DATA / "fills.csv", None),
        "csv, decimal comma, profile": (DATA / "comma.csv", str(DATA / "comma.toml")),
        "jsonl": (DATA / "fills.jsonl", None),
        "fix (4.4, pipe)": (DATA / "fills.fix", None),
        "excel (N/5 rows)": (DATA / "fills.xlsx", None),
    }


def main() -> None:
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    for label, (path, profile) in write_all(count).items():
        began = time.perf_counter()
        read = read_source(path, profile=profile)
        seconds = time.perf_counter() - began
        rows_read = read.summary["rows_read"]
        rate = rows_read / seconds
        print(f"{label:30} {rows_read:>9,} rows  {seconds:6.2f} s  {rate:>10,.0f} rows/s")


if __name__ == "__main__":
    main()
