"""FIX execution logs: ExecutionReports (35=8) in tag=value form become fills.

One message a line, fields split by SOH (``\\x01``) or ``|`` as logs commonly print them, with any
log prefix before ``8=`` ignored. BodyLength(9) and CheckSum(10) are checked by the specification's
rule (strict by default; lenient turns a mismatch into a warning and keeps the message).

- FIX 4.3 and later (4.4, FIXT.1.1): ExecType(150) F is a fill, G (Trade Correct) replaces the fill
  that ExecRefID(19) names with the corrected quantity, price and commission, H (Trade Cancel)
  removes it.
- FIX 4.0 to 4.2: ExecTransType(20) 0 with ExecType 1 or 2 is a fill; ExecTransType 1 (cancel) and
  2 (correct) with ExecRefID do what H and G do.
- ExecID(17) is unique per session and trading day, so fills are keyed on (SenderCompID,
  TargetCompID, trade date, ExecID) and ``fill_id`` is made from that. A message whose key was
  already seen is a resend: dropped and counted when its content is the same, an error naming both
  lines when it differs.
- Every other message is skipped and counted, so each line lands in exactly one count.
"""

from __future__ import annotations

import decimal
import re
from collections import Counter
from dataclasses import dataclass, field
from decimal import Decimal
from pathlib import Path

import pandas as pd

from reconcile import schema
from reconcile.errors import Problem
from reconcile.io.readers.profiles import FixOptions
from reconcile.money import EXACT, minor_unit, round_to

SOH = "\x01"
TAG_NAMES = {
    "1": "Account",
    "8": "BeginString",
    "9": "BodyLength",
    "10": "CheckSum",
    "12": "Commission",
    "13": "CommType",
    "15": "Currency",
    "17": "ExecID",
    "19": "ExecRefID",
    "20": "ExecTransType",
    "31": "LastPx",
    "32": "LastQty",
    "35": "MsgType",
    "37": "OrderID",
    "49": "SenderCompID",
    "54": "Side",
    "55": "Symbol",
    "56": "TargetCompID",
    "60": "TransactTime",
    "75": "TradeDate",
    "150": "ExecType",
    "207": "SecurityExchange",
    "231": "ContractMultiplier",
}
#: How errors name the canonical columns of a fill read from FIX.
SHOWN_COLUMNS = {
    "fill_id": "17 (ExecID)",
    "account": "1 (Account)",
    "instrument": "55 (Symbol)",
    "side": "54 (Side)",
    "quantity": "32 (LastQty)",
    "price": "31 (LastPx)",
    "time": "60 (TransactTime)",
    "currency": "15 (Currency)",
    "commission": "12 (Commission)",
    "multiplier": "231 (ContractMultiplier)",
}
#: Side(54) codes: 1 buy, 2 sell, 3 buy minus, 4 sell plus, 5 sell short, 6 sell short exempt.
SIDES = {"1": "buy", "2": "sell", "3": "buy", "4": "sell", "5": "sell", "6": "sell"}
#: CommType(13): 1 per unit, 2 percent, 3 absolute, 6 points per contract (x multiplier),
#: 7 basis points, 8 amount per contract.
COMM_TYPES = ("1", "2", "3", "6", "7", "8")
#: Session-level tags that differ between a message and its resend.
SESSION_TAGS = frozenset({"8", "9", "10", "34", "43", "52", "97", "122", "369"})
LEGACY = ("FIX.4.0", "FIX.4.1", "FIX.4.2")
_FIELDS = re.compile(r"(?:[0-9]+=[^\x01]*\x01)+")
_TIME = re.compile(r"^([0-9]{4})([0-9]{2})([0-9]{2})-([0-9]{2}:[0-9]{2}:[0-9]{2})(\.[0-9]{1,9})?$")


def name(tag: str) -> str:
    return f"{tag} ({TAG_NAMES[tag]})" if tag in TAG_NAMES else tag


@dataclass
class Message:
    line: int
    text: str
    tags: dict[str, str]

    def get(self, tag: str) -> str:
        return self.tags.get(tag) or ""

    def content(self) -> dict[str, str]:
        return {t: v for t, v in self.tags.items() if t not in SESSION_TAGS}


@dataclass
class FixLog:
    """What a FIX log yields: fill rows, row problems, warnings and the count of every line."""

    frame: pd.DataFrame
    problems: list[Problem]
    warnings: list[str]
    counts: dict[str, int]
    skipped_by_kind: dict[str, int]
    raw_lines: dict[int, str]


@dataclass
class _Fill:
    line: int
    message: Message
    original: Message


@dataclass
class _Reader:
    source: str
    options: FixOptions
    lenient: bool
    constants: dict[str, str]
    problems: list[Problem] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    counts: Counter[str] = field(default_factory=Counter)
    skipped: Counter[str] = field(default_factory=Counter)
    raw_lines: dict[int, str] = field(default_factory=dict)
    seen: dict[tuple[str, str, str, str], Message] = field(default_factory=dict)
    live: dict[int, _Fill] = field(default_factory=dict)
    alias: dict[tuple[str, str, str], int] = field(default_factory=dict)
    instrument_tags: list[str] = field(default_factory=list)

    def problem(self, line: int, column: str | None, expected: str, found: str | None) -> None:
        self.problems.append(Problem(self.source, expected, found, line, column, "bad message"))

    def read(self, path: Path) -> FixLog:
        for number, raw in enumerate(path.read_bytes().split(b"\n"), start=1):
            text = raw.rstrip(b"\r").decode("latin-1")
            if not text.strip():
                continue
            self.counts["read"] += 1
            self.raw_lines[number] = text.replace(SOH, "|")
            message = self.frame_message(number, text)
            if message is not None:
                self.dispatch(message)
        rows = [self.fill_row(f) for f in sorted(self.live.values(), key=lambda f: f.line)]
        rows = [r for r in rows if r is not None]
        columns = [*schema.FILL_COLUMNS, schema.SOURCE_ROW]
        frame = pd.DataFrame(rows, columns=columns)
        for column in schema.FILL_COLUMNS:
            frame[column] = frame[column].astype("str")
        frame[schema.SOURCE_ROW] = frame[schema.SOURCE_ROW].astype("int64")
        counts = {k: self.counts[k] for k in ("read", "superseded", "cancels", "resent", "skipped")}
        return FixLog(
            frame, self.problems, self.warnings, counts, dict(self.skipped), self.raw_lines
        )

    # framing -----------------------------------------------------------------------------

    def frame_message(self, line: int, text: str) -> Message | None:
        start = text.find("8=FIX")
        if start < 0:
            self.counts["skipped"] += 1
            self.skipped["not a FIX message"] += 1
            return None
        body = text[start:]
        delimiter = SOH if SOH in body else "|"
        fields = body.split(delimiter)
        if fields and fields[-1] == "":
            fields.pop()
        wire = delimiter.join(fields) + delimiter
        if _FIELDS.fullmatch(wire if delimiter == SOH else wire.replace("|", SOH)) is None:
            self.report_bad_field(line, fields)
            return None
        pairs = [(tag, value) for tag, _, value in (item.partition("=") for item in fields)]
        order = [t for t, _ in pairs]
        if order[:3] != ["8", "9", "35"] or order[-1] != "10":
            self.problem(
                line,
                None,
                "a message framed 8=, 9=, 35= ... 10= (truncated or not a whole message?)",
                _short(body),
            )
            return None
        if not self.check_frame(line, body, delimiter, pairs):
            return None
        return Message(line, body, dict(pairs))

    def report_bad_field(self, line: int, fields: list[str]) -> None:
        for position, item in enumerate(fields, start=1):
            tag, equals, _ = item.partition("=")
            if not equals or not tag.isdigit():
                self.problem(line, f"field {position}", "a tag=value field", item)
                return

    def check_frame(
        self, line: int, body: str, delimiter: str, pairs: list[tuple[str, str]]
    ) -> bool:
        wire = body.replace(delimiter, SOH) if delimiter != SOH else body
        trailer = wire.rfind(SOH + "10=") + 1
        after_length = wire.index(SOH, wire.index("9=")) + 1
        length = len(wire[after_length:trailer].encode("latin-1"))
        checksum = sum(wire[:trailer].encode("latin-1")) % 256
        declared_length, declared_sum = pairs[1][1], pairs[-1][1]
        bad = []
        if declared_length != str(length):
            bad.append(("9", str(length), declared_length))
        if declared_sum != f"{checksum:03d}":
            bad.append(("10", f"{checksum:03d}", declared_sum))
        for tag, expected, found in bad:
            if self.lenient:
                self.warnings.append(
                    f"{self.source} row {line}, column {name(tag)}: expected {expected}, "
                    f"found {found!r}; kept (--fix-lenient)"
                )
            else:
                self.problem(line, name(tag), f"{expected} (by the FIX rule)", found)
        return self.lenient or not bad

    # meaning -----------------------------------------------------------------------------

    def dispatch(self, message: Message) -> None:
        kind = message.get("35")
        if kind != "8":
            self.counts["skipped"] += 1
            self.skipped[f"MsgType {kind}"] += 1
            return
        if self.is_resend(message):
            return
        action = _action(message)
        if action == "fill":
            self.add_fill(message)
        elif action in ("correct", "cancel"):
            self.amend(message, action)
        else:
            self.counts["skipped"] += 1
            self.skipped[f"ExecutionReport {action}"] += 1

    def key(self, message: Message) -> tuple[str, str, str, str]:
        when = message.get("75") or message.get("60")[:8] or message.get("52")[:8]
        return (message.get("49"), message.get("56"), when, message.get("17"))

    def is_resend(self, message: Message) -> bool:
        if not message.get("17"):
            return False
        key = self.key(message)
        first = self.seen.get(key)
        if first is None:
            self.seen[key] = message
            return False
        if first.content() == message.content():
            self.counts["resent"] += 1
            return True
        differing = sorted(
            set(first.content().keys() | message.content().keys())
            - {t for t in first.content() if first.content()[t] == message.content().get(t)}
        )
        self.problem(
            message.line,
            name("17"),
            f"an ExecID used once, or resent with the same content (line {first.line} has it "
            f"with different {', '.join(name(t) for t in differing[:3])})",
            message.get("17"),
        )
        return True

    def add_fill(self, message: Message) -> None:
        if self.check_fill_tags(message):
            self.live[message.line] = _Fill(message.line, message, message)
            self.alias[self.ref(message, "17")] = message.line

    def amend(self, message: Message, action: str) -> None:
        if not message.get("19"):
            self.problem(message.line, name("19"), f"the ExecID the trade {action} applies to", "")
            return
        target = self.alias.get(self.ref(message, "19"))
        if target is None or target not in self.live:
            self.problem(
                message.line,
                name("19"),
                f"the ExecID of a live fill earlier in this log for the trade {action} "
                "(the target may sit in another day's log)",
                message.get("19"),
            )
            return
        before = self.live[target]
        if action == "correct":
            if not self.check_fill_tags(message, corrected=before.original):
                return
            del self.live[target]
            self.live[message.line] = _Fill(message.line, message, before.original)
            self.alias[self.ref(message, "17")] = message.line
            for ref, line in list(self.alias.items()):
                if line == target:
                    self.alias[ref] = message.line
        else:
            del self.live[target]
            self.counts["cancels"] += 1
        self.counts["superseded"] += 1

    def ref(self, message: Message, tag: str) -> tuple[str, str, str]:
        return (message.get("49"), message.get("56"), message.get(tag))

    def check_fill_tags(self, message: Message, corrected: Message | None = None) -> bool:
        required = ["17", "31", "32"]
        if corrected is None:
            required += ["54", "55", "60", *self.options_tags()]
            required += [
                t for t, c in (("1", "account"), ("15", "currency")) if c not in self.constants
            ]
        before = len(self.problems)
        missing = [t for t in required if not message.get(t)]
        for tag in missing:
            self.problem(message.line, name(tag), f"a value for {name(tag)} in a fill", "")
        side = message.get("54") or (corrected.get("54") if corrected else "")
        if side and side not in SIDES:
            self.problem(
                message.line,
                name("54"),
                "1 (buy), 2 (sell), 3, 4 (sell plus), 5 or 6 (short)",
                side,
            )
        comm_type = message.get("13")
        if message.get("12") and comm_type and comm_type not in COMM_TYPES:
            self.problem(message.line, name("13"), "one of " + ", ".join(COMM_TYPES), comm_type)
        when = message.get("60") if corrected is None else ""
        if when and not _TIME.match(when):
            self.problem(message.line, name("60"), "a UTC time YYYYMMDD-HH:MM:SS[.sss]", when)
        return len(self.problems) == before

    def options_tags(self) -> list[str]:
        return self.instrument_tags

    def __post_init__(self) -> None:
        self.instrument_tags = [str(t) for t in self.options.instrument if t != 55]

    def fill_row(self, fill: _Fill) -> dict[str, object] | None:
        tags = {**fill.original.tags, **{k: v for k, v in fill.message.tags.items() if v}}
        original = fill.original
        sender, target = original.get("49"), original.get("56")
        trade_date = self.key(original)[2]
        instrument = self.options.instrument_separator.join(
            tags.get(str(t), "") for t in self.options.instrument
        )
        venue = next((tags[str(t)] for t in self.options.venue if tags.get(str(t))), "")
        return {
            "fill_id": f"{sender}-{target}-{trade_date}-{original.get('17')}",
            "account": self.constants.get("account") or tags.get("1", ""),
            "instrument": instrument,
            "side": SIDES.get(tags.get("54", ""), tags.get("54", "")),
            "quantity": tags.get("32", ""),
            "price": tags.get("31", ""),
            "time": _iso_time(original.get("60")),
            "currency": self.constants.get("currency") or tags.get("15", ""),
            "commission": _commission(fill.message, tags, self.constants.get("currency")),
            "multiplier": tags.get("231", ""),
            "order_id": tags.get("37", ""),
            "venue": venue,
            schema.SOURCE_ROW: fill.line,
        }


def _action(message: Message) -> str:
    exec_type = message.get("150")
    if message.get("8") in LEGACY:
        trans = message.get("20") or "0"
        if trans == "1":
            return "cancel"
        if trans == "2":
            return "correct"
        if trans == "0" and (exec_type or message.get("39")) in ("1", "2"):
            return "fill"
        return f"ExecTransType {trans} ExecType {exec_type or '-'}"
    actions = {"F": "fill", "G": "correct", "H": "cancel"}
    return actions.get(exec_type, f"ExecType {exec_type or '-'}")


def _iso_time(value: str) -> str:
    match = _TIME.match(value)
    if match is None:
        return value
    year, month, day, clock, fraction = match.groups()
    return f"{year}-{month}-{day}T{clock}{fraction or ''}Z"


def _commission(message: Message, tags: dict[str, str], constant: str | None) -> str:
    """Commission(12) as an amount, by CommType(13); a computed amount is rounded to the minor unit.

    Only the message that carries the commission counts: a correction without tag 12 keeps the
    original's commission (it is among ``tags``).
    """
    value = tags.get("12", "")
    kind = tags.get("13", "") or "3"
    if not value or kind == "3":
        return value
    try:
        with decimal.localcontext(EXACT):
            rate, quantity = Decimal(value), Decimal(tags.get("32", ""))
            price, multiplier = Decimal(tags.get("31", "")), Decimal(tags.get("231") or "1")
            notional = quantity * price * multiplier
            amount = {
                "1": rate * quantity,
                "2": rate * notional,  # FIX writes a percentage as a fraction: 5% is .05
                "6": rate * quantity * multiplier,
                "7": rate * notional / 10000,
                "8": rate * quantity,
            }[kind]
    except (decimal.InvalidOperation, KeyError):
        return value  # the bad value is reported when the fill is validated
    places = minor_unit(constant or tags.get("15", "").upper())
    # A negative rate stays negative, so validation reports it as it does a negative amount.
    shown = amount if places is None else round_to(amount, places)
    return format(shown, "f")


def _short(text: str, limit: int = 60) -> str:
    return text.replace(SOH, "|")[:limit]


def read_fix(
    path: Path,
    *,
    options: FixOptions | None = None,
    lenient: bool = False,
    constants: dict[str, str] | None = None,
) -> FixLog:
    """Read a FIX log into fill rows (text, canonical columns) and what happened to every line."""
    reader = _Reader(str(path), options or FixOptions(), lenient, dict(constants or {}))
    return reader.read(path)
