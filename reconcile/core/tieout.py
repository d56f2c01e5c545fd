"""``tie_out``: our derived figures against a statement, line by line, with breaks explained.

Every statement line becomes compared lines, one per measure it states: ours, theirs, the
difference (ours - theirs) and a status: ``tied`` (equal), ``within tolerance`` or ``break``.
Lines of one (account, instrument, currency) and measure add up (realized P&L per basis). A key
only one side has is a break, not an error: a statement line we have nothing for compares against
zero, and our activity the statement does not cover gets lines with no statement figure. Each
break is then searched for causes (:mod:`reconcile.core.explain`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date
from decimal import Decimal
from fractions import Fraction
from typing import Any

import pandas as pd

from reconcile import schema
from reconcile.core.canon import (
    canonical_fills,
    canonical_financing,
    canonical_opening,
    canonical_rates,
    canonical_statement,
)
from reconcile.core.compare import (
    Conversion,
    Evaluator,
    Key,
    LineSpec,
    MissingRate,
    Tolerance,
    Tolerances,
    Value,
    difference,
    status,
)
from reconcile.core.engine import events_by_key, replay
from reconcile.core.explain import Cause, Finding, Search, SearchLimits
from reconcile.core.frames import build_frame
from reconcile.core.fx import RateBook
from reconcile.core.keyfigures import Bounds, Figures, KeyCase
from reconcile.core.matching import check_choice
from reconcile.core.period import Period, make_period, utc_text
from reconcile.errors import ConfigError, Problem, raise_if_problems
from reconcile.money import (
    ROUNDING_MODES,
    Rounding,
    exact_arithmetic,
    minor_unit,
    round_fraction,
    round_money,
)

PeriodSpec = str | Period | tuple[str | date, str | date]


@dataclass(frozen=True)
class TieOut:
    """The compared lines of one tie-out, the causes found for its breaks and what was used.

    ``lines`` has a row per compared line (``schema.COMPARED_LINES``), ``causes`` a row per cause
    of a break, best first (``schema.CAUSES``), ``fills_involved`` a row per fill a cause names,
    and ``conversions`` a row per amount converted into another currency, with its rate.
    """

    lines: pd.DataFrame
    causes: pd.DataFrame
    fills_involved: pd.DataFrame
    conversions: pd.DataFrame
    period: Period
    method: str
    commission: str
    rounding: Rounding
    base: str | None
    tolerances: Tolerances
    left_out: Mapping[str, int] = field(default_factory=dict)

    @property
    def breaks(self) -> pd.DataFrame:
        return self.lines[self.lines["status"] == "break"]

    def counts(self) -> dict[str, int]:
        """Compared lines by status, every status listed."""
        found = self.lines["status"].value_counts()
        return {name: int(found.get(name, 0)) for name in schema.STATUSES}

    def tables(self) -> dict[str, pd.DataFrame]:
        tables = {
            "compared_lines": self.lines,
            "causes": self.causes,
            "fills_involved": self.fills_involved,
        }
        if len(self.conversions):
            tables["conversions"] = self.conversions
        return tables


@exact_arithmetic
def tie_out(
    fills: pd.DataFrame,
    statement: pd.DataFrame,
    period: PeriodSpec,
    *,
    financing: pd.DataFrame | None = None,
    opening: pd.DataFrame | None = None,
    method: schema.Method = "fifo",
    commission: schema.CommissionConvention = "at-close",
    rounding: Rounding = "half-even",
    timezone: str | None = None,
    cutoff: str | None = None,
    tolerance: Decimal | int | str = 0,
    relative_tolerance: Decimal | int | str = 0,
    tolerances: Mapping[str, Tolerance] | None = None,
    rates: pd.DataFrame | None = None,
    base: str | None = None,
    rate_source: str | None = None,
    limits: SearchLimits | None = None,
) -> TieOut:
    """Tie our figures for ``period`` out against ``statement`` and explain each break.

    ``period`` is a month (``"2026-11"``), a day (``"2026-11-30"``), a pair of first and last
    days, or a :class:`~reconcile.core.period.Period`; its days end at ``cutoff`` (``"17:00"``,
    default midnight) in ``timezone`` (IANA, default UTC), which also places input times written
    without an offset. ``tolerance`` is in minor units, ``relative_tolerance`` a fraction of the
    statement's figure (either suffices); ``tolerances`` overrides them per measure. With
    ``base`` and ``rates``, statement lines in the base currency compare against our amounts
    converted at the rate in force when each was realized (``rate_source`` picks one source of a
    rates file that holds several). ``limits`` bounds the break search.
    """
    check_choice("method", method, schema.METHODS)
    check_choice("commission", commission, schema.COMMISSION_CONVENTIONS)
    check_choice("rounding", rounding, tuple(ROUNDING_MODES))
    span = _period(period, timezone, cutoff)
    base = base.strip().upper() if base is not None else None
    inputs = _Inputs.read(fills, financing, opening, statement, rates, timezone)
    book = _rate_book(inputs.rates, base, rate_source)
    rules = Tolerances(
        Tolerance(
            decimal_option(tolerance, "tolerance"),
            decimal_option(relative_tolerance, "relative tolerance"),
        ),
        dict(tolerances or {}),
    )
    cases, left_out = _cases(inputs, span, method, commission)
    figures = {key: case.figures() for key, case in cases.items()}
    specs = build_specs(inputs.statement, figures, base)
    evaluator = Evaluator(rounding, book)
    values = {s.number: evaluator.value(s, figures) for s in specs}
    _raise_missing_rates(values.values(), inputs.rates_label, base, book)
    allowed = {s.number: rules.allowed(s.measure, s.currency, s.theirs) for s in specs}
    statuses = {s.number: status(values[s.number].ours, s.theirs, allowed[s.number]) for s in specs}
    search = Search(
        specs,
        figures,
        {n: v.ours for n, v in values.items()},
        allowed,
        {n for n, state in statuses.items() if state == "break"},
        cases,
        evaluator,
        span,
        book,
        limits or SearchLimits(),
    )
    findings = search.run()
    rows = _FillRows(inputs.fills, inputs.financing)
    return TieOut(
        lines=_lines_frame(specs, values, allowed, statuses, findings),
        causes=_causes_frame(findings),
        fills_involved=_involved_frame(findings, rows),
        conversions=_conversions_frame(values.values()),
        period=span,
        method=method,
        commission=commission,
        rounding=rounding,
        base=base,
        tolerances=rules,
        left_out=left_out,
    )


def _period(period: PeriodSpec, timezone: str | None, cutoff: str | None) -> Period:
    if isinstance(period, Period):
        return period
    zone_name = timezone or "UTC"
    if isinstance(period, tuple):
        return make_period(first=period[0], last=period[1], timezone=zone_name, cutoff=cutoff)
    return make_period(period, timezone=zone_name, cutoff=cutoff)


def decimal_option(value: Decimal | int | str, option: str) -> Decimal:
    """A tolerance given as text or a number: an exact decimal >= 0, never a binary float."""
    if isinstance(value, float):
        raise ConfigError(
            f"{option}: expected a decimal as text or Decimal (not a binary float), found {value!r}"
        )
    try:
        number = value if isinstance(value, Decimal) else Decimal(str(value).strip())
    except ArithmeticError:
        number = Decimal(-1)
    if not number.is_finite() or number < 0:
        raise ConfigError(f"{option}: expected a decimal >= 0, found {str(value)!r}")
    return number


@dataclass(frozen=True)
class _Inputs:
    fills: pd.DataFrame
    financing: pd.DataFrame | None
    opening: pd.DataFrame | None
    statement: pd.DataFrame
    rates: pd.DataFrame | None
    rates_label: str

    @classmethod
    def read(
        cls,
        fills: pd.DataFrame,
        financing: pd.DataFrame | None,
        opening: pd.DataFrame | None,
        statement: pd.DataFrame,
        rates: pd.DataFrame | None,
        timezone: str | None,
    ) -> _Inputs:
        """Canonical inputs; frames the readers already validated pass through unchanged."""
        label = _label(rates, "rates") if rates is not None else "rates"
        return cls(
            fills=canonical_fills(fills, source=_label(fills, "fills"), timezone=timezone),
            financing=None
            if financing is None
            else canonical_financing(
                financing, source=_label(financing, "financing"), timezone=timezone
            ),
            opening=None
            if opening is None
            else canonical_opening(opening, source=_label(opening, "opening"), timezone=timezone),
            statement=statement
            if "measures" in statement.attrs
            else canonical_statement(statement, source=_label(statement, "statement")),
            rates=None
            if rates is None
            else rates
            if rates.attrs.get("canonical")
            else canonical_rates(rates, source=label, timezone=timezone),
            rates_label=label,
        )


def _label(frame: pd.DataFrame, default: str) -> str:
    summary = frame.attrs.get("read_summary")
    return str(summary["source"]) if isinstance(summary, dict) else default


def _rate_book(rates: pd.DataFrame | None, base: str | None, source: str | None) -> RateBook | None:
    if base is not None and minor_unit(base) is None:
        raise ConfigError(f"base: expected an ISO 4217 currency code such as USD, found {base!r}")
    if rates is None:
        if base is not None:
            raise ConfigError("base: converting into a base currency needs FX rates (--rates FILE)")
        return None
    if base is None:
        raise ConfigError("rates: FX rates are used only with a base currency (--base CCY)")
    return RateBook(rates, source, _label(rates, "rates"))


def _cases(
    inputs: _Inputs, span: Period, method: str, convention: str
) -> tuple[dict[Key, KeyCase], dict[str, int]]:
    """Each key's rows, after checking every row the period replays can be applied."""
    fills, financing = inputs.fills, inputs.financing
    left_out = {"fills after the period": int((fills["time"] >= span.end).sum())}
    if inputs.opening is not None:
        before = fills["time"] < span.start
        left_out["fills before the period (the opening lots stand for them)"] = int(before.sum())
        fills = fills[~before]
        if financing is not None:
            financing = financing[financing["time"] >= span.start]
    replay(
        fills[fills["time"] < span.end],
        None if financing is None else financing[financing["time"] < span.end],
        inputs.opening,
        method,
        convention,
    )
    bounds = Bounds(span.start, span.end)
    cases = {
        key: KeyCase(key[0], key[1], events, bounds, method, convention)
        for key, events in sorted(events_by_key(fills, financing, inputs.opening).items())
    }
    return cases, {k: v for k, v in left_out.items() if v}


# -- statement lines ------------------------------------------------------------------------------


def build_specs(
    statement: pd.DataFrame, figures: Mapping[Key, Figures], base: str | None
) -> list[LineSpec]:
    """The compared lines: the statement's, then our activity it does not cover."""
    measures: list[str] = list(statement.attrs.get("measures", schema.STATEMENT_MEASURES))
    grouped: dict[tuple[str, str, str, str, str], list[tuple[Decimal, int, int]]] = {}
    for row in statement.to_dict(orient="records"):
        for measure in measures:
            value = row[measure]
            if value is None or value is pd.NA:
                continue
            basis = row["basis"] if measure == "realized_pnl" else ""
            line_key = (row["account"], row["instrument"], row["currency"], measure, basis)
            places = int(row["average_price_places"])
            grouped.setdefault(line_key, []).append((value, int(row[schema.SOURCE_ROW]), places))
    specs: list[LineSpec] = []
    covered: set[Key] = set()
    for (account, instrument, currency, measure, basis), stated in grouped.items():
        keys, note = _covered_keys(account, instrument, currency, measure, figures, base)
        covered.update(keys)
        if instrument:
            covered.add((account, instrument))
        specs.append(
            LineSpec(
                len(specs) + 1,
                account,
                instrument,
                currency,
                measure,
                basis,
                sum((v for v, _, _ in stated), Decimal(0)),
                stated[0][2],
                keys,
                tuple(r for _, r, _ in stated),
                note,
            )
        )
    bases = [s.basis for s in specs if s.measure == "realized_pnl"]
    usual = max(set(bases), key=bases.count) if bases else "gross"
    for key, held in figures.items():
        if key in covered or held.is_idle():
            continue
        for measure in measures:
            if not _has(held, measure):
                continue
            specs.append(
                LineSpec(
                    len(specs) + 1,
                    key[0],
                    key[1],
                    held.currency,
                    measure,
                    usual if measure == "realized_pnl" else "",
                    None,
                    0,
                    (key,),
                    (),
                    "not on the statement",
                )
            )
    return specs


def _has(held: Figures, measure: str) -> bool:
    """Whether our figures hold anything for ``measure`` that a statement should show."""
    if measure in ("open_quantity", "average_price"):
        return bool(held.quantity)
    if measure == "realized_pnl":
        return bool(held.gross or held.commission)
    return bool(getattr(held, measure))


def _covered_keys(
    account: str,
    instrument: str,
    currency: str,
    measure: str,
    figures: Mapping[Key, Figures],
    base: str | None,
) -> tuple[tuple[Key, ...], str]:
    convertible = base is not None and currency == base and measure != "average_price"
    if instrument:
        held = figures.get((account, instrument))
        if held is None:
            known = any(k[0] == account for k in figures)
            return (), "not in our books" if known else "account not in our books"
        if held.currency == currency or convertible or measure == "open_quantity":
            return ((account, instrument),), ""
        hint = f"; convert with --rates and --base {currency}" if base is None else ""
        return (), f"our books hold it in {held.currency}{hint}"
    keys = tuple(
        k for k, f in figures.items() if k[0] == account and (f.currency == currency or convertible)
    )
    if keys:
        return keys, ""
    if any(k[0] == account for k in figures):
        return (), f"no instruments of this account in {currency} in our books"
    return (), "account not in our books"


def _raise_missing_rates(
    values: Sequence[Value] | Any, label: str, base: str | None, book: RateBook | None
) -> None:
    first: dict[tuple[str, str], MissingRate] = {}
    counts: dict[tuple[str, str], int] = {}
    for value in values:
        for missing in value.missing:
            pair = (missing.currency, missing.base)
            counts[pair] = counts.get(pair, 0) + 1
            if pair not in first or missing.part.time < first[pair].part.time:
                first[pair] = missing
    problems = []
    for pair, missing in sorted(first.items()):
        account, instrument = missing.key
        source = f" from source {book.source!r}" if book is not None and book.source else ""
        problems.append(
            Problem(
                label,
                f"a {pair[0]}/{pair[1]} or {pair[1]}/{pair[0]} rate{source} at or before "
                f"{utc_text(missing.part.time)}, to convert {account} {instrument} "
                f"{missing.part.part} of {missing.part.item} into {base} "
                f"({counts[pair]} amount{'s' if counts[pair] != 1 else ''} lack a rate)",
                None,
                None,
                None,
                "missing rate",
            )
        )
    raise_if_problems(label, problems)


# -- result tables ------------------------------------------------------------------------------


def _lines_frame(
    specs: Sequence[LineSpec],
    values: Mapping[int, Value],
    allowed: Mapping[int, Decimal],
    statuses: Mapping[int, str],
    findings: Mapping[int, Finding],
) -> pd.DataFrame:
    rows = []
    for spec in specs:
        value = values[spec.number]
        finding = findings.get(spec.number)
        top = finding.causes[0] if finding and finding.causes else None
        quotes = {c.quote for c in value.conversions}
        notes = [n for n in (spec.note, finding.note if finding else "") if n]
        rows.append(
            {
                "line": spec.number,
                "account": spec.account,
                "instrument": spec.instrument,
                "currency": spec.currency,
                "measure": spec.measure,
                "basis": spec.basis,
                "ours": value.ours,
                "theirs": spec.theirs,
                "difference": difference(value.ours, spec.theirs),
                "allowed": allowed[spec.number],
                "status": statuses[spec.number],
                "top_cause": top.kind if top else "",
                "explanation": top.explanation if top else "",
                "note": "; ".join(notes),
                "statement_rows": ";".join(str(r) for r in spec.rows),
                "fx_rate": next(iter(quotes)).rate if len(quotes) == 1 else None,
                "fx_rates_used": len(quotes),
            }
        )
    return build_frame(rows, schema.COMPARED_LINES)


def _causes_frame(findings: Mapping[int, Finding]) -> pd.DataFrame:
    rows = [
        {
            "line": number,
            "rank": rank,
            "kind": cause.kind,
            "explained": cause.explained,
            "residual": cause.residual,
            "fill_ids": ";".join(i.item for i in cause.involved),
            "explanation": cause.explanation,
        }
        for number, finding in findings.items()
        for rank, cause in enumerate(finding.causes, start=1)
    ]
    return build_frame(rows, schema.CAUSES)


@dataclass(frozen=True)
class _FillRows:
    fills: pd.DataFrame
    financing: pd.DataFrame | None

    def lookup(self) -> dict[str, dict[str, Any]]:
        found: dict[str, dict[str, Any]] = {}
        for frame in (self.financing, self.fills):
            if frame is not None:
                for row in frame.to_dict(orient="records"):
                    found[str(row.get("fill_id") or row["event_id"])] = {
                        str(k): v for k, v in row.items()
                    }
        return found


def _involved_frame(findings: Mapping[int, Finding], rows: _FillRows) -> pd.DataFrame:
    known = rows.lookup() if any(c.involved for f in findings.values() for c in f.causes) else {}
    records = []
    for number, finding in findings.items():
        for rank, cause in enumerate(finding.causes, start=1):
            records += [
                _involved_row(number, rank, cause, item.item, item.role, known.get(item.item))
                for item in cause.involved
            ]
    return build_frame(records, schema.FILLS_INVOLVED)


def _involved_row(
    number: int, rank: int, cause: Cause, item: str, role: str, row: dict[str, Any] | None
) -> dict[str, Any]:
    row = row or {}
    return {
        "line": number,
        "rank": rank,
        "kind": cause.kind,
        "role": role,
        "fill_id": item,
        "source_row": row.get(schema.SOURCE_ROW),
        "account": row.get("account"),
        "instrument": row.get("instrument"),
        "currency": row.get("currency"),
        "time": row.get("time"),
        "side": row.get("side"),
        "quantity": row.get("quantity"),
        "price": row.get("price"),
        "commission": row.get("commission"),
    }


def _conversions_frame(values: Sequence[Value] | Any) -> pd.DataFrame:
    seen: dict[tuple[object, ...], Conversion] = {}
    for value in values:
        for c in value.conversions:
            seen.setdefault((c.key, c.part, c.base), c)
    rows = [
        {
            "account": c.key[0],
            "instrument": c.key[1],
            "part": c.part.part,
            "item_id": c.part.item,
            "time": c.part.time,
            "currency": c.currency,
            "amount": c.part.amount,
            "pair": c.quote.pair,
            "rate": c.quote.rate,
            "rate_time": c.quote.time,
            "rate_source": c.quote.source,
            "base": c.base,
            "converted": c.converted,
        }
        for c in seen.values()
    ]
    return build_frame(rows, schema.CONVERSIONS)


# -- a statement of our own ---------------------------------------------------------------------


@exact_arithmetic
def derive_statement(
    fills: pd.DataFrame,
    period: PeriodSpec,
    *,
    financing: pd.DataFrame | None = None,
    opening: pd.DataFrame | None = None,
    method: schema.Method = "fifo",
    commission: schema.CommissionConvention = "at-close",
    rounding: Rounding = "half-even",
    timezone: str | None = None,
    cutoff: str | None = None,
    basis: str = "gross",
    price_places: int = 4,
) -> pd.DataFrame:
    """The statement our own figures would make: one line per key with activity, as text.

    Tests and the demo perturb it to plant breaks; tying out against it unchanged ties exactly.
    """
    span = _period(period, timezone, cutoff)
    statement_stub = pd.DataFrame({"account": ["x"], "currency": ["USD"], "commission": ["0"]})
    inputs = _Inputs.read(fills, financing, opening, statement_stub, None, timezone)
    cases, _ = _cases(inputs, span, method, commission)
    rows = []
    for (account, instrument), case in cases.items():
        held = case.figures()
        if held.is_idle():
            continue
        gross = held.total("gross")
        realized = gross - held.total("commission") if basis == "net" else gross
        average = held.average()
        rows.append(
            {
                "account": account,
                "instrument": instrument,
                "currency": held.currency,
                "realized_pnl": _text(round_money(realized, held.currency, rounding)),
                "commission": _text(round_money(held.total("commission"), held.currency, rounding)),
                "financing": _text(round_money(held.total("financing"), held.currency, rounding)),
                "open_quantity": _text(held.quantity),
                "average_price": ""
                if average is None
                else _text(_round_price(average, price_places)),
                "basis": basis,
            }
        )
    return pd.DataFrame(rows, columns=list(schema.STATEMENT_COLUMNS), dtype="str")


def _round_price(value: Fraction, places: int) -> Decimal:
    return round_fraction(value, places)


def _text(value: Decimal) -> str:
    return format(value.copy_abs() if value == 0 else value, "f")
