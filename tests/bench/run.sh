#!/usr/bin/env bash
# The benchmark harness: builds sheaf in Release, generates the benchmark
# corpus once (cached), then times common tools and sheaf on the same file,
# several runs each, and prints medians as a Markdown table.
#
#   tests/bench/run.sh [--mb 200] [--runs 3] [--skip-full] [--scripts latin|cyrillic]
#
# Figures are ratios to tools measured in the same run, because machines are
# shared and noisy. Nothing here asserts a time.
set -euo pipefail
cd "$(dirname "$0")/../.."
MB=200 RUNS=3 FULL=1 SCRIPTS=latin
while [ $# -gt 0 ]; do
  case "$1" in
    --mb) MB=$2; shift 2 ;;
    --runs) RUNS=$2; shift 2 ;;
    --skip-full) FULL=0; shift ;;
    --scripts) SCRIPTS=$2; shift 2 ;;
    *) echo "usage: tests/bench/run.sh [--mb N] [--runs N] [--skip-full] [--scripts latin|cyrillic]" >&2; exit 2 ;;
  esac
done
scripts/install-deps build test >&2
B=build-bench
cmake -S . -B $B -DCMAKE_BUILD_TYPE=Release -DSHEAF_TESTS=OFF -DSHEAF_BENCHMARKS=ON >/dev/null
cmake --build $B -j"$(nproc)" >/dev/null
CORPUS=$B/corpus-$MB-$SCRIPTS.tsv
[ -s "$CORPUS" ] || $B/tests/bench/sheaf_gen_corpus --mb "$MB" --scripts "$SCRIPTS" > "$CORPUS"
BYTES=$(stat -c %s "$CORPUS")
TGT=es; [ "$SCRIPTS" = cyrillic ] && TGT=ru
OUT=$(mktemp -d)
trap 'rm -rf "$OUT"' EXIT

# measure NAME COMMAND...: runs it $RUNS times; prints "NAME median_seconds median_peak_kib".
measure() {
  local name=$1; shift
  local times=() mems=()
  for _ in $(seq "$RUNS"); do
    /usr/bin/time -f "%e %M" -o "$OUT/time" "$@" > /dev/null 2> "$OUT/stderr" || { cat "$OUT/stderr" >&2; exit 1; }
    read -r t m < <(tail -1 "$OUT/time")
    times+=("$t"); mems+=("$m")
  done
  local mt mm
  mt=$(printf '%s\n' "${times[@]}" | sort -g | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}')
  mm=$(printf '%s\n' "${mems[@]}" | sort -g | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}')
  echo "$name $mt $mm"
}

OPTS="--quiet --force --input $CORPUS --set corpus.target_lang=\"$TGT\""
{
  measure "cat" cat "$CORPUS"
  measure "wc -l" wc -l "$CORPUS"
  measure "wc -w" wc -w "$CORPUS"
  measure "sort -u" env LC_ALL=C sort -u "$CORPUS"
  measure "sheaf clean, 2 threads" $B/sheaf run tests/bench/clean.toml --until split --threads 2 $OPTS --out "$OUT/c2"
  measure "sheaf clean + near-dup, 2 threads" $B/sheaf run tests/bench/clean-near-dup.toml --until split --threads 2 $OPTS --out "$OUT/n2"
  measure "sheaf clean, 1 thread" $B/sheaf run tests/bench/clean.toml --until split --threads 1 $OPTS --out "$OUT/c1"
  measure "sheaf clean + CLD2, 2 threads" $B/sheaf run tests/bench/clean-language.toml --threads 2 $OPTS --out "$OUT/l2"
  measure "CLD2 alone, 2 threads" $B/tests/bench/sheaf_cld2_only "$CORPUS" 2
  if [ "$FULL" = 1 ]; then
    measure "sheaf full (32k vocab), 2 threads" $B/sheaf run tests/bench/full.toml --threads 2 $OPTS --out "$OUT/f2"
  fi
} > "$OUT/results"

# The same outputs at every thread count.
same=yes
for f in train.tsv dev.tsv test.tsv rejected.tsv manifest.json; do
  cmp -s "$OUT/c1/$f" "$OUT/c2/$f" || same=no
done

awk -v bytes="$BYTES" -v mb="$MB" -v runs="$RUNS" -v same="$same" '
  { name[NR]=$0; sub(/ [^ ]+ [^ ]+$/, "", name[NR]); t[NR]=$(NF-1); m[NR]=$NF;
    if (name[NR]=="wc -w") wcw=$(NF-1); if (name[NR]=="sort -u") { srt=$(NF-1); srtm=$NF } }
  END {
    printf "corpus: %.0f MB (%d bytes), medians of %d runs; outputs identical at 1 and 2 threads: %s\n\n", bytes/1e6, bytes, runs, same
    print "| command | wall s | MB/s | peak RSS MiB | × wc -w time | × sort -u time | × sort -u memory |"
    print "|---|---:|---:|---:|---:|---:|---:|"
    for (i = 1; i <= NR; i++)
      printf "| %s | %.2f | %.0f | %.0f | %.2f | %.2f | %.2f |\n", name[i], t[i], (t[i] > 0 ? bytes/1e6/t[i] : 0), m[i]/1024, t[i]/wcw, t[i]/srt, m[i]/srtm
  }' "$OUT/results"
