#!/usr/bin/env python3
"""Check the fixtures against each other with the standard library only (no dataset needed).

Reads the three reference folders (wb-bulk, sdmx v1 and v2, estat) and the two input tables
independently of build.py, recomputes value / ppp and value / ppp / population for every row of
expected.csv, and checks that every folder gives the same factors and the same results.
Run: python3 tests/data/world/verify.py
"""
import csv
import math
from pathlib import Path

HERE = Path(__file__).resolve().parent
GEO = {"AT": "AUT", "BE": "BEL", "CH": "CHE", "CZ": "CZE", "DE": "DEU", "DK": "DNK", "ES": "ESP",
       "FI": "FIN", "FR": "FRA", "UK": "GBR", "EL": "GRC", "HU": "HUN", "IE": "IRL", "IT": "ITA",
       "NL": "NLD", "NO": "NOR", "PL": "POL", "PT": "PRT", "SE": "SWE"}


def wb(path):
    lines = path.read_text().splitlines()
    assert lines[0] == '"Data Source","Penn World Table 7.1, in a bulk-download layout",' and lines[1] == ""
    assert all(l.endswith(",") for l in lines if l), path
    rows = list(csv.reader(lines[4:]))
    head = rows[0][:-1]
    out = {}
    for r in rows[1:]:
        for y, cell in zip(head[4:], r[4:-1]):
            if cell != "":
                out[(r[1], int(y))] = float(cell)
    return out


def sdmx(path, measure):
    out = {}
    for r in csv.DictReader(path.open()):
        if r["MEASURE"].split(":")[0] != measure:
            continue
        mult = int(r["UNIT_MULT"].split(":")[0])
        out[(r["REF_AREA"].split(":")[0], int(r["TIME_PERIOD"]))] = float(r["OBS_VALUE"]) * 10 ** mult
    return out


def estat(path):
    lines = path.read_text().splitlines()
    head = lines[0].split("\t")
    assert head[0] == "freq,unit,geo\\TIME_PERIOD" and all(h.endswith(" ") for h in head[1:])
    out = {}
    for line in lines[1:]:
        cells = line.split("\t")
        geo = cells[0].split(",")[2]
        for y, cell in zip(head[1:], cells[1:]):
            num = cell.split(" ")[0]
            if num != ":":
                out[(GEO[geo], int(y))] = float(num)
    return out


def inputs():
    long_lines = (HERE / "gdp-long-titled.csv").read_text().splitlines()
    body = [l for l in long_lines[1:] if l and not l.startswith("Source:")]
    long = {(r["country"], int(r["year"])): int(r["value"]) for r in csv.DictReader(body)}
    wide_lines = (HERE / "gdp-wide-titled.csv").read_text().splitlines()[1:]
    wide = {}
    for r in csv.DictReader(wide_lines):
        for k, v in r.items():
            if k != "country":
                wide[(r["country"], int(k))] = int(v)
    assert long == wide
    return long


def main():
    refs = {
        "wb-bulk": (wb(HERE / "wb-bulk/ppp.csv"), wb(HERE / "wb-bulk/population.csv")),
        "sdmx-v1": (sdmx(HERE / "sdmx/ppp-v1.csv", "PPP"), sdmx(HERE / "sdmx/population-v1.csv", "POP")),
        "sdmx-v2": (sdmx(HERE / "sdmx/v2/ppp-v2.csv", "PPP"), sdmx(HERE / "sdmx/v2/population-v2.csv", "POP")),
        "estat": (estat(HERE / "estat/ppp.tsv"), estat(HERE / "estat/population.tsv")),
    }
    values = inputs()
    n = 0
    worst = 0.0
    for r in csv.DictReader((HERE / "expected.csv").open()):
        key = (r["iso3"], int(r["year"]))
        v = int(r["value_lcu"])
        assert values[(r["country"], key[1])] == v
        for name, (ppp, pop) in refs.items():
            if name == "estat" and r["in_estat"] == "no":
                assert key not in ppp
                continue
            assert ppp[key] == float(r["ppp"]), (name, key)
            assert math.isclose(pop[key], float(r["population"]), rel_tol=1e-15), (name, key)
            assert v / ppp[key] == float(r["expected_intl"])
            assert math.isclose(v / ppp[key] / pop[key], float(r["expected_intl_per_capita"]), rel_tol=1e-14)
        worst = max(worst, abs(float(r["expected_intl_per_capita"]) / float(r["published_intl_per_capita"]) - 1))
        n += 1
    print(f"{n} rows consistent across {', '.join(refs)}; largest per-capita gap to PWT cgdp {worst:.3e}")


if __name__ == "__main__":
    main()
