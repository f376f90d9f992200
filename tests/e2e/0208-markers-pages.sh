#!/usr/bin/env bash
# markers: four 150 mm floor tags as SVG, PNG and PDF on A4 (one tag a page
# with its white border and the scale bar).  Checks: four pages each (SVG
# and PNG one file a page, sheet-1 .. sheet-4; the PDF four /Type /Page);
# every page is A4, 210 x 297 mm (the SVG's width/height in mm and its
# viewBox; the PNG's pixels at its pHYs resolution); and the printed size:
# the tag's black square measures 150 mm at the page's scale, from the
# SVG's coordinates (the bounding box of the black fills, in mm) and from
# the PNG's pixels at 300 dpi (python3-opencv connected components), within
# a pixel (0.085 mm).  A robot sheet (--robot) is checked against the
# tracker's heading by tests/unit/test_markers.c.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"

"$WAKELINE" markers --ids 0-3 --size-mm 150 -o sheet.svg > svg.txt || fail "markers svg"
"$WAKELINE" markers --ids 0-3 --size-mm 150 --dpi 300 -o sheet.png > png.txt || fail "markers png"
"$WAKELINE" markers --ids 0-3 --size-mm 150 -o sheet.pdf > pdf.txt || fail "markers pdf"
check_grep "SVG: four pages, one file a page" \
	"4 tag36h11 tags of 150.0 mm on 4 pages -> sheet-1.svg sheet-2.svg sheet-3.svg sheet-4.svg" svg.txt
check_grep "PDF: four pages in one file" "on 4 pages -> sheet.pdf" pdf.txt
check_no_file "no single-file SVG beside the pages" sheet.svg
check_no_file "no single-file PNG beside the pages" sheet.png
check "the PDF has 4 /Type /Page objects" $PY -c 'import re; n = len(re.findall(rb"/Type\s*/Page(?!s)", open("sheet.pdf", "rb").read())); assert n == 4, n'
"$WAKELINE" markers --help > help.txt || fail "markers --help"
check_grep "--help names --robot" -- "--robot" help.txt

check_py "every page is A4 and the tag's black square measures 150 mm (SVG coordinates, PNG pixels at 300 dpi)" <<'PYEOF'
import re, struct
import xml.etree.ElementTree as ET
import cv2, numpy as np

NUM = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")
for p in range(1, 5):
    # SVG: the page is A4 in mm and one user unit is one mm
    root = ET.parse("sheet-%d.svg" % p).getroot()
    assert root.get("width") == "210mm" and root.get("height") == "297mm", root.attrib
    assert [float(v) for v in root.get("viewBox").split()] == [0, 0, 210, 297], root.get("viewBox")
    # the black square: every black-filled path outside the glyph symbols
    # (the tag's cells; cairo writes absolute M/L/Z coordinates)
    xs, ys = [], []
    for el in root.iter("{http://www.w3.org/2000/svg}path"):
        st = (el.get("style") or "") + " " + (el.get("fill") or "")
        if "fill:rgb(0%,0%,0%)" not in st.replace(" ", "") or el.get("transform"):
            continue
        v = [float(x) for x in NUM.findall(el.get("d").replace("Z", " "))]
        xs += v[0::2]; ys += v[1::2]
    w, h = max(xs) - min(xs), max(ys) - min(ys)
    assert abs(w - 150) < 0.01 and abs(h - 150) < 0.01, ("svg", p, w, h)
    # PNG: A4 at the resolution it states, and the black square in pixels
    b = open("sheet-%d.png" % p, "rb").read()
    assert b[:8] == b"\x89PNG\r\n\x1a\n" and b[12:16] == b"IHDR"
    pw, ph = struct.unpack(">II", b[16:24])
    i = b.index(b"pHYs")
    ppx, ppy, unit = struct.unpack(">IIB", b[i + 4:i + 13])
    assert unit == 1 and ppx == ppy, (ppx, ppy, unit)
    dpi = ppx * 0.0254
    assert abs(dpi - 300) < 0.01, dpi
    wmm, hmm = pw / ppx * 1000, ph / ppy * 1000
    assert abs(wmm - 210) < 0.1 and abs(hmm - 297) < 0.1, (wmm, hmm)
    im = cv2.imread("sheet-%d.png" % p, cv2.IMREAD_GRAYSCALE)
    n, lab, st, _ = cv2.connectedComponentsWithStats((im < 128).astype(np.uint8), connectivity=4)
    k = 1 + int(np.argmax(st[1:, cv2.CC_STAT_AREA]))
    sw, sh = st[k, cv2.CC_STAT_WIDTH] / ppx * 1000, st[k, cv2.CC_STAT_HEIGHT] / ppy * 1000
    assert abs(sw - 150) < 0.1 and abs(sh - 150) < 0.1, ("png", p, sw, sh)
    print("page %d: svg 210 x 297 mm, square %.3f x %.3f mm; png %d x %d px at %.1f dpi = %.2f x %.2f mm, square %.2f x %.2f mm"
          % (p, w, h, pw, ph, dpi, wmm, hmm, sw, sh))
PYEOF
done_testing
