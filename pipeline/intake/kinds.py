"""Stage 6a, kinds: is a series a flow (amounts over a period), a stock (balances at a
date) or a price index?

Decided in this order: the kind the user gave for the series by name; else the guess
from the header words, the unit and the values (index words, balance words, flow words;
positive values within a 20x range that equal 100 in one period and carry no money unit).
The reason is kept in ``Series.notes``."""

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
