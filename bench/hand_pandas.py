"""The benchmark job written by hand in pandas, as an analyst would: deflate with each entity's
own CPI to BASE-year prices, convert at the BASE-year PPP (baseline: BASE-year exchange rate),
divide by population, rank within item and year (largest first, ties share the lowest rank).

    python bench/hand_pandas.py DATADIR OUT.csv [BASE]
"""

import sys

import pandas as pd

data, out = sys.argv[1], sys.argv[2]
base = int(sys.argv[3]) if len(sys.argv) > 3 else 2020
refs = f"{data}/refs"


def wide(name, column):
    frame = pd.read_csv(f"{refs}/{name}").melt(id_vars="country_code", var_name="year", value_name=column)
    frame["year"] = frame["year"].astype(int)
    return frame.rename(columns={"country_code": "entity"})


cpi, ppp, fx = wide("cpi.csv", "cpi"), wide("ppp.csv", "ppp"), wide("fx.csv", "fx")
pop = pd.read_csv(f"{refs}/population.csv")
pop["population"] = pop["population_thousands"] * 1000

table = pd.read_csv(f"{data}/input.csv")
table = table.merge(cpi, on=["entity", "year"], how="left")
table = table.merge(cpi[cpi.year == base][["entity", "cpi"]].rename(columns={"cpi": "cpi_base"}), on="entity", how="left")
table = table.merge(ppp[ppp.year == base][["entity", "ppp"]], on="entity", how="left")
table = table.merge(fx[fx.year == base][["entity", "fx"]], on="entity", how="left")
table = table.merge(pop[["entity", "year", "population"]], on=["entity", "year"], how="left")
real = table["value"] * table["cpi_base"] / table["cpi"]
table["value_baseline"] = real / table["fx"] / table["population"]
table["value_adjusted"] = real / table["ppp"] / table["population"]
groups = table.groupby(["item", "year"])
table["rank_baseline"] = groups["value_baseline"].rank(method="min", ascending=False).astype("Int64")
table["rank_adjusted"] = groups["value_adjusted"].rank(method="min", ascending=False).astype("Int64")
table["rank_shift"] = table["rank_baseline"] - table["rank_adjusted"]
table.to_csv(out, index=False)
