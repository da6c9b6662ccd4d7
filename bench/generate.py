"""Generates a SYNTHETIC long table and matching reference tables for the levelfield benchmark.

200 invented entities (user-assigned codes XAA..XHR, names "Synthland 001".."Synthland 200")
x 50 years (1975..2024) x K items, with K chosen so the table has the requested number of rows
(1M -> K = 100, 10M -> K = 1000, 50M -> K = 5000). Below 10,000 rows (one item) the input is cut
after the requested number of rows, so `200` writes 200 rows (four entities). Every figure is
random and means nothing.

    python bench/generate.py ROWS OUTDIR

writes OUTDIR/input.csv (entity,year,item,value) and OUTDIR/refs/ (datapackage.json, aliases,
fx, ppp, cpi, population). The same seed gives the same files.
"""

import json
import os
import string
import sys

import numpy as np
import polars as pl

ENTITIES = 200
YEARS = list(range(1975, 2025))


def codes():
    letters = string.ascii_uppercase
    out = [f"X{a}{b}" for a in letters for b in letters]
    return out[:ENTITIES]


def main():
    rows = int(sys.argv[1].replace("_", ""))
    outdir = sys.argv[2]
    items = max(1, rows // (ENTITIES * len(YEARS)))
    os.makedirs(os.path.join(outdir, "refs"), exist_ok=True)
    rng = np.random.default_rng(20261202)
    ent = codes()

    # Reference tables, wide (one column per year) except population (long).
    level = rng.lognormal(mean=2.0, sigma=1.5, size=ENTITIES)
    growth = rng.normal(0.03, 0.02, size=ENTITIES)
    t = np.arange(len(YEARS))
    fx = level[:, None] * np.exp(growth[:, None] * t[None, :])
    ppp = fx * rng.uniform(0.3, 1.2, size=ENTITIES)[:, None]
    inflation = rng.uniform(0.01, 0.08, size=ENTITIES)
    cpi = 100 * np.exp(inflation[:, None] * (t[None, :] - (2015 - 1975)))
    pop = rng.lognormal(mean=9.0, sigma=1.2, size=ENTITIES)[:, None] * np.exp(
        rng.normal(0.01, 0.01, size=ENTITIES)[:, None] * t[None, :]
    )

    def wide(name, matrix):
        frame = pl.DataFrame({"country_code": ent}).with_columns(
            [pl.Series(str(y), np.round(matrix[:, i], 6)) for i, y in enumerate(YEARS)]
        )
        frame.write_csv(os.path.join(outdir, "refs", name))

    wide("fx.csv", fx)
    wide("ppp.csv", ppp)
    wide("cpi.csv", cpi)
    pl.DataFrame(
        {
            "entity": np.repeat(ent, len(YEARS)),
            "year": np.tile(YEARS, ENTITIES),
            "population_thousands": np.round(pop.reshape(-1), 3),
        }
    ).write_csv(os.path.join(outdir, "refs", "population.csv"))
    pl.DataFrame(
        {
            "name": [f"Synthland {i + 1:03d}" for i in range(ENTITIES)],
            "code": ent,
            "kind": ["user"] * ENTITIES,
        }
    ).write_csv(os.path.join(outdir, "refs", "aliases.csv"))
    source = [{"title": "SYNTHETIC: random numbers for the levelfield benchmark"}]
    catalog = {
        "name": "levelfield-bench-references",
        "title": "SYNTHETIC reference tables for the levelfield benchmark (random numbers)",
        "aliases": ["aliases.csv"],
        "resources": [
            {"name": "bench-fx", "path": "fx.csv", "kind": "fx", "unit": "LCU per USD",
             "base_currency": "USD", "vintage": "synthetic", "sources": source},
            {"name": "bench-ppp", "path": "ppp.csv", "kind": "ppp", "unit": "LCU per international dollar",
             "base_currency": "USD", "vintage": "synthetic", "sources": source},
            {"name": "bench-cpi", "path": "cpi.csv", "kind": "cpi", "unit": "index, 2015 = 100",
             "vintage": "synthetic", "sources": source},
            {"name": "bench-population", "path": "population.csv", "kind": "population",
             "unit": "persons, thousands", "multiplier": 1000, "layout": "long",
             "entity_field": "entity", "year_field": "year", "value_field": "population_thousands",
             "vintage": "synthetic", "sources": source},
        ],
    }
    with open(os.path.join(outdir, "refs", "datapackage.json"), "w") as f:
        json.dump(catalog, f, indent=2)

    # The input: entity-major, then year, then item; written in slices to bound memory.
    path = os.path.join(outdir, "input.csv")
    with open(path, "wb") as f:
        f.write(b"entity,year,item,value\n")
        item_names = np.array([f"item-{i + 1:05d}" for i in range(items)])
        left = rows if rows < ENTITIES * len(YEARS) else ENTITIES * len(YEARS) * items
        for e in range(ENTITIES):
            if left <= 0:
                break
            n = len(YEARS) * items
            values = np.round(rng.lognormal(mean=4.0, sigma=1.0, size=n) * fx[e].repeat(items), 2)
            frame = pl.DataFrame(
                {
                    "entity": [ent[e]] * n,
                    "year": np.repeat(YEARS, items),
                    "item": np.tile(item_names, len(YEARS)),
                    "value": values,
                }
            )
            frame.head(left).write_csv(f, include_header=False)
            left -= n
    written = rows if rows < ENTITIES * len(YEARS) else ENTITIES * len(YEARS) * items
    print(f"{path}: {written} rows (up to {ENTITIES} entities x {len(YEARS)} years x {items} items)")


if __name__ == "__main__":
    main()
