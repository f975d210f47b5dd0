#!/bin/sh
# Renders eval's sample report (the one TestWriteReport builds from
# predictions.json and test fakes) and takes a screenshot of report.html in
# headless Chromium at 1280 px wide, to look at the page as a reader does.
#
#   apt-get install -y chromium        # Debian's package
#   sh testdata/eval/screenshot.sh [OUT_DIR]
#
# Writes OUT_DIR/report/{report.md,report.html,results.json,figures/} and
# OUT_DIR/report.png (default OUT_DIR: /tmp/striate-report). Not part of go test.
set -eu
out=${1:-/tmp/striate-report}
root=$(cd "$(dirname "$0")/../.." && pwd)
mkdir -p "$out/report"
out=$(cd "$out" && pwd)
(cd "$root" && go test -count=1 -run '^TestWriteReport$' ./eval -reportdir "$out/report")
browser=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$browser" ]; then
	echo "screenshot.sh: chromium not found; install Debian's package: apt-get install -y chromium" >&2
	exit 1
fi
"$browser" --headless --no-sandbox --disable-gpu --hide-scrollbars \
	--window-size=1280,${HEIGHT:-2400} --screenshot="$out/report.png" "file://$out/report/report.html" 2>/dev/null
echo "screenshot: $out/report.png (report: $out/report/report.html)"
