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

ENGINES: Final = ("auto", "reference", "fast")

Method = Literal["fifo", "lifo", "hifo", "average"]
Engine = Literal["auto", "reference", "fast"]
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

#: Statistics over round trips (or closed lots), one row per group and currency (core/stats.py).
#: Group columns (the ``by`` keys, then ``currency``) come first.
STATISTICS: Final = (
    "trades",
    "wins",
    "losses",
    "breakevens",
    "net_pnl",
    "gross_profit",
    "gross_loss",
    "first_trade",
    "last_trade",
    "largest_win",
    "largest_win_trades",
    "largest_loss",
    "largest_loss_trades",
    "longest_holding",
    "longest_holding_trades",
    "shortest_holding",
    "shortest_holding_trades",
    "average_win",
    "average_loss",
    "win_rate",
    "payoff",
    "profit_factor",
    "expectancy",
    "max_drawdown",
    "max_drawdown_peak",
    "max_drawdown_start",
    "max_drawdown_trough",
    "max_drawdown_recovery",
    "max_drawdown_state",
    "drawdown_from_zero",
    "drawdown_from_zero_start",
    "drawdown_from_zero_trough",
    "drawdown_from_zero_recovery",
    "drawdown_from_zero_state",
    "longest_win_streak",
    "longest_loss_streak",
    "gross_pnl",
    "commission",
    "financing",
    "commission_drag",
    "financing_drag",
    "fee_drag",
)
#: Every trade tied for an extreme: largest win or loss, longest or shortest holding.
EXTREMES: Final = (
    "measure",
    "trade",
    "account",
    "instrument",
    "side",
    "open_time",
    "close_time",
    "net_pnl",
    "holding_time",
)
#: Cumulative net P&L at each instant a trade closed; the first row is the start, at zero.
CUMULATIVE_PNL: Final = ("time", "trades", "pnl", "cumulative_pnl", "peak_pnl", "drawdown")
STATISTICS_MONEY: Final = frozenset(
    {
        "gross_profit",
        "gross_loss",
        "largest_win",
        "largest_loss",
        "average_win",
        "average_loss",
        "expectancy",
        "max_drawdown",
        "max_drawdown_peak",
        "drawdown_from_zero",
        "pnl",
        "cumulative_pnl",
        "peak_pnl",
        "drawdown",
    }
)
STATISTICS_RATIOS: Final = frozenset(
    {"win_rate", "payoff", "profit_factor", "commission_drag", "financing_drag", "fee_drag"}
)
STATISTICS_TIMES: Final = frozenset(
    {
        "first_trade",
        "last_trade",
        "max_drawdown_start",
        "max_drawdown_trough",
        "max_drawdown_recovery",
        "drawdown_from_zero_start",
        "drawdown_from_zero_trough",
        "drawdown_from_zero_recovery",
    }
)
STATISTICS_DURATIONS: Final = frozenset({"longest_holding", "shortest_holding"})
STATISTICS_COUNTS: Final = frozenset(
    {"trades", "wins", "losses", "breakevens", "longest_win_streak", "longest_loss_streak"}
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
        *STATISTICS_MONEY,
        "expected",
        "charged",
        "difference",
        "overcharge",
        "undercharge",
        "notional",
        "commission_overcharge",
        "commission_undercharge",
        "financing_overcharge",
        "financing_undercharge",
        "leakage",
        "gross_realized",
        "financing_cost",
        "commission_expected",
        "financing_expected",
    }
)

#: How each output column is stored: Arrow decimals, UTC timestamps, durations or integers.
DECIMAL_COLUMNS: Final = MONEY_COLUMNS | frozenset(
    {
        "quantity",
        "price",
        "open_price",
        "close_price",
        "multiplier",
        "gross_pnl_unrounded",
        "max_quantity",
        "entry_price",
        "exit_price",
        "average_price",
        "cost_basis",
        *STATISTICS_RATIOS,
        "tier_volume",
        "position",
        "annual_rate",
        "swap_points",
        "fee_drag_pct",
        "fee_drag_expected_pct",
    }
)
TIME_COLUMNS: Final = frozenset({"time", "open_time", "close_time", "cutoff", *STATISTICS_TIMES})
DURATION_COLUMNS: Final = frozenset({"holding_time", *STATISTICS_DURATIONS})
INTEGER_COLUMNS: Final = frozenset(
    {
        "trip_id",
        "fills",
        "open_lots",
        SOURCE_ROW,
        "nights",
        "events",
        "findings",
        "rank",
        *STATISTICS_COUNTS,
    }
)
#: Decimal places of every ratio; they are always shown with all of them.
RATIO_PLACES: Final = 4
FIXED_PLACES: Final = dict.fromkeys(STATISTICS_RATIOS, RATIO_PLACES)

# The fee audit (reconcile fees): inputs beside the fills, and the tables it writes.

MARKS_REQUIRED: Final = ("time", "instrument", "price")
MARKS_DEFAULTS: Final = {"account": ""}
MARKS_COLUMNS: Final = (*MARKS_REQUIRED, *MARKS_DEFAULTS)

COMMISSION_FILLS: Final = (
    "fill_id",
    "order_id",
    "account",
    "instrument",
    "venue",
    "side",
    "time",
    "quantity",
    "price",
    "multiplier",
    "notional",
    "currency",
    "rule",
    "charged_per",
    "tier",
    "expected",
    "charged",
    "difference",
    "status",
)
COMMISSION_ORDERS: Final = (
    "account",
    "order_id",
    "first_fill_id",
    "instrument",
    "venue",
    "currency",
    "rule",
    "charged_per",
    "month",
    "time",
    "fills",
    "quantity",
    "notional",
    "tier",
    "tier_volume",
    "expected",
    "charged",
    "difference",
    "overcharge",
    "undercharge",
    "status",
    "cause",
)
FINANCING_DAYS: Final = (
    "account",
    "instrument",
    "currency",
    "rule",
    "date",
    "weekday",
    "cutoff",
    "position",
    "price",
    "price_source",
    "notional",
    "annual_rate",
    "swap_points",
    "nights",
    "expected",
    "charged",
    "difference",
    "overcharge",
    "undercharge",
    "status",
    "cause",
    "events",
    "event_ids",
)
FEE_UNMATCHED: Final = (
    "source",
    "id",
    "account",
    "instrument",
    "venue",
    "time",
    "currency",
    "amount",
    "reason",
)
FINDINGS: Final = (
    "charge",
    "account",
    "instrument",
    "venue",
    "currency",
    "month",
    "reference",
    "time",
    "rule",
    "expected",
    "charged",
    "overcharge",
    "undercharge",
    "cause",
)
TOP_OFFENDERS: Final = ("rank", *FINDINGS)
LEAKAGE_TOTALS: Final = (
    "dimension",
    "value",
    "currency",
    "commission_overcharge",
    "commission_undercharge",
    "financing_overcharge",
    "financing_undercharge",
    "leakage",
    "findings",
)
FEE_DRAG: Final = (
    "account",
    "currency",
    "gross_realized",
    "commission",
    "financing_cost",
    "fee_drag_pct",
    "commission_expected",
    "financing_expected",
    "fee_drag_expected_pct",
)

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
