#!/usr/bin/env bash
# Writes every output the binary can produce for a fixed set of inputs into a
# directory, so two builds can be compared byte for byte:
#
#   bash scripts/snapshot.sh BIN DIR      # e.g. target/debug/burnout /tmp/before
#   diff -r /tmp/before /tmp/after
#
# Covers every shipped case in every format (solve, and budget for cases with
# a [budget] section), scans in every format (with sensitivities, a site, a
# coast target and a figure), batch in CSV and table, and the error lines and
# exit codes of a few bad inputs. Used to prove a restructuring changed nothing.
set -uo pipefail
BIN=$(realpath "$1"); DIR=$2
ROOT=$(cd "$(dirname "$0")/.." && pwd)
rm -rf "$DIR"; mkdir -p "$DIR"; cd "$DIR"
n=0
# run NAME ARGS...: stdout to NAME.out, stderr to NAME.err, exit code to NAME.rc
run() {
    local name=$1; shift
    "$BIN" "$@" >"$name.out" 2>"$name.err"; echo $? >"$name.rc"
    # Wall times are the one thing allowed to differ between runs.
    sed -i -E 's/ in [0-9]+(\.[0-9]+)? (s|ms)\b/ in TIME/' "$name.err"
    n=$((n + 1))
}
for c in "$ROOT"/cases/*.toml; do
    b=$(basename "$c" .toml)
    for f in table json csv; do run "solve-$b-$f" solve --case "$c" --format "$f"; done
    run "solve-$b-us" solve --case "$c" --units us
    if grep -q '^\[budget\]' "$c"; then
        for f in table json; do run "budget-$b-$f" budget --case "$c" --format "$f"; done
    fi
done
SCAN=(scan --burnout-alt 150km..600km:50km --periapsis-alt 185km --apoapsis-alt 35786km)
for f in table json csv; do run "scan-gto-$f" "${SCAN[@]}" --format "$f"; done
run scan-gto-sens "${SCAN[@]}" --format csv --sensitivities
run scan-gto-plot "${SCAN[@]}" --plot scan-gto.svg --out scan-gto-plot.csv
run scan-fpa "${SCAN[@]/150km..600km:50km/250km}" --fpa=-10deg..10deg:2.5deg --format csv
run scan-fpa-table scan --burnout-alt 250 --apoapsis-alt 800 --fpa=-10deg..10deg:1.5deg
run scan-coast scan --burnout-alt 220 --apoapsis-alt 1200 --time-to-apoapsis 5min..50min:5min --format csv
run scan-coast-table scan --burnout-alt 220 --apoapsis-alt 1200 --time-to-apoapsis 5min..50min:5min
run scan-site scan --burnout-alt 200 --periapsis-alt 200 --apoapsis-alt 200 --latitude 28.5 \
    --downrange 0km..2000km:500km --inclination 51.6 --format csv
run scan-site-table scan --burnout-alt 200 --periapsis-alt 200 --apoapsis-alt 400 --latitude 28.5 \
    --downrange 0km..2000km:500km --inclination 51.6 --plot scan-site.svg --out scan-site.csv
run scan-us scan --burnout-alt 100nmi..300nmi:50nmi --periapsis-alt 100nmi --apoapsis-alt 200nmi --units us
cat >batch-in.csv <<'CSV'
id,body,burnout-alt,periapsis-alt,apoapsis-alt,speed,fpa,branch,ecc,time-to-apoapsis,latitude,inclination
a,earth,200km,185km,35786km,,,,,,,
b,earth,250,,800,,,both,,,,
c,moon,15,15,100,,,,,,,
d,earth,300,,,7.9,1.5,,,,,
e,earth,200,250,,,,both,0.01,,,
f,earth,220,,1200,,,both,,20min,,
g,earth,200,200,400,,,,,,28.5,51.6
h,earth,-5,185,400,,,,,,,
i,mars,abc,185,400,,,,,,,
j,earth,300,400,200,,,,,,,
CSV
run batch-csv batch batch-in.csv
run batch-table batch batch-in.csv --format table
run batch-file batch batch-in.csv --out batch-out.csv
run bad-unit solve --burnout-alt 12parsecs --periapsis-alt 185 --apoapsis-alt 400
run bad-below solve --burnout-alt 200 --periapsis-alt 300 --apoapsis-alt 400
run bad-pair solve --burnout-alt 200 --period 90min --sma 7000km
run bad-range scan --burnout-alt 200..100:10 --periapsis-alt 185 --apoapsis-alt 400
run fwd solve --burnout-alt 250 --speed 11.5 --fpa 60 --format json
run hyp solve --burnout-alt 250 --sma=-20000 --ecc 1.3
# Messages that name inputs (the core mentions quantities; the input layer
# names the flags the user typed).
run msg-alone solve --burnout-alt 200 --ecc 0.1
run msg-nothing solve --burnout-alt 200
run msg-energy solve --burnout-alt 200 --speed 8 --sma 7000
run msg-no-point solve --periapsis-alt 200 --apoapsis-alt 400
run msg-free solve --periapsis-radius 7000km --time-to-apoapsis 20min
run msg-body solve --body pluto --burnout-alt 200 --periapsis-alt 200 --apoapsis-alt 400
run msg-mu solve --mu 0 --radius 1000 --burnout-alt 200 --periapsis-alt 200 --apoapsis-alt 400
run msg-site solve --burnout-alt 200 --periapsis-alt 200 --apoapsis-alt 400 --latitude 28.5
run msg-conflict solve --burnout-alt 200 --periapsis-alt 200 --apoapsis-alt 2000 --sma 12000
run msg-speed-apo solve --burnout-alt 200 --speed 12 --apoapsis-alt 2000
run msg-speed-reach solve --burnout-alt 200 --speed 7 --periapsis-radius 9000km
run msg-family solve --burnout-alt 200 --sma 9000 --period 140min --c3=-40
run msg-budget budget --burnout-alt 200 --periapsis-alt 200 --apoapsis-alt 400 --speed-sigma 2m/s --ecc-tol 0
run msg-pair solve --burnout-alt 200 --periapsis-alt 500 --apoapsis-alt 400
run msg-scan-rows scan --burnout-alt 200 --ecc 0.1..0.3:0.1 --format csv
echo "$n runs written to $DIR"
