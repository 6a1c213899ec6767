#!/usr/bin/env bash
# Regenerates docs/report-demo.png, the README's screenshot of the demo report: runs the demo on 127.0.0.1 in a
# temporary folder, then opens its report in Debian's headless Chromium inside a network namespace with only
# loopback, scrolled to the canvas maps. Needs root (unshare), chromium-headless-shell and a build (npm ci).
set -euo pipefail
cd "$(dirname "$0")/.."
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
node bin/swatchbook.js demo --out "$work/demo" --port "${PORT:-8777}" --quiet
unshare --net sh -c "ip link set lo up && node scripts/check-report-in-browser.mjs '$work/demo/sample-boards-dataset-report/index.html' docs/report-demo.png maps" >/dev/null
echo "wrote docs/report-demo.png"
