#!/usr/bin/env bash
# calibrate refuses bad layouts and points files with an error naming the
# file and the row, exits 1 and writes no CAL.json.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
"$PY" -c "import cv2, numpy as np; cv2.imwrite('blank.png', np.full((480, 640), 128, np.uint8))"

# expect_fail NAME TEXT ARGS...: calibrate exits 1, its message holds TEXT
# (fixed string), and no NAME.json is written.
expect_fail() {
	local name=$1 want=$2
	shift 2
	check_exit "$name: calibrate fails (exit 1)" 1 "$WAKELINE" calibrate blank.png "$@" -o "$name.json"
	cp last.out "$name.out"
	cp last.err "$name.err"
	check_grep "$name: the message says '$want'" -F -- "$want" last.err
	check_no_file "$name: no CAL.json is written" "$name.json"
}

printf 'marker_id,x_m,y_m\n0,0,0\n1,1,0\n2,1,1\n1,0,1\n' > dup.csv
expect_fail dup "dup.csv:5: marker_id 1 appears again (first on line 3)" --layout dup.csv
printf 'marker_id,x_m,y_m\n0,0,0\n1,1,0\n2,1,abc\n3,0,1\n' > nonnum.csv
expect_fail nonnum "nonnum.csv:4: column 'y_m': 'abc' is not a number" --layout nonnum.csv
printf 'marker_id,x_m,y_m\nx3,0,0\n1,1,0\n2,1,1\n3,0,1\n' > badid.csv
expect_fail badid "badid.csv:2: column 'marker_id': 'x3' is not a whole number" --layout badid.csv
printf 'marker_id,x_m,y_m\n0,0,0\n1,1,0\n2,1,1\n' > three.csv
expect_fail three "three.csv: 3 markers listed, calibration needs at least 4" --layout three.csv
printf 'marker_id,x_m\n0,0\n' > nocol.csv
expect_fail nocol "nocol.csv:1: the header has no column 'y_m'" --layout nocol.csv
printf 'u_px,v_px,x_m,y_m\n10,10,0,0\n600,12,1,0\n610,400,1,1\n5,4o0,0,1\n' > pts.csv
expect_fail pts "pts.csv:5: column 'v_px': '4o0' is not a number" --points pts.csv
printf 'u_px,v_px,x_m,y_m\n10,10,0,0\n300,10,0.5,0\n600,10,1,0\n610,400,1,1\n' > coll.csv
expect_fail coll "points 'line 2', 'line 3' and 'line 4' lie on one line" --points coll.csv --hfov-deg 60
printf 'u_px,v_px,x_m,y_m\n10,10,0,0\n600,10,1,0\n610,400,1,1\n' > few.csv
expect_fail few "few.csv: 3 points, calibration needs at least 4" --points few.csv
# markers listed but not in the (blank) image
printf 'marker_id,x_m,y_m\n0,0,0\n1,1,0\n2,1,1\n3,0,1\n' > ok.csv
expect_fail missing "only 0 of the 4 layout markers were found" --layout ok.csv
# the warnings go to standard error (the quality report alone to standard output)
check_grep "the warning (on standard error) names marker 2 (layout line 4) as not found" \
	"wakeline calibrate: warning: marker 2 (layout line 4) was not found" missing.err
# an output that cannot be written: the error names it
printf 'u_px,v_px,x_m,y_m\n100,100,0,1\n500,120,1,1\n450,400,1,0\n80,350,0,0\n' > four.csv
check_exit "an output in a missing folder fails (exit 1)" 1 \
	"$WAKELINE" calibrate blank.png --points four.csv --hfov-deg 60 -o no/such/dir/CAL.json
check_grep "the error names the output" "no/such/dir/CAL.json" last.err
# a mirrored layout (y measured the other way): the camera would be under the floor
printf 'u_px,v_px,x_m,y_m\n100,100,0,0\n500,120,1,0\n450,400,1,1\n80,350,0,1\n' > mirrored.csv
expect_fail mirrored "the layout looks mirrored" --points mirrored.csv --hfov-deg 60
# usage errors exit 2
check_exit "neither --layout nor --points is a usage error (exit 2)" 2 "$WAKELINE" calibrate blank.png -o x.json
done_testing
