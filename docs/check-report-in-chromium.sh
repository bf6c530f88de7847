#!/usr/bin/env bash
# Render the html report of a sample plan in headless Chromium (Debian's chromium package) as a
# screenshot and an A4 PDF, for a person to look at:  bash docs/check-report-in-chromium.sh [PLAN]
set -euo pipefail
plan=${1:-sample_installs/cruising_sailboat}
out=${OUT:-$(mktemp -d)}
deviation check "$plan" --report "$out/report.html" >/dev/null || true    # exit 1 = over budget
flags=(--headless --no-sandbox --disable-gpu --disable-quic --no-first-run
       --disable-background-networking --disable-component-update --disable-sync
       --user-data-dir="$out/profile")
chromium "${flags[@]}" --window-size=900,1800 --screenshot="$out/report.png" "file://$out/report.html"
chromium "${flags[@]}" --no-pdf-header-footer --print-to-pdf="$out/report.pdf" "file://$out/report.html"
echo "screenshot $out/report.png, PDF $out/report.pdf"
