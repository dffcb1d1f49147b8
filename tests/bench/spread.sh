#!/usr/bin/env bash
# Spread runs on the benchmark corpus (docs/cluster.md): `sheaf run` and
# `sheaf spread` of the same pipeline at several part counts, the map jobs
# one after another so each is timed alone, then the reduce job; every file
# of the two run directories compared byte for byte. Prints a Markdown
# table: time and peak memory of each kind of job, beside `wc -w` and
# `sort -u` measured in the same minutes.
#
#   tests/bench/spread.sh [--mb 200] [--pipeline tests/bench/full.toml] [--parts "1 4 16"] [--threads 2]
#                         [--buckets N]   (default: as many as parts)
#
# Nothing here asserts a time.
set -euo pipefail
cd "$(dirname "$0")/../.."
MB=200 PIPELINE=tests/bench/full.toml PARTS="1 4 16" THREADS=2 BUCKETS=()
while [ $# -gt 0 ]; do
  case "$1" in
    --mb) MB=$2; shift 2 ;;
    --pipeline) PIPELINE=$2; shift 2 ;;
    --parts) PARTS=$2; shift 2 ;;
    --threads) THREADS=$2; shift 2 ;;
    --buckets) BUCKETS=(--buckets "$2"); shift 2 ;;
    *) echo "usage: tests/bench/spread.sh [--mb N] [--pipeline FILE] [--parts \"1 4 16\"] [--threads N]" >&2; exit 2 ;;
  esac
done
scripts/install-deps build test >&2
B=build-bench
cmake -S . -B $B -DCMAKE_BUILD_TYPE=Release -DSHEAF_TESTS=OFF -DSHEAF_BENCHMARKS=ON >/dev/null
cmake --build $B -j"$(nproc)" >/dev/null
CORPUS=$PWD/$B/corpus-$MB-latin.tsv
[ -s "$CORPUS" ] || $B/tests/bench/sheaf_gen_corpus --mb "$MB" --scripts latin > "$CORPUS"
OUT=$(mktemp -d)
trap 'rm -rf "$OUT"' EXIT
SET=(--set "corpus.files=[\"$CORPUS\"]")

# timed FILE COMMAND...: runs it, appends "seconds peak_kib" to FILE.
timed() {
  local file=$1; shift
  /usr/bin/time -f "%e %M" -o "$OUT/t" "$@" > /dev/null 2> "$OUT/err" || { cat "$OUT/err" >&2; exit 1; }
  tail -1 "$OUT/t" >> "$file"
}
sum() { awk '{s += $1} END {printf "%.1f", s}' "$1"; }
max_s() { sort -g "$1" | tail -1 | awk '{printf "%.1f", $1}'; }
max_mib() { awk '{print $2}' "$1" | sort -g | tail -1 | awk '{printf "%.0f", $1 / 1024}'; }

timed "$OUT/wc" wc -w "$CORPUS"
timed "$OUT/sort" env LC_ALL=C sort -u "$CORPUS"
timed "$OUT/one" $B/sheaf run "$PIPELINE" "${SET[@]}" --quiet --force --threads "$THREADS" --out "$OUT/run-one"

echo "corpus: $(stat -c %s "$CORPUS") bytes; pipeline: $PIPELINE; $THREADS threads a job; $(date -u +%F), commit $(git rev-parse --short HEAD)"
echo
echo "wc -w: $(sum "$OUT/wc") s; sort -u: $(sum "$OUT/sort") s, $(max_mib "$OUT/sort") MiB; sheaf run: $(sum "$OUT/one") s, $(max_mib "$OUT/one") MiB"
echo
echo "| parts | buckets | plan s | map s: sum / largest | map MiB: largest | bucket s: sum / largest | bucket MiB: largest | reduce s | reduce MiB | sum of jobs s | outputs same as sheaf run |"
echo "|---|---|---|---|---|---|---|---|---|---|---|"
for n in $PARTS; do
  w=$OUT/work-$n
  rm -f "$OUT/plan" "$OUT/map" "$OUT/bucket" "$OUT/reduce"
  echo "0 0" > "$OUT/bucket.none"
  bk=("${BUCKETS[@]}")
  [ ${#bk[@]} -gt 0 ] || bk=(--buckets "$n")
  timed "$OUT/plan" $B/sheaf spread plan "$PIPELINE" "${SET[@]}" "${bk[@]}" --parts "$n" --work "$w"
  k=0
  while [ -f "$w/plan.json" ] && [ "$k" -lt "$(grep -c '"corpus"' "$w/plan.json")" ]; do
    timed "$OUT/map" $B/sheaf spread map "$w" --part "$k" --threads "$THREADS"
    k=$((k + 1))
  done
  nb=$(grep '"buckets"' "$w/plan.json" | tr -dc 0-9)
  for j in $(seq 0 $((nb - 1))); do timed "$OUT/bucket" $B/sheaf spread bucket "$w" --bucket "$j"; done
  [ -s "$OUT/bucket" ] || cp "$OUT/bucket.none" "$OUT/bucket"
  timed "$OUT/reduce" $B/sheaf spread reduce "$w" --quiet --force --threads "$THREADS" --out "$OUT/run-$n"
  same=yes
  diff -r -q -x '.sheaf-*' "$OUT/run-one" "$OUT/run-$n" > "$OUT/diff" || same="no: $(tr '\n' ' ' < "$OUT/diff")"
  total=$(cat "$OUT/plan" "$OUT/map" "$OUT/bucket" "$OUT/reduce" | awk '{s += $1} END {printf "%.1f", s}')
  echo "| $k | $nb | $(sum "$OUT/plan") | $(sum "$OUT/map") / $(max_s "$OUT/map") | $(max_mib "$OUT/map") | $(sum "$OUT/bucket") / $(max_s "$OUT/bucket") | $(max_mib "$OUT/bucket") | $(sum "$OUT/reduce") | $(max_mib "$OUT/reduce") | $total | $same |"
  rm -rf "$w" "$OUT/run-$n"
done
