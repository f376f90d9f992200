#!/usr/bin/env bash
# 10-bit and full-range sources give correct 8-bit planes.  References: the
# raw planes Debian's ffmpeg 5.1 decodes (-f rawvideo in the stream's own
# pixel format, so no conversion on its side), read with numpy.
#  - 8-bit yuv420p: our luma is ffmpeg's Y plane exactly (handed out as is).
#  - yuv420p10le: our luma is ffmpeg's 10-bit Y / 4 within 1 level (range kept
#    limited, 64..940 -> 16..235), and within 1 level of the 8-bit clip's.
#  - yuvj420p: our luma is ffmpeg's full-range Y exactly, and the RGB frame
#    matches the limited-range clip's RGB (the range was told to swscale).
source "$WL_SOURCE_DIR/tests/e2e/lib/decode.bash"
src=(-f lavfi -i testsrc2=size=320x240:rate=25 -frames:v 5 -c:v libx264 -qp 0)
ff "${src[@]}" -pix_fmt yuv420p c8.mp4
ff "${src[@]}" -pix_fmt yuv420p10le c10.mp4
ff "${src[@]}" -pix_fmt yuvj420p cj.mp4
for c in c8:yuv420p c10:yuv420p10le cj:yuvj420p; do
	n=${c%%:*} p=${c#*:}
	ff -i $n.mp4 -frames:v 1 -f rawvideo -pix_fmt $p $n.yuv
	"$WAKELINE" still --luma --at 0 -o $n-luma.png $n.mp4 > /dev/null || fail "still --luma $n"
	"$WAKELINE" still --at 0 -o $n-rgb.png $n.mp4 > /dev/null || fail "still $n"
	"$WAKELINE" probe -q --json $n.mp4 > $n.json || fail "probe $n"
done
check_py "8-bit planes of 8-bit, 10-bit and full-range clips against ffmpeg's raw planes" <<'PYEOF'
import json, sys, cv2, numpy as np
W, H = 320, 240
def y8(name):  return np.fromfile(name, np.uint8, W * H).reshape(H, W).astype(float)
def y16(name): return np.fromfile(name, "<u2", W * H).reshape(H, W).astype(float)
def png(name): return cv2.imread(name, cv2.IMREAD_UNCHANGED).astype(float)
bad = []
def check(what, ok, value):
    print("%-58s %s" % (what, value))
    if not ok: bad.append(what)

info = {n: json.load(open(n + ".json")) for n in ("c8", "c10", "cj")}
check("c10 probe: pix_fmt, bit depth, range", (info["c10"]["pix_fmt"], info["c10"]["bit_depth"],
      info["c10"]["full_range"]) == ("yuv420p10le", 10, False), (info["c10"]["pix_fmt"], info["c10"]["bit_depth"]))
check("cj probe: full range", info["cj"]["full_range"] is True and info["c8"]["full_range"] is False,
      info["cj"]["pix_fmt"])

l8, l10, lj = png("c8-luma.png"), png("c10-luma.png"), png("cj-luma.png")
r8, r10, rj = y8("c8.yuv"), y16("c10.yuv"), y8("cj.yuv")
d = np.abs(l8 - r8).max()
check("8-bit luma == ffmpeg Y plane (max abs diff)", d == 0, d)
d = np.abs(l10 - r10 / 4)
check("10-bit luma vs ffmpeg Y/4 (max abs diff, levels)", d.max() <= 1, d.max())
check("10-bit luma range stays limited (min, max)", l10.min() >= 16 and l10.max() <= 235, (l10.min(), l10.max()))
d = np.abs(l10 - l8)
check("10-bit luma vs 8-bit clip luma (mean, max)", d.mean() < 1 and d.max() <= 2, (round(d.mean(), 3), d.max()))
d = np.abs(lj - rj).max()
check("yuvj luma == ffmpeg Y plane (max abs diff)", d == 0, d)
# limited to full: (Y - 16) * 255 / 219 (ITU-R BT.601 ranges)
d = np.abs(lj - np.clip((l8 - 16) * 255 / 219, 0, 255))
check("yuvj luma vs limited luma stretched (mean)", d.mean() < 2, round(d.mean(), 3))
d0 = np.abs(lj - l8).mean()
check("  (the two ranges do differ: mean |full - limited|)", d0 > 5, round(d0, 3))
rgb8, rgb10, rgbj = png("c8-rgb.png"), png("c10-rgb.png"), png("cj-rgb.png")
d = np.abs(rgbj - rgb8).mean()
check("yuvj RGB vs limited-range RGB (mean)", d < 2, round(d, 3))
d = np.abs(rgb10 - rgb8).mean()
check("10-bit RGB vs 8-bit RGB (mean)", d < 2, round(d, 3))
sys.exit("failed: %s" % bad if bad else 0)
PYEOF
for n in cj c10; do
	ff -i $n.mp4 -frames:v 1 -pix_fmt rgb24 ref-$n.png
	d=$(mad $n-rgb.png ref-$n.png)
	check_num "$n: RGB within 2 levels (mean) of ffmpeg's PNG" "$d" "<" 2
done
done_testing
