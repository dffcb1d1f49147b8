#!/usr/bin/env bash
# Byte-identity across a change, at a size no unit test can hold: builds the
# working tree and an older revision (Release), runs every single-input
# pipeline of pipelines/ and tests/bench/ on the benchmark corpus with both,
# and compares every file of the two run directories (size and SHA-256).
#
#   tests/bench/compare.sh [--old REV] [--mb 200] [--threads 2] [--scripts latin|cyrillic]
#
# REV defaults to ca1103f, the commit that recorded the samples' checksums
# before the runner's redesign (tests/unit/outputs-unchanged.txt). Prints one
# line per case and file that differs, and a table; exits 1 if a split
# file, shard, vocabulary or rejected.tsv differs. manifest.json,
# summary.json, report.html and pipeline.toml are listed but do not fail the
# comparison: changes meant to alter the record (new keys, new counters) are
# named in the commits that rewrote outputs-unchanged.txt, and `--strict`
# makes them fail too.
# The pipelines with several inputs (multi-corpus, en-ru-separate, large-stdin)
# are compared on the samples by OutputsUnchanged.* only.
set -euo pipefail
cd "$(dirname "$0")/../.."
OLD=ca1103f MB=200 THREADS=2 SCRIPTS=latin STRICT=0
while [ $# -gt 0 ]; do
  case "$1" in
    --old) OLD=$2; shift 2 ;;
    --mb) MB=$2; shift 2 ;;
    --threads) THREADS=$2; shift 2 ;;
    --scripts) SCRIPTS=$2; shift 2 ;;
    --strict) STRICT=1; shift ;;
    *) echo "usage: tests/bench/compare.sh [--old REV] [--mb N] [--threads N] [--scripts latin|cyrillic] [--strict]" >&2; exit 2 ;;
  esac
done
scripts/install-deps build test >&2
LAUNCH=()
command -v ccache >/dev/null && LAUNCH=(-DCMAKE_CXX_COMPILER_LAUNCHER=ccache)
B=build-bench
cmake -S . -B $B -DCMAKE_BUILD_TYPE=Release -DSHEAF_TESTS=OFF -DSHEAF_BENCHMARKS=ON "${LAUNCH[@]}" >/dev/null
cmake --build $B -j2 >/dev/null
REV=$(git rev-parse --short "$OLD")
OLD_SRC=build-compare/src-$REV
if [ ! -x "$OLD_SRC/build/sheaf" ]; then
  rm -rf "$OLD_SRC"
  git worktree prune
  git worktree add --detach "$OLD_SRC" "$REV" >/dev/null 2>&1
  cmake -S "$OLD_SRC" -B "$OLD_SRC/build" -DCMAKE_BUILD_TYPE=Release -DSHEAF_TESTS=OFF "${LAUNCH[@]}" >/dev/null
  cmake --build "$OLD_SRC/build" -j2 --target sheaf >/dev/null
fi
CORPUS=$B/corpus-$MB-$SCRIPTS.tsv
[ -s "$CORPUS" ] || $B/tests/bench/sheaf_gen_corpus --mb "$MB" --scripts "$SCRIPTS" > "$CORPUS"
TGT=es; [ "$SCRIPTS" = cyrillic ] && TGT=ru
OUT=$(mktemp -d)
trap 'rm -rf "$OUT"' EXIT

CASES=(
  "demo|pipelines/demo.toml"
  "demo-separate|pipelines/demo.toml --set vocabulary.shared='\"separate\"'"
  "clean-only|pipelines/clean-only.toml"
  "bench-clean|tests/bench/clean.toml"
  "bench-clean-language|tests/bench/clean-language.toml"
  "bench-clean-near-dup|tests/bench/clean-near-dup.toml"
  "bench-full|tests/bench/full.toml"
)

# digest DIR: "PATH SIZE SHA256" for every file, sorted (lock files and other
# housekeeping that starts with a dot left out).
digest() {
  (cd "$1" && find . -type f ! -name '.*' -printf '%P\n' | LC_ALL=C sort | while read -r f; do
    printf '%s %s %s\n' "$f" "$(stat -c %s "$f")" "$(sha256sum < "$f" | cut -c1-64)"
  done)
}

failed=0
printf '| case | files | identical | differing |\n|---|---:|---:|---|\n' > "$OUT/table"
for c in "${CASES[@]}"; do
  name=${c%%|*}; args=${c#*|}
  for side in old new; do
    bin=$B/sheaf; [ $side = old ] && bin=$OLD_SRC/build/sheaf
    # shellcheck disable=SC2086  # args is a word list by design
    eval "$bin" run $args --input "$CORPUS" --set corpus.target_lang="'\"$TGT\"'" \
      --threads "$THREADS" --quiet --force --out "$OUT/$name-$side" >/dev/null 2>"$OUT/$name-$side.err" ||
      { echo "$name ($side) failed:" >&2; cat "$OUT/$name-$side.err" >&2; exit 1; }
    digest "$OUT/$name-$side" > "$OUT/$name-$side.sums"
  done
  total=$(wc -l < "$OUT/$name-new.sums")
  diffs=$(LC_ALL=C join -a1 -a2 -e missing -o 0,1.2,1.3,2.2,2.3 "$OUT/$name-old.sums" "$OUT/$name-new.sums" |
    awk '$2 != $4 || $3 != $5 {print $1}')
  same=$((total - $(printf '%s' "$diffs" | grep -c . || true)))
  printf '| %s | %d | %d | %s |\n' "$name" "$total" "$same" "$(echo $diffs)" >> "$OUT/table"
  for f in $diffs; do
    case "$f" in
      manifest.json|summary.json|report.html|pipeline.toml) [ "$STRICT" = 1 ] && failed=1 ;;
      *) failed=1 ;;
    esac
    echo "$name: $f differs" >&2
  done
  rm -rf "$OUT/$name-old" "$OUT/$name-new"
done
echo "corpus: $CORPUS ($(stat -c %s "$CORPUS") bytes); old: $REV; new: $(git rev-parse --short HEAD)$(git diff --quiet || echo ' + working tree'); $THREADS threads"
echo
cat "$OUT/table"
exit $failed
