"""Stage 6a, kinds: is a series a flow (amounts over a period), a stock (balances at a
date) or a price index?

Decided in this order (:func:`decide`), the reason kept in ``Series.notes``:

1. the kind the user gave for the series by name;
2. the unit, where it says: an index unit (``index 2015=100``, ``2020=100``, the SDMX
   ``UNIT_MEASURE`` code ``IX``) makes an index; a money unit (``USD``, ``$m``, ``EUR``)
   makes money — a flow, unless the file's role or the header's words say stock;
3. the file's role, when the caller gives one (``default``): the series file of a
   deflation holds money (flow unless told stock), an index file holds price indexes;
4. only without a role (checking a file, the intake screen): a guess from the header
   words and the values (index words, balance words, flow words; positive values within a
   20x range that equal 100 in one period and carry no money unit), said to be a guess.
"""

from __future__ import annotations

import re

import numpy as np

from ..model import Kind

INDEX_WORDS = re.compile(r"\b(index|indices|indexes|cpi|ppi|hicp|rpi|deflator|price level)\b"
                         r"|=\s*100\b", re.IGNORECASE)
STOCK_WORDS = re.compile(r"\b(balance|balances|stock|outstanding|debt|assets?|liabilit\w*|cash|"
                         r"inventor(y|ies)|headcount|position|end[- ]of[- ](period|month|quarter|year)"
                         r"|eop|closing)\b", re.IGNORECASE)
FLOW_WORDS = re.compile(r"\b(revenue|revenues|sales|spending|spend|cost|costs|expenditure|"
                        r"expenses?|income|receipts|payments?|wages|payroll|turnover|outlays?|"
                        r"budget|purchases|fares?|rent|paid)\b", re.IGNORECASE)
# SDMX UNIT_MEASURE codes of an index (code list CL_UNIT_MEASURE, from memory: IX index)
_INDEX_CODES = re.compile(r"^\s*(IX|INX|IDX|INDEX)\b", re.IGNORECASE)
# ISO 4217 codes and the SDMX codes for the national or domestic currency (XDC, NAC)
_MONEY_CODES = re.compile(r"^\s*(XDC|NAC|LCU|USD|EUR|GBP|JPY|CAD|AUD|NZD|CHF|CNY|SEK|NOK|DKK|"
                          r"INR|HKD|SGD|ZAR|MXN|BRL|KRW|PLN|CZK|HUF|ILS|TRY|RUB|IDR|THB|MYR|"
                          r"PHP|CLP|COP|PEN|ARS|ISK|RON|BGN|TWD|SAR|AED)(\s*x10\^-?\d+)?\s*$")
MONEY = re.compile(r"[$€£¥]|\b(USD|EUR|GBP|JPY|CAD|AUD|NZD|CHF|CNY|SEK|NOK|DKK|INR|dollars?|"
                   r"euros?|pounds?)\b", re.IGNORECASE)


def guess(name: str, header: str, unit: str | None, vmin: float, vmax: float,
          has100: bool) -> tuple[Kind, str]:
    """(kind, why) guessed from the header words, the unit and the values."""
    if INDEX_WORDS.search(header):
        return "index", f"kind 'index' guessed from the words {header!r}"
    if unit and INDEX_WORDS.search(unit):
        return "index", f"kind 'index' guessed from the unit {unit!r}"
    if STOCK_WORDS.search(header):
        return "stock", f"kind 'stock' guessed from the words {header!r}"
    if FLOW_WORDS.search(header):
        return "flow", f"kind 'flow' guessed from the words {header!r}"
    if (has100 and np.isfinite(vmin) and vmin > 0 and vmax / vmin < 20
            and not (unit and MONEY.search(unit)) and not MONEY.search(header)):
        return "index", "kind 'index' guessed from the values (positive, equal to 100 in one period)"
    return "flow", "kind 'flow' assumed (no index or balance words in the name)"


def unit_says(unit: str | None) -> Kind | None:
    """'index' or 'flow' (money) when the unit says which, else None."""
    if not unit:
        return None
    if _INDEX_CODES.match(unit) or INDEX_WORDS.search(unit):
        return "index"
    if MONEY.search(unit) or _MONEY_CODES.match(unit):
        return "flow"
    return None


def decide(name: str, header: str, unit: str | None, given: Kind | None,
           default: Kind | None, vmin: float, vmax: float, has100: bool) -> tuple[Kind, str]:
    """(kind, why) for one series (see the module text for the order)."""
    if given is not None:
        return given, f"kind {given!r} given by the user"
    says = unit_says(unit)
    if says == "index":
        return "index", f"kind 'index' from the unit {unit!r}"
    if says == "flow":
        if default in ("flow", "stock"):
            return default, f"kind {default!r} from the unit {unit!r} (money) and the file's role"
        if default is None and STOCK_WORDS.search(header):
            return "stock", f"kind 'stock' from the unit {unit!r} (money); stock guessed from the words {header!r}"
        return "flow", f"kind 'flow' from the unit {unit!r} (money)"
    if default is not None:
        role = "price indexes" if default == "index" else "money amounts"
        return default, f"kind {default!r} from the file's role ({role})"
    return guess(name, header, unit, vmin, vmax, has100)
