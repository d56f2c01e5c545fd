"""Write the demo's foreign sources: the same kind of fills as three invented sources deliver them.

Larkmoor Capital (fictional) receives fills from:

- Brightwater Securities (fictional), a European broker whose daily export is semicolon-separated
  cp1252 text with decimal commas, ``KAUF``/``VERK`` sides, separate date and time columns in Paris
  time, and commission split into a broker fee and an exchange fee;
- a colleague on the futures desk, who keeps an Excel sheet with a title row, signed quantities
  (negative is a sale) and New York times;
- Kestrel Markets (fictional), whose FIX 4.4 drop copy arrives as a session log with a correction,
  a bust and a resend in it.

Every number is made up. ``python sample_data/generate_sources.py`` rebuilds the files identically.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

import xlsxwriter

HERE = Path(__file__).parent / "profiles"
SOH = "\x01"

BRIGHTWATER = [
    # ref, account, isin-like code, side, quantity, price, date, time, broker fee, exchange fee
    (
        "BW-40117",
        "LMC-EQ",
        "OSTB",
        "KAUF",
        "1.200",
        "23,42",
        "02.11.2026",
        "09:02:16",
        "4,20",
        "0,35",
    ),
    (
        "BW-40118",
        "LMC-EQ",
        "OSTB",
        "KAUF",
        "800",
        "23,48",
        "02.11.2026",
        "09:34:40",
        "2,80",
        "0,24",
    ),
    (
        "BW-40152",
        "LMC-EQ",
        "OSTB",
        "VERK",
        "1.500",
        "24,05",
        "03.11.2026",
        "15:11:02",
        "5,25",
        "0,45",
    ),
    (
        "BW-40161",
        "LMC-EQ",
        "VRDA",
        "VERK",
        "300",
        "118,60",
        "03.11.2026",
        "10:05:55",
        "1,80",
        "0,18",
    ),
    (
        "BW-40188",
        "LMC-EQ",
        "VRDA",
        "KAUF",
        "300",
        "117,40",
        "04.11.2026",
        "16:20:00",
        "1,80",
        "0,18",
    ),
    (
        "BW-40190",
        "LMC-EQ",
        "VRDA",
        "KAUF",
        "150",
        "117,25",
        "04.11.2026",
        "16:29:41",
        "0,90",
        "0,09",
    ),
]

QUAYSIDE = [
    # trade no, contract, signed quantity, price, time (New York), commission
    (7001, "VLT50-Z26", 3, 5120.25, datetime(2026, 11, 2, 9, 31, 5), 3.30),
    (7002, "VLT50-Z26", 2, 5118.5, datetime(2026, 11, 2, 10, 2, 44), 2.20),
    (7003, "VLT50-Z26", -4, 5131.75, datetime(2026, 11, 2, 14, 45, 10), 4.40),
    (7004, "VLT50-Z26", -3, 5140.0, datetime(2026, 11, 3, 11, 15, 0), 3.30),
    (7005, "VLT50-Z26", 2, 5126.25, datetime(2026, 11, 4, 9, 45, 30), 2.20),
]


def brightwater() -> None:
    header = "Auftrag;Konto;Titel;Richtung;Stück;Kurs;Datum;Zeit;Courtage;Börsengebühr"
    lines = [header] + [";".join(row) for row in BRIGHTWATER]
    (HERE / "brightwater-fills.csv").write_bytes(("\r\n".join(lines) + "\r\n").encode("cp1252"))


def quayside() -> None:
    book = xlsxwriter.Workbook(str(HERE / "quayside-futures.xlsx"))
    book.set_properties({"created": datetime(2026, 11, 30, 18, 0, 0)})
    sheet = book.add_worksheet("Trades")
    stamp = book.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
    sheet.write(0, 0, "Futures desk - November fills (kept by hand)")
    sheet.write_row(2, 0, ["Trade #", "Contract", "Qty (+buy/-sell)", "Price", "Time (NY)", "Comm"])
    for r, (number, contract, quantity, price, when, commission) in enumerate(QUAYSIDE, start=3):
        sheet.write_number(r, 0, number)
        sheet.write_string(r, 1, contract)
        sheet.write_number(r, 2, quantity)
        sheet.write_number(r, 3, price)
        sheet.write_datetime(r, 4, when, stamp)
        sheet.write_number(r, 5, commission)
    book.close()


def fix_message(fields: list[tuple[int, str]]) -> str:
    """Frame a FIX 4.4 message: BodyLength and CheckSum by the specification's rule."""
    body = "".join(f"{tag}={value}{SOH}" for tag, value in fields)
    head = f"8=FIX.4.4{SOH}9={len(body.encode('ascii'))}{SOH}"
    checksum = sum((head + body).encode("ascii")) % 256
    return f"{head}{body}10={checksum:03d}{SOH}".replace(SOH, "|")


def report(seq: int, exec_id: str, exec_type: str, **tags: str) -> str:
    fields = [(35, "8"), (49, "KSTL"), (56, "LMCAP"), (34, str(seq)), (52, tags["time"])]
    fields += [(1, "LMC-CFD"), (15, "USD"), (17, exec_id)]
    if "ref" in tags:
        fields.append((19, tags["ref"]))
    fields += [(31, tags["px"]), (32, tags["qty"]), (37, tags.get("order", "K1"))]
    fields += [(54, tags["side"]), (55, "XAGX"), (60, tags["time"]), (150, exec_type)]
    fields += [(12, "0.02"), (13, "1"), (207, "KSTX")]
    fields += [(43, "Y")] if tags.get("resend") else []
    return fix_message(fields)


def kestrel() -> None:
    log = "2026-11-02 {clock} KSTL>LMCAP "
    lines = [
        log.format(clock="08:00:00.001")
        + fix_message([(35, "A"), (49, "KSTL"), (56, "LMCAP"), (34, "1"), (98, "0"), (108, "30")]),
        log.format(clock="13:05:10.250")
        + report(2, "KX-1", "F", px="31.250", qty="500", side="1", time="20261102-13:05:10"),
        log.format(clock="13:05:11.020")
        + report(3, "KX-2", "F", px="31.255", qty="1500", side="1", time="20261102-13:05:11"),
        log.format(clock="13:20:00.000")
        + report(
            4, "KX-3", "G", ref="KX-2", px="31.245", qty="1500", side="1", time="20261102-13:20:00"
        ),
        log.format(clock="15:41:07.700")
        + report(
            5, "KX-4", "F", px="31.610", qty="800", side="2", order="K2", time="20261102-15:41:07"
        ),
        log.format(clock="15:41:08.000")
        + report(
            6,
            "KX-4",
            "F",
            px="31.610",
            qty="800",
            side="2",
            order="K2",
            time="20261102-15:41:07",
            resend="y",
        ),
        log.format(clock="16:02:00.000")
        + report(
            7, "KX-5", "F", px="31.700", qty="200", side="2", order="K3", time="20261102-16:02:00"
        ),
        log.format(clock="16:30:00.000")
        + report(
            8,
            "KX-6",
            "H",
            ref="KX-5",
            px="31.700",
            qty="200",
            side="2",
            order="K3",
            time="20261102-16:30:00",
        ),
        log.format(clock="17:00:00.000")
        + fix_message([(35, "0"), (49, "KSTL"), (56, "LMCAP"), (34, "9")]),
    ]
    (HERE / "kestrel-dropcopy.fix").write_text("\n".join(lines) + "\n", encoding="ascii")


def main() -> None:
    HERE.mkdir(exist_ok=True)
    brightwater()
    quayside()
    kestrel()


if __name__ == "__main__":
    main()
