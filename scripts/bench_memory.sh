#!/usr/bin/env bash
# Peak memory (maximum resident set size, /usr/bin/time -v) of `burnout
# batch` on pathological inputs. Prints one line per input and fails if any
# run goes over LIMIT_MB (default 64). Not a timed test: run it by hand or
# in CI when the reader changes.
#   bash scripts/bench_memory.sh [BIN] [LIMIT_MB]
set -euo pipefail
cd "$(dirname "$0")/.."
BIN="${1:-target/release/burnout}"
LIMIT_MB="${2:-64}"
[ -x "$BIN" ] || { echo "build first: cargo build --release" >&2; exit 2; }
[ -x /usr/bin/time ] || { echo "needs /usr/bin/time (GNU time)" >&2; exit 2; }
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
H="id,burnout-alt,periapsis-alt,apoapsis-alt"

python3 - "$work" "$H" <<'PY'
import sys, os
d, h = sys.argv[1], sys.argv[2]
row = "r,200,185,35786\n"
def w(name, parts):
    with open(os.path.join(d, name), "wb") as f:
        for p in parts:
            f.write(p)
# One quoted record of 200 MiB spread over 5 million lines.
def quoted():
    yield (h + "\n" + "big,200,185,\"").encode()
    chunk = ("x" * 39 + "\n").encode() * 26214   # ~1 MiB
    for _ in range(200):
        yield chunk
    yield b"\"\n" + row.encode()
w("quoted-200MiB.csv", quoted())
# 200 records of 1 MiB less a little each (just under the record cap).
def near_cap():
    yield (h + ",notes\n").encode()
    cell = b"y" * ((1 << 20) - 64)
    for i in range(200):
        yield b"r%d,200,185,35786," % i + cell + b"\n"
w("near-cap-200x1MiB.csv", near_cap())
# A 1024-column header (the cap) and 100,000 short rows to pad.
def wide():
    yield (h + "," + ",".join("c%d" % i for i in range(1020)) + "\n").encode()
    for i in range(100000):
        yield b"r,200\n"
w("wide-header-short-rows.csv", wide())
# A stray quote at the start of row 11 of 1,000,000.
def stray():
    yield (h + "\n").encode()
    for i in range(1000000):
        yield (("\"" if i == 10 else "") + "r%d,200,185,35786\n" % i).encode()
w("stray-quote-1e6.csv", stray())
# 1,000,000 ordinary rows.
def plain():
    yield (h + "\n").encode()
    for i in range(1000000):
        yield ("r%d,%d,185,35786\n" % (i, 186 + i % 3000)).encode()
w("plain-1e6.csv", plain())
PY

fail=0
for f in quoted-200MiB near-cap-200x1MiB wide-header-short-rows stray-quote-1e6 plain-1e6; do
    in="$work/$f.csv"
    size_mb=$(( $(stat -c %s "$in") / 1048576 ))
    set +e
    /usr/bin/time -v "$BIN" batch "$in" --out "$work/out.csv" --force 2>"$work/time.txt" >/dev/null
    rc=$?
    set -e
    kb=$(grep "Maximum resident set size" "$work/time.txt" | awk '{print $NF}')
    mb=$(( kb / 1024 ))
    printf '%-26s input %5d MiB  exit %d  peak %4d MiB\n' "$f" "$size_mb" "$rc" "$mb"
    if [ "$mb" -gt "$LIMIT_MB" ]; then fail=1; fi
    rm -f "$work/out.csv"
done
if [ "$fail" != 0 ]; then
    echo "bench_memory: a run went over ${LIMIT_MB} MiB" >&2
    exit 1
fi
