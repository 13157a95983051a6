#!/usr/bin/env bash
# Persisted state: format, bad-input matrix, properties and the fuzz
# corpus replay in release mode (more cases than the debug run of step 10),
# the corpus size budget, and a compile check of the fuzz targets.
set -euo pipefail
export PROPTEST_CASES="${PROPTEST_CASES:-512}"
cargo test -p plumbfit --release \
  --test state_format --test state_bad_input --test state_prop --test state_corpus

files=$(find fuzz/corpus -type f | wc -l)
bytes=$(find fuzz/corpus -type f -printf '%s\n' | awk '{s += $1} END {print s + 0}')
echo "fuzz corpus: $files files, $bytes bytes"
if [ "$files" -lt 20 ] || [ "$files" -gt 300 ] || [ "$bytes" -gt 2097152 ]; then
  echo "fuzz corpus outside its budget (20-300 files, at most 2 MiB)" >&2
  exit 1
fi

# The fuzz crate has its own workspace; check that its targets still build
# against the current API (running them needs cargo-fuzz, see
# docs/state-format.md).
(cd fuzz && cargo check --locked --quiet --bins)
