#!/bin/sh
# report.sh -- the HTML report (index.html) of a batch run, checked from the outside.
#
# The page checked is REPORT_HTML when set, else the one 'ballast run data/demo.spec' writes.
# When Chromium is installed (CI installs it), the page is also rendered headless to a PNG that
# must not be blank, and its DOM (--dump-dom) must hold every job and plot.  Run by hand:
#   REPORT_HTML=out/index.html BALLAST=build/ballast top_srcdir=. sh tests/cli/report.sh
# Exit status: 0 all checks passed, 1 some failed, 77 skipped, 99 the test could not run.
#
# Checks (doc/report.md describes the page): the page parses as XML once its doctype is
# removed (Python's xml.etree: balanced tags, escaped text, closed void elements); it names
# no network resource and holds no script; the caution is there; every <svg> has a non-empty
# <title>; every job of the summary table links to a section with that id; every done
# comparison has a ranked table; the axis labels of the plots are there.

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

if [ -z "${REPORT_HTML:-}" ]; then
  # make the page: the demo batch
  bl run "$top_srcdir/data/demo.spec" -o "$tmp/demo-report" -q
  expect_rc "run data/demo.spec" 0
  REPORT_HTML=$tmp/demo-report/index.html
fi
page=$(abspath "$REPORT_HTML")
if [ ! -r "$page" ]; then
  echo "report.sh: '$page': cannot read the page" >&2
  exit 99
fi

# The structural checks in one Python program: python3 -c "$html_py" CHECK PAGE.  It prints
# why a check failed and exits 1; it exits 0 when the check holds.
html_py='
import re, sys
import xml.etree.ElementTree as ET

check, path = sys.argv[1], sys.argv[2]
with open(path, encoding="utf-8") as f:
    text = f.read()
body = text[len("<!DOCTYPE html>"):] if text.startswith("<!DOCTYPE html>") else None

def fail(msg):
    print(msg)
    sys.exit(1)

def tree():
    try:
        return ET.fromstring(body)
    except ET.ParseError as e:
        fail("not well-formed: %s" % e)

def txt(e):
    return "".join(e.itertext())

if check == "doctype":
    if body is None:
        fail("the page does not start with <!DOCTYPE html>")
elif check == "xml":
    tree()
elif check == "offline":
    for bad in ("http:", "https:", "<script", "<link", "<iframe", "<img", "url("):
        if bad in text.lower():
            fail("the page contains %r" % bad)
elif check == "titles":
    svgs = list(tree().iter("svg"))
    if not svgs:
        fail("no <svg> in the page")
    for k, s in enumerate(svgs):
        kids = list(s)
        if not kids or kids[0].tag != "title" or not txt(kids[0]).strip():
            fail("svg %d has no <title> first" % k)
elif check == "links":
    root = tree()
    ids = {e.get("id") for e in root.iter() if e.get("id")}
    links = [a.get("href") for a in root.iter("a") if (a.get("href") or "").startswith("#")]
    if not links:
        fail("the summary links no job")
    for h in links:
        if h[1:] not in ids:
            fail("link %s has no target" % h)
    secs = [e for e in root.iter("section")]
    if len(secs) != len(links):
        fail("%d sections for %d summary links" % (len(secs), len(links)))
elif check == "ranked":
    for s in tree().iter("section"):
        badge = [e for e in s.iter("span") if "badge" in (e.get("class") or "")]
        done = badge and txt(badge[0]) == "done"
        tables = [t for t in s.iter("table")]
        if done and not tables:
            fail("section %s is done but has no table" % s.get("id"))
elif check == "caution":
    want = ("A ranking is evidence, not proof: validate the chosen model on new data before "
            "acting on it.")
    if want not in re.sub(r"\s+", " ", txt(tree())):
        fail("the caution is missing")
elif check == "labels":
    t = txt(tree())
    for lab in ("Pearson residual", "fitted value", "theoretical normal quantile",
                "quantile residual", "log mean", "log variance"):
        if lab not in t:
            fail("no axis label %r" % lab)
else:
    fail("report.sh: unknown check " + check)
'

html_check () {
  if hc_msg=$(python3 -c "$html_py" "$2" "$page" 2>&1); then
    pass "$1"
  else
    fail "$1" "$hc_msg"
  fi
}

html_check "page starts with the doctype" doctype
html_check "page is well-formed" xml
html_check "page is self-contained" offline
html_check "every plot has a title" titles
html_check "summary links every section" links
html_check "done jobs have a table" ranked
html_check "caution present" caution
html_check "axis labels present" labels

# A real browser: headless Chromium renders the page to a PNG (not blank: many distinct pixel
# values), and its DOM after loading holds every job's section and every plot.
chrome=$(command -v chromium || command -v chromium-browser || true)
if [ -n "$chrome" ]; then
  prof=$(mktemp -d "$tmp/chrome.XXXXXX")
  flags="--headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
--disable-background-networking --disable-component-update --disable-sync \
--user-data-dir=$prof --window-size=1300,6000"
  # shellcheck disable=SC2086  # the flags are separate words
  run timeout 120 "$chrome" $flags --screenshot="$tmp/page.png" "file://$page"
  if [ -s "$tmp/page.png" ] && python3 - "$tmp/page.png" <<'PYEOF'
import sys, zlib, struct
data = open(sys.argv[1], "rb").read()
assert data[:8] == b"\x89PNG\r\n\x1a\n"
pos, idat, w = 8, b"", 0
while pos < len(data):
    n, kind = struct.unpack(">I4s", data[pos:pos + 8])
    body = data[pos + 8:pos + 8 + n]
    if kind == b"IHDR":
        w = struct.unpack(">I", body[:4])[0]
    if kind == b"IDAT":
        idat += body
    pos += 12 + n
raw = zlib.decompress(idat)
# distinct byte values over the first rows: a blank page has almost none
if len(set(raw[: w * 4 * 600])) < 20:
    sys.exit(1)
PYEOF
  then
    pass "chromium renders the page (not blank)"
  else
    fail "chromium renders the page (not blank)" "no PNG, or a blank one"
  fi
  # shellcheck disable=SC2086
  run timeout 120 "$chrome" $flags --dump-dom "file://$page"
  if python3 - "$tmp/.out" "$page" <<'PYEOF'
import sys, re
dom = open(sys.argv[1], encoding="utf-8").read()
page = open(sys.argv[2], encoding="utf-8").read()
ids = re.findall(r'<section[^>]*id="(job-[^"]+)"', page)
assert ids, "no job sections in the page"
for i in ids:
    assert ('id="%s"' % i) in dom, "section %s missing from the DOM" % i
assert dom.count("<svg") == page.count("<svg") > 0, "plots missing from the DOM"
PYEOF
  then
    pass "chromium DOM holds every job and plot"
  else
    fail "chromium DOM holds every job and plot" "see above"
  fi
else
  echo "report.sh: no chromium: the browser checks are skipped (CI installs it)"
fi

finish
