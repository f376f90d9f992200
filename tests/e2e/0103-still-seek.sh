#!/usr/bin/env bash
# still: seeks to the key frame before the time and decodes forward to the
# nearest frame.  The frame written is compared with the ffmpeg CLI's frame
# of that index (select=eq(n,k), Debian ffmpeg 5.1), and must be closer to it
# than to its neighbours (testsrc2 changes from frame to frame).
source "$WL_SOURCE_DIR/tests/e2e/lib/decode.bash"
ff -f lavfi -i testsrc2=size=320x240:rate=25 -frames:v 100 -c:v libx264 -pix_fmt yuv420p -g 10 -bf 3 gop.mp4
ff -f lavfi -i testsrc2=size=320x240:rate=25 -frames:v 50 \
	-vf "settb=1/1000,setpts='if(lt(N,25),N*40,1000+(N-25)*100)'" -fps_mode vfr -enc_time_base 1/1000 \
	-c:v libx264 -pix_fmt yuv420p -bf 3 -g 10 -video_track_timescale 1000 vfr.mp4

# Every frame of each clip as ffmpeg decodes it: ref-CLIP-0001.png is frame 0.
# a raw H.264 stream: no container timestamps, no index (still decodes from the start)
ff -f lavfi -i testsrc2=size=320x240:rate=25 -frames:v 50 -c:v libx264 -pix_fmt yuv420p -g 10 -bf 3 raw.h264
for c in gop.mp4 vfr.mp4 raw.h264; do ff -i $c -fps_mode passthrough "ref-$c-%04d.png"; done

# still_is CLIP AT N T: checks that `still --at AT` succeeds and writes the
# frame at time T; queues the check that it is frame N: the pixel
# comparisons are made at the end (checks.txt), in one python run.
still_is() {
	local clip=$1 at=$2 n=$3 t=$4 out="$1-$2.png"
	check_exit "still $clip --at $at succeeds" 0 "$WAKELINE" still "$clip" --at "$at" -o "$out"
	cp last.out "$out.txt"
	check_grep "still $clip --at $at: the frame at $t s" "t_s $t " "$out.txt"
	echo "$clip $at $n" >> checks.txt
}
: > checks.txt

# 25 fps, key frames every 10 frames, B-frames
still_is gop.mp4 0 0 0.000000
still_is gop.mp4 0.5 12 0.480000 # 0.48 and 0.52 tie: the earlier frame
still_is gop.mp4 1.465 37 1.480000
still_is gop.mp4 3.01 75 3.000000
still_is gop.mp4 2.79 70 2.800000 # a key frame
still_is gop.mp4 2.77 69 2.760000 # the frame before a key frame
still_is gop.mp4 3.96 99 3.960000
# past the end: the last frame, with a warning
check_exit "still --at 10 (past the end) succeeds" 0 "$WAKELINE" still gop.mp4 --at 10 -o end.png
check_grep "past the end: the last frame (3.96 s)" 't_s 3.960000' last.out
check_grep "past the end: a warning" 'past the last frame' last.err
# variable frame rate (tests/data/references.md recipe): frame N at N*40 ms for N < 25, then 1 s + (N-25)*100 ms
still_is vfr.mp4 1.03 25 1.000000
still_is vfr.mp4 2.0 35 2.000000
still_is vfr.mp4 3.36 49 3.400000
# raw stream: times extrapolated at the stream's 25 fps
still_is raw.h264 1.465 37 1.480000
still_is raw.h264 0 0 0.000000

check_py "each still is its frame, closer to ffmpeg's frame than to the neighbours ($(wc -l < checks.txt) stills)" <<'PYEOF'
import os, sys, cv2, numpy as np
bad = 0
lines = open("checks.txt").readlines()
assert len(lines) == 12, "%d stills queued, 12 expected" % len(lines)
for line in lines:
    clip, at, n = line.split(); n = int(n)
    got = cv2.imread("%s-%s.png" % (clip, at)).astype(float)
    d = {}
    for k in (n - 1, n, n + 1):
        ref = "ref-%s-%04d.png" % (clip, k + 1)
        if k >= 0 and os.path.exists(ref):
            d[k] = np.abs(got - cv2.imread(ref).astype(float)).mean()
    print("%s --at %s: frame %d; mean diff to frames %s" % (clip, at, n,
          ", ".join("%d: %.3f" % kv for kv in sorted(d.items()))))
    # 2 levels: the task's bound for codec/conversion differences (we convert
    # bilinear, ffmpeg bicubic); a neighbouring frame of testsrc2 differs more.
    if not (d[n] < 2 and all(d[n] < v for k, v in d.items() if k != n)):
        print("  ^ wrong frame"); bad += 1
sys.exit(bad)
PYEOF

# usage errors
check_exit "a missing --at is a usage error (exit 2)" 2 "$WAKELINE" still gop.mp4 -o x.png
check_exit "--at -1 is a usage error (exit 2)" 2 "$WAKELINE" still gop.mp4 --at -1 -o x.png
check_exit "a missing -o is a usage error (exit 2)" 2 "$WAKELINE" still gop.mp4 --at 1
check_exit "still --help exits 0" 0 "$WAKELINE" still --help
check_grep "still --help lists --at SECONDS" -- '--at SECONDS' last.out
done_testing
