#!/usr/bin/env bash
# compare-binaries.sh: run the same levelfield command lines with two builds and compare every
# byte they produce (exit code, stdout, stderr, every file written).
#
#   bash tools/compare-binaries.sh OLD_BIN NEW_BIN [WORKDIR]
#
# Each case runs once per binary in a fresh copy of one scratch folder (a copy of the repo's
# fixtures plus the inputs the tests write inline). Both runs use the SAME scratch path, one
# after the other, so that paths printed into outputs (methods notes, summaries) are equal;
# each finished folder is then moved aside (old, new) and the two are compared: exit code,
# stdout and stderr (the scratch folder, the run folder, WORKDIR, the repo and the binary paths
# replaced by <SCRATCH>, <RUN>, <WORK>, <REPO> and <BIN>, and a temporary file's random name
# by .tmpXXXXXX), and the whole folder tree (every file the command wrote: csv, json, parquet,
# md, html, methods notes, recipes, batch outputs; files only one run wrote; inputs changed).
# The runs happen in /dev/shm when it is writable (NO_SHM=1: in WORKDIR/run).
#
# Prints one line per case (`same`, or `DIFFERS: what`), then a total; exits 1 if any case
# differs (or a pipe case did not stop cleanly), 0 otherwise. The first differing lines of each
# difference are in WORKDIR/diffs/NAME.txt (VERBOSE=1 prints them too), and both runs of a
# differing case in WORKDIR/cases/NAME/{old,new} (KEEP=1 keeps those of every case).
# ONLY=REGEX runs only the cases whose name matches. CASE_TIMEOUT (seconds, default 600)
# bounds each run.
#
# The binaries run with a clean environment, stdin from /dev/null (or --stdin FILE), and, when
# `unshare --net` works (root or user namespaces), without any network.
#
# Where the cases come from: README.md (Usage, recipes, batch, streaming, audit, demo), the
# argument lists of tests/cli/*.rs (names in the comments), tests/data/bad/cases.tsv, and the
# flags of `levelfield COMMAND --help`. Inputs that a test writes inline are written into the
# template below under gen/, refs/ and friends; generated large tables go to big/.
#
# Plain bash + coreutils, cmp, diff, sed, awk, find. Nothing is written into the repository.

set -u -o pipefail
export LC_ALL=C

usage() {
    echo "usage: bash tools/compare-binaries.sh OLD_BIN NEW_BIN [WORKDIR]" >&2
    exit 2
}
[ $# -ge 2 ] && [ $# -le 3 ] || usage
OLD_GIVEN=$1
NEW_GIVEN=$2
for b in "$OLD_GIVEN" "$NEW_GIVEN"; do
    [ -x "$b" ] && [ -f "$b" ] || { echo "not an executable file: $b" >&2; exit 2; }
done
OLD=$(realpath "$OLD_GIVEN")
NEW=$(realpath "$NEW_GIVEN")
REPO=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
[ -f "$REPO/Cargo.toml" ] && [ -d "$REPO/tests/data" ] || { echo "cannot find the repo from $0" >&2; exit 2; }

# ---------------------------------------------------------------------------------------------
# Work folder: never inside the repo's tests/ or src/; an existing folder is emptied only if a
# previous run of this script made it.
# ---------------------------------------------------------------------------------------------
MARK=.levelfield-compare-binaries
if [ $# -eq 3 ]; then
    WORK=$3
    if [ -e "$WORK" ]; then
        if [ -n "$(ls -A "$WORK" 2>/dev/null)" ] && [ ! -e "$WORK/$MARK" ]; then
            echo "$WORK exists and was not made by this script; give a new or empty folder" >&2
            exit 2
        fi
    fi
    mkdir -p "$WORK" || exit 2
    WORK=$(realpath "$WORK")
else
    WORK=$(mktemp -d "${TMPDIR:-/tmp}/levelfield-compare.XXXXXX") || exit 2
fi
for forbidden in "$REPO/tests" "$REPO/src"; do
    if [ "$WORK" = "$forbidden" ] || [ "${WORK#"$forbidden"/}" != "$WORK" ]; then
        echo "the work folder may not be inside $forbidden" >&2
        exit 2
    fi
done
# Empty the previous run's contents (the marker says this script made the folder).
find "$WORK" -mindepth 1 -maxdepth 1 ! -name "$MARK" -exec rm -rf {} +
touch "$WORK/$MARK"

# The runs happen in RUN: a folder in memory (/dev/shm) when there is one, since creating the
# few hundred files of a scratch copy on disk costs more than most runs; it is removed at the
# end. The cases that differ are copied to WORK/cases, their details written to WORK/diffs.
RUN=""
if [ -z "${NO_SHM:-}" ] && [ -d /dev/shm ] && [ -w /dev/shm ]; then
    RUN=$(mktemp -d /dev/shm/levelfield-compare.XXXXXX 2>/dev/null) || RUN=""
fi
[ -n "$RUN" ] || RUN=$WORK/run
trap 'rm -rf "$RUN"' EXIT
T=$RUN/template   # the scratch folder's contents, copied fresh for every run
BIG=$RUN/big      # generated large inputs, hard-linked into every scratch copy as big/
S=$RUN/scratch    # where every run happens (the same path for both binaries)
CASES=$RUN/cases  # the two finished scratch folders of the case being compared
DIFFS=$WORK/diffs
mkdir -p "$T" "$BIG" "$CASES" "$DIFFS" "$WORK/cases" "$RUN/home"

# ---------------------------------------------------------------------------------------------
# How the binaries are run: a clean environment, a time limit, no network when possible.
# ---------------------------------------------------------------------------------------------
TIMEOUT_BIN=$(command -v timeout)
UNSHARE_BIN=$(command -v unshare || true)
NONET=()
if [ -n "$UNSHARE_BIN" ] && "$UNSHARE_BIN" --net true 2>/dev/null; then
    NONET=("$UNSHARE_BIN" --net --)
elif [ -n "$UNSHARE_BIN" ] && "$UNSHARE_BIN" --map-root-user --net true 2>/dev/null; then
    NONET=("$UNSHARE_BIN" --map-root-user --net --)
else
    echo "warning: unshare --net is not available; the binaries run with the host's network" >&2
fi
CASE_TIMEOUT=${CASE_TIMEOUT:-600}
BASE_ENV=(PATH=/usr/bin:/bin HOME="$RUN/home" LANG=C.UTF-8 LC_ALL=C.UTF-8 TZ=UTC)

# ---------------------------------------------------------------------------------------------
# The template: the repo's fixtures, and the inputs the tests write inline.
# ---------------------------------------------------------------------------------------------
# put FILE TEXT: write TEXT (printf %b escapes: \n, \t, \033, ...) to template/FILE.
put() {
    mkdir -p "$(dirname "$T/$1")"
    printf '%b' "$2" >"$T/$1"
}

build_template() {
    cp -a "$REPO/tests/data" "$T/data"
    cp -a "$REPO/reference-tables" "$T/reference-tables"
    cp -a "$REPO/demo" "$T/demo"

    # --- tests/cli/adjust.rs -------------------------------------------------------------------
    put gen/budget.csv 'country,year,value\nFrance,2020,676\nCzechia,2020,107\n'
    put gen/mixed.csv 'country,year,value,cur\nFrance,2020,10,EUR\nCzechia,2020,10,EUR\nCzechia,2020,230,CZK\nUnited States,2020,10,USD\n'
    put gen/two.csv 'country,year,value\nFrance,2020,1\nChile,2020,2\n'   # also errors.rs, corpus.rs GOOD_TABLE
    put gen/fees3.csv 'country,year,value\n"Korea, Rep.",2023,57400\nFrance,2023,620\nCzechia,2023,31000\n'
    put gen/aliases-user.csv 'name,code\nNorth Province,XNP\nRepublique francaise,FRA\n'
    put gen/place.csv 'place,year,value\nNorth Province,2021,5\nRepublique francaise,2021,7\n'
    put gen/income-fees.csv 'country,year,value\nFrance,2020,340\nCzechia,2020,9400\nUnited States,2020,640\n'
    put gen/items.csv 'country,year,item,value\nFrance,2020,bread,3\nCzechia,2020,bread,2\nFrance,2020,milk,1\nCzechia,2020,milk,4\nFrance,2021,bread,1\nCzechia,2021,bread,2\n'
    put gen/cp1252.csv 'country;year;value\nC\364te d'"'"'Ivoire;2020;1\n'
    # UTF-16 LE with a byte-order mark, tab-separated, as spreadsheet programs export it.
    utf16le "$T/gen/utf16.txt" $'country\tyear\tvalue\nTürkiye\t2020\t5\n'
    # README usage examples that need a small table of their own (invented figures).
    put gen/cases.csv 'country,year,cases\nFrance,2020,12.5\nCzechia,2020,3.1\nUnited States,2020,40.2\n'
    put gen/prices-items.csv 'country,year,item,price\nFrance,2020,bread,2.5\nCzechia,2020,bread,1.4\nFrance,2020,milk,1.1\nCzechia,2020,milk,0.9\nUnited States,2020,bread,3.2\nUnited States,2020,milk,1.3\n'
    put gen/noyear.csv 'country,value\nFrance,1\nChile,2\nPeru,3\n'

    # --- tests/cli/errors.rs -------------------------------------------------------------------
    put gen/unresolved.csv 'country,year,value\nFrnace,2020,1\nAtlantis,2020,2\nFrance,2020,3\nAtlantis,2021,4\n'
    put gen/badnum.csv 'country,2020,2021\nFrance,1,2\nChile,3,three\n'
    put gen/deccomma.csv 'country;year;value\nFrance;2020;1.234,5\n'
    mkdir -p "$T/refs/dup-ppp" "$T/refs/neg-ppp"
    put refs/dup-ppp/datapackage.json '{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"}]}'
    put refs/dup-ppp/ppp.csv 'country,year,value\nFrance,2020,0.7\nFrance,2020,0.8\n'
    put refs/neg-ppp/datapackage.json '{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"}]}'
    put refs/neg-ppp/ppp.csv 'country,year,value\nFrance,2020,-0.7\n'

    # --- tests/cli/options.rs, published.rs ----------------------------------------------------
    put gen/fr-price.csv 'country,year,price\nFrance,2020,2.30\n'
    put gen/us-2000.csv 'country,year,price\nUnited States,2000,100\n'
    put gen/est.csv 'country,year,value,se\nFrance,2020,100,1\nChile,2020,103.91,1\n'
    put gen/agg.csv 'country,year,value\nWorld,2020,50\nFrance,2020,30\nChile,2020,20\n'
    put gen/share-percent.csv 'country,year,share,n\nFrance,2020,48,1000\nChile,2020,48,1000\n'
    put gen/share-fraction.csv 'country,year,share,n\nFrance,2020,0.48,1000\nChile,2020,0.48,1000\n'
    put gen/share-bad.csv 'country,year,share,n\nFrance,2020,48,1000\n'
    put gen/x-se.csv 'country,year,value,se\nFrance,2020,500,20\n'
    for name in uncertain exact; do
        put "refs/pop-$name/population.csv" 'country,year,value,se\nFrance,2020,2000,50\n'
    done
    put refs/pop-uncertain/datapackage.json '{"resources":[{"name":"pop","path":"population.csv","kind":"population","se_field":"se"}]}'
    put refs/pop-exact/datapackage.json '{"resources":[{"name":"pop","path":"population.csv","kind":"population"}]}'
    for basis in lcu intl; do
        put "refs/inc-$basis/ppp.csv" 'country,2020\nFrance,1.15\n'
        put "refs/inc-$basis/fx.csv" 'country,2020\nFrance,0.92\n'
        put "refs/inc-$basis/datapackage.json" '{"resources":[{"name":"ppp","path":"ppp.csv","kind":"ppp"},{"name":"fx","path":"fx.csv","kind":"fx"},{"name":"income","path":"income.csv","kind":"income","basis":"'"$basis"'","se_field":"se"}]}'
    done
    put refs/inc-lcu/income.csv 'country,year,value,se\nFrance,2020,2000.0,50.0\n'
    put refs/inc-intl/income.csv 'country,year,value,se\nFrance,2020,1739.1304347826087,43.47826086956522\n'
    cp -a "$T/refs/inc-lcu" "$T/refs/inc-lcu-pop"
    put refs/inc-lcu-pop/population.csv 'country,2020\nFrance,4\n'
    put refs/inc-lcu-pop/datapackage.json '{"resources":[{"name":"pop","path":"population.csv","kind":"population"},{"name":"ppp","path":"ppp.csv","kind":"ppp"},{"name":"fx","path":"fx.csv","kind":"fx"},{"name":"income","path":"income.csv","kind":"income","basis":"lcu","se_field":"se"}]}'
    put gen/usd-cpi.csv 'country,year,value\nUnited States,2015,100\nUnited States,2000,100\nUSA,2020,100\nUS,2023,100\n'
    put gen/prices-oecd.csv 'country,year,price\nFrance,2020,2.30\nUnited States,2020,2.00\n'
    put gen/usd-fr.csv 'country,year,price\nFrance,2020,2.5\n'

    # --- tests/cli/uncertainty.rs --------------------------------------------------------------
    pop_margins() { # FOLDER POPULATION MOE
        put "refs/$1/datapackage.json" '{"resources":[{"name":"pop","path":"pop.csv","kind":"population","layout":"long",
            "entity_field":"country","year_field":"year","value_field":"people","margin_field":"moe","margin_confidence":90}]}'
        put "refs/$1/pop.csv" "country,year,people,moe\nUnited States,2020,\"$2\",\"$3\"\n"
    }
    pop_margins pop-moe-prop '630,498' '831'
    pop_margins pop-moe-ratio '203,119' '5,070'
    put gen/count-prop.csv 'country,year,people,moe\nUnited States,2020,"203,119","5,070"\n'
    put gen/count-ratio.csv 'country,year,value,moe\nUnited States,2020,"226,840","5,556"\n'
    put gen/prices-moe.csv 'country,year,price,moe\nFrance,2020,2.30,0.10\nUnited States,2020,2.00,0.05\n'
    put gen/se.csv 'country,year,price,se\nFrance,2020,2.30,0.10\n'
    put gen/one-moe.csv 'country,year,value,moe\nFrance,2020,10,1\n'
    put gen/ci.csv 'country,year,value,lo,hi\nFrance,2020,10,8,13\nChile,2020,20,18,22\n'
    put gen/wide-one.csv 'country,2020\nFrance,1\n'
    put gen/poll.csv 'country,year,share,n\nFrance,2024,48,1000\nChile,2024,46,1000\nPeru,2024,30,1000\n'
    put gen/sim.csv 'country,year,value,se\nFrance,2020,10,1\nChile,2020,11,1\nPeru,2020,15,1\nBolivia,2020,9,2\n'
    put gen/s-moe.csv 'country,year,value,m\nFrance,2020,10,1\nChile,2020,20,1\n'

    # --- tests/cli/layouts.rs ------------------------------------------------------------------
    put gen/sdmx-in.csv 'country,year,value\nFrance,2021,73\nChile,2021,42000\n'

    # --- tests/cli/labels.rs: the demo's references, one or two of its countries ------------------
    put gen/labels-two.csv 'country,year,value\nAzrevny,2019,528\nBolqueth,2019,5740\nAzrevny,2023,620\nBolqueth,2023,6630\n'
    put gen/labels-one.csv 'country,year,value\nAzrevny,2019,528\nAzrevny,2023,620\n'

    # --- tests/cli/hostile.rs ------------------------------------------------------------------
    local H='<img src=x onerror=alert(1)><script>alert(2)</script>'
    put refs/hostile/datapackage.json '{"name":"x","title":"'"$H"'","aliases":["aliases.csv"],"resources":[
        {"name":"fx '"$H"'","path":"fx.csv","kind":"fx","unit":"'"$H"'","vintage":"'"$H"'","sources":[{"title":"'"$H"'"}]},
        {"name":"ppp '"$H"'","path":"ppp.csv","kind":"ppp","unit":"'"$H"'","vintage":"'"$H"'","sources":[{"title":"'"$H"'"}]}]}'
    put refs/hostile/aliases.csv "name,code\n\"$H\",XQA\nPlainland,XQB\n"
    put refs/hostile/fx.csv 'code,2020\nXQA,2\nXQB,4\n'
    put refs/hostile/ppp.csv 'code,2020\nXQA,1\nXQB,3\n'
    put 'gen/in<b>put.csv' "country,year,value,item $H\n\"$H\",2020,10,\"$H\"\nPlainland,2020,20,\"$H\"\n"
    put shared/recipes/in.csv 'country,year,value\nFrance,2020,1\nChile,2020,2\n'
    put victim/important.txt 'keep me\n'
    put shared/recipes/r-file.toml 'input = "in.csv"\n[output]\nfile = "../../victim/important.txt"\n'
    put shared/recipes/r-methods.toml 'input = "in.csv"\n[output]\nmethods = "'"$S"'/victim/outside-methods.md"\n'
    put shared/recipes/r-report.toml 'input = "in.csv"\n[output]\nreport = "../outside.html"\n'
    put shared/recipes/r-self.toml 'input = "in.csv"\n[output]\nfile = "r-self.toml"\n'
    put refs/outside/datapackage.json '{"resources":[{"name":"p","path":"../../../../etc/passwd","kind":"ppp"}]}'
    put gen/passwd 'root:x:0:0:root:/root:/bin/bash\ndaemon:x:1:1::/:/bin/sh\n'
    put gen/extremes.csv 'country,year,value\nFrance,2020,123456789012345.25\nChile,2020,0.1\n'
    put gen/n-1e-400.csv 'country,year,value\nFrance,2020,1e-400\n'
    put gen/n-subnormal.csv 'country,year,value\nFrance,2020,4.9e-324\n'
    put gen/n-32-digits.csv 'country,year,value\nFrance,2020,99999999999999999999999999999999\n'
    put gen/formulas.csv 'country,year,value,item\nFrance,2020,-12,"=HYPERLINK(""http://x"")"\nChile,2020,3,"two\nlines\033[31m\007"\n'
    put gen/titled.csv 'Fees, invented\ncountry,year,value\nFrance,2020,1\n'
    put refs/ppp-over/datapackage.json '{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"}]}'
    put refs/ppp-over/ppp.csv 'country,2020\nFrance,0.7\n'
    mkfifo "$T/gen/fifo.csv"
    ln -s loop.csv "$T/gen/loop.csv"

    # --- tests/cli/refs.rs: a broken catalog ---------------------------------------------------
    put refs/broken/datapackage.json '{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"},{"name":"c","path":"cpi.csv","kind":"cpi"}]}'
    put refs/broken/ppp.csv 'country,2020\nFrance,0\n'
    put refs/broken/cpi.csv 'country,2020\nFrance,100\n'

    # --- tests/cli/audit.rs: small references and inline tables ----------------------------------
    put refs/small/datapackage.json '{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"},{"name":"c","path":"cpi.csv","kind":"cpi"}]}'
    put refs/small/ppp.csv 'country,2019,2020\nFrance,0.2,0.2\nChile,400,420\n'
    put refs/small/cpi.csv 'country,2020,2023\nFrance,100,120\nChile,100,130\n'
    put gen/audit-within.csv 'country,year,value,intl\nFrance,2020,100,502.5\n'
    put gen/audit-beyond.csv 'country,year,value,intl\nFrance,2020,100,502.7\n'
    put gen/audit-real.csv 'country,year,value,real\nFrance,2020,100,100\n'
    put gen/audit-change.csv 'country,year,value,change\nChile,2019,10,..\nChile,2020,12,2\n'
    put gen/audit-mixed.csv 'country,year,value,share\nFrance,2019,30,30\nChile,2020,70,60\n'
    put gen/audit-notes.csv 'country,year,value,intl,n,source,scope\nFrance,2020,100,500,40,,capital city only\nChile,2020,4200,10,900,Survey A,national\n'
    put gen/audit-header.csv 'country,year,value,Fee (PPP $)\nFrance,2020,100,500\n'
    put gen/audit-shares.csv 'country,year,value,share\nFrance,2020,1.0,26.3\nChile,2020,3.0,75.0\nFrance,2021,1.000,13.0\nChile,2021,7.000,87.5\nFrance,2022,1.0,28\nChile,2022,3.0,75\nFrance,2023,0,0\nChile,2023,0,0\n'
    put gen/audit-changes.csv 'country,year,value,change\nChile,2019,10,..\nChile,2020,12,20\nFrance,2019,50,..\nFrance,2020,40,-20.0\n'
    put gen/audit-points.csv 'country,year,value,change\nChile,2019,10.0,..\nChile,2020,20.0,12\nFrance,2019,10.0,..\nFrance,2020,20.0,12.5\n'
    put gen/audit-ranks.csv 'country,year,value,rank\nFrance,2020,100,2\nChile,2020,300,1\nJapan,2020,500,..\nWorld,2020,1000,..\n'
    put gen/audit-swapped.csv 'country,year,value,rank\nFrance,2020,100,1\nChile,2020,300,2\nJapan,2020,500,..\nWorld,2020,1000,..\n'
    put gen/audit-ranked.csv 'country,year,value,intl,rank\nFrance,2020,100,500,1\nChile,2020,300000,400,2\n'
    put gen/audit-change-31.csv 'country,year,value,change\nChile,2019,10,..\nChile,2020,12,31\n'
    put gen/audit-change-32.csv 'country,year,value,change\nChile,2019,10,..\nChile,2020,12,32\n'
    put gen/audit-touching.csv 'country,year,gdp,usd\nFRA,2008,10,11\nDEU,2008,10,12\nITA,2008,1000.002,1000.003\nESP,2008,1000.002,1000.004\n'

    # --- tests/cli/audit_engine.rs: twins of the PWT figures (tests/data/world/expected.csv) -----
    # Fields (the one quoted country name blanked first): 1 iso3, 4 year, 5 value_lcu, 6 ppp,
    # 8 fx, 9 expected_intl, 10 expected_intl_per_capita, 11 expected_usd, 15 published per capita.
    local expected=$T/data/world/expected.csv
    twin_awk='{ gsub(/"[^"]*"/, "X") } NR > 1 { n++; iso[n]=$1; yr[n]=$4; lcu[n]=$5; ppp[n]=$6; usd[n]=$11; intl[n]=$9; pub[n]=$15 }'
    awk -F, "$twin_awk"'
        END { print "country,year,gdp,gdp_intl,gdp_intl_per_person"
              for (i = 1; i <= n; i++) printf "%s,%s,%.0f,%.0f,%.2f\n", iso[i], yr[i], usd[i], intl[i], pub[i] }' \
        "$expected" >"$T/gen/twin-usd-0.csv"
    awk -F, "$twin_awk"'
        END { print "country,year,gdp,gdp_intl,gdp_intl_per_person"
              for (i = 1; i <= n; i++) printf "%s,%s,%.2f,%.2f,%.2f\n", iso[i], yr[i], lcu[i], intl[i], pub[i] }' \
        "$expected" >"$T/gen/twin-lcu-2.csv"
    # The planted faults of planted_faults_in_real_figures_...: rows 0, 1, 7, 10, 11 (0-based).
    awk -F, "$twin_awk"'
        END { print "country,year,gdp,gdp_intl,gdp_intl_per_person"
              for (i = 1; i <= n; i++) {
                  a = sprintf("%.0f", intl[i]); p = sprintf("%.2f", pub[i])
                  if (i == 1) a = sprintf("%.0f", usd[i])
                  if (i == 2) a = sprintf("%.0f", lcu[i] / ppp[1])
                  if (i == 8) p = sprintf("%.2f", pub[i] * 1000)
                  if (i == 11) a = sprintf("%.0f", intl[12])
                  if (i == 12) a = sprintf("%.0f", intl[11])
                  printf "%s,%s,%.0f,%s,%s\n", iso[i], yr[i], usd[i], a, p } }' \
        "$expected" >"$T/gen/twin-faulty.csv"

    # --- tests/cli/world.rs: edited copies of the bulk-download references -----------------------
    local wb=$T/data/world/wb-bulk
    local bulk_catalog='{"resources":[{"name":"ppp","path":"ppp.csv","kind":"ppp"},{"name":"population","path":"population.csv","kind":"population"}]}'
    for name in world-code world-noentity world-filter world-income-intl world-income-usd; do
        mkdir -p "$T/refs/$name"
        cp "$wb/ppp.csv" "$wb/population.csv" "$wb/fx.csv" "$T/refs/$name/"
    done
    sed -e 's/"Country Code"/"code"/; s/"Country Name"/"label"/' "$wb/ppp.csv" >"$T/refs/world-code/ppp.csv"
    put refs/world-code/datapackage.json "$bulk_catalog"
    put refs/world-noentity/ppp.csv '"key","label","2006"\n"A-1","Row one","1.2"\n"B-2","Row two","1.3"\n'
    put refs/world-noentity/datapackage.json "$bulk_catalog"
    put refs/world-filter/datapackage.json '{"resources":[{"name":"ppp","path":"ppp.csv","kind":"ppp","filter":{"MEASURE":"PPP"}}]}'
    awk -F, "$twin_awk"' END { print "iso3,year,value"; for (i = 1; i <= n; i++) print iso[i] "," yr[i] "," pub[i] }' \
        "$expected" >"$T/refs/world-income-intl/income.csv"
    awk -F, '{ gsub(/"[^"]*"/, "X") } NR > 1 { if (!h++) print "iso3,year,value"; printf "%s,%s,%.17g\n", $1, $4, $15 * $6 / $8 }' \
        "$expected" >"$T/refs/world-income-usd/income.csv"
    for basis in intl usd; do
        put "refs/world-income-$basis/datapackage.json" '{"resources":[{"name":"ppp","path":"ppp.csv","kind":"ppp"},{"name":"population","path":"population.csv","kind":"population"},{"name":"fx","path":"fx.csv","kind":"fx"},{"name":"cgdp","path":"income.csv","kind":"income","basis":"'"$basis"'","unit":"GDP per capita (PWT 7.1 cgdp)"}]}'
    done
    # `catalog`: a folder of downloads, one with an unlabelled SDMX file, one with a catalog already.
    mkdir -p "$T/downloads" "$T/downloads-agency" "$T/downloads-existing"
    cp "$wb/ppp.csv" "$wb/population.csv" "$wb/fx.csv" "$T/downloads/"
    cp "$wb/ppp.csv" "$wb/population.csv" "$wb/fx.csv" "$T/downloads-agency/"
    cp "$T/data/world/sdmx/ppp-v1.csv" "$T/downloads-agency/agency.csv"
    cp "$wb/ppp.csv" "$wb/population.csv" "$wb/fx.csv" "$wb/datapackage.json" "$T/downloads-existing/"

    # --- tests/cli/recipes.rs and README: recipes and batch manifests ----------------------------
    mkdir -p "$T/recipes" "$T/elsewhere" "$T/ex"
    put r.toml 'input = "data/wide-country-fees.csv"\nrefs = "data/country-refs"\nsteps = ["ppp"]\n\n[output]\nformat = "csv"\n'
    put recipe-errors/e1.toml 'steps = ["ppp"]\n\n[columns]\nentity = "Economy"\nentitty = "x"\n'
    put recipe-errors/e2.toml 'steps = ["deflate"]\nbase_year = "2023"\n'
    put recipe-errors/e3.toml 'input = "x.csv"\nrefs = "refs"\nsteps = ["deflate", "ppp"]\n'
    put recipe-errors/e4.toml 'steps = ["ppp", "warp"]\n'
    put recipe-errors/e5.toml '[output]\nformat = "pdf"\n'
    put recipe-errors/e6.toml '[columns]\nyear = "y"\nyear_value = 2020\n'
    put recipe-errors/e7.toml '[uncertainty]\nmoe = "m"\n'
    # README's recipe, over the demo's fees and references.
    mkdir -p "$T/readme-recipe/incoming" "$T/readme-recipe/adjusted"
    cp "$T/demo/transit-pass-fees.csv" "$T/readme-recipe/incoming/transit-fees.csv"
    cp -a "$T/reference-tables" "$T/readme-recipe/reference-tables"
    put readme-recipe/fees.toml 'input = "incoming/transit-fees.csv"\nrefs = "reference-tables"\nsteps = ["deflate", "ppp"]\nbase_year = 2023\n\n[columns]\nentity = "country"\n\n[output]\nfile = "adjusted/transit-fees.csv"\ndecimals = 2\nmethods = "adjusted/transit-fees.methods.md"\n'
    put readme-recipe/survey.toml 'input = "incoming/survey.csv"\nrefs = "reference-tables"\nsteps = ["ppp"]\n\n[columns]\nentity = "country"\n\n[uncertainty]\nmoe = "moe90"\nmargin_confidence = 90\n\n[output]\nfile = "adjusted/survey.json"\n'
    cp "$T/demo/transit-spending-survey.csv" "$T/readme-recipe/incoming/survey.csv"
    # Batch folders (each case gets its own copy, so reruns never see another case's outputs).
    local fees
    fees=$(cat "$T/data/wide-country-fees.csv")
    for dir in batch batch-ff batch-table batch-quiet; do
        mkdir -p "$T/$dir/incoming"
        printf '%s\n' "$fees" >"$T/$dir/incoming/a.csv"
        printf '%s\n' "${fees//Türkiye/Turkey}" >"$T/$dir/incoming/b.csv"
        put "$dir/batch.toml" '[[run]]\nrecipe = "fees.toml"\ninputs = "incoming/*.csv"\n'
        put "$dir/fees.toml" 'refs = "../data/country-refs"\nsteps = ["ppp"]\n\n[output]\nformat = "csv"\n'
    done
    for dir in batch batch-ff; do put "$dir/incoming/c.csv" 'Economy,2020\nNowhereland,5\n'; done
    put batch-ff/incoming/0.csv 'Economy,2020\nNowhereland,5\n'
    put batch-table/fees.toml 'refs = "../data/country-refs"\nsteps = ["ppp"]\n\n[output]\nformat = "table"\n'
    put batch-quiet/fees.toml 'refs = "../data/country-refs"\nsteps = ["ppp", "per-capita"]\nper = 1000\n\n[output]\nformat = "json"\nmethods = "x.md"\n'
    put batch-bad/fees.toml 'steps = []\n'
    put batch-bad/batch.toml '[[run]]\nrecipe = "fees.toml"\ninput = "*.csv"\n'
    put batch-bad/batch-missing.toml '[[run]]\nrecipe = "missing.toml"\n'
    # README's manifest: output_dir, a recipe with its own input, a recipe over a pattern.
    mkdir -p "$T/batch-outdir/incoming"
    cp -a "$T/reference-tables" "$T/batch-outdir/reference-tables"
    cp "$T/demo/transit-pass-fees.csv" "$T/batch-outdir/incoming/transit-fees.csv"
    cp "$T/demo/transit-pass-fees.csv" "$T/batch-outdir/incoming/wages-2023.csv"
    sed 's/620/640/' "$T/demo/transit-pass-fees.csv" >"$T/batch-outdir/incoming/wages-2024.csv"
    put batch-outdir/tables.toml 'output_dir = "adjusted"\n\n[[run]]\nrecipe = "fees.toml"\n\n[[run]]\nrecipe = "wages.toml"\ninputs = "incoming/wages-*.csv"\n'
    put batch-outdir/fees.toml 'input = "incoming/transit-fees.csv"\nrefs = "reference-tables"\nsteps = ["deflate", "ppp"]\nbase_year = 2023\n\n[output]\nformat = "md"\nreport = "fees.html"\n'
    put batch-outdir/wages.toml 'refs = "reference-tables"\nsteps = ["ppp"]\n\n[output]\ndecimals = 2\n'

    # --- big/: generated tables (streaming.rs, hostile.rs, corpus.rs), hard-linked per run -------
    # long.csv follows long_table() of tests/cli/streaming.rs (missing values, footnote marks,
    # quoted thousands, aggregates, USD rows at the end, a note below), with a deterministic
    # Park-Miller generator and series mostly distinct, so that most rows are ranked.
    awk -v rows=200000 '
        function rnd(n) { seed = (seed * 16807) % 2147483647; return seed % n }
        BEGIN {
            seed = 20261202
            split("KOR,Turkiye,CZE,Côte d'"'"'Ivoire,VNM,France,USA,World", E, ",")
            split("KRW,TRY,CZK,XOF,VND,EUR,USD,", C, ",")
            print "country,year,item,currency,value"
            for (i = 0; i < rows; i++) {
                k = i % 8 + 1; year = 2020 + int(i / 8) % 4
                item = sprintf("item %05d", int(i / 32) - (rnd(50) == 0))
                whole = rnd(2000000); r = rnd(40)
                if (r == 0) v = ".."
                else if (r == 1) v = whole "*"
                else if (r == 2) v = sprintf("\"%d,%03d.5\"", int(whole / 1000), whole % 1000)
                else v = whole "." rnd(100)
                cur = C[k]; if (i + 10 > rows && E[k] != "World") cur = "USD"
                printf "%s,%d,%s,%s,%s\n", E[k], year, item, cur, v
            }
            print ""; print "Source: generated for the levelfield streaming test"
        }' >"$BIG/long.csv"
    awk 'function rnd(n) { seed = (seed * 16807) % 2147483647; return seed % n }
        BEGIN { seed = 7; split("KOR,Turkiye,CZE,Côte d'"'"'Ivoire,VNM,France,USA,World", E, ",")
            print "Economy,2020,2021,2022,2023"
            for (i = 0; i < 20000; i++) printf "%s,%d,%d,%d,%d\n", E[rnd(8) + 1], rnd(100000), rnd(100000), rnd(100000), rnd(100000) }' \
        >"$BIG/wide.csv"
    awk 'BEGIN { print "country,year,value"; for (i = 0; i < 20000; i++) print "FRA,2020," i; print "FRA,2020,twelve" }' \
        >"$BIG/bad-line.csv"
    awk 'BEGIN { print "country,year,value"; for (i = 0; i < 200000; i++) print "France,2020,1" }' >"$BIG/limit.csv"
    awk 'BEGIN { printf "country,year,value\nFrance,2020,"; s = "9x"; while (length(s) < 10485760) s = s s; print s }' \
        >"$BIG/huge-field.csv"
    # For the pipe cases: 24 PWT countries x 200 years, about 1.4 MB of csv out.
    awk 'BEGIN { split("AUS AUT BEL BRA CAN CHE CZE DEU ESP FRA GBR GRC HUN IND IRL ITA JPN KOR MEX NOR POL SWE TUR USA", E, " ")
            print "country,year,value"
            for (y = 1811; y <= 2010; y++) for (k = 1; k <= 24; k++) printf "%s,%d,%d.%02d\n", E[k], y, (y * 7919 + k * 104729) % 100000, k }' \
        >"$BIG/pipe.csv"
    (cd "$BIG" && sha256sum ./* >"$RUN/big.sha256")
}

# utf16le FILE TEXT: TEXT (code points below 256 only) as UTF-16 LE with a byte-order mark.
utf16le() {
    local LC_ALL=C.UTF-8 text=$2 i code
    {
        printf '\377\376'
        for ((i = 0; i < ${#text}; i++)); do
            printf -v code '%d' "'${text:i:1}"
            printf "\\x$(printf '%02x' "$code")\\x00"
        done
    } >"$1"
}

# ---------------------------------------------------------------------------------------------
# Running one case with one binary, and comparing the two runs.
# ---------------------------------------------------------------------------------------------
# sed_literal TEXT: TEXT as an extended regular expression matching itself.
sed_literal() { printf '%s' "$1" | sed -e 's/[]\/$*.^[|+?(){}]/\\&/g'; }
# replace TEXT PLACEHOLDER: a sed expression (ERE; \001 as the delimiter, which no path holds).
replace() { printf 's\001%s\001%s\001g' "$(sed_literal "$1")" "$2"; }
# Placeholders in stdout and stderr (longest path first: the scratch folder is inside RUN).
NORMALIZE=(-E -e "$(replace "$S" "<SCRATCH>")" -e "$(replace "$RUN" "<RUN>")" -e "$(replace "$WORK" "<WORK>")")
for b in "$OLD" "$OLD_GIVEN" "$NEW" "$NEW_GIVEN"; do
    NORMALIZE+=(-e "$(replace "$b" "<BIN>")")
done
NORMALIZE+=(-e "$(replace "$REPO" "<REPO>")")
# The name of a temporary file (tempfile: .tmp and six random characters) differs from run
# to run when an error message quotes it.
NORMALIZE+=(-e 's/\.tmp[A-Za-z0-9]{6}/.tmpXXXXXX/g')

# run_side SIDE BIN: runs the current case's steps with BIN in a fresh scratch folder, then
# moves the folder to $CASE_DIR/SIDE and keeps SIDE.N.{out,err,rc} for each step N.
run_side() {
    local side=$1 bin=$2 i=0 rc word
    rm -rf "$S"
    cp -a "$T" "$S" && cp -al "$BIG" "$S/big" || { echo "cannot copy the template" >&2; exit 2; }
    touch "$CASE_DIR/$side.start"
    local steps_left=("${C_ARGS[@]}" "+then+")
    local step=()
    for word in "${steps_left[@]}"; do
        if [ "$word" != "+then+" ]; then
            step+=("$word")
            continue
        fi
        i=$((i + 1))
        local out=$CASE_DIR/$side.$i.out err=$CASE_DIR/$side.$i.err
        local stdin=/dev/null
        [ -n "$C_STDIN" ] && stdin=$S/$C_STDIN
        (
            cd "$S/$C_CWD" || exit 97
            local cmd=(env -i "${BASE_ENV[@]}" "${C_ENV[@]}" "${NONET[@]}"
                "$TIMEOUT_BIN" -k 10 "$CASE_TIMEOUT" "$bin" "${step[@]}")
            if [ -n "$C_PIPE" ]; then
                local reader
                read -r -a reader <<<"$C_PIPE"
                "${cmd[@]}" <"$stdin" 2>"$err.raw" | "${reader[@]}" >"$out.raw"
                exit "${PIPESTATUS[0]}"
            fi
            "${cmd[@]}" <"$stdin" >"$out.raw" 2>"$err.raw"
        )
        rc=$?
        echo "$rc" >"$CASE_DIR/$side.$i.rc"
        sed "${NORMALIZE[@]}" "$out.raw" >"$out" && rm -f "$out.raw"
        sed "${NORMALIZE[@]}" "$err.raw" >"$err" && rm -f "$err.raw"
        step=()
    done
    C_NSTEPS=$i
    # Files the run wrote or changed (newer than the copy), for the summary line.
    WRITTEN[$side]=$(find "$S" -newer "$CASE_DIR/$side.start" ! -type d | wc -l)
    mv "$S" "$CASE_DIR/$side"
}

is_binary() { ! tr -d '\000' <"$1" | cmp -s - "$1"; }

# detail LABEL A B: the first differing lines (text) or bytes (binary) of A and B.
detail() {
    {
        echo "=== $1"
        if is_binary "$2" || is_binary "$3"; then
            echo "binary: $(stat -c %s "$2") bytes (old) vs $(stat -c %s "$3") bytes (new)"
            cmp "$2" "$3" 2>&1 | head -n 1
            cmp -l "$2" "$3" 2>/dev/null | head -n 5
        else
            diff -u --label "old/$1" --label "new/$1" "$2" "$3" | head -n "${DIFF_LINES:-40}"
        fi
        echo
    } >>"$DIFF_FILE"
}

# compare_case: sets WHAT to the list of differences between the two runs (empty if same).
compare_case() {
    WHAT=()
    local i prefix a b
    for ((i = 1; i <= C_NSTEPS; i++)); do
        prefix=""
        [ "$C_NSTEPS" -gt 1 ] && prefix="step $i "
        a=$(cat "$CASE_DIR/old.$i.rc")
        b=$(cat "$CASE_DIR/new.$i.rc")
        if [ "$a" != "$b" ]; then
            WHAT+=("${prefix}exit $a vs $b")
            echo "=== ${prefix}exit code: $a (old) vs $b (new)" >>"$DIFF_FILE"
            echo >>"$DIFF_FILE"
        fi
        for stream in out err; do
            if ! cmp -s "$CASE_DIR/old.$i.$stream" "$CASE_DIR/new.$i.$stream"; then
                local label=stdout
                [ "$stream" = err ] && label=stderr
                WHAT+=("${prefix}$label")
                detail "${prefix}$label" "$CASE_DIR/old.$i.$stream" "$CASE_DIR/new.$i.$stream"
            fi
        done
    done
    # The folders: the same entries (type and, for links, target), and the same bytes.
    local listing_old listing_new
    listing_old=$(cd "$CASE_DIR/old" && find . -mindepth 1 -printf '%y %P -> %l\n' | sort)
    listing_new=$(cd "$CASE_DIR/new" && find . -mindepth 1 -printf '%y %P -> %l\n' | sort)
    if [ "$listing_old" != "$listing_new" ]; then
        local line
        while IFS= read -r line; do
            [ -n "$line" ] && WHAT+=("only in old: ${line#? }")
        done < <(comm -23 <(echo "$listing_old") <(echo "$listing_new") | sed 's/ -> $//')
        while IFS= read -r line; do
            [ -n "$line" ] && WHAT+=("only in new: ${line#? }")
        done < <(comm -13 <(echo "$listing_old") <(echo "$listing_new") | sed 's/ -> $//')
        {
            echo "=== folder listings (type path -> link)"
            diff <(echo "$listing_old") <(echo "$listing_new") | head -n "${DIFF_LINES:-40}"
            echo
        } >>"$DIFF_FILE"
    fi
    local file
    while IFS= read -r -d '' file; do
        file=${file#./}
        [ -f "$CASE_DIR/new/$file" ] && [ ! -L "$CASE_DIR/new/$file" ] || continue
        if ! cmp -s "$CASE_DIR/old/$file" "$CASE_DIR/new/$file"; then
            WHAT+=("file $file")
            detail "file $file" "$CASE_DIR/old/$file" "$CASE_DIR/new/$file"
        fi
    done < <(cd "$CASE_DIR/old" && find . -type f -print0 | sort -z)
}

N_CASES=0
N_SAME=0
N_DIFF=0
N_PIPE_FAILED=0
N_LINES=0
DIFFERING=()
UNEXPECTED=()
PIPE_FAILED=()
declare -A WRITTEN
declare -A SEEN

# run_case NAME [--cwd DIR] [--stdin FILE] [--pipe 'CMD ARGS'] [--env VAR=VALUE]...
#          [--expect CODE[,CODE...]] -- ARGS... [+then+ ARGS...]...
# Used through the alias `case` below. Steps separated by +then+ run one after the other in the
# same scratch folder (a recipe saved, then run). --expect notes the exit codes the tests expect
# (default 0): a mismatch is reported beside the result, but only old-vs-new differences fail.
run_case() {
    local name=$1
    shift
    C_CWD=.
    C_STDIN=""
    C_PIPE=""
    C_ENV=()
    local expect=""
    while [ $# -gt 0 ] && [ "$1" != "--" ]; do
        if [ "$1" = --cwd ]; then C_CWD=$2
        elif [ "$1" = --stdin ]; then C_STDIN=$2
        elif [ "$1" = --pipe ]; then C_PIPE=$2
        elif [ "$1" = --env ]; then C_ENV+=("$2")
        elif [ "$1" = --expect ]; then expect=$2
        else
            echo "case $name: unknown option $1" >&2
            exit 2
        fi
        shift 2
    done
    [ "${1:-}" = "--" ] || { echo "case $name: missing --" >&2; exit 2; }
    shift
    C_ARGS=("$@")
    if [ -n "${SEEN[$name]:-}" ]; then
        echo "case $name: the name is used twice" >&2
        exit 2
    fi
    SEEN[$name]=1
    if [ -n "${ONLY:-}" ] && ! [[ $name =~ $ONLY ]]; then
        return 0
    fi
    CASE_DIR=$CASES/$name
    DIFF_FILE=$DIFFS/$name.txt
    rm -rf "$CASE_DIR" "$DIFF_FILE"
    mkdir -p "$CASE_DIR"
    run_side old "$OLD"
    run_side new "$NEW"
    N_CASES=$((N_CASES + 1))
    N_LINES=$((N_LINES + C_NSTEPS))
    compare_case

    # Exit codes, and the codes the tests expect.
    local codes=() i
    for ((i = 1; i <= C_NSTEPS; i++)); do codes+=("$(cat "$CASE_DIR/old.$i.rc")"); done
    local got
    got=$(IFS=,; echo "${codes[*]}")
    if [ -z "$expect" ]; then
        expect=$(printf '0,%.0s' $(seq "$C_NSTEPS"))
        expect=${expect%,}
    fi
    local note="exit $got"
    [ "${WRITTEN[old]}" -gt 0 ] && note+="; ${WRITTEN[old]} file(s) written"
    if [ "$got" != "$expect" ]; then
        note+="; the tests expect exit $expect"
        UNEXPECTED+=("$name: exit $got (expected $expect)")
    fi
    # A pipe into `head` must stop cleanly in both: the exit code of a full run (0, or 1 for an
    # audit with findings) and no error, broken pipe or panic on stderr.
    if [ -n "$C_PIPE" ]; then
        local side bad=""
        for side in old new; do
            if [ "$(cat "$CASE_DIR/$side.1.rc")" != "$expect" ] ||
                grep -qiE '^error|broken pipe|panicked' "$CASE_DIR/$side.1.err"; then
                bad+=" $side: exit $(cat "$CASE_DIR/$side.1.rc") $(head -c 200 "$CASE_DIR/$side.1.err" | tr '\n' ' ')"
            fi
        done
        if [ -n "$bad" ]; then
            note+="; PIPE CHECK FAILED:$bad"
            PIPE_FAILED+=("$name")
            N_PIPE_FAILED=$((N_PIPE_FAILED + 1))
        fi
    fi

    if [ ${#WHAT[@]} -eq 0 ]; then
        N_SAME=$((N_SAME + 1))
        printf '%-46s same (%s)\n' "$name" "$note"
        rm -f "$DIFF_FILE"
        find "$CASE_DIR/old/big" "$CASE_DIR/new/big" -type f -links +1 -delete 2>/dev/null
        [ "${KEEP:-0}" = 1 ] && rm -rf "$WORK/cases/$name" && cp -a "$CASE_DIR" "$WORK/cases/$name"
        rm -rf "$CASE_DIR"
    else
        N_DIFF=$((N_DIFF + 1))
        DIFFERING+=("$name")
        local joined
        joined=$(printf '%s; ' "${WHAT[@]}")
        printf '%-46s DIFFERS: %s (%s)\n' "$name" "${joined%; }" "$note"
        {
            echo "case $name"
            printf '  step: %s\n' "$(printf '%q ' "${C_ARGS[@]}")"
        } >"$DIFF_FILE.head"
        cat "$DIFF_FILE" >>"$DIFF_FILE.head" && mv "$DIFF_FILE.head" "$DIFF_FILE"
        [ "${VERBOSE:-0}" = 1 ] && sed 's/^/    /' "$DIFF_FILE"
        # Keep both runs of a differing case: WORK/cases/NAME/{old,new}, SIDE.N.{out,err,rc}.
        # (less the generated inputs, hard links to RUN/big that no run changed)
        find "$CASE_DIR/old/big" "$CASE_DIR/new/big" -type f -links +1 -delete 2>/dev/null
        rm -rf "$WORK/cases/$name"
        cp -a "$CASE_DIR" "$WORK/cases/$name"
        rm -rf "$CASE_DIR"
    fi
}

echo "levelfield compare: old $OLD"
echo "                    new $NEW"
echo "                    work $WORK${NONET[0]:+ (no network: ${NONET[*]})}"
build_template || { echo "cannot build the template" >&2; exit 2; }
# A Parquet input (adjust.rs reads one written by polars): written once, by the OLD binary, and
# read by both.
put gen/pq-src.csv 'country,year,value\nFrance,2020,1250.5\nChile,2020,3400\n'
(cd "$T" && env -i "${BASE_ENV[@]}" "${NONET[@]}" "$OLD" adjust gen/pq-src.csv -q --currency-code XXX --write-columns entity_input,year,value \
    --format parquet -o gen/in.parquet) || { echo "cannot write gen/in.parquet with $OLD" >&2; exit 2; }

# ---------------------------------------------------------------------------------------------
# The cases. `case NAME [options] -- ARGS...` is run_case above, through an alias (so `bash -n`
# cannot check what follows, and no `case ... esac` statement may follow the alias).
# ---------------------------------------------------------------------------------------------
shopt -s expand_aliases
alias case=run_case

# Paths inside the scratch folder (relative to its root, where commands run unless --cwd).
FEES=data/wide-country-fees.csv   # wide, real country names (invented fees)
CR=data/country-refs              # rounded fixture factors for those names
DEMO=demo/transit-pass-fees.csv   # the demo's input (invented), wide
SURVEY=demo/transit-spending-survey.csv
RT=reference-tables               # the demo's invented references (with aliases)
PUB=data/published                # BLS CPI-U, OECD PPP example
WL=data/world/gdp-long-titled.csv # PWT 7.1, long, titled, with a note below
WW=data/world/gdp-wide-titled.csv # PWT 7.1, wide, titled
WB=data/world/wb-bulk             # bulk-download references
AUD=data/audit

# --- Help texts and usage errors (golden.rs: help.txt, adjust-help.txt) ------------------------
case help -- --help
case version -- --version
case adjust-help -- adjust --help
case adjust-help-short -- adjust -h
case audit-help -- audit --help
case refs-help -- refs --help
case catalog-help -- catalog --help
case lead-help -- lead --help
case batch-help -- batch --help
case demo-help -- demo --help
case help-subcommand -- help adjust
case no-arguments --expect 2 -- 
case unknown-subcommand --expect 2 -- frobnicate
case unknown-flag --expect 2 -- adjust "$FEES" --no-such-flag

# --- The demo (README "The demo", golden.rs, labels.rs, uncertainty.rs) ----------------------
case demo -- demo
case demo-csv -- demo --format csv
case demo-md -- demo --format md
case demo-json -- demo --format json
case demo-methods -- demo --format methods
case demo-chart-csv -- demo --format chart-csv
case demo-table-explicit -- demo --format table
case demo-parquet-file -- demo --format parquet -o demo.parquet
case demo-parquet-stdout --expect 2 -- demo --format parquet
case demo-o-csv -- demo -o demo.csv
case demo-o-json -- demo -o demo.json
case demo-o-md -- demo -o demo.md
case demo-o-table -- demo --format table -o demo.txt
case demo-report-methods -- demo --report report.html --methods demo.md
case demo-decimals -- demo --format csv --decimals 2
case demo-sig -- demo --format md --sig 3
case demo-quiet -- demo -q
case demo-core-columns -- demo --format csv --write-columns core
case demo-column-list -- demo --format json --write-columns entity_code,year,value_adjusted,rank_shift
case demo-allow-formulas -- demo --format csv --allow-formulas
case demo-margins -- demo --margins
case demo-margins-csv -- demo --margins --format csv
case demo-margins-json -- demo --margins --format json
case demo-margins-md -- demo --margins --format md
case demo-margins-methods -- demo --margins --format methods
case demo-margins-report -- demo --margins --report margins.html --methods margins.md -o margins.csv
case demo-margins-parquet -- demo --margins --format parquet -o margins.parquet
case demo-one-thread --env POLARS_MAX_THREADS=1 -- demo --margins --format json
case demo-extract -- demo --extract levelfield-demo
# README: "Rerun the demo by hand", and the extracted recipes (fees.toml, survey.toml).
case demo-extract-rerun --cwd ex -- demo --extract . \
    +then+ adjust demo/transit-pass-fees.csv --refs reference-tables --steps deflate,ppp --base-year 2023 \
    +then+ adjust --recipe fees.toml --format csv -o fees.csv \
    +then+ adjust --recipe survey.toml --format json -o survey.json

# --- Output formats, to stdout and to -o FILE (adjust.rs; README "Output") --------------------
P=(adjust "$FEES" --refs "$CR" --steps ppp)
case format-default-piped -- "${P[@]}"
case format-table -- "${P[@]}" --format table
case format-csv -- "${P[@]}" --format csv
case format-md -- "${P[@]}" --format md
case format-json -- "${P[@]}" --format json
case format-methods -- "${P[@]}" --format methods
case format-chart-csv -- "${P[@]}" --format chart-csv
case format-parquet-stdout --expect 2 -- "${P[@]}" --format parquet
case file-table -- "${P[@]}" --format table -o out.txt
case file-csv -- "${P[@]}" --format csv -o out.csv
case file-md -- "${P[@]}" --format md -o out.md
case file-json -- "${P[@]}" --format json -o out.json
case file-methods -- "${P[@]}" --format methods -o methods.md
case file-chart-csv -- "${P[@]}" --format chart-csv -o chart.csv
case file-parquet -- "${P[@]}" --format parquet -o out.parquet
case file-ext-csv -- "${P[@]}" -o out.csv
case file-ext-json -- "${P[@]}" -o out.json
case file-ext-md -- "${P[@]}" -o out.md
case file-ext-parquet -- "${P[@]}" -o out.parquet
case file-ext-unknown -- "${P[@]}" -o out.dat
case output-folder-missing --expect 2 -- "${P[@]}" -o new/folder/out.csv
case decimals-csv -- "${P[@]}" --format csv --decimals 3
case decimals-zero-md -- "${P[@]}" --format md --decimals 0
case sig-json -- "${P[@]}" --format json --sig 4
case sig-chart-csv -- "${P[@]}" --format chart-csv --sig 6 -o chart.csv
case quiet-csv -- "${P[@]}" --format csv -q

# --- --write-columns: all, core, a list (options.rs, on the PWT table) ------------------------
WC=(adjust "$WL" --refs "$WB" --steps ppp,per-capita)
case columns-all -- "${WC[@]}" --format csv --write-columns all
case columns-core -- "${WC[@]}" --format csv --write-columns core
case columns-list -- "${WC[@]}" --format csv --write-columns value_adjusted,entity_code
case columns-core-json -- "${WC[@]}" --format json --write-columns core
case columns-core-parquet -- "${WC[@]}" --write-columns core -o core.parquet
case columns-list-parquet -- "${WC[@]}" --write-columns entity_code,year,value_intl,ppp_used -o list.parquet
case columns-core-md -- "${WC[@]}" --format md --write-columns core
case columns-core-streaming -- "${WC[@]}" --write-columns core --streaming -o s.csv
case columns-unknown --expect 2 -- adjust "$WL" --refs "$WB" --steps ppp --write-columns nope -o bad.csv

# --- Methods notes and HTML reports (README Usage; options.rs; labels.rs) ---------------------
case readme-methods-report -- adjust "$FEES" --refs "$CR" --steps ppp --methods methods.md --report report.html
case methods-market -- adjust gen/fr-price.csv --refs "$PUB" --steps market --base-year 2023 --format methods
case methods-base-currency -- adjust gen/fr-price.csv --refs "$PUB" --steps ppp,deflate --base-year 2023 \
    --deflator base-currency --format methods
case methods-per-income-share -- adjust gen/x-se.csv --refs refs/inc-lcu-pop --steps per-income --income-as share --format methods
case methods-per-income-days -- adjust gen/x-se.csv --refs refs/inc-lcu-pop --steps per-income --income-as days --format methods
case report-world -- adjust "$WL" --refs "$WB" --steps ppp,per-capita --report world.html --methods world.md -o world.csv
case report-deflate-md --expect 0 -- adjust gen/labels-one.csv --refs "$RT" --steps deflate --base-year 2023 --format md
for steps in deflate ppp per-capita; do
    input=gen/labels-one.csv
    [ "$steps" = ppp ] && input=gen/labels-two.csv
    case "labels-$steps" -- adjust "$input" --refs "$RT" --steps "$steps" --base-year 2023 \
        --format csv -o out.csv --report r.html --methods m.md \
        +then+ adjust "$input" --refs "$RT" --steps "$steps" --base-year 2023 --format md \
        +then+ adjust "$input" --refs "$RT" --steps "$steps" --base-year 2023 --format json
done

# --- Steps in several orders, base years, deflators (demo refs; published.rs; options.rs) -----
D=(adjust "$DEMO" --refs "$RT")
case steps-market -- "${D[@]}" --steps market --format csv
case steps-ppp -- "${D[@]}" --steps ppp --format csv
case steps-deflate -- "${D[@]}" --steps deflate --base-year 2023 --format csv
case steps-deflate-ppp -- "${D[@]}" --steps deflate,ppp --base-year 2023 -o fees-adjusted.csv
case steps-ppp-deflate -- "${D[@]}" --steps ppp,deflate --base-year 2023 --format csv
case steps-market-deflate -- "${D[@]}" --steps market,deflate --base-year 2023 --format csv
case steps-deflate-market -- "${D[@]}" --steps deflate,market --base-year 2023 --format csv
case steps-per-capita -- "${D[@]}" --steps per-capita --per 1000 --format csv
case steps-ppp-per-capita -- "${D[@]}" --steps ppp,per-capita --per 1000000 --format csv
case steps-deflate-ppp-per-capita -- "${D[@]}" --steps deflate,ppp,per-capita --per 100000 --base-year 2023 --format json
case steps-per-capita-ppp -- "${D[@]}" --steps per-capita,ppp --format csv
case steps-base-2021 -- "${D[@]}" --steps deflate,ppp --base-year 2021 --format csv
case steps-base-2019-after -- "${D[@]}" --steps ppp,deflate --base-year 2019 --format csv
case steps-deflator-own -- "${D[@]}" --steps deflate,ppp --base-year 2023 --deflator own --format csv
case steps-deflator-base -- "${D[@]}" --steps market,deflate --base-year 2023 --deflator base-currency --format csv
case steps-none -- "${D[@]}" --steps "" --format csv
case steps-order-asc -- "${D[@]}" --steps deflate,ppp --base-year 2023 --order asc --format csv
case steps-multiplier -- "${D[@]}" --steps ppp --value-multiplier 1000 --format csv
case steps-deflate-no-base --expect 2 -- adjust gen/two.csv --steps deflate --refs "$PUB"
case steps-without-refs --expect 2 -- adjust gen/two.csv --steps ppp
case steps-unknown --expect 2 -- adjust gen/two.csv --steps pp
case steps-no-population --expect 2 -- adjust gen/two.csv --steps per-capita --refs "$PUB"
case steps-deflator-base-first --expect 2 -- adjust gen/fr-price.csv --refs "$PUB" --steps deflate,ppp \
    --base-year 2023 --deflator base-currency
case steps-deflator-own-no-cpi -- adjust gen/fr-price.csv --refs "$PUB" --steps deflate,ppp --base-year 2023 \
    --deflator own --format csv
case ppp-then-deflate-published -- adjust gen/fr-price.csv --refs "$PUB" --steps ppp,deflate --base-year 2023 --format csv
case cpi-ratio-own -- adjust gen/us-2000.csv --refs "$PUB" --steps deflate --base-year 2023 --format csv
case cpi-rebasing-bls -- adjust gen/usd-cpi.csv --refs "$PUB" --steps deflate --base-year 2023 --format csv
case ppp-oecd-example -- adjust gen/prices-oecd.csv --refs "$PUB" --steps ppp --format csv
case usd-to-ppp -- adjust gen/usd-fr.csv --refs "$PUB" --steps ppp --currency-code USD --format csv
case per-capita-multiplier -- adjust gen/budget.csv --refs "$CR" --steps per-capita --per 1000 \
    --value-multiplier 1000000 --format csv
case readme-per-capita -- adjust gen/cases.csv --refs "$CR" --steps per-capita --per 100000 --value-multiplier 1000
case per-income-share -- adjust gen/income-fees.csv --refs "$CR" --steps per-income --format csv
case per-income-days -- adjust gen/income-fees.csv --refs "$CR" --steps ppp,per-income --income-as days --format csv
case readme-per-income -- adjust gen/income-fees.csv --refs "$CR" --steps per-income --income-as days
case per-income-not-last --expect 2 -- adjust gen/income-fees.csv --refs "$CR" --steps per-income,ppp
case per-capita-per-income -- adjust gen/x-se.csv --refs refs/inc-lcu-pop --steps per-capita,per-income --format csv
case per-capita-1000-per-income --expect 2 -- adjust gen/x-se.csv --refs refs/inc-lcu-pop \
    --steps per-capita,per-income --per 1000
for refs in lcu intl; do
    for steps in per-income ppp,per-income market,per-income; do
        case "per-income-se-$refs-${steps//,/-}" -- adjust gen/x-se.csv --refs "refs/inc-$refs" --steps "$steps" \
            --se se --income-as days --format csv
    done
done

# --- Wide and long tables, header rows, one year (adjust.rs, world.rs, layouts.rs) ------------
case wide-fees-csv -- adjust "$FEES" --refs "$CR" --steps ppp --format csv
case readme-ppp -- adjust "$FEES" --refs "$CR" --steps ppp
case wide-world -- adjust "$WW" --refs "$WB" --steps ppp,per-capita --format csv
case long-world -- adjust "$WL" --refs "$WB" --steps ppp,per-capita --format csv
case long-forced-header -- adjust "$WL" --refs "$WB" --steps ppp,per-capita --format csv --header-row 2 --long
case wide-forced-header -- adjust "$WW" --refs "$WB" --steps ppp,per-capita --format csv --header-row 2 --wide-years
case header-row-wrong --expect 2 -- adjust "$WL" --refs "$WB" --steps ppp,per-capita --format csv --header-row 1
case wide-and-long --expect 2 -- adjust "$WW" --wide-years --long
case year-value -- adjust gen/noyear.csv --year-value 2020 --currency-code XXX --format csv
case explicit-columns -- adjust data/world/expected.csv --entity iso3 --year year --value value_lcu \
    --refs "$WB" --steps ppp --format csv --write-columns core
case bulk-download-as-input -- adjust "$WB/ppp.csv" --currency-code XXX --format csv --write-columns core
case sdmx-as-input -- adjust data/world/sdmx/v2/ppp-v2.csv --entity REF_AREA --year TIME_PERIOD --value OBS_VALUE \
    --group MEASURE --currency-code XXX --format csv --allow-unresolved --lenient
case title-and-notes -- adjust data/bad/title-above.csv --format md
case estat-tsv-input -- adjust data/world/estat/ppp.tsv --currency-code XXX --format csv
case delimiter-forced -- adjust data/world/estat/population.tsv --delimiter tab --currency-code XXX --format md

# --- Groups, ranks, aggregates, currencies (adjust.rs, options.rs, README Usage) --------------
case group-item -- adjust gen/items.csv --group item --format csv --currency-code EUR
case group-item-asc -- adjust gen/items.csv --group item --order asc --format csv --currency-code EUR
case readme-usd-group -- adjust gen/prices-items.csv --refs "$CR" --currency-code USD --group item --steps ppp
case aggregates-apart -- adjust gen/agg.csv --currency-code XXX --format csv
case rank-aggregates -- adjust gen/agg.csv --currency-code XXX --format csv --rank-aggregates
case rank-aggregates-world -- adjust "$FEES" --refs "$CR" --steps ppp --rank-aggregates --format csv
case mixed-currency-no-steps -- adjust gen/fees3.csv --steps "" --refs "$CR" --format csv
case mixed-currency-per-capita -- adjust gen/fees3.csv --steps per-capita --refs "$CR" --format csv
case one-currency-xxx -- adjust gen/fees3.csv --currency-code XXX --format csv
case currency-column -- adjust gen/mixed.csv --refs "$CR" --steps ppp --currency cur --format csv
case currency-usd-market -- adjust gen/prices-oecd.csv --refs "$PUB" --steps market --currency-code USD --format csv
case stdin-json-xxx --stdin gen/two.csv -- adjust - --format json --currency-code XXX
case stdin-csv --stdin data/wide-country-fees.csv -- adjust - --refs "$CR" --steps ppp --format csv

# --- Nearest year, unresolved names, aliases (adjust.rs, errors.rs) ---------------------------
case nearest-year -- adjust "$FEES" --refs "$CR" --steps ppp --nearest-year 1 --format csv
case nearest-year-demo -- "${D[@]}" --steps deflate,ppp --base-year 2023 --nearest-year 1 --format csv
case nearest-year-2-per-capita -- "${D[@]}" --steps ppp,per-capita --nearest-year 2 --format csv
case unresolved-error --expect 2 -- adjust gen/unresolved.csv
case allow-unresolved -- adjust gen/unresolved.csv --allow-unresolved --format csv
case allow-unresolved-md -- adjust gen/unresolved.csv --allow-unresolved --format md
case aliases-user -- adjust gen/place.csv --entity place --aliases gen/aliases-user.csv --format csv
case aliases-demo -- adjust "$DEMO" --aliases "$RT/aliases.csv" --format csv --currency-code XXX

# --- Margins of error, intervals, ties (uncertainty.rs, options.rs; README Usage) -------------
case readme-survey -- adjust "$SURVEY" --refs "$RT" --steps ppp --moe moe90 --margin-confidence 90
case survey-csv-95 -- adjust "$SURVEY" --refs "$RT" --steps ppp --moe moe90 --margin-confidence 90 --format csv
case survey-simulate -- adjust "$SURVEY" --refs "$RT" --steps ppp --moe moe90 --margin-confidence 90 \
    --rank-intervals simulate --draws 300 --seed 7 --format csv
case survey-bonferroni-md -- adjust "$SURVEY" --refs "$RT" --steps ppp --moe moe90 --margin-confidence 90 \
    --joint-adjustment bonferroni --format md
case survey-report -- adjust "$SURVEY" --refs "$RT" --steps ppp --moe moe90 --margin-confidence 90 \
    --report survey.html --methods survey.md -o survey.json
case acs-proportion -- adjust gen/count-prop.csv --refs refs/pop-moe-prop --steps per-capita --proportion \
    --moe moe --margin-confidence 90 --format csv
case acs-ratio -- adjust gen/count-ratio.csv --refs refs/pop-moe-ratio --steps per-capita \
    --moe moe --margin-confidence 90 --format csv
case moe-90-published -- adjust gen/prices-moe.csv --refs "$PUB" --steps ppp --moe moe --margin-confidence 90 --format csv
case se-95 -- adjust gen/se.csv --refs "$PUB" --steps ppp --se se --margin-confidence 95 --format csv
case moe-99-json -- adjust gen/prices-moe.csv --refs "$PUB" --steps ppp --moe moe --margin-confidence 99 --format json
case moe-without-level --expect 2 -- adjust gen/one-moe.csv --moe moe
case ci-asymmetric -- adjust gen/ci.csv --ci-low lo --ci-high hi --margin-confidence 95 --format csv
case moe-on-wide --expect 2 -- adjust gen/wide-one.csv --moe x --margin-confidence 90
case poll-ties -- adjust gen/poll.csv --sample-size n --margin-confidence 95 --format csv --currency-code XXX
case poll-ties-table -- adjust gen/poll.csv --sample-size n --margin-confidence 95 --format table --currency-code XXX
case simulate-seed -- adjust gen/sim.csv --currency-code XXX --se se --rank-intervals simulate --draws 500 --seed 42 --format csv
case joint-independence -- adjust gen/est.csv --currency-code XXX --se se --rank-intervals joint \
    --joint-adjustment independence --format csv
case joint-bonferroni -- adjust gen/est.csv --currency-code XXX --se se --rank-intervals joint \
    --joint-adjustment bonferroni --format csv
case share-percent -- adjust gen/share-percent.csv --sample-size n --share-unit percent --margin-confidence 90 --format csv
case share-fraction -- adjust gen/share-fraction.csv --sample-size n --share-unit fraction --margin-confidence 90 --format csv
case share-fraction-given-percent --expect 2 -- adjust gen/share-bad.csv --sample-size n --share-unit fraction \
    --margin-confidence 90 --format csv
for refs in uncertain exact; do
    case "per-capita-se-$refs" -- adjust gen/x-se.csv --refs "refs/pop-$refs" --steps per-capita --per 1000 \
        --currency-code XXX --se se --format csv
    case "per-capita-se-$refs-proportion" -- adjust gen/x-se.csv --refs "refs/pop-$refs" --steps per-capita --per 1000 \
        --currency-code XXX --se se --format csv --proportion
done
case moe-new-flag -- adjust gen/s-moe.csv --moe m --margin-confidence 90 --currency-code XXX --format csv
case moe-old-flag -- adjust gen/s-moe.csv --moe m --moe-level 90 --currency-code XXX --format csv

# --- Streaming in small pieces (streaming.rs, world.rs, options.rs; README) -------------------
case stream-world-long -- adjust "$WL" --refs "$WB" --steps ppp,per-capita --streaming --chunk-mb 0.001 -o streamed.csv
case stream-world-wide -- adjust "$WW" --refs "$WB" --steps ppp,per-capita --streaming --chunk-mb 0.001 -o streamed.csv
case stream-expected-csv -- adjust data/world/expected.csv --entity iso3 --year year --value value_lcu \
    --refs "$WB" --steps ppp --streaming --chunk-mb 0.002 -o streamed.csv
case stream-sdmx-input -- adjust data/world/sdmx/v2/ppp-v2.csv --entity REF_AREA --year TIME_PERIOD --value OBS_VALUE \
    --group MEASURE --currency-code XXX --allow-unresolved --streaming --chunk-mb 0.005 -o streamed.csv
case readme-streaming -- adjust "$FEES" --refs "$CR" --steps ppp --streaming -o panel-adjusted.csv
L=(adjust big/long.csv --refs "$CR" --format csv --steps ppp,per-capita --per 1000 --group item --currency currency --lenient)
case long-in-memory -- "${L[@]}" -q -o whole.csv --max-input-mb 64
case long-streaming -- "${L[@]}" -o pieces.csv --streaming --chunk-mb 0.2
Wd=(adjust big/wide.csv --refs "$CR" --format csv --steps ppp,per-capita --allow-unresolved --decimals 2)
case wide-in-memory -- "${Wd[@]}" -q -o whole.csv --max-input-mb 64
case wide-streaming -- "${Wd[@]}" -o pieces.csv --streaming --chunk-mb 0.2
SR=(adjust big/wide.csv --refs "$CR" --steps ppp --streaming)
case stream-refuses-md --expect 2 -- "${SR[@]}" --format md -o x.md
case stream-refuses-margins --expect 2 -- "${SR[@]}" -o x.csv --moe m --margin-confidence 90
case stream-refuses-report --expect 2 -- "${SR[@]}" -o x.csv --report r.html
case stream-refuses-utf16 --expect 2 -- "${SR[@]}" -o x.csv --encoding utf-16le
case stream-refuses-stdout --expect 2 -- "${SR[@]}"
case stream-error-line --expect 2 -- adjust big/bad-line.csv --refs "$CR" --steps ppp --streaming --chunk-mb 0.05 -o x.csv

# --- audit (audit.rs, audit_engine.rs; README "Auditing a received table") ---------------------
A=(--refs "$RT" --aliases "$AUD/aliases.csv" --value budget --claim intl=budget_intl --claim usd=budget_usd
    --claim per-capita=budget_per_1000 --per 1000 --claim rank=rank_intl)
case audit-clean -- audit "$AUD/clean.csv" "${A[@]}"
case audit-faulty --expect 1 -- audit "$AUD/faulty.csv" "${A[@]}"
case audit-faulty-json --expect 1 -- audit "$AUD/faulty.csv" "${A[@]}" --format json
case audit-faulty-md --expect 1 -- audit "$AUD/faulty.csv" "${A[@]}" --format md
case audit-faulty-file --expect 1 -- audit "$AUD/faulty.csv" "${A[@]}" --format md -o memo.md
case audit-faulty-fail-on-caution --expect 1 -- audit "$AUD/faulty.csv" "${A[@]}" --fail-on caution
case readme-audit -- audit "$AUD/clean.csv" --refs "$RT" --aliases "$AUD/aliases.csv" --value budget_usd \
    --currency-code USD --claim intl=budget_intl --claim rank=rank_intl
case audit-stdin --stdin "$AUD/clean.csv" -- audit - "${A[@]}" --format json
case audit-within -- audit gen/audit-within.csv --refs refs/small --claim intl=intl
case audit-beyond --expect 1 -- audit gen/audit-beyond.csv --refs refs/small --claim intl=intl
case audit-nominal-as-real --expect 1 -- audit gen/audit-real.csv --refs refs/small --claim real=real --base-year 2023
case audit-points-as-change --expect 1 -- audit gen/audit-change.csv --refs refs/small --claim change=change
case audit-mixed-years --expect 1 -- audit gen/audit-mixed.csv --refs refs/small --claim share=share --fail-on warning
case audit-notes -- audit gen/audit-notes.csv --refs refs/small --claim intl=intl --note-cols n=n,source=source,coverage=scope
case audit-notes-strict --expect 1 -- audit gen/audit-notes.csv --refs refs/small --claim intl=intl \
    --note-cols n=n,source=source,coverage=scope --fail-on caution --min-n 50
case audit-header-words -- audit gen/audit-header.csv --refs refs/small --value value
case audit-shares --expect 1 -- audit gen/audit-shares.csv --refs refs/small --claim share=share --format json
case audit-changes -- audit gen/audit-changes.csv --refs refs/small --claim change=change
case audit-points --expect 1 -- audit gen/audit-points.csv --refs refs/small --claim change=change --format json
case audit-ranks -- audit gen/audit-ranks.csv --refs refs/small --claim rank=rank --format json
case audit-ranks-swapped --expect 1 -- audit gen/audit-swapped.csv --refs refs/small --claim rank=rank --format json
case audit-ranks-asc --expect 1 -- audit gen/audit-ranks.csv --refs refs/small --claim rank=rank --order asc
case audit-rank-recomputed --expect 1 -- audit gen/audit-ranked.csv --refs refs/small --claim intl=intl \
    --claim rank=rank --format json
case audit-change-31 -- audit gen/audit-change-31.csv --refs refs/small --claim change=change
case audit-change-32-thousands --expect 1 -- audit gen/audit-change-32.csv --refs refs/small --claim change=change \
    --value-multiplier 1000
case audit-touching --expect 1 -- audit gen/audit-touching.csv --refs "$WB" --format json --value gdp --claim usd=usd \
    --currency-code USD
TW=(--refs "$WB" --value gdp --claim intl=gdp_intl --claim intl+per-capita=gdp_intl_per_person)
case audit-twin-usd -- audit gen/twin-usd-0.csv "${TW[@]}" --currency-code USD
case audit-twin-lcu-json -- audit gen/twin-lcu-2.csv "${TW[@]}" --format json
case audit-twin-faulty --expect 1 -- audit gen/twin-faulty.csv "${TW[@]}" --currency-code USD --per 1 --format json
case audit-own-output -- adjust "$WL" --refs "$WB" --steps ppp,per-capita -o adjusted.csv \
    +then+ audit adjusted.csv --refs "$WB" --value value_input --claim intl=value_intl \
    --claim intl+per-capita=value_adjusted --claim rank=rank_adjusted --format json
case audit-no-refs --expect 2 -- audit "$AUD/clean.csv"
case audit-wide-years --expect 2 -- audit "$FEES" --refs "$CR" --claim intl=2020

# --- refs and catalog (refs.rs, world.rs; README "Reference tables") --------------------------
case refs-demo -- refs "$RT"
case refs-default-folder -- refs
case refs-country -- refs "$CR"
case refs-published -- refs "$PUB"
case refs-wb-bulk -- refs "$WB"
case refs-sdmx -- refs data/world/sdmx
case refs-sdmx-v2 -- refs data/world/sdmx/v2
case refs-estat -- refs data/world/estat
case refs-sdmx-small -- refs data/sdmx
case refs-broken --expect 1 -- refs refs/broken
case refs-aliases -- refs refs/hostile --aliases gen/aliases-user.csv
case refs-duplicates --expect 1 -- refs data/bad/refs-duplicate-entity-year
case refs-missing-folder --expect 2 -- refs no-such-folder
case catalog-draft --expect 0,2,0 -- catalog downloads \
    +then+ catalog downloads \
    +then+ adjust "$WL" --refs downloads --steps ppp,per-capita --format csv
case catalog-agency-draft -- catalog downloads-agency -o draft.json
case catalog-exists --expect 2 -- catalog downloads-existing
case catalog-force -- catalog downloads-existing --force

# --- The world fixtures: bulk download, SDMX, statistics-office TSV, spreadsheets (world.rs) --
WS=(--steps ppp,per-capita --format csv)
case world-wb-bulk -- adjust "$WL" --refs "$WB" "${WS[@]}"
case world-sdmx-v1 -- adjust "$WL" --refs data/world/sdmx "${WS[@]}"
case world-sdmx-v2 -- adjust "$WL" --refs data/world/sdmx/v2 "${WS[@]}"
case world-estat -- adjust "$WL" --refs data/world/estat "${WS[@]}"
case world-estat-wide-json -- adjust "$WW" --refs data/world/estat --steps ppp,per-capita --format json
case world-code-column -- adjust "$WL" --refs refs/world-code "${WS[@]}"
case world-no-entity-column --expect 2 -- adjust "$WL" --refs refs/world-noentity --steps ppp
case world-filter-on-plain --expect 2 -- adjust "$WL" --refs refs/world-filter --steps ppp
case world-income-intl -- adjust "$WL" --refs refs/world-income-intl --steps per-income --format csv
case world-income-usd -- adjust "$WL" --refs refs/world-income-usd --steps per-income --format csv
case world-market-deflate-none -- adjust "$WL" --refs "$WB" --steps market,per-capita --format md
for sheet in pwt-gdp.xlsx pwt-gdp.ods pwt-gdp.xls pwt-gdp.xlsb; do
    case "sheet-$sheet" -- adjust "data/sheets/$sheet" --refs "$WB" "${WS[@]}"
done
case sheet-by-name -- adjust data/sheets/fees.xlsx --sheet Fees --format csv
case sheet-by-index -- adjust data/sheets/fees.xlsx --sheet 2 --format csv
case sheet-missing --expect 2 -- adjust data/sheets/fees.xlsx --sheet Prices
case sheet-twin-csv -- adjust data/sheets/fees-twin.csv --format csv
case sheet-formula -- adjust data/sheets/formula.xlsx --format csv
case sheet-header-row -- adjust data/sheets/pwt-gdp.xlsx --refs "$WB" --header-row 2 --wide-years "${WS[@]}"
case sdmx-small -- adjust gen/sdmx-in.csv --refs data/sdmx --steps ppp,per-capita --per 1000000 --format csv
case parquet-input -- adjust gen/in.parquet --format csv
case parquet-input-steps -- adjust gen/in.parquet --refs "$CR" --steps ppp --format json

# --- lead (uncertainty.rs; README Usage) -----------------------------------------------------
case lead-readme -- lead 48 44 -n 1000 --names "Candidate A,Candidate B"
case lead-tie -- lead 48 44 -n 1000 --names Ana,Ben
case lead-clear -- lead 55 35 -n 1000
case lead-impossible --expect 2 -- lead 70 40 -n 1000
case lead-level-90 -- lead 52 45 -n 800 --level 90
case lead-level-99 -- lead 52 45 --n 800 --level 99
case lead-fraction -- lead 0.48 0.44 -n 1000 --share-unit fraction
case lead-design-effect -- lead 48 44 -n 1000 --design-effect 1.8

# --- Recipes (recipes.rs, hostile.rs; README "Recipes and batch runs") ------------------------
case recipe-round-trip --cwd elsewhere -- adjust ../"$FEES" --refs ../"$CR" --steps ppp,per-capita --per 1000 \
    --decimals 3 --format csv -o ../flags.csv --save-recipe ../recipes/fees.toml \
    +then+ adjust --recipe ../recipes/fees.toml -o ../from-recipe.csv \
    +then+ adjust --recipe ../recipes/fees.toml --allow-outside --save-recipe ../recipes/again.toml \
    +then+ adjust --recipe ../recipes/fees.toml --format methods -o ../m.md
case readme-save-recipe -- adjust "$DEMO" --refs "$RT" --steps deflate,ppp --base-year 2023 --save-recipe fees.toml \
    +then+ adjust --recipe fees.toml \
    +then+ adjust --recipe fees.toml --base-year 2022
case recipe-override -- adjust --recipe r.toml --steps market
case recipe-with-input -- adjust data/sheets/fees-twin.csv --recipe r.toml --steps "" --currency-code XXX
case recipe-readme-example -- adjust --recipe readme-recipe/fees.toml
case recipe-readme-survey -- adjust --recipe readme-recipe/survey.toml
case recipe-readme-base-year -- adjust --recipe readme-recipe/fees.toml --base-year 2021 -o readme-recipe/adjusted/2021.csv
case recipe-save-margins -- adjust "$SURVEY" --refs "$RT" --steps ppp --moe moe90 --margin-confidence 90 \
    --rank-intervals simulate --draws 200 --seed 3 --save-recipe survey.toml -o survey.csv
for n in 1 2 3 4 5 6 7; do
    case "recipe-error-$n" --expect 2 -- adjust x.csv --recipe "recipe-errors/e$n.toml"
done
case recipe-outside-file --expect 2 -- adjust --recipe shared/recipes/r-file.toml --format csv
case recipe-outside-methods --expect 2 -- adjust --recipe shared/recipes/r-methods.toml --format csv
case recipe-outside-report --expect 2 -- adjust --recipe shared/recipes/r-report.toml --format csv
case recipe-is-its-output --expect 2 -- adjust --recipe shared/recipes/r-self.toml
case recipe-device --expect 2 -- adjust --recipe /dev/zero

# --- batch (recipes.rs; README) ---------------------------------------------------------------
case batch-one-broken --expect 1 -- batch batch/batch.toml
case batch-fail-fast --expect 1 -- batch batch-ff/batch.toml --fail-fast
case batch-table-format -- batch batch-table/batch.toml
case batch-quiet-json-methods -- batch batch-quiet/batch.toml -q
case batch-output-dir -- batch batch-outdir/tables.toml
case batch-then-single -- batch batch-table/batch.toml \
    +then+ adjust --recipe batch-table/fees.toml batch-table/incoming/a.csv -o a-single.csv
case batch-rerun -- batch batch-table/batch.toml +then+ batch batch-table/batch.toml
case batch-unknown-field --expect 2 -- batch batch-bad/batch.toml
case batch-missing-recipe --expect 2 -- batch batch-bad/batch-missing.toml

# --- Bad inputs: tests/data/bad/cases.tsv, each with its expected exit code (corpus.rs) --------
mapfile -t CORPUS < <(grep -v '^#' "$T/data/bad/cases.tsv" | grep -v '^[[:space:]]*$')
for line in "${CORPUS[@]}"; do
    file=${line%%$'\t'*}            # fields: file, extra arguments, exit code, text
    rest=${line#*$'\t'}
    extra=${rest%%$'\t'*}
    rest=${rest#*$'\t'}
    code=${rest%%$'\t'*}
    args=(adjust)
    if [ "${file#ok:}" != "$file" ]; then
        args+=(gen/two.csv --refs "data/bad/${file#ok:}")
    elif [ "${file#alias:}" != "$file" ]; then
        args+=(gen/two.csv --aliases "data/bad/${file#alias:}")
    else
        args+=("data/bad/$file")
    fi
    read -r -a extra_words <<<"$extra"
    args+=("${extra_words[@]}" --format csv)
    name="bad-${file//[^A-Za-z0-9._-]/-}"
    if [ -n "$extra" ]; then
        words=${extra//--/}
        name+="-${words// /-}"
    fi
    case "$name" --expect "$code" -- "${args[@]}"
done

# --- Hostile and careless input (hostile.rs, errors.rs, corpus.rs, adjust.rs) -----------------
case hostile-html-report -- adjust 'gen/in<b>put.csv' --refs refs/hostile --steps ppp \
    --group 'item <img src=x onerror=alert(1)><script>alert(2)</script>' --report "$S/report.html" --format csv
case hostile-md -- adjust 'gen/in<b>put.csv' --refs refs/hostile --steps ppp \
    --group 'item <img src=x onerror=alert(1)><script>alert(2)</script>' --format md --methods m.md
case formulas-guarded -- adjust gen/formulas.csv --group item --format csv -q
case formulas-allowed -- adjust gen/formulas.csv --group item --format csv -q --allow-formulas
case formulas-md -- adjust gen/formulas.csv --group item --format md -q
case formulas-table -- adjust gen/formulas.csv --group item --format table
case formulas-report -- adjust gen/formulas.csv --group item --currency-code XXX --report f.html -o f.json
case set-aside-quiet -- adjust gen/titled.csv -q --format csv
case set-aside-json -- adjust gen/titled.csv -q --format json
case number-not-parsed --expect 2 -- adjust gen/badnum.csv
case number-not-parsed-lenient -- adjust gen/badnum.csv --lenient --format csv
case decimal-comma-needed --expect 2 -- adjust gen/deccomma.csv
case decimal-comma -- adjust gen/deccomma.csv --decimal-comma --format csv
case windows-1252 -- adjust gen/cp1252.csv --format csv
case windows-1252-forced -- adjust gen/cp1252.csv --encoding windows-1252 --format csv
case utf16-tab -- adjust gen/utf16.txt --format csv
case dup-reference --expect 2 -- adjust gen/two.csv --refs refs/dup-ppp --steps ppp
case neg-reference --expect 2 -- adjust gen/two.csv --refs refs/neg-ppp --steps ppp
case catalog-outside-folder --expect 2 -- adjust gen/two.csv --refs refs/outside --steps ppp
case not-a-table-passwd --expect 2 -- adjust gen/passwd
case device-input --expect 2 -- adjust /dev/zero
case device-urandom --expect 2 -- adjust /dev/urandom
case device-aliases --expect 2 -- adjust gen/two.csv --aliases /dev/zero
case fifo-input --expect 2 -- adjust gen/fifo.csv
case symlink-loop --expect 2 -- adjust gen/loop.csv --format csv
case folder-input --expect 2 -- adjust "$PUB"
case scratch-folder-input --expect 2 -- adjust "$S" --format csv
case missing-input --expect 2 -- adjust does-not-exist.csv --format csv
case max-input-mb --expect 2 -- adjust big/limit.csv --max-input-mb 1
case huge-field --expect 2 -- adjust big/huge-field.csv --format csv
case output-over-input --expect 2 -- adjust gen/two.csv -o gen/two.csv
case output-over-reference --expect 2 -- adjust gen/two.csv --refs refs/ppp-over -o refs/ppp-over/ppp.csv
case output-is-folder --expect 2 -- adjust gen/two.csv -o gen
case output-asked-twice --expect 2 -- adjust shared/recipes/in.csv -o "$S/out.csv" --methods "$S/out.csv"
case output-named-in-summary -- adjust shared/recipes/in.csv -o "$S/out.csv" --methods "$S/m.md"
for n in 0 7 20; do
    case "decimals-$n" -- adjust gen/extremes.csv --decimals "$n" --format csv -q
done
for n in 1 9 17; do
    case "sig-$n" -- adjust gen/extremes.csv --sig "$n" --format md -q
done
for pair in --decimals:27 --sig:1000 --sig:0 --base-year:-5 --value-multiplier:0 --year-value:99999; do
    case "out-of-range${pair%%:*}-${pair#*:}" --expect 2 -- adjust gen/extremes.csv "${pair%%:*}" "${pair#*:}" --steps "" -q
done
case multiplier-tiny --expect 2 -- adjust gen/extremes.csv --value-multiplier 1e-30
case multiplier-small -- adjust gen/extremes.csv --value-multiplier 1e-3 --format csv -q
case number-1e-400 --expect 2 -- adjust gen/n-1e-400.csv
case number-subnormal --expect 2 -- adjust gen/n-subnormal.csv
case number-32-digits --expect 2 -- adjust gen/n-32-digits.csv

# --- Pipes: csv (and others) to stdout into `head -3` stop quietly with exit 0 (README) --------
case pipe-csv-head --pipe 'head -3' -- adjust big/pipe.csv --currency-code XXX --format csv
case pipe-csv-head-quiet --pipe 'head -3' -- adjust big/pipe.csv --currency-code XXX --format csv -q
case pipe-default-head --pipe 'head -3' -- adjust big/pipe.csv --currency-code XXX
case pipe-json-head --pipe 'head -3' -- adjust big/pipe.csv --currency-code XXX --format json
case pipe-md-head --pipe 'head -3' -- adjust big/pipe.csv --currency-code XXX --format md
case pipe-table-head --pipe 'head -3' -- adjust big/pipe.csv --currency-code XXX --format table
case pipe-chart-csv-head --pipe 'head -3' -- adjust big/pipe.csv --currency-code XXX --format chart-csv
case pipe-world-head --pipe 'head -3' -- adjust "$WL" --refs "$WB" --steps ppp,per-capita --format csv
case pipe-demo-head --pipe 'head -3' -- demo --format csv
case pipe-audit-head --expect 1 --pipe 'head -3' -- audit "$AUD/faulty.csv" "${A[@]}" --format json

# ---------------------------------------------------------------------------------------------
# Total.
# ---------------------------------------------------------------------------------------------
rm -rf "$S"
if ! (cd "$BIG" && sha256sum --quiet -c "$RUN/big.sha256"); then
    echo "WARNING: a generated input in $BIG changed during the runs" >&2
fi
echo
echo "total: $N_CASES case(s), $N_LINES command line(s): $N_SAME same, $N_DIFF differ, $N_PIPE_FAILED pipe check(s) failed"
if [ ${#DIFFERING[@]} -gt 0 ]; then
    echo "differing: ${DIFFERING[*]}"
    echo "details (first differing lines): $DIFFS/NAME.txt; both runs' folders: $WORK/cases/NAME/{old,new}"
fi
if [ ${#UNEXPECTED[@]} -gt 0 ]; then
    echo "exit codes other than the tests expect (the same in both unless listed as differing):"
    printf '  %s\n' "${UNEXPECTED[@]}"
fi
[ ${#PIPE_FAILED[@]} -gt 0 ] && echo "pipe checks failed: ${PIPE_FAILED[*]}"
if [ "$N_DIFF" -gt 0 ] || [ "$N_PIPE_FAILED" -gt 0 ]; then
    exit 1
fi
exit 0
