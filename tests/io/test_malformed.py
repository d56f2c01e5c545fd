"""Malformed inputs: each is a clear error naming the file (and row and column where there is one),
exit code 2, nothing written, never a traceback. Cases are derived (constructed for these checks);
FIX cases follow the FIX 4.4 framing rule, computed in tests/fixmsg.py."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pytest
import xlsxwriter
from typer.testing import CliRunner

from reconcile.cli import app
from tests.fixmsg import execution, message

HEADER = "fill_id,account,instrument,side,quantity,price,time,currency,commission,multiplier\n"
GOOD = "f1,A,X,buy,10,100.5,2026-11-02T14:30:00Z,USD,1.25,1\n"


def _row(**values: str) -> str:
    fields = {
        "fill_id": "f2",
        "account": "A",
        "instrument": "X",
        "side": "sell",
        "quantity": "4",
        "price": "101",
        "time": "2026-11-02T15:00:00Z",
        "currency": "USD",
        "commission": "0.50",
        "multiplier": "1",
    }
    fields.update(values)
    return ",".join(f'"{v}"' if "," in v else v for v in fields.values()) + "\n"


@dataclass
class Case:
    name: str
    files: dict[str, bytes]
    args: list[str]
    expected: list[str]
    extra_args: list[str] = field(default_factory=list)
    workbook: tuple[list[list[object]], str] | None = None


def csv_case(name: str, body: bytes | str, expected: list[str]) -> Case:
    data = body.encode() if isinstance(body, str) else body
    return Case(name, {"fills.csv": data}, ["fills.csv"], ["fills.csv", *expected])


def value_case(column: str, value: str, expected: str = "") -> Case:
    body = HEADER + GOOD + _row(**{column: value})
    return csv_case(
        f"{column}={value[:20]!r}", body, [f"row 3, column {column}: expected {expected}"]
    )


CASES: list[Case] = []

# Bad values, one column at a time.
for value in [
    "yesterday",
    "2026-02-30T10:00:00Z",
    "2026-11-02T25:00:00Z",
    "02/11/2026 10:00",
    "2026-13-01T00:00:00Z",
    "2026-11-02T10:61:00Z",
    "20261102",
    "2026-11-02T10:00:00+25:00",
    "2026-11-02T10:00:00 EST",
    "",
    "2026-11-02T10:00:00",
]:
    CASES.append(value_case("time", value))
for value in ["hold", "short", "cover", "BOT", "1", "x", "bought", "sel", "buy sell", ""]:
    CASES.append(value_case("side", value))
for value in [
    "0",
    "-5",
    "-0.01",
    "abc",
    "NaN",
    "inf",
    "1,5",
    "1.2.3",
    "$4",
    "",
    "1" * 39,
    "1e",
    "--1",
    "1 000",
]:
    CASES.append(value_case("quantity", value))
for value in ["abc", "NaN", "-Infinity", "1,5", "12.5.1", "€3", "", "0x10", "9" * 50]:
    CASES.append(value_case("price", value))
for value in ["USX", "XAU", "", "US", "DOLLARS", "12"]:
    CASES.append(value_case("currency", value))
for value in ["-1", "abc", "1,25"]:
    CASES.append(value_case("commission", value))
for value in ["0", "-50", "ten"]:
    CASES.append(value_case("multiplier", value))
for column in ["fill_id", "account", "instrument"]:
    CASES.append(value_case(column, "  ", "a non-empty value"))
CASES.append(value_case("currency", "EUR", "one currency per account and instrument"))
CASES.append(value_case("multiplier", "50", "one multiplier per account and instrument"))

# File structure.
CASES += [
    csv_case("truncated line", HEADER + GOOD + "f2,A,X,sell,4\n", ["row 3: expected 10 fields"]),
    csv_case("too many fields", HEADER + GOOD + _row().replace("\n", ",extra\n"), ["row 3"]),
    csv_case("stray quote", HEADER + GOOD + _row(price='1"01'), ["row 3"]),
    csv_case("unclosed quote", HEADER + GOOD + _row(price='"101'), ["quoting"]),
    csv_case(
        "bad utf-8",
        (HEADER + GOOD).encode() + _row(account="A\xff").encode("latin-1"),
        ["row 3: expected UTF-8 text"],
    ),
    csv_case("utf-16 file", (HEADER + GOOD).encode("utf-16"), ["UTF-8"]),
    csv_case("empty file", b"", ["the file is empty"]),
    csv_case("blank header", "\n" + GOOD, ["row 1 is blank"]),
    csv_case(
        "repeated header",
        HEADER.replace("price", "quantity") + GOOD,
        ["column #6: expected each column named once"],
    ),
    csv_case(
        "blank header name",
        HEADER.replace("price", "") + GOOD,
        ["column #6: expected a name for every column"],
    ),
    csv_case(
        "missing column",
        HEADER.replace(",currency", "") + GOOD.replace(",USD", ""),
        ["missing required column: currency"],
    ),
    csv_case(
        "huge field",
        HEADER + GOOD + _row(quantity="7" * 1_000_000),
        ["row 3, column quantity: expected at most 38 digits"],
    ),
    csv_case(
        "duplicate id",
        HEADER + GOOD + _row(fill_id="f1"),
        ["row 3, column fill_id: expected a unique fill_id"],
    ),
    csv_case("exact repeat", HEADER + GOOD + GOOD, ["row 3: expected no exact repeat of row 2"]),
    csv_case("binary junk", bytes(range(256)) * 4, ["fills.csv"]),
    csv_case("nul bytes", HEADER.encode() + b"\x00" * 40 + b"\n", ["row 2"]),
]
CASES.append(
    Case(
        "unknown extension",
        {"fills.dat": (HEADER + GOOD).encode()},
        ["fills.dat"],
        ["cannot tell the format from the extension"],
    )
)
CASES.append(
    Case(
        "unknown forced format",
        {"fills.csv": (HEADER + GOOD).encode()},
        ["fills.csv", "--input-format", "xml"],
        ["input format: expected one of"],
    )
)
CASES.append(Case("missing file", {}, ["nothing.csv"], ["nothing.csv: no such file"]))
CASES.append(
    Case(
        "naive time in a skipped hour",
        {"fills.csv": (HEADER + GOOD + _row(time="2026-03-08T02:30:00")).encode()},
        ["fills.csv", "--timezone", "America/New_York"],
        ["row 3, column time: expected a local time that occurs exactly once"],
    )
)

# Profiles: mistakes in the profile name the file and the key; values not in its format the row.
PROFILE_HEADER = "Ref;Acct;Sym;B/S;Qty;Px;When;Ccy;Comm;Fee\n"
PROFILE_GOOD = "T1;A;X;BOT;1.000;101,25;02.11.2026 10:00;EUR;1,50;0,25\n"
PROFILE = """
[source]
delimiter = ";"
[columns]
fill_id = "Ref"
account = "Acct"
instrument = "Sym"
side = "B/S"
quantity = "Qty"
price = "Px"
time = "When"
currency = "Ccy"
commission = ["Comm", "Fee"]
[values.side]
BOT = "buy"
SLD = "sell"
[numbers]
decimal = ","
thousands = "."
parentheses = true
[time]
format = "%d.%m.%Y %H:%M"
timezone = "Europe/Paris"
"""


def profile_row_case(name: str, row: str, expected: str) -> Case:
    files = {
        "fills.csv": (PROFILE_HEADER + PROFILE_GOOD + row).encode(),
        "p.toml": PROFILE.encode(),
    }
    return Case(name, files, ["fills.csv", "--profile", "p.toml"], ["fills.csv row 3", expected])


CASES += [
    profile_row_case(
        "unmapped side",
        "T2;A;X;HOLD;1;1;02.11.2026 10:00;EUR;0;0\n",
        "column B/S (side): expected one of BOT, SLD",
    ),
    profile_row_case(
        "dot decimal in comma file",
        "T2;A;X;SLD;1;1.5;02.11.2026 10:00;EUR;0;0\n",
        "column Px: expected a number written like 1.234,5",
    ),
    profile_row_case(
        "misplaced thousands",
        "T2;A;X;SLD;12.34;1;02.11.2026 10:00;EUR;0;0\n",
        "column Qty: expected a number",
    ),
    profile_row_case(
        "two decimal commas",
        "T2;A;X;SLD;1;1,2,3;02.11.2026 10:00;EUR;0;0\n",
        "column Px: expected a number",
    ),
    profile_row_case(
        "unclosed parenthesis",
        "T2;A;X;SLD;1;(3,25;02.11.2026 10:00;EUR;0;0\n",
        "column Px: expected a number",
    ),
    profile_row_case(
        "time not in format",
        "T2;A;X;SLD;1;1;2026-11-02 10:00;EUR;0;0\n",
        "column When: expected a time in the profile's format",
    ),
    profile_row_case(
        "impossible date",
        "T2;A;X;SLD;1;1;31.11.2026 10:00;EUR;0;0\n",
        "column When: expected a time",
    ),
    profile_row_case(
        "summed part not a number",
        "T2;A;X;SLD;1;1;02.11.2026 10:00;EUR;0;x\n",
        "column Fee: expected a number",
    ),
    profile_row_case(
        "negative quantity",
        "T2;A;X;SLD;-1;1;02.11.2026 10:00;EUR;0;0\n",
        "column Qty (quantity): expected a decimal > 0",
    ),
    profile_row_case(
        "bad currency",
        "T2;A;X;SLD;1;1;02.11.2026 10:00;EURO;0;0\n",
        "column Ccy (currency): expected an ISO 4217 currency code",
    ),
]


def profile_case(name: str, profile: str, expected: str) -> Case:
    files = {"fills.csv": (PROFILE_HEADER + PROFILE_GOOD).encode(), "p.toml": profile.encode()}
    return Case(name, files, ["fills.csv", "--profile", "p.toml"], ["p.toml", expected])


CASES += [
    profile_case("toml syntax", "[source\n", "expected a TOML profile, found a syntax error"),
    profile_case("unknown key", PROFILE + "[colour]\nred = 1\n", "key colour: expected no key"),
    profile_case(
        "unknown source key",
        PROFILE.replace("[source]", "[source]\nsheeet = 1"),
        "key source.sheeet",
    ),
    profile_case("long delimiter", PROFILE.replace('";"', '";;"'), "key source.delimiter"),
    profile_case(
        "unknown encoding",
        PROFILE.replace("[source]", '[source]\nencoding = "x-42"'),
        "key source.encoding: expected a Python codec name",
    ),
    profile_case(
        "unknown zone",
        PROFILE.replace("Europe/Paris", "Mars/Olympus"),
        "key time.timezone: expected an IANA zone name",
    ),
    profile_case(
        "bad decimal mark", PROFILE.replace('decimal = ","', 'decimal = ";"'), "key numbers.decimal"
    ),
    profile_case(
        "same separators",
        PROFILE.replace('thousands = "."', 'thousands = ","'),
        "a thousands separator other than the decimal separator",
    ),
    profile_case(
        "side maps to hold",
        PROFILE.replace('SLD = "sell"', 'SLD = "hold"'),
        "values.side: values buy or sell, found 'hold'",
    ),
    profile_case(
        "list for one column",
        PROFILE.replace('price = "Px"', 'price = ["Px", "Qty"]'),
        "columns.price: one source column name",
    ),
    profile_case(
        "not a canonical column",
        PROFILE.replace("[columns]", '[columns]\nqty = "Qty"'),
        "keys that are canonical fills columns",
    ),
    profile_case(
        "mapped and constant",
        PROFILE + '[constants]\naccount = "B"\n',
        "each column either mapped or constant",
    ),
    profile_case(
        "signed with a side",
        PROFILE + '[signs]\nquantity = "signed"\n',
        "no side column when signs.quantity = 'signed'",
    ),
    profile_case(
        "bad sign rule", PROFILE + '[signs]\ncommission = "upside-down"\n', "key signs.commission"
    ),
    profile_case(
        "column not in file",
        PROFILE.replace('"Fee"', '"Fees"'),
        "'Fees' (p.toml key columns.commission)",
    ),
    profile_case(
        "bad format", PROFILE.replace("[source]", '[source]\nformat = "xml"'), "key source.format"
    ),
    profile_case(
        "negative header row",
        PROFILE.replace("[source]", "[source]\nheader_row = 0"),
        "key source.header_row",
    ),
]
CASES.append(
    Case(
        "missing profile",
        {"fills.csv": (HEADER + GOOD).encode()},
        ["fills.csv", "--profile", "none.toml"],
        ["none.toml: profile not found"],
    )
)


# Excel.
def _excel(
    name: str, cells: list[list[object]], expected: list[str], profile: str, sheet: str
) -> Case:
    case = Case(name, {}, ["book.xlsx"], ["book.xlsx", *expected])
    case.workbook = (cells, sheet)
    if profile:
        case.files["p.toml"] = profile.encode()
        case.args += ["--profile", "p.toml"]
    return case


XHEAD: list[object] = [
    "fill_id",
    "account",
    "instrument",
    "side",
    "quantity",
    "price",
    "time",
    "currency",
]
XGOOD: list[object] = ["f1", "A", "X", "buy", 10, 100.5, "2026-11-02T14:30:00Z", "USD"]
CASES += [
    _excel("empty sheet", [], ["sheet 'Fills' is empty"], "", "Fills"),
    _excel(
        "inexact double",
        [XHEAD, XGOOD, ["f2", "A", "X", "sell", 4, 101.255, "2026-11-02T15:00:00Z", "USD"]],
        ["row 3, column price: expected a number with at most 2"],
        "[numbers.places]\nprice = 2\n",
        "Fills",
    ),
    _excel(
        "float noise without places",
        [XHEAD, XGOOD, ["f2", "A", "X", "sell", 1 / 3, 101, "2026-11-02T15:00:00Z", "USD"]],
        ["row 3, column quantity: expected at most 8 decimal"],
        "",
        "Fills",
    ),
    _excel(
        "text in a number column",
        [XHEAD, XGOOD, ["f2", "A", "X", "sell", "four", 101, "2026-11-02T15:00:00Z", "USD"]],
        ["row 3, column quantity: expected a decimal > 0"],
        "",
        "Fills",
    ),
    _excel(
        "repeated sheet header",
        [[*XHEAD[:7], "side"], XGOOD],
        ["column #8: expected each column"],
        "",
        "Fills",
    ),
    _excel(
        "missing sheet",
        [XHEAD, XGOOD],
        ["expected a sheet named 'Trades'"],
        '[source]\nsheet = "Trades"\n',
        "Fills",
    ),
    _excel(
        "sheet number out of range",
        [XHEAD, XGOOD],
        ["sheet number 3: expected 1 to 1"],
        "[source]\nsheet = 3\n",
        "Fills",
    ),
    _excel(
        "header row blank",
        [XHEAD, XGOOD],
        ["row 5 is blank"],
        "[source]\nheader_row = 5\n",
        "Fills",
    ),
    _excel(
        "bad date cell text",
        [XHEAD, XGOOD, ["f2", "A", "X", "sell", 4, 101, "soon", "USD"]],
        ["row 3, column time"],
        "",
        "Fills",
    ),
    _excel(
        "unknown side",
        [XHEAD, XGOOD, ["f2", "A", "X", "flat", 4, 101, "2026-11-02T15:00:00Z", "USD"]],
        ["row 3, column side"],
        "",
        "Fills",
    ),
]
CASES.append(
    Case(
        "not a workbook",
        {"book.xlsx": b"this is not a zip file"},
        ["book.xlsx"],
        ["book.xlsx: cannot be read as a spreadsheet"],
    )
)


# JSON lines.
JGOOD = (
    '{"fill_id": "f1", "account": "A", "instrument": "X", "side": "buy", "quantity": 10, '
    '"price": 100.5, "time": "2026-11-02T14:30:00Z", "currency": "USD"}\n'
)


def jsonl_case(name: str, line: str, expected: str) -> Case:
    return Case(
        name,
        {"fills.jsonl": (JGOOD + line).encode()},
        ["fills.jsonl"],
        ["fills.jsonl row 2", expected],
    )


CASES += [
    jsonl_case("truncated object", JGOOD[:40] + "\n", "expected one JSON object on the line"),
    jsonl_case("array", "[1, 2]\n", "expected a JSON object"),
    jsonl_case(
        "nested value",
        JGOOD.replace('"A"', '{"desk": 1}'),
        "column account: expected a string, number",
    ),
    jsonl_case("NaN constant", JGOOD.replace("100.5", "NaN"), "expected one JSON object"),
    jsonl_case("trailing comma", JGOOD.replace("}", ",}"), "expected one JSON object"),
    jsonl_case("single quotes", JGOOD.replace('"', "'"), "expected one JSON object"),
    jsonl_case(
        "bad quantity",
        JGOOD.replace("10,", '"ten",').replace('"f1"', '"f2"'),
        "column quantity: expected a decimal > 0",
    ),
    jsonl_case(
        "negative json quantity",
        JGOOD.replace("10,", "-10,").replace('"f1"', '"f2"'),
        "column quantity: expected a decimal > 0",
    ),
    jsonl_case("stray text", "hello\n", "expected one JSON object"),
    jsonl_case("bad side", JGOOD.replace('"buy"', '"long"').replace('"f1"', '"f2"'), "column side"),
]
CASES.append(
    Case(
        "jsonl bad encoding",
        {"fills.jsonl": JGOOD.encode() + b'{"a": "\xff"}\n'},
        ["fills.jsonl"],
        ["fills.jsonl", "expected utf-8 text"],
    )
)
CASES.append(Case("jsonl empty", {"fills.jsonl": b"\n\n"}, ["fills.jsonl"], ["no records"]))


# FIX (4.4 framing rule, tests/fixmsg.py).
def fix_case(name: str, line: str, expected: str, first: str | None = None) -> Case:
    good = first if first is not None else message(execution("E1", "F", qty="1", px="10"))
    return Case(
        name,
        {"session.fix": (good + "\n" + line + "\n").encode("latin-1")},
        ["session.fix"],
        ["session.fix row 2", expected],
    )


def fill_without(tag: int) -> str:
    fields = [(t, v) for t, v in execution("E2", "F", qty="1", px="10") if t != tag]
    return message(fields)


E2 = execution("E2", "F", qty="1", px="10")
CASES += [
    fix_case("bad checksum", message(E2, checksum="001"), "column 10 (CheckSum): expected"),
    fix_case("bad body length", message(E2, body_length=3), "column 9 (BodyLength): expected"),
    fix_case("truncated message", message(E2)[:60], "expected a message framed 8=, 9=, 35="),
    fix_case(
        "field without equals", message(E2).replace("\x0155=KSTL", "\x0155KSTL"), "column field"
    ),
    fix_case(
        "body length not second",
        message(E2).replace("8=FIX.4.4\x01", "8=FIX.4.4\x0134=9\x01"),
        "expected a message framed",
    ),
    *(
        fix_case(f"fill without tag {tag}", fill_without(tag), f"column {tag} (")
        for tag in (17, 31, 32, 54, 55, 60, 1, 15)
    ),
    fix_case(
        "unknown side code",
        message(execution("E2", "F", side="9", qty="1", px="10")),
        "column 54 (Side): expected 1 (buy)",
    ),
    fix_case(
        "bad transact time",
        message(execution("E2", "F", qty="1", px="10", time="2026-11-02 14:30")),
        "column 60 (TransactTime): expected a UTC time",
    ),
    fix_case(
        "bad comm type",
        message(execution("E2", "F", qty="1", px="10", extra=[(12, "1"), (13, "Z")])),
        "column 13 (CommType)",
    ),
    fix_case(
        "cancel of unknown exec",
        message(execution("E2", "H", ref="E7", qty="1", px="10")),
        "column 19 (ExecRefID): expected the ExecID of a live fill",
    ),
    fix_case(
        "correct of unknown exec",
        message(execution("E2", "G", ref="E7", qty="1", px="10")),
        "column 19 (ExecRefID)",
    ),
    fix_case(
        "cancel without ref",
        message(execution("E2", "H", qty="1", px="10")),
        "column 19 (ExecRefID)",
    ),
    fix_case(
        "exec id clash",
        message(execution("E1", "F", qty="2", px="10", seq=2)),
        "column 17 (ExecID): expected an ExecID used once",
    ),
    fix_case(
        "zero last qty",
        message(execution("E2", "F", qty="0", px="10")),
        "column 32 (LastQty): expected a decimal > 0",
    ),
    fix_case(
        "letters in last px",
        message(execution("E2", "F", qty="1", px="ten")),
        "column 31 (LastPx): expected a decimal number",
    ),
    fix_case(
        "unknown currency",
        message(execution("E2", "F", qty="1", px="1", currency="ZZZ")),
        "column 15 (Currency): expected an ISO 4217",
    ),
    fix_case(
        "cancel of busted fill",
        message(execution("E3", "H", ref="E1", qty="1", px="10", seq=3)),
        "column 19 (ExecRefID)",
        first=message(execution("E1", "F", qty="1", px="10"))
        + "\n"
        + message(execution("E2", "H", ref="E1", qty="1", px="10", seq=2)),
    ),
]
CASES[-1].expected[0] = "session.fix row 3"
CASES.append(
    Case(
        "fix 4.2 truncated",
        {"session.fix": message(E2, version="FIX.4.2")[:-8].encode()},
        ["session.fix"],
        ["session.fix row 1", "expected a message framed"],
    )
)


def _materialise(case: Case, folder: Path) -> None:
    for name, data in case.files.items():
        (folder / name).write_bytes(data)
    if case.workbook is not None:
        cells, sheet = case.workbook
        book = xlsxwriter.Workbook(str(folder / "book.xlsx"))
        worksheet = book.add_worksheet(sheet)
        for r, row in enumerate(cells):
            worksheet.write_row(r, 0, row)
        book.close()


def test_there_are_at_least_100_cases() -> None:
    assert len(CASES) >= 100
    assert len({c.name for c in CASES}) == len(CASES)


@pytest.mark.parametrize("command", ["check", "match"])
@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_malformed_input_is_a_clear_error(
    case: Case, command: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    _materialise(case, tmp_path)
    args = [command, *case.args, *case.extra_args]
    if command == "match":
        args += ["--out", "out"]
    result = CliRunner().invoke(app, args, env={"COLUMNS": "100", "NO_COLOR": "1"})
    shown = result.stdout + result.stderr
    assert result.exit_code == 2, shown
    assert result.exception is None or isinstance(result.exception, SystemExit), shown
    assert "Traceback" not in shown
    for text in case.expected:
        assert text in shown, shown
    assert not (tmp_path / "out").exists()


def test_an_inexact_excel_cell_keeps_its_value_in_the_rejects_file(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    bad = ["f2", "A", "X", "sell", 1 / 3, 101, "2026-11-02T15:00:00Z", "USD"]
    case = _excel("rejected double", [XHEAD, XGOOD, bad], [], "", "Fills")
    _materialise(case, tmp_path)
    args = ["check", "book.xlsx", "--rejects", "rejects.csv"]
    result = CliRunner().invoke(app, args, env={"COLUMNS": "100", "NO_COLOR": "1"})
    assert result.exit_code == 2, result.output
    rejected = (tmp_path / "rejects.csv").read_text().splitlines()
    assert len(rejected) == 2
    assert f'"{1 / 3!r}"' in rejected[1]  # the cell as the reader saw it, not a blank
