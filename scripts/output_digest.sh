#!/usr/bin/env bash
# SHA-256 of everything meshgen writes for the embedded default case and every template,
# in every format (plus the plan as JSON and text): run before and after a refactoring
# that must not change outputs, and diff the two listings.
#   scripts/output_digest.sh /tmp/before > before.sha   (same after the change, then diff)
set -euo pipefail
out=$(realpath -m "$1")
rm -rf "$out"
mkdir -p "$out"
cd "$out"
formats=(--format msh --format msh2 --format vtu --format su2 --format cgns --format plot3d --format polymesh)
meshgen build -o "$out/embedded" "${formats[@]}" >/dev/null 2>&1
meshgen plan > "$out/embedded.plan.txt"
for t in $(meshgen init | awk '{print $1}'); do
  meshgen init "$t" -o "$out/$t.toml" >/dev/null
  meshgen build "$out/$t.toml" -o "$out/$t" "${formats[@]}" >/dev/null 2>&1
  meshgen plan "$out/$t.toml" --json > "$out/$t.plan.json"
done
find . -type f | sort | xargs sha256sum
