"""The benchmark job written by hand in polars (Python), writing the same 32 columns as
levelfield's default output (row id, the entity as given and as resolved, the figure as given,
every stage, every factor used with its year, both values, both ranks, the shift, the flags),
not the 13 of bench/hand_polars.py. It is not a second implementation of levelfield: it knows
the benchmark's files only. It measures what writing levelfield's default output costs polars
itself, the bound of the default run (README, performance).

    python bench/hand_polars_full.py DATADIR OUT.csv [BASE]
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


def at_base(frame, column, name):
    return frame.filter(pl.col("year") == base).select(
        "entity", pl.col(column).alias(f"{name}_used"), pl.lit(base).alias(f"{name}_year")
    )


cpi, ppp, fx = wide("cpi.csv", "cpi"), wide("ppp.csv", "ppp"), wide("fx.csv", "fx")
pop = pl.scan_csv(f"{refs}/population.csv").select(
    "entity", "year", (pl.col("population_thousands") * 1000).alias("population_used")
)
names = pl.scan_csv(f"{refs}/aliases.csv").select(
    pl.col("code").alias("entity"), pl.col("name").alias("entity_name"), pl.col("kind").alias("entity_kind")
)
rank = lambda column: pl.col(column).rank(method="min", descending=True).over("group", "year")
(
    pl.scan_csv(f"{data}/input.csv", schema_overrides={"value": pl.String})
    .with_row_index("row_id", offset=1)
    .select(
        "row_id",
        pl.col("entity").alias("entity_input"),
        pl.col("entity").alias("entity_code"),
        "year",
        pl.col("item").alias("group"),
        pl.col("value").alias("value_input"),
        pl.col("value").cast(pl.Float64).alias("value"),
    )
    .join(names, left_on="entity_code", right_on="entity", how="left")
    .join(at_base(fx, "fx", "fx_base"), left_on="entity_code", right_on="entity", how="left")
    .join(at_base(ppp, "ppp", "ppp_base"), left_on="entity_code", right_on="entity", how="left")
    .join(
        cpi.rename({"cpi": "cpi_used"}).with_columns(cpi_year=pl.col("year")),
        left_on=["entity_code", "year"], right_on=["entity", "year"], how="left",
    )
    .join(at_base(cpi, "cpi", "cpi_base"), left_on="entity_code", right_on="entity", how="left")
    .join(
        pop.with_columns(population_year=pl.col("year")),
        left_on=["entity_code", "year"], right_on=["entity", "year"], how="left",
    )
    .with_columns(currency=pl.lit(None, pl.String), value_lcu=pl.col("value"))
    .with_columns(value_real=pl.col("value_lcu") * pl.col("cpi_base_used") / pl.col("cpi_used"))
    .with_columns(value_intl=pl.col("value_real") / pl.col("ppp_base_used"))
    .with_columns(
        value_per_capita=pl.col("value_intl") / pl.col("population_used"),
        cpi_ratio=pl.col("cpi_base_used") / pl.col("cpi_used"),
        price_level_index=100 * pl.col("ppp_base_used") / pl.col("fx_base_used"),
    )
    .with_columns(
        value_baseline=pl.col("value_real") / pl.col("fx_base_used") / pl.col("population_used"),
        value_adjusted=pl.col("value_per_capita"),
    )
    .with_columns(rank_baseline=rank("value_baseline"), rank_adjusted=rank("value_adjusted"))
    .with_columns(
        rank_shift=pl.col("rank_baseline").cast(pl.Int64) - pl.col("rank_adjusted").cast(pl.Int64),
        flags=pl.lit(""),
    )
    .select(
        "row_id", "entity_input", "entity_code", "entity_name", "entity_kind", "year", "group",
        "value_input", "value", "currency", "value_lcu", "value_real", "value_intl",
        "value_per_capita", "fx_base_used", "fx_base_year", "ppp_base_used", "ppp_base_year",
        "cpi_used", "cpi_year", "cpi_base_used", "cpi_base_year", "population_used",
        "population_year", "cpi_ratio", "price_level_index", "value_baseline", "value_adjusted",
        "rank_baseline", "rank_adjusted", "rank_shift", "flags",
    )
    .sink_csv(out)
)
