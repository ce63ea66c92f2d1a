#!/bin/sh
# check_report.sh REPORT.html [SCREENSHOT.png]
#
# Renders a filigree run report (filigree report ... -o REPORT.html) in
# headless Chromium and checks that it rendered: the screenshot must be a
# non-empty PNG, and every <img> of the DOM that Chromium built must carry a
# data: URI whose decoded bytes are a PNG (magic bytes 89 50 4E 47 0D 0A 1A 0A,
# PNG specification, ISO/IEC 15948:2004 §5.2) or an SVG document (an <svg>
# root element). It installs nothing: CI installs chromium (Debian package
# "chromium") and python3 beforehand. Prints the screenshot's path; exits 0
# when every check passes, 1 on a failed check, 2 on a usage error or a
# missing tool.
set -eu

if [ $# -lt 1 ] || [ $# -gt 2 ]; then
	echo "usage: $0 REPORT.html [SCREENSHOT.png]" >&2
	exit 2
fi
report=$1
if [ ! -s "$report" ]; then
	echo "check_report: $report: missing or empty" >&2
	exit 1
fi
browser=""
for b in chromium chromium-browser google-chrome; do
	if command -v "$b" >/dev/null 2>&1; then
		browser=$b
		break
	fi
done
if [ -z "$browser" ]; then
	echo "check_report: no chromium found (CI: apt-get install -y chromium)" >&2
	exit 2
fi
command -v python3 >/dev/null 2>&1 || { echo "check_report: python3 is needed" >&2; exit 2; }

abs=$(cd "$(dirname "$report")" && pwd)/$(basename "$report")
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
shot=${2:-$(dirname "$abs")/$(basename "$abs" .html)-screenshot.png}
case $shot in /*) ;; *) shot=$(pwd)/$shot ;; esac

# A fresh profile directory keeps the run independent of any user profile.
flags="--headless --no-sandbox --disable-gpu --hide-scrollbars --user-data-dir=$work/profile"
rm -f "$shot"
# shellcheck disable=SC2086
"$browser" $flags --screenshot="$shot" --window-size=1400,3000 "file://$abs" >"$work/shot.log" 2>&1 || true
# shellcheck disable=SC2086
"$browser" $flags --dump-dom "file://$abs" >"$work/dom.html" 2>"$work/dom.log" || true

status=0
python3 - "$shot" "$work/dom.html" <<'PY' || status=$?
import base64, re, sys
from html.parser import HTMLParser

shot, dom = sys.argv[1], sys.argv[2]
fail = []

try:
    with open(shot, "rb") as f:
        head = f.read(8)
        f.seek(0, 2)
        size = f.tell()
    if head != b"\x89PNG\r\n\x1a\n" or size < 1000:
        fail.append("screenshot %s is not a non-empty PNG (%d bytes)" % (shot, size))
except OSError as e:
    fail.append("no screenshot: %s" % e)

class Imgs(HTMLParser):
    def __init__(self):
        super().__init__()
        self.srcs = []
    def handle_starttag(self, tag, attrs):
        if tag == "img":
            self.srcs.append(dict(attrs).get("src") or "")

text = open(dom, encoding="utf-8", errors="replace").read()
if "<body" not in text:
    fail.append("chromium dumped no DOM")
p = Imgs()
p.feed(text)
if not p.srcs:
    fail.append("the report has no <img>")
for i, src in enumerate(p.srcs):
    m = re.match(r"data:(image/(?:png|svg\+xml))(;base64)?,(.*)$", src, re.S)
    if not m:
        fail.append("img %d: src is not a PNG/SVG data: URI: %.60s" % (i, src))
        continue
    mime, b64, payload = m.groups()
    try:
        data = base64.b64decode(payload, validate=True) if b64 else payload.encode()
    except Exception as e:
        fail.append("img %d: bad base64: %s" % (i, e))
        continue
    if mime == "image/png" and not data.startswith(b"\x89PNG\r\n\x1a\n"):
        fail.append("img %d: data is not a PNG" % i)
    if mime == "image/svg+xml" and b"<svg" not in data[:4096]:
        fail.append("img %d: data is not an SVG" % i)
for f in fail:
    print("check_report: FAIL: " + f, file=sys.stderr)
print("check_report: %d images checked" % len(p.srcs), file=sys.stderr)
sys.exit(1 if fail else 0)
PY
echo "$shot"
exit $status
