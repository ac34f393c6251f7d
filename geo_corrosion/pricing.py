"""The price list and the engineer's estimate of the bid schedule.

A price list is a CSV file with the columns ``item``, ``description``, ``unit``,
``unit_price`` and ``currency`` (header names in any case; ``unit price`` with a space is
accepted), one row per bid item.  Each row is checked against the bid items of the site:
the item must be one of them, its unit must be the unit the schedule gives that item in the
reporting system (``ft2``, ``LF``, ``CY``, ``EA``, ``LS``; ``m2``, ``m``, ``m3``), the unit
price a finite number of 0 or more, and the currency (an ISO 4217 code such as ``USD``) the
same on every row.  A bad row is refused with the file and its line number.

The estimate prices the rounded bid quantities: the amount of an item is its base quantity
times its unit price; a level's subtotal is the sum of its amounts; its contingency is the
sum of the contingency quantities times their unit prices (the schedule's allowance, on its
own line); its total is subtotal plus contingency.  The ``ALL`` lines give the same for the
whole site (common practice, no source).
"""

from __future__ import annotations

import csv
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from geo_corrosion.errors import SiteFileError
from geo_corrosion.quantities import ALL_LEVELS, BidItem
from geo_corrosion.units import ReportUnits

__all__ = ["PRICE_COLUMNS", "Price", "PriceList", "read_price_list", "price_schedule",
           "estimate_lines", "estimate_text", "unpriced_items"]

#: Columns of a price list, in order.
PRICE_COLUMNS: tuple[str, ...] = ("item", "description", "unit", "unit_price", "currency")
_CURRENCY = re.compile(r"[A-Z]{3}")
#: Largest unit price accepted (a typing slip such as 1e12 is refused).
_MAX_PRICE = 1e9


@dataclass(frozen=True)
class Price:
    """One row of a price list.

    Attributes
    ----------
    item, description, unit : str
    unit_price : float
        Per unit, in the list's currency.
    line : int
        Line number in the file (the header is line 1).
    """

    item: str
    description: str
    unit: str
    unit_price: float
    line: int


@dataclass(frozen=True)
class PriceList:
    """A read, checked price list: its file, currency and a price per item code."""

    path: Path
    currency: str
    prices: Mapping[str, Price]


def _header(fields: Sequence[str] | None, where: str) -> dict[str, str]:
    """Map our column names to the file's header names; refuse a missing column."""
    if not fields:
        raise SiteFileError(f"{where}: empty; a price list starts with the header line "
                            f"{','.join(PRICE_COLUMNS)}")
    found = {re.sub(r"[\s_]+", "_", (f or "").strip().lower()): f for f in fields}
    missing = [c for c in PRICE_COLUMNS if c not in found]
    if missing:
        raise SiteFileError(f"{where} line 1: no column {', '.join(missing)}; the header must "
                            f"name {', '.join(PRICE_COLUMNS)}")
    return {c: found[c] for c in PRICE_COLUMNS}


def read_price_list(path: str | Path, *, items: Mapping[str, BidItem],
                    units: ReportUnits, where: str | None = None) -> PriceList:
    """Read and check a price list (CSV) against the bid items of a site.

    Parameters
    ----------
    path : str or Path
        The CSV file.
    items : mapping of str to BidItem
        The bid items a schedule of the site can hold.
    units : ReportUnits
        Reporting system: each item's unit follows it.
    where : str, optional
        How messages name the file (default: the path).

    Returns
    -------
    PriceList

    Raises
    ------
    SiteFileError
        A missing or unreadable file, a missing column, or a row with an unknown or repeated
        item, a missing or wrong unit, a missing, non-numeric, negative or non-finite unit
        price, or a currency other than the first row's; the message names the file and the
        line, and what to write.
    """
    p = Path(path)
    name = where or str(p)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError as err:
        raise SiteFileError(f"{name}: price list not found; check [quantities].price_list "
                            "in the site file") from err
    except UnicodeDecodeError as err:
        raise SiteFileError(f"{name}: not a UTF-8 text file; save the price list as CSV "
                            "(UTF-8)") from err
    except OSError as err:
        raise SiteFileError(f"{name}: cannot be read ({err.strerror})") from err
    reader = csv.DictReader(text.splitlines())
    cols = _header(reader.fieldnames, name)
    prices: dict[str, Price] = {}
    currency: tuple[str, int] | None = None
    codes = ", ".join(items)
    for row in reader:
        line = reader.line_num
        at = f"{name} line {line}"
        if None in row:
            raise SiteFileError(f"{at}: more fields than the header has columns; quote a "
                                "description holding a comma")
        v = {c: (row.get(cols[c]) or "").strip() for c in PRICE_COLUMNS}
        if not any(v.values()):
            continue  # a blank line
        code = v["item"]
        if not code:
            raise SiteFileError(f"{at}: no item; give a bid item code ({codes})")
        if code not in items:
            raise SiteFileError(f"{at}: item {code!r} is not a bid item of this site; give one "
                                f"of {codes}, or remove the row")
        if code in prices:
            raise SiteFileError(f"{at}: item {code!r} is priced again (first on line "
                                f"{prices[code].line}); keep one row per item")
        want = items[code].unit(units)
        if not v["unit"]:
            raise SiteFileError(f"{at}: item {code}: no unit; the schedule gives {code} in "
                                f"{want}")
        if v["unit"] != want:
            raise SiteFileError(f"{at}: item {code}: unit {v['unit']!r}, but the schedule gives "
                                f"{code} in {want} (units = \"{units.system}\"); give the unit "
                                f"price per {want}")
        try:
            price = float(v["unit_price"])
        except ValueError:
            raise SiteFileError(f"{at}: item {code}: unit price {v['unit_price']!r} is not a "
                                "number; write it without currency sign or thousands "
                                "separator, e.g. 1250.00") from None
        if not math.isfinite(price) or price < 0 or price > _MAX_PRICE:
            raise SiteFileError(f"{at}: item {code}: unit price {v['unit_price']!r} is not "
                                f"usable; give a number from 0 to {_MAX_PRICE:,.0f}")
        cur = v["currency"]
        if not _CURRENCY.fullmatch(cur):
            raise SiteFileError(f"{at}: item {code}: currency {cur!r}; give an ISO 4217 code "
                                "in capitals, e.g. USD, EUR, CAD")
        if currency is None:
            currency = (cur, line)
        elif cur != currency[0]:
            raise SiteFileError(f"{at}: item {code}: currency {cur}, but line {currency[1]} is "
                                f"in {currency[0]}; give every price in one currency")
        prices[code] = Price(code, v["description"], v["unit"], price, line)
    if currency is None:
        raise SiteFileError(f"{name}: no prices; give one row per bid item under the header "
                            f"{','.join(PRICE_COLUMNS)}")
    return PriceList(p, currency[0], prices)


def price_schedule(schedule: pd.DataFrame, prices: PriceList | None) -> pd.DataFrame:
    """Return the schedule with ``unit_price``, ``amount`` and ``currency`` columns.

    ``amount`` is the rounded quantity (``quantity``) times the unit price, to the cent; on
    the ``ALL`` lines it is the sum of the levels' amounts (so the totals add up to the
    cent).  An item the list does not price gets no unit price and no amount (NaN).  The
    schedule given is not changed; without a price list it is returned as it is.
    """
    if prices is None or schedule.empty:
        return schedule
    out = schedule.copy()
    up = [prices.prices[i].unit_price if i in prices.prices else math.nan
          for i in out["item"]]
    out["unit_price"] = up
    out["amount"] = [round(float(q) * p, 2) if math.isfinite(p) else math.nan
                     for q, p in zip(out["quantity"], up, strict=True)]
    total = out["level_id"].astype(str) == ALL_LEVELS
    if total.any():  # the ALL lines: the sum of the levels' amounts, to the cent
        sums = out[~total].groupby(["item", "line"])["amount"].sum(min_count=1)
        out.loc[total, "amount"] = [round(float(sums.get((i, ln), math.nan)), 2)
                                    for i, ln in zip(out.loc[total, "item"],
                                                     out.loc[total, "line"], strict=True)]
    out["currency"] = prices.currency
    return out


def unpriced_items(schedule: pd.DataFrame) -> list[str]:
    """Item codes of a priced schedule that have no unit price, in order."""
    if "unit_price" not in schedule:
        return []
    return list(dict.fromkeys(schedule.loc[schedule["unit_price"].isna(), "item"]))


def estimate_lines(schedule: pd.DataFrame) -> pd.DataFrame:
    """Return the estimate of a priced schedule: per level subtotal, contingency and total.

    Parameters
    ----------
    schedule : DataFrame
        From :func:`price_schedule` (``line``, ``amount``).

    Returns
    -------
    DataFrame
        Columns ``level_id``, ``line`` (``subtotal``, ``contingency``, ``total``) and
        ``amount``, the levels in the schedule's order, ``ALL`` last; empty without prices.

    Examples
    --------
    >>> s = pd.DataFrame({"level_id": ["P1", "P1"], "line": ["base", "contingency"],
    ...                   "amount": [1000.0, 200.0]})
    >>> estimate_lines(s)["amount"].tolist()[:3]
    [1000.0, 200.0, 1200.0]
    """
    cols = ["level_id", "line", "amount"]
    if "amount" not in schedule or not schedule["amount"].notna().any():
        return pd.DataFrame({c: pd.Series(dtype=object) for c in cols})
    rows = []
    levels = list(dict.fromkeys(map(str, schedule["level_id"])))
    levels = [lv for lv in levels if lv != ALL_LEVELS] + [ALL_LEVELS]
    for lid in levels:
        sub = schedule[schedule["level_id"].astype(str) == lid]
        if sub.empty:  # a schedule without ALL lines: the levels' sum
            sub = schedule[schedule["level_id"].astype(str) != ALL_LEVELS]
        base = round(float(sub.loc[sub["line"] == "base", "amount"].sum()), 2)
        cont = round(float(sub.loc[sub["line"] == "contingency", "amount"].sum()), 2)
        rows += [(lid, "subtotal", base), (lid, "contingency", cont),
                 (lid, "total", round(base + cont, 2))]
    return pd.DataFrame(rows, columns=cols)


def estimate_text(schedule: pd.DataFrame) -> str:
    """Return the estimate of a priced schedule as a text table: one row per level.

    Columns subtotal, contingency and total, with the currency; ``""`` without prices.
    """
    est = estimate_lines(schedule)
    if est.empty:
        return ""
    w = est.pivot(index="level_id", columns="line", values="amount")
    w = w.reindex(list(dict.fromkeys(est["level_id"])))[["subtotal", "contingency", "total"]]
    cur = str(schedule["currency"].dropna().iloc[0]) if "currency" in schedule else ""
    w.columns.name = None
    w.index.name = f"level ({cur})"
    text = w.map(lambda v: f"{v:,.2f}").reset_index().to_string(index=False)
    missing = unpriced_items(schedule)
    if missing:
        text += f"\nnot priced, left out of the totals: {', '.join(map(str, missing))}"
    return text
