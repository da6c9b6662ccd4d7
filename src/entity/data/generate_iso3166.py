#!/usr/bin/env python3
"""Regenerates iso3166.csv and iso4217.csv in this folder from Debian's iso-codes package.

The JSON files are ISO 3166-1 and ISO 4217 as shipped by Debian's `iso-codes` package
(`apt-get install iso-codes`). Run this after that package changes, then run the entity
tests: they compare these CSV files with the JSON again.

Usage: python3 generate_iso3166.py [ISO_CODES_JSON_DIR]
"""
import csv
import json
import os
import sys

SOURCE_DIR = sys.argv[1] if len(sys.argv) > 1 else "/usr/share/iso-codes/json"
HERE = os.path.dirname(os.path.abspath(__file__))


def load(name, key):
    with open(os.path.join(SOURCE_DIR, name), encoding="utf-8") as f:
        return json.load(f)[key]


def main():
    countries = load("iso_3166-1.json", "3166-1")
    with open(os.path.join(HERE, "iso3166.csv"), "w", encoding="utf-8", newline="") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow(["alpha_2", "alpha_3", "numeric", "name", "official_name", "common_name"])
        for c in sorted(countries, key=lambda c: c["alpha_3"]):
            out.writerow([
                c["alpha_2"], c["alpha_3"], c["numeric"], c["name"],
                c.get("official_name", ""), c.get("common_name", ""),
            ])

    currencies = load("iso_4217.json", "4217")
    with open(os.path.join(HERE, "iso4217.csv"), "w", encoding="utf-8", newline="") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow(["code"])
        for code in sorted(c["alpha_3"] for c in currencies):
            out.writerow([code])
    print(f"{len(countries)} countries, {len(currencies)} currencies written to {HERE}")


if __name__ == "__main__":
    main()
