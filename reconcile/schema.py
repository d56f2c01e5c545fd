"""Canonical columns of every table the package reads or writes.

Readers deliver these columns, the core computes on them and writers emit them, so a column name
lives in one place. Decimal columns are Arrow decimals (exact), times are UTC timestamps.
"""

from __future__ import annotations

from typing import Final, Literal

#: Source row of each input record (the header is row 1), kept so later errors can name it.
SOURCE_ROW: Final = "source_row"

SIDES: Final = {"buy": "buy", "b": "buy", "sell": "sell", "s": "sell"}
FINANCING_KINDS: Final = ("swap", "financing", "borrow", "dividend", "fee", "other")
METHODS: Final = ("fifo", "lifo", "hifo", "average")
COMMISSION_CONVENTIONS: Final = ("at-close", "at-fill")

Method = Literal["fifo", "lifo", "hifo", "average"]
CommissionConvention = Literal["at-close", "at-fill"]

FILL_REQUIRED: Final = (
    "fill_id",
    "account",
    "instrument",
    "side",
    "quantity",
    "price",
    "time",
    "currency",
)
#: Optional fill columns and the value a blank or absent one takes.
FILL_DEFAULTS: Final = {"commission": "0", "multiplier": "1", "order_id": "", "venue": ""}
FILL_COLUMNS: Final = (*FILL_REQUIRED, *FILL_DEFAULTS)

FINANCING_COLUMNS: Final = (
    "event_id",
    "account",
    "instrument",
    "time",
    "amount",
    "currency",
    "kind",
)

OPENING_REQUIRED: Final = (
    "account",
    "instrument",
    "currency",
    "direction",
    "open_fill_id",
    "open_time",
    "quantity",
    "open_price",
)
OPENING_DEFAULTS: Final = {"commission": "0", "financing": "0", "multiplier": "1", "cost_basis": ""}
OPENING_COLUMNS: Final = (*OPENING_REQUIRED, *OPENING_DEFAULTS)

CLOSED_LOTS: Final = (
    "account",
    "instrument",
    "currency",
    "direction",
    "open_fill_id",
    "close_fill_id",
    "open_time",
    "close_time",
    "quantity",
    "open_price",
    "close_price",
    "gross_pnl",
    "commission",
    "financing",
    "net_pnl",
    "multiplier",
    "gross_pnl_unrounded",
    "trip_id",
)
ROUND_TRIPS: Final = (
    "trip_id",
    "account",
    "instrument",
    "currency",
    "direction",
    "open_time",
    "close_time",
    "max_quantity",
    "entry_price",
    "exit_price",
    "fills",
    "gross_pnl",
    "commission",
    "financing",
    "net_pnl",
    "holding_time",
)
OPEN_LOTS: Final = (
    "account",
    "instrument",
    "currency",
    "direction",
    "open_fill_id",
    "open_time",
    "quantity",
    "open_price",
    "commission",
    "financing",
    "multiplier",
    "cost_basis",
    "trip_id",
)
POSITIONS: Final = (
    "account",
    "instrument",
    "currency",
    "multiplier",
    "quantity",
    "average_price",
    "realized_gross",
    "commission",
    "financing",
    "realized_net",
    "open_lots",
)
UNATTRIBUTED: Final = (
    "event_id",
    "account",
    "instrument",
    "time",
    "amount",
    "currency",
    "kind",
    "reason",
)

#: Money columns of each output table; writers show them in the row's currency's minor unit.
MONEY_COLUMNS: Final = frozenset(
    {
        "gross_pnl",
        "commission",
        "financing",
        "net_pnl",
        "realized_gross",
        "realized_net",
        "amount",
    }
)

#: How each output column is stored: Arrow decimals, UTC timestamps, durations or integers.
DECIMAL_COLUMNS: Final = frozenset(
    {
        "quantity",
        "price",
        "open_price",
        "close_price",
        "gross_pnl",
        "commission",
        "financing",
        "net_pnl",
        "multiplier",
        "gross_pnl_unrounded",
        "max_quantity",
        "entry_price",
        "exit_price",
        "average_price",
        "realized_gross",
        "realized_net",
        "cost_basis",
        "amount",
    }
)
TIME_COLUMNS: Final = frozenset({"time", "open_time", "close_time"})
DURATION_COLUMNS: Final = frozenset({"holding_time"})
INTEGER_COLUMNS: Final = frozenset({"trip_id", "fills", "open_lots", SOURCE_ROW})

# --- Statement tie-out -------------------------------------------------------------------------

#: What a statement line can state, and the order compared lines are listed in.
MONEY_MEASURES: Final = ("realized_pnl", "commission", "financing")
STATEMENT_MEASURES: Final = (*MONEY_MEASURES, "open_quantity", "average_price")
#: Measures of one instrument that an account-level line (blank instrument) cannot state.
INSTRUMENT_ONLY_MEASURES: Final = ("open_quantity", "average_price")
STATEMENT_REQUIRED: Final = ("account", "currency")
STATEMENT_BASES: Final = ("gross", "net")
STATEMENT_COLUMNS: Final = ("account", "instrument", "currency", *STATEMENT_MEASURES, "basis")

RATES_COLUMNS: Final = ("time", "base", "quote", "rate", "source")

STATUSES: Final = ("tied", "within tolerance", "break")
COMPARED_LINES: Final = (
    "line",
    "account",
    "instrument",
    "currency",
    "measure",
    "basis",
    "ours",
    "theirs",
    "difference",
    "allowed",
    "status",
    "top_cause",
    "explanation",
    "note",
    "statement_rows",
    "fx_rate",
    "fx_rates_used",
)
CAUSES: Final = (
    "line",
    "rank",
    "kind",
    "explained",
    "residual",
    "fill_ids",
    "explanation",
)
FILLS_INVOLVED: Final = (
    "line",
    "rank",
    "kind",
    "role",
    "fill_id",
    "source_row",
    "account",
    "instrument",
    "currency",
    "time",
    "side",
    "quantity",
    "price",
    "commission",
)
CONVERSIONS: Final = (
    "account",
    "instrument",
    "part",
    "item_id",
    "time",
    "currency",
    "amount",
    "pair",
    "rate",
    "rate_time",
    "rate_source",
    "base",
    "converted",
)

#: How the tie-out's own columns are stored (the other columns are typed by the sets above).
TIEOUT_DECIMAL_COLUMNS: Final = frozenset(
    {
        "ours",
        "theirs",
        "difference",
        "allowed",
        "explained",
        "residual",
        "fx_rate",
        "rate",
        "converted",
    }
)
TIEOUT_TIME_COLUMNS: Final = frozenset({"rate_time"})
TIEOUT_INTEGER_COLUMNS: Final = frozenset({"line", "rank", "fx_rates_used"})
