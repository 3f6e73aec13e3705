#!/usr/bin/env bash
# The HTML report in headless Chromium (CTest label browser): analyses every shipped
# example, rebuilds one report with a measured band list and without the later stages, and
# runs tests/report/browser_test.mjs on them. Screenshots: BUILD_DIR/browser-test/screenshots.
#   tests/report/browser_test.sh SOURCE_DIR BUILD_DIR
# Exits 77 (CTest: skipped) with a message when chromium, node or playwright-core is missing.
set -euo pipefail
source_dir=$(cd "$1" && pwd)
build_dir=$(cd "$2" && pwd)
chromium=${OVERTONE_CHROMIUM:-/usr/bin/chromium}
modules=${OVERTONE_BROWSER_MODULES:-$source_dir/tools/browser-test/node_modules}

# CI sets OVERTONE_REQUIRE_BROWSER=1: there a missing browser is a failure, not a skip.
skip() {
  echo "SKIPPED: $* (tools/setup installs chromium and playwright-core into tools/browser-test)"
  [ "${OVERTONE_REQUIRE_BROWSER:-0}" = 1 ] && exit 1
  exit 77
}
[ -x "$chromium" ] || skip "no Chromium at $chromium"
command -v node >/dev/null || skip "node is not installed"
[ -d "$modules/playwright-core" ] || skip "playwright-core is not installed in $modules"

work=$build_dir/browser-test
rm -rf "$work"
mkdir -p "$work"
overtone=$build_dir/overtone
cases=()
# Every shipped example: molecules/NAME.xyz with its potential (HCl: the Morse one).
for molecule in "$source_dir"/molecules/*.xyz; do
  name=$(basename "$molecule" .xyz)
  potential=$source_dir/potentials/$name.toml
  [ -f "$potential" ] || potential=$source_dir/potentials/$name-morse.toml
  (cd "$source_dir" && "$overtone" analyze "molecules/$name.xyz" --potential "${potential#"$source_dir"/}" \
    --out "$work/$name" >"$work/$name.log" 2>&1) || { cat "$work/$name.log"; exit 1; }
  cases+=("$name=$work/$name")
done
# Harmonic stage only, with a measured band list laid over it (three bands).
(cd "$source_dir" && "$overtone" analyze molecules/water.xyz --potential potentials/water.toml --no-anharmonic \
  --no-families --out "$work/water-harmonic" >"$work/water-harmonic.log" 2>&1)
"$overtone" report "$work/water-harmonic" --observed "$source_dir/tests/data/observed/water-gas-fundamentals.csv"
cases+=("water-harmonic=$work/water-harmonic=3")

OVERTONE_BROWSER_MODULES=$modules OVERTONE_CHROMIUM=$chromium \
  node "$source_dir/tests/report/browser_test.mjs" "$work/screenshots" "${cases[@]}"
