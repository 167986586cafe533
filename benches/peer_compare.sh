#!/usr/bin/env bash
# Whole-process benchmark of outturn against the scripted peer
# (../shared/peer/scripted_backtest.py), plus a scale series. See benches/README.md.
#
# usage: benches/peer_compare.sh [--runs N] [--scale-runs N] [--scale "10 100 1000"]
#                                [--no-peer] [--no-scale] [--no-build] [--keep DIR]
set -euo pipefail

RUNS=${RUNS:-5}
SCALE_RUNS=${SCALE_RUNS:-}
SCALE=${SCALE:-"10 100 1000"}
LENGTH=400
FIRST_ORIGIN=100
DO_PEER=1
DO_SCALE=1
DO_BUILD=1
KEEP=""

usage() { sed -n '2,6p' "$0" | sed 's/^# \{0,1\}//'; }
while [[ $# -gt 0 ]]; do
    case "$1" in
        --runs) RUNS=$2; shift 2 ;;
        --scale-runs) SCALE_RUNS=$2; shift 2 ;;
        --scale) SCALE=$2; shift 2 ;;
        --no-peer) DO_PEER=0; shift ;;
        --no-scale) DO_SCALE=0; shift ;;
        --no-build) DO_BUILD=0; shift ;;
        --keep) KEEP=$2; shift 2 ;;
        -h|--help) usage; exit 0 ;;
        *) echo "unknown argument: $1" >&2; usage >&2; exit 2 ;;
    esac
done
SCALE_RUNS=${SCALE_RUNS:-$RUNS}
[[ "$RUNS" =~ ^[1-9][0-9]*$ && "$SCALE_RUNS" =~ ^[1-9][0-9]*$ ]] || { echo "--runs/--scale-runs: a positive integer" >&2; exit 2; }

REPO=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
PEER_DIR=${PEER_DIR:-$REPO/../shared/peer}
HELPER="$REPO/benches/peer_compare.py"
BIN="$REPO/target/release/outturn"
PY=${PYTHON:-python3}

for f in "$PEER_DIR/make_panel.py" "$PEER_DIR/scripted_backtest.py"; do
    [[ -f "$f" ]] || { echo "missing $f (expected ../shared/peer beside the repo; set PEER_DIR)" >&2; exit 2; }
done
"$PY" -c 'import numpy' 2>/dev/null || { echo "python3 with numpy is required" >&2; exit 2; }
if [[ $DO_PEER == 1 ]]; then
    "$PY" -c 'import statsmodels' 2>/dev/null || { echo "the statsmodels peer needs: pip install statsmodels (or use --no-peer)" >&2; exit 2; }
fi

if [[ -n "$KEEP" ]]; then
    WORK=$KEEP; mkdir -p "$WORK"
else
    WORK=$(mktemp -d "${TMPDIR:-/tmp}/outturn-bench.XXXXXX")
    trap 'rm -rf "$WORK"' EXIT
fi

echo "== outturn peer comparison — $(date -u '+%Y-%m-%d %H:%M UTC'), $(nproc) cores, $(uname -srm)"
echo "   runs per figure: $RUNS (scale: $SCALE_RUNS); work dir: $WORK"

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
# Every timed run must compute: switch off the resume cache of finished cells
# where the build has one (otherwise runs after the first only read it back).
NOCACHE=""
if "$BIN" run --help 2>/dev/null | grep -q -- '--no-cache'; then NOCACHE="--no-cache"; fi

# make_dataset K: DIR with panel.csv and experiment.yaml for K series.
make_dataset() {
    local k=$1 dir="$WORK/s$1"
    mkdir -p "$dir"
    "$PY" "$PEER_DIR/make_panel.py" --series "$k" --length "$LENGTH" --seed 1 > "$dir/panel.csv"
    "$PY" "$HELPER" experiment --series "$k" --panel panel.csv --first-origin "$FIRST_ORIGIN" --out "$dir/experiment.yaml"
    "$BIN" check "$dir/experiment.yaml" > "$dir/check.txt"
}

forecast_rows() { echo $(( $(wc -l < "$1") - 1 )); }

STATUS=0

if [[ $DO_PEER == 1 ]]; then
    D="$WORK/s10"
    make_dataset 10
    echo "== peer comparison: 10 series × $LENGTH obs, ar(1..8) + 7 ardl pairs, expanding from $FIRST_ORIGIN, h = 1, 4"
    echo "   $(cat "$D/check.txt")"
    PEER_ARGS="$D/panel.csv --max-lag 8 --ardl 1,1 2,1 4,1 2,2 2,4 4,2 4,4 --first-origin $FIRST_ORIGIN --horizons 1 4"
    # One warm-up round (untimed) also writes the outputs that are checked.
    "$PY" "$HELPER" bench --runs "$RUNS" --warmup 1 --logdir "$D" --json "$D/times.json" \
        --cmd outturn-1 "$BIN run $D/experiment.yaml --out $D/out1 --jobs 1 --quiet $NOCACHE" \
        --cmd outturn-2 "$BIN run $D/experiment.yaml --out $D/out2 --jobs 2 --quiet $NOCACHE" \
        --cmd outturn-1x2 "$BIN run $D/experiment.yaml --out $D/pair{k} --jobs 1 --quiet $NOCACHE" \
        --cmd statsmodels "$PY $PEER_DIR/scripted_backtest.py $PEER_ARGS --engine statsmodels --out $D/statsmodels.csv" \
        --cmd numpy "$PY $PEER_DIR/scripted_backtest.py $PEER_ARGS --engine numpy --out $D/numpy.csv"

    echo "== accuracy: |outturn − peer| ≤ 1e-8 × max(1, |peer forecast|) on every (target, candidate, horizon, origin)"
    "$PY" "$HELPER" compare --name statsmodels --panel "$D/panel.csv" --outturn "$D/out1/forecasts.csv" --peer "$D/statsmodels.csv" || STATUS=1
    "$PY" "$HELPER" compare --name numpy --panel "$D/panel.csv" --outturn "$D/out1/forecasts.csv" --peer "$D/numpy.csv" || STATUS=1
    for f in forecasts.csv scores.csv outlook.csv tests.csv report.md; do
        if cmp -s "$D/out1/$f" "$D/out2/$f"; then
            echo "  --jobs 1 vs --jobs 2: $f identical"
        else
            echo "  --jobs 1 vs --jobs 2: $f DIFFERS"; STATUS=1
        fi
    done

    N=$(forecast_rows "$D/out1/forecasts.csv")
    echo "== whole-process wall time, median of $RUNS interleaved rounds (peak = largest ru_maxrss of the runs)"
    "$PY" "$HELPER" table --json "$D/times.json" \
        --count outturn-1 "$N" --count outturn-2 "$N" --count statsmodels "$N" --count numpy "$N" \
        --ratio statsmodels/outturn-1 --ratio numpy/outturn-1 --ratio outturn-1/outturn-2 \
        --throughput outturn-1/outturn-1x2
    echo "   targets: statsmodels/outturn-1 ≥ 50, numpy/outturn-1 ≥ 10, outturn-1/outturn-2 ≥ 1.8"
    echo "   outturn-1x2 is two --jobs 1 runs side by side: the throughput line is what this machine"
    echo "   gives two independent copies of the run, a yardstick for outturn-1/outturn-2"
fi

if [[ $DO_SCALE == 1 ]]; then
    echo "== scale series: K series × $LENGTH obs × 15 candidates × 2 horizons, outturn only"
    for k in $SCALE; do
        D="$WORK/s$k"
        [[ -f "$D/experiment.yaml" ]] || make_dataset "$k"
        echo "-- $k series: $(cat "$D/check.txt")"
        "$PY" "$HELPER" bench --runs "$SCALE_RUNS" --warmup 0 --logdir "$D" --json "$D/scale.json" \
            --cmd "outturn-2" "$BIN run $D/experiment.yaml --out $D/scale2 --jobs 2 --quiet $NOCACHE" \
            --cmd "outturn-1" "$BIN run $D/experiment.yaml --out $D/scale1 --jobs 1 --quiet $NOCACHE" \
            --cmd "outturn-1x2" "$BIN run $D/experiment.yaml --out $D/pair{k} --jobs 1 --quiet $NOCACHE"
        N=$(forecast_rows "$D/scale2/forecasts.csv")
        cmp -s "$D/scale1/forecasts.csv" "$D/scale2/forecasts.csv" || { echo "  forecasts.csv differs between --jobs 1 and --jobs 2"; STATUS=1; }
        "$PY" "$HELPER" table --json "$D/scale.json" --count outturn-2 "$N" --count outturn-1 "$N" \
            --ratio outturn-1/outturn-2 --throughput outturn-1/outturn-1x2
        echo "   results folder: $(du -sh "$D/scale2" | cut -f1)"
        rm -rf "$D/scale1" "$D/scale2" "$D/pair1" "$D/pair2"
    done
    echo "   target: 1000 series in < 60 s with peak RSS < 1024 MiB"
fi

if [[ $STATUS != 0 ]]; then
    echo "== a check FAILED (see above)" >&2
fi
exit $STATUS
