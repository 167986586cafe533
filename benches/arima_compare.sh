#!/usr/bin/env bash
# Whole-process benchmark of outturn's arima candidates against a hand-scripted
# peer that refits statsmodels' ARIMA at every origin (benches/arima_peer.py),
# the gain from warm starts, and forecast agreement. See benches/README.md.
#
# usage: benches/arima_compare.sh [--runs N] [--warm-runs N] [--series K] [--length N]
#                                 [--no-build] [--no-level] [--keep DIR]
set -euo pipefail

RUNS=${RUNS:-3}
WARM_RUNS=${WARM_RUNS:-}
SERIES=3
LENGTH=200
FIRST_ORIGIN=100
ORDERS="1,0,0 1,0,1 0,1,1 2,0,1"
HORIZONS="1 4"
DO_BUILD=1
DO_LEVEL=1
KEEP=""

usage() { sed -n '2,8p' "$0" | sed 's/^# \{0,1\}//'; }
while [[ $# -gt 0 ]]; do
    case "$1" in
        --runs) RUNS=$2; shift 2 ;;
        --warm-runs) WARM_RUNS=$2; shift 2 ;;
        --series) SERIES=$2; shift 2 ;;
        --length) LENGTH=$2; shift 2 ;;
        --no-build) DO_BUILD=0; shift ;;
        --no-level) DO_LEVEL=0; shift ;;
        --keep) KEEP=$2; shift 2 ;;
        -h|--help) usage; exit 0 ;;
        *) echo "unknown argument: $1" >&2; usage >&2; exit 2 ;;
    esac
done
WARM_RUNS=${WARM_RUNS:-$((RUNS * 5))}
for v in "$RUNS" "$WARM_RUNS" "$SERIES" "$LENGTH"; do
    [[ "$v" =~ ^[1-9][0-9]*$ ]] || { echo "--runs/--warm-runs/--series/--length: positive integers" >&2; exit 2; }
done
(( LENGTH > FIRST_ORIGIN + 4 )) || { echo "--length must exceed $((FIRST_ORIGIN + 4))" >&2; exit 2; }

REPO=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
PEER_DIR=${PEER_DIR:-$REPO/../shared/peer}
HELPER="$REPO/benches/arima_peer.py"
BIN="$REPO/target/release/outturn"
PY=${PYTHON:-python3}

[[ -f "$PEER_DIR/make_panel.py" ]] || { echo "missing $PEER_DIR/make_panel.py (expected ../shared/peer beside the repo; set PEER_DIR)" >&2; exit 2; }
"$PY" -c 'import numpy, statsmodels' 2>/dev/null || { echo "python3 with numpy and statsmodels is required" >&2; exit 2; }

if [[ -n "$KEEP" ]]; then
    WORK=$KEEP; mkdir -p "$WORK"
else
    WORK=$(mktemp -d "${TMPDIR:-/tmp}/outturn-arima-bench.XXXXXX")
    trap 'rm -rf "$WORK"' EXIT
fi

echo "== outturn arima vs a statsmodels refit loop — $(date -u '+%Y-%m-%d %H:%M UTC'), $(nproc) cores, $(uname -srm)"
echo "   $("$PY" -c 'import statsmodels, numpy, sys; print(f"python {sys.version.split()[0]}, statsmodels {statsmodels.__version__}, numpy {numpy.__version__}")')"
echo "   rounds: $RUNS (warm-start figures: $WARM_RUNS); work dir: $WORK"

if [[ $DO_BUILD == 1 ]]; then
    echo "== build"
    if ! (cd "$REPO" && cargo build --release) > "$WORK/build.log" 2>&1; then
        cat "$WORK/build.log" >&2; echo "cargo build --release failed" >&2; exit 1
    fi
fi
[[ -x "$BIN" ]] || { echo "no binary at $BIN" >&2; exit 1; }
# Time a private copy: a concurrent `cargo build` must not swap the binary mid-run.
cp "$BIN" "$WORK/outturn"
BIN="$WORK/outturn"
REV=$(git -C "$REPO" rev-parse --short HEAD 2>/dev/null || echo "no git")
[[ -n "$(git -C "$REPO" status --porcelain -- src Cargo.toml Cargo.lock templates 2>/dev/null)" ]] && REV="$REV + uncommitted changes"
echo "   $("$BIN" --version) ($REV)"

D=$WORK
"$PY" "$PEER_DIR/make_panel.py" --series "$SERIES" --length "$LENGTH" --seed 1 > "$D/panel.csv"
for s in expanding fixed first; do
    "$PY" "$HELPER" experiment --series "$SERIES" --panel panel.csv --orders $ORDERS \
        --first-origin "$FIRST_ORIGIN" --horizons $HORIZONS --scheme "$s" --out "$D/$s.yaml"
done
echo "   $("$BIN" check "$D/expanding.yaml")"

NORDERS=$(wc -w <<< "$ORDERS")
CELLS=$((SERIES * NORDERS))
REFITS=$((LENGTH - FIRST_ORIGIN))            # estimation ends T0 .. N-1 per cell (h = 1 reaches furthest)
FITS=$((CELLS * REFITS))
echo "== $SERIES series × $LENGTH obs, orders $ORDERS (arima(p,d,q), constant for d = 0, none for d ≥ 1),"
echo "   expanding from $FIRST_ORIGIN, h = $HORIZONS: $REFITS estimations per (series, order), $FITS backtest fits"
echo "   (outturn also fits each cell once more, cold, on all $LENGTH observations for the outlook)"

OT="--jobs 1 --no-cache --quiet"
PEER="$PY $HELPER $D/panel.csv --orders $ORDERS --first-origin $FIRST_ORIGIN --horizons $HORIZONS"

echo "== whole-process wall time, $RUNS interleaved rounds (no warm-up round: the peer is one long process)"
"$PY" "$HELPER" bench --runs "$RUNS" --logdir "$D" --json "$D/times.json" \
    --cmd outturn-expanding "$BIN run $D/expanding.yaml --out $D/out-expanding $OT" \
    --cmd statsmodels-refit "$PEER --out $D/peer.csv --stats $D/peer.json" \
    --manifest outturn-expanding "$D/out-expanding/manifest.json" \
    --stats statsmodels-refit "$D/peer.json"
"$PY" "$HELPER" table --json "$D/times.json" \
    --fits outturn-expanding "$FITS" --fits statsmodels-refit "$FITS" \
    --ratio statsmodels-refit/outturn-expanding
echo "   compute: outturn = sum of per-cell seconds in manifest.json (estimation, filtering, outlook);"
echo "   peer = its loop (fits and forecasts; imports, reading and writing excluded)."
echo "   $(tail -n 1 "$D/statsmodels-refit.log")"

echo "== warm starts: the same grid under three schemes, outturn only, $WARM_RUNS interleaved rounds"
"$PY" "$HELPER" bench --runs "$WARM_RUNS" --logdir "$D" --json "$D/warm.json" \
    --cmd outturn-expanding "$BIN run $D/expanding.yaml --out $D/warm-expanding $OT" \
    --cmd outturn-fixed "$BIN run $D/fixed.yaml --out $D/warm-fixed $OT" \
    --cmd outturn-first "$BIN run $D/first.yaml --out $D/warm-first $OT" \
    --manifest outturn-expanding "$D/warm-expanding/manifest.json" \
    --manifest outturn-fixed "$D/warm-fixed/manifest.json" \
    --manifest outturn-first "$D/warm-first/manifest.json" 2> "$D/warm-rounds.log"
"$PY" "$HELPER" table --json "$D/warm.json" \
    --fits outturn-expanding "$FITS" --fits outturn-fixed "$CELLS" --fits outturn-first "$CELLS"
"$PY" "$HELPER" warm --json "$D/warm.json" --cells "$CELLS" --refits "$REFITS"
FB=$("$PY" -c 'import json,sys; c=json.load(open(sys.argv[1]))["grid"]["cells"]; print(sum(x.get("fallbacks", 0) for x in c), "fallbacks,", sum(x["status"] != "ok" for x in c), "failed cells of", len(c))' "$D/out-expanding/manifest.json")
echo "   expanding run's manifest: $FB (a fallback keeps the previous estimate when a refit fails)"

LEVEL_ARGS=()
if [[ $DO_LEVEL == 1 ]]; then
    D1=""
    for o in $ORDERS; do [[ "$o" =~ ^[0-9]+,[1-9][0-9]*,[0-9]+$ ]] && D1="$D1 $o"; done
    if [[ -n "$D1" ]]; then
        "$PY" "$HELPER" "$D/panel.csv" --orders $D1 --first-origin "$FIRST_ORIGIN" --horizons $HORIZONS \
            --form level --out "$D/peer-level.csv" 2> "$D/peer-level.log"
        LEVEL_ARGS=(--level "$D/peer-level.csv")
    fi
fi

echo "== forecast agreement (issue #6: within 1% of the series' standard deviation)"
"$PY" "$HELPER" compare --panel "$D/panel.csv" --outturn "$D/out-expanding/forecasts.csv" \
    --peer "$D/peer.csv" --first-origin "$FIRST_ORIGIN" "${LEVEL_ARGS[@]}"
