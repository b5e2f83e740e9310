#!/usr/bin/env bash
# Measures kgauge-beam on prism (1 and 2 cores) against the plain library on one demo file and
# writes bench/report/BEAM.md. Takes about a minute; run it on a quiet machine.
set -euo pipefail
cd "$(dirname "$0")/.."
mkdir -p bench/report
KGAUGE_BEAM_REPORT="$PWD/bench/report/BEAM.md" go test ./beam -run '^TestBeamReport$' -count=1 -v -timeout 20m | grep -v '^time=' || true
test -s bench/report/BEAM.md && cat bench/report/BEAM.md
