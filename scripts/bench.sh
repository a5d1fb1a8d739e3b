#!/usr/bin/env bash
# Whole-process benchmarks of `burnout scan` and `burnout batch` (timings
# live here and in benches/, never in tests).
#
#   bash scripts/bench.sh            # run everything; prints a summary
#
# What it measures, on files under target/bench/:
#   1. a 1,000,000-altitude scan (both branches: 2,000,000 rows, the standard
#      columns) written to a CSV file: wall time (median of 3), rows/s, peak memory;
#   2. the same job as a vectorised numpy script writing CSV (target: burnout
#      at least 20x faster);
#   3. writing the same number of bytes with `head -c N /dev/zero` (median of
#      3; target: burnout within 3x of that);
#   4. a 200,000-row batch, and a 20,000-row batch for memory flatness
#      (target: peak memory of 200,000 rows below 1.5x that of 20,000).
# numpy is installed into a virtual environment under target/ if missing.
set -euo pipefail
cd "$(dirname "$0")/.."
ROOT=$(pwd)
OUT="$ROOT/target/bench"
mkdir -p "$OUT"
export CARGO_TERM_COLOR=never

echo "building release..."
cargo build --release --quiet
BIN="$ROOT/target/release/burnout"

# Runs a command under /usr/bin/time -v; sets WALL (s) and RSS_KB.
timed() {
    local log="$OUT/time.log"
    /usr/bin/time -v "$@" 2>"$log" >/dev/null || {
        local rc=$?
        # burnout batch exits 3 when some rows do not solve; that is data, not failure.
        if [ "$rc" -ne 3 ]; then cat "$log" >&2; return "$rc"; fi
    }
    WALL=$(awk -F': ' '/Elapsed \(wall clock\)/ {n=split($2,t,":"); s=0; for(i=1;i<=n;i++) s=s*60+t[i]; print s}' "$log")
    RSS_KB=$(awk -F': ' '/Maximum resident set size/ {print $2}' "$log")
}

rate() { awk -v n="$1" -v t="$2" 'BEGIN { if (t > 0) printf "%.0f", n / t; else print "inf" }'; }
ratio() { awk -v a="$1" -v b="$2" 'BEGIN { if (b > 0) printf "%.2f", a / b; else print "inf" }'; }

# --- 1. scan ---------------------------------------------------------------
SCAN_ARGS=(scan --burnout-alt 200km..1200km/1000000 --periapsis-alt 185km --apoapsis-alt 35786km)
# Every timed step starts with no dirty pages waiting (sync), so that one
# step's write-back does not throttle the next.
settle() { sync; sleep 1; }
rm -f "$OUT/scan.csv"
"$BIN" "${SCAN_ARGS[@]}" --out "$OUT/scan.csv" 2>/dev/null   # warm the binary and page cache
SCAN_ROWS=$(( $(wc -l < "$OUT/scan.csv") - 1 ))
SCAN_BYTES=$(stat -c %s "$OUT/scan.csv")
# Median of three runs: the machine is shared and file writing is noisy.
median3() { printf '%s\n' "$@" | sort -g | sed -n 2p; }
RUNS=()
for _ in 1 2 3; do
    rm -f "$OUT/scan.csv"; settle
    timed "$BIN" "${SCAN_ARGS[@]}" --out "$OUT/scan.csv"
    RUNS+=("$WALL"); SCAN_RSS=$RSS_KB
done
SCAN_WALL=$(median3 "${RUNS[@]}")
rm -f "$OUT/scan.csv"; settle

# --- 2. numpy --------------------------------------------------------------
PY=python3
if ! "$PY" -c "import numpy" 2>/dev/null; then
    if [ ! -x "$ROOT/target/bench-venv/bin/python" ]; then
        echo "installing numpy into target/bench-venv..."
        python3 -m venv "$ROOT/target/bench-venv"
        "$ROOT/target/bench-venv/bin/pip" install --quiet numpy
    fi
    PY="$ROOT/target/bench-venv/bin/python"
fi
cat > "$OUT/scan_numpy.py" <<'PYEOF'
# The same scan as `burnout scan --burnout-alt 200km..1200km/1000000
# --periapsis-alt 185km --apoapsis-alt 35786km --format csv`, vectorised
# with numpy and written with numpy.savetxt: both branches, same columns.
import sys
import numpy as np

MU = 3.986004418e14          # Earth GM, m^3/s^2 (IERS Conventions 2010)
RE = 6378137.0               # Earth equatorial radius, m (WGS 84)
rp, ra = RE + 185e3, RE + 35786e3
alt = 200e3 + np.arange(1_000_000) * (1000e3 / 999_999)
r = RE + alt
s = rp + ra
p = 2 * rp * ra / s
vt = np.sqrt(MU * p) / r
prod = (r - rp) * (ra - r)
vr = np.sqrt(2 * MU * prod / s) / r
speed = np.hypot(vr, vt)
fpa = np.degrees(np.arctan2(vr, vt))
nu = np.degrees(np.arctan2(2 * np.sqrt(prod * rp * ra) / (r * s), (rp * (ra - r) - ra * (r - rp)) / (r * s)))
a = 0.5 * s
e = (ra - rp) / s
period = 2 * np.pi * np.sqrt(a**3 / MU)
c3 = -MU / a
n = alt.size
ones = np.ones(n)
cols_up = [alt, speed, fpa, nu, rp * ones, ra * ones, a * ones, e * ones, period * ones, c3 * ones]
cols_dn = [alt, speed, -fpa, 360 - nu, rp * ones, ra * ones, a * ones, e * ones, period * ones, c3 * ones]
up = np.column_stack(cols_up)
dn = np.column_stack(cols_dn)
table = np.empty((2 * n, up.shape[1]))
table[0::2] = up
table[1::2] = dn
branch = np.empty(2 * n, dtype=object)
branch[0::2] = "ascending"
branch[1::2] = "descending"
with open(sys.argv[1], "w") as f:
    f.write("burnout_alt_m,status,message,branch,speed_m_s,flight_path_angle_deg,true_anomaly_deg,"
            "periapsis_radius_m,apoapsis_radius_m,sma_m,ecc,period_s,c3_m2_s2\n")
    fmt = ",".join(["%.17g", "ok", "", "%s"] + ["%.17g"] * 9)
    rows = np.empty((2 * n, 11), dtype=object)
    rows[:, 0] = table[:, 0]
    rows[:, 1] = branch
    rows[:, 2:] = table[:, 1:]
    np.savetxt(f, rows, fmt=fmt)
PYEOF
timed "$PY" "$OUT/scan_numpy.py" "$OUT/scan_numpy.csv"
NUMPY_WALL=$WALL
NUMPY_ROWS=$(( $(wc -l < "$OUT/scan_numpy.csv") - 1 ))
rm -f "$OUT/scan_numpy.csv"; settle

# --- 3. raw bytes ------------------------------------------------------------
RUNS=()
for _ in 1 2 3; do
    rm -f "$OUT/zeros.bin"; settle
    timed bash -c "head -c $SCAN_BYTES /dev/zero > '$OUT/zeros.bin'"
    RUNS+=("$WALL")
done
BYTES_WALL=$(median3 "${RUNS[@]}")
rm -f "$OUT/zeros.bin"; settle

# --- 3b. the same scan with the 15 sensitivity columns ---------------------
# (the job the formatting target is set on: at most 1.5x the raw write and
# at least 30x numpy)
SENS_ARGS=("${SCAN_ARGS[@]}" --sensitivities)
rm -f "$OUT/scan15.csv"
"$BIN" "${SENS_ARGS[@]}" --out "$OUT/scan15.csv" 2>/dev/null
SENS_BYTES=$(stat -c %s "$OUT/scan15.csv")
RUNS=()
for _ in 1 2 3; do
    rm -f "$OUT/scan15.csv"; settle
    timed "$BIN" "${SENS_ARGS[@]}" --out "$OUT/scan15.csv"
    RUNS+=("$WALL")
done
SENS_WALL=$(median3 "${RUNS[@]}")
rm -f "$OUT/scan15.csv"; settle
RUNS=()
for _ in 1 2 3; do
    rm -f "$OUT/zeros.bin"; settle
    timed bash -c "head -c $SENS_BYTES /dev/zero > '$OUT/zeros.bin'"
    RUNS+=("$WALL")
done
SENS_BYTES_WALL=$(median3 "${RUNS[@]}")
rm -f "$OUT/zeros.bin"; settle
cat > "$OUT/scan15_numpy.py" <<'PYEOF'
# The 15-sensitivity-column scan as a vectorised numpy script: the same
# states as scan_numpy.py plus the partials of (rp, ra, a, e, T) per m/s,
# per deg and per m, from the same formulas as src/solve/sensitivity.rs
# (X = Q c^2 - 1, Y = Q s c, e = hypot(X, Y), p = r Q c^2, ...).
import sys
import numpy as np

MU = 3.986004418e14          # Earth GM, m^3/s^2 (IERS Conventions 2010)
RE = 6378137.0               # Earth equatorial radius, m (WGS 84)
rp0, ra0 = RE + 185e3, RE + 35786e3
alt = 200e3 + np.arange(1_000_000) * (1000e3 / 999_999)
r = RE + alt
s_ = rp0 + ra0
p0 = 2 * rp0 * ra0 / s_
vt = np.sqrt(MU * p0) / r
prod = (r - rp0) * (ra0 - r)
vr = np.sqrt(2 * MU * prod / s_) / r
v = np.hypot(vr, vt)

def rows_for(g):
    s, c = np.sin(g), np.cos(g)
    q = r * v * v / MU
    x = q * c * c - 1
    y = q * s * c
    e = np.hypot(x, y)
    cn, sn = x / e, y / e
    dq = [2 * q / v, 0 * q, q / r]
    dx = [c * c * dq[0], -2 * q * s * c, c * c * dq[2]]
    dy = [s * c * dq[0], q * (c * c - s * s), s * c * dq[2]]
    de = [cn * dx[k] + sn * dy[k] for k in range(3)]
    p = r * q * c * c
    dp = [2 * p / v, -2 * p * s / c, 2 * p / r]
    drp = [dp[k] / (1 + e) - p * de[k] / (1 + e) ** 2 for k in range(3)]
    a = r / (2 - q)
    da = [2 * a * a * q / (r * v), 0 * q, 2 * a * a / (r * r)]
    t = 2 * np.pi * np.sqrt(a**3 / MU)
    dt = [1.5 * t / a * da[k] for k in range(3)]
    dra = [2 * da[k] - drp[k] for k in range(3)]
    per_deg = np.pi / 180
    out = []
    for row in (drp, dra, da, de, dt):
        out += [row[0], row[1] * per_deg, row[2]]
    nu = np.degrees(np.arctan2(y, x)) % 360
    return [v, np.degrees(g), nu, p / (1 + e), p / (1 - e), a, e, t, -MU / a, r] + out

up = np.column_stack(rows_for(np.arctan2(vr, vt)))
dn = np.column_stack(rows_for(-np.arctan2(vr, vt)))
n = alt.size
table = np.empty((2 * n, up.shape[1] + 1))
table[0::2, 1:] = up
table[1::2, 1:] = dn
table[:, 0] = np.repeat(alt, 2)
branch = np.empty(2 * n, dtype=object)
branch[0::2] = "ascending"
branch[1::2] = "descending"
with open(sys.argv[1], "w") as f:
    names = ["periapsis_radius_m", "apoapsis_radius_m", "sma_m", "ecc", "period_s"]
    cols = ["speed_m_s", "flight_path_angle_deg", "burnout_radius_m"]
    f.write("burnout_alt_m,status,message,branch,speed_m_s,flight_path_angle_deg,true_anomaly_deg,"
            "periapsis_radius_m,apoapsis_radius_m,sma_m,ecc,period_s,c3_m2_s2,burnout_radius_m,"
            + ",".join(f"d_{a}_d_{b}" for a in names for b in cols) + "\n")
    fmt = ",".join(["%.17g", "ok", "", "%s"] + ["%.17g"] * 25)
    rows = np.empty((2 * n, 27), dtype=object)
    rows[:, 0] = table[:, 0]
    rows[:, 1] = branch
    rows[:, 2:] = table[:, 1:]
    np.savetxt(f, rows, fmt=fmt)
PYEOF
timed "$PY" "$OUT/scan15_numpy.py" "$OUT/scan15_numpy.csv"
SENS_NUMPY_WALL=$WALL
rm -f "$OUT/scan15_numpy.csv"; settle

# --- 4. batch --------------------------------------------------------------
make_batch() {
    awk -v n="$1" 'BEGIN {
        print "id,body,burnout-alt,periapsis-alt,apoapsis-alt,branch";
        for (i = 0; i < n; i++) {
            # every 50th case is infeasible (burnout under the periapsis)
            alt = (i % 50 == 0) ? 150 : 190 + i % 700;
            printf "case-%d,earth,%d km,185 km,%d km,both\n", i, alt, 20000 + i % 20000;
        }
    }' > "$2"
}
make_batch 200000 "$OUT/batch-200k.csv"
make_batch 20000 "$OUT/batch-20k.csv"
rm -f "$OUT/results-200k.csv" "$OUT/results-20k.csv"
timed "$BIN" batch "$OUT/batch-20k.csv" --out "$OUT/results-20k.csv"
B20_RSS=$RSS_KB
settle
timed "$BIN" batch "$OUT/batch-200k.csv" --out "$OUT/results-200k.csv"
B200_WALL=$WALL; B200_RSS=$RSS_KB
B200_OUT_ROWS=$(( $(wc -l < "$OUT/results-200k.csv") - 1 ))
rm -f "$OUT/results-200k.csv" "$OUT/results-20k.csv"

# --- summary ---------------------------------------------------------------
echo
echo "machine: $(nproc) cores, $(uname -sr)"
printf "scan, 1,000,000 altitudes x 2 branches: %s rows, %s MB in %s s = %s rows/s, peak memory %s MB\n" \
    "$SCAN_ROWS" "$((SCAN_BYTES / 1000000))" "$SCAN_WALL" "$(rate "$SCAN_ROWS" "$SCAN_WALL")" "$((SCAN_RSS / 1024))"
printf "numpy, same job (%s rows) to CSV: %s s -> burnout is %sx faster (target >= 20x)\n" \
    "$NUMPY_ROWS" "$NUMPY_WALL" "$(ratio "$NUMPY_WALL" "$SCAN_WALL")"
printf "writing the same %s bytes (head -c ... /dev/zero): %s s -> burnout takes %sx as long (target <= 3x)\n" \
    "$SCAN_BYTES" "$BYTES_WALL" "$(ratio "$SCAN_WALL" "$BYTES_WALL")"
printf "scan with the 15 sensitivity columns: %s MB in %s s; the same bytes written raw %s s -> %sx (target <= 1.5x); numpy %s s -> burnout %sx faster (target >= 30x)\n" \
    "$((SENS_BYTES / 1000000))" "$SENS_WALL" "$SENS_BYTES_WALL" "$(ratio "$SENS_WALL" "$SENS_BYTES_WALL")" \
    "$SENS_NUMPY_WALL" "$(ratio "$SENS_NUMPY_WALL" "$SENS_WALL")"
printf "batch, 200,000 rows (%s output rows): %s s = %s rows/s, peak memory %s MB\n" \
    "$B200_OUT_ROWS" "$B200_WALL" "$(rate 200000 "$B200_WALL")" "$((B200_RSS / 1024))"
printf "batch memory: 20,000 rows %s MB, 200,000 rows %s MB -> ratio %s (target < 1.5)\n" \
    "$((B20_RSS / 1024))" "$((B200_RSS / 1024))" "$(ratio "$B200_RSS" "$B20_RSS")"
