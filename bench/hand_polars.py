"""The benchmark job written by hand in polars (Python), lazily, as an analyst would: deflate
with each entity's own CPI to BASE-year prices, convert at the BASE-year PPP (baseline: the
BASE-year exchange rate), divide by population, rank within item and year (largest first).

    python bench/hand_polars.py DATADIR OUT.csv [BASE]
"""

import sys

import polars as pl

data, out = sys.argv[1], sys.argv[2]
base = int(sys.argv[3]) if len(sys.argv) > 3 else 2020
refs = f"{data}/refs"


def wide(name, column):
    return (
        pl.scan_csv(f"{refs}/{name}")
        .unpivot(index="country_code", variable_name="year", value_name=column)
        .select(pl.col("country_code").alias("entity"), pl.col("year").cast(pl.Int64), pl.col(column))
    )


cpi, ppp, fx = wide("cpi.csv", "cpi"), wide("ppp.csv", "ppp"), wide("fx.csv", "fx")
at_base = lambda frame, column: frame.filter(pl.col("year") == base).select("entity", pl.col(column).alias(f"{column}_base"))
pop = pl.scan_csv(f"{refs}/population.csv").select(
    "entity", "year", (pl.col("population_thousands") * 1000).alias("population")
)
real = pl.col("value") * pl.col("cpi_base_") / pl.col("cpi")
rank = lambda column: pl.col(column).rank(method="min", descending=True).over("item", "year")
(
    pl.scan_csv(f"{data}/input.csv")
    .join(cpi, on=["entity", "year"], how="left")
    .join(at_base(cpi, "cpi").rename({"cpi_base": "cpi_base_"}), on="entity", how="left")
    .join(at_base(ppp, "ppp"), on="entity", how="left")
    .join(at_base(fx, "fx"), on="entity", how="left")
    .join(pop, on=["entity", "year"], how="left")
    .with_columns(
        value_baseline=real / pl.col("fx_base") / pl.col("population"),
        value_adjusted=real / pl.col("ppp_base") / pl.col("population"),
    )
    .with_columns(rank_baseline=rank("value_baseline"), rank_adjusted=rank("value_adjusted"))
    .with_columns(rank_shift=pl.col("rank_baseline").cast(pl.Int64) - pl.col("rank_adjusted").cast(pl.Int64))
    .sink_csv(out)
)
