#!/usr/bin/env bash
# Shows that a change leaves the CLI's output on every demo study as it was, apart from measured times.
#
#   scripts/demo-outputs.sh REV_BEFORE [REV_AFTER]    (REV_AFTER: HEAD; commit first)
#
# Builds each revision in a scratch worktree, runs every demo study (studies/demo/*.json) and its
# ranking with 2 threads, masks what is measured (seconds, clock times, rates, utilisation,
# dates), and prints a unified diff per study; it exits 1 when any output differs. Asynchronous
# halving decides by the order results arrive, so its output may differ between any two runs. The
# per-job progress lines are left out: their counters depend on which thread ends first.
set -euo pipefail
ROOT=$(cd "$(dirname "$0")/.." && pwd)
before=${1:?usage: scripts/demo-outputs.sh REV_BEFORE [REV_AFTER]}
after=${2:-HEAD}
scratch=$(mktemp -d)
trap 'for w in before after; do git -C "$ROOT" worktree remove --force "$scratch/$w" >/dev/null 2>&1 || true; done; rm -rf "$scratch"' EXIT

checkout() { # name rev -> folder with a build
  local dir="$scratch/$1"
  git -C "$ROOT" worktree add --detach "$dir" "$2" >/dev/null 2>&1
  ln -s "$ROOT/node_modules" "$dir/node_modules"
  (cd "$dir" && npm run build >/dev/null 2>&1)
  echo "$dir"
}

mask() {
  # The piped progress lines' counters depend on which thread ends first, so they are left out.
  grep -v -E '^\[[0-9]+/' | sed -E \
    -e 's/[0-9]+(\.[0-9]+)? ?(s|ms|min)\b/<time>/g' \
    -e 's/\b[0-9]{1,2}:[0-9]{2}(:[0-9]{2})?\b/<clock>/g' \
    -e 's/[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9:.]+Z/<date>/g' \
    -e 's/(utilisation|utilization) [0-9.]+/\1 <ratio>/g' \
    -e 's/[0-9.]+ (epochs|jobs|trials)\/s/<rate> \1\/s/g' \
    -e "s#$scratch/(before|after)#<root>#g"
}

outputs() { # folder -> folder of masked outputs
  local dir=$1 out="$1.out"
  mkdir -p "$out"
  for study in "$dir"/studies/demo/*.json; do
    local name; name=$(basename "$study" .json)
    (cd "$dir" && node bin/rungwise.js run "studies/demo/$name.json" --out "runs/$name" --force --workers 2 2>&1; \
      node bin/rungwise.js ranking "runs/$name" 2>&1) | mask > "$out/$name.txt" || true
  done
  echo "$out"
}

a=$(outputs "$(checkout before "$before")")
b=$(outputs "$(checkout after "$after")")
status=0
for file in "$a"/*.txt; do
  name=$(basename "$file")
  if diff -u "$file" "$b/$name" > "$scratch/diff"; then echo "same: $name"; else echo "DIFFERS: $name"; cat "$scratch/diff"; status=1; fi
done
exit $status
