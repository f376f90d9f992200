#!/bin/bash
# synth-bench.sh: prints the renderer's speed at 720p and 1080p (render only,
# and render + H.264 encoding through `wakeline synth`).  A benchmark, not a
# test: the machine is shared, so read the CPU-second figures beside the wall
# times.  Usage: tests/bench/synth-bench.sh [BUILD_DIR]
set -euo pipefail
src=$(cd "$(dirname "$0")/../.." && pwd)
build=${1:-$src/build}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
libs="$(pkg-config --libs libavformat libavcodec libavutil libswscale libcjson cairo) -lapriltag -lcsv -lm -lpthread"
[ -e /usr/lib/x86_64-linux-gnu/libapriltag-utils.so ] && libs="$libs -lapriltag-utils"
pkg-config --exists opencv4 && libs="$libs $(pkg-config --libs opencv4) -lstdc++"
cc -O2 -std=c11 -I"$src/src" -I"$build/gen" -I/usr/include/apriltag "$src/tests/bench/bench_synth.c" \
	"$build/libwakeline.a" $libs -o "$tmp/bench_synth"
for size in "1280 720" "1920 1080"; do
	set -- $size
	sed -e "s/\"width_px\": 1280, \"height_px\": 720/\"width_px\": $1, \"height_px\": $2/" \
	    -e 's/"duration_s": 20/"duration_s": 10/' "$src/samples/scenes/demo-arc.json" > "$tmp/s$2.json"
	"$tmp/bench_synth" "$tmp/s$2.json" 150
	/usr/bin/time -f "  wakeline synth ${1}x${2}, 300 frames (render + encode): %e s wall, %U s user cpu" \
		"$build/wakeline" synth -q "$tmp/s$2.json" -o "$tmp/s$2.mp4"
done
