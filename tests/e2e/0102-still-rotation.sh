#!/usr/bin/env bash
# probe reports the display rotation, and still writes the frame as
# displayed: compared with the ffmpeg CLI's auto-rotated frame
# (tests/data/references.md, "Video timestamps and rotation"; Debian ffmpeg 5.1).
source "$WL_SOURCE_DIR/tests/e2e/lib/decode.bash"
ff -f lavfi -i testsrc2=size=320x240:rate=25 -frames:v 50 -c:v libx264 -pix_fmt yuv420p -g 10 base.mp4
for r in 90 180 270; do
	ff -i base.mp4 -c copy -metadata:s:v:0 rotate=$r rot$r.mp4
done
# ffprobe's own reading of the matrix (degrees counter-clockwise): 90, 180, -90
for r in 90 180 270; do
	echo "rot$r.mp4: ffprobe rotation $(ffprobe -v error -show_entries stream_side_data=rotation -of default=nw=1:nk=1 rot$r.mp4)"
done

# expected: rotation_deg displayed_w displayed_h; the rotation in (-180, 180] as
# ffprobe reads the display matrix (rotate=270 is -90, a phone's portrait clip)
declare -A want=([base]="0 320 240" [rot90]="90 240 320" [rot180]="180 320 240" [rot270]="-90 240 320")
for c in base rot90 rot180 rot270; do
	got=$("$WAKELINE" probe -q --json $c.mp4 | $PY -c "
import json, sys; j = json.load(sys.stdin)
print(j['rotation_deg'], j['displayed_width_px'], j['displayed_height_px'])")
	check_eq "$c.mp4: rotation_deg, displayed width and height" "$got" "${want[$c]}"
done

# Frame 0 and frame 37 (t = 1.48 s, asked as 1.465 s: nearest), as displayed.
for c in base rot90 rot180 rot270; do
	check_exit "still $c.mp4 --at 0 succeeds" 0 "$WAKELINE" still $c.mp4 --at 0 -o $c-0.png
	check_exit "still $c.mp4 --at 1.465 succeeds" 0 "$WAKELINE" still $c.mp4 --at 1.465 -o $c-37.png
	cp last.out $c-37.txt
	check_grep "$c.mp4 --at 1.465: the nearest frame, at 1.48 s" 't_s 1.480000' $c-37.txt
	ff -i $c.mp4 -frames:v 1 ref-$c-0.png
	ff -i $c.mp4 -vf 'select=eq(n\,37)' -frames:v 1 ref-$c-37.png
	# ffmpeg converts with its default bicubic chroma scaling, we with bilinear:
	# allow 2 levels of mean difference (the task's bound), a wrong turn gives tens.
	for n in 0 37; do
		want_mad $c-$n.png ref-$c-$n.png lt 2 "$c frame $n vs ffmpeg auto-rotated"
	done
	# Coded pixels: with ffmpeg told not to rotate and to convert as we do
	# (bilinear), the pixels are identical.
	"$WAKELINE" still $c.mp4 --at 0 --coded -o coded-$c-0.png > /dev/null || fail "still --coded $c exited $?"
	ff -noautorotate -i $c.mp4 -frames:v 1 -sws_flags bilinear+accurate_rnd ref-coded-$c-0.png
	want_mad coded-$c-0.png ref-coded-$c-0.png lt 0.01 "$c --coded frame 0 vs ffmpeg -noautorotate bilinear"
done
# The two quarter turns are told apart (a sign error would swap them).
want_mad rot90-0.png ref-rot270-0.png gt 20 "rot90 still vs ffmpeg's rot270 frame"
# --coded keeps the coded orientation: the 180 turn must differ a lot.
want_mad coded-rot180-0.png ref-rot180-0.png gt 20 "rot180 --coded vs displayed"
want_mad coded-rot180-0.png base-0.png lt 0.01 "rot180 --coded vs the unrotated clip"
run_mad_checks
done_testing
