#!/usr/bin/env bash
# merge + report.html: clip folders made here (an invented sweep: robots
# circling at four gains, two hull shapes, one clip failed, one manifest row
# naming a missing clip) are merged by `wakeline merge`; summary.csv has one
# row per run and failure, every SVG parses as XML (python3's xml.etree),
# every PNG has the PNG signature, the output is the same under a
# decimal-comma locale, and headless Chromium loads report.html with one
# table row per run and every image loaded (read back with --dump-dom).
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"

$PY - <<'PYEOF'
import json, math, os
os.makedirs("out/clips", exist_ok=True)
def clip(name, rel, gain, shape, robots):
    d = "out/clips/" + name
    os.makedirs(d, exist_ok=True)
    runs = []
    with open(d + "/clean.csv", "w") as f:
        f.write("t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,cut\n")
        for i in range(300):
            t = i / 30
            for rid, r in robots:
                a = 0.1 / r * t
                x, y = 1 + r * math.cos(a), 0.6 + r * math.sin(a)
                seg = -1 if t < 1 else 0
                f.write("%.4f,%d,%d,%.5f,%.5f,%.5f,0.1,%.5f,0,0,%d,measured,%s\n" %
                        (t, i, rid, x, y, math.atan2(math.cos(a), -math.sin(a)), 0.1 / r, seg, "start" if seg < 0 else ""))
    for rid, r in robots:
        k = 1 / r
        runs.append({"id": rid, "segment": 0, "headline": True, "radius_m": r, "curvature_per_m": k,
                     "curvature_ci95_per_m": [k * 0.95, k * 1.05], "straight": False, "fit_rms_m": 0.001,
                     "arc_deg": 515.0, "radius_body_diameters": r / 0.08, "centre_x_m": 1, "centre_y_m": 0.6})
    json.dump({"format": "wakeline summary", "format_version": 1, "runs": runs}, open(d + "/summary.json", "w"))
    json.dump({"clip": rel, "status": "ok", "error": "", "params": {"gain": gain, "shape": shape}},
              open(d + "/clip.json", "w"))
clip("g1_mp4", "g1.mp4", "0.25", "round", [(3, 0.9)])
clip("g2_mp4", "g2.mp4", "0.5", "round", [(3, 0.5)])
clip("g3_mp4", "g3.mp4", "0.75", "fin <b>", [(3, 0.3), (4, 0.35)])
clip("g4_mp4", "g4.mp4", "1", "fin <b>", [(3, 0.12)])
os.makedirs("out/clips/bad_mp4")
json.dump({"clip": "bad.mp4", "status": "failed", "error": "bad.mp4: frame 3: invalid data: re-encode the clip",
           "params": {"gain": "2", "shape": "round"}}, open("out/clips/bad_mp4/clip.json", "w"))
json.dump({"x_col": "gain", "group_col": "shape", "body_diameter_m": 0,
           "missing": [{"clip": "gone.mp4", "error": "manifest.csv:7: clip 'gone.mp4' is not under 'clips': check the name"}]},
          open("out/batch.json", "w"))
PYEOF

check_exit "merge with a failed clip exits 1" 1 "$WAKELINE" merge out
cp last.out merge.txt
check_grep "merge reports 5 runs, 5 clip folders, 1 failed, 1 missing" \
	"5 runs from 5 clip folders, 1 failed, 1 missing" merge.txt

check_py "summary.csv rows, SVGs parse as XML, PNG signatures" <<'PYEOF'
import csv, glob, sys
import xml.etree.ElementTree as ET
rows = list(csv.DictReader(open("out/summary.csv")))
st = [r["status"] for r in rows]
assert st.count("ok") == 5 and st.count("failed") == 1 and st.count("missing") == 1, st
g3 = [r for r in rows if r["clip"] == "g3.mp4"]
assert sorted(r["id"] for r in g3) == ["3", "4"], g3
assert abs(float(g3[0]["curvature_ci95_per_m_lo"]) - 0.95 / 0.3) < 1e-6
assert g3[0]["shape"] == "fin <b>"
svgs = glob.glob("out/*.svg") + glob.glob("out/clips/*/*.svg")
assert len(svgs) == 2 + 2 * 4, svgs
for f in svgs:
    root = ET.parse(f).getroot()      # raises on malformed XML
    assert root.tag.endswith("svg"), (f, root.tag)
pngs = glob.glob("out/*.png") + glob.glob("out/clips/*/*.png")
assert len(pngs) == 2 + 2 * 4, pngs
for f in pngs:
    assert open(f, "rb").read(8) == b"\x89PNG\r\n\x1a\n", f
print("summary.csv: %d rows; %d SVG parse as XML; %d PNG signatures ok" % (len(rows), len(svgs), len(pngs)))
PYEOF

# the same bytes under a decimal-comma locale (PITFALLS.md, "Locale")
if locale -a 2>/dev/null | grep -qi '^de_DE\.utf-\?8$'; then
	cp out/summary.csv summary.C.csv
	LC_ALL=de_DE.UTF-8 "$WAKELINE" merge out > /dev/null 2>&1 || true
	check "summary.csv is byte-identical under LC_ALL=de_DE.UTF-8" cmp summary.C.csv out/summary.csv
else
	skip_check "summary.csv is byte-identical under LC_ALL=de_DE.UTF-8" \
		"the de_DE.UTF-8 locale is not generated (scripts/setup makes it)"
fi

# headless Chromium (Debian package chromium)
CHROME=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$CHROME" ]; then
	skip_check "report.html in headless Chromium" "chromium is not installed (scripts/setup installs it)"
	done_testing
fi
flags=(--headless --no-sandbox --disable-gpu --disable-background-networking --disable-component-update
	--disable-sync --no-first-run --allow-file-access-from-files --virtual-time-budget=3000)
timeout 60 "$CHROME" "${flags[@]}" --user-data-dir="$(mktemp -d -p "$WL_TEST_TMP")" --dump-dom \
	"file://$WL_TEST_TMP/out/report.html#sort=curvature_per_m,desc" > dom.html 2> chrome.err ||
	fail "chromium --dump-dom failed: $(tail -3 chrome.err)"
timeout 60 "$CHROME" "${flags[@]}" --user-data-dir="$(mktemp -d -p "$WL_TEST_TMP")" --window-size=1280,1800 \
	--screenshot="$WL_TEST_TMP/report-screenshot.png" "file://$WL_TEST_TMP/out/report.html" > /dev/null 2>> chrome.err ||
	fail "chromium --screenshot failed: $(tail -3 chrome.err)"
check_py "report.html in Chromium: a row per run and failure, every image loaded, sorting works" <<'PYEOF'
import re
dom = open("dom.html").read()
m = re.search(r'<body[^>]*data-images-total="(\d+)"[^>]*data-images-loaded="(\d+)"', dom)
assert m, "the load handler did not run (no data-images-* on <body>)"
total, loaded = int(m.group(1)), int(m.group(2))
runs = len(re.findall(r'<tr class="run">', dom))
fails = len(re.findall(r'<tr class="failure">', dom))
assert runs == 5, runs
assert fails == 2, fails
assert total == runs + 2, (total, runs)   # a thumbnail per run and the two sweep plots
assert loaded == total, "%d of %d images loaded" % (loaded, total)
# the sorting script: by curvature, largest first (clicked twice)
sdom = dom
body = sdom[sdom.index('<table id="runs">'):]
body = body[:body.index('</table>')]
heads = re.findall(r'<th[^>]*>([^<]*)</th>', body)
col = heads.index("curvature_per_m")
rows = re.findall(r'<tr class="run">(.*?)</tr>', body, re.S)
ks = [float(re.findall(r'<td[^>]*>(.*?)</td>', r, re.S)[col]) for r in rows]
assert len(ks) == 5 and ks == sorted(ks, reverse=True), ks
unsorted = [float(re.findall(r'<td[^>]*>(.*?)</td>', r, re.S)[col])
            for r in re.findall(r'<tr class="run">(.*?)</tr>', open("out/report.html").read(), re.S)]
assert unsorted != ks, "the unsorted page is already in that order: the check proves nothing"
shot = open("report-screenshot.png", "rb").read(8)
assert shot == b"\x89PNG\r\n\x1a\n"
print("chromium: %d run rows, %d failure rows, %d/%d images loaded; screenshot report-screenshot.png" %
      (runs, fails, loaded, total))
PYEOF
done_testing
