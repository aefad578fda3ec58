"""Generate the ILLUSTRATIVE demo data of realbasis (run once; the CSVs are committed).

Everything written here is invented: the retailer "Harbourline Outfitters", the public
body "Tallmere Regional Transit Authority" and every price index are fictional. The
numbers are smooth trends plus noise from a fixed random seed, shaped to look like the
real thing (seasonal retail sales, a fixed-basket consumer index growing a few tenths of
a point a year faster than a chained one, preliminary and revised values) so the
dashboard has something plausible to show. They are NOT measurements of anything and
must never be used to prove that the engine computes correctly.

    python demo_data/make_demo.py          # rewrites the CSVs next to this file
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20260917
HERE = Path(__file__).resolve().parent

MONTHS = pd.period_range("2014-01", "2026-09", freq="M")
LATEST_VINTAGE = "2026-10-15"    # as-of date of the current index values
EARLIER_VINTAGE = "2026-04-15"   # as-of date of the earlier chained-index release
# two older releases of the chained index (revision history for the revision band)
OLDER_VINTAGES = {"2025-04-15": "2025-03", "2025-10-15": "2025-09"}  # as-of: last month
OLDER_SEED = SEED + 1            # their own generator, so the other files stay as they were
N_PRELIM = 11                    # latest months of the chained index still preliminary


def _annual_inflation(year: np.ndarray, month: np.ndarray) -> np.ndarray:
    """A made-up path of consumer inflation (percent a year) by month."""
    t = year + (month - 1) / 12.0
    base = np.full_like(t, 2.1, dtype=float)
    base = np.where(t < 2016, 1.2, base)                               # low-inflation spell
    base = np.where((t >= 2020.2) & (t < 2020.6), 0.3, base)            # a short slump
    surge = 6.0 * np.exp(-((t - 2022.4) / 0.7) ** 2)                    # a price surge
    settle = np.where(t >= 2023.5, 0.6, 0.0)                            # slow to settle
    return base + surge + settle


def _index_from_rates(rates_pct_yr: np.ndarray, rng: np.random.Generator, noise_sd: float,
                      start: float = 100.0) -> np.ndarray:
    monthly = (1 + rates_pct_yr / 100.0) ** (1 / 12) - 1
    monthly = monthly + rng.normal(0, noise_sd, len(monthly))
    return start * np.cumprod(1 + monthly)


def _rescale(values: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """Rescale so the mean over ``mask`` is 100 (the reference period)."""
    return values * 100.0 / values[mask].mean()


def consumer_indexes(rng: np.random.Generator) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Fixed-basket and chained consumer indexes (monthly, not seasonally adjusted), plus
    an earlier vintage of the chained index with other preliminary values."""
    year, month = MONTHS.year.to_numpy(), MONTHS.month.to_numpy()
    infl = _annual_inflation(year, month)
    # Mild seasonal price pattern (not seasonally adjusted): percent of level.
    season = 0.12 * np.sin(2 * np.pi * (month - 3) / 12)
    fixed = _index_from_rates(infl, rng, 0.0006) * (1 + season / 100)
    # The chained index tracks substitution: grows ~0.3 points a year more slowly.
    chained = _index_from_rates(infl - 0.30, rng, 0.0006) * (1 + season / 100)
    ref_2015 = year == 2015
    fixed = _rescale(fixed, ref_2015)
    chained = _rescale(chained, ref_2015)

    n = len(MONTHS)
    status = np.array(["final"] * n, dtype=object)
    status[n - N_PRELIM:] = "preliminary"

    # Earlier vintage: published up to 2026-03, with its own last 11 months preliminary.
    # Preliminary values differ from what was later published: revisions of a few
    # hundredths to a few tenths of a point, drifting with distance from final.
    end_old = list(MONTHS).index(pd.Period("2026-03", "M")) + 1
    old_vals = chained[:end_old].copy()
    old_status = np.array(["final"] * end_old, dtype=object)
    old_status[end_old - N_PRELIM:] = "preliminary"
    k = np.arange(N_PRELIM)
    revision = 0.06 + 0.025 * k + rng.normal(0, 0.03, N_PRELIM)  # earlier print too high
    old_vals[end_old - N_PRELIM:] = old_vals[end_old - N_PRELIM:] + revision

    labels = [f"{p.year:04d}-{p.month:02d}" for p in MONTHS]
    cur = pd.concat([
        pd.DataFrame({"series": "Fixed-basket consumer index", "period": labels,
                      "value": fixed.round(3), "unit": "index 2015=100",
                      "status": "final", "vintage": LATEST_VINTAGE}),
        pd.DataFrame({"series": "Chained consumer index", "period": labels,
                      "value": chained.round(3), "unit": "index 2015=100",
                      "status": status, "vintage": LATEST_VINTAGE}),
    ], ignore_index=True)
    old = pd.DataFrame({"series": "Chained consumer index", "period": labels[:end_old],
                        "value": old_vals.round(3), "unit": "index 2015=100",
                        "status": old_status, "vintage": EARLIER_VINTAGE})
    return cur, old


def older_chained_vintages(cur: pd.DataFrame, rng: np.random.Generator) -> dict[str, pd.DataFrame]:
    """Two older releases of the chained index, each published to its last month with
    that month and the ten before it preliminary, printed higher than the values later
    made final (as in the 2026-04-15 release): a revision history of 22 values."""
    chained = cur[cur["series"] == "Chained consumer index"]
    out = {}
    for as_of, last in OLDER_VINTAGES.items():
        part = chained[chained["period"] <= last].copy()
        n = len(part)
        status = np.array(["final"] * n, dtype=object)
        status[n - N_PRELIM:] = "preliminary"
        k = np.arange(N_PRELIM)
        revision = 0.05 + 0.022 * k + rng.normal(0, 0.03, N_PRELIM)
        values = part["value"].to_numpy(dtype=float, copy=True)
        values[n - N_PRELIM:] = values[n - N_PRELIM:] + revision
        part["value"] = values.round(3)
        part["status"] = status
        part["vintage"] = as_of
        out[f"chained_consumer_index_vintage_{as_of}.csv"] = part.reset_index(drop=True)
    return out


def producer_and_wage(rng: np.random.Generator) -> tuple[pd.DataFrame, pd.DataFrame]:
    year, month = MONTHS.year.to_numpy(), MONTHS.month.to_numpy()
    t = year + (month - 1) / 12.0
    ppi_rate = 1.0 + 9.0 * np.exp(-((t - 2022.0) / 0.6) ** 2) - 2.5 * np.exp(-((t - 2023.4) / 0.5) ** 2)
    ppi = _rescale(_index_from_rates(ppi_rate, rng, 0.0025), year == 2015)
    labels = [f"{p.year:04d}-{p.month:02d}" for p in MONTHS]
    ppi_df = pd.DataFrame({"series": "Producer index for apparel and outdoor goods",
                           "period": labels, "value": ppi.round(3),
                           "unit": "index 2015=100", "status": "final",
                           "vintage": LATEST_VINTAGE})

    quarters = pd.period_range("2014Q1", "2026Q2", freq="Q")
    qt = quarters.year.to_numpy() + (quarters.quarter.to_numpy() - 1) / 4.0
    wage_rate = 2.6 + 2.2 * np.exp(-((qt - 2022.8) / 0.9) ** 2)
    q_growth = (1 + wage_rate / 100) ** 0.25 - 1 + rng.normal(0, 0.0015, len(quarters))
    wage = np.cumprod(1 + q_growth)
    wage = _rescale(wage, quarters.year.to_numpy() == 2015)
    wage_status = np.array(["final"] * len(quarters), dtype=object)
    wage_status[-1] = "preliminary"
    wage_df = pd.DataFrame({"series": "Private-sector wage index",
                            "period": [f"{p.year}Q{p.quarter}" for p in quarters],
                            "value": wage.round(3), "unit": "index 2015=100",
                            "status": wage_status, "vintage": LATEST_VINTAGE})
    return ppi_df, wage_df


def public_sector_indexes(rng: np.random.Generator) -> tuple[pd.DataFrame, pd.DataFrame]:
    # Government consumption deflator, quarterly; the last two quarters preliminary and
    # out-years to mid-2030 projected at an assumed 2.5 % a year.
    quarters = pd.period_range("2014Q1", "2030Q2", freq="Q")
    last_actual = pd.Period("2026Q2", "Q")
    qt = quarters.year.to_numpy() + (quarters.quarter.to_numpy() - 1) / 4.0
    rate = 1.8 + 3.2 * np.exp(-((qt - 2022.6) / 0.8) ** 2)
    actual = quarters <= last_actual
    g = (1 + rate / 100) ** 0.25 - 1
    g = g + np.where(actual, rng.normal(0, 0.0012, len(quarters)), 0.0)
    g = np.where(actual, g, 1.025 ** 0.25 - 1)
    defl = _rescale(np.cumprod(1 + g), quarters.year.to_numpy() == 2017)
    st = np.where(actual, "final", "projected").astype(object)
    st[np.flatnonzero(actual)[-2:]] = "preliminary"
    gov = pd.DataFrame({"series": "Government consumption deflator",
                        "period": [f"{p.year}Q{p.quarter}" for p in quarters],
                        "value": defl.round(3), "unit": "index 2017=100",
                        "status": st, "vintage": LATEST_VINTAGE})

    # Construction cost index, calendar years; 2026-2030 projected at 3.5 % a year.
    years = np.arange(2012, 2031)
    crate = np.where(years <= 2025,
                     2.8 + 7.0 * np.exp(-((years - 2022.0) / 1.0) ** 2)
                     + rng.normal(0, 0.6, len(years)), 3.5)
    cci = _rescale(np.cumprod(1 + crate / 100), years == 2017)
    cst = np.where(years <= 2025, "final", "projected")
    cons = pd.DataFrame({"series": "Construction cost index", "period": years.astype(str),
                         "value": cci.round(2), "unit": "index 2017=100", "status": cst,
                         "vintage": LATEST_VINTAGE})
    return gov, cons


SEGMENTS = {
    # name: (monthly level in Jan 2014, nominal growth % a year, seasonal factors Jan..Dec)
    "Apparel": (4200.0, 4.2,
                [0.78, 0.74, 0.92, 0.96, 1.00, 0.95, 0.93, 1.06, 0.98, 1.00, 1.22, 1.66]),
    "Footwear": (2100.0, 3.1,
                 [0.80, 0.78, 0.96, 1.00, 1.02, 0.96, 0.98, 1.18, 1.02, 0.96, 1.08, 1.36]),
    "Outdoor gear": (2600.0, 5.4,
                     [0.62, 0.66, 0.88, 1.06, 1.26, 1.32, 1.22, 1.02, 0.90, 0.86, 0.98, 1.22]),
    "Home goods": (1500.0, 2.4,
                   [0.84, 0.80, 0.92, 0.94, 0.98, 0.96, 0.94, 0.98, 0.96, 1.02, 1.24, 1.42]),
}


def harbourline_revenue(rng: np.random.Generator) -> pd.DataFrame:
    year, month = MONTHS.year.to_numpy(), MONTHS.month.to_numpy()
    t = year + (month - 1) / 12.0 - 2014
    # A temporary dip in spring 2020 (store closures in the story), then recovery.
    dip = 1 - 0.45 * np.exp(-((t - 6.33) / 0.12) ** 2)
    out = {"period": [f"{p.year:04d}-{p.month:02d}" for p in MONTHS]}
    for name, (level, growth, factors) in SEGMENTS.items():
        trend = level * (1 + growth / 100) ** t
        # A little extra growth during the price surge so real growth stays debatable.
        trend = trend * (1 + 0.03 * np.clip(t - 7.5, 0, 1.5))
        seas = np.asarray(factors)[month - 1]
        seas = seas / np.mean(factors)
        noise = np.exp(rng.normal(0, 0.025, len(MONTHS)))
        out[f"{name} revenue (USD thousands)"] = (trend * seas * dip * noise).round(1)
    return pd.DataFrame(out)


PROGRAMS = {
    # name: (FY2016 spending, growth % a year, noise sd %)
    "Bus operations": (48200.0, 3.3, 1.5),
    "Rail operations": (61800.0, 2.9, 1.5),
    "Capital maintenance": (24500.0, 4.5, 6.0),
    "Paratransit services": (8900.0, 5.2, 2.0),
}


def tallmere_spending(rng: np.random.Generator) -> pd.DataFrame:
    years = np.arange(2016, 2031)
    proposed = years >= 2027
    rows = []
    for name, (level, growth, sd) in PROGRAMS.items():
        g = growth + np.where(proposed, 0.0, rng.normal(0, sd, len(years)))
        g[0] = 0.0
        vals = level * np.cumprod(1 + g / 100)
        for y, v, p in zip(years, vals, proposed, strict=True):
            rows.append({"series": name, "period": f"FY{y}", "value": round(float(v), 1),
                         "unit": "USD thousands", "status": "projected" if p else "final"})
    return pd.DataFrame(rows)


def main() -> None:
    rng = np.random.default_rng(SEED)
    cur, old = consumer_indexes(rng)
    ppi, wage = producer_and_wage(rng)
    gov, cons = public_sector_indexes(rng)
    files = {
        "harbourline_revenue.csv": harbourline_revenue(rng),
        "tallmere_program_spending.csv": tallmere_spending(rng),
        "consumer_indexes.csv": cur,
        "chained_consumer_index_vintage_2026-04-15.csv": old,
        "producer_index.csv": ppi,
        "wage_index.csv": wage,
        "government_consumption_deflator.csv": gov,
        "construction_cost_index.csv": cons,
        **older_chained_vintages(cur, np.random.default_rng(OLDER_SEED)),
    }
    for name, frame in files.items():
        frame.to_csv(HERE / name, index=False)
        print(f"wrote {name}: {len(frame)} rows")


if __name__ == "__main__":
    main()
