#!/usr/bin/env python3
"""Regenerate every fixture in tests/data/world/ from Penn World Table 7.1.

The data come from the Debian package r-cran-pwt 7.1.1-7 (the CRAN package `pwt` 7.1-1,
which repackages Penn World Table 7.1). R itself is not needed: the package's lazy-load
database (data/Rdata.rdx + data/Rdata.rdb) is read with the PyPI package `rdata`.

Set-up (as root, run once):

    apt-get update
    mkdir -p /var/tmp/lf-debs && cd /var/tmp/lf-debs
    apt-get download r-cran-pwt=7.1.1-7
    dpkg -x r-cran-pwt_7.1.1-7_all.deb /var/tmp/lf-debs/x
    # (or: apt-get install -y r-cran-pwt, which also installs R, and the files land under /usr)
    python3 -m venv /var/tmp/lf-data-venv
    /var/tmp/lf-data-venv/bin/pip install rdata==1.1.0 pandas

Run:

    /var/tmp/lf-data-venv/bin/python tests/data/world/build.py

The output is deterministic: running it again gives byte-identical files.
Set LF_PWT_DIR to the package folder (the one holding DESCRIPTION and data/) to read it elsewhere.
"""
import bz2
import csv
import gzip
import io
import json
import lzma
import os
import struct
import sys
import warnings
import zlib
from decimal import Decimal
from pathlib import Path

import rdata

warnings.filterwarnings("ignore", message="Unknown file type")

OUT = Path(__file__).resolve().parent
CANDIDATES = [
    os.environ.get("LF_PWT_DIR", ""),
    "/usr/lib/R/site-library/pwt",
    "/var/tmp/lf-debs/x/usr/lib/R/site-library/pwt",
]

# ---------------------------------------------------------------------------------------------
# Reading the R lazy-load database
# ---------------------------------------------------------------------------------------------


def _decompress(buf):
    """One object of an .rdb file: 4-byte big-endian length, then a type byte and the payload."""
    n = struct.unpack(">I", buf[:4])[0]
    kind = buf[4:5]
    if kind == b"Z":  # R's xz: a raw LZMA2 stream
        out = lzma.decompress(buf[5:], format=lzma.FORMAT_RAW,
                              filters=[{"id": lzma.FILTER_LZMA2, "preset": 9 | lzma.PRESET_EXTREME}])
    elif kind == b"2":
        out = bz2.decompress(buf[5:])
    elif kind == b"0":
        out = buf[5:]
    else:  # zlib, no type byte
        out = zlib.decompress(buf[4:])
    assert len(out) == n, (len(out), n)
    return out


def load_r_object(prefix, name):
    index = rdata.conversion.convert(
        rdata.parser.parse_data(gzip.decompress(Path(prefix + ".rdx").read_bytes())))
    off, length = (int(v) for v in index["variables"][name])
    with open(prefix + ".rdb", "rb") as f:
        f.seek(off)
        buf = f.read(length)
    return rdata.conversion.convert(rdata.parser.parse_data(_decompress(buf)))


def find_package():
    for c in CANDIDATES:
        if c and Path(c, "data", "Rdata.rdb").exists():
            desc = Path(c, "DESCRIPTION").read_text()
            assert "Package: pwt\n" in desc and "Version: 7.1-1\n" in desc, "expected CRAN pwt 7.1-1"
            return c
    sys.exit("r-cran-pwt not found; see the set-up at the top of this script")


# ---------------------------------------------------------------------------------------------
# Selection
# ---------------------------------------------------------------------------------------------

# PWT 7.1 isocode -> ISO 3166-1 alpha-3 (PWT 7.1 writes Germany as GER; all others are ISO already)
PWT_TO_ISO3 = {"GER": "DEU"}
# ISO alpha-3 -> the statistics-office alpha-2 geo code (Greece EL, United Kingdom UK)
ISO3_TO_GEO = {
    "AUT": "AT", "BEL": "BE", "CHE": "CH", "CZE": "CZ", "DEU": "DE", "DNK": "DK", "ESP": "ES",
    "FIN": "FI", "FRA": "FR", "GBR": "UK", "GRC": "EL", "HUN": "HU", "IRL": "IE", "ITA": "IT",
    "NLD": "NL", "NOR": "NO", "POL": "PL", "PRT": "PT", "SWE": "SE",
}
OTHERS = ["AUS", "BRA", "CAN", "CHL", "IND", "JPN", "KOR", "MEX", "NZL", "TUR", "USA", "ZAF"]
REF_COUNTRIES = sorted(list(ISO3_TO_GEO) + OTHERS)  # 31 countries in the reference tables

# Countries and years of the input tables (24 countries x 5 years)
INPUT_COUNTRIES = ["AUS", "AUT", "BEL", "BRA", "CAN", "CHE", "CZE", "DEU", "ESP", "FRA", "GBR",
                   "GRC", "HUN", "IND", "IRL", "ITA", "JPN", "KOR", "MEX", "NOR", "POL", "SWE",
                   "TUR", "USA"]
INPUT_YEARS = [2006, 2007, 2008, 2009, 2010]

WB_YEARS = list(range(1960, 2024))           # columns of the bulk-download layout
SDMX_YEARS = list(range(2000, 2011))         # observations written in SDMX-CSV
ESTAT_YEARS = list(range(2004, 2012))        # 2011 is past the end of PWT 7.1: all ':'

# Aggregate rows of the bulk layout: PWT 7.1 has no aggregates, so their cells stay empty.
WB_AGGREGATES = [("Euro area", "EMU"), ("High income", "HIC"), ("World", "WLD")]

# Status letters added in the statistics-office TSV files (a layout feature, not in PWT):
#   p (provisional) on every 2010 cell of DE, EL and FR;  e (estimated) on 2009 for IT and PL;
#   ': c' (confidential, value withheld) on 2004 population of CH and on 2005 exchange rate of NO.
ESTAT_FLAGS = {("DE", 2010): "p", ("EL", 2010): "p", ("FR", 2010): "p",
               ("IT", 2009): "e", ("PL", 2009): "e"}
ESTAT_WITHHELD = {"population": {("CH", 2004)}, "fx": {("NO", 2005)}, "ppp": set()}


# ---------------------------------------------------------------------------------------------
# Helpers
# ---------------------------------------------------------------------------------------------

def num(x):
    """A float exactly as stored in the dataset (shortest repr that round-trips)."""
    r = repr(float(x))
    return r[:-2] if r.endswith(".0") and "e" not in r else r


def persons(pop_thousands):
    """PWT pop is in thousands with at most 3 decimals; x1000 is a whole number of persons."""
    p = float(pop_thousands) * 1000.0
    n = round(p)
    assert abs(p - n) < 1e-6, pop_thousands
    return n


def millions(pop_thousands):
    """Population in millions, by moving the decimal point of the stored figure (exact)."""
    d = Decimal(repr(float(pop_thousands))) / 1000
    s = format(d.normalize(), "f")
    return s


def write(path, text):
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8", newline="")
    print(f"wrote {path.relative_to(OUT)} ({len(text.encode())} bytes)")


def csv_text(rows, **kw):
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n", **kw)
    w.writerows(rows)
    return buf.getvalue()


def reldiff(a, b):
    return (a - b) / b


# ---------------------------------------------------------------------------------------------
# Build
# ---------------------------------------------------------------------------------------------

def main():
    pkg = find_package()
    df = load_r_object(os.path.join(pkg, "data", "Rdata"), "pwt7.1")
    df = df.copy()
    df["iso3"] = [PWT_TO_ISO3.get(str(c), str(c)) for c in df["isocode"]]
    df["year"] = df["year"].astype(int)
    df = df[df["iso3"].isin(REF_COUNTRIES)]
    rec = {(r.iso3, int(r.year)): r for r in df.itertuples()}
    names = {r.iso3: str(r.country) for r in df.itertuples()}
    currency = {r.iso3: str(r.currency) for r in df.itertuples()}
    assert sorted(names) == REF_COUNTRIES, sorted(names)

    def get(iso3, year, col):
        r = rec.get((iso3, year))
        if r is None:
            return None
        v = getattr(r, col)
        return None if v != v else float(v)  # NaN -> None

    # ---------------- 1. bulk-download layout ----------------
    wb = OUT / "wb-bulk"
    indicators = {
        "ppp": ("PPP conversion factor, GDP (LCU per international $)", "PA.NUS.PPP",
                lambda i, y: get(i, y, "ppp"), num),
        "population": ("Population, total", "SP.POP.TOTL",
                       lambda i, y: get(i, y, "pop"), lambda v: str(persons(v))),
        "fx": ("Official exchange rate (LCU per US$, period average)", "PA.NUS.FCRF",
               lambda i, y: get(i, y, "xrat"), num),
    }
    for kind, (iname, icode, getter, fmt) in indicators.items():
        lines = ['"Data Source","Penn World Table 7.1, in a bulk-download layout",', "",
                 '"Last Updated Date","2024-06-28",', ""]
        head = ["Country Name", "Country Code", "Indicator Name", "Indicator Code"] + [str(y) for y in WB_YEARS]
        lines.append(",".join(f'"{h}"' for h in head) + ",")
        for iso3 in sorted(REF_COUNTRIES, key=lambda c: names[c]):
            cells = [names[iso3], iso3, iname, icode]
            for y in WB_YEARS:
                v = getter(iso3, y)
                cells.append("" if v is None else fmt(v))
            lines.append(",".join(f'"{c}"' for c in cells) + ",")
        for aname, acode in WB_AGGREGATES:
            cells = [aname, acode, iname, icode] + [""] * len(WB_YEARS)
            lines.append(",".join(f'"{c}"' for c in cells) + ",")
        write(wb / f"{kind}.csv", "\n".join(lines) + "\n")
    write(wb / "datapackage.json", json.dumps({
        "name": "world-bulk",
        "resources": [
            {"name": "ppp", "path": "ppp.csv", "kind": "ppp", "unit": "LCU per international $"},
            {"name": "population", "path": "population.csv", "kind": "population", "unit": "persons"},
            {"name": "fx", "path": "fx.csv", "kind": "fx", "unit": "LCU per US$, period average"},
        ]}, indent=2) + "\n")

    # ---------------- 2. SDMX-CSV 1.0 and 2.0 ----------------
    sd = OUT / "sdmx"
    v1 = [["DATAFLOW", "FREQ", "REF_AREA", "MEASURE", "UNIT_MEASURE", "TIME_PERIOD", "OBS_VALUE",
           "UNIT_MULT", "OBS_STATUS"]]
    v2 = [["STRUCTURE", "STRUCTURE_ID", "ACTION", "FREQ", "REF_AREA", "MEASURE", "TIME_PERIOD",
           "OBS_VALUE", "UNIT_MULT"]]
    p1 = [list(v1[0])]
    p2 = [list(v2[0])]
    for iso3 in REF_COUNTRIES:
        for y in SDMX_YEARS:
            ppp, pli, pop = get(iso3, y, "ppp"), get(iso3, y, "p"), get(iso3, y, "pop")
            if ppp is not None:
                v1.append(["LF:PWT71_PPP(1.0)", "A", iso3, "PPP", "XDC_USD", y, num(ppp), 0, "A"])
                v2.append(["dataflow", "LF:PWT71_PPP(1.0)", "I", "A: Annual", f"{iso3}: {names[iso3]}",
                           "PPP: Purchasing power parity over GDP", y, num(ppp), 0])
            if pli is not None:
                v1.append(["LF:PWT71_PPP(1.0)", "A", iso3, "PLI", "IX", y, num(pli), 0, "A"])
                v2.append(["dataflow", "LF:PWT71_PPP(1.0)", "I", "A: Annual", f"{iso3}: {names[iso3]}",
                           "PLI: Price level of GDP (US=100)", y, num(pli), 0])
            if pop is not None:
                p1.append(["LF:PWT71_POP(1.0)", "A", iso3, "POP", "PS", y, millions(pop), 6, "A"])
                p2.append(["dataflow", "LF:PWT71_POP(1.0)", "I", "A: Annual", f"{iso3}: {names[iso3]}",
                           "POP: Population", y, millions(pop), "6: Millions"])
    write(sd / "ppp-v1.csv", csv_text(v1))
    write(sd / "population-v1.csv", csv_text(p1))
    write(sd / "v2" / "ppp-v2.csv", csv_text(v2))
    write(sd / "v2" / "population-v2.csv", csv_text(p2))
    for folder, suffix in ((sd, "v1"), (sd / "v2", "v2")):
        write(folder / "datapackage.json", json.dumps({
            "name": f"world-sdmx-{suffix}",
            "resources": [
                {"name": "ppp", "path": f"ppp-{suffix}.csv", "kind": "ppp",
                 "unit": "national currency units per US$ (PPP over GDP)", "filter": {"MEASURE": "PPP"}},
                {"name": "population", "path": f"population-{suffix}.csv", "kind": "population",
                 "unit": "persons (values in millions, UNIT_MULT 6)", "filter": {"MEASURE": "POP"}},
            ]}, indent=2) + "\n")

    # ---------------- 3. statistics-office TSV ----------------
    es = OUT / "estat"
    kinds = {
        "ppp": ("PPP_NAC_USD", "ppp", num),
        "population": ("NR", "pop", lambda v: str(persons(v))),
        "fx": ("NAC_USD", "xrat", num),
    }
    for kind, (unit, col, fmt) in kinds.items():
        lines = ["\t".join(["freq,unit,geo\\TIME_PERIOD"] + [f"{y} " for y in ESTAT_YEARS])]
        for iso3, geo in sorted(ISO3_TO_GEO.items(), key=lambda kv: kv[1]):
            cells = [f"A,{unit},{geo}"]
            for y in ESTAT_YEARS:
                v = get(iso3, y, col)
                if (geo, y) in ESTAT_WITHHELD[kind]:
                    assert v is not None
                    cells.append(": c")
                elif v is None:
                    cells.append(":")
                else:
                    flag = ESTAT_FLAGS.get((geo, y))
                    cells.append(fmt(v) + (f" {flag}" if flag else ""))
            lines.append("\t".join(cells))
        write(es / f"{kind}.tsv", "\n".join(lines) + "\n")
    write(es / "datapackage.json", json.dumps({
        "name": "world-estat",
        "resources": [
            {"name": "ppp", "path": "ppp.tsv", "kind": "ppp",
             "unit": "national currency units per US$ (PPP over GDP)"},
            {"name": "population", "path": "population.tsv", "kind": "population", "unit": "persons"},
            {"name": "fx", "path": "fx.tsv", "kind": "fx", "unit": "national currency units per US$"},
        ]}, indent=2) + "\n")

    # ---------------- 4. input tables ----------------
    values = {}
    for iso3 in INPUT_COUNTRIES:
        for y in INPUT_YEARS:
            tc, ppp = get(iso3, y, "tcgdp"), get(iso3, y, "ppp")
            v = round(tc * 1e6 * ppp)          # GDP in national currency units, whole units
            assert v < 2 ** 53
            values[(iso3, y)] = v
    title = ("Gross domestic product, current prices, national currency units (derived from "
             "Penn World Table 7.1, as tcgdp x 1e6 x ppp)")
    long_rows = [["country", "year", "value"]]
    for iso3 in INPUT_COUNTRIES:
        for y in INPUT_YEARS:
            long_rows.append([names[iso3], y, values[(iso3, y)]])
    note = ("Source: Penn World Table 7.1 (Heston, Summers and Aten, CIC, University of Pennsylvania, "
            "July 2012), from the Debian package r-cran-pwt 7.1.1-7; values derived as tcgdp x 1e6 x ppp, "
            "rounded to whole units.")
    write(OUT / "gdp-long-titled.csv", title + "\n" + csv_text(long_rows) + "\n" + note + "\n")
    wide_title = ("GDP at current prices, in national currency units, 2006-2010, by country "
                  "(Penn World Table 7.1, derived)")
    wide_rows = [["country"] + [str(y) for y in INPUT_YEARS]]
    for iso3 in INPUT_COUNTRIES:
        wide_rows.append([names[iso3]] + [values[(iso3, y)] for y in INPUT_YEARS])
    write(OUT / "gdp-wide-titled.csv", wide_title + "\n" + csv_text(wide_rows))

    # ---------------- 5. expected values ----------------
    exp = [["iso3", "country", "currency", "year", "value_lcu", "ppp", "population", "fx",
            "expected_intl", "expected_intl_per_capita", "expected_usd",
            "published_intl", "published_intl_source", "reldiff_intl",
            "published_intl_per_capita", "published_intl_per_capita_source", "reldiff_intl_per_capita",
            "in_estat"]]
    worst = {"intl": 0.0, "pc": 0.0}
    for iso3 in INPUT_COUNTRIES:
        for y in INPUT_YEARS:
            v = values[(iso3, y)]
            ppp, xr = get(iso3, y, "ppp"), get(iso3, y, "xrat")
            pop = persons(get(iso3, y, "pop"))
            e_intl = v / ppp
            e_pc = v / ppp / pop
            e_usd = v / xr
            pub_intl = get(iso3, y, "tcgdp") * 1e6
            pub_pc = get(iso3, y, "cgdp")
            d1, d2 = reldiff(e_intl, pub_intl), reldiff(e_pc, pub_pc)
            worst["intl"] = max(worst["intl"], abs(d1))
            worst["pc"] = max(worst["pc"], abs(d2))
            exp.append([iso3, names[iso3], currency[iso3], y, v, num(ppp), pop, num(xr),
                        repr(e_intl), repr(e_pc), repr(e_usd),
                        repr(pub_intl), "PWT 7.1 tcgdp x 1e6", f"{d1:.3e}",
                        num(pub_pc), "PWT 7.1 cgdp", f"{d2:.3e}",
                        "yes" if iso3 in ISO3_TO_GEO else "no"])
    write(OUT / "expected.csv", csv_text(exp))
    print(f"largest |relative difference|: intl {worst['intl']:.3e}, per capita {worst['pc']:.3e}")


if __name__ == "__main__":
    main()
