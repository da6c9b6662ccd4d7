"""Times, on the same files and in one run, side by side:
  1. the I/O floor: polars reads the CSV and writes it back unchanged;
  2. levelfield adjust (deflate, ppp, per-capita; ranks per item and year), in memory;
  3. the same with --streaming, with --write-columns core (the data contract's columns), and
     with both;
  4. the job written by hand in pandas (bench/hand_pandas.py);
  5. the job written by hand in polars, Python (bench/hand_polars.py: 13 columns);
  6. the same job by hand in polars writing levelfield's 32 default columns
     (bench/hand_polars_full.py): what writing the default output costs polars itself;
and a 200-row table through levelfield. Wall time, rows per second and peak memory (maximum
resident set size, from GNU time) for each, then the ratios against the targets, a check
that the values agree, and that --streaming writes the in-memory output byte for byte.
Every output file is deleted before its run, so that no run writes over an earlier file
(a file written over keeps its old pages until it is replaced, and on this machine fresh
pages cost about as much as the copy into them), and the disk is synced, so that no run pays
for the writing back of an earlier run's output.

    bash bench/run.sh 1000000 10000000      # sets up the venv, builds, then runs this

Data are generated (SYNTHETIC) into $LEVELFIELD_BENCH_DATA (default /var/tmp/levelfield-bench).
Every run is repeated in $LEVELFIELD_BENCH_ROUNDS rounds (default 3) and its medians shown;
$LEVELFIELD_BENCH_SKIP leaves runs out by key (floor, levelfield, streaming, core,
streaming_core, pandas, polars, polars_full).
"""

import filecmp
import os
from statistics import median
import subprocess
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(HERE)
PY = sys.executable
BIN = os.environ.get("LEVELFIELD_BIN", os.path.join(REPO, "target", "release", "levelfield"))
DATA = os.environ.get("LEVELFIELD_BENCH_DATA", "/var/tmp/levelfield-bench")
SKIP = set(filter(None, os.environ.get("LEVELFIELD_BENCH_SKIP", "").split(",")))
REPEAT = int(os.environ.get("LEVELFIELD_BENCH_ROUNDS", "3"))


def measure(command):
    """Runs a command under GNU time; returns (wall seconds, peak RSS in MB)."""
    start = time.perf_counter()
    done = subprocess.run(
        ["/usr/bin/time", "-f", "%M"] + command, capture_output=True, text=True
    )
    wall = time.perf_counter() - start
    if done.returncode != 0:
        sys.exit(f"failed: {' '.join(command)}\n{done.stderr[-2000:]}")
    peak_kb = int(done.stderr.strip().splitlines()[-1])
    return wall, peak_kb / 1024


def wall_only(command):
    """Wall seconds of one run of a command, started directly (no GNU time around it: at a few
    milliseconds its own start-up would be part of the figure)."""
    start = time.perf_counter()
    done = subprocess.run(command, capture_output=True)
    wall = time.perf_counter() - start
    if done.returncode != 0:
        sys.exit(f"failed: {' '.join(command)}\n{done.stderr[-2000:].decode(errors='replace')}")
    return wall


def levelfield(data, out, *extra):
    return [
        BIN, "adjust", f"{data}/input.csv", "--refs", f"{data}/refs",
        "--steps", "deflate,ppp,per-capita", "--base-year", "2020",
        "--entity", "entity", "--year", "year", "--value", "value", "--group", "item",
        "--long", "--format", "csv", "-o", out, "-q", *extra,
    ]


def floor_script(data, out):
    code = f"import polars as pl; pl.read_csv('{data}/input.csv').write_csv('{out}')"
    return [PY, "-c", code]


def check_agreement(out_levelfield, out_script):
    """levelfield and a hand-written script agree: rows matched on entity, year and item, the
    largest relative difference of value_adjusted and the number of differing ranks."""
    import polars as pl

    a = pl.read_csv(
        out_levelfield,
        columns=["entity_input", "year", "group", "value_adjusted", "rank_adjusted"],
        schema_overrides={"value_adjusted": pl.Float64, "rank_adjusted": pl.Int64},
    ).rename({"entity_input": "entity", "group": "item"})
    b = pl.read_csv(
        out_script,
        columns=["entity", "year", "item", "value_adjusted", "rank_adjusted"],
        schema_overrides={"value_adjusted": pl.Float64, "rank_adjusted": pl.Int64},
    )
    both = a.join(b, on=["entity", "year", "item"], how="inner", suffix="_script")
    rel = ((both["value_adjusted"] - both["value_adjusted_script"]).abs() / both["value_adjusted_script"].abs()).max()
    ranks = (both["rank_adjusted"] != both["rank_adjusted_script"]).sum()
    return len(both), rel, ranks


def ratios(results):
    """Each levelfield run against the floor and the scripts, in time and peak memory, with
    the targets: in memory at most 1.0x the script's wall time (never above 1.25x) and 1.2x
    its peak memory."""
    pairs = [
        ("levelfield", "polars", "in memory / polars script (13 columns)"),
        ("core", "polars", "--write-columns core / polars script (13 columns)"),
        ("levelfield", "polars_full", "in memory / polars script writing the same 32 columns"),
        ("levelfield", "floor", "in memory / I/O floor"),
        ("streaming", "floor", "--streaming / I/O floor"),
        ("streaming_core", "floor", "--streaming --write-columns core / I/O floor"),
        ("polars", "floor", "polars script (13 columns) / I/O floor"),
        ("polars_full", "floor", "polars script writing the same 32 columns / I/O floor"),
        ("streaming", "polars_full", "--streaming / polars script writing the same 32 columns"),
        ("streaming_core", "polars", "--streaming --write-columns core / polars script (13 columns)"),
        ("levelfield", "pandas", "in memory / pandas script"),
    ]
    for a, b, label in pairs:
        if a in results and b in results:
            wall = results[a][0] / results[b][0]
            peak = results[a][1] / results[b][1]
            print(f"- {label}: {wall:.2f}x wall time, {peak:.2f}x peak memory")


def main():
    sizes = [int(s.replace("_", "")) for s in sys.argv[1:]] or [1_000_000]
    print(f"machine: {os.cpu_count()} cores; levelfield: {BIN}\n")
    for rows in sizes:
        data = f"{DATA}/{rows}"
        if not os.path.exists(f"{data}/input.csv"):
            subprocess.run([PY, f"{HERE}/generate.py", str(rows), data], check=True)
        size_mb = os.path.getsize(f"{data}/input.csv") / 2**20
        with open(f"{data}/input.csv", "rb") as f:
            n = sum(1 for _ in f) - 1
        runs = [
            ("I/O floor (polars read + write)", "floor", floor_script(data, f"{data}/out-floor.csv")),
            ("levelfield adjust", "levelfield", levelfield(data, f"{data}/out-levelfield.csv")),
            ("levelfield adjust --streaming", "streaming", levelfield(data, f"{data}/out-streaming.csv", "--streaming")),
            ("levelfield adjust --write-columns core", "core", levelfield(data, f"{data}/out-core.csv", "--write-columns", "core")),
            ("levelfield adjust --streaming --write-columns core", "streaming_core", levelfield(data, f"{data}/out-streaming_core.csv", "--streaming", "--write-columns", "core")),
            ("hand-written pandas", "pandas", [PY, f"{HERE}/hand_pandas.py", data, f"{data}/out-pandas.csv"]),
            ("hand-written polars (Python)", "polars", [PY, f"{HERE}/hand_polars.py", data, f"{data}/out-polars.csv"]),
            ("hand-written polars, levelfield's 32 columns", "polars_full", [PY, f"{HERE}/hand_polars_full.py", data, f"{data}/out-polars_full.csv"]),
        ]
        runs = [r for r in runs if r[1] not in SKIP]
        timings = {key: [] for _, key, _ in runs}
        # Every run once a round, the rounds in turn, so that a slow spell of the machine
        # falls on every run alike; each figure is the median of the rounds.
        for _ in range(REPEAT):
            for label, key, command in runs:
                out = f"{data}/out-{key}.csv"
                if os.path.exists(out):
                    os.remove(out)
                # The previous runs' output written back to disk first, so that no run pays
                # for another's writes (several GB at 10M rows).
                os.sync()
                timings[key].append(measure(command))
        results = {key: (median(t[0] for t in ts), median(t[1] for t in ts)) for key, ts in timings.items()}
        print(f"## {n:,} rows, input {size_mb:,.0f} MB ({REPEAT} round(s), medians)\n")
        print("| run | wall s | rows/s | peak MB | peak / input |")
        print("|---|---:|---:|---:|---:|")
        for label, key, _ in runs:
            wall, peak = results[key]
            print(f"| {label} | {wall:.2f} | {n / wall:,.0f} | {peak:,.0f} | {peak / size_mb:.2f} |", flush=True)
        print()
        ratios(results)
        for key, label in [("polars", "polars script"), ("pandas", "pandas script")]:
            if "levelfield" in results and key in results:
                matched, rel, ranks = check_agreement(f"{data}/out-levelfield.csv", f"{data}/out-{key}.csv")
                print(f"- agreement with the {label}: {matched:,} rows matched, max relative difference of value_adjusted {rel:.1e}, {ranks} rank(s) differ")
        for whole, streamed, label in [
            ("levelfield", "streaming", ""),
            ("core", "streaming_core", " (--write-columns core)"),
        ]:
            if whole in results and streamed in results:
                same = filecmp.cmp(f"{data}/out-{whole}.csv", f"{data}/out-{streamed}.csv", shallow=False)
                print(f"- --streaming output byte-identical to the in-memory output{label}: {same}")
        print()
    small = f"{DATA}/200"
    if not os.path.exists(f"{small}/input.csv"):
        subprocess.run([PY, f"{HERE}/generate.py", "200", small], check=True, capture_output=True)
    walls = sorted(wall_only(levelfield(small, f"{small}/out.csv")) for _ in range(15))
    print(f"## 200-row table: levelfield adjust, median wall of 15 runs as a whole process: {walls[7] * 1000:.0f} ms (min {walls[0] * 1000:.0f} ms, max {walls[-1] * 1000:.0f} ms)")
    starts = sorted(wall_only([BIN, "--version"]) for _ in range(15))
    print(f"- starting a process from this script (levelfield --version, median of 15): {starts[7] * 1000:.1f} ms")


if __name__ == "__main__":
    main()
